//! The manufactured fields of tests/coupled_mms.rs and the data derived from them (body force,
//! mass source, potential source); see that file's module documentation for the method.

use std::f64::consts::FRAC_PI_2;

use dilata_fem::GeometryMode;
use dilata_material::chemical::{ChemicalLaw, LatticeGasParams, GAS_CONSTANT};
use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw, PointInput, PointOutput};
use dilata_material::elastic::{Isotropic, Voigt};
use dilata_material::mobility::{Diffusivity, LatticeGasMobilityParams, MobilityLaw};
use dilata_material::stiffness::StiffnessLaw;
use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};

/// Temperature with `RT = 1` (scaled units).
const TEMPERATURE: f64 = 1.0 / GAS_CONSTANT;
const C_MAX: f64 = 4.0;
/// Partial molar volume of the studies (scaled units).
pub const OMEGA: f64 = 0.2;

/// The law with partial molar volume `omega` (0.2 in every study but the one that switches off
/// the strain feedback).
fn law(omega: f64) -> CoupledPointLaw {
    CoupledPointLaw::new(CoupledLawParts {
        stiffness: StiffnessLaw::isotropic(Isotropic::new(5.0, 0.3).unwrap()),
        swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: omega,
            c_ref: 1.0,
        })
        .unwrap(),
        chemical: ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 0.0,
            temperature: TEMPERATURE,
            c_max: C_MAX,
            interaction: 0.5,
        })
        .unwrap(),
        mobility: MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: Diffusivity::isotropic(1.0).unwrap(),
            temperature: TEMPERATURE,
            c_max: C_MAX,
        })
        .unwrap(),
        gradient: dilata_material::gradient::GradientEnergy::none(),
    })
    .unwrap()
}

/// A function of (x, y): quadratic polynomial plus sums of `A sin(kx x + px) sin(ky y + py)`.
#[derive(Clone, Debug, Default)]
struct Spatial {
    /// Coefficients of 1, x, y, x², xy, y².
    poly: [f64; 6],
    /// Terms `[A, kx, px, ky, py]`.
    trig: Vec<[f64; 5]>,
}

impl Spatial {
    fn poly(poly: [f64; 6]) -> Self {
        Spatial {
            poly,
            trig: Vec::new(),
        }
    }

    fn trig(constant: f64, trig: Vec<[f64; 5]>) -> Self {
        Spatial {
            poly: [constant, 0.0, 0.0, 0.0, 0.0, 0.0],
            trig,
        }
    }

    /// `∂^m/∂x^m ∂^n/∂y^n` at (x, y), `m + n ≤ 2`; uses `d/dz sin(kz + p) = k sin(kz + p + π/2)`.
    fn derivative(&self, x: f64, y: f64, m: i32, n: i32) -> f64 {
        let [a0, a1, a2, a3, a4, a5] = self.poly;
        let poly = match (m, n) {
            (0, 0) => a0 + a1 * x + a2 * y + a3 * x * x + a4 * x * y + a5 * y * y,
            (1, 0) => a1 + 2.0 * a3 * x + a4 * y,
            (0, 1) => a2 + a4 * x + 2.0 * a5 * y,
            (2, 0) => 2.0 * a3,
            (1, 1) => a4,
            (0, 2) => 2.0 * a5,
            _ => panic!("derivative order ({m}, {n}) not provided"),
        };
        let trig: f64 = self
            .trig
            .iter()
            .map(|&[a, kx, px, ky, py]| {
                a * kx.powi(m)
                    * ky.powi(n)
                    * (kx * x + px + f64::from(m) * FRAC_PI_2).sin()
                    * (ky * y + py + f64::from(n) * FRAC_PI_2).sin()
            })
            .sum();
        poly + trig
    }
}

/// Time factor `τ(t)` of the moving part.
#[derive(Clone, Copy, Debug)]
enum Clock {
    /// `τ = t`.
    Linear,
    /// `τ = sin(ω t)`.
    Sine(f64),
}

impl Clock {
    pub fn value(self, t: f64) -> f64 {
        match self {
            Clock::Linear => t,
            Clock::Sine(w) => (w * t).sin(),
        }
    }
    pub fn rate(self, t: f64) -> f64 {
        match self {
            Clock::Linear => 1.0,
            Clock::Sine(w) => w * (w * t).cos(),
        }
    }
}

/// `f(x, t) = steady(x) + τ(t) moving(x)`.
#[derive(Clone, Debug)]
pub struct Field {
    steady: Spatial,
    moving: Spatial,
    clock: Clock,
}

impl Field {
    pub fn d(&self, p: [f64; 3], t: f64, m: i32, n: i32) -> f64 {
        self.steady.derivative(p[0], p[1], m, n)
            + self.clock.value(t) * self.moving.derivative(p[0], p[1], m, n)
    }
    pub fn value(&self, p: [f64; 3], t: f64) -> f64 {
        self.d(p, t, 0, 0)
    }
    pub fn rate(&self, p: [f64; 3], t: f64) -> f64 {
        self.clock.rate(t) * self.moving.derivative(p[0], p[1], 0, 0)
    }
}

/// The four manufactured fields and the law they are manufactured for.
pub struct Manufactured {
    pub ux: Field,
    pub uy: Field,
    pub c: Field,
    pub mu: Field,
    pub law: CoupledPointLaw,
    /// Plane strain (x, y) or axisymmetric (x = r, y = z).
    pub mode: GeometryMode,
}

/// Which unknown a DOF or an error belongs to.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Which {
    Ux,
    Uy,
    C,
    Mu,
}

impl Manufactured {
    pub fn field(&self, which: Which) -> &Field {
        match which {
            Which::Ux => &self.ux,
            Which::Uy => &self.uy,
            Which::C => &self.c,
            Which::Mu => &self.mu,
        }
    }

    pub fn axisymmetric(&self) -> bool {
        self.mode == GeometryMode::Axisymmetric
    }

    /// Exact strain (Voigt, engineering shear; plane strain: `ε_zz = 0`; axisymmetric:
    /// `[ε_rr, ε_zz, ε_θθ = u_r/r, γ_rz]`).
    pub fn strain(&self, p: [f64; 3], t: f64) -> Voigt {
        let (u, v) = (&self.ux, &self.uy);
        let hoop = if self.axisymmetric() {
            u.value(p, t) / p[0]
        } else {
            0.0
        };
        Voigt::new(
            u.d(p, t, 1, 0),
            v.d(p, t, 0, 1),
            hoop,
            u.d(p, t, 0, 1) + v.d(p, t, 1, 0),
            0.0,
            0.0,
        )
    }

    /// The point law at the exact state.
    pub fn point(&self, p: [f64; 3], t: f64) -> PointOutput {
        let mut input = PointInput {
            strain: self.strain(p, t),
            c: self.c.value(p, t),
            grad_mu: Default::default(),
            grad_c: Default::default(),
        };
        input.grad_mu[0] = self.mu.d(p, t, 1, 0);
        input.grad_mu[1] = self.mu.d(p, t, 0, 1);
        self.law
            .evaluate(&input)
            .expect("the manufactured concentration lies inside the law's range")
    }

    /// `b = −div σ`, with `∂_j σ = (∂σ/∂ε) ∂_j ε + (∂σ/∂c) ∂_j c` (exact chain rule); in
    /// axisymmetry `div σ = (∂_r σ_rr + ∂_z σ_rz + (σ_rr − σ_θθ)/r, ∂_r σ_rz + ∂_z σ_zz + σ_rz/r)`
    /// (common practice, no source).
    pub fn body_force(&self, p: [f64; 3], t: f64) -> [f64; 3] {
        let out = self.point(p, t);
        let (u, v) = (&self.ux, &self.uy);
        let r = p[0];
        let (hoop_dr, hoop_dz) = if self.axisymmetric() {
            (
                u.d(p, t, 1, 0) / r - u.value(p, t) / (r * r),
                u.d(p, t, 0, 1) / r,
            )
        } else {
            (0.0, 0.0)
        };
        let d_strain_dx = Voigt::new(
            u.d(p, t, 2, 0),
            v.d(p, t, 1, 1),
            hoop_dr,
            u.d(p, t, 1, 1) + v.d(p, t, 2, 0),
            0.0,
            0.0,
        );
        let d_strain_dy = Voigt::new(
            u.d(p, t, 1, 1),
            v.d(p, t, 0, 2),
            hoop_dz,
            u.d(p, t, 0, 2) + v.d(p, t, 1, 1),
            0.0,
            0.0,
        );
        let ds_dx = out.dstress_dstrain * d_strain_dx + out.dstress_dc * self.c.d(p, t, 1, 0);
        let ds_dy = out.dstress_dstrain * d_strain_dy + out.dstress_dc * self.c.d(p, t, 0, 1);
        // Voigt order [xx, yy, zz, xy, yz, xz] (axisymmetric: [rr, zz, θθ, rz, ..]).
        let sigma = out.stress;
        let (hoop_r, hoop_z) = if self.axisymmetric() {
            ((sigma[0] - sigma[2]) / r, sigma[3] / r)
        } else {
            (0.0, 0.0)
        };
        [
            -(ds_dx[0] + ds_dy[3] + hoop_r),
            -(ds_dx[3] + ds_dy[1] + hoop_z),
            0.0,
        ]
    }

    /// `s = ∂c/∂t + div J`, `div J = grad c · ∂J/∂c − M : Hess μ` (exact chain rule of
    /// `J = −M(c) grad μ`), plus `J_r / r` in axisymmetry.
    pub fn mass_source(&self, p: [f64; 3], t: f64) -> f64 {
        let out = self.point(p, t);
        let grad_c = [self.c.d(p, t, 1, 0), self.c.d(p, t, 0, 1)];
        let hess = [
            [self.mu.d(p, t, 2, 0), self.mu.d(p, t, 1, 1)],
            [self.mu.d(p, t, 1, 1), self.mu.d(p, t, 0, 2)],
        ];
        let mut div_j = grad_c[0] * out.dflux_dc[0] + grad_c[1] * out.dflux_dc[1];
        for i in 0..2 {
            for j in 0..2 {
                div_j -= out.mobility[(i, j)] * hess[i][j];
            }
        }
        if self.axisymmetric() {
            div_j += out.flux[0] / p[0];
        }
        self.c.rate(p, t) + div_j
    }

    /// `g = μ* − μ_local(ε*, c*)`.
    pub fn potential_source(&self, p: [f64; 3], t: f64) -> f64 {
        self.mu.value(p, t) - self.point(p, t).mu_local
    }
}

/// Smooth, non-polynomial fields, linear in time (for the rates in space), for the law with
/// partial molar volume `omega`, in geometry `mode`.
pub fn smooth_fields(omega: f64, mode: GeometryMode) -> Manufactured {
    let linear = |steady: Spatial, moving: Spatial| Field {
        steady,
        moving,
        clock: Clock::Linear,
    };
    Manufactured {
        ux: linear(
            Spatial::trig(0.0, vec![[0.1, 1.1, 0.3, 0.8, 1.2]]),
            Spatial::trig(0.0, vec![[0.05, 0.7, 0.0, 1.3, 0.5]]),
        ),
        uy: linear(
            Spatial::trig(0.0, vec![[-0.08, 0.9, 1.0, 1.2, 0.2]]),
            Spatial::trig(0.0, vec![[0.04, 1.4, 0.6, 0.6, 0.1]]),
        ),
        // c in [1.05, 2.15] for t ≤ 0.5: well inside (0, c_max = 4).
        c: linear(
            Spatial::trig(1.6, vec![[0.4, 1.3, 0.4, 0.7, 1.0]]),
            Spatial::trig(0.0, vec![[0.3, 0.8, 0.2, 1.1, 0.7]]),
        ),
        mu: linear(
            Spatial::trig(0.2, vec![[0.5, 1.2, 0.1, 0.9, 0.6]]),
            Spatial::trig(0.0, vec![[0.3, 0.6, 0.9, 1.5, 0.3]]),
        ),
        law: law(omega),
        mode,
    }
}

/// Fields in the finite-element space (u, μ quadratic and c linear in x, y), periodic in time
/// (for the rates in time; see `time_rates`).
pub fn polynomial_fields() -> Manufactured {
    let sine = |steady: [f64; 6], moving: [f64; 6]| Field {
        steady: Spatial::poly(steady),
        moving: Spatial::poly(moving),
        clock: Clock::Sine(2.0),
    };
    Manufactured {
        ux: sine(
            [0.0, 0.05, 0.02, 0.03, -0.04, 0.02],
            [0.0, 0.02, 0.0, -0.05, 0.03, 0.04],
        ),
        uy: sine(
            [0.0, -0.01, 0.04, 0.02, 0.05, -0.03],
            [0.0, 0.0, 0.03, 0.04, -0.02, 0.05],
        ),
        // c in [0.6, 3.0] on the unit square: inside (0, c_max = 4).
        c: sine(
            [1.8, 0.3, -0.2, 0.0, 0.0, 0.0],
            [0.0, 0.4, 0.3, 0.0, 0.0, 0.0],
        ),
        mu: sine(
            [0.1, 0.2, -0.3, 0.4, 0.2, -0.1],
            [0.0, 0.3, 0.2, -0.2, 0.1, 0.3],
        ),
        law: law(OMEGA),
        mode: GeometryMode::PlaneStrain,
    }
}

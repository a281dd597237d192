//! Finite-strain deformation–diffusion laws at one point (total Lagrangian: every quantity per
//! unit reference volume or reference area, gradients by reference coordinates).
//!
//! Two laws share one output ([`FiniteOutput`]), so that one element kernel serves both:
//!
//! * [`GelLaw`]: a polymer network swollen by a solvent (Hong, Zhao, Zhou & Suo, J. Mech. Phys.
//!   Solids 56 (2008) 1779, eq. 2.6–2.9 and §3; equation numbers from memory). Free energy per dry volume
//!   `W = ½ G (F_d:F_d − 3 − 2 ln J_d) + (RT/Ω)[(J_d − 1) ln(1 − 1/J_d) + χ (1 − 1/J_d)]`
//!   with `G = N k T` the shear modulus of the network, `Ω` the molar volume of the solvent,
//!   `χ` the Flory–Huggins parameter and molecular incompressibility `J_d = 1 + Ω C_d` built
//!   in: the solvent content is a function of the deformation, not an independent variable.
//!   The chemical potential `μ` of the solvent enters through the Legendre transform
//!   `Ŵ = W − μ C_d`, so the nominal stress is `P = ∂Ŵ/∂F` at fixed `μ`. Runs start from a
//!   free-swelling reference state of stretch `λ0` (the dry state is singular,
//!   `ln(1 − 1/J_d)` at `J_d = 1`): `F_d = λ0 F`, quantities per reference volume are the dry
//!   ones divided by `λ0³`. The potential equation becomes the incompressibility constraint
//!   `RT Ω (c_J(F) − c) = 0`, with `c_J = (J − λ0⁻³)/Ω` the solvent concentration per
//!   reference volume that the deformation holds; the concentration field is its projection.
//! * [`HostLaw`]: a host that swells by a concentration-driven isotropic stretch,
//!   `F = F_e F_s`, `F_s = J_s^{1/3} I`, `J_s = 1 + Ω (c − c_ref)`, with a compressible
//!   neo-Hookean elastic part `ψ_e = ½ G (F_e:F_e − 3 − 2 ln J_e) + ½ Λ (ln J_e)²` per unit
//!   stress-free volume; `ψ = J_s ψ_e(F_e) + ψ_chem(c)` per reference volume and
//!   `μ_local = ∂ψ/∂c = μ_chem + Ω [ψ_e − J_e σ_h]`, whose small-strain limit is the
//!   `μ_chem − Ω σ_h` of the small-strain law (docs/theory.md, "Finite strain").
//!
//! Flux: the reference (nominal) flux is the pull-back of the current one,
//! `J₀ = −F⁻¹ M(c) F⁻ᵀ ∇₀μ`, with the mobility law evaluated at the concentration per reference
//! volume (for the dilute law `D c/(RT)` this is exactly the pull-back of `D c_current/(RT)`
//! times `J`). The gel uses `M = D c_J/(RT)`.
//!
//! Both stresses have the form `P = a F + q(J) F⁻ᵀ`, whose tangent
//! `∂P_iK/∂F_jL = a δ_ij δ_KL + J q'(J) F⁻¹_Ki F⁻¹_Lj − q F⁻¹_Kj F⁻¹_Li` is shared.
//! Two-point tensors are flattened row by row: component `(i, K)` sits at `3 i + K`
//! ([`flat`]).
//!
//! ```
//! use dilata_material::finite::{FiniteInput, GelLaw, GelParams};
//! use nalgebra::{Matrix3, Vector3};
//! let gel = GelLaw::new(GelParams {
//!     shear_modulus: 4.1e4,         // Pa, N k T
//!     solvent_molar_volume: 1.8e-5, // m³/mol (water)
//!     chi: 0.2,
//!     temperature: 298.15,
//!     diffusivity: 1e-9,
//!     reference_stretch: 3.0,
//! })?;
//! // The reference state is stress-free at the potential of free swelling at λ0.
//! let mu0 = gel.free_swelling_potential(3.0);
//! let out = gel.evaluate(&FiniteInput {
//!     f: Matrix3::identity(),
//!     c: gel.reference_concentration(),
//!     mu: mu0,
//!     grad_mu: Vector3::zeros(),
//!     grad_c: Vector3::zeros(),
//! })?;
//! assert!(out.stress.amax() < 1e-9 * 4.1e4);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

use nalgebra::{Matrix3, SMatrix, Vector3};

use crate::chemical::{ChemicalLaw, GAS_CONSTANT};
use crate::elastic::{Isotropic, Voigt};
use crate::error::{finite, positive, ParameterError, RangeError, RangeLaw};
use crate::gradient::GradientEnergy;
use crate::mobility::MobilityLaw;

/// `∂P/∂F` with two-point indices flattened by [`flat`].
pub type Tangent9 = SMatrix<f64, 9, 9>;

/// Position of component `(i, K)` of a flattened two-point tensor.
#[inline]
pub fn flat(i: usize, k: usize) -> usize {
    3 * i + k
}

/// State at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FiniteInput {
    /// Deformation gradient `F = I + ∇₀u` (relative to the reference state).
    pub f: Matrix3<f64>,
    /// Concentration per reference volume in mol/m³ (the field value).
    pub c: f64,
    /// Chemical potential in J/mol (the field value).
    pub mu: f64,
    /// Reference gradient of the chemical potential in J/(mol·m).
    pub grad_mu: Vector3<f64>,
    /// Reference gradient of the concentration in mol/m⁴ (read with a gradient energy).
    pub grad_c: Vector3<f64>,
}

/// Everything a finite-strain law gives at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FiniteOutput {
    /// Nominal (first Piola–Kirchhoff) stress `P` in Pa, per reference area.
    pub stress: Matrix3<f64>,
    /// `∂P/∂F`, flattened ([`flat`]).
    pub dstress_df: Tangent9,
    /// `∂P/∂c`.
    pub dstress_dc: Matrix3<f64>,
    /// `∂P/∂μ`.
    pub dstress_dmu: Matrix3<f64>,
    /// Integrand of the potential equation without the gradient term, in J/mol: `μ − μ_local`
    /// for a host, `RT Ω (c_J − c)` for a gel.
    pub potential: f64,
    /// `∂(potential)/∂F`.
    pub dpotential_df: Matrix3<f64>,
    /// `∂(potential)/∂c`.
    pub dpotential_dc: f64,
    /// `∂(potential)/∂μ`.
    pub dpotential_dmu: f64,
    /// Nominal flux `J₀ = −F⁻¹ M F⁻ᵀ ∇₀μ` in mol/(m²·s) per reference area.
    pub flux: Vector3<f64>,
    /// `∂J₀/∂(∇₀μ)`.
    pub dflux_dgrad_mu: Matrix3<f64>,
    /// `∂J₀/∂c`.
    pub dflux_dc: Vector3<f64>,
    /// `∂J₀_K/∂F_jL` at `[K][(j, L)]`.
    pub dflux_df: [Matrix3<f64>; 3],
    /// `κ ∇₀c` (zero without a gradient energy).
    pub kappa_grad_c: Vector3<f64>,
    /// `κ`.
    pub kappa: Matrix3<f64>,
    /// Elastic (network) energy per reference volume in J/m³.
    pub elastic_energy: f64,
    /// Chemical (mixing) free energy per reference volume in J/m³.
    pub chemical_energy: f64,
    /// Gradient energy per reference volume in J/m³.
    pub gradient_energy: f64,
    /// Volume relative to the stress-free, species-free state: `λ0³ det F` for a gel (volume
    /// per dry volume), `det F` for a host.
    pub swelling_ratio: f64,
    /// The concentration the law works with, per reference volume: `c_J(F)` for a gel, the
    /// field value for a host.
    pub concentration: f64,
}

/// Parameters of [`GelLaw`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GelParams {
    /// Shear modulus of the dry network `G = N k T` in Pa.
    pub shear_modulus: f64,
    /// Molar volume of the solvent `Ω` in m³/mol.
    pub solvent_molar_volume: f64,
    /// Flory–Huggins interaction parameter `χ` (dimensionless).
    pub chi: f64,
    /// Temperature in K.
    pub temperature: f64,
    /// Solvent diffusivity `D` in m²/s (mobility `D c/(RT)` in the current state).
    pub diffusivity: f64,
    /// Isotropic stretch `λ0 > 1` of the reference state relative to the dry network.
    pub reference_stretch: f64,
}

/// Polymer gel: neo-Hookean network plus Flory–Huggins mixing with molecular incompressibility
/// (module documentation).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GelLaw {
    p: GelParams,
}

/// Parameters of [`HostLaw`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HostParams {
    /// Isotropic elastic constants of the stress-free host (`Λ`, `G` of the neo-Hookean law).
    pub elastic: Isotropic,
    /// Partial molar volume `Ω` in m³/mol: `J_s = 1 + Ω (c − c_ref)`.
    pub partial_molar_volume: f64,
    /// Stress-free concentration `c_ref` in mol/m³.
    pub c_ref: f64,
    /// Chemical free energy per reference volume.
    pub chemical: ChemicalLaw,
    /// Mobility, evaluated at the concentration per reference volume and pulled back.
    pub mobility: MobilityLaw,
    /// Gradient energy in reference coordinates.
    pub gradient: GradientEnergy,
}

/// Large-volume-change host: multiplicative split with an isotropic swelling stretch and a
/// compressible neo-Hookean elastic part (module documentation).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HostLaw {
    p: HostParams,
}

/// A finite-strain law.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum FiniteLaw {
    Gel(GelLaw),
    Host(HostLaw),
}

/// `F⁻¹` and `J` of a deformation gradient, or the range error of a non-positive `J`.
fn inverse_and_jacobian(f: &Matrix3<f64>) -> Result<(Matrix3<f64>, f64), RangeError> {
    if !f.iter().all(|v| v.is_finite()) {
        return Err(RangeError::NonFinite {
            law: RangeLaw::Input,
            quantity: "deformation gradient",
        });
    }
    let j = f.determinant();
    if j <= 0.0 {
        return Err(RangeError::VolumeRatio {
            law: RangeLaw::Kinematics,
            ratio: j,
            lower: 0.0,
        });
    }
    let h = f.try_inverse().ok_or(RangeError::VolumeRatio {
        law: RangeLaw::Kinematics,
        ratio: j,
        lower: 0.0,
    })?;
    Ok((h, j))
}

/// `∂P/∂F` of `P = a F + q(J) F⁻ᵀ` with `dq = J q'(J)`.
fn split_tangent(a: f64, q: f64, j_dq: f64, h: &Matrix3<f64>) -> Tangent9 {
    let mut t = Tangent9::zeros();
    for i in 0..3 {
        for k in 0..3 {
            for jj in 0..3 {
                for l in 0..3 {
                    let mut v = j_dq * h[(k, i)] * h[(l, jj)] - q * h[(k, jj)] * h[(l, i)];
                    if i == jj && k == l {
                        v += a;
                    }
                    t[(flat(i, k), flat(jj, l))] = v;
                }
            }
        }
    }
    t
}

/// Nominal flux `−H M Hᵀ g` and its derivative by `F` for a fixed `M` (`H = F⁻¹`).
fn pulled_back_flux(
    h: &Matrix3<f64>,
    m: &Matrix3<f64>,
    g: &Vector3<f64>,
) -> (Vector3<f64>, Matrix3<f64>, [Matrix3<f64>; 3]) {
    let a = h * m * h.transpose();
    let ag = a * g;
    let htg = h.transpose() * g;
    // d(A g)_K/dF_jL = −H_Kj (A g)_L − A_KL (Hᵀ g)_j; the flux is −A g.
    let mut d = [Matrix3::zeros(); 3];
    for (k, dk) in d.iter_mut().enumerate() {
        for jj in 0..3 {
            for l in 0..3 {
                dk[(jj, l)] = h[(k, jj)] * ag[l] + a[(k, l)] * htg[jj];
            }
        }
    }
    (-ag, -a, d)
}

impl GelLaw {
    /// Checked constructor: positive modulus, molar volume, temperature, diffusivity, finite
    /// `χ`, and `λ0 > 1`.
    pub fn new(p: GelParams) -> Result<Self, ParameterError> {
        positive("shear modulus", p.shear_modulus)?;
        positive("solvent molar volume", p.solvent_molar_volume)?;
        finite("chi", p.chi)?;
        positive("temperature", p.temperature)?;
        positive("diffusivity", p.diffusivity)?;
        positive("reference stretch minus one", p.reference_stretch - 1.0)?;
        Ok(GelLaw { p })
    }

    /// The parameters.
    pub fn params(&self) -> &GelParams {
        &self.p
    }

    /// `RT` in J/mol.
    pub fn rt(&self) -> f64 {
        GAS_CONSTANT * self.p.temperature
    }

    /// Solvent concentration per reference volume held at `F = I`: `(1 − λ0⁻³)/Ω`.
    pub fn reference_concentration(&self) -> f64 {
        (1.0 - self.p.reference_stretch.powi(-3)) / self.p.solvent_molar_volume
    }

    /// Chemical potential (J/mol) at which a free gel is in equilibrium at the isotropic stretch
    /// `λ` from dry (Hong et al. 2008, eq. 3.3, times `RT`):
    /// `RT [GΩ/RT (1/λ − 1/λ³) + ln(1 − λ⁻³) + λ⁻³ + χ λ⁻⁶]`.
    pub fn free_swelling_potential(&self, lambda: f64) -> f64 {
        let rt = self.rt();
        let nv = self.p.shear_modulus * self.p.solvent_molar_volume / rt;
        let l3 = lambda.powi(-3);
        rt * (nv * (1.0 / lambda - l3) + (1.0 - l3).ln() + l3 + self.p.chi * l3 * l3)
    }

    /// `dW_mix/dJ_d` and `d²W_mix/dJ_d²` per dry volume.
    fn mixing_derivatives(&self, jd: f64) -> (f64, f64, f64) {
        let s = self.rt() / self.p.solvent_molar_volume;
        let chi = self.p.chi;
        let w = s * ((jd - 1.0) * (1.0 - 1.0 / jd).ln() + chi * (1.0 - 1.0 / jd));
        let w1 = s * ((1.0 - 1.0 / jd).ln() + 1.0 / jd + chi / (jd * jd));
        let w2 = s * (1.0 / (jd * (jd - 1.0)) - 1.0 / (jd * jd) - 2.0 * chi / (jd * jd * jd));
        (w, w1, w2)
    }

    /// Evaluate at one point. A point at or below the dry volume (`λ0³ det F ≤ 1`) or inverted
    /// gives a recoverable [`RangeError`].
    pub fn evaluate(&self, input: &FiniteInput) -> Result<FiniteOutput, RangeError> {
        check_scalars(input)?;
        let (h, j) = inverse_and_jacobian(&input.f)?;
        let p = &self.p;
        let l0 = p.reference_stretch;
        let l03 = l0 * l0 * l0;
        let jd = l03 * j;
        if jd <= 1.0 {
            return Err(RangeError::VolumeRatio {
                law: RangeLaw::GelMixing,
                ratio: jd,
                lower: 1.0,
            });
        }
        let omega = p.solvent_molar_volume;
        let g_mod = p.shear_modulus;
        let (w_mix, w1, w2) = self.mixing_derivatives(jd);
        let a = g_mod / l0;
        let q = j * (w1 - input.mu / omega) - g_mod / l03;
        let j_dq = j * ((w1 - input.mu / omega) + j * l03 * w2);
        let ht = h.transpose();
        let stress = input.f * a + ht * q;
        let dstress_df = split_tangent(a, q, j_dq, &h);
        let dstress_dmu = ht * (-j / omega);
        let rt = self.rt();
        let c_j = (j - 1.0 / l03) / omega;
        // Potential equation: RT Ω (c_J − c).
        let potential = rt * omega * (c_j - input.c);
        let dpotential_df = ht * (rt * j);
        // Mobility D c_J/(RT), pulled back.
        let m_scalar = p.diffusivity * c_j / rt;
        let (flux, dflux_dgrad_mu, mut dflux_df) = pulled_back_flux(
            &h,
            &Matrix3::from_diagonal_element(m_scalar),
            &input.grad_mu,
        );
        // Through c_J: dJ₀/dc_J = −(D/RT) H Hᵀ g, dc_J/dF = J Hᵀ/Ω.
        let dflux_dcj = -(h * ht * input.grad_mu) * (p.diffusivity / rt);
        for (k, dk) in dflux_df.iter_mut().enumerate() {
            *dk += ht * (dflux_dcj[k] * j / omega);
        }
        let fro = input.f.norm_squared();
        let elastic_energy = 0.5 * g_mod * (l0 * l0 * fro - 3.0 - 2.0 * jd.ln()) / l03;
        Ok(FiniteOutput {
            stress,
            dstress_df,
            dstress_dc: Matrix3::zeros(),
            dstress_dmu,
            potential,
            dpotential_df,
            dpotential_dc: -rt * omega,
            dpotential_dmu: 0.0,
            flux,
            dflux_dgrad_mu,
            dflux_dc: Vector3::zeros(),
            dflux_df,
            kappa_grad_c: Vector3::zeros(),
            kappa: Matrix3::zeros(),
            elastic_energy,
            chemical_energy: w_mix / l03,
            gradient_energy: 0.0,
            swelling_ratio: jd,
            concentration: c_j,
        })
    }
}

impl HostLaw {
    /// Checked constructor: positive partial molar volume, finite `c_ref`, an isotropic
    /// mobility (an anisotropic one would have to turn with the material, which the pull-back
    /// `F⁻¹ M F⁻ᵀ` of a fixed tensor does not do) with the chemical law's temperature.
    pub fn new(p: HostParams) -> Result<Self, ParameterError> {
        positive("partial molar volume", p.partial_molar_volume)?;
        finite("stress-free concentration", p.c_ref)?;
        if !p.mobility.is_isotropic() {
            return Err(ParameterError::Unsupported(
                "finite strain needs an isotropic mobility (a scalar diffusivity)",
            ));
        }
        if let (Some(chemical), Some(mobility)) =
            (p.chemical.temperature(), p.mobility.temperature())
        {
            if (chemical - mobility).abs() > 1e-12 * chemical {
                return Err(ParameterError::TemperatureMismatch { chemical, mobility });
            }
        }
        Ok(HostLaw { p })
    }

    /// The parameters.
    pub fn params(&self) -> &HostParams {
        &self.p
    }

    /// Swelling volume ratio `J_s = 1 + Ω (c − c_ref)`, or the range error of a non-positive one.
    fn swelling_volume(&self, c: f64) -> Result<f64, RangeError> {
        let js = 1.0 + self.p.partial_molar_volume * (c - self.p.c_ref);
        if js <= 0.0 {
            return Err(RangeError::VolumeRatio {
                law: RangeLaw::HostSwelling,
                ratio: js,
                lower: 0.0,
            });
        }
        Ok(js)
    }

    /// Evaluate at one point. An inverted point, or a concentration whose swelling volume
    /// `J_s` is not positive or which the chemical or mobility law refuses, gives a recoverable
    /// [`RangeError`].
    pub fn evaluate(&self, input: &FiniteInput) -> Result<FiniteOutput, RangeError> {
        check_scalars(input)?;
        let (h, j) = inverse_and_jacobian(&input.f)?;
        let p = &self.p;
        let c = input.c;
        let omega = p.partial_molar_volume;
        let js = self.swelling_volume(c)?;
        let chem = p.chemical.evaluate(c)?;
        let mob = p.mobility.evaluate(c)?;
        let (lam, g_mod) = (p.elastic.lambda(), p.elastic.shear());
        let g = js.cbrt();
        let ie = input.f.norm_squared() / (g * g);
        let lnje = j.ln() - js.ln();
        let ht = h.transpose();
        // P = G g F + (Λ J_s ln J_e − G J_s) F⁻ᵀ.
        let a = g_mod * g;
        let q = lam * js * lnje - g_mod * js;
        let j_dq = lam * js;
        let stress = input.f * a + ht * q;
        let dstress_df = split_tangent(a, q, j_dq, &h);
        let dg_dc = omega / (3.0 * g * g);
        let dq_dc = omega * (lam * lnje - lam - g_mod);
        let dstress_dc = input.f * (g_mod * dg_dc) + ht * dq_dc;
        let mu_mech = omega
            * (g_mod / 6.0 * ie - 0.5 * g_mod - (g_mod + lam) * lnje + 0.5 * lam * lnje * lnje);
        let dmu_mech_dc = omega * omega / js * (-g_mod / 9.0 * ie + g_mod + lam - lam * lnje);
        let elastic_energy = js * (0.5 * g_mod * (ie - 3.0 - 2.0 * lnje) + 0.5 * lam * lnje * lnje);
        let (flux, dflux_dgrad_mu, dflux_df) = pulled_back_flux(&h, &mob.mobility, &input.grad_mu);
        let dflux_dc = -(h * mob.dmobility_dc * ht * input.grad_mu);
        Ok(FiniteOutput {
            stress,
            dstress_df,
            dstress_dc,
            dstress_dmu: Matrix3::zeros(),
            potential: input.mu - chem.mu - mu_mech,
            // ∂μ_local/∂F = ∂P/∂c (both are second derivatives of ψ).
            dpotential_df: -dstress_dc,
            dpotential_dc: -(chem.dmu_dc + dmu_mech_dc),
            dpotential_dmu: 1.0,
            flux,
            dflux_dgrad_mu,
            dflux_dc,
            dflux_df,
            kappa_grad_c: p.gradient.matrix() * input.grad_c,
            kappa: *p.gradient.matrix(),
            elastic_energy,
            chemical_energy: chem.free_energy,
            gradient_energy: p.gradient.energy(&input.grad_c),
            swelling_ratio: j,
            concentration: c,
        })
    }
}

fn check_scalars(input: &FiniteInput) -> Result<(), RangeError> {
    let non_finite = |quantity| RangeError::NonFinite {
        law: RangeLaw::Input,
        quantity,
    };
    if !input.c.is_finite() {
        return Err(non_finite("concentration"));
    }
    if !input.mu.is_finite() {
        return Err(non_finite("chemical potential"));
    }
    if !input.grad_mu.iter().all(|v| v.is_finite()) {
        return Err(non_finite("potential gradient"));
    }
    if !input.grad_c.iter().all(|v| v.is_finite()) {
        return Err(non_finite("concentration gradient"));
    }
    Ok(())
}

impl FiniteLaw {
    /// Evaluate at one point.
    pub fn evaluate(&self, input: &FiniteInput) -> Result<FiniteOutput, RangeError> {
        match self {
            FiniteLaw::Gel(g) => g.evaluate(input),
            FiniteLaw::Host(h) => h.evaluate(input),
        }
    }

    /// Scale of chemical-potential differences in J/mol (`RT`, or the chemical law's scale).
    pub fn potential_scale(&self) -> f64 {
        match self {
            FiniteLaw::Gel(g) => g.rt(),
            FiniteLaw::Host(h) => h.p.chemical.potential_scale(),
        }
    }

    /// Chemical potential of the stress-free reference state where the law knows it (a gel:
    /// free swelling at its reference stretch), as a starting guess.
    pub fn reference_potential(&self) -> Option<f64> {
        match self {
            FiniteLaw::Gel(g) => Some(g.free_swelling_potential(g.p.reference_stretch)),
            FiniteLaw::Host(_) => None,
        }
    }

    /// Whether the law has a gradient energy.
    pub fn has_gradient(&self) -> bool {
        match self {
            FiniteLaw::Gel(_) => false,
            FiniteLaw::Host(h) => !h.p.gradient.is_zero(),
        }
    }

    /// Check a nodal concentration against the laws that have a range (the host's chemical and
    /// mobility laws and its swelling volume; a gel's concentration field is a projection of the
    /// deformation, and only its finiteness matters).
    pub fn check_concentration(&self, c: f64) -> Result<(), RangeError> {
        match self {
            FiniteLaw::Gel(_) => {
                if c.is_finite() {
                    Ok(())
                } else {
                    Err(RangeError::NonFinite {
                        law: RangeLaw::Input,
                        quantity: "concentration",
                    })
                }
            }
            FiniteLaw::Host(h) => {
                h.swelling_volume(c)?;
                h.p.chemical.evaluate(c)?;
                h.p.mobility.evaluate(c)?;
                Ok(())
            }
        }
    }
}

/// Cauchy stress `σ = P Fᵀ / J` in Voigt order `[xx, yy, zz, xy, yz, xz]`.
pub fn cauchy_voigt(p: &Matrix3<f64>, f: &Matrix3<f64>) -> Voigt {
    let j = f.determinant();
    let s = p * f.transpose() / j;
    // Symmetric up to round-off for these laws; average the off-diagonal pairs.
    Voigt::from_column_slice(&[
        s[(0, 0)],
        s[(1, 1)],
        s[(2, 2)],
        0.5 * (s[(0, 1)] + s[(1, 0)]),
        0.5 * (s[(1, 2)] + s[(2, 1)]),
        0.5 * (s[(0, 2)] + s[(2, 0)]),
    ])
}

/// Principal stretches `sqrt(eig(Fᵀ F))`, largest first.
pub fn principal_stretches(f: &Matrix3<f64>) -> [f64; 3] {
    let c = f.transpose() * f;
    let e = c.symmetric_eigenvalues();
    let mut s = [
        e[0].max(0.0).sqrt(),
        e[1].max(0.0).sqrt(),
        e[2].max(0.0).sqrt(),
    ];
    s.sort_by(|a, b| b.total_cmp(a));
    s
}

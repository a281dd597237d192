//! Swelling (eigen)strain from concentration and the stress-dependent part of the coupled
//! small-strain law.
//!
//! Swelling strain, linear in `c`, in Voigt form `[xx, yy, zz, xy, yz, xz]` with engineering
//! shears (as in [`crate::elastic`]):
//! * isotropic (Vegard): `ε_c = (Ω/3)(c − c_ref) I`, so that the volume change is
//!   `tr ε_c = Ω (c − c_ref)` (the convention of docs/theory.md: Ω is the partial molar volume, *not*
//!   the linear coefficient);
//! * tensor: `ε_c = β (c − c_ref)` for any expansion tensor β per unit concentration (this also
//!   covers an in-plane-only misfit with `β_zz = 0`).
//!
//! [`SwellingLaw::in_plane_only`] drops the out-of-plane entries (`zz`, `yz`, `xz`) of either
//! form: the second of the two plane-strain conventions of docs/theory.md §11 (the swelling acts
//! in the plane only, `ε_c,zz = 0`), where the default keeps them (a long body swelling along its
//! axis too, held at `ε_zz = 0`).
//!
//! Mechanics ([`mechanics`]): with `e = ε − ε_c(c)` and a possibly concentration-dependent
//! stiffness `C(c)`, the stored energy `W = ½ e:C:e` gives
//! * `σ = ∂W/∂ε = C e`,
//! * `μ_mech = ∂W/∂c = −σ : dε_c/dc + ½ e:(dC/dc):e` (for isotropic swelling and constant
//!   stiffness `μ_mech = −Ω σ_h`, tension positive, `σ_h = tr σ/3`),
//! * `dσ/dε = C`, `dσ/dc = (dC/dc) e − C β`, `dμ_mech/dε = (dσ/dc)ᵀ`,
//!   `dμ_mech/dc = βᵀCβ − 2 βᵀ(dC/dc) e + ½ e:(d²C/dc²):e` with `β = dε_c/dc`.
//!
//! Units: `Ω` in m³/mol, β in m³/mol (strain per mol/m³), stress in Pa, energy in J/m³,
//! `μ_mech` in J/mol.

use crate::elastic::{Stiffness, Voigt};
use crate::error::{finite, ParameterError};
use crate::stiffness::StiffnessState;

/// Parameters of isotropic (Vegard) swelling.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct IsotropicSwellingParams {
    /// Partial molar volume Ω in m³/mol (finite; negative for a host that contracts).
    pub partial_molar_volume: f64,
    /// Stress-free reference concentration `c_ref` in mol/m³ (finite).
    pub c_ref: f64,
}

/// Parameters of swelling with a full expansion tensor.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TensorSwellingParams {
    /// Expansion tensor β = dε_c/dc in m³/mol, Voigt form with engineering shears
    /// (`β[3] = 2 β_xy`, ...).
    pub expansion: Voigt,
    /// Stress-free reference concentration `c_ref` in mol/m³ (finite).
    pub c_ref: f64,
}

/// Swelling strain and its concentration derivative at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SwellingState {
    /// `ε_c` (dimensionless, Voigt, engineering shears).
    pub strain: Voigt,
    /// `dε_c/dc` in m³/mol (constant for these linear laws).
    pub dstrain_dc: Voigt,
}

/// A swelling law `ε_c = β (c − c_ref)`, built by one of the checked constructors.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SwellingLaw {
    expansion: Voigt,
    c_ref: f64,
}

impl SwellingLaw {
    /// Isotropic swelling `ε_c = (Ω/3)(c − c_ref) I`.
    pub fn isotropic(params: IsotropicSwellingParams) -> Result<Self, ParameterError> {
        let omega = finite("partial_molar_volume", params.partial_molar_volume)?;
        let third = omega / 3.0;
        Ok(SwellingLaw {
            expansion: Voigt::new(third, third, third, 0.0, 0.0, 0.0),
            c_ref: finite("c_ref", params.c_ref)?,
        })
    }

    /// Swelling with a full expansion tensor.
    pub fn tensor(params: TensorSwellingParams) -> Result<Self, ParameterError> {
        if let Some(bad) = params.expansion.iter().find(|v| !v.is_finite()) {
            return Err(ParameterError::NotFinite {
                name: "expansion",
                value: *bad,
            });
        }
        Ok(SwellingLaw {
            expansion: params.expansion,
            c_ref: finite("c_ref", params.c_ref)?,
        })
    }

    /// The same law with the out-of-plane entries `β_zz`, `β_yz`, `β_xz` set to zero, so that
    /// the swelling strain lies in the x–y plane. For plane strain only: in 3D and axisymmetry
    /// the `zz` slot is a real direction (the hoop direction in axisymmetry), and in plane
    /// stress the condensed stiffness ignores `ε_c,zz` anyway.
    pub fn in_plane_only(&self) -> Self {
        let mut expansion = self.expansion;
        expansion[2] = 0.0;
        expansion[4] = 0.0;
        expansion[5] = 0.0;
        SwellingLaw {
            expansion,
            c_ref: self.c_ref,
        }
    }

    /// The expansion tensor β = dε_c/dc in m³/mol (Voigt, engineering shears).
    pub fn expansion(&self) -> &Voigt {
        &self.expansion
    }

    /// Stress-free reference concentration in mol/m³.
    pub fn c_ref(&self) -> f64 {
        self.c_ref
    }

    /// `ε_c(c)` and `dε_c/dc` at `c` (mol/m³). Defined for every concentration.
    #[inline]
    pub fn evaluate(&self, c: f64) -> SwellingState {
        SwellingState {
            strain: self.expansion * (c - self.c_ref),
            dstrain_dc: self.expansion,
        }
    }
}

/// Stress, mechanical potential and their derivatives at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MechanicalState {
    /// Elastic strain `e = ε − ε_c` (Voigt, engineering shears).
    pub elastic_strain: Voigt,
    /// Cauchy stress σ in Pa (Voigt).
    pub stress: Voigt,
    /// Stored elastic energy `W = ½ e:C:e` in J/m³.
    pub energy: f64,
    /// Mechanical part of the chemical potential `μ_mech = ∂W/∂c` in J/mol.
    pub mu: f64,
    /// `dσ/dε = C` in Pa.
    pub dstress_dstrain: Stiffness,
    /// `dσ/dc` in Pa·m³/mol.
    pub dstress_dc: Voigt,
    /// `dμ_mech/dε` in J/mol per unit (Voigt engineering) strain; equals `dσ/dc` because both
    /// are mixed second derivatives of `W`.
    pub dmu_dstrain: Voigt,
    /// `dμ_mech/dc` in J·m³/mol².
    pub dmu_dc: f64,
}

/// Stress and `μ_mech` from the total strain `strain` (Voigt, engineering shears), the stiffness
/// and the swelling strain at the same concentration. A pure function; see the module
/// documentation for the formulas.
#[inline]
pub fn mechanics(
    stiffness: &StiffnessState,
    swelling: &SwellingState,
    strain: &Voigt,
) -> MechanicalState {
    let c = &stiffness.stiffness;
    let dc = &stiffness.dstiffness_dc;
    let beta = &swelling.dstrain_dc;
    let e = strain - swelling.strain;
    if e.iter().all(|v| *v == 0.0) && beta.iter().all(|v| *v == 0.0) {
        // No elastic strain and no swelling (a body without mechanics): every product below
        // is zero; skip the six 6×6 products.
        return MechanicalState {
            elastic_strain: e,
            stress: Voigt::zeros(),
            energy: 0.0,
            mu: 0.0,
            dstress_dstrain: *c,
            dstress_dc: Voigt::zeros(),
            dmu_dstrain: Voigt::zeros(),
            dmu_dc: 0.0,
        };
    }
    let stress = c * e;
    let dc_e = dc * e;
    let dstress_dc = dc_e - c * beta;
    let mu = -stress.dot(beta) + 0.5 * e.dot(&dc_e);
    let dmu_dc = beta.dot(&(c * beta)) - 2.0 * beta.dot(&dc_e)
        + 0.5 * e.dot(&(stiffness.d2stiffness_dc2 * e));
    MechanicalState {
        elastic_strain: e,
        stress,
        energy: 0.5 * e.dot(&stress),
        mu,
        dstress_dstrain: *c,
        dstress_dc,
        dmu_dstrain: dstress_dc,
        dmu_dc,
    }
}

#[cfg(test)]
mod tests {
    use super::{
        mechanics, IsotropicSwellingParams, MechanicalState, SwellingLaw, TensorSwellingParams,
        Voigt,
    };
    use crate::elastic::{hydrostatic, Isotropic};
    use crate::stiffness::{LinearYoungParams, StiffnessLaw};

    const OMEGA: f64 = 3.5e-6;
    const C_REF: f64 = 2.0e3;

    fn isotropic_swelling() -> SwellingLaw {
        SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: OMEGA,
            c_ref: C_REF,
        })
        .unwrap()
    }

    fn tensor_swelling() -> SwellingLaw {
        SwellingLaw::tensor(TensorSwellingParams {
            expansion: Voigt::new(2.0e-6, 0.5e-6, 1.0e-6, 0.4e-6, -0.2e-6, 0.3e-6),
            c_ref: C_REF,
        })
        .unwrap()
    }

    fn constant() -> StiffnessLaw {
        StiffnessLaw::isotropic(Isotropic::new(10e9, 0.3).unwrap())
    }

    fn softening() -> StiffnessLaw {
        StiffnessLaw::linear_young(LinearYoungParams {
            young_at_zero: 12e9,
            young_at_max: 6e9,
            poisson: 0.3,
            c_max: 2.37e4,
        })
        .unwrap()
    }

    fn at(stiff: &StiffnessLaw, swell: &SwellingLaw, strain: &Voigt, c: f64) -> MechanicalState {
        mechanics(&stiff.evaluate(c).unwrap(), &swell.evaluate(c), strain)
    }

    fn strain() -> Voigt {
        Voigt::new(1.2e-3, -4.0e-4, 7.0e-4, 3.0e-4, -2.0e-4, 5.0e-4)
    }

    /// Vegard swelling: ε_c = (Ω/3)Δc on the diagonal, no shear, volume change Ω Δc
    /// (docs/theory.md convention).
    #[test]
    fn isotropic_swelling_strain() {
        let s = isotropic_swelling().evaluate(C_REF + 1.0e3);
        let third = OMEGA * 1.0e3 / 3.0;
        let expected = Voigt::new(third, third, third, 0.0, 0.0, 0.0);
        assert!((s.strain - expected).amax() < 1e-15 * third);
        assert_eq!(s.strain.fixed_rows::<3>(3), nalgebra::Vector3::zeros());
        assert!((s.strain.fixed_rows::<3>(0).sum() - OMEGA * 1.0e3).abs() < 1e-18);
    }

    /// μ_mech = −Ω σ_h for isotropic swelling and constant stiffness, at any strain; its sign:
    /// tension (σ_h > 0) lowers the potential, so solute is drawn to tension (docs/theory.md;
    /// Sofronis & McMeeking 1989, from memory).
    #[test]
    fn mechanical_potential_is_minus_omega_hydrostatic() {
        for c in [0.0, C_REF, 1.5e4] {
            let m = at(&constant(), &isotropic_swelling(), &strain(), c);
            let expected = -OMEGA * hydrostatic(&m.stress);
            assert!((m.mu - expected).abs() < 1e-12 * expected.abs(), "c = {c}");
        }
        let tension = Voigt::new(1e-3, 1e-3, 1e-3, 0.0, 0.0, 0.0);
        let m = at(&constant(), &isotropic_swelling(), &tension, C_REF);
        assert!(hydrostatic(&m.stress) > 0.0 && m.mu < 0.0);
    }

    /// Free swelling is stress-free; full constraint (ε = 0) gives σ = −K Ω Δc I, the thermal
    /// analogy with αΔT → ΩΔc/3 (Timoshenko & Goodier, thermal stresses; from memory).
    #[test]
    fn free_and_constrained_swelling() {
        let swell = isotropic_swelling();
        let c = C_REF + 5.0e3;
        let free = at(&constant(), &swell, &swell.evaluate(c).strain, c);
        assert!(free.stress.amax() < 1e-6 && free.mu.abs() < 1e-12 && free.energy.abs() < 1e-12);
        let fixed = at(&constant(), &swell, &Voigt::zeros(), c);
        let k = Isotropic::new(10e9, 0.3).unwrap().bulk();
        let expected = -k * OMEGA * 5.0e3;
        for i in 0..3 {
            assert!((fixed.stress[i] - expected).abs() < 1e-9 * expected.abs());
            assert!(fixed.stress[i + 3].abs() < 1e-6);
        }
    }

    /// σ = ∂W/∂ε and μ_mech = ∂W/∂c by central finite differences, and the tangent blocks by
    /// central differences of σ and μ_mech, for constant and concentration-dependent stiffness,
    /// isotropic and tensor swelling, each also in-plane only (common practice, no source).
    #[test]
    fn stress_and_potential_are_derivatives_of_energy() {
        let c = 9.0e3;
        for stiff in [constant(), softening()] {
            for swell in [
                isotropic_swelling(),
                tensor_swelling(),
                isotropic_swelling().in_plane_only(),
                tensor_swelling().in_plane_only(),
            ] {
                let eps = strain();
                let m = at(&stiff, &swell, &eps, c);
                let hc = 1e-3 * c;
                let up = at(&stiff, &swell, &eps, c + hc);
                let dn = at(&stiff, &swell, &eps, c - hc);
                let fd_mu = (up.energy - dn.energy) / (2.0 * hc);
                assert!(
                    (fd_mu - m.mu).abs() < 1e-6 * m.mu.abs(),
                    "{fd_mu} vs {}",
                    m.mu
                );
                let fd_dsc = (up.stress - dn.stress) / (2.0 * hc);
                assert!((fd_dsc - m.dstress_dc).amax() < 1e-6 * m.dstress_dc.amax());
                let fd_dmc = (up.mu - dn.mu) / (2.0 * hc);
                assert!((fd_dmc - m.dmu_dc).abs() < 1e-6 * m.dmu_dc.abs());
                let he = 1e-7;
                for k in 0..6 {
                    let mut p = eps;
                    p[k] += he;
                    let mut q = eps;
                    q[k] -= he;
                    let (mp, mq) = (at(&stiff, &swell, &p, c), at(&stiff, &swell, &q, c));
                    let fd_s = (mp.energy - mq.energy) / (2.0 * he);
                    assert!(
                        (fd_s - m.stress[k]).abs() < 1e-6 * m.stress.amax(),
                        "k = {k}"
                    );
                    let fd_col = (mp.stress - mq.stress) / (2.0 * he);
                    let col = m.dstress_dstrain.column(k);
                    assert!((fd_col - col).amax() < 1e-6 * m.dstress_dstrain.amax());
                    let fd_mu_e = (mp.mu - mq.mu) / (2.0 * he);
                    assert!((fd_mu_e - m.dmu_dstrain[k]).abs() < 1e-6 * m.dmu_dstrain.amax());
                }
            }
        }
    }

    /// With a concentration-dependent stiffness the potential gains ½ e:(dC/dc):e beyond
    /// −σ:β; a softening host (dC/dc negative definite) lowers μ_mech wherever it is strained.
    #[test]
    fn softening_adds_negative_energy_term() {
        let swell = isotropic_swelling();
        let c = 9.0e3;
        let m = at(&softening(), &swell, &strain(), c);
        let without = -m.stress.dot(swell.expansion());
        assert!(m.mu < without, "{} vs {without}", m.mu);
        // ... and by exactly the energy scaled by dE/dc / E, since C(c) = E(c) Ĉ.
        let de_over_e = (6e9 - 12e9) / 2.37e4 / (12e9 + (6e9 - 12e9) * c / 2.37e4);
        assert!((m.mu - without - de_over_e * m.energy).abs() < 1e-9 * m.mu.abs());
    }

    /// In-plane-only swelling keeps the in-plane entries and `c_ref` and zeroes `zz`, `yz`, `xz`;
    /// under plane-strain kinematics (ε_zz = 0) with isotropic stiffness and isotropic Ω its
    /// potential is `μ_mech = −(Ω/3)(σ_xx + σ_yy)`, where the default gives `−Ω σ_h` with the
    /// σ_zz it produces (derived from μ_mech = −σ:β; common practice, no source).
    #[test]
    fn in_plane_only_drops_out_of_plane_entries() {
        let t = tensor_swelling().in_plane_only();
        let full = tensor_swelling();
        assert_eq!(t.c_ref(), full.c_ref());
        for k in [0, 1, 3] {
            assert_eq!(t.expansion()[k], full.expansion()[k]);
        }
        for k in [2, 4, 5] {
            assert_eq!(t.expansion()[k], 0.0);
        }
        let iso = isotropic_swelling().in_plane_only();
        let c = C_REF + 4.0e3;
        let plane = Voigt::new(1.0e-3, -3.0e-4, 0.0, 2.0e-4, 0.0, 0.0);
        let m = at(&constant(), &iso, &plane, c);
        let expected = -OMEGA / 3.0 * (m.stress[0] + m.stress[1]);
        assert!((m.mu - expected).abs() < 1e-12 * expected.abs());
        // Free in-plane swelling under ε_zz = 0: with the in-plane-only misfit the free strain
        // is ε* in plane and nothing is stressed; with the default the free in-plane strain is
        // (1 + ν) ε* and σ_zz = −E ε* remains (as in tests/swelling_patch.rs).
        let eps_star = OMEGA / 3.0 * 4.0e3;
        let free = Voigt::new(eps_star, eps_star, 0.0, 0.0, 0.0, 0.0);
        assert!(at(&constant(), &iso, &free, c).stress.amax() < 1e-6);
        let (young, nu) = (10e9, 0.3);
        let free = free * (1.0 + nu);
        let full = at(&constant(), &isotropic_swelling(), &free, c);
        let expected_zz = -young * eps_star;
        assert!((full.stress[2] - expected_zz).abs() < 1e-9 * expected_zz.abs());
        assert!(full.stress[0].abs() < 1e-9 * expected_zz.abs());
        assert!(full.stress[1].abs() < 1e-9 * expected_zz.abs());
    }

    #[test]
    fn bad_swelling_parameters_are_refused() {
        assert!(SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: f64::NAN,
            c_ref: 0.0
        })
        .is_err());
        assert!(SwellingLaw::tensor(TensorSwellingParams {
            expansion: Voigt::new(0.0, 0.0, f64::INFINITY, 0.0, 0.0, 0.0),
            c_ref: 0.0
        })
        .is_err());
        assert!(SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: -1e-6,
            c_ref: f64::NAN
        })
        .is_err());
    }
}

//! Elastic stiffness as a function of concentration, `C(c)`, with `dC/dc` and `d²C/dc²`.
//!
//! * constant: any symmetric positive definite 6×6 stiffness (Voigt order and engineering
//!   shears as in [`crate::elastic`]);
//! * linear in Young's modulus: `E(c) = E0 + (E1 − E0) c/c_max` with ν constant, so
//!   `C(c) = E(c) Ĉ(ν)` with `Ĉ` the isotropic stiffness for unit Young's modulus. This is the
//!   simplest model of a host that softens (or stiffens) on insertion, as reported for silicon
//!   (Sethuraman et al., 2010, from memory).
//!
//! Units: stiffness in Pa, `dC/dc` in Pa·m³/mol, concentration in mol/m³.

use nalgebra::Cholesky;

use crate::elastic::{condense_plane_stress, ElasticError, Isotropic, Stiffness};
use crate::error::{positive, ParameterError, RangeError, RangeLaw};

/// Stiffness and its concentration derivatives at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StiffnessState {
    /// `C` in Pa.
    pub stiffness: Stiffness,
    /// `dC/dc` in Pa·m³/mol.
    pub dstiffness_dc: Stiffness,
    /// `d²C/dc²` in Pa·m⁶/mol² (zero for the laws here; carried so that the mechanical
    /// coupling stays exact for any `C(c)`).
    pub d2stiffness_dc2: Stiffness,
}

/// Parameters of a Young's modulus linear in concentration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LinearYoungParams {
    /// Young's modulus `E0` at `c = 0`, in Pa (> 0).
    pub young_at_zero: f64,
    /// Young's modulus `E1` at `c = c_max`, in Pa (> 0).
    pub young_at_max: f64,
    /// Poisson's ratio ν, constant, in (−1, 0.5).
    pub poisson: f64,
    /// Concentration `c_max` in mol/m³ (> 0) at which `E = E1`.
    pub c_max: f64,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Form {
    Constant(Stiffness),
    LinearYoung {
        /// Isotropic stiffness for unit Young's modulus.
        unit: Stiffness,
        young_at_zero: f64,
        /// `dE/dc` in Pa·m³/mol.
        slope: f64,
    },
}

/// A stiffness law, built by one of the checked constructors.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StiffnessLaw {
    form: Form,
}

impl StiffnessLaw {
    /// Constant stiffness, checked symmetric (relative 1e-12) and positive definite.
    pub fn constant(stiffness: Stiffness) -> Result<Self, ParameterError> {
        let scale = stiffness.amax();
        if !stiffness.iter().all(|v| v.is_finite())
            || (stiffness - stiffness.transpose()).amax() > 1e-12 * scale
        {
            return Err(ElasticError::NotPositiveDefinite.into());
        }
        let sym = 0.5 * (stiffness + stiffness.transpose());
        if Cholesky::new(sym).is_none() {
            return Err(ElasticError::NotPositiveDefinite.into());
        }
        Ok(StiffnessLaw {
            form: Form::Constant(sym),
        })
    }

    /// Constant isotropic stiffness (already checked by [`Isotropic::new`]).
    pub fn isotropic(law: Isotropic) -> Self {
        StiffnessLaw {
            form: Form::Constant(law.stiffness()),
        }
    }

    /// Young's modulus linear in concentration, Poisson's ratio constant.
    pub fn linear_young(params: LinearYoungParams) -> Result<Self, ParameterError> {
        positive("young_at_zero", params.young_at_zero)?;
        positive("young_at_max", params.young_at_max)?;
        positive("c_max", params.c_max)?;
        let unit = Isotropic::new(1.0, params.poisson)?.stiffness();
        Ok(StiffnessLaw {
            form: Form::LinearYoung {
                unit,
                young_at_zero: params.young_at_zero,
                slope: (params.young_at_max - params.young_at_zero) / params.c_max,
            },
        })
    }

    /// The same law condensed for plane stress (`σ_zz = 0`, `ε_zz` eliminated) with
    /// [`condense_plane_stress`]: the returned stiffness and its derivatives have zero `zz` rows
    /// and columns and act on the in-plane (and out-of-plane shear) strains. Used with the
    /// coupled law this is exact, swelling included: the free `ε_zz` absorbs `ε_c,zz`, and by
    /// the envelope theorem `∂W/∂c` of the condensed energy equals the 3D one at the `ε_zz` that
    /// makes `σ_zz = 0`. Exact for the linear-Young law because condensation commutes with the
    /// scaling by `E(c)`; a constant stiffness must not couple `zz` with the out-of-plane shears
    /// (as for the requirement of [`condense_plane_stress`]).
    pub fn plane_stress(&self) -> Self {
        let form = match &self.form {
            Form::Constant(s) => Form::Constant(condense_plane_stress(s).0),
            Form::LinearYoung {
                unit,
                young_at_zero,
                slope,
            } => Form::LinearYoung {
                unit: condense_plane_stress(unit).0,
                young_at_zero: *young_at_zero,
                slope: *slope,
            },
        };
        StiffnessLaw { form }
    }

    /// Whether the stiffness is the same at every concentration (no `dC/dc`).
    pub fn is_constant(&self) -> bool {
        matches!(self.form, Form::Constant(_))
    }

    /// The error [`Self::evaluate`] gives at `c`, if any, without forming the stiffness (for
    /// callers that need only the range check: a body without displacement unknowns).
    #[inline]
    pub fn check(&self, c: f64) -> Result<(), RangeError> {
        match &self.form {
            Form::Constant(_) => Ok(()),
            Form::LinearYoung {
                young_at_zero,
                slope,
                ..
            } => linear_young(*young_at_zero, *slope, c).map(|_| ()),
        }
    }

    /// `C(c)` and its derivatives. The linear law is extrapolated linearly outside
    /// `[0, c_max]` and refuses concentrations where `E(c) ≤ 0`.
    #[inline]
    pub fn evaluate(&self, c: f64) -> Result<StiffnessState, RangeError> {
        match &self.form {
            Form::Constant(s) => Ok(StiffnessState {
                stiffness: *s,
                dstiffness_dc: Stiffness::zeros(),
                d2stiffness_dc2: Stiffness::zeros(),
            }),
            Form::LinearYoung {
                unit,
                young_at_zero,
                slope,
            } => {
                let young = linear_young(*young_at_zero, *slope, c)?;
                Ok(StiffnessState {
                    stiffness: unit * young,
                    dstiffness_dc: unit * *slope,
                    d2stiffness_dc2: Stiffness::zeros(),
                })
            }
        }
    }
}

/// `E(c) = E0 + slope c`, refused where it is not positive and finite.
#[inline]
fn linear_young(young_at_zero: f64, slope: f64, c: f64) -> Result<f64, RangeError> {
    let young = young_at_zero + slope * c;
    if !(young > 0.0 && young.is_finite()) {
        // E(c) > 0 on the side of c = 0 bounded by c = −E0/slope.
        let root = -young_at_zero / slope;
        let (lower, upper) = if slope > 0.0 {
            (root, f64::INFINITY)
        } else if slope < 0.0 {
            (f64::NEG_INFINITY, root)
        } else {
            (f64::NEG_INFINITY, f64::INFINITY)
        };
        return Err(RangeError::OutOfRange {
            law: RangeLaw::ConcentrationStiffness,
            c,
            lower,
            upper,
        });
    }
    Ok(young)
}

#[cfg(test)]
mod tests {
    use super::{LinearYoungParams, RangeError, Stiffness, StiffnessLaw};
    use crate::elastic::Isotropic;

    fn softening() -> StiffnessLaw {
        // Silicon-like softening from ~70 to ~35 GPa (order of magnitude only, from memory).
        StiffnessLaw::linear_young(LinearYoungParams {
            young_at_zero: 70e9,
            young_at_max: 35e9,
            poisson: 0.22,
            c_max: 3.0e5,
        })
        .unwrap()
    }

    /// End points reproduce the isotropic stiffness of E0 and E1; dC/dc by central differences.
    #[test]
    fn linear_young_end_points_and_derivative() {
        let law = softening();
        let at0 = law.evaluate(0.0).unwrap().stiffness;
        let at1 = law.evaluate(3.0e5).unwrap().stiffness;
        let e0 = Isotropic::new(70e9, 0.22).unwrap().stiffness();
        let e1 = Isotropic::new(35e9, 0.22).unwrap().stiffness();
        assert!((at0 - e0).amax() < 1e-12 * e0.amax());
        assert!((at1 - e1).amax() < 1e-12 * e1.amax());
        let (c, h) = (1.0e5, 10.0);
        let fd = (law.evaluate(c + h).unwrap().stiffness - law.evaluate(c - h).unwrap().stiffness)
            / (2.0 * h);
        let an = law.evaluate(c).unwrap().dstiffness_dc;
        assert!((fd - an).amax() < 1e-6 * an.amax());
    }

    /// E(c) reaches zero at c = E0 c_max/(E0 − E1) = 6e5 mol/m³ here: beyond it, a typed error.
    #[test]
    fn vanishing_modulus_is_out_of_range() {
        let law = softening();
        assert!(law.evaluate(5.9e5).is_ok());
        match law.evaluate(6.0e5) {
            Err(RangeError::OutOfRange { upper, .. }) => {
                assert!((upper - 6.0e5).abs() < 1e-6)
            }
            other => panic!("expected OutOfRange, got {other:?}"),
        }
        assert!(law.evaluate(f64::NAN).is_err());
    }

    #[test]
    fn bad_stiffness_is_refused() {
        assert!(StiffnessLaw::constant(Stiffness::identity()).is_ok());
        assert!(StiffnessLaw::constant(-Stiffness::identity()).is_err());
        let mut asym = Stiffness::identity();
        asym[(0, 1)] = 0.5;
        assert!(StiffnessLaw::constant(asym).is_err());
        let p = LinearYoungParams {
            young_at_zero: 1.0,
            young_at_max: 1.0,
            poisson: 0.5,
            c_max: 1.0,
        };
        assert!(StiffnessLaw::linear_young(p).is_err());
        assert!(StiffnessLaw::linear_young(LinearYoungParams {
            poisson: 0.3,
            young_at_max: 0.0,
            ..p
        })
        .is_err());
    }
}

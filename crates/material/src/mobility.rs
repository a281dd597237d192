//! Mobility `M(c)`, the symmetric positive semi-definite 3×3 tensor in the flux law
//! `J = −M grad μ`, and its derivative `dM/dc`.
//!
//! Units: `M` in mol²/(J·m·s) so that `J` (mol/(m²·s)) `= −M grad μ` with `grad μ` in
//! J/(mol·m); diffusivity `D` in m²/s; concentration in mol/m³; temperature in K.
//!
//! * dilute: `M = D c/(RT)`, positive semi-definite for `c ≥ 0`;
//! * lattice gas: `M = D c (1 − c/c_max)/(RT)`, positive semi-definite for `0 ≤ c ≤ c_max`;
//! * constant tensor.
//!
//! With the matching chemical law these give Fick's law `J = −D grad c` under uniform stress
//! (docs/theory.md conventions; the dilute case as in Sofronis & McMeeking, J. Mech. Phys.
//! Solids 37 (1989) 317, from memory). `D` is isotropic or an anisotropic tensor.

use nalgebra::Matrix3;

use crate::chemical::GAS_CONSTANT;
use crate::error::{positive, ParameterError, RangeError, RangeLaw};

/// Relative tolerance for the symmetry and semi-definiteness checks (common practice, no
/// source: a few hundred ulps of the largest entry).
const TENSOR_TOLERANCE: f64 = 1e-12;

/// Check that `m` is finite, symmetric and positive semi-definite, and return it exactly
/// symmetrised.
pub(crate) fn symmetric_psd(
    name: &'static str,
    m: &Matrix3<f64>,
) -> Result<Matrix3<f64>, ParameterError> {
    if let Some(bad) = m.iter().find(|v| !v.is_finite()) {
        return Err(ParameterError::NotFinite { name, value: *bad });
    }
    let scale = m.amax();
    let asymmetry = (m - m.transpose()).amax();
    if asymmetry > TENSOR_TOLERANCE * scale {
        return Err(ParameterError::NotSymmetric {
            name,
            asymmetry: asymmetry / scale,
        });
    }
    let sym = 0.5 * (m + m.transpose());
    let min_eigenvalue = sym.symmetric_eigenvalues().min();
    if min_eigenvalue < -TENSOR_TOLERANCE * scale {
        return Err(ParameterError::NotPositiveSemiDefinite {
            name,
            min_eigenvalue,
        });
    }
    Ok(sym)
}

/// A checked diffusivity tensor `D` in m²/s: symmetric positive semi-definite.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Diffusivity {
    tensor: Matrix3<f64>,
}

impl Diffusivity {
    /// Isotropic `D I`, `D > 0` in m²/s.
    pub fn isotropic(d: f64) -> Result<Self, ParameterError> {
        positive("diffusivity", d)?;
        Ok(Diffusivity {
            tensor: Matrix3::identity() * d,
        })
    }

    /// Anisotropic diffusivity tensor in m²/s, checked symmetric positive semi-definite.
    pub fn tensor(d: Matrix3<f64>) -> Result<Self, ParameterError> {
        Ok(Diffusivity {
            tensor: symmetric_psd("diffusivity tensor", &d)?,
        })
    }

    /// The tensor `D` in m²/s.
    pub fn matrix(&self) -> &Matrix3<f64> {
        &self.tensor
    }
}

/// Mobility and its concentration derivative at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MobilityState {
    /// `M` in mol²/(J·m·s).
    pub mobility: Matrix3<f64>,
    /// `dM/dc` in mol/(J·s) (per mol/m³).
    pub dmobility_dc: Matrix3<f64>,
}

/// Parameters of the dilute mobility `D c/(RT)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DiluteMobilityParams {
    /// Diffusivity.
    pub diffusivity: Diffusivity,
    /// Temperature T in K (> 0).
    pub temperature: f64,
}

/// Parameters of the lattice-gas mobility `D c (1 − c/c_max)/(RT)`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LatticeGasMobilityParams {
    /// Diffusivity.
    pub diffusivity: Diffusivity,
    /// Temperature T in K (> 0).
    pub temperature: f64,
    /// Site concentration `c_max` in mol/m³ (> 0).
    pub c_max: f64,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Form {
    Dilute(DiluteMobilityParams),
    LatticeGas(LatticeGasMobilityParams),
    Constant(Matrix3<f64>),
}

/// A mobility law, built by one of the checked constructors.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MobilityLaw {
    form: Form,
}

impl MobilityLaw {
    /// Dilute mobility `M = D c/(RT)`.
    pub fn dilute(params: DiluteMobilityParams) -> Result<Self, ParameterError> {
        positive("temperature", params.temperature)?;
        Ok(MobilityLaw {
            form: Form::Dilute(params),
        })
    }

    /// Lattice-gas mobility `M = D c (1 − c/c_max)/(RT)`.
    pub fn lattice_gas(params: LatticeGasMobilityParams) -> Result<Self, ParameterError> {
        positive("temperature", params.temperature)?;
        positive("c_max", params.c_max)?;
        Ok(MobilityLaw {
            form: Form::LatticeGas(params),
        })
    }

    /// Constant mobility tensor in mol²/(J·m·s), checked symmetric positive semi-definite.
    pub fn constant(mobility: Matrix3<f64>) -> Result<Self, ParameterError> {
        Ok(MobilityLaw {
            form: Form::Constant(symmetric_psd("mobility tensor", &mobility)?),
        })
    }

    /// Temperature in K of a law that has one (`None` for a constant tensor).
    pub fn temperature(&self) -> Option<f64> {
        match &self.form {
            Form::Dilute(p) => Some(p.temperature),
            Form::LatticeGas(p) => Some(p.temperature),
            Form::Constant(_) => None,
        }
    }

    /// Whether `M` is a multiple of the identity at every concentration.
    pub fn is_isotropic(&self) -> bool {
        let m = match &self.form {
            Form::Dilute(p) => *p.diffusivity.matrix(),
            Form::LatticeGas(p) => *p.diffusivity.matrix(),
            Form::Constant(m) => *m,
        };
        (m - Matrix3::from_diagonal_element(m[(0, 0)])).amax() <= 1e-14 * m.amax()
    }

    /// `M(c)` and `dM/dc` at `c` (mol/m³). The concentration-dependent forms refuse
    /// concentrations where `M` would be indefinite (closed intervals, see [`RangeLaw`]).
    #[inline(always)]
    pub fn evaluate(&self, c: f64) -> Result<MobilityState, RangeError> {
        match &self.form {
            Form::Dilute(p) => {
                if !(c >= 0.0 && c.is_finite()) {
                    return Err(RangeError::OutOfRange {
                        law: RangeLaw::DiluteMobility,
                        c,
                        lower: 0.0,
                        upper: f64::INFINITY,
                    });
                }
                let d = p.diffusivity.matrix() / (GAS_CONSTANT * p.temperature);
                Ok(MobilityState {
                    mobility: d * c,
                    dmobility_dc: d,
                })
            }
            Form::LatticeGas(p) => {
                if !(c >= 0.0 && c <= p.c_max) {
                    return Err(RangeError::OutOfRange {
                        law: RangeLaw::LatticeGasMobility,
                        c,
                        lower: 0.0,
                        upper: p.c_max,
                    });
                }
                let d = p.diffusivity.matrix() / (GAS_CONSTANT * p.temperature);
                Ok(MobilityState {
                    mobility: d * (c * (1.0 - c / p.c_max)),
                    dmobility_dc: d * (1.0 - 2.0 * c / p.c_max),
                })
            }
            Form::Constant(m) => Ok(MobilityState {
                mobility: *m,
                dmobility_dc: Matrix3::zeros(),
            }),
        }
    }
}

#[cfg(test)]
mod tests {
    use nalgebra::{Matrix3, Vector3};

    use super::{
        Diffusivity, DiluteMobilityParams, LatticeGasMobilityParams, MobilityLaw, RangeError,
    };
    use crate::chemical::{ChemicalLaw, IdealDiluteParams, LatticeGasParams};

    fn anisotropic() -> Diffusivity {
        Diffusivity::tensor(Matrix3::new(
            7e-15, 1e-15, 0.0, 1e-15, 3e-15, 5e-16, 0.0, 5e-16, 2e-15,
        ))
        .unwrap()
    }

    /// dM/dc against central differences of M (common practice, no source).
    #[test]
    fn derivative_matches_finite_differences() {
        let laws = [
            MobilityLaw::dilute(DiluteMobilityParams {
                diffusivity: anisotropic(),
                temperature: 300.0,
            })
            .unwrap(),
            MobilityLaw::lattice_gas(LatticeGasMobilityParams {
                diffusivity: anisotropic(),
                temperature: 300.0,
                c_max: 2.37e4,
            })
            .unwrap(),
        ];
        for law in laws {
            for c in [10.0, 6.0e3, 1.5e4, 2.3e4] {
                let h = 1.0;
                let fd = (law.evaluate(c + h).unwrap().mobility
                    - law.evaluate(c - h).unwrap().mobility)
                    / (2.0 * h);
                let an = law.evaluate(c).unwrap().dmobility_dc;
                assert!((fd - an).amax() <= 1e-6 * an.amax(), "c = {c}");
            }
        }
    }

    /// Fick's law from the chemical potential: with `M = D c/RT` and the dilute μ,
    /// `−M grad μ = −D grad c`; with the lattice-gas mobility and the ideal lattice gas
    /// (Ω_int = 0) the same (docs/theory.md conventions). Here `grad μ = (dμ/dc) grad c`, no stress.
    #[test]
    fn flux_reduces_to_fick_without_stress() {
        let grad_c = Vector3::new(3.0e5, -1.0e5, 2.0e4);
        let d = anisotropic();
        let fick = -d.matrix() * grad_c;
        let dilute = ChemicalLaw::ideal_dilute(IdealDiluteParams {
            mu0: 0.0,
            temperature: 310.0,
            c_ref: 1.0,
        })
        .unwrap();
        let m_dilute = MobilityLaw::dilute(DiluteMobilityParams {
            diffusivity: d,
            temperature: 310.0,
        })
        .unwrap();
        let lattice = ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 0.0,
            temperature: 310.0,
            c_max: 2.37e4,
            interaction: 0.0,
        })
        .unwrap();
        let m_lattice = MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: d,
            temperature: 310.0,
            c_max: 2.37e4,
        })
        .unwrap();
        for (chem, mob) in [(dilute, m_dilute), (lattice, m_lattice)] {
            for c in [1.0, 1.0e3, 2.0e4] {
                let grad_mu = chem.evaluate(c).unwrap().dmu_dc * grad_c;
                let j = -mob.evaluate(c).unwrap().mobility * grad_mu;
                assert!((j - fick).amax() < 1e-12 * fick.amax(), "c = {c}");
            }
        }
    }

    #[test]
    fn range_and_parameter_checks() {
        let dilute = MobilityLaw::dilute(DiluteMobilityParams {
            diffusivity: Diffusivity::isotropic(1e-14).unwrap(),
            temperature: 300.0,
        })
        .unwrap();
        // M vanishes at c = 0, which is admissible; negative c is not.
        assert_eq!(dilute.evaluate(0.0).unwrap().mobility, Matrix3::zeros());
        assert!(matches!(
            dilute.evaluate(-1e-3),
            Err(RangeError::OutOfRange { .. })
        ));
        assert!(dilute.evaluate(f64::NAN).is_err());
        let lattice = MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: Diffusivity::isotropic(1e-14).unwrap(),
            temperature: 300.0,
            c_max: 100.0,
        })
        .unwrap();
        assert!(lattice.evaluate(100.0).is_ok() && lattice.evaluate(100.5).is_err());
        assert!(lattice.evaluate(-0.5).is_err());

        assert!(Diffusivity::isotropic(0.0).is_err() && Diffusivity::isotropic(-1.0).is_err());
        let asymmetric = Matrix3::new(1.0, 0.5, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0);
        assert!(Diffusivity::tensor(asymmetric).is_err());
        let indefinite = Matrix3::new(1.0, 2.0, 0.0, 2.0, 1.0, 0.0, 0.0, 0.0, 1.0);
        assert!(Diffusivity::tensor(indefinite).is_err());
        // Semi-definite (diffusion confined to a plane) is allowed.
        let planar = Matrix3::new(1.0, 0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0);
        assert!(Diffusivity::tensor(planar).is_ok());
        assert!(MobilityLaw::constant(indefinite).is_err());
        assert_eq!(MobilityLaw::constant(planar).unwrap().temperature(), None);
        assert!(MobilityLaw::dilute(DiluteMobilityParams {
            diffusivity: Diffusivity::isotropic(1.0).unwrap(),
            temperature: -1.0,
        })
        .is_err());
    }
}

//! Gradient energy `ψ_grad = ½ grad c · κ grad c` per unit volume, the interface term of
//! phase separation (Cahn & Hilliard, J. Chem. Phys. 28 (1958) 258, eq. 2.4 writes it as
//! `κ (grad c)²` without the ½; Dilata keeps the ½, so its `κ` is twice theirs for the same
//! energy. See docs/theory.md).
//!
//! Its variational derivative adds `−div(κ grad c)` to the chemical potential; in the weak
//! potential equation of docs/theory.md it appears as `− ∫ grad w · κ grad c dV`.
//!
//! Units: `κ` in J·m⁵/mol² (so that `ψ_grad` is in J/m³ with `c` in mol/m³), or in the units of
//! the scenario when it works with normalised concentrations.
//!
//! ```
//! use dilata_material::gradient::GradientEnergy;
//! use nalgebra::Vector3;
//! let k = GradientEnergy::isotropic(2.0)?;
//! let g = Vector3::new(0.5, 0.0, 0.0);
//! assert_eq!(k.energy(&g), 0.25);
//! assert!(GradientEnergy::isotropic(-1.0).is_err());
//! # Ok::<(), dilata_material::error::ParameterError>(())
//! ```

use nalgebra::{Matrix3, Vector3};

use crate::error::{finite, ParameterError};
use crate::mobility::symmetric_psd;

/// A checked gradient-energy coefficient `κ`: a symmetric positive semi-definite tensor.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GradientEnergy {
    kappa: Matrix3<f64>,
}

impl GradientEnergy {
    /// No gradient energy (`κ = 0`): the models without interfaces.
    pub fn none() -> Self {
        GradientEnergy {
            kappa: Matrix3::zeros(),
        }
    }

    /// Isotropic `κ I` with `κ ≥ 0`.
    pub fn isotropic(kappa: f64) -> Result<Self, ParameterError> {
        finite("gradient energy", kappa)?;
        if kappa < 0.0 {
            return Err(ParameterError::NotPositiveSemiDefinite {
                name: "gradient energy",
                min_eigenvalue: kappa,
            });
        }
        Ok(GradientEnergy {
            kappa: Matrix3::identity() * kappa,
        })
    }

    /// Anisotropic `κ`, checked symmetric positive semi-definite.
    pub fn tensor(kappa: Matrix3<f64>) -> Result<Self, ParameterError> {
        Ok(GradientEnergy {
            kappa: symmetric_psd("gradient energy tensor", &kappa)?,
        })
    }

    /// The tensor `κ`.
    #[inline]
    pub fn matrix(&self) -> &Matrix3<f64> {
        &self.kappa
    }

    /// `true` when `κ = 0`.
    #[inline]
    pub fn is_zero(&self) -> bool {
        self.kappa.iter().all(|&v| v == 0.0)
    }

    /// `ψ_grad = ½ g · κ g` for `g = grad c`.
    #[inline]
    pub fn energy(&self, grad_c: &Vector3<f64>) -> f64 {
        0.5 * grad_c.dot(&(self.kappa * grad_c))
    }
}

#[cfg(test)]
mod tests {
    use super::GradientEnergy;
    use nalgebra::{Matrix3, Vector3};

    #[test]
    fn tensor_checks_and_energy() {
        let k = Matrix3::new(2.0, 0.5, 0.0, 0.5, 1.0, 0.0, 0.0, 0.0, 0.0);
        let g = GradientEnergy::tensor(k).unwrap();
        let v = Vector3::new(1.0, -2.0, 3.0);
        // ½ (2·1 + 2·0.5·1·(−2) + 1·4) = ½ (2 − 2 + 4) = 2.
        assert!((g.energy(&v) - 2.0).abs() < 1e-15);
        assert!(!g.is_zero());
        assert!(GradientEnergy::none().is_zero());
        let asym = Matrix3::new(1.0, 0.5, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0);
        assert!(GradientEnergy::tensor(asym).is_err());
        let indefinite = Matrix3::new(1.0, 0.0, 0.0, 0.0, -1.0, 0.0, 0.0, 0.0, 1.0);
        assert!(GradientEnergy::tensor(indefinite).is_err());
        assert!(GradientEnergy::isotropic(f64::INFINITY).is_err());
    }
}

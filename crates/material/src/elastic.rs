//! Linear elastic laws on 3D strain in Voigt form.
//!
//! Voigt order used throughout Dilata: `[xx, yy, zz, xy, yz, xz]` (the order VTK uses for
//! symmetric tensors), with engineering shear strains `γ_xy = 2 ε_xy` in the strain vector and
//! plain shear stresses in the stress vector, so that `σ = C ε` and the energy is `½ εᵀ C ε`.

use nalgebra::{Matrix3, SMatrix, SVector};

/// 6×6 stiffness in Voigt form.
pub type Stiffness = SMatrix<f64, 6, 6>;
/// Strain or stress in Voigt form.
pub type Voigt = SVector<f64, 6>;

/// Errors in elastic constants.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ElasticError {
    #[error("Young's modulus must be positive, got {0}")]
    Young(f64),
    #[error("Poisson's ratio must lie in (-1, 0.5), got {0}")]
    Poisson(f64),
    #[error("bulk and shear moduli must be positive, got K = {bulk}, G = {shear}")]
    Moduli { bulk: f64, shear: f64 },
    #[error("stiffness matrix is not symmetric positive definite")]
    NotPositiveDefinite,
}

/// Isotropic linear elasticity.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Isotropic {
    pub young: f64,
    pub poisson: f64,
}

impl Isotropic {
    /// From Young's modulus and Poisson's ratio, checked.
    pub fn new(young: f64, poisson: f64) -> Result<Self, ElasticError> {
        if !(young > 0.0 && young.is_finite()) {
            return Err(ElasticError::Young(young));
        }
        if !(poisson > -1.0 && poisson < 0.5) {
            return Err(ElasticError::Poisson(poisson));
        }
        Ok(Isotropic { young, poisson })
    }

    /// From bulk modulus K and shear modulus G: `E = 9KG/(3K+G)`, `ν = (3K−2G)/(2(3K+G))`
    /// (standard conversion table, common practice, no source).
    pub fn from_bulk_shear(bulk: f64, shear: f64) -> Result<Self, ElasticError> {
        if !(bulk > 0.0 && shear > 0.0) {
            return Err(ElasticError::Moduli { bulk, shear });
        }
        Self::new(
            9.0 * bulk * shear / (3.0 * bulk + shear),
            (3.0 * bulk - 2.0 * shear) / (2.0 * (3.0 * bulk + shear)),
        )
    }

    /// Lamé's first parameter λ.
    pub fn lambda(&self) -> f64 {
        self.young * self.poisson / ((1.0 + self.poisson) * (1.0 - 2.0 * self.poisson))
    }

    /// Shear modulus μ = G.
    pub fn shear(&self) -> f64 {
        self.young / (2.0 * (1.0 + self.poisson))
    }

    /// Bulk modulus K.
    pub fn bulk(&self) -> f64 {
        self.young / (3.0 * (1.0 - 2.0 * self.poisson))
    }

    /// Full 3D stiffness `C = λ I⊗I + 2μ 𝕀` in Voigt form.
    pub fn stiffness(&self) -> Stiffness {
        let (l, m) = (self.lambda(), self.shear());
        let mut c = Stiffness::zeros();
        for i in 0..3 {
            for j in 0..3 {
                c[(i, j)] = l;
            }
            c[(i, i)] += 2.0 * m;
            c[(i + 3, i + 3)] = m;
        }
        c
    }
}

/// Condense a 3D stiffness to plane stress (`σ_zz = 0`): returns the stiffness acting on strains
/// whose `zz` entry is ignored, with `ε_zz` eliminated by static condensation, and the row that
/// recovers `ε_zz = −(C_z· ε)/C_zz` from the in-plane strains. Requires `C_zz > 0` and no
/// coupling between `zz` and the out-of-plane shears (true for isotropic and orthotropic laws
/// aligned with z; common practice, no source).
pub fn condense_plane_stress(c: &Stiffness) -> (Stiffness, Voigt) {
    let czz = c[(2, 2)];
    let mut out = *c;
    let mut recover = Voigt::zeros();
    for i in 0..6 {
        if i == 2 {
            continue;
        }
        recover[i] = -c[(2, i)] / czz;
        for j in 0..6 {
            if j == 2 {
                continue;
            }
            out[(i, j)] = c[(i, j)] - c[(i, 2)] * c[(2, j)] / czz;
        }
    }
    for k in 0..6 {
        out[(2, k)] = 0.0;
        out[(k, 2)] = 0.0;
    }
    (out, recover)
}

/// Convert a Voigt stress to a 3×3 tensor.
pub fn voigt_to_tensor(s: &Voigt) -> Matrix3<f64> {
    Matrix3::new(s[0], s[3], s[5], s[3], s[1], s[4], s[5], s[4], s[2])
}

/// Hydrostatic stress `tr σ / 3`.
pub fn hydrostatic(s: &Voigt) -> f64 {
    (s[0] + s[1] + s[2]) / 3.0
}

/// von Mises equivalent stress `sqrt(3/2 s:s)`, `s` the deviator.
pub fn von_mises(s: &Voigt) -> f64 {
    let p = hydrostatic(s);
    let (dx, dy, dz) = (s[0] - p, s[1] - p, s[2] - p);
    (1.5 * (dx * dx + dy * dy + dz * dz + 2.0 * (s[3] * s[3] + s[4] * s[4] + s[5] * s[5]))).sqrt()
}

/// Largest principal stress.
pub fn max_principal(s: &Voigt) -> f64 {
    let t = voigt_to_tensor(s);
    t.symmetric_eigenvalues().max()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Uniaxial stress: σ_xx = E ε_xx with ε_yy = ε_zz = −ν ε_xx (elementary elasticity,
    /// common practice, no source).
    #[test]
    fn uniaxial_stress_recovers_young() {
        let m = Isotropic::new(200e9, 0.3).unwrap();
        let e = 1e-3;
        let strain = Voigt::from_column_slice(&[e, -0.3 * e, -0.3 * e, 0.0, 0.0, 0.0]);
        let s = m.stiffness() * strain;
        assert!((s[0] - 200e9 * e).abs() < 1e-6 * 200e9 * e);
        assert!(s[1].abs() < 1e-9 * 200e9 * e && s[2].abs() < 1e-9 * 200e9 * e);
    }

    /// Plane-stress condensation gives E/(1−ν²) [[1, ν], [ν, 1]] in-plane and G for shear
    /// (Zienkiewicz & Taylor, The Finite Element Method, vol. 1, plane stress D matrix; from memory).
    #[test]
    fn plane_stress_condensation_matches_closed_form() {
        let (e, nu) = (70e9, 0.33);
        let m = Isotropic::new(e, nu).unwrap();
        let (c, rec) = condense_plane_stress(&m.stiffness());
        let f = e / (1.0 - nu * nu);
        assert!((c[(0, 0)] - f).abs() < 1e-12 * f);
        assert!((c[(0, 1)] - f * nu).abs() < 1e-12 * f);
        assert!((c[(3, 3)] - m.shear()).abs() < 1e-12 * f);
        assert!((rec[0] + nu / (1.0 - nu)).abs() < 1e-14);
    }

    #[test]
    fn bulk_shear_round_trip() {
        let m = Isotropic::new(10e9, 0.25).unwrap();
        let back = Isotropic::from_bulk_shear(m.bulk(), m.shear()).unwrap();
        assert!((back.young - m.young).abs() < 1e-6 && (back.poisson - m.poisson).abs() < 1e-14);
        assert!(Isotropic::new(1.0, 0.5).is_err() && Isotropic::new(-1.0, 0.2).is_err());
    }

    #[test]
    fn invariants() {
        let s = Voigt::from_column_slice(&[3.0, 0.0, 0.0, 0.0, 0.0, 0.0]);
        assert!((von_mises(&s) - 3.0).abs() < 1e-14);
        assert!((hydrostatic(&s) - 1.0).abs() < 1e-15);
        assert!((max_principal(&s) - 3.0).abs() < 1e-12);
    }
}

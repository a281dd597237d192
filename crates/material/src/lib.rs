//! # dilata-material
//!
//! Pointwise constitutive laws on small tensors and scalars: elastic stiffness, stress
//! invariants (and, as the coupled physics grows, free energies and mobilities). Every law is a
//! pure function of its inputs. Depends on neither the mesh nor the finite-element crates.
//!
//! ```
//! use dilata_material::elastic::{hydrostatic, Isotropic, Voigt};
//! let steel = Isotropic::new(200e9, 0.3).unwrap();
//! // Uniform dilatation ε I gives σ = 3Kε I.
//! let e = 1e-4;
//! let s = steel.stiffness() * Voigt::from_column_slice(&[e, e, e, 0.0, 0.0, 0.0]);
//! assert!((hydrostatic(&s) - 3.0 * steel.bulk() * e).abs() < 1e-6);
//! ```

pub mod elastic;

//! # dilata-material
//!
//! Pointwise constitutive laws on small tensors and scalars: elastic stiffness, stress
//! invariants, free energies and mobilities. Every law is a pure function of its inputs that
//! returns its values and every derivative Newton needs. Depends on neither the mesh nor the
//! finite-element crates.
//!
//! Modules: [`elastic`] (linear elastic stiffness, Voigt conventions, invariants),
//! [`stiffness`] (stiffness as a function of concentration), [`chemical`] (chemical free
//! energies: ideal dilute, lattice gas, double well), [`gradient`] (gradient energy of
//! interfaces), [`mobility`] (mobility tensors `M(c)`), [`swelling`]
//! (swelling strain and the stress-dependent chemical potential), [`coupled`] (the small-strain
//! deformation–diffusion law at one point, all tangent blocks), [`finite`] (finite-strain gel
//! and large-volume-change host laws, total Lagrangian) and [`error`] (parameter errors
//! and recoverable range errors).
//!
//! ```
//! use dilata_material::elastic::{hydrostatic, Isotropic, Voigt};
//! let steel = Isotropic::new(200e9, 0.3).unwrap();
//! // Uniform dilatation ε I gives σ = 3Kε I.
//! let e = 1e-4;
//! let s = steel.stiffness() * Voigt::from_column_slice(&[e, e, e, 0.0, 0.0, 0.0]);
//! assert!((hydrostatic(&s) - 3.0 * steel.bulk() * e).abs() < 1e-6);
//! ```

pub mod chemical;
pub mod coupled;
pub mod elastic;
pub mod error;
pub mod finite;
pub mod gradient;
pub mod mobility;
pub mod stiffness;
pub mod swelling;

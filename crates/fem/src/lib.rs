//! # dilata-fem
//!
//! Second stage of the pipeline: turns a mesh into discrete function spaces and assembles
//! sparse systems. Reference elements ([`shape`]), quadrature ([`quadrature`]), geometry modes and
//! per-cell values ([`values`]), fields and the DOF map ([`dofs`]), constraints ([`constraints`]),
//! the assembly driver ([`assembly`]) and Jacobian-based mesh quality ([`quality`]).
//! Knows nothing of physics: kernels are supplied by the caller.

pub mod quadrature;
pub mod quality;
pub mod shape;

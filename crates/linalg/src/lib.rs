//! # dilata-linalg
//!
//! Sparse matrices on shared CSR patterns, and the linear solvers behind one trait.
//! Knows nothing of meshes, elements or physics.

pub mod csr;

pub use csr::{CsrMatrix, CsrPattern};
pub mod solver;

pub use solver::{LinalgError, LinearSolver, SolveInfo};

//! # dilata-physics
//!
//! The weak forms as element kernels: local residuals and tangents for the cell and boundary
//! terms, plus derived quantities (stress, invariants) recovered at nodes. Kernels implement the
//! `dilata-fem` kernel traits; they see one cell at a time and never global data.

pub mod cellcache;
pub mod coupled;
pub mod coupled_post;
pub mod elasticity;
pub mod finite;
pub mod norms;
pub mod poisson;
pub mod recovery;

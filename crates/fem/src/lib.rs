//! # dilata-fem
//!
//! Second stage of the pipeline: turns a mesh into discrete function spaces and assembles
//! sparse systems. Reference elements ([`shape`]), quadrature ([`quadrature`]), geometry modes and
//! per-cell values ([`values`]), fields and the DOF map ([`dofs`]), constraints ([`constraints`]),
//! the assembly driver ([`assembly`]) and Jacobian-based mesh quality ([`quality`]).
//! Knows nothing of physics: kernels are supplied by the caller.

pub mod assembly;
pub mod constraints;
pub mod dofs;
pub mod quadrature;
pub mod quality;
pub mod shape;
pub mod values;

pub use assembly::{
    Assembler, AssemblyTarget, CellInput, CellKernel, FacetInput, FacetKernel, LocalOutput,
};
pub use constraints::{BoundaryTarget, Constraints, GroupId};
pub use dilata_linalg::Parallelism;
pub use dofs::{DofMap, FieldHandle, FieldSpec};
pub use values::{CellValues, FacetValues, GeometryMode, InvertedCell};

//! # dilata-mesh
//!
//! First stage of the Dilata pipeline: the geometry and topology of a body. A [`Mesh`] holds
//! points, blocks of cells of one [`CellKind`] each, named regions (cell sets), named boundaries
//! (facet sets, each facet knowing its parent cell and local face) and named node sets.
//! Meshes come from the generators in [`generate`] or from MSH files through [`msh`].
//!
//! This crate knows nothing of degrees of freedom, shape functions or physics; Jacobian-based
//! quality checks live in `dilata-fem`, which owns the shape functions.
//!
//! ```
//! use dilata_mesh::{CellKind, Mesh};
//! let k = CellKind::Tet10;
//! assert_eq!(k.n_nodes(), 10);
//! assert_eq!(k.linear(), CellKind::Tet4);
//! let m = Mesh::default();
//! // Asking for a boundary that does not exist lists the ones that do.
//! assert!(m.boundary("outer").unwrap_err().to_string().contains("unknown boundary 'outer'"));
//! ```

pub mod cell;
pub mod error;
pub mod generate;
pub mod mesh;
pub mod msh;
pub mod periodic;

pub use cell::{CellKind, Shape};
pub use error::{Location, MeshError};
pub use mesh::{CellBlock, Facet, Mesh};

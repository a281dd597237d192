//! # dilata-io
//!
//! Last numerical stage of the Dilata pipeline before the command line: result writers.
//! [`write_vtu`] writes a mesh with point and cell arrays as a VTK XML unstructured grid
//! (zlib-compressed, base64, 64-bit headers, Float64 data), [`PvdWriter`] keeps a `.pvd`
//! collection of such files for a time series, and [`write_atomic`] is the one way every file
//! here reaches the disk (temporary file, sync, rename), so that no reader ever sees a
//! half-written file. [`read_pvd`] and [`read_vtu`] read a run's snapshots back (for figures).
//!
//! This crate knows meshes and arrays of numbers, not the physics that produced them.
//!
//! ```
//! use dilata_io::{format_time, write_vtu, FieldData, FieldKind, PvdWriter};
//! use dilata_mesh::{CellBlock, CellKind, Mesh};
//!
//! let dir = tempfile::tempdir().unwrap();
//! let mesh = Mesh {
//!     dim: 2,
//!     points: vec![[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [0.0, 1.0, 0.0]],
//!     blocks: vec![CellBlock { kind: CellKind::Quad4, connectivity: vec![0, 1, 2, 3] }],
//!     ..Mesh::default()
//! };
//! let c = FieldData::new("c", FieldKind::Scalar, vec![0.0, 1.0, 2.0, 3.0]);
//! write_vtu(&dir.path().join("step_0.vtu"), &mesh, &[c], &[]).unwrap();
//!
//! let mut pvd = PvdWriter::new(&dir.path().join("run.pvd"));
//! pvd.add(0.0, "step_0.vtu");
//! pvd.write().unwrap();
//! assert_eq!(format_time(0.1), "1e-1");
//! ```

mod atomic;
mod error;
pub mod json;
mod pvd;
mod read;
mod vtu;

pub use atomic::write_atomic;
pub use error::{Association, IoError};
pub use pvd::{format_time, PvdWriter};
pub use read::{read_pvd, read_vtu, PointArray, VtuSnapshot};
pub use vtu::{vtk_cell_type, write_vtu, FieldData, FieldKind, REGION_ARRAY};
pub mod scenario;

//! The error type of the writers and readers.

use std::path::PathBuf;

use thiserror::Error;

/// Whether an array belongs to points or to cells.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Association {
    /// One tuple per mesh point.
    Point,
    /// One tuple per mesh cell.
    Cell,
}

impl std::fmt::Display for Association {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Association::Point => "point",
            Association::Cell => "cell",
        })
    }
}

/// Everything that can go wrong writing a result file. Every variant names the file concerned.
#[derive(Debug, Error)]
pub enum IoError {
    /// A file-system operation failed; `operation` says which one.
    #[error("{operation} failed for {}: {source}", path.display())]
    Io {
        /// The file (or temporary file) concerned.
        path: PathBuf,
        /// What was being done, e.g. "create temporary file", "rename".
        operation: &'static str,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A data array does not have the number of values its kind and the mesh call for.
    #[error(
        "{}: {association} array '{array}' has {actual} values, expected {expected}",
        path.display()
    )]
    DataLength {
        /// The file being written.
        path: PathBuf,
        /// Point or cell data.
        association: Association,
        /// Name of the offending array.
        array: String,
        /// What was expected, e.g. "10 (10 points × 1 component)".
        expected: String,
        /// Number of values given.
        actual: usize,
    },
    /// Two arrays of the same association share a name (or use the reserved name `region`).
    #[error("{}: {association} array name '{array}' is used twice (or is reserved)", path.display())]
    DuplicateArray {
        /// The file being written.
        path: PathBuf,
        /// Point or cell data.
        association: Association,
        /// The repeated name.
        array: String,
    },
    /// The mesh is not structurally consistent (node index out of range and the like).
    #[error("{}: cannot write an invalid mesh: {source}", path.display())]
    InvalidMesh {
        /// The file being written.
        path: PathBuf,
        /// What the mesh check found.
        #[source]
        source: dilata_mesh::MeshError,
    },
    /// More points or cells than the VTU encoder can count (vtkio keeps the counts as `u32`).
    #[error("{}: {count} {what} exceed the VTU writer's limit of 4294967295", path.display())]
    TooLarge {
        /// The file being written.
        path: PathBuf,
        /// "points" or "cells".
        what: &'static str,
        /// How many there are.
        count: usize,
    },
    /// The VTK XML encoder (vtkio) refused the data.
    #[error("{}: VTK XML encoding failed: {source}", path.display())]
    Encode {
        /// The file being written.
        path: PathBuf,
        /// The encoder's error.
        #[source]
        source: vtkio::xml::Error,
    },
    /// A result file being read back is missing or not what this crate writes.
    #[error("{}: {message}", path.display())]
    Read {
        /// The file being read.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// A time value in a collection is NaN or infinite.
    #[error("{}: time {time} of entry '{file}' is not finite", path.display())]
    NonFiniteTime {
        /// The collection file.
        path: PathBuf,
        /// The offending time.
        time: f64,
        /// The data file the time belongs to.
        file: String,
    },
}

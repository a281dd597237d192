//! Errors of the mesh crate.

use thiserror::Error;

/// Where in an input file a problem was found.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Location {
    /// 1-based line and column of a text file.
    Line { line: usize, column: usize },
    /// Byte offset into a binary section.
    Byte(usize),
}

impl std::fmt::Display for Location {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Location::Line { line, column } => write!(f, "line {line}, column {column}"),
            Location::Byte(b) => write!(f, "byte offset {b}"),
        }
    }
}

/// Everything that can go wrong reading, generating or checking a mesh.
#[derive(Debug, Error)]
pub enum MeshError {
    #[error("cannot read mesh file {path}: {source}")]
    Io {
        path: String,
        #[source]
        source: std::io::Error,
    },
    /// A syntax or content error in a mesh file.
    #[error("{file}: {location}: in section {section}: {message}")]
    Parse {
        file: String,
        location: Location,
        section: String,
        message: String,
    },
    #[error("unknown {what} '{name}'; the mesh has: {}", if available.is_empty() { "(none)".to_string() } else { available.join(", ") })]
    UnknownName {
        what: &'static str,
        name: String,
        available: Vec<String>,
    },
    /// Cells whose Jacobian determinant is not positive somewhere.
    #[error("{} inverted or degenerate cell(s), ids: {}", cells.len(), list_ids(cells))]
    BadCells { cells: Vec<usize> },
    #[error("invalid mesh: {0}")]
    Invalid(String),
    #[error("invalid generator parameters: {0}")]
    Generator(String),
    /// Two boundaries named as a periodic pair cannot be linked node to node.
    #[error("periodic pair '{first}' / '{second}': {message}")]
    Periodic {
        first: String,
        second: String,
        message: String,
    },
}

fn list_ids(cells: &[usize]) -> String {
    const MAX: usize = 20;
    let mut s: Vec<String> = cells.iter().take(MAX).map(usize::to_string).collect();
    if cells.len() > MAX {
        s.push(format!("… ({} more)", cells.len() - MAX));
    }
    s.join(", ")
}

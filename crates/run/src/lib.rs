//! # dilata-run
//!
//! The scenario driver, between the library crates and the command line: a scenario file
//! ([`dilata_io::scenario`]) becomes a checked [`Model`] (mesh, zones, materials, initial state,
//! loading program), and [`run`] takes it through its stages with the adaptive implicit
//! integrator, writing `history.csv` every step, field snapshots at output times and a
//! `summary.json` at the end.
//!
//! Every check that needs no computation happens in [`load_model`] and [`check_model`], so a
//! bad scenario never starts a run and never touches an earlier results folder.

mod driver;
mod formula;
mod model;
mod program;
mod record;

use std::path::PathBuf;

pub use driver::{
    build_dofs, check_model, describe_stop, run, stop_target, Progress, RunOptions, RunSummary,
    StageOutcome,
};
pub use formula::Formula;
pub use model::{build_model, load_model, material_table, Model, FARADAY};
pub use program::{value_at, Condition, ConditionKind, StagePlan, Target};
pub use record::{nodal_field, HistoryRow, HISTORY_COLUMNS};

/// Why a scenario could not be checked or run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The scenario file could not be read.
    #[error("cannot read {}: {source}", path.display())]
    Read {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// The scenario is wrong: file, line, column and what was expected.
    #[error(transparent)]
    Scenario(#[from] dilata_io::scenario::ScenarioError),
    /// The mesh file is wrong or has bad cells.
    #[error(transparent)]
    Mesh(#[from] dilata_mesh::MeshError),
    /// A result file could not be written.
    #[error(transparent)]
    Output(#[from] dilata_io::IoError),
    /// The displacement conditions leave rigid-body modes free.
    #[error(
        "stage '{stage}': the displacement conditions leave these rigid-body modes free: {modes}; \
         add supports or symmetry conditions, or set body.rigid_modes = \"pin\""
    )]
    RigidModes { stage: String, modes: String },
    /// The time step fell below its minimum; results up to `time` are in `out`.
    #[error(
        "stage '{stage}' stopped at t = {time:e} s: {message}; results up to this time are in {}",
        out.display()
    )]
    Stalled {
        stage: String,
        time: f64,
        message: String,
        out: PathBuf,
    },
    /// A numerical failure outside the time loop (initial state, solver set-up).
    #[error("{0}")]
    Numerical(String),
}

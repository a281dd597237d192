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

mod checkpoint;
mod driver;
mod formula;
mod model;
mod periodic;
mod program;
mod record;
mod report;
mod resume;

use std::path::PathBuf;

pub use checkpoint::{
    checkpoint_name, list_checkpoints, load_checkpoint, read_checkpoint, scenario_hash, Checkpoint,
};
pub use driver::{
    build_dofs, check_model, run, run_with, Progress, RunControl, RunOptions, RunSummary,
    StageOutcome,
};
pub use formula::Formula;
pub use model::{build_model, load_model, material_table, Model, FARADAY};
pub use program::{value_at, Condition, ConditionKind, StagePlan, Target};
pub use record::{nodal_field, HistoryRow, HISTORY_COLUMNS, TIMING_COLUMNS};
pub use report::{describe_stop, stop_target};

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
    /// The time step fell below its minimum; results up to `time` and a checkpoint of the last
    /// good state are in `out`.
    #[error(
        "stage '{stage}' stopped at t = {time:e} s: {message}; results up to this time and a \
         checkpoint of the last good state are in {}; to go on with changed settings: dilata \
         resume {} --force",
        out.display(),
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
    /// The run was asked to stop (Ctrl-C, SIGTERM) and stopped between two steps after
    /// writing a checkpoint.
    #[error(
        "interrupted at t = {time:e} s; a checkpoint and the results so far are in {}; \
         continue with: dilata resume {}",
        out.display(),
        out.display()
    )]
    Interrupted { time: f64, out: PathBuf },
    /// A checkpoint file cannot be read or is damaged.
    #[error("checkpoint {}: {message}", path.display())]
    Checkpoint { path: PathBuf, message: String },
    /// The scenario changed since the run started.
    #[error(
        "the scenario {file} differs from the one the run in {} was started with; pass \
         --force to continue with the changed scenario",
        out.display()
    )]
    ScenarioChanged { file: String, out: PathBuf },
    /// A checkpoint cannot continue with this scenario, even forced.
    #[error("cannot resume: {0}")]
    Resume(String),
}

//! Checkpoints inside a run: writing one between two steps, and reopening the result files of
//! an earlier run, cut back to its checkpoint, to continue it.

use std::path::{Path, PathBuf};

use dilata_io::PvdWriter;
use dilata_linalg::LinearSolver;
use dilata_solve::time::IntegratorState;

use crate::checkpoint::{checkpoint_name, list_checkpoints, write_checkpoint, Checkpoint};
use crate::model::Model;
use crate::record::{History, RunLog, Timing};
use crate::RunError;

/// The result files being written.
pub(crate) struct Files {
    pub history: History,
    pub log: RunLog,
    pub timing: Timing,
    pub pvd: PvdWriter,
}

/// A checkpoint fits `model` when it has as many unknowns and its stage exists.
pub(crate) fn check_resumable(
    model: &Model,
    c: &Checkpoint,
    n_dofs: usize,
) -> Result<(), RunError> {
    if c.n_dofs != n_dofs {
        return Err(RunError::Resume(format!(
            "the checkpoint holds {} unknowns but the scenario gives {n_dofs}: the mesh or the \
             orders changed, which no resume can bridge",
            c.n_dofs
        )));
    }
    if c.stage >= model.stages.len() {
        return Err(RunError::Resume(format!(
            "the checkpoint is in stage {} but the scenario has {} stages",
            c.stage + 1,
            model.stages.len()
        )));
    }
    Ok(())
}

/// Create the result files of a new run; checkpoints of an earlier run in the same folder are
/// removed (its history is being overwritten, so they could not resume anything).
pub(crate) fn create_files(out: &Path) -> Result<Files, RunError> {
    for steps in list_checkpoints(out)? {
        let path = out.join(checkpoint_name(steps));
        std::fs::remove_file(&path).map_err(|source| {
            RunError::Output(dilata_io::IoError::Io {
                path,
                operation: "remove a checkpoint of an earlier run",
                source,
            })
        })?;
    }
    Ok(Files {
        history: History::create(&out.join("history.csv"))?,
        log: RunLog::create(&out.join("run.log"))?,
        timing: Timing::create(&out.join("timing.csv"))?,
        pvd: PvdWriter::new(&out.join("fields.pvd")),
    })
}

/// Open the result files of the run a checkpoint belongs to, cut back to the checkpoint: the
/// history, log and timing files to their recorded lengths, the snapshots to the recorded list
/// (later `.vtu` files and later checkpoints are removed).
pub(crate) fn reopen_files(out: &Path, c: &Checkpoint) -> Result<Files, RunError> {
    let mut pvd = PvdWriter::new(&out.join("fields.pvd"));
    for (t, name) in &c.snapshots {
        pvd.add(*t, name);
    }
    pvd.write()?;
    let remove = |path: PathBuf| -> Result<(), RunError> {
        std::fs::remove_file(&path).map_err(|source| {
            RunError::Output(dilata_io::IoError::Io {
                path,
                operation: "remove a file written after the checkpoint",
                source,
            })
        })
    };
    let entries = std::fs::read_dir(out).map_err(|source| RunError::Read {
        path: out.to_path_buf(),
        source,
    })?;
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        let index = name
            .strip_prefix("fields_")
            .and_then(|r| {
                r.strip_suffix(".vtu")
                    .or_else(|| r.strip_suffix(".expect.json"))
            })
            .and_then(|d| d.parse::<usize>().ok());
        if index.is_some_and(|i| i >= c.snapshots.len()) {
            remove(entry.path())?;
        }
    }
    for steps in list_checkpoints(out)? {
        if steps > c.steps {
            remove(out.join(checkpoint_name(steps)))?;
        }
    }
    Ok(Files {
        history: History::reopen(&out.join("history.csv"), c.history_bytes)?,
        log: RunLog::reopen(&out.join("run.log"), c.log_bytes)?,
        timing: Timing::reopen(&out.join("timing.csv"), c.timing_bytes)?,
        pvd,
    })
}

/// Fill the checkpoint fields that live elsewhere during the loop and write it.
pub(crate) fn save_checkpoint(
    out: &Path,
    st: &mut Checkpoint,
    files: &Files,
    state: &IntegratorState,
    solver: &dyn LinearSolver,
    wall_seconds: f64,
) -> Result<PathBuf, RunError> {
    st.integrator = state.clone();
    st.solver_state = solver.carried_state();
    st.snapshots = files.pvd.entries().to_vec();
    st.history_bytes = files.history.n_bytes();
    st.log_bytes = files.log.n_bytes();
    st.timing_bytes = files.timing.n_bytes();
    st.wall_seconds = wall_seconds;
    let path = write_checkpoint(out, st, 2)?;
    st.integrator.x = Vec::new();
    st.integrator.past = Vec::new();
    Ok(path)
}

/// The absolute path of the scenario file, or "" for a scenario that is no file (built in).
pub(crate) fn scenario_origin(model: &Model) -> String {
    let path = Path::new(&model.file);
    if !path.is_file() {
        return String::new();
    }
    std::path::absolute(path).map_or(String::new(), |p| p.display().to_string())
}

//! `dilata check`, `dilata run`, `dilata resume` and `dilata demo`: scenario files through the
//! driver, with a progress line on simulated time; Ctrl-C and SIGTERM stop a run between two
//! steps with a checkpoint.

use std::io::{IsTerminal, Write};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Instant;

use anyhow::Context;
use dilata_run::{
    build_model, check_model, describe_stop, load_checkpoint, load_model, material_table,
    scenario_hash, stop_target, Model, Progress, RunControl, RunError, RunOptions, RunSummary,
};

use dilata_io::json::Json;

/// The built-in demonstration scenario (also `examples/charging_particle/scenario.toml`).
pub const DEMO_SCENARIO: &str = include_str!("../../../examples/charging_particle/scenario.toml");

const CAUTION: &str = "Results inform design; they do not certify it. Validate against \
experiments and defer to applicable codes, standards and licensed engineering practice.";

/// `dilata check FILE`.
pub fn check(file: &Path) -> anyhow::Result<()> {
    let model = load_model(file)?;
    check_model(&model)?;
    describe(&model);
    println!("{}: no problems found", file.display());
    Ok(())
}

fn describe(model: &Model) {
    let s = &model.scenario;
    if !s.title.is_empty() {
        println!("{}", s.title);
    }
    println!(
        "  body       {:?}, {} nodes, {} cells; orders u {}, c {}, mu {}",
        s.body.geometry,
        model.mesh.n_points(),
        model.mesh.n_cells(),
        model.orders[0],
        model.orders[1],
        model.orders[2]
    );
    if !model.links.is_empty() {
        println!(
            "  periodic   {} boundary nodes share the unknowns of their partners",
            model.links.n_linked()
        );
    }
    for (name, cells) in material_table(model) {
        println!("  material   {name}: {cells} cells");
    }
    if s.body.strain == dilata_io::scenario::Strain::Finite {
        println!("  strain     finite (total Lagrangian)");
    }
    // A gel starts from its reference state; a bath ramp starts from its potential.
    for (name, law) in model.material_names.iter().zip(model.laws.finite_laws()) {
        if let dilata_material::finite::FiniteLaw::Gel(g) = law {
            println!(
                "  gel        {name}: reference stretch {}, solvent {:.6e} mol/m^3, \
                 chemical potential {:.10e} J/mol",
                g.params().reference_stretch,
                g.reference_concentration(),
                g.free_swelling_potential(g.params().reference_stretch)
            );
        }
    }
    for stage in &model.stages {
        let stop = match &stage.stop {
            Some(rule) => format!(
                ", or earlier when the {} reaches {:e}",
                describe_stop(rule),
                stop_target(rule)
            ),
            None => String::new(),
        };
        println!(
            "  stage      {}: {} s{stop}, {} boundary conditions",
            stage.name,
            stage.duration,
            stage.conditions.len()
        );
    }
}

/// `dilata run FILE`; draws the history figures at the end when `plot` is set.
pub fn run(
    file: &Path,
    out: Option<&Path>,
    threads: Option<usize>,
    plot: bool,
) -> anyhow::Result<()> {
    let model = load_model(file)?;
    let out = match out {
        Some(o) => o.to_path_buf(),
        None => {
            let stem = file
                .file_stem()
                .map_or("run".into(), |s| s.to_string_lossy());
            Path::new("dilata-out").join(stem.as_ref())
        }
    };
    run_model(&model, &out, threads, RunControl::default())?;
    if plot {
        crate::plot_cmd::after_run(&out)?;
    }
    Ok(())
}

/// `dilata resume DIR`: the newest checkpoint in `dir`, the scenario it was started from (or
/// the copy in `dir` when that file is gone), refused when the scenario changed unless
/// `force`; draws the history figures at the end when `plot` is set.
pub fn resume(dir: &Path, force: bool, threads: Option<usize>, plot: bool) -> anyhow::Result<()> {
    let (path, checkpoint) = load_checkpoint(dir)?;
    let original = Path::new(&checkpoint.scenario_file);
    let mut model = if !checkpoint.scenario_file.is_empty() && original.is_file() {
        load_model(original)?
    } else {
        let copy = dir.join("scenario.toml");
        let text = std::fs::read_to_string(&copy).map_err(|source| RunError::Read {
            path: copy.clone(),
            source,
        })?;
        let base = original.parent().unwrap_or(Path::new("."));
        build_model(text, &copy.display().to_string(), base)?
    };
    if scenario_hash(&model.text) == checkpoint.scenario_hash {
        // The same scenario: named as when the run started (summary.json stays identical).
        model.file = checkpoint.scenario_name.clone();
    } else {
        if !force {
            return Err(RunError::ScenarioChanged {
                file: model.file.clone(),
                out: dir.to_path_buf(),
            }
            .into());
        }
        eprintln!(
            "warning: the scenario {} changed since the run started; continuing with it \
             (--force)",
            model.file
        );
    }
    println!(
        "resuming from {}: step {}, t = {:e} s, stage {}",
        path.display(),
        checkpoint.steps,
        checkpoint.integrator.t,
        checkpoint.stage + 1
    );
    let control = RunControl {
        resume: Some(checkpoint),
        interrupt: None,
    };
    run_model(&model, dir, threads, control)?;
    if plot {
        crate::plot_cmd::after_run(dir)?;
    }
    Ok(())
}

/// A flag set by the first Ctrl-C or SIGTERM; a second one ends the process at once. None
/// when the handler cannot be installed (the run then simply cannot be stopped cleanly).
fn interrupt_flag() -> Option<Arc<AtomicBool>> {
    let flag = Arc::new(AtomicBool::new(false));
    let seen = flag.clone();
    let installed = ctrlc::set_handler(move || {
        if seen.swap(true, Ordering::SeqCst) {
            eprintln!("\nstopped at once; the newest checkpoint is older than this moment");
            std::process::exit(i32::from(crate::EXIT_INTERRUPTED));
        }
        eprintln!(
            "\nstopping after the current step with a checkpoint (press Ctrl-C again to stop at \
             once)"
        );
    });
    match installed {
        Ok(()) => Some(flag),
        Err(e) => {
            eprintln!("warning: Ctrl-C will not stop the run cleanly: {e}");
            None
        }
    }
}

fn run_model(
    model: &Model,
    out: &Path,
    threads: Option<usize>,
    mut control: RunControl,
) -> anyhow::Result<RunSummary> {
    if threads == Some(0) {
        anyhow::bail!("--threads must be at least 1");
    }
    // `run` checks everything `check_model` does before it writes anything.
    describe(model);
    control.interrupt = interrupt_flag();
    let mut bar = ProgressLine::new();
    let summary = dilata_run::run_with(
        model,
        &RunOptions {
            out: out.to_path_buf(),
            threads,
        },
        &control,
        &mut |p| bar.update(p),
    );
    bar.finish();
    let summary = summary.map_err(|e| match e {
        // Say which folder, in words, before the file-system detail.
        RunError::Output(io) => {
            anyhow::Error::new(io).context(format!("cannot write the results in {}", out.display()))
        }
        other => other.into(),
    })?;
    println!(
        "done: {} steps ({} rejected attempts), t = {:.6e} s, {:.2} s wall",
        summary.steps, summary.rejected, summary.final_time, summary.wall_seconds
    );
    for s in &summary.stages {
        println!(
            "  stage {:<12} {:.6e} s .. {:.6e} s, ended by {}",
            s.name, s.start, s.end, s.reason
        );
    }
    let r = &summary.final_row;
    println!(
        "  final mean concentration {:.6e} mol/m^3 (min {:.6e}, max {:.6e})",
        r.c_mean, r.c_min, r.c_max
    );
    println!(
        "  largest hydrostatic stress {:.6e} Pa at t = {:.6e} s; largest principal stress {:.6e} Pa at t = {:.6e} s",
        summary.max_hydrostatic.0, summary.max_hydrostatic.1, summary.max_principal.0, summary.max_principal.1
    );
    println!(
        "  mass balance: amount - initial - inflow = {:.3e} mol",
        r.balance_error
    );
    if let Some(activity) = &summary.solver_activity {
        println!("  {activity}");
    }
    let (session, assembly) = summary.session_timing;
    if session > 0.0 {
        println!(
            "  assembly (residuals and Jacobians for Newton): {assembly:.2} s of {session:.2} s wall in this session ({:.0} %)",
            100.0 * assembly / session
        );
    }
    println!("  results in {}", out.display());
    println!("{CAUTION}");
    Ok(summary)
}

/// `dilata demo`: the built-in scenario; draws the history figures at the end when `plot` is
/// set.
pub fn demo(out: &Path, threads: Option<usize>, plot: bool) -> anyhow::Result<()> {
    let model = build_model(
        DEMO_SCENARIO.to_string(),
        "built-in demo scenario",
        Path::new("."),
    )?;
    let summary = run_model(&model, out, threads, RunControl::default())?;
    if let Some((file, probes)) = &summary.last_snapshot {
        write_expectations(out, &model, file, probes)?;
    }
    if plot {
        crate::plot_cmd::after_run(out)?;
    }
    Ok(())
}

/// Expectations for an independent reader (CI's VTK check) of the last snapshot, written beside
/// it as `fields_NNNN.expect.json`.
fn write_expectations(
    out: &Path,
    model: &Model,
    file: &str,
    probes: &[(String, usize, usize, f64)],
) -> anyhow::Result<()> {
    let arrays = probes
        .iter()
        .map(|(name, nc, idx, v)| {
            Json::Obj(vec![
                ("association".into(), Json::Str("point".into())),
                ("name".into(), Json::Str(name.clone())),
                ("components".into(), Json::Int(*nc as i64)),
                (
                    "values".into(),
                    Json::Arr(vec![Json::Arr(vec![Json::Int(*idx as i64), Json::Num(*v)])]),
                ),
            ])
        })
        .collect();
    let cells: Vec<(String, Json)> = model
        .mesh
        .cell_counts()
        .into_iter()
        .map(|(k, n)| (k.name().to_string(), Json::Int(n as i64)))
        .collect();
    let doc = Json::Obj(vec![
        ("points".into(), Json::Int(model.mesh.n_points() as i64)),
        ("cells".into(), Json::Int(model.mesh.n_cells() as i64)),
        ("cell_type_counts".into(), Json::Obj(cells)),
        ("arrays".into(), Json::Arr(arrays)),
    ]);
    let path = out.join(file.replace(".vtu", ".expect.json"));
    dilata_io::write_atomic(&path, doc.render().as_bytes())
        .with_context(|| format!("writing {}", path.display()))?;
    Ok(())
}

/// One status line on standard error: redrawn in place on a terminal, printed every few
/// seconds otherwise.
struct ProgressLine {
    tty: bool,
    last: Option<Instant>,
    drawn: bool,
}

impl ProgressLine {
    fn new() -> Self {
        ProgressLine {
            tty: std::io::stderr().is_terminal(),
            last: None,
            drawn: false,
        }
    }

    fn update(&mut self, p: &Progress<'_>) {
        let now = Instant::now();
        let interval = if self.tty { 0.1 } else { 5.0 };
        let due = self
            .last
            .is_none_or(|l| now.duration_since(l).as_secs_f64() >= interval);
        if !due {
            return;
        }
        self.last = Some(now);
        let span = (p.program_end - p.program_start).max(f64::MIN_POSITIVE);
        let done = ((p.time - p.program_start) / span).clamp(0.0, 1.0);
        let width = 24;
        let filled = (done * width as f64).round() as usize;
        let eta = if done > 0.0 {
            format!("{:.0} s", p.wall_seconds * (1.0 - done) / done)
        } else {
            "?".into()
        };
        let line = format!(
            "[{}{}] stage {}/{} {:<10} t = {:.3e} s  dt = {:.2e} s  newton {}  steps {} ({} rejected)  left ~{}",
            "#".repeat(filled),
            "-".repeat(width - filled),
            p.stage_index + 1,
            p.n_stages,
            p.stage,
            p.time,
            p.dt,
            p.newton_iterations,
            p.steps,
            p.rejected,
            eta
        );
        let mut err = std::io::stderr();
        if self.tty {
            let _ = write!(err, "\r{line}\x1b[K");
        } else {
            let _ = writeln!(err, "{line}");
        }
        let _ = err.flush();
        self.drawn = true;
    }

    fn finish(&mut self) {
        if self.tty && self.drawn {
            let _ = writeln!(std::io::stderr());
        }
    }
}

//! The time loop of a scenario: stages in order, steps with the adaptive integrator, stop
//! events located in time, a history row every step, field snapshots at output times,
//! checkpoints between steps (at intervals, on request, and when a run stalls), and resuming
//! from one.

use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering as AtomicOrdering};
use std::sync::Arc;
use std::time::Instant;

use dilata_fem::dofs::DofMap;
use dilata_fem::{Constraints, FieldSpec, GeometryMode, Parallelism};
use dilata_io::scenario::{LinearSolverName, RigidModes, SchemeName, DEFAULT_CHECKPOINT_WALL};
use dilata_io::{write_atomic, PvdWriter};
use dilata_linalg::{build_solver_with, LinearSolver, Ordering, SolverConfig, SolverKind};
use dilata_material::elastic::{hydrostatic, max_principal, von_mises};
use dilata_physics::coupled::CoupledFields;
use dilata_physics::coupled_post::{coupled_integrals_on, recover_coupled_nodal_on, PostThreads};
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::supports::{pin_rigid_modes, rigid_modes_left, RigidBody};
use dilata_solve::time::{
    AdaptiveParams, EnergyControl, Integrator, IntegratorParams, IntegratorState, RateRule, Scheme,
    StepSizing,
};
use dilata_solve::{newton, NewtonParams, TransientSystem};

use crate::checkpoint::{scenario_hash, Checkpoint};
use crate::model::Model;
use crate::program::{build_stage_setup, ConditionKind, StagePlan};
use crate::record::{nodal_field, write_snapshot, HistoryRow, Probe, Snapshot};
use crate::report::{describe_stop, explain_failure, stop_quantity, stop_target, write_summary};
use crate::resume::{
    check_resumable, create_files, reopen_files, save_checkpoint, scenario_origin,
};
use crate::RunError;

/// Newton steps below this fraction of a field's magnitude (or its scale: body size, RT) end
/// the iteration: the coupled Jacobian is badly scaled (stiffness, mobility and potential
/// differ by twenty orders of magnitude in SI units), and near equilibrium the residual of a
/// time step starts at round-off, where a relative reduction is out of reach but the step still
/// says the iterate moves by less than this. 1e-9 is far below any time-step error
/// tolerance (common practice, no source).
const STEP_TOL: f64 = 1e-9;

/// How to run.
#[derive(Clone, Debug)]
pub struct RunOptions {
    /// Results directory (created if missing).
    pub out: PathBuf,
    /// Worker threads (None: all cores; 1: sequential).
    pub threads: Option<usize>,
}

/// What the progress display is told after every accepted step.
#[derive(Clone, Debug)]
pub struct Progress<'a> {
    pub stage: &'a str,
    /// 0-based index of the stage.
    pub stage_index: usize,
    pub n_stages: usize,
    pub time: f64,
    /// Time at which the current stage ends at the latest.
    pub stage_end: f64,
    /// Latest end of the whole program (sum of stage durations from the current time on).
    pub program_end: f64,
    pub program_start: f64,
    pub dt: f64,
    pub newton_iterations: usize,
    pub steps: usize,
    pub rejected: usize,
    pub wall_seconds: f64,
}

/// How a stage ended.
#[derive(Clone, Debug, PartialEq)]
pub struct StageOutcome {
    pub name: String,
    pub start: f64,
    pub end: f64,
    /// "duration" or a description of the event.
    pub reason: String,
}

/// What a finished run reports (also written to `summary.json`).
#[derive(Clone, Debug, PartialEq)]
pub struct RunSummary {
    /// What the linear solver did in this session (factorisations, iterations, fallbacks), for
    /// the terminal; not written to any result file, since a resumed run counts only its own
    /// session.
    pub solver_activity: Option<String>,
    /// Wall time of this session and the part of it spent in Newton's assemblies (seconds),
    /// for the terminal (not written to a result file, as `solver_activity`).
    pub session_timing: (f64, f64),
    pub steps: usize,
    pub rejected: usize,
    pub wall_seconds: f64,
    pub final_time: f64,
    pub stages: Vec<StageOutcome>,
    pub final_row: HistoryRow,
    /// Largest nodal hydrostatic stress over the run and when.
    pub max_hydrostatic: (f64, f64),
    /// Largest nodal maximum principal stress over the run and when.
    pub max_principal: (f64, f64),
    pub n_dofs: usize,
    pub snapshots: usize,
    /// The last snapshot file and one value of each of its point arrays.
    pub last_snapshot: Option<(String, Vec<Probe>)>,
    /// The final state (DOF vector of [`build_dofs`]'s map).
    pub final_solution: Vec<f64>,
}

struct Derived {
    stress: Vec<dilata_material::elastic::Voigt>,
    flux: Vec<[f64; 3]>,
    /// Nominal stress, stretches and swelling ratio (finite strain only).
    finite: Option<dilata_physics::coupled_post::FiniteNodal>,
    row: HistoryRow,
}

/// Sequential or threaded, from the options.
fn parallelism(threads: Option<usize>) -> Parallelism {
    match threads {
        Some(1) => Parallelism::Sequential,
        Some(n) => Parallelism::Rayon { threads: n },
        None => Parallelism::Rayon { threads: 0 },
    }
}

/// Build the DOF map of the three fields. Without mechanics (`body.mechanics = false`) the
/// displacement field has no components, hence no DOFs: every loop over its components is
/// empty and the strain is zero.
pub fn build_dofs(model: &Model) -> (DofMap, CoupledFields) {
    let dim = if model.scenario.body.mechanics {
        model.mesh.dim
    } else {
        0
    };
    let dofs = DofMap::build_linked(
        &model.mesh,
        &[
            FieldSpec::vector("u", dim, model.orders[0]),
            FieldSpec::scalar("c", model.orders[1]),
            FieldSpec::scalar("mu", model.orders[2]),
        ],
        &model.links,
    )
    .expect("orders and periodic links were checked against the mesh");
    let fields = CoupledFields {
        u: dofs.field("u").expect("just built"),
        c: dofs.field("c").expect("just built"),
        mu: dofs.field("mu").expect("just built"),
    };
    (dofs, fields)
}

/// Point supports that remove the rigid modes each stage leaves free (or the refusal).
fn plan_pins(
    model: &Model,
    dofs: &DofMap,
    fields: CoupledFields,
) -> Result<Vec<Vec<(usize, usize)>>, RunError> {
    let mut all = Vec::new();
    if !model.scenario.body.mechanics {
        return Ok(vec![Vec::new(); model.stages.len()]);
    }
    for plan in &model.stages {
        let setup = build_stage_setup(plan, &model.mesh, dofs, fields, 0.0, &[]);
        let body = RigidBody {
            mesh: &model.mesh,
            dofs,
            u_field: fields.u,
            mode: model.mode,
        };
        let left = rigid_modes_left(&body, &setup.constraints);
        if left.is_empty() {
            all.push(Vec::new());
            continue;
        }
        match model.scenario.body.rigid_modes {
            RigidModes::Refuse => {
                let names: Vec<String> = left.iter().map(ToString::to_string).collect();
                return Err(RunError::RigidModes {
                    stage: plan.name.clone(),
                    modes: names.join(", "),
                });
            }
            RigidModes::Pin => {
                let mut c = setup.constraints;
                let pins = pin_rigid_modes(&body, &mut c).map_err(|e| RunError::RigidModes {
                    stage: plan.name.clone(),
                    modes: e.to_string(),
                })?;
                all.push(pins);
            }
        }
    }
    Ok(all)
}

/// Check everything that can be checked without computing: the model (already built) plus the
/// rigid-mode analysis of every stage.
pub fn check_model(model: &Model) -> Result<(), RunError> {
    let (dofs, fields) = build_dofs(model);
    plan_pins(model, &dofs, fields).map(|_| ())
}

/// Extra control of a run: continuing from a checkpoint, and stopping on request.
#[derive(Clone, Debug, Default)]
pub struct RunControl {
    /// Continue from this checkpoint (see [`crate::load_checkpoint`]) instead of starting at
    /// t = 0. The results folder must be the one the checkpoint belongs to.
    pub resume: Option<Checkpoint>,
    /// When set (by a signal handler, say), the run stops before its next step: it writes a
    /// checkpoint and a snapshot of the current state and returns [`RunError::Interrupted`].
    pub interrupt: Option<Arc<AtomicBool>>,
}

/// Run `model`, writing results to `options.out`.
pub fn run(
    model: &Model,
    options: &RunOptions,
    progress: &mut dyn FnMut(&Progress<'_>),
) -> Result<RunSummary, RunError> {
    run_with(model, options, &RunControl::default(), progress)
}

/// Run `model` as [`run`] does, or continue it from a checkpoint, writing checkpoints at the
/// intervals of the scenario's `[output]` section and stopping early on `control.interrupt`.
pub fn run_with(
    model: &Model,
    options: &RunOptions,
    control: &RunControl,
    progress: &mut dyn FnMut(&Progress<'_>),
) -> Result<RunSummary, RunError> {
    let wall = Instant::now();
    let (dofs, fields) = build_dofs(model);
    let pins = plan_pins(model, &dofs, fields)?;
    let n = dofs.n_dofs();
    if let Some(c) = &control.resume {
        check_resumable(model, c, n)?;
    }
    // Outputs: the folder must be writable before anything is computed.
    let out = &options.out;
    std::fs::create_dir_all(out).map_err(|source| {
        RunError::Output(dilata_io::IoError::Io {
            path: out.clone(),
            operation: "create results directory",
            source,
        })
    })?;
    write_atomic(&out.join("scenario.toml"), model.text.as_bytes())?;
    let mut files = match &control.resume {
        None => create_files(out)?,
        Some(c) => reopen_files(out, c)?,
    };

    let par = parallelism(options.threads);
    let mesh = &model.mesh;
    let potential_nodes = potential_nodes(model, &dofs, fields);
    let mut problem = CoupledProblem::with_sparse_coupling(
        mesh,
        dofs,
        fields,
        model.mode,
        model.laws.clone(),
        par,
        &potential_nodes,
    );
    // With the LU, factorising the coupled Jacobian costs far more than a residual, so Newton
    // keeps a factorisation while it converges fast (chord steps). The symmetric-form solver
    // keeps its own factorisation across Newton iterations and solves with the current
    // Jacobian, so Newton stays quadratic there (docs/performance.md).
    problem.reuse_jacobian = model.scenario.solver.linear == LinearSolverName::Direct;
    if model.source != 0.0 {
        let s = model.source;
        problem.source = Some(Box::new(move |_, _| s));
    }
    let mut solver = build_linear_solver(model, par);
    solver
        .analyze(problem.assembler.pattern())
        .map_err(|e| RunError::Numerical(format!("linear solver analysis: {e}")))?;

    // Output times.
    let every = model.scenario.output.every;
    let mut extra: Vec<f64> = model.scenario.output.times.clone();
    extra.sort_by(f64::total_cmp);
    let next_output = |t: f64| -> f64 {
        let mut next = f64::INFINITY;
        if let Some(e) = every {
            let k = (t / e * (1.0 + 1e-12)).floor() + 1.0;
            next = next.min(k * e);
        }
        if let Some(&x) = extra.iter().find(|&&x| x > t * (1.0 + 1e-12) + 1e-300) {
            next = next.min(x);
        }
        next
    };

    let post = |problem: &CoupledProblem<'_>, x: &[f64]| -> Result<Derived, RunError> {
        derive(model, problem, x)
    };
    let snapshot = |problem: &CoupledProblem<'_>,
                    x: &[f64],
                    d: &Derived,
                    t: f64,
                    pvd: &mut PvdWriter,
                    last: &mut Option<(String, Vec<Probe>)>|
     -> Result<(), RunError> {
        if !model.scenario.output.fields {
            return Ok(());
        }
        *last = Some(write_snapshot(
            out,
            pvd.entries().len(),
            t,
            mesh,
            Snapshot {
                u: nodal_field(mesh, &problem.dofs, fields.u, x),
                c: nodal_field(mesh, &problem.dofs, fields.c, x),
                mu: nodal_field(mesh, &problem.dofs, fields.mu, x),
                stress: &d.stress,
                flux: &d.flux,
                finite: d.finite.as_ref(),
                material: model.laws.law_of_cell(),
            },
            pvd,
        )?);
        Ok(())
    };

    // The loop state: fresh (initial equilibrium, row 0, first snapshot) or from the checkpoint.
    let resuming = control.resume.is_some();
    let mut st = match &control.resume {
        Some(c) => {
            let mut st = c.clone();
            st.session += 1;
            st
        }
        None => {
            let mut x0 = vec![0.0; n];
            for node in problem.dofs.field_nodes(fields.c) {
                let d = problem.dofs.node_dof(fields.c, node, 0).expect("c node");
                x0[d] = model.initial_c[node];
            }
            // A gel's reference state has a known potential: start the equilibrium from it.
            for (cell, kind, _) in model.mesh.cells() {
                if !model.laws.is_finite() {
                    break;
                }
                if let Some(mu0) = model.laws.finite_law(cell).reference_potential() {
                    let range = problem.dofs.local_range(fields.mu, kind);
                    for &d in &problem.dofs.cell_dofs(cell)[range] {
                        x0[d] = mu0;
                    }
                }
            }
            initial_equilibrium(model, &mut problem, solver.as_mut(), &mut x0, &pins[0])?;
            let d0 = post(&problem, &x0)?;
            let mut row0 = d0.row.clone();
            row0.stage = model.stages[0].name.clone();
            files.history.append(&row0)?;
            files
                .timing
                .append(0, 0.0, wall.elapsed().as_secs_f64(), 0)?;
            let mut last_snapshot = None;
            snapshot(&problem, &x0, &d0, 0.0, &mut files.pvd, &mut last_snapshot)?;
            Checkpoint {
                scenario_hash: 0,
                scenario_file: String::new(),
                scenario_name: String::new(),
                n_dofs: n,
                stage: 0,
                stage_start: 0.0,
                stop_value: None,
                integrator: IntegratorState {
                    t: 0.0,
                    x: x0,
                    past: Vec::new(),
                    dt_next: 0.0,
                    n_accepted: 0,
                    n_rejected: 0,
                    last_error: None,
                },
                solver_state: Vec::new(),
                inflow: (0.0, 0.0),
                steps: 0,
                amount0: d0.row.amount,
                max_hydrostatic: (row0.peak_hydrostatic, 0.0),
                max_principal: (row0.peak_principal, 0.0),
                last_row: row0,
                outcomes: Vec::new(),
                snapshots: Vec::new(),
                last_snapshot,
                history_bytes: 0,
                log_bytes: 0,
                timing_bytes: 0,
                wall_seconds: 0.0,
                session: 0,
            }
        }
    };
    st.scenario_hash = scenario_hash(&model.text);
    st.scenario_file = scenario_origin(model);
    st.scenario_name = model.file.clone();
    let wall_before = st.wall_seconds;
    let wall_now = || wall_before + wall.elapsed().as_secs_f64();
    let mut integrator = Integrator::new(build_integrator_params(model), 0.0, Vec::new());
    if resuming {
        solver
            .restore_carried_state(&st.solver_state)
            .map_err(|e| RunError::Resume(format!("linear solver state: {e}")))?;
        integrator.state = std::mem::replace(&mut st.integrator, integrator.state.clone());
    } else {
        integrator.state.x = std::mem::take(&mut st.integrator.x);
    }
    let checkpoint_every = model.scenario.output.checkpoint_every;
    let checkpoint_wall = model
        .scenario
        .output
        .checkpoint_wall
        .unwrap_or(DEFAULT_CHECKPOINT_WALL);
    let mut last_checkpoint = Instant::now();
    let mut checkpoint_due = false;

    let first_stage = st.stage;
    for si in first_stage..model.stages.len() {
        let plan = &model.stages[si];
        let t_stage = st.stage_start;
        let setup = build_stage_setup(plan, mesh, &problem.dofs, fields, t_stage, &pins[si]);
        problem.constraints = setup.constraints;
        problem.loads = setup.loads;
        problem.boundary_update = Some(setup.update);
        problem
            .check_setup()
            .map_err(|e| RunError::Numerical(format!("stage '{}': {e}", plan.name)))?;
        if !(resuming && si == first_stage) {
            st.stage = si;
            // Restart the multistep history at a stage change (the loads may jump), and the
            // step control's memory with it.
            integrator.state.past.clear();
            integrator.state.last_error = None;
            st.stop_value = match &plan.stop {
                Some(rule) => Some(stop_quantity(
                    rule,
                    model,
                    &problem,
                    &integrator.state.x,
                    &st.last_row,
                )?),
                None => None,
            };
        }
        let t_end = t_stage + plan.duration;
        let mut reason = "duration".to_string();
        'steps: while integrator.state.t < t_end * (1.0 - 1e-14) {
            // Between two steps: checkpoint when due or asked to stop.
            let interrupted = control
                .interrupt
                .as_ref()
                .is_some_and(|f| f.load(AtomicOrdering::SeqCst));
            if interrupted
                || checkpoint_due
                || last_checkpoint.elapsed().as_secs_f64() >= checkpoint_wall
            {
                let path = save_checkpoint(
                    out,
                    &mut st,
                    &files,
                    &integrator.state,
                    solver.as_ref(),
                    wall_now(),
                )?;
                checkpoint_due = false;
                last_checkpoint = Instant::now();
                if interrupted {
                    let x = &integrator.state.x;
                    let t = integrator.state.t;
                    if files.pvd.entries().last().is_none_or(|e| e.0 != t) {
                        let d = post(&problem, x)?;
                        snapshot(&problem, x, &d, t, &mut files.pvd, &mut st.last_snapshot)?;
                    }
                    files.log.note(&format!(
                        "interrupted at step {} (t = {t:e} s); checkpoint {}",
                        st.steps,
                        path.display()
                    ))?;
                    return Err(RunError::Interrupted {
                        time: t,
                        out: out.clone(),
                    });
                }
            }
            let t_out = next_output(integrator.state.t);
            let mut t_stop = t_end.min(t_out);
            let saved = (integrator.state.clone(), st.inflow);
            let mut tries = 0;
            loop {
                let report = match integrator.step(&mut problem, solver.as_mut(), t_stop) {
                    Ok(r) => r,
                    Err(e) => {
                        // Keep the last good state: snapshot, checkpoint (a resume with a
                        // changed scenario can go on from it), and the cause in the log.
                        let x = &integrator.state.x;
                        let d = post(&problem, x)?;
                        snapshot(
                            &problem,
                            x,
                            &d,
                            integrator.state.t,
                            &mut files.pvd,
                            &mut st.last_snapshot,
                        )?;
                        let path = save_checkpoint(
                            out,
                            &mut st,
                            &files,
                            &integrator.state,
                            solver.as_ref(),
                            wall_now(),
                        )?;
                        let message = explain_failure(model, &e.to_string());
                        files.log.note(&format!(
                            "stage '{}' stopped: {message}; last good state in checkpoint {}",
                            plan.name,
                            path.display()
                        ))?;
                        return Err(RunError::Stalled {
                            stage: plan.name.clone(),
                            time: integrator.state.t,
                            message,
                            out: out.clone(),
                        });
                    }
                };
                for cause in &report.rejections {
                    files.log.note(&format!(
                        "stage '{}': a step from t = {:e} s was rejected and retried \
                         smaller: {cause}",
                        plan.name, saved.0.t
                    ))?;
                }
                let x = integrator.state.x.clone();
                let rates = problem
                    .mass_rates(&x)
                    .map_err(|e| RunError::Numerical(format!("mass balance: {e}")))?;
                let r = rates.supplied + rates.reaction;
                let new_inflow = integrate_rate(&report.rate, st.inflow, r);
                let mut d = post(&problem, &x)?;
                // Stop event: locate the crossing in time by retaking the step.
                if let (Some(rule), Some(before)) = (&plan.stop, st.stop_value) {
                    let now = stop_quantity(rule, model, &problem, &x, &d.row)?;
                    let target = stop_target(rule);
                    if (before - target) * (now - target) <= 0.0 && before != target {
                        let frac = (target - before) / (now - before);
                        let close = (now - target).abs() <= 1e-6 * target.abs().max(1e-300);
                        if !close && tries < 6 && frac < 0.999 {
                            let t0 = saved.0.t;
                            let t_cross = t0 + frac.max(1e-3) * (report.t - t0);
                            (integrator.state, st.inflow) = saved.clone();
                            t_stop = t_cross;
                            tries += 1;
                            continue;
                        }
                        reason = format!(
                            "{} reached {:e} (value {:e})",
                            describe_stop(rule),
                            target,
                            now
                        );
                        st.stop_value = None;
                        // Retakes end with a short step; the next stage starts from the step
                        // size proposed before the crossing.
                        integrator.state.dt_next = integrator.state.dt_next.max(saved.0.dt_next);
                    } else {
                        st.stop_value = Some(now);
                    }
                }
                st.steps += 1;
                let steps = st.steps;
                st.inflow = (st.inflow.1, new_inflow);
                d.row.time = report.t;
                d.row.step = steps;
                d.row.stage = plan.name.clone();
                d.row.dt = report.dt;
                d.row.newton_iterations = report.newton.iterations;
                d.row.factorizations = report.newton.factorizations;
                d.row.rejected = report.rejections.len();
                d.row.inflow = new_inflow;
                d.row.balance_error = d.row.amount - st.amount0 - new_inflow;
                files.history.append(&d.row)?;
                if model.scenario.output.newton_log {
                    let norms: Vec<String> = report
                        .newton
                        .residual_norms
                        .iter()
                        .map(|r| format!("{r:.3e}"))
                        .collect();
                    files.log.note(&format!(
                        "step {steps} (stage '{}', t = {:e} s, dt = {:e} s): Newton residual \
                         max-norms {}",
                        plan.name,
                        report.t,
                        report.dt,
                        norms.join(" ")
                    ))?;
                }
                files
                    .timing
                    .append(steps, report.t, wall_now(), st.session)?;
                if d.row.peak_hydrostatic > st.max_hydrostatic.0 {
                    st.max_hydrostatic = (d.row.peak_hydrostatic, report.t);
                }
                if d.row.peak_principal > st.max_principal.0 {
                    st.max_principal = (d.row.peak_principal, report.t);
                }
                // Once the listed times are used up `t_out` is infinite and hits nothing.
                let hit_output =
                    t_out.is_finite() && (report.t - t_out).abs() <= 1e-12 * t_out.abs().max(1.0);
                let ends = reason != "duration" || report.t >= t_end * (1.0 - 1e-14);
                if hit_output || ends {
                    snapshot(
                        &problem,
                        &x,
                        &d,
                        report.t,
                        &mut files.pvd,
                        &mut st.last_snapshot,
                    )?;
                }
                if let Some(e) = checkpoint_every {
                    checkpoint_due |= (report.t / e).floor() > (saved.0.t / e).floor();
                }
                st.last_row = d.row;
                progress(&Progress {
                    stage: &plan.name,
                    stage_index: si,
                    n_stages: model.stages.len(),
                    time: report.t,
                    stage_end: t_end,
                    program_start: 0.0,
                    program_end: t_end
                        + model.stages[si + 1..]
                            .iter()
                            .map(|s| s.duration)
                            .sum::<f64>(),
                    dt: report.dt,
                    newton_iterations: report.newton.iterations,
                    steps,
                    rejected: integrator.state.n_rejected,
                    wall_seconds: wall_now(),
                });
                if reason != "duration" {
                    break 'steps;
                }
                break;
            }
        }
        st.outcomes.push(StageOutcome {
            name: plan.name.clone(),
            start: t_stage,
            end: integrator.state.t,
            reason,
        });
        st.stage_start = integrator.state.t;
    }
    let summary = RunSummary {
        solver_activity: solver
            .activity()
            .map(|a| format!("linear solver {}: {a}", solver.name())),
        session_timing: (wall.elapsed().as_secs_f64(), problem.assembly_seconds()),
        steps: st.steps,
        rejected: integrator.state.n_rejected,
        wall_seconds: wall_now(),
        final_time: integrator.state.t,
        stages: st.outcomes,
        final_row: st.last_row,
        max_hydrostatic: st.max_hydrostatic,
        max_principal: st.max_principal,
        n_dofs: n,
        snapshots: files.pvd.entries().len(),
        last_snapshot: st.last_snapshot,
        final_solution: std::mem::take(&mut integrator.state.x),
    };
    write_summary(&out.join("summary.json"), model, &summary)?;
    Ok(summary)
}

/// Integrator parameters from the scenario's `[time]` and `[solver]` sections.
fn build_integrator_params(model: &Model) -> IntegratorParams {
    let time = &model.scenario.time;
    let total: f64 = model.stages.iter().map(|s| s.duration).sum();
    let c_scale = model.initial_c.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    // Residuals carry the units and the size of the body (a micrometre particle has residuals
    // of 1e-15 mol/s), so no absolute residual test: convergence is relative per field, or a
    // negligible Newton step.
    let newton_params = NewtonParams {
        rel_tol: model.scenario.solver.newton_tolerance.unwrap_or(1e-9),
        abs_tol: 0.0,
        step_tol: STEP_TOL,
        max_iterations: model.scenario.solver.max_iterations.unwrap_or(15),
        ..NewtonParams::default()
    };
    let min_step = time.min_step.unwrap_or(1e-10 * total);
    let sizing = match time.fixed_step {
        Some(dt) => StepSizing::Fixed { dt },
        None => StepSizing::Adaptive(AdaptiveParams {
            dt_initial: time.first_step.unwrap_or(1e-4 * model.stages[0].duration),
            dt_min: min_step,
            dt_max: time.max_step.unwrap_or(total / 20.0),
            rtol: time.tolerance,
            atol: time
                .absolute_tolerance
                .unwrap_or(time.tolerance * if c_scale > 0.0 { c_scale } else { 1.0 }),
            safety: 0.9,
            max_growth: 2.0,
            predictive: true,
            newton_error_test: model.scenario.solver.newton_error_fraction,
        }),
    };
    IntegratorParams {
        scheme: match time.scheme {
            SchemeName::BackwardEuler => Scheme::BackwardEuler,
            SchemeName::Bdf2 => Scheme::Bdf2,
        },
        sizing,
        newton: newton_params,
        cut_factor: 0.25,
        dt_min: min_step,
        energy: (time.reject_energy_rise || time.max_energy_change.is_some()).then_some(
            EnergyControl {
                allowance: if time.reject_energy_rise {
                    ENERGY_ROUND_OFF
                } else {
                    f64::INFINITY
                },
                max_change: time.max_energy_change,
            },
        ),
    }
}

/// The mesh nodes where some stage prescribes `μ`: the sparse pattern of the coupled problem
/// keeps `u` columns in their `c` rows (`CoupledProblem::with_sparse_coupling`).
fn potential_nodes(model: &Model, dofs: &DofMap, fields: CoupledFields) -> Vec<bool> {
    let mut flags = vec![false; model.mesh.n_points()];
    for plan in &model.stages {
        let setup = build_stage_setup(plan, &model.mesh, dofs, fields, 0.0, &[]);
        for node in dofs.field_nodes(fields.mu) {
            let d = dofs.node_dof(fields.mu, node, 0).expect("node carries mu");
            flags[node] |= setup.constraints.is_constrained(d);
        }
    }
    flags
}

/// Relative rise of the total free energy tolerated by `reject_energy_rise`: the round-off of
/// summing the energy over the quadrature points and of the Newton tolerance (a rise below it
/// is not a rise the scheme can be blamed for; common practice, no source).
pub const ENERGY_ROUND_OFF: f64 = 1e-12;

/// The symmetric-form solver (nested dissection) or the direct LU (AMD in 2D, nested
/// dissection in 3D), or GMRES with ILU(0); threaded only in 3D.
fn build_linear_solver(model: &Model, par: Parallelism) -> Box<dyn LinearSolver> {
    let ordering = match model.mode {
        GeometryMode::ThreeD => Ordering::NestedDissection,
        _ => Ordering::Amd,
    };
    let kind = match model.scenario.solver.linear {
        // Finite strain has no symmetric form (CoupledProblem::row_transform): the LU directly.
        LinearSolverName::Symmetric if model.laws.is_finite() => SolverKind::Lu(ordering),
        // Nested dissection in 2D as well: on the charging particle (21 316 unknowns, quad8)
        // its factor holds 3.93 M entries against AMD's 4.23 M, and GMRES, which applies the
        // factor about nine times per Newton iteration, took 4.46–6.38 s against 5.91–7.45 s
        // in two alternating pairs (the same 999 iterations); on the spinodal benchmark (80 802
        // unknowns, quad4) the two were even (t = 0–150, the same 782 iterations: 24.9 and
        // 26.0 s against 23.8 and 25.8 s). docs/performance.md.
        LinearSolverName::Symmetric => SolverKind::SymmetricForm(Ordering::NestedDissection),
        LinearSolverName::Direct if model.mode == GeometryMode::ThreeD => {
            SolverKind::Lu(Ordering::NestedDissection)
        }
        LinearSolverName::Direct => SolverKind::Lu(Ordering::Amd),
        LinearSolverName::Iterative => SolverKind::Gmres(dilata_linalg::Preconditioner::Ilu0),
    };
    build_solver_with(
        kind,
        SolverConfig {
            // In 2D the factors are small and their supernodes thin: faer's threaded
            // factorisation and solves cost more than they save (measured, docs/performance.md:
            // spinodal benchmark to t = 150, 120 s with a threaded solver against 60 s with a
            // sequential one and threaded assembly; the axisymmetric particle 17.5 s against
            // 15.3 s). The solve phase of the symmetric form (Dilata's own split triangular
            // solves and GMRES's products) does use the threads. 3D keeps faer's threads.
            parallelism: if model.mode == GeometryMode::ThreeD {
                par
            } else {
                Parallelism::Sequential
            },
            solve_parallelism: Some(par),
            inexact_newton: model.scenario.solver.inexact_newton,
            ..SolverConfig::default()
        },
    )
}

/// Solve for u and μ with every c fixed at its initial value (the first stage's displacement
/// conditions and loads apply).
fn initial_equilibrium(
    model: &Model,
    problem: &mut CoupledProblem<'_>,
    solver: &mut dyn LinearSolver,
    x: &mut [f64],
    pins: &[(usize, usize)],
) -> Result<(), RunError> {
    let first = &model.stages[0];
    let mechanical = StagePlan {
        conditions: first
            .conditions
            .iter()
            .filter(|c| match &c.kind {
                ConditionKind::Value { target, .. } => {
                    matches!(target, crate::program::Target::U(_))
                }
                ConditionKind::Traction(_) | ConditionKind::Pressure(_) => true,
                _ => false,
            })
            .cloned()
            .collect(),
        ..first.clone()
    };
    let fields = problem.fields;
    let setup = build_stage_setup(&mechanical, &model.mesh, &problem.dofs, fields, 0.0, pins);
    let mut constraints: Constraints = setup.constraints;
    let c_dofs: Vec<usize> = problem.dofs.field_range(fields.c).collect();
    let g = constraints.add_group("initial concentration", &c_dofs, 0.0);
    constraints.set_group_values_with(g, |d| x[d]);
    problem.constraints = constraints;
    problem.loads = setup.loads;
    problem.boundary_update = Some(setup.update);
    let zeros = vec![0.0; x.len()];
    problem.begin_step(0.0, 0.0, &zeros);
    let params = NewtonParams {
        abs_tol: 0.0,
        ..NewtonParams::default()
    };
    newton(problem, solver, x, &params).map_err(|e| {
        RunError::Numerical(format!(
            "the initial state (u and mu in equilibrium with the initial concentration) \
             could not be solved: {}",
            explain_failure(model, &e.to_string())
        ))
    })?;
    Ok(())
}

/// Post-processing of a state: nodal stress and flux, integrals, extremes.
fn derive(model: &Model, problem: &CoupledProblem<'_>, x: &[f64]) -> Result<Derived, RunError> {
    let post = problem.post(x);
    let fail = |e: &dyn std::fmt::Display| RunError::Numerical(format!("post-processing: {e}"));
    let threads = PostThreads::Assembler(&problem.assembler);
    let nodal = recover_coupled_nodal_on(&model.mesh, &post, threads).map_err(|e| fail(&e))?;
    let ints = coupled_integrals_on(&model.mesh, &post, threads).map_err(|e| fail(&e))?;
    let cs: Vec<f64> = problem
        .dofs
        .field_range(problem.fields.c)
        .map(|d| x[d])
        .collect();
    let peak = |f: fn(&dilata_material::elastic::Voigt) -> f64| {
        nodal.stress.iter().map(f).fold(f64::NEG_INFINITY, f64::max)
    };
    let c_min = cs.iter().copied().fold(f64::INFINITY, f64::min);
    let c_max = cs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let interface_measure = if c_max > c_min {
        ints.gradient_norm / (c_max - c_min)
    } else {
        0.0
    };
    let row = HistoryRow {
        amount: ints.amount,
        c_mean: ints.amount / ints.volume,
        c_min,
        c_max,
        peak_hydrostatic: peak(hydrostatic),
        peak_principal: peak(max_principal),
        peak_von_mises: peak(von_mises),
        elastic_energy: ints.elastic_energy,
        chemical_energy: ints.chemical_energy,
        gradient_energy: ints.gradient_energy,
        free_energy: ints.elastic_energy + ints.chemical_energy + ints.gradient_energy,
        fraction_above_mean: ints.volume_above_mean / ints.volume,
        interface_measure,
        volume: ints.deformed_volume,
        ..HistoryRow::default()
    };
    Ok(Derived {
        stress: nodal.stress,
        flux: nodal.flux,
        finite: nodal.finite,
        row,
    })
}

/// Next value of the integrated inflow `I` with the rate rule of the step just taken
/// (`a0 I_{n+1} + a1 I_n + a2 I_{n−1} = rate`), so that `amount − amount₀ − I` is the
/// accumulated discrete mass-balance error.
fn integrate_rate(rule: &RateRule, inflow: (f64, f64), rate: f64) -> f64 {
    let (i_prev, i_n) = inflow;
    (rate - rule.a1 * i_n - rule.a2 * i_prev) / rule.a0
}

//! The time loop of a scenario: stages in order, steps with the adaptive integrator, stop
//! events located in time, a history row every step, field snapshots at output times.

use std::path::{Path, PathBuf};
use std::time::Instant;

use dilata_fem::dofs::DofMap;
use dilata_fem::{Constraints, FieldSpec, GeometryMode, Parallelism};
use dilata_io::json::Json;
use dilata_io::scenario::{LinearSolverName, RigidModes, SchemeName, StopRule};
use dilata_io::{write_atomic, PvdWriter};
use dilata_linalg::{build_solver_with, LinearSolver, Ordering, SolverConfig, SolverKind};
use dilata_material::elastic::{hydrostatic, max_principal, von_mises};
use dilata_physics::coupled::CoupledFields;
use dilata_physics::coupled_post::{
    boundary_mean, coupled_integrals, recover_coupled_nodal, BoundaryField, CoupledPost,
};
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::supports::{pin_rigid_modes, rigid_modes_left, RigidBody};
use dilata_solve::time::{
    AdaptiveParams, Integrator, IntegratorParams, RateRule, Scheme, StepSizing,
};
use dilata_solve::{newton, NewtonParams, TransientSystem};

use crate::model::Model;
use crate::program::{build_stage_setup, ConditionKind, StagePlan};
use crate::record::{nodal_field, write_snapshot, History, HistoryRow, Probe, RunLog, Snapshot};
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

/// Build the DOF map of the three fields.
pub fn build_dofs(model: &Model) -> (DofMap, CoupledFields) {
    let dim = model.mesh.dim;
    let dofs = DofMap::build(
        &model.mesh,
        &[
            FieldSpec::vector("u", dim, model.orders[0]),
            FieldSpec::scalar("c", model.orders[1]),
            FieldSpec::scalar("mu", model.orders[2]),
        ],
    )
    .expect("orders were checked against the mesh");
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

/// Run `model`, writing results to `options.out`.
pub fn run(
    model: &Model,
    options: &RunOptions,
    progress: &mut dyn FnMut(&Progress<'_>),
) -> Result<RunSummary, RunError> {
    let wall = Instant::now();
    let (dofs, fields) = build_dofs(model);
    let pins = plan_pins(model, &dofs, fields)?;
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
    let mut history = History::create(&out.join("history.csv"))?;
    let mut log = RunLog::create(&out.join("run.log"))?;
    let mut pvd = PvdWriter::new(&out.join("fields.pvd"));

    let par = parallelism(options.threads);
    let mesh = &model.mesh;
    let n = dofs.n_dofs();
    let mut problem = CoupledProblem::new(mesh, dofs, fields, model.mode, model.laws.clone(), par);
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

    // Initial state: c as given, u and μ in equilibrium with it.
    let mut x0 = vec![0.0; n];
    for node in problem.dofs.field_nodes(fields.c) {
        let d = problem.dofs.node_dof(fields.c, node, 0).expect("c node");
        x0[d] = model.initial_c[node];
    }
    initial_equilibrium(model, &mut problem, solver.as_mut(), &mut x0, &pins[0])?;

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
        }),
    };
    let params = IntegratorParams {
        scheme: match time.scheme {
            SchemeName::BackwardEuler => Scheme::BackwardEuler,
            SchemeName::Bdf2 => Scheme::Bdf2,
        },
        sizing,
        newton: newton_params,
        cut_factor: 0.25,
        dt_min: min_step,
    };
    let mut integrator = Integrator::new(params, 0.0, x0);

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
    let mut snapshots = 0usize;
    let mut last_snapshot = None;
    let mut snapshot = |problem: &CoupledProblem<'_>,
                        x: &[f64],
                        d: &Derived,
                        t: f64,
                        pvd: &mut PvdWriter|
     -> Result<(), RunError> {
        if !model.scenario.output.fields {
            return Ok(());
        }
        last_snapshot = Some(write_snapshot(
            out,
            snapshots,
            t,
            mesh,
            Snapshot {
                u: nodal_field(mesh, &problem.dofs, fields.u, x),
                c: nodal_field(mesh, &problem.dofs, fields.c, x),
                mu: nodal_field(mesh, &problem.dofs, fields.mu, x),
                stress: &d.stress,
                flux: &d.flux,
                material: model.laws.law_of_cell(),
            },
            pvd,
        )?);
        snapshots += 1;
        Ok(())
    };

    let d0 = post(&problem, &integrator.state.x)?;
    let amount0 = d0.row.amount;
    let mut row0 = d0.row.clone();
    row0.stage = model.stages[0].name.clone();
    history.append(&row0)?;
    snapshot(&problem, &integrator.state.x, &d0, 0.0, &mut pvd)?;
    let mut max_h = (row0.peak_hydrostatic, 0.0);
    let mut max_p = (row0.peak_principal, 0.0);
    let mut last_row = row0;

    // Integrated inflow follows the integrator's own rate rule: I_{n−1}, I_n.
    let mut inflow = (0.0, 0.0);
    let mut steps = 0usize;
    let mut outcomes = Vec::new();
    let mut t_stage = 0.0;
    for (si, plan) in model.stages.iter().enumerate() {
        let setup = build_stage_setup(plan, mesh, &problem.dofs, fields, t_stage, &pins[si]);
        problem.constraints = setup.constraints;
        problem.loads = setup.loads;
        problem.boundary_update = Some(setup.update);
        problem
            .check_setup()
            .map_err(|e| RunError::Numerical(format!("stage '{}': {e}", plan.name)))?;
        // Restart the multistep history at a stage change (the loads may jump).
        integrator.state.past.clear();
        let t_end = t_stage + plan.duration;
        let mut reason = "duration".to_string();
        let mut stop_value = match &plan.stop {
            Some(rule) => Some(stop_quantity(
                rule,
                model,
                &problem,
                &integrator.state.x,
                &last_row,
            )?),
            None => None,
        };
        'steps: while integrator.state.t < t_end * (1.0 - 1e-14) {
            let t_out = next_output(integrator.state.t);
            let mut t_stop = t_end.min(t_out);
            let saved = (integrator.state.clone(), inflow);
            let mut tries = 0;
            loop {
                let report = match integrator.step(&mut problem, solver.as_mut(), t_stop) {
                    Ok(r) => r,
                    Err(e) => {
                        let x = &integrator.state.x;
                        let d = post(&problem, x)?;
                        snapshot(&problem, x, &d, integrator.state.t, &mut pvd)?;
                        let message = explain_failure(model, &e.to_string());
                        log.note(&format!("stage '{}' stopped: {message}", plan.name))?;
                        return Err(RunError::Stalled {
                            stage: plan.name.clone(),
                            time: integrator.state.t,
                            message,
                            out: out.clone(),
                        });
                    }
                };
                for cause in &report.rejections {
                    log.note(&format!(
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
                let new_inflow = integrate_rate(&report.rate, inflow, r);
                let mut d = post(&problem, &x)?;
                // Stop event: locate the crossing in time by retaking the step.
                if let (Some(rule), Some(before)) = (&plan.stop, stop_value) {
                    let now = stop_quantity(rule, model, &problem, &x, &d.row)?;
                    let target = stop_target(rule);
                    if (before - target) * (now - target) <= 0.0 && before != target {
                        let frac = (target - before) / (now - before);
                        let close = (now - target).abs() <= 1e-6 * target.abs().max(1e-300);
                        if !close && tries < 6 && frac < 0.999 {
                            let t0 = saved.0.t;
                            let t_cross = t0 + frac.max(1e-3) * (report.t - t0);
                            (integrator.state, inflow) = saved.clone();
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
                        stop_value = None;
                        // Retakes end with a short step; the next stage starts from the step
                        // size proposed before the crossing.
                        integrator.state.dt_next = integrator.state.dt_next.max(saved.0.dt_next);
                    } else {
                        stop_value = Some(now);
                    }
                }
                steps += 1;
                inflow = (inflow.1, new_inflow);
                d.row.time = report.t;
                d.row.step = steps;
                d.row.stage = plan.name.clone();
                d.row.dt = report.dt;
                d.row.newton_iterations = report.newton.iterations;
                d.row.factorizations = report.newton.factorizations;
                d.row.rejected = report.rejections.len();
                d.row.inflow = new_inflow;
                d.row.balance_error = d.row.amount - amount0 - new_inflow;
                d.row.wall = wall.elapsed().as_secs_f64();
                history.append(&d.row)?;
                if d.row.peak_hydrostatic > max_h.0 {
                    max_h = (d.row.peak_hydrostatic, report.t);
                }
                if d.row.peak_principal > max_p.0 {
                    max_p = (d.row.peak_principal, report.t);
                }
                let hit_output = (report.t - t_out).abs() <= 1e-12 * t_out.abs().max(1.0);
                let ends = reason != "duration" || report.t >= t_end * (1.0 - 1e-14);
                if hit_output || ends {
                    snapshot(&problem, &x, &d, report.t, &mut pvd)?;
                }
                last_row = d.row;
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
                    wall_seconds: wall.elapsed().as_secs_f64(),
                });
                if reason != "duration" {
                    break 'steps;
                }
                break;
            }
        }
        outcomes.push(StageOutcome {
            name: plan.name.clone(),
            start: t_stage,
            end: integrator.state.t,
            reason,
        });
        t_stage = integrator.state.t;
    }
    if let Some(activity) = solver.activity() {
        log.note(&format!("linear solver {}: {activity}", solver.name()))?;
    }
    let summary = RunSummary {
        steps,
        rejected: integrator.state.n_rejected,
        wall_seconds: wall.elapsed().as_secs_f64(),
        final_time: integrator.state.t,
        stages: outcomes,
        final_row: last_row,
        max_hydrostatic: max_h,
        max_principal: max_p,
        n_dofs: n,
        snapshots,
        last_snapshot,
        final_solution: std::mem::take(&mut integrator.state.x),
    };
    write_summary(&out.join("summary.json"), model, &summary)?;
    Ok(summary)
}

/// The symmetric-form solver or the direct LU (AMD in 2D, nested dissection in 3D), or GMRES
/// with ILU(0).
fn build_linear_solver(model: &Model, par: Parallelism) -> Box<dyn LinearSolver> {
    let ordering = match model.mode {
        GeometryMode::ThreeD => Ordering::NestedDissection,
        _ => Ordering::Amd,
    };
    let kind = match model.scenario.solver.linear {
        LinearSolverName::Symmetric => SolverKind::SymmetricForm(ordering),
        LinearSolverName::Direct if model.mode == GeometryMode::ThreeD => {
            SolverKind::Lu(Ordering::NestedDissection)
        }
        LinearSolverName::Direct => SolverKind::Lu(Ordering::Amd),
        LinearSolverName::Iterative => SolverKind::Gmres(dilata_linalg::Preconditioner::Ilu0),
    };
    build_solver_with(
        kind,
        SolverConfig {
            parallelism: par,
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
    let post = CoupledPost {
        dofs: &problem.dofs,
        fields: problem.fields,
        mode: model.mode,
        laws: &model.laws,
        solution: x,
    };
    let fail = |e: &dyn std::fmt::Display| RunError::Numerical(format!("post-processing: {e}"));
    let nodal = recover_coupled_nodal(&model.mesh, &post).map_err(|e| fail(&e))?;
    let ints = coupled_integrals(&model.mesh, &post).map_err(|e| fail(&e))?;
    let cs: Vec<f64> = problem
        .dofs
        .field_range(problem.fields.c)
        .map(|d| x[d])
        .collect();
    let peak = |f: fn(&dilata_material::elastic::Voigt) -> f64| {
        nodal.stress.iter().map(f).fold(f64::NEG_INFINITY, f64::max)
    };
    let row = HistoryRow {
        amount: ints.amount,
        c_mean: ints.amount / ints.volume,
        c_min: cs.iter().copied().fold(f64::INFINITY, f64::min),
        c_max: cs.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        peak_hydrostatic: peak(hydrostatic),
        peak_principal: peak(max_principal),
        peak_von_mises: peak(von_mises),
        elastic_energy: ints.elastic_energy,
        chemical_energy: ints.chemical_energy,
        ..HistoryRow::default()
    };
    Ok(Derived {
        stress: nodal.stress,
        flux: nodal.flux,
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

/// The value a stop rule waits for.
pub fn stop_target(rule: &StopRule) -> f64 {
    match rule {
        StopRule::MeanConcentration { value }
        | StopRule::BoundaryConcentration { value, .. }
        | StopRule::PeakHydrostaticStress { value } => *value,
    }
}

/// The quantity a stop rule watches, in words ("mean concentration on 'outer'").
pub fn describe_stop(rule: &StopRule) -> String {
    match rule {
        StopRule::MeanConcentration { .. } => "mean concentration".into(),
        StopRule::BoundaryConcentration { on, .. } => format!("mean concentration on '{on}'"),
        StopRule::PeakHydrostaticStress { .. } => "peak hydrostatic stress".into(),
    }
}

fn stop_quantity(
    rule: &StopRule,
    model: &Model,
    problem: &CoupledProblem<'_>,
    x: &[f64],
    row: &HistoryRow,
) -> Result<f64, RunError> {
    Ok(match rule {
        StopRule::MeanConcentration { .. } => row.c_mean,
        StopRule::PeakHydrostaticStress { .. } => row.peak_hydrostatic,
        StopRule::BoundaryConcentration { on, .. } => boundary_mean(
            &model.mesh,
            &BoundaryField {
                dofs: &problem.dofs,
                field: problem.fields.c,
                component: 0,
                mode: model.mode,
                solution: x,
            },
            model.mesh.boundary(on).expect("checked with the scenario"),
        )
        .map_err(|e| RunError::Numerical(format!("stop rule on '{on}': {e}")))?,
    })
}

/// Add the zone and material of a cell named in a failure message.
fn explain_failure(model: &Model, message: &str) -> String {
    let Some(pos) = message.find("cell ") else {
        return message.to_string();
    };
    let digits: String = message[pos + 5..]
        .chars()
        .take_while(char::is_ascii_digit)
        .collect();
    let Ok(cell) = digits.parse::<usize>() else {
        return message.to_string();
    };
    if cell >= model.mesh.n_cells() {
        return message.to_string();
    }
    let zones: Vec<&str> = model
        .mesh
        .regions
        .iter()
        .filter(|(_, cells)| cells.binary_search(&cell).is_ok())
        .map(|(name, _)| name.as_str())
        .collect();
    let material = &model.material_names[model.laws.law_of_cell()[cell] as usize];
    let centroid = {
        let nodes = model.mesh.cell(cell).1;
        let mut c = [0.0; 3];
        for &n in nodes {
            for d in 0..3 {
                c[d] += model.mesh.points[n][d] / nodes.len() as f64;
            }
        }
        c
    };
    format!(
        "{message} [cell {cell}: material '{material}', zones [{}], centroid ({:e}, {:e}, {:e})]",
        zones.join(", "),
        centroid[0],
        centroid[1],
        centroid[2]
    )
}

fn write_summary(path: &Path, model: &Model, s: &RunSummary) -> Result<(), RunError> {
    let text = |v: &str| Json::Str(v.to_string());
    let count = |n: usize| Json::Int(n as i64);
    let stages = s
        .stages
        .iter()
        .map(|o| {
            Json::Obj(vec![
                ("name".into(), text(&o.name)),
                ("start_s".into(), Json::Num(o.start)),
                ("end_s".into(), Json::Num(o.end)),
                ("ended_by".into(), text(&o.reason)),
            ])
        })
        .collect();
    let r = &s.final_row;
    let entries: Vec<(&str, Json)> = vec![
        ("program", text("dilata")),
        ("version", text(env!("CARGO_PKG_VERSION"))),
        ("title", text(&model.scenario.title)),
        ("scenario", text(&model.file)),
        ("dofs", count(s.n_dofs)),
        ("steps", count(s.steps)),
        ("rejected_attempts", count(s.rejected)),
        ("snapshots", count(s.snapshots)),
        ("wall_s", Json::Num(s.wall_seconds)),
        ("final_time_s", Json::Num(s.final_time)),
        ("final_amount_mol", Json::Num(r.amount)),
        ("final_c_mean", Json::Num(r.c_mean)),
        ("final_c_min", Json::Num(r.c_min)),
        ("final_c_max", Json::Num(r.c_max)),
        ("final_balance_error_mol", Json::Num(r.balance_error)),
        ("max_hydrostatic_stress_pa", Json::Num(s.max_hydrostatic.0)),
        (
            "max_hydrostatic_stress_time_s",
            Json::Num(s.max_hydrostatic.1),
        ),
        ("max_principal_stress_pa", Json::Num(s.max_principal.0)),
        ("max_principal_stress_time_s", Json::Num(s.max_principal.1)),
        ("stages", Json::Arr(stages)),
        (
            "caution",
            text(
                "Simulation results inform design; they do not certify it. Validate against \
                 experiments and applicable codes and standards.",
            ),
        ),
    ];
    let doc = Json::Obj(
        entries
            .into_iter()
            .map(|(k, v)| (k.to_string(), v))
            .collect(),
    );
    write_atomic(path, doc.render().as_bytes())?;
    Ok(())
}

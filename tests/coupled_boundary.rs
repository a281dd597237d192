//! Boundary conditions of the coupled problem: time-dependent boundary data, the exchange
//! (Robin) flux, a prescribed chemical potential (mass equation replaced at its nodes), a
//! time-dependent source, and the discrete mass accounting of `CoupledProblem::mass_rates`.

mod common;

use std::sync::atomic::{AtomicUsize, Ordering as AtomicOrdering};
use std::sync::Arc;

use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, Constraints, FieldSpec, GeometryMode};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::chemical::GAS_CONSTANT;
use dilata_material::coupled::CoupledPointLaw;
use dilata_mesh::generate::{rectangle, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{CoupledFields, LawMap};
use dilata_physics::norms::field_integral;
use dilata_solve::newton::NewtonParams;
use dilata_solve::time::{AdaptiveParams, Integrator, IntegratorParams, Scheme, StepSizing};
use dilata_solve::{
    BoundaryLoad, BulkLaw, CoupledProblem, CoupledSetupError, FieldProblem, MassRates,
};

// Demo-scale insertion-host numbers (order of magnitude only, from memory), as in
// tests/coupled_basics.rs.
const C0: f64 = 1000.0;
const T: f64 = 298.15;
const D: f64 = 7e-15;
/// Body: 2 µm × 1 µm in plane stress (amounts per unit thickness). Plane stress, not plane
/// strain: a uniform swelling under plane strain is stressed out of plane (`σ_zz = −E Ω Δc/3`),
/// so only plane stress (or 3D) leaves a free body stress-free.
const LX: f64 = 2e-6;
const LY: f64 = 1e-6;

fn host() -> common::DiluteHost {
    common::DiluteHost {
        young: 10e9,
        poisson: 0.3,
        omega: 3.5e-6,
        diffusivity: D,
        temperature: T,
        c_ref: C0,
    }
}

fn mesh() -> Mesh {
    rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [LX, LY],
        n_cells: [8, 4],
        kind: CellKind::Quad8,
    })
    .unwrap()
}

/// The dilute law condensed for plane stress.
fn plane_stress_law() -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&host());
    parts.stiffness = parts.stiffness.plane_stress();
    CoupledPointLaw::new(parts).unwrap()
}

/// A free body (rollers on the left and bottom edges) of the dilute host.
fn free_body(mesh: &Mesh) -> CoupledProblem<'_> {
    let (dofs, fields) = common::coupled_dofs(mesh, 2);
    let mut problem = CoupledProblem::new(
        mesh,
        dofs,
        fields,
        GeometryMode::PlaneStress,
        LawMap::uniform(plane_stress_law(), mesh.n_cells()),
        Parallelism::Sequential,
    );
    for (b, comp) in [("left", 0), ("bottom", 1)] {
        problem
            .constraints
            .add_boundary(
                mesh,
                &problem.dofs,
                BoundaryTarget {
                    boundary: b,
                    field: fields.u,
                    component: comp,
                },
                0.0,
            )
            .unwrap();
    }
    problem
}

fn uniform_state(dofs: &DofMap, fields: CoupledFields, c: f64) -> Vec<f64> {
    let mut x = vec![0.0; dofs.n_dofs()];
    for node in dofs.field_nodes(fields.c) {
        x[dofs.node_dof(fields.c, node, 0).unwrap()] = c;
    }
    x
}

fn newton_params() -> NewtonParams {
    NewtonParams {
        abs_tol: 0.0,
        rel_tol: 1e-13,
        step_tol: 1e-13,
        max_iterations: 20,
        max_backtracks: 6,
    }
}

fn integrator(sizing: StepSizing, x0: Vec<f64>) -> Integrator {
    let params = IntegratorParams {
        scheme: Scheme::BackwardEuler,
        sizing,
        newton: newton_params(),
        cut_factor: 0.5,
        dt_min: 1e-6,
        energy: None,
    };
    Integrator::new(params, 0.0, x0)
}

fn lu(problem: &CoupledProblem<'_>) -> FaerLu {
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    solver
}

/// ∫ c dV with the kernels' quadrature.
fn amount(problem: &CoupledProblem<'_>, x: &[f64]) -> f64 {
    field_integral(
        problem.mesh,
        &problem.dofs,
        problem.fields.c,
        problem.mode,
        x,
    )
    .unwrap()
}

/// Values of field `c` or `mu` at the nodes of a boundary.
fn boundary_values(problem: &CoupledProblem<'_>, x: &[f64], name: &str, mu: bool) -> Vec<f64> {
    let f = if mu {
        problem.fields.mu
    } else {
        problem.fields.c
    };
    problem
        .mesh
        .boundary_nodes(name)
        .unwrap()
        .into_iter()
        .filter_map(|n| problem.dofs.node_dof(f, n, 0).ok())
        .map(|d| x[d])
        .collect()
}

/// The identity `amount_rate = supplied + reaction + imbalance` and a small imbalance.
fn check_rates(r: &MassRates, what: &str) {
    let scale = r
        .amount_rate
        .abs()
        .max(r.supplied.abs())
        .max(r.reaction.abs());
    let gap = r.amount_rate - (r.supplied + r.reaction + r.imbalance);
    assert!(
        gap.abs() <= 1e-12 * scale,
        "{what}: identity gap {gap:e} ({r:?})"
    );
    assert!(
        r.imbalance.abs() <= 1e-10 * scale,
        "{what}: imbalance {:e} of scale {scale:e}",
        r.imbalance
    );
}

/// A prescribed concentration ramped linearly in time holds exactly at every step end (the
/// update runs for every attempted step, rejected ones included), and the amount change equals
/// Δt times the reaction inflow (backward Euler, partition of unity; common practice, no source).
#[test]
fn ramped_concentration_holds_at_every_step_end() {
    let mesh = mesh();
    let mut problem = free_body(&mesh);
    let fields = problem.fields;
    let group = problem
        .constraints
        .add_boundary(
            &mesh,
            &problem.dofs,
            BoundaryTarget {
                boundary: "right",
                field: fields.c,
                component: 0,
            },
            C0,
        )
        .unwrap();
    let value = |t: f64| C0 * (1.0 + 0.5 * t / 100.0);
    let calls = Arc::new(AtomicUsize::new(0));
    let counter = calls.clone();
    problem.boundary_update = Some(Box::new(move |t, _loads, cons: &mut Constraints| {
        counter.fetch_add(1, AtomicOrdering::Relaxed);
        cons.set_group_value(group, value(t));
    }));
    let x0 = uniform_state(&problem.dofs, fields, C0);
    let mut integ = integrator(
        StepSizing::Adaptive(AdaptiveParams {
            dt_initial: 5.0,
            dt_min: 1e-3,
            dt_max: 40.0,
            rtol: 1e-3,
            atol: 1.0,
            safety: 0.9,
            max_growth: 3.0,
            predictive: true,
            newton_error_test: None,
        }),
        x0,
    );
    let mut solver = lu(&problem);
    while integ.state.t < 200.0 {
        let before = amount(&problem, &integ.state.x);
        let report = integ.step(&mut problem, &mut solver, 200.0).unwrap();
        let x = integ.state.x.clone();
        for c in boundary_values(&problem, &x, "right", false) {
            assert!(
                (c - value(report.t)).abs() <= 1e-14 * C0,
                "t = {}: boundary c {c} vs {}",
                report.t,
                value(report.t)
            );
        }
        let rates = problem.mass_rates(&x).unwrap();
        check_rates(&rates, "ramp");
        let change = amount(&problem, &x) - before;
        let err = (change - report.dt * rates.reaction).abs() / change.abs();
        assert!(
            err < 1e-10,
            "t = {}: change {change:e}, rel {err:e}",
            report.t
        );
        assert_eq!(rates.supplied, 0.0);
    }
    assert_eq!(
        calls.load(AtomicOrdering::Relaxed),
        integ.state.n_accepted + integ.state.n_rejected,
        "one update per attempted step"
    );
}

/// A time-dependent inward flux `j(t)` (set by the update) changes the amount by
/// `Δt · j(t_{n+1}) · length` per backward-Euler step (common practice, no source).
#[test]
fn time_dependent_flux_is_taken_at_step_end() {
    let mesh = mesh();
    let mut problem = free_body(&mesh);
    let fields = problem.fields;
    let j = |t: f64| 1e-5 * (1.0 + t / 50.0);
    problem.loads.push((
        mesh.boundary("right").unwrap().to_vec(),
        BoundaryLoad::Flux(Box::new(|_| 0.0)),
    ));
    problem.boundary_update = Some(Box::new(move |t, loads, _cons| {
        let value = j(t);
        loads[0].1 = BoundaryLoad::Flux(Box::new(move |_| value));
    }));
    let mut integ = integrator(
        StepSizing::Fixed { dt: 10.0 },
        uniform_state(&problem.dofs, fields, C0),
    );
    let mut solver = lu(&problem);
    for _ in 0..5 {
        let before = amount(&problem, &integ.state.x);
        let report = integ.step(&mut problem, &mut solver, 1e3).unwrap();
        let x = integ.state.x.clone();
        let inflow = report.dt * j(report.t) * LY;
        let change = amount(&problem, &x) - before;
        let err = (change - inflow).abs() / inflow;
        assert!(
            err < 1e-10,
            "t = {}: change {change:e} vs {inflow:e}",
            report.t
        );
        let rates = problem.mass_rates(&x).unwrap();
        check_rates(&rates, "flux");
        assert!((rates.supplied - j(report.t) * LY).abs() <= 1e-12 * rates.supplied);
        assert_eq!(rates.reaction, 0.0);
    }
}

/// 1D steady diffusion with a Robin end: `−k u'' = 0` on [0, L], `u(0) = u0`,
/// `k u'(L) = rate (outside − u(L))`, so `u = u0 + g x` with
/// `g = rate (outside − u0) / (k + rate L)` (elementary; common practice, no source). Linear
/// elements reproduce it to round-off.
#[test]
fn robin_condition_in_field_problem() {
    let (len, k, rate, outside, u0) = (1.0, 2.0, 3.0, 5.0, 1.0);
    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [len, 0.1],
        n_cells: [10, 1],
        kind: CellKind::Quad4,
    })
    .unwrap();
    let dofs = DofMap::build(&mesh, &[FieldSpec::scalar("u", 1)]).unwrap();
    let u = dofs.field("u").unwrap();
    let mut problem = FieldProblem::new(
        &mesh,
        dofs,
        u,
        GeometryMode::PlaneStrain,
        BulkLaw::Diffusion {
            conductivity: k,
            source: None,
        },
        Parallelism::Sequential,
    );
    problem
        .constraints
        .add_boundary(
            &mesh,
            &problem.dofs,
            BoundaryTarget {
                boundary: "left",
                field: u,
                component: 0,
            },
            u0,
        )
        .unwrap();
    problem.loads.push((
        mesh.boundary("right").unwrap().to_vec(),
        BoundaryLoad::Exchange { rate, outside },
    ));
    let x = common::solve(&mut problem);
    let g = rate * (outside - u0) / (k + rate * len);
    for n in 0..mesh.n_points() {
        let exact = u0 + g * mesh.points[n][0];
        let got = x[problem.dofs.node_dof(u, n, 0).unwrap()];
        assert!(
            (got - exact).abs() <= 1e-12 * outside,
            "node {n}: {got} vs {exact}"
        );
    }
}

/// Inward exchange flux on the right edge of the linear c field, integrated exactly:
/// `∫ rate (outside − c) dA`.
fn exchange_inflow(problem: &CoupledProblem<'_>, x: &[f64], rate: f64, outside: f64) -> f64 {
    let mut total = 0.0;
    for &f in problem.mesh.boundary("right").unwrap() {
        let (_, nodes) = problem.mesh.facet_nodes(f);
        let (a, b) = (nodes[0], nodes[1]);
        let (pa, pb) = (problem.mesh.points[a], problem.mesh.points[b]);
        let length = ((pa[0] - pb[0]).powi(2) + (pa[1] - pb[1]).powi(2)).sqrt();
        let c = |n: usize| x[problem.dofs.node_dof(problem.fields.c, n, 0).unwrap()];
        total += rate * (outside - 0.5 * (c(a) + c(b))) * length;
    }
    total
}

/// A body closed but for an exchange face reaches `c = outside`, and every backward-Euler step
/// changes the amount by `Δt ∫ rate (outside − c_{n+1}) dA` (common practice, no source).
#[test]
fn exchange_face_fills_body_to_outside_value() {
    let mesh = mesh();
    let mut problem = free_body(&mesh);
    let fields = problem.fields;
    // Biot number rate·LX/D ≈ 2.9; slowest decay time a few hundred seconds.
    let (rate, outside) = (1e-8, 2.0 * C0);
    problem.loads.push((
        mesh.boundary("right").unwrap().to_vec(),
        BoundaryLoad::Exchange { rate, outside },
    ));
    let x0 = uniform_state(&problem.dofs, fields, C0);
    let m0 = amount(&problem, &x0);
    let mut integ = integrator(StepSizing::Fixed { dt: 400.0 }, x0);
    let mut solver = lu(&problem);
    let mut inflow_sum = 0.0;
    for step in 0..50 {
        let before = amount(&problem, &integ.state.x);
        let report = integ.step(&mut problem, &mut solver, 1e6).unwrap();
        let x = integ.state.x.clone();
        let inflow = report.dt * exchange_inflow(&problem, &x, rate, outside);
        inflow_sum += inflow;
        let change = amount(&problem, &x) - before;
        if step < 10 {
            let err = (change - inflow).abs() / inflow;
            assert!(err < 1e-10, "step {step}: change {change:e} vs {inflow:e}");
            let rates = problem.mass_rates(&x).unwrap();
            check_rates(&rates, "exchange");
            assert!((rates.supplied * report.dt - inflow).abs() <= 1e-12 * inflow);
        }
    }
    let x = &integ.state.x;
    let total_change = amount(&problem, x) - m0;
    assert!(
        (total_change - inflow_sum).abs() <= 1e-10 * total_change,
        "amount change {total_change:e} vs integrated exchange {inflow_sum:e}"
    );
    for node in problem.dofs.field_nodes(fields.c) {
        let c = x[problem.dofs.node_dof(fields.c, node, 0).unwrap()];
        assert!((c - outside).abs() <= 1e-9 * outside, "node {node}: c {c}");
    }
}

/// Relax a free body at `C0` towards a boundary condition on the right edge (prescribed `c` or
/// prescribed `μ`); returns the final state and checks the balance against the reaction.
fn relax_to_boundary_value(mesh: &Mesh, prescribe_mu: bool) -> (CoupledProblem<'_>, Vec<f64>) {
    let mut problem = free_body(mesh);
    let fields = problem.fields;
    let (field, value) = if prescribe_mu {
        (fields.mu, GAS_CONSTANT * T * 2f64.ln())
    } else {
        (fields.c, 2.0 * C0)
    };
    problem
        .constraints
        .add_boundary(
            mesh,
            &problem.dofs,
            BoundaryTarget {
                boundary: "right",
                field,
                component: 0,
            },
            value,
        )
        .unwrap();
    problem.check_setup().unwrap();
    let x0 = uniform_state(&problem.dofs, fields, C0);
    let m0 = amount(&problem, &x0);
    let mut integ = integrator(StepSizing::Fixed { dt: 400.0 }, x0);
    let mut solver = lu(&problem);
    let mut reaction_sum = 0.0;
    for step in 0..40 {
        let before = amount(&problem, &integ.state.x);
        let report = integ.step(&mut problem, &mut solver, 1e6).unwrap();
        let x = integ.state.x.clone();
        let rates = problem.mass_rates(&x).unwrap();
        reaction_sum += report.dt * rates.reaction;
        let change = amount(&problem, &x) - before;
        if step < 10 {
            check_rates(&rates, "relaxation");
            let err = (change - report.dt * rates.reaction).abs() / change;
            assert!(err < 1e-10, "step {step}: change {change:e}, rel {err:e}");
        }
    }
    let x = integ.state.x.clone();
    let total_change = amount(&problem, &x) - m0;
    assert!(
        (total_change - reaction_sum).abs() <= 1e-10 * total_change,
        "amount change {total_change:e} vs integrated reaction {reaction_sum:e}"
    );
    (problem, x)
}

/// With `μ = RT ln 2` prescribed on one edge (dilute law, `c_ref = C0`, `μ0 = 0`), the free
/// body fills to `c = 2 C0` and is stress-free, so `μ = RT ln 2` everywhere (ideal dilute
/// potential `RT ln(c/c_ref) − Ω σ_h` with `σ_h = 0`; common practice, no source).
#[test]
fn prescribed_potential_fills_free_body() {
    let mesh = mesh();
    let (problem, x) = relax_to_boundary_value(&mesh, true);
    let fields = problem.fields;
    let mu_target = GAS_CONSTANT * T * 2f64.ln();
    for node in problem.dofs.field_nodes(fields.c) {
        let c = x[problem.dofs.node_dof(fields.c, node, 0).unwrap()];
        assert!((c - 2.0 * C0).abs() <= 1e-9 * C0, "node {node}: c {c}");
        let mu = x[problem.dofs.node_dof(fields.mu, node, 0).unwrap()];
        assert!(
            (mu - mu_target).abs() <= 1e-8 * mu_target,
            "node {node}: μ {mu}"
        );
    }
}

/// Regression: a prescribed concentration on the same edge still fills the body.
#[test]
fn prescribed_concentration_fills_free_body() {
    let mesh = mesh();
    let (problem, x) = relax_to_boundary_value(&mesh, false);
    let fields = problem.fields;
    for node in problem.dofs.field_nodes(fields.c) {
        let c = x[problem.dofs.node_dof(fields.c, node, 0).unwrap()];
        assert!((c - 2.0 * C0).abs() <= 1e-9 * C0, "node {node}: c {c}");
    }
}

/// A prescribed potential with `c` and `μ` of different orders is reported before solving.
#[test]
fn prescribed_potential_needs_equal_orders() {
    let mesh = mesh();
    let dofs = DofMap::build(
        &mesh,
        &[
            FieldSpec::vector("u", 2, 2),
            FieldSpec::scalar("c", 2),
            FieldSpec::scalar("mu", 1),
        ],
    )
    .unwrap();
    let fields = CoupledFields {
        u: dofs.field("u").unwrap(),
        c: dofs.field("c").unwrap(),
        mu: dofs.field("mu").unwrap(),
    };
    let mut problem = CoupledProblem::new(
        &mesh,
        dofs,
        fields,
        GeometryMode::PlaneStrain,
        LawMap::uniform(common::dilute_law(&host()), mesh.n_cells()),
        Parallelism::Sequential,
    );
    assert_eq!(problem.check_setup(), Ok(()));
    problem
        .constraints
        .add_boundary(
            &mesh,
            &problem.dofs,
            BoundaryTarget {
                boundary: "right",
                field: fields.mu,
                component: 0,
            },
            0.0,
        )
        .unwrap();
    match problem.check_setup() {
        Err(CoupledSetupError::PotentialNeedsEqualOrders {
            n_nodes,
            c_order,
            mu_order,
            ..
        }) => assert_eq!((n_nodes, c_order, mu_order), (5, 2, 1)),
        other => panic!("expected an order error, got {other:?}"),
    }
}

/// A source `s(x, t) = S0 (t / 100 s)(1 + x / LX)` in a closed body changes the amount per
/// backward-Euler step by `Δt ∫ s(x, t_{n+1}) dV = Δt S0 (t_{n+1}/100) · 1.5 · LX LY` (linear
/// in x, mean of `1 + x/LX` over the body 1.5; common practice, no source).
#[test]
fn time_dependent_source_balance() {
    let mesh = mesh();
    let mut problem = free_body(&mesh);
    let fields = problem.fields;
    let s0 = 1.0; // mol/(m³ s)
    problem.source = Some(Box::new(move |p, t| s0 * (t / 100.0) * (1.0 + p[0] / LX)));
    let mut integ = integrator(
        StepSizing::Fixed { dt: 10.0 },
        uniform_state(&problem.dofs, fields, C0),
    );
    let mut solver = lu(&problem);
    for _ in 0..4 {
        let before = amount(&problem, &integ.state.x);
        let report = integ.step(&mut problem, &mut solver, 1e3).unwrap();
        let x = integ.state.x.clone();
        let expected = report.dt * s0 * (report.t / 100.0) * 1.5 * LX * LY;
        let change = amount(&problem, &x) - before;
        let err = (change - expected).abs() / expected;
        assert!(
            err < 1e-10,
            "t = {}: change {change:e} vs {expected:e}",
            report.t
        );
        let rates = problem.mass_rates(&x).unwrap();
        check_rates(&rates, "source");
        assert!((rates.supplied * report.dt - expected).abs() <= 1e-12 * expected);
        assert_eq!(rates.reaction, 0.0);
    }
}

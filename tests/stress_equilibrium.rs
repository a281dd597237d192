//! A closed body under non-uniform stress relaxes to chemical equilibrium: the chemical
//! potential becomes uniform and, in the dilute limit, c ∝ exp(Ω σ_h / RT) (Sofronis &
//! McMeeking, J. Mech. Phys. Solids 37 (1989) 317; Larché & Cahn, Acta Metall. 33 (1985) 331 —
//! both from memory).
//!
//! Plane-strain beam L × H (quad8), clamped at the left end, loaded at the right end by a
//! linearly varying normal traction t_x = s0 (y − H/2)/(H/2) (a pure bending moment), no flux
//! condition anywhere (closed body). Starting from uniform c = c_ref the solute moves from the
//! compressed to the stretched side until μ = RT ln(c/c_ref) − Ω σ_h is uniform.

mod common;

use std::time::Instant;

use dilata_fem::dofs::DofMap;
use dilata_fem::quadrature::rule_for;
use dilata_fem::values::space_kind;
use dilata_fem::{BoundaryTarget, CellValues, GeometryMode};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::coupled::{CoupledPointLaw, PointInput};
use dilata_material::elastic::hydrostatic;
use dilata_mesh::generate::{rectangle, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{CoupledFields, LawMap};
use dilata_physics::elasticity::strain_at;
use dilata_physics::norms::field_integral;
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::newton::NewtonParams;
use dilata_solve::time::{AdaptiveParams, Integrator, IntegratorParams, Scheme, StepSizing};
use dilata_solve::BoundaryLoad;

// Demo-scale material numbers of an insertion host (order of magnitude only, from memory).
const E: f64 = 10e9;
const NU: f64 = 0.3;
const OMEGA: f64 = 3.5e-6;
const D: f64 = 7e-15;
const T: f64 = 298.15;
const C0: f64 = 1000.0;
/// Gas constant in J/(mol K) (CODATA value, from memory).
const R_GAS: f64 = 8.314462618;
const LENGTH: f64 = 4e-6;
const HEIGHT: f64 = 1e-6;
/// Peak of the end traction in Pa.
const S0: f64 = 200e6;
/// The pointwise checks use the quadrature points at least one beam height from the clamp,
/// see the test.
const X_MIN: f64 = HEIGHT;

fn law() -> CoupledPointLaw {
    common::dilute_law(&common::DiluteHost {
        young: E,
        poisson: NU,
        omega: OMEGA,
        diffusivity: D,
        temperature: T,
        c_ref: C0,
    })
}

struct Outcome {
    n_steps: usize,
    n_rejected: usize,
    t_end: f64,
    /// Worst |∫c dV − ∫c₀ dV| / ∫c₀ dV over all steps.
    amount_drift: f64,
    /// (max − min) of the nodal μ at the end, divided by RT.
    mu_spread: f64,
    /// The same at t_end / 2 (to show the decay).
    mu_spread_half: f64,
    /// Over all quadrature points: spread (max − min) of RT ln(c_q/c_ref) − Ω σ_h,q and
    /// Ω (max σ_h,q − min σ_h,q), in J/mol (reported only, see the test).
    residual_spread_all: f64,
    omega_dsigma_all: f64,
    /// The same over the quadrature points with x ≥ X_MIN (checked).
    residual_spread: f64,
    omega_dsigma: f64,
    /// max c_q / min c_q over quadrature points with x ≥ X_MIN.
    c_ratio: f64,
    /// max / min of the nodal c.
    c_ratio_nodes: f64,
}

/// Over the quadrature points with x ≥ x_min (the coupled kernel's rule, degree 2·order of the
/// cell): (min, max) of RT ln(c/c_ref) − Ω σ_h, of σ_h and of c.
fn point_values(
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    law: &CoupledPointLaw,
    x: &[f64],
    x_min: f64,
) -> [(f64, f64); 3] {
    let mut out = [(f64::INFINITY, f64::NEG_INFINITY); 3];
    let mut upd = |k: usize, v: f64| {
        out[k].0 = out[k].0.min(v);
        out[k].1 = out[k].1.max(v);
    };
    for cell in 0..mesh.n_cells() {
        let (kind, nodes) = mesh.cell(cell);
        let coords: Vec<[f64; 3]> = nodes.iter().map(|&i| mesh.points[i]).collect();
        let mut cv = CellValues::new(
            kind,
            GeometryMode::PlaneStrain,
            rule_for(kind.shape(), 2 * kind.order()),
            &[space_kind(kind, 2).unwrap(), space_kind(kind, 1).unwrap()],
        );
        cv.reinit(cell, &coords).unwrap();
        let cd = dofs.cell_dofs(cell);
        let u: Vec<f64> = cd[dofs.local_range(fields.u, kind)]
            .iter()
            .map(|&d| x[d])
            .collect();
        let c: Vec<f64> = cd[dofs.local_range(fields.c, kind)]
            .iter()
            .map(|&d| x[d])
            .collect();
        for q in 0..cv.n_points() {
            let (su, sc) = (&cv.spaces[0], &cv.spaces[1]);
            let strain = strain_at(
                GeometryMode::PlaneStrain,
                su.grads(q),
                su.values(q),
                cv.points[q][0],
                &u,
                2,
            );
            let cq: f64 = sc.values(q).iter().zip(&c).map(|(v, c)| v * c).sum();
            let p = law
                .evaluate(&PointInput {
                    strain,
                    c: cq,
                    grad_mu: Default::default(),
                    grad_c: Default::default(),
                })
                .unwrap();
            let sh = hydrostatic(&p.stress);
            if cv.points[q][0] < x_min {
                continue;
            }
            upd(0, R_GAS * T * (cq / C0).ln() - OMEGA * sh);
            upd(1, sh);
            upd(2, cq);
        }
    }
    out
}

fn run(nx: usize, ny: usize) -> Outcome {
    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [LENGTH, HEIGHT],
        n_cells: [nx, ny],
        kind: CellKind::Quad8,
    })
    .unwrap();
    let (dofs, fields) = common::coupled_dofs(&mesh, 2);
    let mut problem = CoupledProblem::new(
        &mesh,
        dofs,
        fields,
        GeometryMode::PlaneStrain,
        LawMap::uniform(law(), mesh.n_cells()),
        Parallelism::Sequential,
    );
    for component in 0..2 {
        problem
            .constraints
            .add_boundary(
                &mesh,
                &problem.dofs,
                BoundaryTarget {
                    boundary: "left",
                    field: fields.u,
                    component,
                },
                0.0,
            )
            .unwrap();
    }
    problem.loads.push((
        mesh.boundary("right").unwrap().to_vec(),
        BoundaryLoad::Traction(Box::new(|x| {
            [S0 * (x[1] - 0.5 * HEIGHT) / (0.5 * HEIGHT), 0.0, 0.0]
        })),
    ));
    // No flux load: the body is closed.

    let mut x0 = vec![0.0; problem.dofs.n_dofs()];
    for node in problem.dofs.field_nodes(fields.c) {
        x0[problem.dofs.node_dof(fields.c, node, 0).unwrap()] = C0;
    }
    let mu_dofs: Vec<usize> = problem
        .dofs
        .field_nodes(fields.mu)
        .into_iter()
        .map(|n| problem.dofs.node_dof(fields.mu, n, 0).unwrap())
        .collect();
    let c_dofs: Vec<usize> = problem
        .dofs
        .field_nodes(fields.c)
        .into_iter()
        .map(|n| problem.dofs.node_dof(fields.c, n, 0).unwrap())
        .collect();
    let spread = |x: &[f64], ds: &[usize]| {
        let (lo, hi) = ds
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &d| {
                (lo.min(x[d]), hi.max(x[d]))
            });
        (lo, hi)
    };
    let amount = |x: &[f64], p: &CoupledProblem<'_>| {
        field_integral(&mesh, &p.dofs, fields.c, GeometryMode::PlaneStrain, x).unwrap()
    };
    let m0 = amount(&x0, &problem);

    // Slowest diffusion time is of order L²/(π² D) ≈ 230 s; run to 50 L²/D ≈ 1.1e5 s.
    let t_end = 50.0 * LENGTH * LENGTH / D;
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let params = IntegratorParams {
        scheme: Scheme::Bdf2,
        sizing: StepSizing::Adaptive(AdaptiveParams {
            dt_initial: 1e-3,
            dt_min: 1e-9,
            dt_max: t_end / 10.0,
            rtol: 1e-5,
            atol: 1e-3,
            safety: 0.9,
            max_growth: 2.0,
            predictive: true,
            newton_error_test: None,
        }),
        newton: NewtonParams {
            abs_tol: 0.0,
            rel_tol: 1e-12,
            step_tol: 1e-13,
            max_iterations: 15,
            max_backtracks: 4,
        },
        cut_factor: 0.5,
        dt_min: 1e-9,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, x0);
    let mut amount_drift: f64 = 0.0;
    let mut mu_spread_half = f64::NAN;
    while integ.state.t < t_end * (1.0 - 1e-12) {
        let before_half = integ.state.t < 0.5 * t_end;
        integ.step(&mut problem, &mut solver, t_end).unwrap();
        let x = &integ.state.x;
        amount_drift = amount_drift.max((amount(x, &problem) - m0).abs() / m0);
        if before_half && integ.state.t >= 0.5 * t_end {
            let (lo, hi) = spread(x, &mu_dofs);
            mu_spread_half = (hi - lo) / (R_GAS * T);
        }
    }
    let x = &integ.state.x;
    let (mu_lo, mu_hi) = spread(x, &mu_dofs);
    let (c_lo, c_hi) = spread(x, &c_dofs);
    let [res_all, sh_all, _] = point_values(&mesh, &problem.dofs, fields, &law(), x, 0.0);
    let [res, sh, cq] = point_values(&mesh, &problem.dofs, fields, &law(), x, X_MIN);
    Outcome {
        n_steps: integ.state.n_accepted,
        n_rejected: integ.state.n_rejected,
        t_end: integ.state.t,
        amount_drift,
        mu_spread: (mu_hi - mu_lo) / (R_GAS * T),
        mu_spread_half,
        residual_spread_all: res_all.1 - res_all.0,
        omega_dsigma_all: OMEGA * (sh_all.1 - sh_all.0),
        residual_spread: res.1 - res.0,
        omega_dsigma: OMEGA * (sh.1 - sh.0),
        c_ratio: cq.1 / cq.0,
        c_ratio_nodes: c_hi / c_lo,
    }
}

/// Closed bent beam: amount conserved, μ uniform, c ∝ exp(Ω σ_h / RT) at equilibrium
/// (Sofronis & McMeeking 1989; Larché & Cahn 1985; from memory).
#[test]
fn closed_bent_beam_relaxes_to_stress_equilibrium() {
    let rt = R_GAS * T;
    let mut outcomes = Vec::new();
    for (nx, ny) in [(16, 4), (32, 8)] {
        let start = Instant::now();
        let o = run(nx, ny);
        eprintln!(
            "stress equilibrium {nx}x{ny}: {} steps ({} rejected) to t = {:.3e} s in {:.1} s; \
             amount drift {:.2e}; μ spread/RT {:.2e} (at t_end/2 {:.2e}); all points: residual \
             spread {:.4e} J/mol vs Ω Δσ_h {:.4e} J/mol (ratio {:.3e}); x ≥ H: residual spread \
             {:.4e} J/mol vs Ω Δσ_h {:.4e} J/mol (ratio {:.3e}), c_max/c_min − 1 = {:.6} vs \
             exp(Ω Δσ_h/RT) − 1 = {:.6}; nodal c_max/c_min − 1 = {:.6}",
            o.n_steps,
            o.n_rejected,
            o.t_end,
            start.elapsed().as_secs_f64(),
            o.amount_drift,
            o.mu_spread,
            o.mu_spread_half,
            o.residual_spread_all,
            o.omega_dsigma_all,
            o.residual_spread_all / o.omega_dsigma_all,
            o.residual_spread,
            o.omega_dsigma,
            o.residual_spread / o.omega_dsigma,
            o.c_ratio - 1.0,
            (o.omega_dsigma / rt).exp_m1(),
            o.c_ratio_nodes - 1.0,
        );
        outcomes.push(o);
    }
    let (coarse, fine) = (&outcomes[0], &outcomes[1]);
    for o in [coarse, fine] {
        // 1. Closed body, no source: the amount is conserved (common practice, no source;
        //    the test functions of the mass equation sum to one).
        assert!(o.amount_drift < 1e-10, "amount drift {:e}", o.amount_drift);
        // 2. μ uniform at the end to 1e-8 RT (measured 1.1e-18 at t_end, and already
        //    ≤ 6e-14 at t_end/2: the run is long enough, the level is set by round-off).
        assert!(o.mu_spread < 1e-8, "μ spread {:e} RT", o.mu_spread);
        // The stress must actually vary: otherwise checks 3 and 4 are empty.
        assert!(
            o.omega_dsigma / rt > 0.1,
            "Ω Δσ_h / RT = {}",
            o.omega_dsigma / rt
        );
        // 3. RT ln c − Ω σ_h uniform up to discretisation error (c bilinear, σ_h from
        //    quadratic u, and μ is uniform only in the weak sense: its equation is projected on
        //    the bilinear space). Required: spread below 1 % of the spread of Ω σ_h.
        //    Only points with x ≥ H (one beam height from the clamp) are checked. Measured over
        //    all points the ratio is 7.3e-2 on both meshes, i.e. it does not shrink: σ_h is
        //    singular at the two corners where the clamped edge meets the free faces
        //    (Williams-type corner singularity, from memory), so Ω Δσ_h itself grows under
        //    refinement (817 → 927 J/mol) and the pointwise error there does not converge. The
        //    disturbance is local (Saint-Venant, from memory): measured ratio with x ≥ H/2 was
        //    1.1e-2 → 1.0e-3, with x ≥ H 1.8e-3 → 3.2e-4, with x ≥ 2H 1.3e-3 → 3.1e-4.
        assert!(
            o.residual_spread < 0.01 * o.omega_dsigma,
            "residual spread {:e} vs Ω Δσ_h {:e} (x ≥ H)",
            o.residual_spread,
            o.omega_dsigma
        );
        // 4. c varies as exp(Ω Δσ_h / RT) (same sources): ln(c_max/c_min) over the points
        //    with x ≥ H against Ω Δσ_h / RT over the same points, within the same 1 %.
        let lhs = o.c_ratio.ln();
        let rhs = o.omega_dsigma / rt;
        assert!(
            (lhs - rhs).abs() < 0.01 * rhs,
            "ln(c_max/c_min) {lhs} vs Ω Δσ_h/RT {rhs}"
        );
    }
    // Deliberate errors tried by hand: the sign of Ω σ_h flipped in the residual gave a spread
    // of 1.14e3 J/mol (2 Ω Δσ_h) and failed check 3; a run to 0.05 H²/D instead of 50 L²/D
    // left a μ spread of 0.13 RT and failed check 2.
    // The residual away from the clamp is a discretisation error: it shrinks when the mesh is
    // refined once (measured factor 0.18; at least 2 required).
    assert!(
        fine.residual_spread < 0.5 * coarse.residual_spread,
        "residual spread {:e} (coarse) -> {:e} (fine)",
        coarse.residual_spread,
        fine.residual_spread
    );
}

//! Diffusion into a sphere, modelled axisymmetrically on an r–z quarter disc (x = r, y = z),
//! driven through its surface: the setup shared by the transient sphere tests, and the series
//! solutions they are compared with.

use dilata_fem::dofs::DofMap;
use dilata_fem::quadrature::rule_for;
use dilata_fem::values::space_kind;
use dilata_fem::{BoundaryTarget, FacetValues, GeometryMode};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::coupled::CoupledPointLaw;
use dilata_mesh::generate::{quarter_disc, DiscParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{CoupledFields, LawMap};
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::newton::NewtonParams;
use dilata_solve::time::{Integrator, IntegratorParams, Scheme, StepReport, StepSizing};
use dilata_solve::BoundaryLoad;

/// What drives the diffusion at the outer surface.
#[derive(Clone, Copy, Debug)]
pub enum Surface {
    /// Constant inward flux in mol/(m² s).
    Flux(f64),
    /// Concentration held at this value from t = 0 on (the surface nodes carry it already in
    /// the initial state).
    Concentration(f64),
}

/// A transient sphere run.
pub struct SphereRun {
    pub radius: f64,
    /// Cells per side of the quarter disc's core (see `quarter_disc`).
    pub n_cells: usize,
    pub kind: CellKind,
    pub law: CoupledPointLaw,
    /// Initial uniform concentration; also the law's c_ref, so μ = 0 and u = 0 initially.
    pub c0: f64,
    pub surface: Surface,
    /// Fixed BDF2 step and number of steps.
    pub dt: f64,
    pub n_steps: usize,
}

/// The state after an accepted step, handed to the caller's observer.
pub struct SphereStep<'a> {
    pub mesh: &'a Mesh,
    pub dofs: &'a DofMap,
    pub fields: CoupledFields,
    /// Number of accepted steps so far (1 after the first).
    pub step: usize,
    pub t: f64,
    pub x: &'a [f64],
    pub report: &'a StepReport,
}

/// Area of the `outer` boundary (a half sphere) with the facet quadrature of the flux kernel
/// (degree 2·order + 2), so that J × area is the discrete inflow.
pub fn outer_area(mesh: &Mesh) -> f64 {
    let mut area = 0.0;
    for &f in mesh.boundary("outer").unwrap() {
        let (fk, nodes) = mesh.facet_nodes(f);
        let mut fv = FacetValues::new(
            fk,
            GeometryMode::Axisymmetric,
            rule_for(fk.shape(), 2 * fk.order() + 2),
            &[space_kind(fk, 1).unwrap_or(fk.linear())],
        );
        let coords: Vec<[f64; 3]> = nodes.iter().map(|&n| mesh.points[n]).collect();
        fv.reinit(&coords);
        area += fv.jxw.iter().sum::<f64>();
    }
    area
}

/// The mesh of a run.
pub fn sphere_mesh(run: &SphereRun) -> Mesh {
    quarter_disc(&DiscParams {
        radius: run.radius,
        n_cells: run.n_cells,
        kind: run.kind,
    })
    .unwrap()
}

/// A mesh node at `(r, z)`, to 1e-9 R.
pub fn node_at(mesh: &Mesh, r: f64, z: f64, radius: f64) -> usize {
    (0..mesh.n_points())
        .find(|&i| {
            (mesh.points[i][0] - r).abs() < 1e-9 * radius
                && (mesh.points[i][1] - z).abs() < 1e-9 * radius
        })
        .unwrap_or_else(|| panic!("no mesh node at ({r:e}, {z:e})"))
}

/// Run `run` on `mesh` (from [`sphere_mesh`]) with u_r = 0 on the axis and u_z = 0 on the
/// equatorial plane, calling `observe` after every accepted step. Panics if a step is rejected
/// (fixed steps on a smooth problem should all be accepted).
pub fn run_sphere(mesh: &Mesh, run: &SphereRun, mut observe: impl FnMut(&SphereStep<'_>)) {
    let (dofs, fields) = super::coupled_dofs(mesh, 2);
    let mut problem = CoupledProblem::new(
        mesh,
        dofs,
        fields,
        GeometryMode::Axisymmetric,
        LawMap::uniform(run.law, mesh.n_cells()),
        Parallelism::Sequential,
    );
    for (boundary, component) in [("axis", 0), ("symmetry_y", 1)] {
        problem
            .constraints
            .add_boundary(
                mesh,
                &problem.dofs,
                BoundaryTarget {
                    boundary,
                    field: fields.u,
                    component,
                },
                0.0,
            )
            .unwrap();
    }
    match run.surface {
        Surface::Flux(j) => problem.loads.push((
            mesh.boundary("outer").unwrap().to_vec(),
            BoundaryLoad::Flux(Box::new(move |_| j)),
        )),
        Surface::Concentration(cs) => {
            problem
                .constraints
                .add_boundary(
                    mesh,
                    &problem.dofs,
                    BoundaryTarget {
                        boundary: "outer",
                        field: fields.c,
                        component: 0,
                    },
                    cs,
                )
                .unwrap();
        }
    }
    // Uniform c = c₀ = c_ref, so μ = 0 and u = 0 are the consistent initial state; a held
    // surface concentration is written into the initial state as well.
    let mut x0 = vec![0.0; problem.dofs.n_dofs()];
    for node in problem.dofs.field_nodes(fields.c) {
        x0[problem.dofs.node_dof(fields.c, node, 0).unwrap()] = run.c0;
    }
    problem.constraints.impose_into(&mut x0);

    let t_end = run.dt * run.n_steps as f64;
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let params = IntegratorParams {
        scheme: Scheme::Bdf2,
        sizing: StepSizing::Fixed { dt: run.dt },
        newton: NewtonParams {
            abs_tol: 0.0,
            rel_tol: 1e-12,
            step_tol: 1e-12,
            max_iterations: 15,
            max_backtracks: 4,
        },
        cut_factor: 0.5,
        dt_min: run.dt * 1e-3,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, x0);
    while integ.state.t < t_end * (1.0 - 1e-12) {
        let report = integ.step(&mut problem, &mut solver, t_end).unwrap();
        assert!(
            report.rejections.is_empty(),
            "t = {:e}: rejected attempts {:?}",
            report.t,
            report.rejections
        );
        observe(&SphereStep {
            mesh,
            dofs: &problem.dofs,
            fields,
            step: integ.state.n_accepted,
            t: integ.state.t,
            x: &integ.state.x,
            report: &report,
        });
    }
    assert_eq!(integ.state.n_accepted, run.n_steps);
}

/// The n-th positive root of tan λ = λ (n ≥ 1), which lies in (nπ, (n + ½)π): bisection on
/// f(λ) = sin λ − λ cos λ, which has the same roots there and no poles (f(nπ) and f((n+½)π)
/// have opposite signs).
pub fn tan_root(n: usize) -> f64 {
    let f = |l: f64| l.sin() - l * l.cos();
    let pi = std::f64::consts::PI;
    let (mut lo, mut hi) = (n as f64 * pi, (n as f64 + 0.5) * pi);
    let f_lo = f(lo);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if (f(mid) > 0.0) == (f_lo > 0.0) {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 4.0 * f64::EPSILON * hi {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// Constant inward flux: θ = (c − c₀)/(J R/D) at x = r/R and τ = D t/R² (J. Crank, The
/// Mathematics of Diffusion, 2nd ed., 1975, section 6.3, from memory), summed over `roots` of
/// tan λ = λ:
/// θ = 3τ + x²/2 − 3/10 − (2/x) Σ sin(λₙ x) exp(−λₙ² τ) / (λₙ² sin λₙ);
/// at x → 0 the factor (2/x) sin(λx) tends to 2λ.
pub fn flux_theta(x: f64, tau: f64, roots: &[f64]) -> f64 {
    let sum: f64 = roots
        .iter()
        .map(|&l| {
            let spatial = if x < 1e-12 {
                2.0 * l
            } else {
                2.0 * (l * x).sin() / x
            };
            spatial * (-l * l * tau).exp() / (l * l * l.sin())
        })
        .sum();
    3.0 * tau + 0.5 * x * x - 0.3 - sum
}

/// Constant surface concentration: θ = (c − c₀)/(c_s − c₀) at x = r/R and τ = D t/R²
/// (J. Crank, The Mathematics of Diffusion, 2nd ed., 1975, section 6.3, from memory), with
/// `n_terms` terms: θ = 1 + (2/(πx)) Σ (−1)ⁿ/n sin(nπx) exp(−n²π²τ); at x → 0 the factor
/// sin(nπx)/(πx n) tends to 1.
pub fn surface_theta(x: f64, tau: f64, n_terms: usize) -> f64 {
    let pi = std::f64::consts::PI;
    let sum: f64 = (1..=n_terms)
        .map(|n| {
            let nf = n as f64;
            let sign = if n % 2 == 0 { 1.0 } else { -1.0 };
            let spatial = if x < 1e-12 {
                2.0
            } else {
                2.0 * (nf * pi * x).sin() / (pi * x * nf)
            };
            sign * spatial * (-nf * nf * pi * pi * tau).exp()
        })
        .sum();
    1.0 + sum
}

/// Constant surface concentration: fraction of the final uptake taken up by τ (same source):
/// 1 − (6/π²) Σ exp(−n²π²τ)/n².
pub fn surface_uptake(tau: f64, n_terms: usize) -> f64 {
    let pi = std::f64::consts::PI;
    let sum: f64 = (1..=n_terms)
        .map(|n| {
            let nf = n as f64;
            (-nf * nf * pi * pi * tau).exp() / (nf * nf)
        })
        .sum();
    1.0 - 6.0 / (pi * pi) * sum
}

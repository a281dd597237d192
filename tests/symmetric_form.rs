//! The symmetric form of the coupled Jacobian (docs/theory.md, "Symmetric form of the coupled
//! Jacobian"): the row transform of `CoupledProblem` makes `T J` symmetric when the mobility
//! does not depend on the concentration, with and without a prescribed potential; with a
//! concentration-dependent mobility it is not (the check can fail); a time step solved
//! with the symmetric-form solver equals the one solved with the sparse LU; and the
//! matrix-only assembly Newton uses after a line search (`jacobian_into`) is the full one's.

mod common;

use dilata_fem::{BoundaryTarget, GeometryMode};
use dilata_linalg::{
    CsrMatrix, DirectParams, FaerLu, LinearSolver, Ordering, Parallelism, RowTransform,
    SymmetricFormParams, SymmetricFormSolver,
};
use dilata_material::coupled::CoupledPointLaw;
use dilata_material::mobility::MobilityLaw;
use dilata_mesh::generate::{rectangle, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{CoupledFields, LawMap};
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::newton::{DiscreteSystem, NewtonParams};
use dilata_solve::time::{Integrator, IntegratorParams, Scheme, StepSizing};
use dilata_solve::{BoundaryLoad, TransientSystem};
use nalgebra::Matrix3;

// Demo-scale numbers of an insertion host (order of magnitude only, from memory).
const C0: f64 = 1000.0;
const T: f64 = 298.15;

fn host() -> common::DiluteHost {
    common::DiluteHost {
        young: 10e9,
        poisson: 0.3,
        omega: 3.5e-6,
        diffusivity: 7e-15,
        temperature: T,
        c_ref: C0,
    }
}

/// The dilute law, with the mobility replaced by a constant one when `constant_mobility`.
fn law(constant_mobility: bool) -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&host());
    if constant_mobility {
        let m = 7e-15 * C0 / (8.314462618 * T);
        parts.mobility = MobilityLaw::constant(Matrix3::identity() * m).unwrap();
    }
    CoupledPointLaw::new(parts).unwrap()
}

fn mesh() -> Mesh {
    rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [2e-6, 1e-6],
        n_cells: [4, 2],
        kind: CellKind::Quad8,
    })
    .unwrap()
}

/// Quadratic displacement, quadratic `c` and `μ` (the transform needs equal orders of c, μ).
fn problem(mesh: &Mesh, constant_mobility: bool, prescribed_mu: bool) -> CoupledProblem<'_> {
    use dilata_fem::FieldSpec;
    let dofs = dilata_fem::dofs::DofMap::build(
        mesh,
        &[
            FieldSpec::vector("u", 2, 2),
            FieldSpec::scalar("c", 2),
            FieldSpec::scalar("mu", 2),
        ],
    )
    .unwrap();
    let fields = CoupledFields {
        u: dofs.field("u").unwrap(),
        c: dofs.field("c").unwrap(),
        mu: dofs.field("mu").unwrap(),
    };
    let mut p = CoupledProblem::new(
        mesh,
        dofs,
        fields,
        GeometryMode::PlaneStrain,
        LawMap::uniform(law(constant_mobility), mesh.n_cells()),
        Parallelism::Sequential,
    );
    let mut fix = |boundary: &str, field, component, value| {
        p.constraints
            .add_boundary(
                mesh,
                &p.dofs,
                BoundaryTarget {
                    boundary,
                    field,
                    component,
                },
                value,
            )
            .unwrap();
    };
    fix("left", fields.u, 0, 0.0);
    fix("bottom", fields.u, 1, 0.0);
    if prescribed_mu {
        fix("right", fields.mu, 0, 500.0);
    }
    p.check_setup().unwrap();
    let j = 1e-5;
    p.loads.push((
        mesh.boundary("top").unwrap().to_vec(),
        BoundaryLoad::Flux(Box::new(move |_| j)),
    ));
    p
}

/// A state with gradients in every field.
fn state(mesh: &Mesh, p: &CoupledProblem<'_>) -> Vec<f64> {
    let f = p.fields;
    let mut x = vec![0.0; p.dofs.n_dofs()];
    for node in 0..mesh.n_points() {
        let q = mesh.points[node];
        let (sx, sy) = (q[0] / 1e-6, q[1] / 1e-6);
        for comp in 0..2 {
            x[p.dofs.node_dof(f.u, node, comp).unwrap()] =
                1e-9 * ((comp as f64 + 1.0) * sx - 0.7 * sy);
        }
        x[p.dofs.node_dof(f.c, node, 0).unwrap()] = C0 * (1.0 + 0.2 * (sx - 0.5 * sy));
        x[p.dofs.node_dof(f.mu, node, 0).unwrap()] = 1e3 * (0.3 + sx * sy);
    }
    p.impose_constraints(&mut x);
    x
}

/// `T J` as a dense matrix.
fn transformed(j: &CsrMatrix, t: &RowTransform) -> Vec<Vec<f64>> {
    let n = j.n_rows();
    let mut a = vec![vec![0.0; n]; n];
    for i in 0..n {
        let p = j.pattern.as_ref();
        for k in p.row_ptr[i]..p.row_ptr[i + 1] {
            a[t.target[i]][p.col_idx[k]] = t.scale[i] * j.values[k];
        }
    }
    a
}

/// Worst `|a_ij − a_ji|` relative to the larger of the two diagonal scales `sqrt|a_ii a_jj|`.
fn asymmetry(a: &[Vec<f64>]) -> f64 {
    let n = a.len();
    let mut worst = 0.0f64;
    for i in 0..n {
        for j in 0..i {
            let scale = (a[i][i] * a[j][j]).abs().sqrt();
            worst = worst.max((a[i][j] - a[j][i]).abs() / scale);
        }
    }
    worst
}

fn assembled_transform(constant_mobility: bool, prescribed_mu: bool) -> (Vec<Vec<f64>>, Vec<i8>) {
    let mesh = mesh();
    let mut p = problem(&mesh, constant_mobility, prescribed_mu);
    let n = p.dofs.n_dofs();
    let history: Vec<f64> = (0..n).map(|i| -((i % 5) as f64) * 40.0).collect();
    p.begin_step(0.5, 1.0 / 0.5, &history);
    let x = state(&mesh, &p);
    let mut j = CsrMatrix::zeros(p.pattern());
    let mut r = vec![0.0; n];
    p.assemble_into(&x, &mut j, &mut r).unwrap();
    let t = p.row_transform().expect("equal orders of c and mu");
    (transformed(&j, &t), t.signs)
}

/// `jacobian_into` (the matrix alone, for a point whose residual the line search already
/// has) gives the matrix of `assemble_into` bit for bit and leaves the residual it is handed
/// alone, with and without the row swap of a prescribed potential and with facet fluxes.
#[test]
fn matrix_only_assembly_is_the_full_assembly_s_matrix() {
    let mesh = mesh();
    for prescribed_mu in [false, true] {
        let mut p = problem(&mesh, false, prescribed_mu);
        let n = p.dofs.n_dofs();
        let history: Vec<f64> = (0..n).map(|i| -((i % 5) as f64) * 40.0).collect();
        p.begin_step(0.5, 1.0 / 0.5, &history);
        let x = state(&mesh, &p);
        let mut full = CsrMatrix::zeros(p.pattern());
        let mut r = vec![0.0; n];
        p.assemble_into(&x, &mut full, &mut r).unwrap();
        // A matrix holding other values first: the matrix-only pass must overwrite them.
        let mut alone = CsrMatrix::zeros(p.pattern());
        alone.values.iter_mut().for_each(|v| *v = 7.0);
        let marker: Vec<f64> = (0..n).map(|i| i as f64 + 0.5).collect();
        let mut kept = marker.clone();
        p.jacobian_into(&x, &mut alone, &mut kept).unwrap();
        assert!(
            full.values.iter().any(|&v| v != 0.0) && r.iter().any(|&v| v != 0.0),
            "prescribed μ {prescribed_mu}: nothing assembled"
        );
        let differ = full
            .values
            .iter()
            .zip(&alone.values)
            .filter(|(a, b)| a.to_bits() != b.to_bits())
            .count();
        assert_eq!(
            differ, 0,
            "prescribed μ {prescribed_mu}: {differ} entries differ"
        );
        assert_eq!(
            kept, marker,
            "prescribed μ {prescribed_mu}: residual changed"
        );
    }
}

/// With a constant mobility the transformed Jacobian is symmetric to round-off, and its
/// diagonal has the signs the transform announces (+ for u and c, − for free μ): the algebra
/// of docs/theory.md (common practice for mixed problems, no source).
#[test]
fn transform_symmetrises_the_jacobian_with_constant_mobility() {
    for prescribed_mu in [false, true] {
        let (a, signs) = assembled_transform(true, prescribed_mu);
        let asym = asymmetry(&a);
        eprintln!("constant mobility, prescribed μ {prescribed_mu}: asymmetry {asym:e}");
        assert!(
            asym < 1e-12,
            "prescribed μ {prescribed_mu}: asymmetry {asym:e}"
        );
        for (i, &s) in signs.iter().enumerate() {
            assert!(
                a[i][i] * f64::from(s) > 0.0,
                "prescribed μ {prescribed_mu}: diagonal {i} is {:e}, expected sign {s}",
                a[i][i]
            );
        }
    }
}

/// With the dilute mobility `D c / RT` the derivative of the flux with respect to c makes the
/// transformed Jacobian nonsymmetric: the check above is not vacuous.
#[test]
fn concentration_dependent_mobility_breaks_the_symmetry() {
    let (a, _) = assembled_transform(false, false);
    let asym = asymmetry(&a);
    eprintln!("dilute mobility: asymmetry {asym:e}");
    assert!(asym > 1e-6, "asymmetry only {asym:e}");
}

/// Steps of the dilute problem to t = 0.2 with `solver`: the state, fields and DOF map.
fn run_steps(
    mesh: &Mesh,
    solver: &mut dyn LinearSolver,
) -> (Vec<f64>, CoupledFields, dilata_fem::dofs::DofMap) {
    let mut p = problem(mesh, false, true);
    solver.analyze(p.assembler.pattern()).unwrap();
    let mut x0 = vec![0.0; p.dofs.n_dofs()];
    for node in p.dofs.field_nodes(p.fields.c) {
        x0[p.dofs.node_dof(p.fields.c, node, 0).unwrap()] = C0;
    }
    let params = IntegratorParams {
        scheme: Scheme::Bdf2,
        sizing: StepSizing::Fixed { dt: 0.05 },
        newton: NewtonParams {
            abs_tol: 0.0,
            rel_tol: 1e-10,
            step_tol: 1e-10,
            max_iterations: 15,
            max_backtracks: 4,
        },
        cut_factor: 0.5,
        dt_min: 1e-6,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, x0);
    integ.step(&mut p, solver, 0.2).unwrap();
    (integ.state.x, p.fields, p.dofs.clone())
}

/// Every field of `x` within `1e-7` of its magnitude in the LU solution `x_lu` (the GMRES
/// tolerance, 1e-8 relative, amplified by the conditioning).
fn assert_matches_lu(
    x_lu: &[f64],
    x: &[f64],
    fields: CoupledFields,
    dofs: &dilata_fem::dofs::DofMap,
) {
    for f in [fields.u, fields.c, fields.mu] {
        let range = dofs.field_range(f);
        let scale = x_lu[range.clone()]
            .iter()
            .fold(0.0f64, |m, v| m.max(v.abs()));
        let diff = range.map(|i| (x_lu[i] - x[i]).abs()).fold(0.0f64, f64::max);
        eprintln!("field {f:?}: |x_lu - x| {diff:e}, magnitude {scale:e}");
        assert!(
            diff <= 1e-7 * scale,
            "field {f:?}: difference {diff:e} against magnitude {scale:e}"
        );
    }
}

/// Four backward-Euler steps with the symmetric-form solver and with the sparse LU give the
/// same states, to the GMRES tolerance (1e-8 relative) amplified by the conditioning.
#[test]
fn time_steps_match_the_lu_solution() {
    let mesh = mesh();
    let mut lu = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    let (x_lu, fields, dofs) = run_steps(&mesh, &mut lu);
    let mut sym = SymmetricFormSolver::new(SymmetricFormParams::default());
    let (x_sym, _, _) = run_steps(&mesh, &mut sym);
    let stats = sym.stats();
    assert!(stats.symmetric_factorizations > 0, "{stats:?}");
    assert_eq!(stats.lu_solves, 0, "{stats:?}");
    eprintln!("symmetric-form solver: {stats:?}");
    assert_matches_lu(&x_lu, &x_sym, fields, &dofs);
}

/// With `follow_requested_reduction` the solver stops GMRES at the reduction Newton asks for
/// (Eisenstat and Walker, SIAM J. Sci. Comput. 17 (1996) 16, choice 2, from memory): the
/// states still match the LU's to the same bound as the exact solves (Newton's test is on the
/// true residual), with fewer GMRES iterations. Off (the default), Newton's requests are
/// ignored: otherwise the exact run would need as few iterations.
#[test]
fn inexact_newton_keeps_the_answer_with_fewer_gmres_iterations() {
    let mesh = mesh();
    let mut lu = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    let (x_lu, fields, dofs) = run_steps(&mesh, &mut lu);
    let mut exact = SymmetricFormSolver::new(SymmetricFormParams::default());
    let (x_exact, _, _) = run_steps(&mesh, &mut exact);
    let mut inexact = SymmetricFormSolver::new(SymmetricFormParams {
        follow_requested_reduction: true,
        ..SymmetricFormParams::default()
    });
    let (x_inexact, _, _) = run_steps(&mesh, &mut inexact);
    let (se, si) = (exact.stats(), inexact.stats());
    eprintln!("exact solves: {se:?}\ninexact solves: {si:?}");
    assert!(
        si.gmres_iterations < se.gmres_iterations,
        "inexact {} against exact {} GMRES iterations",
        si.gmres_iterations,
        se.gmres_iterations
    );
    assert_matches_lu(&x_lu, &x_exact, fields, &dofs);
    assert_matches_lu(&x_lu, &x_inexact, fields, &dofs);
}

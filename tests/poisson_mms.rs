//! Poisson equation with a manufactured solution on every element family in 2D and 3D:
//! observed convergence rates of the L2 error (p + 1) and of the H1 semi-norm error (p).
//! Method: Salari & Knupp, "Code verification by the method of manufactured solutions",
//! SAND2000-1444 (2000); expected rates for smooth solutions with degree-p Lagrange elements
//! (e.g. Ciarlet, The Finite Element Method for Elliptic Problems, 1978; from memory).
//!
//! Exact fields (source terms derived by hand, checked below by finite differences):
//!   2D: u = sin(1.2x) cos(0.9y) + x y²,            −Δu = 2.25 sin(1.2x) cos(0.9y) − 2x
//!   3D: u = sin(1.2x) cos(0.9y) exp(0.7z) + x y z², −Δu = 1.76 sin(1.2x) cos(0.9y) exp(0.7z) − 2xy

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::{FieldSpec, GeometryMode};
use dilata_linalg::Parallelism;
use dilata_mesh::generate::{cuboid, rectangle, BoxParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::norms::{scalar_error_norms, ErrorNorms, ExactScalar};
use dilata_solve::{BulkLaw, FieldProblem};

struct Exact2d;
impl ExactScalar for Exact2d {
    fn value(&self, p: [f64; 3]) -> f64 {
        (1.2 * p[0]).sin() * (0.9 * p[1]).cos() + p[0] * p[1] * p[1]
    }
    fn gradient(&self, p: [f64; 3]) -> [f64; 3] {
        let (x, y) = (p[0], p[1]);
        [
            1.2 * (1.2 * x).cos() * (0.9 * y).cos() + y * y,
            -0.9 * (1.2 * x).sin() * (0.9 * y).sin() + 2.0 * x * y,
            0.0,
        ]
    }
}
fn source_2d(p: [f64; 3]) -> f64 {
    2.25 * (1.2 * p[0]).sin() * (0.9 * p[1]).cos() - 2.0 * p[0]
}

struct Exact3d;
impl ExactScalar for Exact3d {
    fn value(&self, p: [f64; 3]) -> f64 {
        let [x, y, z] = p;
        (1.2 * x).sin() * (0.9 * y).cos() * (0.7 * z).exp() + x * y * z * z
    }
    fn gradient(&self, p: [f64; 3]) -> [f64; 3] {
        let [x, y, z] = p;
        let e = (0.7 * z).exp();
        [
            1.2 * (1.2 * x).cos() * (0.9 * y).cos() * e + y * z * z,
            -0.9 * (1.2 * x).sin() * (0.9 * y).sin() * e + x * z * z,
            0.7 * (1.2 * x).sin() * (0.9 * y).cos() * e + 2.0 * x * y * z,
        ]
    }
}
fn source_3d(p: [f64; 3]) -> f64 {
    let [x, y, z] = p;
    1.76 * (1.2 * x).sin() * (0.9 * y).cos() * (0.7 * z).exp() - 2.0 * x * y
}

/// The hand-derived sources equal −Δu by central differences (guards the manufactured data).
#[test]
fn manufactured_sources_match_finite_difference_laplacian() {
    let h = 1e-4;
    let lap = |f: &dyn Fn([f64; 3]) -> f64, p: [f64; 3], dim: usize| {
        (0..dim)
            .map(|d| {
                let (mut a, mut b) = (p, p);
                a[d] += h;
                b[d] -= h;
                (f(a) - 2.0 * f(p) + f(b)) / (h * h)
            })
            .sum::<f64>()
    };
    for p in [[0.3, 0.7, 0.2], [0.9, 0.1, 0.6]] {
        let l2 = lap(&|q| Exact2d.value(q), p, 2);
        assert!((-l2 - source_2d(p)).abs() < 1e-5, "2D source");
        let l3 = lap(&|q| Exact3d.value(q), p, 3);
        assert!((-l3 - source_3d(p)).abs() < 1e-5, "3D source");
    }
}

fn solve_and_measure(
    mesh: &Mesh,
    exact: &dyn ExactScalar,
    source: fn([f64; 3]) -> f64,
) -> ErrorNorms {
    let kind = mesh.blocks[0].kind;
    let dofs = DofMap::build(mesh, &[FieldSpec::scalar("u", kind.order())]).unwrap();
    let u = dofs.field("u").unwrap();
    let law = BulkLaw::Diffusion {
        conductivity: 1.0,
        source: Some(Box::new(source)),
    };
    let mut problem = FieldProblem::new(
        mesh,
        dofs,
        u,
        GeometryMode::PlaneStrain,
        law,
        Parallelism::Sequential,
    );
    if mesh.dim == 3 {
        problem.mode = GeometryMode::ThreeD;
    }
    for n in common::all_boundary_nodes(mesh) {
        let d = problem.dofs.node_dof(u, n, 0).unwrap();
        problem
            .constraints
            .add_group("exact", &[d], exact.value(mesh.points[n]));
    }
    let x = common::solve(&mut problem);
    scalar_error_norms(mesh, &problem.dofs, u, problem.mode, &x, exact).unwrap()
}

fn rates(kind: CellKind, sizes: &[usize]) -> Vec<(usize, ErrorNorms)> {
    sizes
        .iter()
        .map(|&n| {
            let norms = if kind.dim() == 2 {
                let mut mesh = rectangle(&RectangleParams {
                    origin: [0.0, 0.0],
                    lengths: [1.0, 1.0],
                    n_cells: [n, n],
                    kind,
                })
                .unwrap();
                // A smooth, non-affine distortion keeps the mesh family regular while making
                // the Jacobian vary inside cells.
                for p in &mut mesh.points {
                    let (x, y) = (p[0], p[1]);
                    p[0] = x + 0.05
                        * (std::f64::consts::PI * x).sin()
                        * (std::f64::consts::PI * y).sin();
                    p[1] = y + 0.04
                        * (std::f64::consts::PI * x).sin()
                        * (2.0 * std::f64::consts::PI * y).sin();
                }
                solve_and_measure(&mesh, &Exact2d, source_2d)
            } else {
                let mesh = cuboid(&BoxParams {
                    origin: [0.0; 3],
                    lengths: [1.0; 3],
                    n_cells: [n, n, n],
                    kind,
                })
                .unwrap();
                solve_and_measure(&mesh, &Exact3d, source_3d)
            };
            (n, norms)
        })
        .collect()
}

fn check_rates(kind: CellKind, sizes: &[usize]) {
    let p = kind.order() as f64;
    let r = rates(kind, sizes);
    let mut report = String::new();
    for w in r.windows(2) {
        let ((n0, e0), (n1, e1)) = (w[0], w[1]);
        let ratio = (n1 as f64 / n0 as f64).ln();
        let rl2 = (e0.l2 / e1.l2).ln() / ratio;
        let rh1 = (e0.h1_semi / e1.h1_semi).ln() / ratio;
        report.push_str(&format!(
            "  n {n0}->{n1}: L2 {:.3e}->{:.3e} rate {rl2:.3}; H1 {:.3e}->{:.3e} rate {rh1:.3}\n",
            e0.l2, e1.l2, e0.h1_semi, e1.h1_semi
        ));
    }
    eprintln!("{kind}:\n{report}");
    // Rates of the finest pair within 0.1 of the theory (acceptance criterion).
    let ((n0, e0), (n1, e1)) = (r[r.len() - 2], r[r.len() - 1]);
    let ratio = (n1 as f64 / n0 as f64).ln();
    let rl2 = (e0.l2 / e1.l2).ln() / ratio;
    let rh1 = (e0.h1_semi / e1.h1_semi).ln() / ratio;
    assert!(
        (rl2 - (p + 1.0)).abs() <= 0.1,
        "{kind}: L2 rate {rl2:.3}, expected {}\n{report}",
        p + 1.0
    );
    assert!(
        (rh1 - p).abs() <= 0.1,
        "{kind}: H1 rate {rh1:.3}, expected {p}\n{report}"
    );
}

#[test]
fn rates_2d_linear() {
    check_rates(CellKind::Tri3, &[8, 16, 32, 64]);
    check_rates(CellKind::Quad4, &[8, 16, 32, 64]);
}

#[test]
fn rates_2d_quadratic() {
    check_rates(CellKind::Tri6, &[4, 8, 16, 32]);
    check_rates(CellKind::Quad8, &[4, 8, 16, 32]);
    check_rates(CellKind::Quad9, &[4, 8, 16, 32]);
}

#[test]
fn rates_3d_linear() {
    check_rates(CellKind::Tet4, &[4, 8, 16, 32]);
    check_rates(CellKind::Hex8, &[4, 8, 16, 32]);
}

#[test]
fn rates_3d_quadratic() {
    check_rates(CellKind::Tet10, &[2, 4, 8, 16]);
    check_rates(CellKind::Hex20, &[2, 4, 8, 16]);
    check_rates(CellKind::Hex27, &[2, 4, 8, 16]);
}

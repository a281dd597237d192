//! Verification of the shape functions of every cell kind: partition of unity, Kronecker property,
//! finite-difference gradients, reference volumes and polynomial completeness.
//!
//! The properties checked are the standard defining properties of Lagrange (and serendipity)
//! elements (e.g. Zienkiewicz, Taylor & Zhu, "The Finite Element Method: Its Basis and
//! Fundamentals", 6th ed., 2005, chapters 3 and 6; from memory). Reference measures: 2 (line),
//! 4 (square [-1,1]^2), 8 (cube [-1,1]^3), 1/2 (unit triangle), 1/6 (unit tetrahedron) —
//! elementary geometry.

use dilata_fem::quadrature::rule_for;
use dilata_fem::shape::{eval_into, ShapeTable};
use dilata_mesh::{CellKind, Shape};

fn kinds() -> impl Iterator<Item = CellKind> {
    CellKind::ALL.into_iter().filter(|&k| k != CellKind::Point1)
}

fn measure(shape: Shape) -> f64 {
    match shape {
        Shape::Point => 1.0,
        Shape::Line => 2.0,
        Shape::Quadrilateral => 4.0,
        Shape::Hexahedron => 8.0,
        Shape::Triangle => 0.5,
        Shape::Tetrahedron => 1.0 / 6.0,
    }
}

/// Deterministic pseudo-random numbers in [0, 1) (a 64-bit linear congruential generator,
/// constants of Knuth's MMIX; common practice).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Points in the interior of the reference cell of `kind` (plus its reference nodes).
fn sample_points(kind: CellKind, n: usize) -> Vec<[f64; 3]> {
    let dim = kind.dim();
    let mut rng = Lcg(0x5eed + kind as u64);
    let mut pts = kind.reference_nodes();
    while pts.len() < n + kind.n_nodes() {
        let mut p = [0.0; 3];
        match kind.shape() {
            Shape::Triangle | Shape::Tetrahedron => {
                for x in p.iter_mut().take(dim) {
                    *x = rng.next();
                }
                if p.iter().sum::<f64>() >= 1.0 {
                    continue;
                }
            }
            _ => {
                for x in p.iter_mut().take(dim) {
                    *x = 2.0 * rng.next() - 1.0;
                }
            }
        }
        pts.push(p);
    }
    pts
}

fn eval(kind: CellKind, xi: [f64; 3]) -> (Vec<f64>, Vec<[f64; 3]>) {
    let mut v = vec![0.0; kind.n_nodes()];
    let mut g = vec![[0.0; 3]; kind.n_nodes()];
    eval_into(kind, xi, &mut v, &mut g);
    (v, g)
}

#[test]
fn partition_of_unity() {
    for kind in kinds() {
        for xi in sample_points(kind, 60) {
            let (v, g) = eval(kind, xi);
            let s: f64 = v.iter().sum();
            assert!((s - 1.0).abs() < 1e-13, "{kind} at {xi:?}: sum N = {s}");
            for d in 0..3 {
                let sd: f64 = g.iter().map(|gi| gi[d]).sum();
                assert!(sd.abs() < 1e-12, "{kind} at {xi:?}: sum dN/dxi_{d} = {sd}");
            }
        }
    }
}

#[test]
fn kronecker_property_at_reference_nodes() {
    for kind in kinds() {
        let nodes = kind.reference_nodes();
        assert_eq!(nodes.len(), kind.n_nodes());
        for (j, &xj) in nodes.iter().enumerate() {
            let (v, _) = eval(kind, xj);
            for (i, &vi) in v.iter().enumerate() {
                let expected = if i == j { 1.0 } else { 0.0 };
                assert!(
                    (vi - expected).abs() <= 1e-14,
                    "{kind}: N_{i}(x_{j}) = {vi}"
                );
            }
        }
    }
}

#[test]
fn gradients_match_central_differences() {
    let h = 1e-6;
    for kind in kinds() {
        let dim = kind.dim();
        for xi in sample_points(kind, 40) {
            let (_, g) = eval(kind, xi);
            for d in 0..3 {
                if d >= dim {
                    assert!(
                        g.iter().all(|gi| gi[d] == 0.0),
                        "{kind}: nonzero gradient component {d}"
                    );
                    continue;
                }
                let (mut xp, mut xm) = (xi, xi);
                xp[d] += h;
                xm[d] -= h;
                let (vp, _) = eval(kind, xp);
                let (vm, _) = eval(kind, xm);
                for i in 0..kind.n_nodes() {
                    let fd = (vp[i] - vm[i]) / (2.0 * h);
                    assert!(
                        (fd - g[i][d]).abs() <= 1e-7 * g[i][d].abs().max(1.0),
                        "{kind} node {i} d{d} at {xi:?}: analytic {}, finite difference {fd}",
                        g[i][d]
                    );
                }
            }
        }
    }
}

/// Determinant of the leading `dim` x `dim` block of `m`.
fn det_block(dim: usize, m: &[[f64; 3]; 3]) -> f64 {
    match dim {
        1 => m[0][0],
        2 => m[0][0] * m[1][1] - m[0][1] * m[1][0],
        _ => {
            m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
                - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
                + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
        }
    }
}

/// Jacobian determinant of the map defined by node coordinates `x` at a point with shape
/// gradients `g`: J = sum_i x_i (outer) dN_i/dxi.
fn det_jacobian(dim: usize, x: &[[f64; 3]], g: &[[f64; 3]]) -> f64 {
    let mut j = [[0.0; 3]; 3];
    for (xi, gi) in x.iter().zip(g) {
        for a in 0..dim {
            for b in 0..dim {
                j[a][b] += xi[a] * gi[b];
            }
        }
    }
    det_block(dim, &j)
}

fn integrate_det(kind: CellKind, x: &[[f64; 3]], degree: usize) -> f64 {
    let rule = rule_for(kind.shape(), degree);
    let table = ShapeTable::new(kind, &rule.points);
    (0..rule.n_points())
        .map(|q| rule.weights[q] * det_jacobian(kind.dim(), x, table.grads_at(q)))
        .sum()
}

#[test]
fn reference_volume_from_weights_and_from_jacobian() {
    for kind in kinds() {
        let m = measure(kind.shape());
        let rule = rule_for(kind.shape(), 2);
        let w: f64 = rule.weights.iter().sum();
        assert!(
            (w - m).abs() < 1e-14,
            "{kind}: weights sum {w}, expected {m}"
        );
        // Identity geometry: integral of det J = reference measure.
        let nodes = kind.reference_nodes();
        let v = integrate_det(kind, &nodes, 2 * kind.order());
        assert!((v - m).abs() < 1e-13, "{kind}: volume {v}, expected {m}");
        // Affine geometry x = A xi + b: volume = det(A) * reference measure.
        let a = [[2.0, 0.3, -0.1], [0.2, 1.5, 0.4], [0.1, -0.2, 0.7]];
        let dim = kind.dim();
        let mapped: Vec<[f64; 3]> = nodes
            .iter()
            .map(|p| {
                let mut y = [0.5, -1.0, 2.0];
                for r in 0..dim {
                    for c in 0..dim {
                        y[r] += a[r][c] * p[c];
                    }
                }
                y
            })
            .collect();
        let det_a = det_block(dim, &a);
        let v = integrate_det(kind, &mapped, 2 * kind.order());
        assert!(
            (v - det_a * m).abs() < 1e-13 * det_a.abs() * m,
            "{kind}: affine volume {v}, expected {}",
            det_a * m
        );
    }
}

/// Integral of xi_0 over the reference cell: 0 on the symmetric cells, 1/6 on the unit triangle,
/// 1/24 on the unit tetrahedron (exact monomial integrals, see tests/quadrature.rs).
fn first_moment(shape: Shape) -> f64 {
    match shape {
        Shape::Triangle => 1.0 / 6.0,
        Shape::Tetrahedron => 1.0 / 24.0,
        _ => 0.0,
    }
}

/// Curved geometry for quadratic kinds: x_0 = xi_0 + c xi_0^2 is reproduced exactly, so
/// det J = 1 + 2 c xi_0 and the volume is measure + 2 c * (integral of xi_0).
#[test]
fn curved_quadratic_volume() {
    let c = 0.2;
    for kind in kinds().filter(|k| k.order() == 2) {
        let x: Vec<[f64; 3]> = kind
            .reference_nodes()
            .iter()
            .map(|p| [p[0] + c * p[0] * p[0], p[1], p[2]])
            .collect();
        let v = integrate_det(kind, &x, 4);
        let expected = measure(kind.shape()) + 2.0 * c * first_moment(kind.shape());
        assert!(
            (v - expected).abs() < 1e-13,
            "{kind}: curved volume {v}, expected {expected}"
        );
    }
}

#[test]
fn linear_completeness_of_values_and_gradients() {
    for kind in kinds() {
        let nodes = kind.reference_nodes();
        let dim = kind.dim();
        for xi in sample_points(kind, 30) {
            let (v, g) = eval(kind, xi);
            for d in 0..dim {
                let s: f64 = nodes.iter().zip(&v).map(|(x, n)| x[d] * n).sum();
                assert!(
                    (s - xi[d]).abs() < 1e-13,
                    "{kind}: sum x_i N_i = {s}, xi = {}",
                    xi[d]
                );
                for e in 0..dim {
                    let s: f64 = nodes.iter().zip(&g).map(|(x, gi)| x[d] * gi[e]).sum();
                    let expected = if d == e { 1.0 } else { 0.0 };
                    assert!((s - expected).abs() < 1e-12, "{kind}: sum x_i dN_i = {s}");
                }
            }
        }
    }
}

#[test]
fn quadratic_completeness() {
    for kind in kinds().filter(|k| k.order() == 2) {
        let nodes = kind.reference_nodes();
        let dim = kind.dim();
        for xi in sample_points(kind, 30) {
            let (v, g) = eval(kind, xi);
            for d in 0..dim {
                for e in d..dim {
                    let s: f64 = nodes.iter().zip(&v).map(|(x, n)| x[d] * x[e] * n).sum();
                    assert!(
                        (s - xi[d] * xi[e]).abs() < 1e-13,
                        "{kind}: sum x_{d} x_{e} N = {s}"
                    );
                    // Gradient of xi_d xi_e.
                    for k in 0..dim {
                        let s: f64 = nodes
                            .iter()
                            .zip(&g)
                            .map(|(x, gi)| x[d] * x[e] * gi[k])
                            .sum();
                        let exact =
                            (if k == d { xi[e] } else { 0.0 }) + (if k == e { xi[d] } else { 0.0 });
                        assert!(
                            (s - exact).abs() < 1e-12,
                            "{kind}: grad of x_{d} x_{e} along {k}: {s} vs {exact}"
                        );
                    }
                }
            }
        }
    }
}

/// The full tensor kinds also reproduce the mixed products of 1D quadratics (xi^2 eta^2 ...);
/// the serendipity kinds must not (they lack the bubble terms), which tells them apart.
#[test]
fn tensor_kinds_reproduce_biquadratics_serendipity_kinds_do_not() {
    let xi = [0.3, -0.4, 0.55];
    for kind in [
        CellKind::Quad9,
        CellKind::Hex27,
        CellKind::Quad8,
        CellKind::Hex20,
    ] {
        let nodes = kind.reference_nodes();
        let f = |p: &[f64; 3]| p[0] * p[0] * p[1] * p[1];
        let (v, _) = eval(kind, xi);
        let s: f64 = nodes.iter().zip(&v).map(|(x, n)| f(x) * n).sum();
        let reproduces = (s - f(&xi)).abs() < 1e-13;
        let full = matches!(kind, CellKind::Quad9 | CellKind::Hex27);
        assert_eq!(
            reproduces,
            full,
            "{kind}: interpolant of xi^2 eta^2 = {s}, exact {}",
            f(&xi)
        );
    }
}

#[test]
fn shape_table_matches_pointwise_evaluation() {
    for kind in kinds() {
        let rule = rule_for(kind.shape(), 3);
        let table = ShapeTable::new(kind, &rule.points);
        assert_eq!(table.kind, kind);
        assert_eq!(table.n_nodes, kind.n_nodes());
        assert_eq!(table.n_points, rule.n_points());
        assert_eq!(table.values.len(), table.n_points * table.n_nodes);
        for (q, &p) in rule.points.iter().enumerate() {
            let (v, g) = eval(kind, p);
            assert_eq!(table.values_at(q), v.as_slice());
            assert_eq!(table.grads_at(q), g.as_slice());
        }
    }
}

#[test]
#[should_panic(expected = "no shape functions")]
fn point1_panics() {
    let mut v = [0.0; 1];
    let mut g = [[0.0; 3]; 1];
    eval_into(CellKind::Point1, [0.0; 3], &mut v, &mut g);
}

#[test]
#[should_panic(expected = "expected 10")]
fn wrong_buffer_length_panics() {
    let mut v = [0.0; 4];
    let mut g = [[0.0; 3]; 4];
    eval_into(CellKind::Tet10, [0.1; 3], &mut v, &mut g);
}

/// Conformity: on every facet, the cell's shape functions of the facet nodes restrict to the
/// facet kind's own shape functions (in the facet's node order) and all others vanish. This is
/// what makes neighbouring cells sharing a facet continuous, and it ties the node order of the
/// shape functions to `CellKind::facets`.
#[test]
fn facet_traces_are_facet_shape_functions() {
    for kind in kinds().filter(|k| k.dim() >= 2) {
        let cell_nodes = kind.reference_nodes();
        for (f, &(fk, fnodes)) in kind.facets().iter().enumerate() {
            for eta in sample_points(fk, 20) {
                let (nf, _) = eval(fk, eta);
                let mut xi = [0.0; 3];
                for (j, &node) in fnodes.iter().enumerate() {
                    for d in 0..3 {
                        xi[d] += nf[j] * cell_nodes[node][d];
                    }
                }
                let (n, _) = eval(kind, xi);
                for (i, &ni) in n.iter().enumerate() {
                    let expected = fnodes
                        .iter()
                        .position(|&node| node == i)
                        .map_or(0.0, |j| nf[j]);
                    assert!(
                        (ni - expected).abs() < 1e-13,
                        "{kind} facet {f} at {eta:?}: N_{i} = {ni}, expected {expected}"
                    );
                }
            }
        }
    }
}

#[test]
#[should_panic(expected = "no shape functions")]
fn shape_table_of_point1_panics() {
    let _ = ShapeTable::new(CellKind::Point1, &[[0.0; 3]]);
}

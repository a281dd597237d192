//! Quadrature rules on the reference cells.
//!
//! * Lines, quadrilaterals, hexahedra: tensor products of Gauss–Legendre rules.
//! * Triangles, tetrahedra, any degree: collapsed (conical) product rules — Gauss–Legendre in the
//!   first collapsed coordinate and Gauss–Jacobi with weights `(1 - t)^1`, `(1 - t)^2` in the
//!   others, which absorb the Jacobian of the collapse (Stroud, "Approximate Calculation of
//!   Multiple Integrals", Prentice-Hall 1971, section 2.7 conical product formulas; Karniadakis &
//!   Sherwin, "Spectral/hp Element Methods for CFD", 2nd ed., Oxford 2005, section 4.1.1 and
//!   appendix B).
//! * Cheaper fully symmetric rules where they use fewer points and pass the exactness tests in
//!   `tests/quadrature.rs`: triangle centroid (degree 1), 3-point (degree 2), Dunavant 6-point
//!   (degree 4), Radon 7-point (degree 5), Dunavant 12-point (degree 6); tetrahedron centroid
//!   (degree 1), 4-point (degree 2) and 14-point (degree 5).
//!
//! Gauss–Jacobi nodes are found by the Golub–Welsch eigenvalue method (G. H. Golub and
//! J. H. Welsch, "Calculation of Gauss quadrature rules", Math. Comp. 23 (1969) 221–230), polished
//! by Newton's method on the orthonormal three-term recurrence; weights are the Christoffel numbers
//! `w_i = 1 / sum_k p_k(x_i)^2` of the orthonormal polynomials (same reference).
//!
//! Every rule's weights sum to the measure of its reference cell: 2 (line), 4 (quadrilateral),
//! 8 (hexahedron), 1/2 (triangle), 1/6 (tetrahedron); all points lie strictly inside the cell.

use dilata_mesh::Shape;
use nalgebra::{DMatrix, SymmetricEigen};

/// A quadrature rule on a reference cell.
#[derive(Clone, Debug, PartialEq)]
pub struct QuadratureRule {
    /// Points in reference coordinates (unused trailing components are zero).
    pub points: Vec<[f64; 3]>,
    /// Weights, one per point; they sum to the measure of the reference cell.
    pub weights: Vec<f64>,
    /// Total polynomial degree integrated exactly (tensor rules on lines, quadrilaterals and
    /// hexahedra are also exact for every per-coordinate degree up to this).
    pub degree: usize,
    /// Where the rule comes from (publication or construction).
    pub source: &'static str,
}

impl QuadratureRule {
    /// Number of points.
    pub fn n_points(&self) -> usize {
        self.points.len()
    }
}

/// Measure of the reference cell of `shape`: 2 (line `[-1, 1]`), 4 (square), 8 (cube),
/// 1/2 (unit triangle), 1/6 (unit tetrahedron), 1 (point, counting measure).
pub fn reference_measure(shape: Shape) -> f64 {
    match shape {
        Shape::Point => 1.0,
        Shape::Line => 2.0,
        Shape::Quadrilateral => 4.0,
        Shape::Hexahedron => 8.0,
        Shape::Triangle => 0.5,
        Shape::Tetrahedron => 1.0 / 6.0,
    }
}

/// Recurrence coefficients `(a_k, b_k)` of the monic Jacobi polynomials for the weight
/// `(1 - x)^alpha (1 + x)^beta` on `[-1, 1]`: `p_{k+1} = (x - a_k) p_k - b_k p_{k-1}`.
/// Formulas: W. Gautschi, "Orthogonal Polynomials: Computation and Approximation", Oxford 2004,
/// Table 1.1 (from memory; the Gauss–Legendre and collapsed-rule exactness tests confirm them).
fn jacobi_recurrence(k: usize, alpha: f64, beta: f64) -> (f64, f64) {
    let kf = k as f64;
    let s = 2.0 * kf + alpha + beta;
    let a = if k == 0 {
        (beta - alpha) / (alpha + beta + 2.0)
    } else {
        (beta * beta - alpha * alpha) / (s * (s + 2.0))
    };
    let b = if k == 0 {
        0.0
    } else {
        4.0 * kf * (kf + alpha) * (kf + beta) * (kf + alpha + beta)
            / (s * s * (s + 1.0) * (s - 1.0))
    };
    (a, b)
}

fn factorial(n: u32) -> f64 {
    (1..=n).map(f64::from).product()
}

/// Gauss–Jacobi nodes (ascending) and weights on `[-1, 1]` for the weight
/// `(1 - x)^alpha (1 + x)^beta`, `n >= 1` points; exact for polynomials of degree `2n - 1` times
/// the weight.
///
/// # Panics
/// If `n == 0`.
pub fn gauss_jacobi(n: usize, alpha: u32, beta: u32) -> (Vec<f64>, Vec<f64>) {
    assert!(n >= 1, "gauss_jacobi: need at least one point");
    let (af, bf) = (f64::from(alpha), f64::from(beta));
    // Integral of the weight: 2^(a+b+1) a! b! / (a+b+1)!.
    let mu0 = 2f64.powi((alpha + beta + 1) as i32) * factorial(alpha) * factorial(beta)
        / factorial(alpha + beta + 1);
    let coef: Vec<(f64, f64)> = (0..=n).map(|k| jacobi_recurrence(k, af, bf)).collect();

    // Golub–Welsch: eigenvalues of the symmetric tridiagonal Jacobi matrix.
    let mut jm = DMatrix::<f64>::zeros(n, n);
    for k in 0..n {
        jm[(k, k)] = coef[k].0;
        if k + 1 < n {
            let off = coef[k + 1].1.sqrt();
            jm[(k, k + 1)] = off;
            jm[(k + 1, k)] = off;
        }
    }
    let mut nodes: Vec<f64> = SymmetricEigen::new(jm)
        .eigenvalues
        .iter()
        .copied()
        .collect();
    nodes.sort_by(f64::total_cmp);

    // Orthonormal recurrence: returns (p_n(x), p_n'(x), sum_{k<n} p_k(x)^2).
    let eval = |x: f64| -> (f64, f64, f64) {
        let (mut p_prev, mut p) = (0.0, 1.0 / mu0.sqrt());
        let (mut d_prev, mut d) = (0.0, 0.0);
        let mut sum = 0.0;
        for k in 0..n {
            sum += p * p;
            let sb_next = coef[k + 1].1.sqrt();
            let sb = coef[k].1.sqrt();
            let p_next = ((x - coef[k].0) * p - sb * p_prev) / sb_next;
            let d_next = (p + (x - coef[k].0) * d - sb * d_prev) / sb_next;
            (p_prev, p) = (p, p_next);
            (d_prev, d) = (d, d_next);
        }
        (p, d, sum)
    };
    let mut weights = Vec::with_capacity(n);
    for x in nodes.iter_mut() {
        for _ in 0..8 {
            let (p, d, _) = eval(*x);
            let dx = p / d;
            *x -= dx;
            if dx.abs() <= 4.0 * f64::EPSILON * x.abs().max(1e-3) {
                break;
            }
        }
        weights.push(1.0 / eval(*x).2);
    }
    (nodes, weights)
}

/// Gauss–Legendre nodes (ascending) and weights on `[-1, 1]`, `n >= 1` points (exact to degree
/// `2n - 1`). Nodes and weights are exactly symmetric about 0.
///
/// # Panics
/// If `n == 0`.
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let (mut x, mut w) = gauss_jacobi(n, 0, 0);
    for i in 0..n / 2 {
        let j = n - 1 - i;
        let xs = 0.5 * (x[j] - x[i]);
        let ws = 0.5 * (w[i] + w[j]);
        (x[i], x[j]) = (-xs, xs);
        (w[i], w[j]) = (ws, ws);
    }
    if n % 2 == 1 {
        x[n / 2] = 0.0;
    }
    (x, w)
}

/// Number of Gauss points per direction for a tensor rule exact to `degree`.
fn points_for_degree(degree: usize) -> usize {
    degree / 2 + 1
}

const SOURCE_GAUSS: &str =
    "tensor Gauss-Legendre (Golub & Welsch, Math. Comp. 23 (1969) 221-230, with Newton polishing)";
const SOURCE_COLLAPSED: &str = "collapsed Gauss-Legendre x Gauss-Jacobi product (Stroud 1971, \
     Approximate Calculation of Multiple Integrals, sec. 2.7; Karniadakis & Sherwin 2005, sec. 4.1)";
const SOURCE_CENTROID: &str = "centroid rule (one point, degree 1; Stroud 1971, T2:1-1 / T3:1-1)";
const SOURCE_TRI3: &str = "3-point interior rule, degree 2 (Strang & Fix 1973, An Analysis of the \
     Finite Element Method, Table 4.1; Dunavant, IJNME 21 (1985) 1129-1148)";
const SOURCE_DUNAVANT6: &str = "Dunavant 6-point rule, degree 4 (D. A. Dunavant, High degree \
     efficient symmetrical Gaussian quadrature rules for the triangle, IJNME 21 (1985) 1129-1148)";
const SOURCE_RADON7: &str = "Radon 7-point rule, degree 5 (J. Radon, Zur mechanischen Kubatur, \
     Monatsh. Math. 52 (1948) 286-300; Stroud 1971, T2:5-1)";
const SOURCE_DUNAVANT12: &str = "Dunavant 12-point rule, degree 6 (D. A. Dunavant, High degree \
     efficient symmetrical Gaussian quadrature rules for the triangle, IJNME 21 (1985) 1129-1148)";
const SOURCE_TET14: &str = "14-point rule, degree 5 (N. Walkington, Quadrature on simplices of \
     arbitrary dimension, Carnegie Mellon tech. report, 2000; values from memory, proved by the \
     exactness tests)";
const SOURCE_TET4: &str = "4-point rule, degree 2 (Keast, Moderate-degree tetrahedral quadrature \
     formulas, CMAME 55 (1986) 339-348; Stroud 1971, T3:2-1)";

/// A rule on the reference cell of `shape` integrating every polynomial of total degree
/// `<= degree` exactly.
///
/// Lines, quadrilaterals and hexahedra get tensor Gauss–Legendre rules with
/// `ceil((degree + 1) / 2)` points per direction (exact for per-coordinate degree `<= degree`).
/// Triangles and tetrahedra get the cheapest of the symmetric rules listed in the module docs and
/// the collapsed product rule. The point shape gets a single point with weight 1.
///
/// The returned `degree` is the degree the rule is known to integrate exactly; it is at least the
/// requested one.
pub fn rule_for(shape: Shape, degree: usize) -> QuadratureRule {
    match shape {
        Shape::Point => QuadratureRule {
            points: vec![[0.0; 3]],
            weights: vec![1.0],
            degree,
            source: "point evaluation",
        },
        Shape::Line | Shape::Quadrilateral | Shape::Hexahedron => {
            let dim = match shape {
                Shape::Line => 1,
                Shape::Quadrilateral => 2,
                _ => 3,
            };
            tensor_gauss(dim, points_for_degree(degree))
        }
        Shape::Triangle => match degree {
            0 | 1 => centroid::<2>(),
            2 => triangle_three_point(),
            4 => triangle_dunavant6(),
            5 => triangle_radon7(),
            6 => triangle_dunavant12(),
            _ => collapsed_triangle(points_for_degree(degree)),
        },
        Shape::Tetrahedron => match degree {
            0 | 1 => centroid::<3>(),
            2 => tetrahedron_four_point(),
            4 | 5 => tetrahedron_fourteen_point(),
            _ => collapsed_tetrahedron(points_for_degree(degree)),
        },
    }
}

/// Tensor Gauss–Legendre rule on `[-1, 1]^dim` with `n` points per direction; the first
/// coordinate varies fastest.
pub fn tensor_gauss(dim: usize, n: usize) -> QuadratureRule {
    assert!(
        (1..=3).contains(&dim),
        "tensor_gauss: dimension {dim} not in 1..=3"
    );
    let (x, w) = gauss_legendre(n);
    let count = n.pow(dim as u32);
    let mut points = Vec::with_capacity(count);
    let mut weights = Vec::with_capacity(count);
    let nk = if dim == 3 { n } else { 1 };
    let nj = if dim >= 2 { n } else { 1 };
    for k in 0..nk {
        for j in 0..nj {
            for i in 0..n {
                let mut p = [x[i], 0.0, 0.0];
                let mut wt = w[i];
                if dim >= 2 {
                    p[1] = x[j];
                    wt *= w[j];
                }
                if dim == 3 {
                    p[2] = x[k];
                    wt *= w[k];
                }
                points.push(p);
                weights.push(wt);
            }
        }
    }
    QuadratureRule {
        points,
        weights,
        degree: 2 * n - 1,
        source: SOURCE_GAUSS,
    }
}

/// Collapsed product rule on the unit triangle with `n` points per direction (`n^2` points,
/// exact to total degree `2n - 1`).
///
/// With `u, v` in `[-1, 1]`: `x = (1 + u)(1 - v) / 4`, `y = (1 + v) / 2`, `dx dy = (1 - v) / 8 du dv`;
/// Gauss–Legendre in `u`, Gauss–Jacobi with weight `(1 - v)` in `v`.
pub fn collapsed_triangle(n: usize) -> QuadratureRule {
    let (xu, wu) = gauss_legendre(n);
    let (xv, wv) = gauss_jacobi(n, 1, 0);
    let mut points = Vec::with_capacity(n * n);
    let mut weights = Vec::with_capacity(n * n);
    for (&v, &bv) in xv.iter().zip(&wv) {
        for (&u, &bu) in xu.iter().zip(&wu) {
            points.push([0.25 * (1.0 + u) * (1.0 - v), 0.5 * (1.0 + v), 0.0]);
            weights.push(bu * bv / 8.0);
        }
    }
    QuadratureRule {
        points,
        weights,
        degree: 2 * n - 1,
        source: SOURCE_COLLAPSED,
    }
}

/// Collapsed product rule on the unit tetrahedron with `n` points per direction (`n^3` points,
/// exact to total degree `2n - 1`).
///
/// With `u, v, w` in `[-1, 1]`: `x = (1 + u)(1 - v)(1 - w) / 8`, `y = (1 + v)(1 - w) / 4`,
/// `z = (1 + w) / 2`, `dx dy dz = (1 - v)(1 - w)^2 / 64 du dv dw`; Gauss–Legendre in `u`,
/// Gauss–Jacobi with weights `(1 - v)` and `(1 - w)^2` in `v` and `w`.
pub fn collapsed_tetrahedron(n: usize) -> QuadratureRule {
    let (xu, wu) = gauss_legendre(n);
    let (xv, wv) = gauss_jacobi(n, 1, 0);
    let (xw, ww) = gauss_jacobi(n, 2, 0);
    let mut points = Vec::with_capacity(n * n * n);
    let mut weights = Vec::with_capacity(n * n * n);
    for (&w, &bw) in xw.iter().zip(&ww) {
        for (&v, &bv) in xv.iter().zip(&wv) {
            for (&u, &bu) in xu.iter().zip(&wu) {
                points.push([
                    0.125 * (1.0 + u) * (1.0 - v) * (1.0 - w),
                    0.25 * (1.0 + v) * (1.0 - w),
                    0.5 * (1.0 + w),
                ]);
                weights.push(bu * bv * bw / 64.0);
            }
        }
    }
    QuadratureRule {
        points,
        weights,
        degree: 2 * n - 1,
        source: SOURCE_COLLAPSED,
    }
}

/// One point at the centroid of the unit simplex of dimension `D` (2 or 3).
fn centroid<const D: usize>() -> QuadratureRule {
    let (c, measure) = if D == 2 {
        (1.0 / 3.0, 0.5)
    } else {
        (0.25, 1.0 / 6.0)
    };
    let mut p = [0.0; 3];
    for x in p.iter_mut().take(D) {
        *x = c;
    }
    QuadratureRule {
        points: vec![p],
        weights: vec![measure],
        degree: 1,
        source: SOURCE_CENTROID,
    }
}

/// The three points of the barycentric orbit `(a, a, 1 - 2a)` on the unit triangle.
fn triangle_orbit3(a: f64, points: &mut Vec<[f64; 3]>) {
    let b = 1.0 - 2.0 * a;
    points.extend_from_slice(&[[a, a, 0.0], [b, a, 0.0], [a, b, 0.0]]);
}

fn triangle_three_point() -> QuadratureRule {
    let mut points = Vec::with_capacity(3);
    triangle_orbit3(1.0 / 6.0, &mut points);
    QuadratureRule {
        points,
        weights: vec![1.0 / 6.0; 3],
        degree: 2,
        source: SOURCE_TRI3,
    }
}

fn triangle_dunavant6() -> QuadratureRule {
    // Dunavant (1985), degree-4 rule: two orbits (a, a, 1 - 2a); weights given for unit area.
    const ORBITS: [(f64, f64); 2] = [
        (0.445948490915965, 0.223381589678011),
        (0.091576213509771, 0.109951743655322),
    ];
    let mut points = Vec::with_capacity(6);
    let mut weights = Vec::with_capacity(6);
    for (a, w) in ORBITS {
        triangle_orbit3(a, &mut points);
        weights.extend_from_slice(&[0.5 * w; 3]);
    }
    QuadratureRule {
        points,
        weights,
        degree: 4,
        source: SOURCE_DUNAVANT6,
    }
}

fn triangle_radon7() -> QuadratureRule {
    // Radon (1948): centroid weight 9/40, orbits a = (6 -/+ sqrt 15)/21 with weights
    // (155 -/+ sqrt 15)/1200, all for unit area.
    let s = 15f64.sqrt();
    let mut points = vec![[1.0 / 3.0, 1.0 / 3.0, 0.0]];
    let mut weights = vec![0.5 * 9.0 / 40.0];
    for (a, w) in [
        ((6.0 - s) / 21.0, (155.0 - s) / 1200.0),
        ((6.0 + s) / 21.0, (155.0 + s) / 1200.0),
    ] {
        triangle_orbit3(a, &mut points);
        weights.extend_from_slice(&[0.5 * w; 3]);
    }
    QuadratureRule {
        points,
        weights,
        degree: 5,
        source: SOURCE_RADON7,
    }
}

fn triangle_dunavant12() -> QuadratureRule {
    // Dunavant (1985), degree-6 rule: two orbits (a, a, 1 - 2a) and one orbit of the six
    // permutations of (a, b, 1 - a - b); weights given for unit area.
    const ORBITS3: [(f64, f64); 2] = [
        (0.249286745170910, 0.116786275726379),
        (0.063089014491502, 0.050844906370207),
    ];
    const ORBIT6: (f64, f64, f64) = (0.053145049844817, 0.310352451033784, 0.082851075618374);
    let mut points = Vec::with_capacity(12);
    let mut weights = Vec::with_capacity(12);
    for (a, w) in ORBITS3 {
        triangle_orbit3(a, &mut points);
        weights.extend_from_slice(&[0.5 * w; 3]);
    }
    let (a, b, w) = ORBIT6;
    let c = 1.0 - a - b;
    points.extend_from_slice(&[
        [a, b, 0.0],
        [b, a, 0.0],
        [a, c, 0.0],
        [c, a, 0.0],
        [b, c, 0.0],
        [c, b, 0.0],
    ]);
    weights.extend_from_slice(&[0.5 * w; 6]);
    QuadratureRule {
        points,
        weights,
        degree: 6,
        source: SOURCE_DUNAVANT12,
    }
}

/// The points of the barycentric orbit `(a, a, a, 1 - 3a)` on the unit tetrahedron.
fn tetrahedron_orbit4(a: f64, points: &mut Vec<[f64; 3]>) {
    let b = 1.0 - 3.0 * a;
    points.extend_from_slice(&[[a, a, a], [b, a, a], [a, b, a], [a, a, b]]);
}

fn tetrahedron_fourteen_point() -> QuadratureRule {
    // Two orbits (a, a, a, 1 - 3a) and one orbit (a, a, 1/2 - a, 1/2 - a); weights for
    // volume 1/6.
    const ORBITS4: [(f64, f64); 2] = [
        (0.0927352503108912, 0.01224884051939366),
        (0.3108859192633006, 0.01878132095300264),
    ];
    const ORBIT6: (f64, f64) = (0.4544962958743504, 0.007091003462846911);
    let mut points = Vec::with_capacity(14);
    let mut weights = Vec::with_capacity(14);
    for (a, w) in ORBITS4 {
        tetrahedron_orbit4(a, &mut points);
        weights.extend_from_slice(&[w; 4]);
    }
    let (a, w) = ORBIT6;
    let b = 0.5 - a;
    // Barycentric (l0, l1, l2, l3) with two entries a and two b; Cartesian point = (l1, l2, l3).
    for (l1, l2, l3) in [
        (a, b, b),
        (b, a, b),
        (b, b, a),
        (b, a, a),
        (a, b, a),
        (a, a, b),
    ] {
        points.push([l1, l2, l3]);
    }
    weights.extend_from_slice(&[w; 6]);
    QuadratureRule {
        points,
        weights,
        degree: 5,
        source: SOURCE_TET14,
    }
}

fn tetrahedron_four_point() -> QuadratureRule {
    // Barycentric orbit (a, a, a, 1 - 3a), a = (5 - sqrt 5)/20, equal weights.
    let mut points = Vec::with_capacity(4);
    tetrahedron_orbit4((5.0 - 5f64.sqrt()) / 20.0, &mut points);
    QuadratureRule {
        points,
        weights: vec![1.0 / 24.0; 4],
        degree: 2,
        source: SOURCE_TET4,
    }
}

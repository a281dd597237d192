//! Exactness of every quadrature rule against closed-form monomial integrals.
//!
//! Closed forms used (all elementary; common practice, no source needed beyond calculus):
//! * line: `∫_{-1}^{1} x^a dx = (1 + (-1)^a) / (a + 1)`;
//! * square and cube `[-1, 1]^d`: products of the line integrals (Fubini);
//! * unit triangle: `∫ x^a y^b = a! b! / (a + b + 2)!`;
//! * unit tetrahedron: `∫ x^a y^b z^c = a! b! c! / (a + b + c + 3)!`
//!   (both Dirichlet's integral over the unit simplex, common practice, no source; it is the
//!   area/volume-coordinate integration formula of finite-element textbooks, e.g. Zienkiewicz,
//!   Taylor & Zhu 2005, from memory);
//! * Jacobi weight: `∫_{-1}^{1} (1 - x)^α (1 + x)^(β + k) dx
//!   = 2^(α + β + k + 1) α! (β + k)! / (α + β + k + 1)!`
//!   (Euler's Beta integral after `x = 2t - 1`; common practice, no source).
//!
//! Tabulated rules checked here (sources in `quadrature.rs` beside each rule): Gauss–Legendre
//! small cases against Abramowitz & Stegun 1964, Table 25.4; Dunavant 1985 (IJNME 21,
//! 1129–1148) 6- and 12-point triangle rules; Radon 1948 7-point triangle rule; Keast 1986 /
//! Stroud 1971 4-point tetrahedron rule; 14-point degree-5 tetrahedron rule (Walkington 2000,
//! values from memory). The generated rules (tensor Gauss–Legendre, collapsed
//! Gauss–Legendre × Gauss–Jacobi products after Stroud 1971 / Karniadakis & Sherwin 2005) are
//! checked the same way up to degree 17.

use dilata_fem::quadrature::{
    gauss_jacobi, gauss_legendre, reference_measure, rule_for, QuadratureRule,
};
use dilata_mesh::Shape;

const REL_TOL: f64 = 1e-13;

fn factorial(n: usize) -> f64 {
    (1..=n).map(|k| k as f64).product()
}

/// Exact `∫_{-1}^{1} x^a dx` (closed form in the module docs).
fn line_monomial(a: usize) -> f64 {
    if a % 2 == 1 {
        0.0
    } else {
        2.0 / (a as f64 + 1.0)
    }
}

/// `∫_{-1}^{1} |x|^a dx`, the scale against which an integral that vanishes is compared.
fn line_abs_monomial(a: usize) -> f64 {
    2.0 / (a as f64 + 1.0)
}

fn dim_of(shape: Shape) -> usize {
    match shape {
        Shape::Point => 0,
        Shape::Line => 1,
        Shape::Triangle | Shape::Quadrilateral => 2,
        Shape::Tetrahedron | Shape::Hexahedron => 3,
    }
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

/// Exact integral of `x^e[0] y^e[1] z^e[2]` over the reference cell and a positive scale for the
/// error (the integral of its absolute value).
fn exact_monomial(shape: Shape, e: [usize; 3]) -> (f64, f64) {
    match shape {
        Shape::Point => (if e == [0, 0, 0] { 1.0 } else { 0.0 }, 1.0),
        Shape::Line | Shape::Quadrilateral | Shape::Hexahedron => {
            let d = dim_of(shape);
            let exact = (0..d).map(|k| line_monomial(e[k])).product();
            let scale = (0..d).map(|k| line_abs_monomial(e[k])).product();
            (exact, scale)
        }
        Shape::Triangle => {
            let v = factorial(e[0]) * factorial(e[1]) / factorial(e[0] + e[1] + 2);
            (v, v)
        }
        Shape::Tetrahedron => {
            let v = factorial(e[0]) * factorial(e[1]) * factorial(e[2])
                / factorial(e[0] + e[1] + e[2] + 3);
            (v, v)
        }
    }
}

fn integrate_monomial(rule: &QuadratureRule, e: [usize; 3]) -> f64 {
    rule.points
        .iter()
        .zip(&rule.weights)
        .map(|(p, w)| w * p[0].powi(e[0] as i32) * p[1].powi(e[1] as i32) * p[2].powi(e[2] as i32))
        .sum()
}

/// All exponent triples for `shape` with total degree `<= total` and each exponent `<= each`.
fn exponents(shape: Shape, total: usize, each: usize) -> Vec<[usize; 3]> {
    let d = dim_of(shape);
    let lim = |k: usize| if k < d { each.min(total) } else { 0 };
    let mut out = Vec::new();
    for a in 0..=lim(0) {
        for b in 0..=lim(1) {
            for c in 0..=lim(2) {
                if a + b + c <= total {
                    out.push([a, b, c]);
                }
            }
        }
    }
    out
}

fn inside(shape: Shape, p: [f64; 3]) -> bool {
    let d = dim_of(shape);
    let unused_zero = p[d..].iter().all(|&x| x == 0.0);
    unused_zero
        && match shape {
            Shape::Point => true,
            Shape::Line | Shape::Quadrilateral | Shape::Hexahedron => {
                p[..d].iter().all(|x| x.abs() < 1.0)
            }
            Shape::Triangle | Shape::Tetrahedron => {
                p[..d].iter().all(|&x| x > 0.0) && p[..d].iter().sum::<f64>() < 1.0
            }
        }
}

fn check_rule(shape: Shape, rule: &QuadratureRule, total: usize, each: usize) {
    assert_eq!(rule.points.len(), rule.weights.len());
    assert_eq!(rule.n_points(), rule.points.len());
    for e in exponents(shape, total, each) {
        let got = integrate_monomial(rule, e);
        let (exact, scale) = exact_monomial(shape, e);
        assert!(
            (got - exact).abs() <= REL_TOL * scale,
            "{shape:?} rule ({}, {} points) monomial {e:?}: got {got:e}, exact {exact:e}",
            rule.source,
            rule.n_points()
        );
    }
}

const SHAPES: [Shape; 6] = [
    Shape::Point,
    Shape::Line,
    Shape::Triangle,
    Shape::Quadrilateral,
    Shape::Tetrahedron,
    Shape::Hexahedron,
];

#[test]
fn every_rule_for_is_exact_to_its_degree() {
    for shape in SHAPES {
        for degree in 0..=10 {
            let rule = rule_for(shape, degree);
            assert!(
                rule.degree >= degree,
                "{shape:?} degree {degree}: rule claims only {}",
                rule.degree
            );
            assert!(!rule.source.is_empty());
            // Total degree up to the claimed degree.
            check_rule(shape, &rule, rule.degree, rule.degree);
            // Tensor rules: every per-coordinate degree up to the claimed degree.
            if matches!(
                shape,
                Shape::Line | Shape::Quadrilateral | Shape::Hexahedron
            ) {
                check_rule(shape, &rule, usize::MAX / 4, rule.degree);
            }
        }
    }
}

#[test]
fn higher_degree_collapsed_rules_are_exact() {
    for shape in [Shape::Triangle, Shape::Tetrahedron] {
        for degree in [11, 14, 17] {
            let rule = rule_for(shape, degree);
            assert!(rule.degree >= degree);
            check_rule(shape, &rule, rule.degree, rule.degree);
        }
    }
}

#[test]
fn weights_sum_to_reference_measure_and_points_are_strictly_inside() {
    for shape in SHAPES {
        for degree in 0..=12 {
            let rule = rule_for(shape, degree);
            let sum: f64 = rule.weights.iter().sum();
            assert!(
                (sum - measure(shape)).abs() <= 1e-14 * measure(shape),
                "{shape:?} degree {degree}: weights sum {sum}"
            );
            for &p in &rule.points {
                assert!(
                    inside(shape, p),
                    "{shape:?} degree {degree}: point {p:?} not strictly inside"
                );
            }
            assert!(
                rule.weights.iter().all(|&w| w > 0.0),
                "{shape:?} degree {degree}: non-positive weight"
            );
        }
    }
}

/// Symmetric rules are chosen only where they are cheaper than the collapsed product rule.
#[test]
fn simplex_rules_use_few_points() {
    let counts: Vec<usize> = (0..=7)
        .map(|d| rule_for(Shape::Triangle, d).n_points())
        .collect();
    assert_eq!(counts, vec![1, 1, 3, 4, 6, 7, 12, 16]);
    let counts: Vec<usize> = (0..=6)
        .map(|d| rule_for(Shape::Tetrahedron, d).n_points())
        .collect();
    assert_eq!(counts, vec![1, 1, 4, 8, 14, 14, 64]);
    // Tensor rules: ceil((degree + 1) / 2) points per direction.
    assert_eq!(rule_for(Shape::Hexahedron, 3).n_points(), 8);
    assert_eq!(rule_for(Shape::Quadrilateral, 4).n_points(), 9);
    assert_eq!(rule_for(Shape::Line, 0).n_points(), 1);
}

#[test]
fn gauss_legendre_exact_to_2n_minus_1_and_not_beyond() {
    for n in 1..=12 {
        let (x, w) = gauss_legendre(n);
        assert_eq!(x.len(), n);
        assert_eq!(w.len(), n);
        assert!(
            x.windows(2).all(|p| p[0] < p[1]),
            "n = {n}: nodes not ascending"
        );
        assert!(x.iter().all(|v| v.abs() < 1.0));
        for i in 0..n {
            assert_eq!(x[i], -x[n - 1 - i], "n = {n}: nodes not symmetric");
            assert_eq!(w[i], w[n - 1 - i], "n = {n}: weights not symmetric");
        }
        let integrate = |a: usize| -> f64 {
            x.iter()
                .zip(&w)
                .map(|(xi, wi)| wi * xi.powi(a as i32))
                .sum()
        };
        for a in 0..2 * n {
            let got = integrate(a);
            let exact = line_monomial(a);
            assert!(
                (got - exact).abs() <= REL_TOL * line_abs_monomial(a),
                "n = {n}, x^{a}: got {got:e}, exact {exact:e}"
            );
        }
        // An n-point Gauss rule cannot integrate x^(2n) exactly (its error is a positive multiple
        // of the 2n-th derivative); this guards against a test that passes for any rule.
        let a = 2 * n;
        assert!(
            (integrate(a) - line_monomial(a)).abs() > 1e-6 * line_monomial(a),
            "n = {n}: x^{a} exact?"
        );
    }
}

/// Known nodes: two-point rule at ±1/sqrt(3) with unit weights; three-point rule at 0, ±sqrt(3/5)
/// with weights 8/9, 5/9 (Abramowitz & Stegun, Handbook of Mathematical Functions, 1964,
/// Table 25.4).
#[test]
fn gauss_legendre_small_rules_match_closed_forms() {
    let (x, w) = gauss_legendre(2);
    assert!((x[1] - 1.0 / 3f64.sqrt()).abs() < 1e-15 && (w[0] - 1.0).abs() < 1e-15);
    let (x, w) = gauss_legendre(3);
    assert_eq!(x[1], 0.0);
    assert!((x[2] - 0.6f64.sqrt()).abs() < 1e-15);
    assert!((w[1] - 8.0 / 9.0).abs() < 1e-15 && (w[2] - 5.0 / 9.0).abs() < 1e-15);
}

#[test]
fn gauss_jacobi_exact_for_its_weight() {
    for alpha in 0..=2u32 {
        for beta in 0..=2u32 {
            for n in 1..=12 {
                let (x, w) = gauss_jacobi(n, alpha, beta);
                assert!(x.windows(2).all(|p| p[0] < p[1]) && x.iter().all(|v| v.abs() < 1.0));
                let (a, b) = (alpha as usize, beta as usize);
                for k in 0..2 * n {
                    let got: f64 = x
                        .iter()
                        .zip(&w)
                        .map(|(xi, wi)| wi * (1.0 + xi).powi(k as i32))
                        .sum();
                    // (1-x)^a (1+x)^(b+k): Beta integral from the module docs with k -> b + k.
                    let exact = 2f64.powi((a + b + k + 1) as i32) * factorial(a) * factorial(b + k)
                        / factorial(a + b + k + 1);
                    assert!(
                        (got - exact).abs() <= REL_TOL * exact,
                        "alpha {alpha}, beta {beta}, n {n}, (1+x)^{k}: got {got:e}, exact {exact:e}"
                    );
                }
            }
        }
    }
}

#[test]
fn reference_measures() {
    for shape in SHAPES {
        assert_eq!(reference_measure(shape), measure(shape), "{shape:?}");
    }
}

#[test]
#[should_panic(expected = "at least one point")]
fn gauss_legendre_zero_points_panics() {
    let _ = gauss_legendre(0);
}

//! The symmetric-form solver on a model of the coupled concentration–potential block: rows of
//! a "mass" equation `a0 M c + K μ (+ ε N c)` and a "potential" equation `M μ − G c`, in
//! units that differ by many orders of magnitude, which the row transform turns into the
//! quasi-definite `[G, −M; −M, −K/a0]` (exactly symmetric for ε = 0).

mod problems;

use dilata_linalg::{
    CsrMatrix, CsrPattern, LinalgError, LinearSolver, RowTransform, SymmetricFormParams,
    SymmetricFormSolver,
};

use problems::{laplacian_2d, manufactured_x, neumann_laplacian_2d, relative_error};

/// Unit sizes of the two equations and of the potential (deliberately far apart).
const MASS_UNIT: f64 = 1e-15;
const POTENTIAL_UNIT: f64 = 1e3;
const MU_SCALE: f64 = 1e4;

struct Model {
    j: CsrMatrix,
    transform: RowTransform,
}

/// The coupled model on an `nx × ny` grid: unknowns `c` (0..n) then `μ` (n..2n).
/// `M = I + L/10` (L the Dirichlet Laplacian), `K` the Neumann Laplacian (singular: its
/// constants are not determined by the potential block alone), `G = M + L/2`, and `N` the
/// upwind-like nonsymmetric operator of `problems::convection_diffusion_2d` minus its
/// symmetric part's diagonal, scaled by `epsilon`.
fn model(nx: usize, ny: usize, a0: f64, epsilon: f64) -> Model {
    model_with(nx, ny, a0, epsilon, 1.0, 1)
}

/// As [`model`] with `G = g_mass M + L/2` and pivot sign `c_sign` for the `c` unknowns: a
/// negative `g_mass` is the curvature of a non-convex free energy, which makes the `c` block
/// of the symmetric form indefinite.
fn model_with(nx: usize, ny: usize, a0: f64, epsilon: f64, g_mass: f64, c_sign: i8) -> Model {
    let l = laplacian_2d(nx, ny);
    let k = neumann_laplacian_2d(nx, ny);
    let n = l.n_rows();
    let dense = |a: &CsrMatrix, i: usize, j: usize| a.get(i, j);
    // Mass-row entries (c row i): a0 M c + K μ / MU_SCALE-free units ...
    let mut rows: Vec<Vec<(usize, f64)>> = vec![Vec::new(); 2 * n];
    for i in 0..n {
        for &j in l.pattern.row(i) {
            let m_ij = if i == j { 1.0 } else { 0.0 } + 0.1 * dense(&l, i, j);
            let g_ij = g_mass * m_ij + 0.5 * dense(&l, i, j);
            // Nonsymmetric perturbation: a one-sided difference (j < i only).
            let n_ij = if j + 1 == i {
                -1.0
            } else if i == j {
                1.0
            } else {
                0.0
            };
            // mass equation of node i, in the c row
            rows[i].push((j, MASS_UNIT * (a0 * m_ij + epsilon * n_ij)));
            // potential equation of node i, in the μ row: M μ − G c, μ in units of MU_SCALE
            rows[n + i].push((n + j, POTENTIAL_UNIT * m_ij));
            rows[n + i].push((j, -POTENTIAL_UNIT * MU_SCALE * g_ij));
        }
        for &j in k.pattern.row(i) {
            rows[i].push((n + j, MASS_UNIT * dense(&k, i, j) / MU_SCALE));
        }
    }
    let pattern = CsrPattern::from_rows(
        2 * n,
        rows.iter()
            .map(|r| r.iter().map(|&(j, _)| j).collect())
            .collect(),
    );
    let mut j = CsrMatrix::zeros(std::sync::Arc::new(pattern));
    for (i, r) in rows.iter().enumerate() {
        for &(col, v) in r {
            let pos = j.pattern.find(i, col).unwrap();
            j.values[pos] += v;
        }
    }
    // Mass row of node i -> μ position, scaled by −1/(a0 MASS_UNIT) and by the μ column unit;
    // potential row -> c position, scaled by −1/(POTENTIAL_UNIT MU_SCALE).
    let mut target = vec![0; 2 * n];
    let mut scale = vec![0.0; 2 * n];
    let mut signs = vec![0i8; 2 * n];
    for i in 0..n {
        target[i] = n + i;
        scale[i] = -1.0 / (a0 * MASS_UNIT * MU_SCALE);
        target[n + i] = i;
        scale[n + i] = -1.0 / (POTENTIAL_UNIT * MU_SCALE);
        signs[i] = c_sign;
        signs[n + i] = -1;
    }
    Model {
        j,
        transform: RowTransform {
            target,
            scale,
            signs,
        },
    }
}

/// Manufactured solution with c of order one and μ of order `MU_SCALE`.
fn x_true(n2: usize) -> Vec<f64> {
    let mut x = manufactured_x(n2);
    for v in &mut x[n2 / 2..] {
        *v *= MU_SCALE;
    }
    x
}

fn solve(solver: &mut SymmetricFormSolver, m: &Model) -> (Vec<f64>, usize) {
    let x_true = x_true(m.j.n_rows());
    let mut x = m.j.mul_vec(&x_true);
    let info = solver.solve_in_place(&mut x).expect("solve");
    // Error bound: cond of the equilibrated system is below 1e4 here (small grids), and GMRES
    // stops at 1e-8 relative residual (Golub & Van Loan, Matrix Computations, 4th ed.,
    // sec. 2.6: relative error <= cond x relative residual).
    let err = relative_error(&x, &x_true);
    assert!(err < 1e-5, "relative error {err:e}");
    eprintln!(
        "GMRES iterations {}, relative error {err:e}",
        info.iterations
    );
    (x, info.iterations)
}

fn fresh(m: &Model) -> SymmetricFormSolver {
    let mut s = SymmetricFormSolver::new(SymmetricFormParams::default());
    s.analyze(&m.j.pattern).unwrap();
    s.set_row_transform(m.transform.clone()).unwrap();
    s
}

/// Exactly symmetric after the transform: the factorisation is the inverse and GMRES stops
/// after one or two iterations.
#[test]
fn symmetric_form_is_solved_in_one_or_two_iterations() {
    let m = model(12, 10, 50.0, 0.0);
    let mut s = fresh(&m);
    s.factor(&m.j).unwrap();
    let (_, its) = solve(&mut s, &m);
    assert!(its <= 2, "{its} GMRES iterations");
    let st = s.stats();
    assert_eq!(
        (st.symmetric_factorizations, st.lu_solves),
        (1, 0),
        "{st:?}"
    );
}

/// An indefinite `c` block (a non-convex energy, `G = −0.8 M + L/2` at a large time step): `G`
/// is negative on the smoothest grid mode (`L`'s smallest eigenvalue on 12 × 10 is about 0.14:
/// `−0.8 (1 + 0.014) + 0.07 < 0`) and positive on the roughest (`L` about 7.9:
/// `−0.8·1.79 + 3.93 > 0`), so static pivots with `+` signs for `c` meet wrong signs. With the `c` signs left
/// unknown (0) the factorisation pivots (Bunch–Kaufman within supernodes), and the exactly
/// symmetric form is solved in one or two GMRES iterations without the LU; with `+` signs the
/// same matrix needs the LU fallback or many iterations.
#[test]
fn indefinite_block_with_unknown_signs_is_factored_with_pivoting() {
    let m = model_with(12, 10, 0.5, 0.0, -0.8, 0);
    let mut s = fresh(&m);
    s.factor(&m.j).unwrap();
    let (_, its) = solve(&mut s, &m);
    assert!(its <= 2, "{its} GMRES iterations");
    let st = s.stats();
    assert_eq!(
        (st.symmetric_factorizations, st.lu_solves),
        (1, 0),
        "{st:?}"
    );
    let signed = model_with(12, 10, 0.5, 0.0, -0.8, 1);
    let mut s = fresh(&signed);
    s.factor(&signed.j).unwrap();
    let (_, its) = solve(&mut s, &signed);
    assert!(
        s.stats().lu_solves > 0 || its > 2,
        "static + pivots unexpectedly fine: {its} iterations, {:?}",
        s.stats()
    );
}

/// A nonsymmetric part is absorbed by GMRES: more iterations, still no LU.
#[test]
fn nonsymmetric_part_costs_iterations_not_accuracy() {
    let m = model(12, 10, 50.0, 5.0);
    let mut s = fresh(&m);
    s.factor(&m.j).unwrap();
    let (_, its) = solve(&mut s, &m);
    assert!((2..=40).contains(&its), "{its} GMRES iterations");
    assert_eq!(s.stats().lu_solves, 0);
}

/// The factorisation is kept for a nearby matrix while GMRES converges fast, and the solves
/// stay accurate; a far-away matrix gets a new factorisation.
#[test]
fn preconditioner_is_reused_for_nearby_matrices() {
    let m1 = model(12, 10, 50.0, 0.0);
    let m2 = model(12, 10, 50.5, 0.0);
    let mut s = fresh(&m1);
    s.factor(&m1.j).unwrap();
    solve(&mut s, &m1);
    s.set_row_transform(m2.transform.clone()).unwrap();
    s.factor(&m2.j).unwrap();
    let (_, its) = solve(&mut s, &m2);
    assert!(its > 1, "a reused factorisation is not exact: {its}");
    assert_eq!(s.stats().symmetric_factorizations, 1);
    // A much larger time step changes the matrix too much: the solve takes more iterations
    // than the reuse limit, so the next factor call builds a new factorisation.
    let m3 = model(12, 10, 0.05, 0.0);
    s.set_row_transform(m3.transform.clone()).unwrap();
    s.factor(&m3.j).unwrap();
    solve(&mut s, &m3);
    s.factor(&m3.j).unwrap();
    let (_, its) = solve(&mut s, &m3);
    assert!(its <= 2, "{its}");
    assert_eq!(s.stats().symmetric_factorizations, 2);
}

/// A transform whose symmetric part is singular (here: a skew-symmetric matrix, whose
/// symmetric part is zero) falls back to the LU and still solves exactly.
#[test]
fn singular_symmetric_part_falls_back_to_lu() {
    // [[0, 1], [-1, 0]] blocks on the diagonal, plus nothing else.
    let n = 6;
    let rows: Vec<Vec<usize>> = (0..n).map(|i| vec![i ^ 1]).collect();
    let mut a = CsrMatrix::zeros(std::sync::Arc::new(CsrPattern::from_rows(n, rows)));
    for i in 0..n {
        a.values[i] = if i % 2 == 0 { 1.0 } else { -1.0 };
    }
    let mut s = SymmetricFormSolver::new(SymmetricFormParams::default());
    s.analyze(&a.pattern).unwrap();
    s.set_row_transform(RowTransform {
        target: (0..n).collect(),
        scale: vec![1.0; n],
        signs: vec![1; n],
    })
    .unwrap();
    s.factor(&a).unwrap();
    let x_true = manufactured_x(n);
    let mut x = a.mul_vec(&x_true);
    s.solve_in_place(&mut x).unwrap();
    assert!(relative_error(&x, &x_true) < 1e-14);
    assert_eq!(s.stats().lu_solves, 1);
}

/// Without a transform every solve is the LU's.
#[test]
fn without_transform_the_lu_solves() {
    let a = laplacian_2d(8, 7);
    let mut s = SymmetricFormSolver::new(SymmetricFormParams::default());
    s.analyze(&a.pattern).unwrap();
    s.factor(&a).unwrap();
    let x_true = manufactured_x(a.n_rows());
    let mut x = a.mul_vec(&x_true);
    s.solve_in_place(&mut x).unwrap();
    assert!(relative_error(&x, &x_true) < 1e-12);
    assert_eq!(s.stats().lu_solves, 1);
    assert_eq!(s.stats().symmetric_factorizations, 0);
}

/// Inconsistent transforms are usage errors, caught before any factorisation.
#[test]
fn inconsistent_transform_is_refused() {
    let m = model(4, 4, 1.0, 0.0);
    let mut s = SymmetricFormSolver::new(SymmetricFormParams::default());
    s.analyze(&m.j.pattern).unwrap();
    let mut t = m.transform.clone();
    t.target[0] = t.target[1];
    assert!(matches!(s.set_row_transform(t), Err(LinalgError::Usage(_))));
    let mut t = m.transform.clone();
    t.scale[3] = 0.0;
    assert!(matches!(s.set_row_transform(t), Err(LinalgError::Usage(_))));
    let mut t = m.transform.clone();
    t.signs.pop();
    assert!(matches!(s.set_row_transform(t), Err(LinalgError::Usage(_))));
}

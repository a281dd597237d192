//! The LU's warm-started equilibration makes a solve depend on the factorisations before it; a
//! solver given the carried state of another solves to the same bits (what a resumed run needs).

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, DirectParams, FaerLu, LinearSolver, Ordering};

/// A small unsymmetric matrix whose entries span many orders of magnitude (as the coupled
/// Jacobian's units do), scaled by `s` in its last rows.
fn matrix(pattern: &Arc<CsrPattern>, s: f64) -> CsrMatrix {
    let mut m = CsrMatrix::zeros(pattern.clone());
    let n = pattern.n_rows;
    for i in 0..n {
        for k in pattern.row_ptr[i]..pattern.row_ptr[i + 1] {
            let j = pattern.col_idx[k];
            let base = if i == j {
                4.0
            } else {
                -1.0 - 0.1 * (i + 2 * j) as f64
            };
            let units = if i >= n / 2 { 1e9 * s } else { 1e-6 };
            m.values[k] = base * units;
        }
    }
    m
}

fn solve(solver: &mut FaerLu, m: &CsrMatrix) -> Vec<u64> {
    solver.factor(m).unwrap();
    let mut x: Vec<f64> = (0..m.pattern.n_rows).map(|i| 1.0 + i as f64).collect();
    solver.solve_in_place(&mut x).unwrap();
    x.iter().map(|v| v.to_bits()).collect()
}

#[test]
fn a_restored_carried_state_gives_the_same_bits() {
    let n = 12;
    let rows: Vec<Vec<usize>> = (0..n)
        .map(|i| {
            let mut r = vec![i, (i + 1) % n, (i + 5) % n];
            r.sort_unstable();
            r.dedup();
            r
        })
        .collect();
    let pattern = Arc::new(CsrPattern::from_rows(n, rows));
    let params = DirectParams::with_ordering(Ordering::Amd);
    let (a, b) = (matrix(&pattern, 1.0), matrix(&pattern, 3.7));

    let mut first = FaerLu::new(params);
    first.analyze(&pattern).unwrap();
    assert!(first.carried_state().is_empty());
    solve(&mut first, &a);
    let carried = first.carried_state();
    assert_eq!(carried.len(), 2 * n);
    let expected = solve(&mut first, &b);

    let mut resumed = FaerLu::new(params);
    resumed.analyze(&pattern).unwrap();
    resumed.restore_carried_state(&carried).unwrap();
    assert_eq!(solve(&mut resumed, &b), expected);

    // Without it, a fresh solver starts its equilibration cold (this test would not see a
    // missing restore if the warm start made no difference).
    let mut cold = FaerLu::new(params);
    cold.analyze(&pattern).unwrap();
    assert_ne!(solve(&mut cold, &b), expected);

    // A state of the wrong size is a usage error.
    assert!(resumed.restore_carried_state(&carried[1..]).is_err());
}

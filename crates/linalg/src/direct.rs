//! Shared pieces of the sparse direct back-ends: parameters, statistics and checks.

use crate::csr::{CsrMatrix, CsrPattern};
use crate::ordering::Ordering;
use crate::parallel::Parallelism;
use crate::solver::LinalgError;

/// Parameters of a sparse direct solver.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct DirectParams {
    /// Fill-reducing ordering computed in `analyze`.
    pub ordering: Ordering,
    /// Threads for the numeric factorisation and the solves.
    pub parallelism: Parallelism,
}

impl DirectParams {
    /// Parameters with the given ordering, sequential.
    pub fn with_ordering(ordering: Ordering) -> Self {
        DirectParams {
            ordering,
            parallelism: Parallelism::Sequential,
        }
    }
}

/// What a direct solver has done so far; lets callers (and tests) see that the symbolic
/// analysis is reused across numeric factorisations.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct DirectStats {
    /// Number of symbolic analyses (ordering + symbolic factorisation) performed.
    pub n_analyses: usize,
    /// Number of numeric factorisations performed.
    pub n_factorizations: usize,
    /// Stored entries of the factor(s) predicted by the symbolic analysis (L for Cholesky and
    /// LDLᵀ; 0 where the back-end does not report it).
    pub factor_nnz: usize,
}

/// A fingerprint of the analysed pattern (dimensions and a hash of the index arrays), to reject
/// a `factor` call on a different pattern without keeping a copy of a possibly large pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct AnalysedPattern {
    n: usize,
    nnz: usize,
    hash: u64,
}

fn pattern_hash(pattern: &CsrPattern) -> u64 {
    use std::hash::{Hash, Hasher};
    // DefaultHasher::new() uses fixed keys, so equal patterns hash equally within a run.
    let mut h = std::collections::hash_map::DefaultHasher::new();
    pattern.row_ptr.hash(&mut h);
    pattern.col_idx.hash(&mut h);
    h.finish()
}

impl AnalysedPattern {
    /// Record `pattern`, which must be square and consistent.
    pub(crate) fn new(pattern: &CsrPattern) -> Result<Self, LinalgError> {
        if pattern.n_rows != pattern.n_cols {
            return Err(LinalgError::Usage(format!(
                "solver needs a square matrix, got {}x{}",
                pattern.n_rows, pattern.n_cols
            )));
        }
        if pattern.row_ptr.len() != pattern.n_rows + 1
            || pattern.row_ptr.last().copied() != Some(pattern.col_idx.len())
        {
            return Err(LinalgError::Usage("inconsistent CSR pattern".into()));
        }
        Ok(AnalysedPattern {
            n: pattern.n_rows,
            nnz: pattern.nnz(),
            hash: pattern_hash(pattern),
        })
    }

    /// Check that `matrix` lives on the analysed pattern and has one value per entry.
    pub(crate) fn check(&self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        let p = matrix.pattern.as_ref();
        if p.n_rows != self.n
            || p.n_cols != self.n
            || p.nnz() != self.nnz
            || pattern_hash(p) != self.hash
        {
            return Err(LinalgError::Usage(
                "factor called with a matrix whose pattern differs from the analysed one; \
                 call analyze again"
                    .into(),
            ));
        }
        if matrix.values.len() != p.nnz() {
            return Err(LinalgError::Usage(format!(
                "matrix has {} values for {} pattern entries",
                matrix.values.len(),
                p.nnz()
            )));
        }
        Ok(())
    }

    /// The dimension of the analysed pattern.
    pub(crate) fn n(&self) -> usize {
        self.n
    }
}

/// Usage error for a right-hand side of the wrong length.
pub(crate) fn check_rhs_len(n: usize, rhs: &[f64]) -> Result<(), LinalgError> {
    if rhs.len() == n {
        Ok(())
    } else {
        Err(LinalgError::Usage(format!(
            "right-hand side has length {}, expected {n}",
            rhs.len()
        )))
    }
}

/// A pivot breakdown surfaces as non-finite numbers in a solve: faer's supernodal LU and the
/// intranodal LBLᵀ do not report a zero pivot themselves (checked in faer 0.24.4 source).
pub(crate) fn check_finite(x: &[f64]) -> Result<(), LinalgError> {
    if x.iter().all(|v| v.is_finite()) {
        Ok(())
    } else {
        Err(LinalgError::Singular { pivot: None })
    }
}

/// A generic probe right-hand side without symmetry or regular structure, so that it is not orthogonal
/// to a near-null vector of a typical matrix by construction (common practice, no source).
pub(crate) fn probe_rhs(n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| 1.0 + 0.5 * (1.3 * i as f64 + 0.1).sin())
        .collect()
}

/// Reject a factorisation that is singular to working precision.
///
/// With `A x = b`, `‖A⁻¹‖_∞ >= ‖x‖_∞ / ‖b‖_∞`, so `‖A‖_∞ ‖x‖_∞ / ‖b‖_∞` is a lower bound of
/// `cond_∞(A)` (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002,
/// ch. 15, from memory). When it reaches `1/ε` the matrix is singular to working precision, the
/// same criterion a LAPACK expert driver uses to flag `RCOND < ε` (LAPACK Users' Guide, 3rd ed.,
/// SIAM 1999, sec. 4.4, from memory). A pure-Neumann Laplacian factors without an exact zero
/// pivot and is caught here.
pub(crate) fn check_probe(a: &CsrMatrix, b: &[f64], x: &[f64]) -> Result<(), LinalgError> {
    check_finite(x)?;
    if condition_lower_bound(infinity_norm(a), b, x) >= 1.0 / f64::EPSILON {
        return Err(LinalgError::Singular { pivot: None });
    }
    Ok(())
}

/// `‖A‖_∞`, the largest absolute row sum.
pub(crate) fn infinity_norm(a: &CsrMatrix) -> f64 {
    let p = a.pattern.as_ref();
    (0..p.n_rows)
        .map(|i| {
            a.values[p.row_ptr[i]..p.row_ptr[i + 1]]
                .iter()
                .map(|v| v.abs())
                .sum::<f64>()
        })
        .fold(0.0f64, f64::max)
}

/// The lower bound `‖A‖_∞ ‖x‖_∞ / ‖b‖_∞` of `cond_∞(A)` from a solve `A x = b` (see
/// [`check_probe`]); 0 for `b = 0`.
pub(crate) fn condition_lower_bound(a_norm: f64, b: &[f64], x: &[f64]) -> f64 {
    let inf_norm = |v: &[f64]| v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let b_norm = inf_norm(b);
    if b_norm == 0.0 {
        return 0.0;
    }
    a_norm * inf_norm(x) / b_norm
}

//! Preconditioners for the Krylov solvers: none, Jacobi (diagonal) and ILU(0).

use crate::csr::{CsrMatrix, CsrPattern};
use crate::solver::LinalgError;

/// Which preconditioner a Krylov solver builds in `factor`.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Preconditioner {
    /// Identity.
    None,
    /// Inverse of the diagonal (Saad, Iterative Methods for Sparse Linear Systems, 2nd ed.,
    /// SIAM 2003, sec. 10.2).
    #[default]
    Jacobi,
    /// Incomplete LU with zero fill on the CSR pattern (Saad 2003, sec. 10.3.2, Algorithm 10.4,
    /// IKJ variant). Not symmetric in general, so with CG it is only safe for SPD matrices where
    /// it happens to be (it is, up to rounding, the incomplete Cholesky factor times its
    /// transpose with a diagonal scaling, for symmetric A; Saad 2003 sec. 10.3, from memory).
    Ilu0,
}

impl Preconditioner {
    /// Short name ("none", "jacobi", "ilu0").
    pub fn name(self) -> &'static str {
        match self {
            Preconditioner::None => "none",
            Preconditioner::Jacobi => "jacobi",
            Preconditioner::Ilu0 => "ilu0",
        }
    }

    /// Inverse of [`Preconditioner::name`].
    pub fn from_name(name: &str) -> Option<Self> {
        match name {
            "none" => Some(Preconditioner::None),
            "jacobi" => Some(Preconditioner::Jacobi),
            "ilu0" => Some(Preconditioner::Ilu0),
            _ => None,
        }
    }
}

/// Structure that ILU(0) needs for a pattern: the position of each row's diagonal entry.
#[derive(Clone, Debug)]
pub(crate) struct Ilu0Structure {
    diag_pos: Vec<usize>,
}

impl Ilu0Structure {
    /// Locate the diagonal of every row; a missing diagonal entry is a structurally zero pivot.
    pub(crate) fn new(pattern: &CsrPattern) -> Result<Self, LinalgError> {
        let diag_pos = (0..pattern.n_rows)
            .map(|i| {
                pattern
                    .find(i, i)
                    .ok_or(LinalgError::Singular { pivot: Some(i) })
            })
            .collect::<Result<Vec<_>, _>>()?;
        Ok(Ilu0Structure { diag_pos })
    }
}

/// A built preconditioner `M ≈ A⁻¹`, applied as `z = M r`.
#[derive(Clone, Debug)]
pub(crate) enum PreconditionerState {
    Identity,
    Jacobi {
        inv_diag: Vec<f64>,
    },
    Ilu0 {
        factors: CsrMatrix,
        diag_pos: Vec<usize>,
    },
}

impl PreconditionerState {
    /// Build the preconditioner `kind` for `a`. A zero (or missing) pivot gives `Singular`.
    pub(crate) fn build(
        kind: Preconditioner,
        a: &CsrMatrix,
        ilu: Option<&Ilu0Structure>,
    ) -> Result<Self, LinalgError> {
        match kind {
            Preconditioner::None => Ok(PreconditionerState::Identity),
            Preconditioner::Jacobi => {
                let inv_diag = a
                    .diagonal()
                    .into_iter()
                    .enumerate()
                    .map(|(i, d)| {
                        if d != 0.0 && d.is_finite() {
                            Ok(1.0 / d)
                        } else {
                            Err(LinalgError::Singular { pivot: Some(i) })
                        }
                    })
                    .collect::<Result<Vec<_>, _>>()?;
                Ok(PreconditionerState::Jacobi { inv_diag })
            }
            Preconditioner::Ilu0 => {
                let structure = ilu.ok_or_else(|| {
                    LinalgError::Usage("ILU(0) structure missing: call analyze first".into())
                })?;
                let factors = ilu0_factor(a, &structure.diag_pos)?;
                Ok(PreconditionerState::Ilu0 {
                    factors,
                    diag_pos: structure.diag_pos.clone(),
                })
            }
        }
    }

    /// `z = M r`.
    pub(crate) fn apply(&self, r: &[f64], z: &mut [f64]) {
        match self {
            PreconditionerState::Identity => z.copy_from_slice(r),
            PreconditionerState::Jacobi { inv_diag } => {
                for ((zi, ri), di) in z.iter_mut().zip(r).zip(inv_diag) {
                    *zi = ri * di;
                }
            }
            PreconditionerState::Ilu0 { factors, diag_pos } => ilu0_solve(factors, diag_pos, r, z),
        }
    }
}

/// ILU(0) in place on a copy of `a`: strictly lower part holds `L` (unit diagonal implied),
/// the rest holds `U`. Saad 2003, Algorithm 10.4 (IKJ variant), 0-based.
fn ilu0_factor(a: &CsrMatrix, diag_pos: &[usize]) -> Result<CsrMatrix, LinalgError> {
    let p = a.pattern.as_ref();
    let n = p.n_rows;
    let mut lu = a.clone();
    // `slot[j]` = position of (i, j) in the current row i, or usize::MAX.
    let mut slot = vec![usize::MAX; n];
    for i in 0..n {
        let (start, end) = (p.row_ptr[i], p.row_ptr[i + 1]);
        for k in start..end {
            slot[p.col_idx[k]] = k;
        }
        for kk in start..diag_pos[i] {
            let k = p.col_idx[kk];
            let pivot = lu.values[diag_pos[k]];
            if pivot == 0.0 || !pivot.is_finite() {
                return Err(LinalgError::Singular { pivot: Some(k) });
            }
            let lik = lu.values[kk] / pivot;
            lu.values[kk] = lik;
            for kj in diag_pos[k] + 1..p.row_ptr[k + 1] {
                let s = slot[p.col_idx[kj]];
                if s != usize::MAX {
                    lu.values[s] -= lik * lu.values[kj];
                }
            }
        }
        let d = lu.values[diag_pos[i]];
        if d == 0.0 || !d.is_finite() {
            return Err(LinalgError::Singular { pivot: Some(i) });
        }
        for k in start..end {
            slot[p.col_idx[k]] = usize::MAX;
        }
    }
    Ok(lu)
}

/// Solve `L U z = r` with the ILU(0) factors: forward substitution with unit `L`, then backward
/// substitution with `U`.
fn ilu0_solve(lu: &CsrMatrix, diag_pos: &[usize], r: &[f64], z: &mut [f64]) {
    let p = lu.pattern.as_ref();
    let n = p.n_rows;
    for i in 0..n {
        let mut s = r[i];
        for k in p.row_ptr[i]..diag_pos[i] {
            s -= lu.values[k] * z[p.col_idx[k]];
        }
        z[i] = s;
    }
    for i in (0..n).rev() {
        let mut s = z[i];
        for k in diag_pos[i] + 1..p.row_ptr[i + 1] {
            s -= lu.values[k] * z[p.col_idx[k]];
        }
        z[i] = s / lu.values[diag_pos[i]];
    }
}

#[cfg(test)]
mod tests {
    use std::sync::Arc;

    use super::*;

    /// On a tridiagonal matrix ILU(0) drops nothing, so it is the exact LU (Saad 2003,
    /// sec. 10.3.2: ILU(0) equals LU when the LU factors have no fill outside the pattern).
    #[test]
    fn ilu0_is_exact_on_tridiagonal() {
        let n = 12;
        let rows = (0..n)
            .map(|i: usize| (i.saturating_sub(1)..(i + 2).min(n)).collect())
            .collect();
        let pattern = Arc::new(CsrPattern::from_rows(n, rows));
        let mut a = CsrMatrix::zeros(pattern.clone());
        for i in 0..n {
            for &j in pattern.row(i) {
                let k = pattern.find(i, j).unwrap();
                a.values[k] = if i == j {
                    3.0 + i as f64 * 0.1
                } else if j > i {
                    -1.2
                } else {
                    -0.7
                };
            }
        }
        let structure = Ilu0Structure::new(&pattern).unwrap();
        let m = PreconditionerState::build(Preconditioner::Ilu0, &a, Some(&structure)).unwrap();
        let x: Vec<f64> = (0..n).map(|i| (i as f64).cos()).collect();
        let b = a.mul_vec(&x);
        let mut z = vec![0.0; n];
        m.apply(&b, &mut z);
        for (zi, xi) in z.iter().zip(&x) {
            assert!((zi - xi).abs() < 1e-13, "{zi} vs {xi}");
        }
    }

    #[test]
    fn zero_diagonal_is_singular_for_jacobi() {
        let pattern = Arc::new(CsrPattern::from_rows(2, vec![vec![0, 1], vec![0, 1]]));
        let mut a = CsrMatrix::zeros(pattern);
        a.values = vec![1.0, 2.0, 3.0, 0.0];
        let r = PreconditionerState::build(Preconditioner::Jacobi, &a, None);
        assert!(matches!(r, Err(LinalgError::Singular { pivot: Some(1) })));
    }
}

//! Preconditioned Krylov solvers: conjugate gradients ([`Cg`], SPD) and BiCGStab
//! ([`BiCgStab`], nonsymmetric); restarted GMRES lives in [`crate::gmres`].
//!
//! Life cycle as for every [`LinearSolver`]: `analyze` checks the pattern and prepares the
//! ILU(0) structure, `factor` copies the values and builds the preconditioner, `solve_in_place`
//! iterates from a zero initial guess. Convergence means `|b - A x| <= max(rel_tol |b|, abs_tol)`
//! for the true residual, which is recomputed explicitly at the end; if the recursively updated
//! residual has drifted from it, iteration continues from the true residual.

use rayon::prelude::{IndexedParallelIterator, IntoParallelRefMutIterator, ParallelIterator};

use crate::csr::{CsrMatrix, CsrPattern};
use crate::direct::{check_rhs_len, AnalysedPattern};
use crate::parallel::Parallelism;
use crate::precond::{Ilu0Structure, Preconditioner, PreconditionerState};
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// Stopping and restart parameters of the Krylov solvers.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct KrylovParams {
    /// Stop when `|b - A x| <= rel_tol |b|` ...
    pub rel_tol: f64,
    /// ... or when `|b - A x| <= abs_tol`.
    pub abs_tol: f64,
    /// Maximum number of iterations (matrix–vector products for GMRES, iterations for CG and
    /// BiCGStab) before [`LinalgError::NotConverged`].
    pub max_iter: usize,
    /// Krylov subspace dimension before GMRES restarts (ignored by CG and BiCGStab).
    pub restart: usize,
}

impl Default for KrylovParams {
    fn default() -> Self {
        KrylovParams {
            rel_tol: 1e-10,
            abs_tol: 0.0,
            max_iter: 10_000,
            restart: 50,
        }
    }
}

/// State shared by the Krylov solvers: the matrix copy and the built preconditioner.
pub(crate) struct KrylovCore {
    pub(crate) params: KrylovParams,
    pub(crate) preconditioner: Preconditioner,
    pub(crate) parallelism: Parallelism,
    pattern: Option<AnalysedPattern>,
    ilu: Option<Ilu0Structure>,
    pub(crate) matrix: Option<CsrMatrix>,
    pub(crate) precond: Option<PreconditionerState>,
}

impl KrylovCore {
    pub(crate) fn new(
        preconditioner: Preconditioner,
        params: KrylovParams,
        parallelism: Parallelism,
    ) -> Self {
        KrylovCore {
            params,
            preconditioner,
            parallelism,
            pattern: None,
            ilu: None,
            matrix: None,
            precond: None,
        }
    }

    pub(crate) fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.matrix = None;
        self.precond = None;
        self.pattern = None;
        let analysed = AnalysedPattern::new(pattern)?;
        self.ilu = match self.preconditioner {
            Preconditioner::Ilu0 => Some(Ilu0Structure::new(pattern)?),
            _ => None,
        };
        self.pattern = Some(analysed);
        Ok(())
    }

    pub(crate) fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.matrix = None;
        self.precond = None;
        self.pattern
            .as_ref()
            .ok_or_else(|| LinalgError::Usage("factor called before analyze".into()))?
            .check(matrix)?;
        self.precond = Some(PreconditionerState::build(
            self.preconditioner,
            matrix,
            self.ilu.as_ref(),
        )?);
        self.matrix = Some(matrix.clone());
        Ok(())
    }

    /// The factored matrix and preconditioner, or a usage error.
    pub(crate) fn operators(
        &self,
        rhs: &[f64],
    ) -> Result<(&CsrMatrix, &PreconditionerState), LinalgError> {
        match (&self.matrix, &self.precond) {
            (Some(a), Some(m)) => {
                check_rhs_len(a.n_rows(), rhs)?;
                Ok((a, m))
            }
            _ => Err(LinalgError::Usage(
                "solve called before a successful factor".into(),
            )),
        }
    }

    /// Absolute stopping threshold for a right-hand side of norm `b_norm`.
    pub(crate) fn threshold(&self, b_norm: f64) -> f64 {
        (self.params.rel_tol * b_norm).max(self.params.abs_tol)
    }
}

/// `y = A x`, split over rows with rayon when `parallelism` allows; each row is summed in
/// pattern order, so the result does not depend on the thread count.
pub(crate) fn spmv(a: &CsrMatrix, x: &[f64], y: &mut [f64], parallelism: Parallelism) {
    let p = a.pattern.as_ref();
    let row = |i: usize| {
        let mut s = 0.0;
        for k in p.row_ptr[i]..p.row_ptr[i + 1] {
            s += a.values[k] * x[p.col_idx[k]];
        }
        s
    };
    each_row(y, parallelism, row);
}

/// [`spmv`] with the column indices of `a`'s pattern given as `u32` (`cols`, the same
/// indices): the same sums in the same order, with a quarter less memory to read than with
/// `usize` indices (a product waits on memory).
pub(crate) fn spmv_u32(
    a: &CsrMatrix,
    cols: &[u32],
    x: &[f64],
    y: &mut [f64],
    parallelism: Parallelism,
) {
    let p = a.pattern.as_ref();
    debug_assert_eq!(cols.len(), p.col_idx.len());
    let row = |i: usize| {
        let (start, end) = (p.row_ptr[i], p.row_ptr[i + 1]);
        let mut s = 0.0;
        for (v, &c) in a.values[start..end].iter().zip(&cols[start..end]) {
            s += v * x[c as usize];
        }
        s
    };
    each_row(y, parallelism, row);
}

/// `y_i = row(i)` for every row, over blocks of rows on rayon's threads when `parallelism`
/// allows it and there are more than 2 048 rows (each row alone: the same values either way).
fn each_row(y: &mut [f64], parallelism: Parallelism, row: impl Fn(usize) -> f64 + Sync) {
    if parallelism.is_parallel() && y.len() > 2048 {
        y.par_iter_mut()
            .enumerate()
            .with_min_len(512)
            .for_each(|(i, yi)| *yi = row(i));
    } else {
        for (i, yi) in y.iter_mut().enumerate() {
            *yi = row(i);
        }
    }
}

/// Dot product (sequential, deterministic).
pub(crate) fn dot(x: &[f64], y: &[f64]) -> f64 {
    x.iter().zip(y).map(|(a, b)| a * b).sum()
}

/// Euclidean norm.
pub(crate) fn norm(x: &[f64]) -> f64 {
    dot(x, x).sqrt()
}

/// `r = b - A x`, returning `|r|`.
pub(crate) fn residual_into(
    a: &CsrMatrix,
    x: &[f64],
    b: &[f64],
    r: &mut [f64],
    parallelism: Parallelism,
) -> f64 {
    spmv(a, x, r, parallelism);
    for (ri, bi) in r.iter_mut().zip(b) {
        *ri = bi - *ri;
    }
    norm(r)
}

/// Relative residual for reporting (`|r|` when `b = 0`).
pub(crate) fn relative(r_norm: f64, b_norm: f64) -> f64 {
    if b_norm > 0.0 {
        r_norm / b_norm
    } else {
        r_norm
    }
}

/// Preconditioned conjugate gradients for symmetric positive definite `A` (Hestenes & Stiefel
/// 1952; Saad 2003, Algorithm 9.1). The preconditioner must be SPD too: Jacobi is for SPD `A`;
/// ILU(0) of a symmetric matrix is symmetric up to rounding. A non-positive curvature `pᵀAp`
/// gives [`LinalgError::Singular`] (the matrix is not positive definite).
pub struct Cg {
    core: KrylovCore,
}

impl Cg {
    /// A CG solver.
    pub fn new(
        preconditioner: Preconditioner,
        params: KrylovParams,
        parallelism: Parallelism,
    ) -> Self {
        Cg {
            core: KrylovCore::new(preconditioner, params, parallelism),
        }
    }
}

impl LinearSolver for Cg {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.core.analyze(pattern)
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.core.factor(matrix)
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let core = &self.core;
        let (a, m) = core.operators(rhs)?;
        let par = core.parallelism;
        let n = a.n_rows();
        let b = rhs.to_vec();
        let b_norm = norm(&b);
        let tol = core.threshold(b_norm);
        let x = rhs;
        x.fill(0.0);
        let (mut r, mut z, mut p, mut q) = (b.clone(), vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        let mut iterations = 0;
        loop {
            // (Re)start from the true residual.
            let r_norm = residual_into(a, x, &b, &mut r, par);
            if r_norm <= tol {
                return Ok(SolveInfo {
                    iterations,
                    residual: Some(relative(r_norm, b_norm)),
                });
            }
            if iterations >= core.params.max_iter {
                return Err(LinalgError::NotConverged {
                    iterations,
                    residual: relative(r_norm, b_norm),
                });
            }
            m.apply(&r, &mut z);
            p.copy_from_slice(&z);
            let mut rz = dot(&r, &z);
            while iterations < core.params.max_iter {
                spmv(a, &p, &mut q, par);
                let pq = dot(&p, &q);
                if pq <= 0.0 || !pq.is_finite() {
                    return Err(LinalgError::Singular { pivot: None });
                }
                let alpha = rz / pq;
                for i in 0..n {
                    x[i] += alpha * p[i];
                    r[i] -= alpha * q[i];
                }
                iterations += 1;
                if norm(&r) <= tol {
                    break;
                }
                m.apply(&r, &mut z);
                let rz_new = dot(&r, &z);
                let beta = rz_new / rz;
                rz = rz_new;
                for i in 0..n {
                    p[i] = z[i] + beta * p[i];
                }
            }
        }
    }

    fn name(&self) -> String {
        format!("cg/{}", self.core.preconditioner.name())
    }
}

/// BiCGStab for general `A` with right preconditioning (van der Vorst, SIAM J. Sci. Stat.
/// Comput. 13 (1992) 631, from memory; Saad 2003, Algorithm 7.7 and sec. 9.3.4). On a
/// breakdown (`r̂ᵀr = 0`, `r̂ᵀv = 0` or `ω = 0`) the method restarts from the true residual.
pub struct BiCgStab {
    core: KrylovCore,
}

impl BiCgStab {
    /// A BiCGStab solver.
    pub fn new(
        preconditioner: Preconditioner,
        params: KrylovParams,
        parallelism: Parallelism,
    ) -> Self {
        BiCgStab {
            core: KrylovCore::new(preconditioner, params, parallelism),
        }
    }
}

impl LinearSolver for BiCgStab {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.core.analyze(pattern)
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.core.factor(matrix)
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let core = &self.core;
        let (a, m) = core.operators(rhs)?;
        let par = core.parallelism;
        let n = a.n_rows();
        let b = rhs.to_vec();
        let b_norm = norm(&b);
        let tol = core.threshold(b_norm);
        let x = rhs;
        x.fill(0.0);
        let mut r = b.clone();
        let (mut r_hat, mut p, mut v) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        let (mut p_hat, mut s, mut s_hat, mut t) =
            (vec![0.0; n], vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        let mut iterations = 0;
        let mut stalled_restarts = 0;
        loop {
            let r_norm = residual_into(a, x, &b, &mut r, par);
            if r_norm <= tol {
                return Ok(SolveInfo {
                    iterations,
                    residual: Some(relative(r_norm, b_norm)),
                });
            }
            if iterations >= core.params.max_iter || stalled_restarts > 3 {
                return Err(LinalgError::NotConverged {
                    iterations,
                    residual: relative(r_norm, b_norm),
                });
            }
            let start_iterations = iterations;
            r_hat.copy_from_slice(&r);
            let (mut rho, mut alpha, mut omega) = (1.0, 1.0, 1.0);
            p.fill(0.0);
            v.fill(0.0);
            while iterations < core.params.max_iter {
                let rho_new = dot(&r_hat, &r);
                if rho_new == 0.0 || !rho_new.is_finite() {
                    break;
                }
                let beta = (rho_new / rho) * (alpha / omega);
                rho = rho_new;
                for i in 0..n {
                    p[i] = r[i] + beta * (p[i] - omega * v[i]);
                }
                m.apply(&p, &mut p_hat);
                spmv(a, &p_hat, &mut v, par);
                let rv = dot(&r_hat, &v);
                if rv == 0.0 || !rv.is_finite() {
                    break;
                }
                alpha = rho / rv;
                for i in 0..n {
                    s[i] = r[i] - alpha * v[i];
                }
                iterations += 1;
                if norm(&s) <= tol {
                    for i in 0..n {
                        x[i] += alpha * p_hat[i];
                    }
                    break;
                }
                m.apply(&s, &mut s_hat);
                spmv(a, &s_hat, &mut t, par);
                let tt = dot(&t, &t);
                omega = if tt > 0.0 { dot(&t, &s) / tt } else { 0.0 };
                for i in 0..n {
                    x[i] += alpha * p_hat[i] + omega * s_hat[i];
                    r[i] = s[i] - omega * t[i];
                }
                if omega == 0.0 || !omega.is_finite() || norm(&r) <= tol {
                    break;
                }
            }
            stalled_restarts = if iterations == start_iterations {
                stalled_restarts + 1
            } else {
                0
            };
        }
    }

    fn name(&self) -> String {
        format!("bicgstab/{}", self.core.preconditioner.name())
    }
}

#[cfg(test)]
mod tests {
    use std::sync::Arc;

    use super::*;
    use crate::csr::CsrPattern;

    /// The `u32`-index product is the `usize`-index one to the last bit, sequential and
    /// threaded.
    #[test]
    fn u32_index_product_is_the_usize_one() {
        let n = 5000;
        let rows: Vec<Vec<usize>> = (0..n)
            .map(|i| {
                let mut r: Vec<usize> =
                    [i, (i * 7 + 3) % n, (i * 13 + 1) % n, (i + n - 1) % n].to_vec();
                r.sort_unstable();
                r.dedup();
                r
            })
            .collect();
        let mut a = CsrMatrix::zeros(Arc::new(CsrPattern::from_rows(n, rows)));
        for (k, v) in a.values.iter_mut().enumerate() {
            *v = ((k * 37 % 101) as f64 - 50.0) / 7.3;
        }
        let cols: Vec<u32> = a.pattern.col_idx.iter().map(|&c| c as u32).collect();
        let x: Vec<f64> = (0..n).map(|i| ((i * 11 % 17) as f64).sin()).collect();
        for par in [Parallelism::Sequential, Parallelism::Rayon { threads: 2 }] {
            let (mut y, mut y32) = (vec![0.0; n], vec![0.0; n]);
            spmv(&a, &x, &mut y, par);
            spmv_u32(&a, &cols, &x, &mut y32, par);
            assert!(y.iter().zip(&y32).all(|(p, q)| p.to_bits() == q.to_bits()));
        }
    }
}

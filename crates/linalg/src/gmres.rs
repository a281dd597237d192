//! Restarted GMRES with right preconditioning.

use crate::csr::{CsrMatrix, CsrPattern};
use crate::krylov::{norm, relative, spmv, KrylovCore, KrylovParams};
use crate::parallel::Parallelism;
use crate::precond::Preconditioner;
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// GMRES(m) for general `A` (Saad & Schultz, SIAM J. Sci. Stat. Comput. 7 (1986) 856, from
/// memory; Saad 2003, Algorithm 6.9 with Givens rotations as in sec. 6.5.3, right
/// preconditioning as in Algorithm 9.5). Right preconditioning keeps the minimised quantity the
/// true residual `|b - A x|`. Orthogonalisation is modified Gram–Schmidt. `restart` (m) is
/// taken from [`KrylovParams`]; each matrix–vector product counts as one iteration. The
/// preconditioned vectors `M v_k` are kept for the update (up to `m` vectors of length `n`
/// beside the basis), so a cycle of `k` iterations applies `M` `k` times, not `k + 1`.
pub struct Gmres {
    core: KrylovCore,
}

impl Gmres {
    /// A GMRES(m) solver with `m = params.restart` (at least 1).
    pub fn new(
        preconditioner: Preconditioner,
        params: KrylovParams,
        parallelism: Parallelism,
    ) -> Self {
        Gmres {
            core: KrylovCore::new(preconditioner, params, parallelism),
        }
    }
}

/// A Givens rotation `[c s; -s c]` that zeroes the second component of `(a, b)`.
fn givens(a: f64, b: f64) -> (f64, f64) {
    if b == 0.0 {
        (1.0, 0.0)
    } else {
        let h = a.hypot(b);
        (a / h, b / h)
    }
}

impl LinearSolver for Gmres {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.core.analyze(pattern)
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.core.factor(matrix)
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let core = &self.core;
        let (a, m_op) = core.operators(rhs)?;
        let mut precondition = |r: &[f64], z: &mut [f64]| {
            m_op.apply(r, z);
            Ok(())
        };
        let par = core.parallelism;
        let mut product = |x: &[f64], y: &mut [f64]| spmv(a, x, y, par);
        gmres_iterate(&mut product, &mut precondition, &core.params, rhs)
    }

    fn name(&self) -> String {
        format!(
            "gmres({})/{}",
            self.core.params.restart.max(1),
            self.core.preconditioner.name()
        )
    }
}

/// A right preconditioner `z = M r` given as a closure that may fail.
pub(crate) type PreconditionFn<'a> = dyn FnMut(&[f64], &mut [f64]) -> Result<(), LinalgError> + 'a;

/// A matrix–vector product `y = A x` given as a closure.
pub(crate) type ProductFn<'a> = dyn FnMut(&[f64], &mut [f64]) + 'a;

/// The GMRES(m) iteration of [`Gmres`] for any operator `y = A x` and right preconditioner
/// `z = M r` (given as closures, the preconditioner may fail): on entry `rhs` holds `b`, on
/// exit `x` (zero initial guess).
pub(crate) fn gmres_iterate(
    product: &mut ProductFn<'_>,
    precondition: &mut PreconditionFn<'_>,
    params: &KrylovParams,
    rhs: &mut [f64],
) -> Result<SolveInfo, LinalgError> {
    let n = rhs.len();
    let m = params.restart.max(1);
    let b = rhs.to_vec();
    let b_norm = norm(&b);
    let tol = (params.rel_tol * b_norm).max(params.abs_tol);
    let x = rhs;
    x.fill(0.0);

    // Krylov basis V (m + 1 vectors), Hessenberg H stored by columns (column j has j + 2
    // entries), rotations (c, s), and the rotated right-hand side g.
    // Allocated as the cycle grows, like `zs` below: a solve that converges in a few iterations
    // should not pay for zeroing `m + 1` vectors it never uses.
    let mut v: Vec<Vec<f64>> = vec![vec![0.0; n]];
    // The preconditioned basis `z_k = M v_k`, kept so that the update `x += M V y` is
    // `x += Z y` without another application of `M` (as flexible GMRES keeps it, Saad 2003,
    // sec. 9.4.1; for a fixed `M` the same iterate). Allocated as the cycle grows.
    let mut zs: Vec<Vec<f64>> = Vec::new();
    let mut h = vec![vec![0.0; m + 1]; m];
    let (mut cs, mut sn) = (vec![0.0; m], vec![0.0; m]);
    let mut g = vec![0.0; m + 1];
    let (mut r, mut w) = (vec![0.0; n], vec![0.0; n]);
    let mut iterations = 0;
    let mut x_is_zero = true;
    loop {
        let beta = if x_is_zero {
            // r = b − A·0: no product needed.
            r.copy_from_slice(&b);
            b_norm
        } else {
            product(x, &mut r);
            for (ri, bi) in r.iter_mut().zip(&b) {
                *ri = bi - *ri;
            }
            norm(&r)
        };
        if beta <= tol {
            return Ok(SolveInfo {
                iterations,
                residual: Some(relative(beta, b_norm)),
            });
        }
        if iterations >= params.max_iter {
            return Err(LinalgError::NotConverged {
                iterations,
                residual: relative(beta, b_norm),
            });
        }
        for (vi, ri) in v[0].iter_mut().zip(&r) {
            *vi = ri / beta;
        }
        g.fill(0.0);
        g[0] = beta;
        let mut k = 0; // number of completed Arnoldi steps in this cycle
        while k < m && iterations < params.max_iter {
            // w = A M v_k
            if zs.len() <= k {
                zs.push(vec![0.0; n]);
            }
            precondition(&v[k], &mut zs[k])?;
            product(&zs[k], &mut w);
            iterations += 1;
            for i in 0..=k {
                let hik = crate::krylov::dot(&w, &v[i]);
                h[k][i] = hik;
                for (wj, vj) in w.iter_mut().zip(&v[i]) {
                    *wj -= hik * vj;
                }
            }
            let h_next = norm(&w);
            h[k][k + 1] = h_next;
            if h_next > 0.0 {
                if v.len() <= k + 1 {
                    v.push(vec![0.0; n]);
                }
                for (vj, wj) in v[k + 1].iter_mut().zip(&w) {
                    *vj = wj / h_next;
                }
            }
            // Apply the earlier rotations to the new column, then a new one to zero
            // H[k+1][k].
            for i in 0..k {
                let (a0, a1) = (h[k][i], h[k][i + 1]);
                h[k][i] = cs[i] * a0 + sn[i] * a1;
                h[k][i + 1] = -sn[i] * a0 + cs[i] * a1;
            }
            let (c, s) = givens(h[k][k], h[k][k + 1]);
            cs[k] = c;
            sn[k] = s;
            h[k][k] = c * h[k][k] + s * h[k][k + 1];
            h[k][k + 1] = 0.0;
            g[k + 1] = -s * g[k];
            g[k] *= c;
            k += 1;
            // |g[k]| is the residual norm of the current minimiser (Saad 2003, Prop. 6.9).
            if g[k].abs() <= tol || h_next == 0.0 {
                break;
            }
        }
        // Solve the k x k upper triangular system H y = g and update x += M (V y) = Z y.
        let mut y = vec![0.0; k];
        for i in (0..k).rev() {
            let mut s = g[i];
            for j in i + 1..k {
                s -= h[j][i] * y[j];
            }
            if h[i][i] == 0.0 {
                // Singular Hessenberg block: A M is singular on the Krylov space.
                return Err(LinalgError::Singular { pivot: None });
            }
            y[i] = s / h[i][i];
        }
        w.fill(0.0);
        for (yi, zi) in y.iter().zip(&zs) {
            for (wj, zj) in w.iter_mut().zip(zi) {
                *wj += yi * zj;
            }
        }
        for (xi, wi) in x.iter_mut().zip(&w) {
            *xi += wi;
        }
        x_is_zero = false;
    }
}

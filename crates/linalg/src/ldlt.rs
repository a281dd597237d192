//! Sparse symmetric indefinite factorisation on faer, with two pivoting strategies.
//!
//! * [`LdltPivoting::IntranodeBunchKaufman`]: `A = P L B Lᵀ Pᵀ` with Bunch–Kaufman 1x1/2x2
//!   pivots restricted to each supernode. General, but pivots are never delayed to a parent
//!   supernode, so a fill-reducing ordering can leave a supernode without an acceptable pivot
//!   (typical for saddle-point matrices with a zero block). faer reports no error then; the
//!   breakdown is detected as non-finite numbers in a probe solve after factorisation and
//!   returned as [`LinalgError::Singular`] (so a nonsingular saddle-point matrix can be reported
//!   singular; use `Signed` or the natural ordering for those). The probe also rejects
//!   matrices singular to working precision (condition-number lower bound `>= 1/ε`).
//! * [`LdltPivoting::Signed`]: `LDLᵀ` without pivoting, where each pivot must have a sign known
//!   in advance (+ for, e.g., displacements, − for Lagrange multipliers or a negative definite
//!   block). A pivot with the wrong sign or below `epsilon` in magnitude is replaced by
//!   `±delta` (faer's dynamic regularisation). Exact for quasi-definite matrices, which have an
//!   `LDLᵀ` factorisation for every symmetric ordering (Vanderbei, SIAM J. Optim. 5 (1995) 100,
//!   from memory); for a perturbed factorisation the solve applies iterative refinement
//!   (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., SIAM 2002, ch. 12) and
//!   reports [`LinalgError::NotConverged`] if it cannot reach `refinement_tol`.

use faer::dyn_stack::MemStack;
use faer::linalg::cholesky::ldlt::factor::{LdltError, LdltRegularization};
use faer::perm::PermRef;
use faer::sparse::linalg::cholesky::{IntranodeLbltRef, LdltRef, SymbolicCholeskyRaw};
use faer::sparse::linalg::SupernodalThreshold;
use faer::{Conj, MatMut};

use crate::cholesky::{
    analyze_symmetric, faer_view, missing_analysis, missing_factor, SymbolicState, FAER_SIDE,
};
use crate::csr::{CsrMatrix, CsrPattern};
use crate::direct::{
    check_finite, check_probe, check_rhs_len, probe_rhs, DirectParams, DirectStats,
};
use crate::ordering::Permutation;
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// Parameters of the signed (static-pivot, regularised) `LDLᵀ`.
#[derive(Clone, Debug, PartialEq)]
pub struct SignedPivots {
    /// Expected sign of each pivot in original numbering: `+1` or `-1` (0: no regularisation
    /// for that unknown).
    pub signs: Vec<i8>,
    /// Replacement magnitude for a pivot with the wrong sign or `|d| <= epsilon`.
    pub delta: f64,
    /// Threshold below which a pivot counts as too small.
    pub epsilon: f64,
    /// Iterative refinement stops when `|b - A x| <= refinement_tol |b|` ...
    pub refinement_tol: f64,
    /// ... or after this many correction steps ([`LinalgError::NotConverged`] if the tolerance
    /// was not met).
    pub max_refinement_steps: usize,
}

impl SignedPivots {
    /// Signs with default regularisation: `delta = 1e-10`, `epsilon = 1e-13` (absolute, for an
    /// equilibrated matrix with entries of order one), refinement to `1e-12` in at most 10 steps.
    pub fn with_signs(signs: Vec<i8>) -> Self {
        SignedPivots {
            signs,
            delta: 1e-10,
            epsilon: 1e-13,
            refinement_tol: 1e-12,
            max_refinement_steps: 10,
        }
    }
}

/// How [`FaerLdlt`] chooses its pivots.
#[derive(Clone, Debug, PartialEq)]
pub enum LdltPivoting {
    /// Bunch–Kaufman within each supernode (the default; no extra input needed).
    IntranodeBunchKaufman,
    /// Static pivots with known signs and dynamic regularisation, plus iterative refinement.
    Signed(SignedPivots),
}

/// Sparse symmetric indefinite direct solver (see the module documentation for the two
/// pivoting strategies and their limits).
pub struct FaerLdlt {
    params: DirectParams,
    pivoting: LdltPivoting,
    state: Option<SymbolicState>,
    l_values: Vec<f64>,
    subdiag: Vec<f64>,
    pivot_fwd: Vec<usize>,
    pivot_inv: Vec<usize>,
    /// Copy of the factored matrix, for iterative refinement (signed pivoting only).
    matrix: Option<CsrMatrix>,
    factored: bool,
    stats: DirectStats,
    /// Index structure of a supernodal factor for [`SupernodalSolve`] (None: simplicial).
    fast: Option<SupernodalSolve>,
    /// Apply the factor from a single-precision copy of `L` ([`FaerLdlt::set_single_precision_solves`]).
    single: bool,
    /// `L` in single precision, valid for the current factorisation when `single_ready`.
    l_single: Vec<f32>,
    single_ready: bool,
}

impl FaerLdlt {
    /// A symmetric indefinite solver with intranodal Bunch–Kaufman pivoting.
    pub fn new(params: DirectParams) -> Self {
        Self::with_pivoting(params, LdltPivoting::IntranodeBunchKaufman)
    }

    /// A symmetric indefinite solver with the given pivoting strategy.
    pub fn with_pivoting(params: DirectParams, pivoting: LdltPivoting) -> Self {
        FaerLdlt {
            params,
            pivoting,
            state: None,
            l_values: Vec::new(),
            subdiag: Vec::new(),
            pivot_fwd: Vec::new(),
            pivot_inv: Vec::new(),
            matrix: None,
            factored: false,
            stats: DirectStats::default(),
            fast: None,
            single: false,
            l_single: Vec::new(),
            single_ready: false,
        }
    }

    /// Apply the factor from a copy of `L` rounded to single precision (sequential supernodal
    /// factors only; otherwise ignored). Halves the memory read by a solve, which is what a
    /// solve with a large factor waits for. The result is then an approximate inverse accurate
    /// to about `1e-7` times the condition number: meant for a preconditioner inside a Krylov
    /// method that works in double precision, where it costs at most an iteration or two (the
    /// mixed-precision idea of Carson and Higham, SIAM J. Sci. Comput. 40 (2018) A817, from
    /// memory), not for a direct solve. The factorisation itself, and its singularity probe,
    /// stay in double precision.
    pub fn set_single_precision_solves(&mut self, on: bool) {
        self.single = on;
        if !on {
            self.single_ready = false;
            self.l_single = Vec::new();
        }
    }

    /// Counts of analyses and factorisations, and the size of `L`.
    pub fn stats(&self) -> DirectStats {
        self.stats
    }

    /// The fill-reducing permutation of the last analysis.
    pub fn permutation(&self) -> Option<&Permutation> {
        self.state.as_ref().map(|s| &s.perm)
    }

    /// One application of the factors: `rhs := (factor)⁻¹ rhs`.
    pub(crate) fn apply_factor(&mut self, rhs: &mut [f64]) -> Result<(), LinalgError> {
        let state = self.state.as_mut().ok_or_else(missing_factor)?;
        let n = state.pattern.n();
        let par = self.params.parallelism.to_faer();
        if let (Some(fast), true) = (self.fast.as_mut(), par == faer::Par::Seq) {
            let subdiag = match self.pivoting {
                LdltPivoting::IntranodeBunchKaufman => Some(self.subdiag.as_slice()),
                LdltPivoting::Signed(_) => None,
            };
            if self.single_ready {
                fast.solve(&self.l_single, subdiag, rhs);
            } else {
                fast.solve(&self.l_values, subdiag, rhs);
            }
            return check_finite(rhs);
        }
        let stack = MemStack::new(&mut state.mem);
        let rhs_mat = MatMut::from_column_major_slice_mut(rhs, n, 1);
        match self.pivoting {
            LdltPivoting::IntranodeBunchKaufman => {
                let perm = PermRef::new_checked(&self.pivot_fwd, &self.pivot_inv, n);
                IntranodeLbltRef::new(&state.symbolic, &self.l_values, &self.subdiag, perm)
                    .solve_in_place_with_conj(Conj::No, rhs_mat, par, stack);
            }
            LdltPivoting::Signed(_) => {
                LdltRef::new(&state.symbolic, &self.l_values).solve_in_place_with_conj(
                    Conj::No,
                    rhs_mat,
                    par,
                    stack,
                );
            }
        }
        check_finite(rhs)
    }

    /// Iterative refinement `x += F⁻¹ (b - A x)` until the residual meets the tolerance.
    fn refine(&mut self, b: &[f64], x: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let LdltPivoting::Signed(ref sp) = self.pivoting else {
            return Ok(SolveInfo {
                iterations: 0,
                residual: None,
            });
        };
        let (tol, max_steps) = (sp.refinement_tol, sp.max_refinement_steps);
        let a = self.matrix.take().ok_or_else(missing_factor)?;
        let b_norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        let mut r = vec![0.0; b.len()];
        let mut steps = 0;
        let result = loop {
            a.mul_vec_into(x, &mut r);
            for (ri, bi) in r.iter_mut().zip(b) {
                *ri = bi - *ri;
            }
            let r_norm = r.iter().map(|v| v * v).sum::<f64>().sqrt();
            let rel = if b_norm > 0.0 {
                r_norm / b_norm
            } else {
                r_norm
            };
            if rel <= tol {
                break Ok(SolveInfo {
                    iterations: steps,
                    residual: Some(rel),
                });
            }
            if steps >= max_steps {
                break Err(LinalgError::NotConverged {
                    iterations: steps,
                    residual: rel,
                });
            }
            if let Err(e) = self.apply_factor(&mut r) {
                break Err(e);
            }
            for (xi, di) in x.iter_mut().zip(&r) {
                *xi += di;
            }
            steps += 1;
        };
        self.matrix = Some(a);
        result
    }
}

impl LinearSolver for FaerLdlt {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.state = None;
        self.matrix = None;
        self.factored = false;
        let par = self.params.parallelism.to_faer();
        let state = match &self.pivoting {
            // faer's simplicial fallback of the LBLᵀ routine is an unpivoted LDLᵀ whose errors
            // it discards (faer 0.24.4, cholesky.rs, factorize_numeric_intranode_lblt), so the
            // supernodal variant is forced.
            LdltPivoting::IntranodeBunchKaufman => analyze_symmetric(
                pattern,
                self.params,
                SupernodalThreshold::FORCE_SUPERNODAL,
                |s| s.factorize_numeric_intranode_lblt_scratch::<f64>(par, Default::default()),
            )?,
            LdltPivoting::Signed(sp) => {
                if sp.signs.len() != pattern.n_rows {
                    return Err(LinalgError::Usage(format!(
                        "{} pivot signs for {} unknowns",
                        sp.signs.len(),
                        pattern.n_rows
                    )));
                }
                analyze_symmetric(pattern, self.params, SupernodalThreshold::AUTO, |s| {
                    s.factorize_numeric_ldlt_scratch::<f64>(par, Default::default())
                })?
            }
        };
        let n = pattern.n_rows;
        self.l_values = vec![0.0; state.symbolic.len_val()];
        self.subdiag = vec![0.0; n];
        self.pivot_fwd = (0..n).collect();
        self.pivot_inv = (0..n).collect();
        self.stats.n_analyses += 1;
        self.stats.factor_nnz = state.symbolic.len_val();
        self.fast = SupernodalSolve::new(&state.symbolic);
        self.state = Some(state);
        Ok(())
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.factored = false;
        self.single_ready = false;
        self.matrix = None;
        let state = self.state.as_mut().ok_or_else(missing_analysis)?;
        state.pattern.check(matrix)?;
        let n = state.pattern.n();
        let a = faer_view(&matrix.pattern, &matrix.values);
        let par = self.params.parallelism.to_faer();
        let stack = MemStack::new(&mut state.mem);
        match &self.pivoting {
            LdltPivoting::IntranodeBunchKaufman => {
                state.symbolic.factorize_numeric_intranode_lblt(
                    &mut self.l_values,
                    &mut self.subdiag,
                    &mut self.pivot_fwd,
                    &mut self.pivot_inv,
                    a,
                    FAER_SIDE,
                    par,
                    stack,
                    Default::default(),
                );
            }
            LdltPivoting::Signed(sp) => {
                let regularization = LdltRegularization {
                    dynamic_regularization_signs: Some(&sp.signs),
                    dynamic_regularization_delta: sp.delta,
                    dynamic_regularization_epsilon: sp.epsilon,
                };
                let result = state.symbolic.factorize_numeric_ldlt(
                    &mut self.l_values,
                    a,
                    FAER_SIDE,
                    regularization,
                    par,
                    stack,
                    Default::default(),
                );
                if let Err(LdltError::ZeroPivot { index }) = result {
                    return Err(LinalgError::Singular {
                        pivot: state.perm.fwd.get(index).copied(),
                    });
                }
                self.matrix = Some(matrix.clone());
            }
        }
        self.stats.n_factorizations += 1;
        if let Some(fast) = self.fast.as_mut() {
            match self.pivoting {
                LdltPivoting::IntranodeBunchKaufman => {
                    fast.set_pivots(Some((&self.pivot_fwd, &self.pivot_inv)))
                }
                LdltPivoting::Signed(_) => fast.set_pivots(None),
            }
        }
        // Probe solve: a zero pivot leaves infinities or NaNs in the factor, a rounding-level
        // pivot a huge solution (see `check_probe`).
        let b = probe_rhs(n);
        let mut x = b.clone();
        self.apply_factor(&mut x)?;
        check_probe(matrix, &b, &x)?;
        if self.single && self.fast.is_some() {
            // Round `L` once per factorisation; an entry beyond the single-precision range
            // keeps this factorisation in double precision.
            self.l_single.clear();
            self.l_single
                .extend(self.l_values.iter().map(|&v| v as f32));
            self.single_ready = self.l_single.iter().all(|v| v.is_finite());
        }
        self.factored = true;
        Ok(())
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let n = self.state.as_ref().ok_or_else(missing_factor)?.pattern.n();
        if !self.factored {
            return Err(missing_factor());
        }
        check_rhs_len(n, rhs)?;
        match self.pivoting {
            LdltPivoting::IntranodeBunchKaufman => {
                self.apply_factor(rhs)?;
                Ok(SolveInfo {
                    iterations: 0,
                    residual: None,
                })
            }
            LdltPivoting::Signed(_) => {
                let b = rhs.to_vec();
                self.apply_factor(rhs)?;
                self.refine(&b, rhs)
            }
        }
    }

    fn name(&self) -> String {
        let kind = match self.pivoting {
            LdltPivoting::IntranodeBunchKaufman => "faer-lblt",
            LdltPivoting::Signed(_) => "faer-ldlt-signed",
        };
        format!("{kind}/{}", self.params.ordering.name())
    }
}

/// One solve with a supernodal `L D Lᵀ` (or intranodal `L B Lᵀ`) factor of faer, written as
/// plain loops over the supernodes.
///
/// faer's own solve (faer 0.24.4, `solve_in_place_no_numeric_permute_with_conj`) took a
/// quarter to a third of the spinodal and charging-particle benchmarks (docs/performance.md).
/// It waits on memory: it applies the pivots in a pass of its own, which misses the cache once
/// per column (the diagonal entries lie a whole supernode block apart), and it reads `L` in
/// double precision. This solve does the same operations, in the same order of supernodes, with
/// the column-oriented loops of a sparse triangular solve (Davis, Direct Methods for Sparse
/// Linear Systems, SIAM 2006, sec. 3.1, from memory), applies each supernode's pivots in the
/// forward pass while its block is in cache, and can read a single-precision copy of `L`
/// (measured: the plain loops alone were no faster than faer's calls; the fused pivots and the
/// copy were). Sums are formed in a different order than in faer's kernels, so in double
/// precision the results differ from faer's solve by rounding only.
struct SupernodalSolve {
    /// First column of each supernode, and one past the last (`n_supernodes + 1` entries).
    begin: Vec<usize>,
    /// Start of each supernode's values (column-major, `(size + rows) × size`).
    val_ptr: Vec<usize>,
    /// Start of each supernode's off-diagonal rows in `rows`.
    row_ptr: Vec<usize>,
    /// Off-diagonal row indices as faer stores them (before the pivoting permutation).
    raw_rows: Vec<usize>,
    /// The same rows after the intranodal pivoting permutation of the last factorisation.
    rows: Vec<usize>,
    /// Fill-reducing permutation: `fill_fwd[i]` is the original index of position `i`.
    fill_fwd: Vec<usize>,
    /// Combined gather for the right-hand side and scatter for the solution.
    gather: Vec<usize>,
    scatter: Vec<usize>,
    x: Vec<f64>,
    /// Work space of the longest supernode row list.
    tmp: Vec<f64>,
}

impl SupernodalSolve {
    fn new(symbolic: &faer::sparse::linalg::cholesky::SymbolicCholesky<usize>) -> Option<Self> {
        let SymbolicCholeskyRaw::Supernodal(sn) = symbolic.raw() else {
            return None;
        };
        let n = sn.nrows();
        let ns = sn.n_supernodes();
        let mut begin: Vec<usize> = sn.supernode_begin().to_vec();
        begin.push(sn.supernode_end().last().copied().unwrap_or(0));
        let val_ptr = sn.col_ptr_for_val()[..=ns].to_vec();
        let mut row_ptr = Vec::with_capacity(ns + 1);
        let mut raw_rows = Vec::new();
        row_ptr.push(0);
        for s in 0..ns {
            raw_rows.extend_from_slice(sn.supernode(s).pattern());
            row_ptr.push(raw_rows.len());
        }
        let max_rows = (0..ns)
            .map(|s| row_ptr[s + 1] - row_ptr[s])
            .max()
            .unwrap_or(0);
        let fill_fwd = match symbolic.perm() {
            Some(p) => p.arrays().0.to_vec(),
            None => (0..n).collect(),
        };
        let mut out = SupernodalSolve {
            begin,
            val_ptr,
            row_ptr,
            rows: raw_rows.clone(),
            raw_rows,
            gather: fill_fwd.clone(),
            scatter: vec![0; n],
            fill_fwd,
            x: vec![0.0; n],
            tmp: vec![0.0; max_rows],
        };
        out.set_pivots(None);
        Some(out)
    }

    /// Compose the fill-reducing permutation with the pivoting permutation of the last
    /// factorisation (`(forward, inverse)`; None: no pivoting).
    fn set_pivots(&mut self, pivots: Option<(&[usize], &[usize])>) {
        let n = self.fill_fwd.len();
        match pivots {
            Some((fwd, inv)) => {
                for i in 0..n {
                    self.gather[i] = self.fill_fwd[fwd[i]];
                }
                for (r, &raw) in self.rows.iter_mut().zip(&self.raw_rows) {
                    *r = inv[raw];
                }
            }
            None => {
                self.gather.copy_from_slice(&self.fill_fwd);
                self.rows.copy_from_slice(&self.raw_rows);
            }
        }
        for (i, &g) in self.gather.iter().enumerate() {
            self.scatter[g] = i;
        }
    }

    /// `rhs := (P L B Lᵀ Pᵀ)⁻¹ rhs`; `subdiag` holds the 2x2 pivots' off-diagonal entries
    /// (None: a diagonal `D`).
    fn solve<V: Copy + Into<f64>>(
        &mut self,
        values: &[V],
        subdiag: Option<&[f64]>,
        rhs: &mut [f64],
    ) {
        let x = &mut self.x;
        for (xi, &g) in x.iter_mut().zip(&self.gather) {
            *xi = rhs[g];
        }
        let ns = self.begin.len() - 1;
        // Forward, one supernode at a time: its unit lower triangle, its rows below
        // (accumulated column by column in `tmp`, contiguous in the column-major values, then
        // scattered), then its pivots (`D` or `B`), whose entries no later supernode changes;
        // applying them here, while the supernode's values are in cache, saves a pass.
        let tmp = &mut self.tmp;
        for s in 0..ns {
            let (c0, m) = (self.begin[s], self.begin[s + 1] - self.begin[s]);
            let rows = &self.rows[self.row_ptr[s]..self.row_ptr[s + 1]];
            let p = rows.len();
            let ld = m + p;
            let v = &values[self.val_ptr[s]..self.val_ptr[s + 1]];
            let t = &mut tmp[..p];
            t.fill(0.0);
            for j in 0..m {
                let col = &v[j * ld..(j + 1) * ld];
                let xj = x[c0 + j];
                for i in j + 1..m {
                    x[c0 + i] -= col[i].into() * xj;
                }
                for (ti, &l) in t.iter_mut().zip(&col[m..]) {
                    *ti += l.into() * xj;
                }
            }
            for (&r, &ti) in rows.iter().zip(t.iter()) {
                x[r] -= ti;
            }
            // 1x1 pivots, and 2x2 pivots where `subdiag` is nonzero (evaluated as in faer
            // 0.24.4's `solve_in_place_no_numeric_permute_with_conj`).
            let mut j = 0;
            while j < m {
                let i = c0 + j;
                let e = subdiag.map_or(0.0, |sd| sd[i]);
                if e == 0.0 {
                    x[i] *= v[j * ld + j].into().recip();
                    j += 1;
                } else {
                    let d21 = e.recip();
                    let d11 = d21 * v[j * ld + j].into();
                    let d22 = d21 * v[(j + 1) * ld + j + 1].into();
                    let denom = (d11 * d22 - 1.0).recip();
                    let xk = x[i] * d21;
                    let xk1 = x[i + 1] * d21;
                    x[i] = (d22 * xk - xk1) * denom;
                    x[i + 1] = (d11 * xk1 - xk) * denom;
                    j += 2;
                }
            }
        }
        // Backward, supernodes in reverse: the rows below (gathered once into `tmp`; they
        // belong to later supernodes, already final), column by column in storage order, then
        // the transposed unit triangle from its last column.
        for s in (0..ns).rev() {
            let (c0, m) = (self.begin[s], self.begin[s + 1] - self.begin[s]);
            let rows = &self.rows[self.row_ptr[s]..self.row_ptr[s + 1]];
            let p = rows.len();
            let ld = m + p;
            let v = &values[self.val_ptr[s]..self.val_ptr[s + 1]];
            let t = &mut tmp[..p];
            for (ti, &r) in t.iter_mut().zip(rows) {
                *ti = x[r];
            }
            for j in 0..m {
                x[c0 + j] -= dot(&v[j * ld + m..(j + 1) * ld], t);
            }
            for j in (0..m).rev() {
                let col = &v[j * ld..j * ld + m];
                let mut acc = 0.0;
                for i in j + 1..m {
                    acc += col[i].into() * x[c0 + i];
                }
                x[c0 + j] -= acc;
            }
        }
        for (r, &sc) in rhs.iter_mut().zip(&self.scatter) {
            *r = x[sc];
        }
    }
}

/// Dot product in four independent partial sums (so that it vectorises).
#[inline]
fn dot<V: Copy + Into<f64>>(a: &[V], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a4, ar) = a[..n].split_at(n - n % 4);
    let (b4, br) = b[..n].split_at(n - n % 4);
    let mut s = [0.0; 4];
    for (ca, cb) in a4.chunks_exact(4).zip(b4.chunks_exact(4)) {
        for k in 0..4 {
            s[k] += ca[k].into() * cb[k];
        }
    }
    let mut tail = 0.0;
    for (x, y) in ar.iter().zip(br) {
        tail += (*x).into() * y;
    }
    (s[0] + s[1]) + (s[2] + s[3]) + tail
}

#[cfg(test)]
mod tests {
    use std::sync::Arc;

    use super::*;
    use crate::ordering::Ordering;

    /// Symmetric matrix from `(row, col, value)` triplets of its lower triangle (mirrored).
    fn symmetric(n: usize, lower: &[(usize, usize, f64)]) -> CsrMatrix {
        let mut rows = vec![Vec::new(); n];
        for &(i, j, _) in lower {
            rows[i].push(j);
            rows[j].push(i);
        }
        for r in &mut rows {
            r.sort_unstable();
            r.dedup();
        }
        let mut a = CsrMatrix::zeros(Arc::new(CsrPattern::from_rows(n, rows)));
        for &(i, j, v) in lower {
            let k = a.pattern.find(i, j).unwrap();
            a.values[k] += v;
            if i != j {
                let k = a.pattern.find(j, i).unwrap();
                a.values[k] += v;
            }
        }
        a
    }

    /// The symmetric form of a Cahn–Hilliard step (docs/theory.md §12) on an `nx × ny × nz`
    /// grid with a seven-point Laplacian `K`: per node a `c` and a `μ` unknown,
    /// `[−(f'' I + κ K), I; I, K/a0 + εI]`. With `f''` close to `−κ · degree` (the spinodal
    /// region) the `c` diagonal is small against the coupling, and Bunch–Kaufman picks 2x2
    /// pivots.
    fn cahn_hilliard_form(dims: [usize; 3], fpp: f64) -> CsrMatrix {
        let (kappa, a0) = (0.7, 40.0);
        let [nx, ny, nz] = dims;
        let node = |i: usize, j: usize, k: usize| (k * ny + j) * nx + i;
        let mut lower = Vec::new();
        for k in 0..nz {
            for j in 0..ny {
                for i in 0..nx {
                    let p = node(i, j, k);
                    let (c, mu) = (2 * p, 2 * p + 1);
                    let mut deg = 0.0;
                    for (ii, jj, kk, inside) in [
                        (i + 1, j, k, i + 1 < nx),
                        (i, j + 1, k, j + 1 < ny),
                        (i, j, k + 1, k + 1 < nz),
                        (i.wrapping_sub(1), j, k, i > 0),
                        (i, j.wrapping_sub(1), k, j > 0),
                        (i, j, k.wrapping_sub(1), k > 0),
                    ] {
                        if !inside {
                            continue;
                        }
                        deg += 1.0;
                        let q = node(ii, jj, kk);
                        if q > p {
                            lower.push((2 * q, c, kappa));
                            lower.push((2 * q + 1, mu, -1.0 / a0));
                        }
                    }
                    lower.push((c, c, -(fpp + kappa * deg)));
                    lower.push((mu, c, 1.0));
                    lower.push((mu, mu, deg / a0 + 1e-3));
                }
            }
        }
        symmetric(2 * nx * ny * nz, &lower)
    }

    fn rhs(n: usize) -> Vec<f64> {
        (0..n)
            .map(|i| ((i * 37 % 101) as f64 - 50.0) / 17.0)
            .collect()
    }

    /// Solve with the plain-loop supernodal solve and with faer's own solve of the same factor.
    fn both_solves(s: &mut FaerLdlt, b: &[f64]) -> (Vec<f64>, Vec<f64>) {
        assert!(
            s.fast.is_some(),
            "the factor must be supernodal for this test"
        );
        let mut ours = b.to_vec();
        s.apply_factor(&mut ours).unwrap();
        let fast = s.fast.take();
        let single = std::mem::replace(&mut s.single_ready, false);
        let mut faer = b.to_vec();
        s.apply_factor(&mut faer).unwrap();
        s.fast = fast;
        s.single_ready = single;
        (ours, faer)
    }

    fn rel_diff(a: &[f64], b: &[f64]) -> f64 {
        let num = a.iter().zip(b).map(|(x, y)| (x - y).powi(2)).sum::<f64>();
        let den = b.iter().map(|y| y * y).sum::<f64>();
        (num / den).sqrt()
    }

    fn residual(a: &CsrMatrix, x: &[f64], b: &[f64]) -> f64 {
        let ax = a.mul_vec(x);
        let r: Vec<f64> = ax.iter().zip(b).map(|(p, q)| p - q).collect();
        r.iter().map(|v| v * v).sum::<f64>().sqrt() / b.iter().map(|v| v * v).sum::<f64>().sqrt()
    }

    /// The plain-loop solve is the same operator as faer's solve (to rounding), with 1x1 and
    /// 2x2 pivots, for both orderings used by the coupled runs; the single-precision copy is
    /// an approximate inverse only (a preconditioner).
    #[test]
    fn supernodal_solve_matches_faer_with_2x2_pivots() {
        let a = cahn_hilliard_form([24, 24, 1], -2.75);
        let b = rhs(a.n_rows());
        for ordering in [Ordering::Amd, Ordering::NestedDissection] {
            let mut s = FaerLdlt::new(DirectParams::with_ordering(ordering));
            s.analyze(&a.pattern).unwrap();
            s.factor(&a).unwrap();
            assert!(
                s.subdiag.iter().any(|&e| e != 0.0),
                "{ordering:?}: no 2x2 pivot, the test would not cover them"
            );
            let (ours, faer) = both_solves(&mut s, &b);
            let d = rel_diff(&ours, &faer);
            assert!(d <= 1e-12, "{ordering:?}: plain loops vs faer {d:e}");
            let r = residual(&a, &ours, &b);
            assert!(r <= 1e-10, "{ordering:?}: residual {r:e}");

            s.set_single_precision_solves(true);
            s.factor(&a).unwrap();
            assert!(s.single_ready);
            let (single, faer) = both_solves(&mut s, &b);
            // As a preconditioner the single-precision factor must leave a residual far below
            // one (here each GMRES iteration would gain about four digits); it is not exact:
            // rounding of 6e-8 amplified by the factor's growth (Carson & Higham, SIAM J. Sci.
            // Comput. 40 (2018) A817, from memory). Reference for the rest: faer 0.24.4's own
            // solve of the same factor.
            let d = rel_diff(&single, &faer);
            let r = residual(&a, &single, &b);
            eprintln!("{ordering:?}: single precision: difference {d:e}, residual {r:e}");
            assert!(
                d > 0.0,
                "{ordering:?}: the single-precision copy was not used"
            );
            assert!(r <= 1e-4, "{ordering:?}: single precision residual {r:e}");
        }
    }

    /// Static signed pivots (`D` diagonal) on a quasi-definite matrix, 3D so that faer chooses
    /// its supernodal factorisation.
    #[test]
    fn supernodal_solve_matches_faer_with_signed_pivots() {
        // f'' > 0 (outside the spinodal): the c block is negative definite, the μ block
        // positive definite.
        let a = cahn_hilliard_form([12, 12, 12], 2.0);
        let n = a.n_rows();
        let signs: Vec<i8> = (0..n).map(|i| if i % 2 == 0 { -1 } else { 1 }).collect();
        let b = rhs(n);
        let pivoting = LdltPivoting::Signed(SignedPivots::with_signs(signs));
        let mut s = FaerLdlt::with_pivoting(DirectParams::with_ordering(Ordering::Amd), pivoting);
        s.analyze(&a.pattern).unwrap();
        s.factor(&a).unwrap();
        let (ours, faer) = both_solves(&mut s, &b);
        let d = rel_diff(&ours, &faer);
        assert!(d <= 1e-12, "plain loops vs faer {d:e}");
        let r = residual(&a, &ours, &b);
        assert!(r <= 1e-10, "residual {r:e}");
    }
}

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
use faer::sparse::linalg::cholesky::{IntranodeLbltRef, LdltRef};
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
        self.state = Some(state);
        Ok(())
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.factored = false;
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
        // Probe solve: a zero pivot leaves infinities or NaNs in the factor, a rounding-level
        // pivot a huge solution (see `check_probe`).
        let b = probe_rhs(n);
        let mut x = b.clone();
        self.apply_factor(&mut x)?;
        check_probe(matrix, &b, &x)?;
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

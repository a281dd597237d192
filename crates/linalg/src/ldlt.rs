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

/// Smallest factor (stored values of `L`) that [`FaerLdlt::set_single_precision_factor`]
/// factors in single precision. Below it a double-precision factorisation takes milliseconds
/// and its more accurate inverse is worth more: on the uniform-swelling patch test
/// (tests/swelling_patch.rs, hex20, clamped, 405 unknowns) a single-precision factor gains
/// only about four digits per GMRES iteration, GMRES stops just below its tolerance, and the
/// initial-state Newton solve, which starts at a residual of 2e-16 from `u = μ = 0`, then
/// cannot reduce it and fails; with the double-precision factor GMRES lands near 1e-15.
/// The spinodal benchmark's factor holds 8.9 M values, the charging particle's 4.2 M.
const SINGLE_FACTOR_MIN_VALUES: usize = 1_000_000;

/// faer's numeric factorisation of `a` with the given pivoting, in the precision of `T`:
/// `L` into `factor.0`, the 2x2 pivots' off-diagonal entries into `factor.1` and the pivoting
/// permutation into `pivots` (Bunch–Kaufman), or static signed pivots with the regularisation
/// `(delta, epsilon)`.
fn factorize<T: faer::traits::ComplexField<Real = T>>(
    state: &mut SymbolicState,
    pivoting: &LdltPivoting,
    regularization: (T, T),
    factor: (&mut [T], &mut [T]),
    pivots: (&mut [usize], &mut [usize]),
    a: faer::sparse::SparseColMatRef<'_, usize, T>,
    par: faer::Par,
) -> Result<(), LinalgError> {
    let stack = MemStack::new(&mut state.mem);
    match pivoting {
        LdltPivoting::IntranodeBunchKaufman => {
            state.symbolic.factorize_numeric_intranode_lblt(
                factor.0,
                factor.1,
                pivots.0,
                pivots.1,
                a,
                FAER_SIDE,
                par,
                stack,
                Default::default(),
            );
        }
        LdltPivoting::Signed(sp) => {
            let (delta, epsilon) = regularization;
            let regularization = LdltRegularization {
                dynamic_regularization_signs: Some(&sp.signs),
                dynamic_regularization_delta: delta,
                dynamic_regularization_epsilon: epsilon,
            };
            let result = state.symbolic.factorize_numeric_ldlt(
                factor.0,
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
        }
    }
    Ok(())
}

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
    /// Whether the plain-loop solve may run its two tree parts on two threads.
    solve_parallel: bool,
    /// Apply the factor from a single-precision copy of `L` ([`FaerLdlt::set_single_precision_solves`]).
    single: bool,
    /// `L` in single precision, valid for the current factorisation when `single_ready`.
    l_single: Vec<f32>,
    single_ready: bool,
    /// Factor in single precision ([`FaerLdlt::set_single_precision_factor`]).
    single_factor: bool,
    /// The matrix rounded to single precision, and the 2x2 pivots' off-diagonal entries of a
    /// single-precision factorisation (buffers kept between factorisations).
    a_single: Vec<f32>,
    subdiag_single: Vec<f32>,
    /// [`SINGLE_FACTOR_MIN_VALUES`] (lowered by the unit tests).
    single_min_values: usize,
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
            solve_parallel: false,
            single: false,
            l_single: Vec::new(),
            single_ready: false,
            single_factor: false,
            a_single: Vec::new(),
            subdiag_single: Vec::new(),
            single_min_values: SINGLE_FACTOR_MIN_VALUES,
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

    /// Factor the matrix rounded to single precision (sequential supernodal factors of at
    /// least `SINGLE_FACTOR_MIN_VALUES` stored values only; otherwise ignored), and apply that factor as [`FaerLdlt::set_single_precision_solves`]
    /// does. Halves the memory the factorisation moves and doubles the width of its vector
    /// arithmetic; the factor then describes a matrix within about `1e-7` (relative) of the
    /// given one, so it is meant for a preconditioner of a double-precision Krylov method only
    /// (the same mixed-precision idea, Carson and Higham 2018, from memory). Where the
    /// single-precision factorisation fails (an entry beyond its range, a breakdown seen by the
    /// probe solve), that matrix is factored in double precision instead, with single-precision
    /// solves.
    pub fn set_single_precision_factor(&mut self, on: bool) {
        self.single_factor = on;
        if on {
            self.single = true;
        } else {
            self.a_single = Vec::new();
            self.subdiag_single = Vec::new();
        }
    }

    /// Counts of analyses and factorisations, and the size of `L`.
    /// Threads for the plain-loop supernodal solve of a sequential factorisation (used when
    /// the factorisation itself runs on one thread): with two or more, the two parts of its
    /// elimination-tree split run at once (the result is the same to the last bit).
    pub fn set_solve_parallelism(&mut self, parallelism: crate::parallel::Parallelism) {
        self.solve_parallel = parallelism.is_parallel();
    }

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
                fast.solve(&self.l_single, subdiag, rhs, self.solve_parallel);
            } else {
                fast.solve(&self.l_values, subdiag, rhs, self.solve_parallel);
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

    /// Hand the pivots of the last factorisation to the plain-loop solve.
    fn set_fast_pivots(&mut self) {
        if let Some(fast) = self.fast.as_mut() {
            match self.pivoting {
                LdltPivoting::IntranodeBunchKaufman => {
                    fast.set_pivots(Some((&self.pivot_fwd, &self.pivot_inv)))
                }
                LdltPivoting::Signed(_) => fast.set_pivots(None),
            }
        }
    }

    /// The single-precision factorisation of [`FaerLdlt::set_single_precision_factor`], with
    /// its probe solve; on success the factor is ready for [`FaerLdlt::apply_factor`].
    fn factor_single(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        let state = self.state.as_mut().ok_or_else(missing_analysis)?;
        let n = state.pattern.n();
        self.a_single.clear();
        self.a_single
            .extend(matrix.values.iter().map(|&v| v as f32));
        if let Some(i) = self.a_single.iter().position(|v| !v.is_finite()) {
            // Beyond the single-precision range (the caller factors in double precision).
            return Err(LinalgError::Singular {
                pivot: Some(matrix.pattern.row_ptr.partition_point(|&p| p <= i) - 1),
            });
        }
        let a = faer_view(&matrix.pattern, &self.a_single);
        self.l_single.resize(state.symbolic.len_val(), 0.0);
        self.subdiag_single.resize(n, 0.0);
        // A pivot within a few roundings of zero is noise in single precision.
        let floor = 8.0 * f32::EPSILON;
        let regularization = match &self.pivoting {
            LdltPivoting::Signed(sp) => {
                ((sp.delta as f32).max(floor), (sp.epsilon as f32).max(floor))
            }
            LdltPivoting::IntranodeBunchKaufman => (0.0, 0.0),
        };
        factorize(
            state,
            &self.pivoting,
            regularization,
            (&mut self.l_single, &mut self.subdiag_single),
            (&mut self.pivot_fwd, &mut self.pivot_inv),
            a,
            faer::Par::Seq,
        )?;
        if matches!(self.pivoting, LdltPivoting::Signed(_)) {
            self.matrix = Some(matrix.clone());
        }
        self.subdiag.clear();
        self.subdiag
            .extend(self.subdiag_single.iter().map(|&v| f64::from(v)));
        self.set_fast_pivots();
        self.single_ready = true;
        let b = probe_rhs(n);
        let mut x = b.clone();
        self.apply_factor(&mut x)?;
        check_probe(matrix, &b, &x)?;
        self.stats.n_factorizations += 1;
        self.factored = true;
        Ok(())
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
        let sequential = self.params.parallelism.to_faer() == faer::Par::Seq;
        let large = state.symbolic.len_val() >= self.single_min_values;
        if self.single_factor && sequential && large && self.fast.is_some() {
            if self.factor_single(matrix).is_ok() {
                return Ok(());
            }
            self.single_ready = false;
            self.matrix = None;
        }
        let state = self.state.as_mut().ok_or_else(missing_analysis)?;
        let n = state.pattern.n();
        let a = faer_view(&matrix.pattern, &matrix.values);
        let regularization = match &self.pivoting {
            LdltPivoting::Signed(sp) => (sp.delta, sp.epsilon),
            LdltPivoting::IntranodeBunchKaufman => (0.0, 0.0),
        };
        factorize(
            state,
            &self.pivoting,
            regularization,
            (&mut self.l_values, &mut self.subdiag),
            (&mut self.pivot_fwd, &mut self.pivot_inv),
            a,
            self.params.parallelism.to_faer(),
        )?;
        if matches!(self.pivoting, LdltPivoting::Signed(_)) {
            self.matrix = Some(matrix.clone());
        }
        self.stats.n_factorizations += 1;
        self.set_fast_pivots();
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
    /// The same rows after the intranodal pivoting permutation of the last factorisation, as
    /// positions in the work vector (see `pos`).
    rows: Vec<usize>,
    /// Fill-reducing permutation: `fill_fwd[i]` is the original index of position `i`.
    fill_fwd: Vec<usize>,
    /// Position in the work vector of each column of the factor: the columns of part 0, then
    /// of part 1, then of the top part (see [`TreeSplit`]), each in column order.
    pos: Vec<usize>,
    /// Position of each supernode's first column.
    xbeg: Vec<usize>,
    split: TreeSplit,
    /// Combined gather for the right-hand side and scatter for the solution (by position).
    gather: Vec<usize>,
    scatter: Vec<usize>,
    x: Vec<f64>,
    /// Work space of the longest supernode row list, one per part.
    tmp: [Vec<f64>; 2],
    /// Updates of the two parts to the top part's entries (forward pass).
    acc: [Vec<f64>; 2],
    /// The processor has AVX2 (x86-64 only; see `Pass::forward`).
    avx2: bool,
}

/// Two disjoint sets of subtrees of the supernodal elimination tree and the rest (their
/// ancestors, the top part). The forward and backward passes over the two parts touch
/// disjoint entries except for the parts' updates to the top, which each part sums on its own;
/// so the parts can run on two threads (the subtree-to-processor mapping of parallel sparse
/// triangular solves; George, Heath, Liu & Ng, SIAM J. Sci. Stat. Comput. 9 (1988) 327, from
/// memory). The split depends on the symbolic structure only, and the arithmetic is the same
/// whether the parts run one after the other or at once: the result does not depend on the
/// thread count.
struct TreeSplit {
    /// Supernodes of part 0, part 1 and the top part, each in increasing order.
    order: [Vec<usize>; 3],
    /// Per supernode, how many of its off-diagonal rows lie in its own part (they come first;
    /// the rest lie in the top part). All of them for a top supernode.
    own_rows: Vec<usize>,
    /// First position of part 1 and of the top part.
    start: [usize; 2],
}

/// Largest imbalance between the two parts (fraction of their total work) the split accepts.
const SPLIT_IMBALANCE: f64 = 0.02;
/// Largest share of the total work the split moves into the sequential top part.
const SPLIT_TOP_SHARE: f64 = 0.2;

impl TreeSplit {
    /// Split the supernodes (first columns `begin`, off-diagonal rows `rows[row_ptr[s]..]` in
    /// faer's column numbering, values `(m + p) m` per supernode).
    fn new(begin: &[usize], row_ptr: &[usize], rows: &[usize]) -> TreeSplit {
        let ns = begin.len() - 1;
        let n = begin[ns];
        let mut sn_of_col = vec![0; n];
        for s in 0..ns {
            sn_of_col[begin[s]..begin[s + 1]].fill(s);
        }
        let parent: Vec<Option<usize>> = (0..ns)
            .map(|s| {
                rows[row_ptr[s]..row_ptr[s + 1]]
                    .iter()
                    .min()
                    .map(|&r| sn_of_col[r])
            })
            .collect();
        let mut children = vec![Vec::new(); ns];
        let mut roots = Vec::new();
        let work: Vec<f64> = (0..ns)
            .map(|s| {
                let m = begin[s + 1] - begin[s];
                ((m + row_ptr[s + 1] - row_ptr[s]) * m) as f64
            })
            .collect();
        let mut subtree = work.clone();
        for s in 0..ns {
            match parent[s] {
                Some(p) => {
                    debug_assert!(p > s, "a parent follows its children");
                    children[p].push(s);
                    subtree[p] += subtree[s];
                }
                None => roots.push(s),
            }
        }
        let total: f64 = roots.iter().map(|&r| subtree[r]).sum();
        // Expand the heaviest subtree of the frontier into the top part until the frontier's
        // subtrees can be dealt to two parts of nearly equal work (largest first, each to the
        // lighter part).
        let mut frontier = roots;
        let mut top = Vec::new();
        let mut top_work = 0.0;
        let deal = |frontier: &mut Vec<usize>| -> ([Vec<usize>; 2], [f64; 2]) {
            frontier.sort_by(|&a, &b| subtree[b].total_cmp(&subtree[a]).then(a.cmp(&b)));
            let mut parts: [Vec<usize>; 2] = [Vec::new(), Vec::new()];
            let mut load = [0.0; 2];
            for &r in frontier.iter() {
                let k = usize::from(load[1] < load[0]);
                parts[k].push(r);
                load[k] += subtree[r];
            }
            (parts, load)
        };
        let (mut parts, mut load) = deal(&mut frontier);
        loop {
            let sum = load[0] + load[1];
            if sum <= 0.0 || (load[0] - load[1]).abs() <= SPLIT_IMBALANCE * sum {
                break;
            }
            let h = frontier[0];
            if children[h].is_empty() || top_work + work[h] > SPLIT_TOP_SHARE * total {
                break;
            }
            frontier.remove(0);
            frontier.extend_from_slice(&children[h]);
            top.push(h);
            top_work += work[h];
            (parts, load) = deal(&mut frontier);
        }
        let mut part = vec![2u8; ns];
        for (k, roots) in parts.iter().enumerate() {
            let mut stack = roots.clone();
            while let Some(s) = stack.pop() {
                part[s] = k as u8;
                stack.extend_from_slice(&children[s]);
            }
        }
        let mut order: [Vec<usize>; 3] = [Vec::new(), Vec::new(), Vec::new()];
        for s in 0..ns {
            order[part[s] as usize].push(s);
        }
        // A supernode's rows are its ancestors; listed in increasing order, those in its own
        // part come before those in the top part. Should a row list not be ordered so, the
        // solve keeps a single part (correct, only not split).
        let mut own_rows = Vec::with_capacity(ns);
        for s in 0..ns {
            let r = &rows[row_ptr[s]..row_ptr[s + 1]];
            let own = r
                .iter()
                .take_while(|&&c| part[sn_of_col[c]] == part[s])
                .count();
            if !r[own..].iter().all(|&c| part[sn_of_col[c]] == 2) {
                part.fill(0);
                order = [(0..ns).collect(), Vec::new(), Vec::new()];
                own_rows = (0..ns).map(|s| row_ptr[s + 1] - row_ptr[s]).collect();
                break;
            }
            own_rows.push(own);
        }
        let cols = |k: usize| -> usize {
            order[k]
                .iter()
                .map(|&s| begin[s + 1] - begin[s])
                .sum::<usize>()
        };
        let n0 = cols(0);
        let n1 = cols(1);
        TreeSplit {
            order,
            own_rows,
            start: [n0, n0 + n1],
        }
    }
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
        let split = TreeSplit::new(&begin, &row_ptr, &raw_rows);
        let mut pos = vec![0; n];
        let mut xbeg = vec![0; ns];
        let mut next = 0;
        for part in &split.order {
            for &s in part {
                xbeg[s] = next;
                for (k, c) in (begin[s]..begin[s + 1]).enumerate() {
                    pos[c] = next + k;
                }
                next += begin[s + 1] - begin[s];
            }
        }
        let n_top = n - split.start[1];
        let mut out = SupernodalSolve {
            begin,
            val_ptr,
            row_ptr,
            rows: raw_rows.clone(),
            raw_rows,
            gather: fill_fwd.clone(),
            scatter: vec![0; n],
            fill_fwd,
            pos,
            xbeg,
            split,
            x: vec![0.0; n],
            tmp: [vec![0.0; max_rows], vec![0.0; max_rows]],
            acc: [vec![0.0; n_top], vec![0.0; n_top]],
            #[cfg(target_arch = "x86_64")]
            avx2: std::arch::is_x86_feature_detected!("avx2"),
            #[cfg(not(target_arch = "x86_64"))]
            avx2: false,
        };
        out.set_pivots(None);
        Some(out)
    }

    /// Compose the fill-reducing permutation with the pivoting permutation of the last
    /// factorisation (`(forward, inverse)`; None: no pivoting) and the parts' positions.
    fn set_pivots(&mut self, pivots: Option<(&[usize], &[usize])>) {
        let n = self.fill_fwd.len();
        for i in 0..n {
            let original = match pivots {
                Some((fwd, _)) => self.fill_fwd[fwd[i]],
                None => self.fill_fwd[i],
            };
            self.gather[self.pos[i]] = original;
        }
        for (r, &raw) in self.rows.iter_mut().zip(&self.raw_rows) {
            let pivoted = pivots.map_or(raw, |(_, inv)| inv[raw]);
            *r = self.pos[pivoted];
        }
        for (i, &g) in self.gather.iter().enumerate() {
            self.scatter[g] = i;
        }
    }

    /// `rhs := (P L B Lᵀ Pᵀ)⁻¹ rhs`; `subdiag` holds the 2x2 pivots' off-diagonal entries
    /// (None: a diagonal `D`). With `parallel`, the two parts of the tree split run on two
    /// rayon threads (same result).
    fn solve<V: FactorValue>(
        &mut self,
        values: &[V],
        subdiag: Option<&[f64]>,
        rhs: &mut [f64],
        parallel: bool,
    ) {
        for (xi, &g) in self.x.iter_mut().zip(&self.gather) {
            *xi = rhs[g];
        }
        let [s1, st] = self.split.start;
        let pass = Pass {
            begin: &self.begin,
            xbeg: &self.xbeg,
            val_ptr: &self.val_ptr,
            row_ptr: &self.row_ptr,
            rows: &self.rows,
            own_rows: &self.split.own_rows,
            values,
            subdiag,
            avx2: self.avx2,
        };
        let [o0, o1, o2] = &self.split.order;
        let [t0, t1] = &mut self.tmp;
        let [a0, a1] = &mut self.acc;
        let (x01, xtop) = self.x.split_at_mut(st);
        let (x0, x1) = x01.split_at_mut(s1);
        // Forward: the two parts (their updates to the top summed apart), then the top.
        a0.fill(0.0);
        a1.fill(0.0);
        let mut part0 = || pass.forward(o0, x0, 0, a0, st, t0);
        let mut part1 = || pass.forward(o1, x1, s1, a1, st, t1);
        if parallel {
            rayon::join(part0, part1);
        } else {
            part0();
            part1();
        }
        for ((x, u0), u1) in xtop.iter_mut().zip(a0.iter()).zip(a1.iter()) {
            *x -= u0;
            *x -= u1;
        }
        pass.forward(o2, xtop, st, &mut [], st, t0);
        // Backward: the top, then the two parts (which read the top).
        pass.backward(o2, xtop, st, &[], st, t0);
        let top = &*xtop;
        let mut part0 = || pass.backward(o0, x0, 0, top, st, t0);
        let mut part1 = || pass.backward(o1, x1, s1, top, st, t1);
        if parallel {
            rayon::join(part0, part1);
        } else {
            part0();
            part1();
        }
        for (r, &sc) in rhs.iter_mut().zip(&self.scatter) {
            *r = self.x[sc];
        }
    }
}

/// The factor's structure and values for one solve.
struct Pass<'a, V> {
    begin: &'a [usize],
    xbeg: &'a [usize],
    val_ptr: &'a [usize],
    row_ptr: &'a [usize],
    rows: &'a [usize],
    own_rows: &'a [usize],
    values: &'a [V],
    subdiag: Option<&'a [f64]>,
    /// The processor has AVX2 (x86-64 only).
    avx2: bool,
}

impl<V: FactorValue> Pass<'_, V> {
    /// [`Pass::forward_impl`], compiled for AVX2 where the processor has it (the loops
    /// convert single-precision values and are otherwise limited to two lanes; no fused
    /// multiply–add, so the arithmetic and the result are the same as without).
    fn forward(
        &self,
        order: &[usize],
        x: &mut [f64],
        off: usize,
        acc: &mut [f64],
        top: usize,
        tmp: &mut [f64],
    ) {
        #[cfg(target_arch = "x86_64")]
        if self.avx2 {
            // SAFETY: `avx2` is set only where the processor reports AVX2.
            return unsafe { with_avx2(|| self.forward_impl(order, x, off, acc, top, tmp)) };
        }
        self.forward_impl(order, x, off, acc, top, tmp)
    }

    /// [`Pass::backward_impl`], compiled for AVX2 where the processor has it (as `forward`).
    fn backward(
        &self,
        order: &[usize],
        x: &mut [f64],
        off: usize,
        x_top: &[f64],
        top: usize,
        tmp: &mut [f64],
    ) {
        #[cfg(target_arch = "x86_64")]
        if self.avx2 {
            // SAFETY: `avx2` is set only where the processor reports AVX2.
            return unsafe {
                with_avx2(|| self.backward_impl::<true>(order, x, off, x_top, top, tmp))
            };
        }
        self.backward_impl::<false>(order, x, off, x_top, top, tmp)
    }

    /// Forward substitution over the supernodes `order` of one part, whose entries are
    /// `x` (positions from `off`); updates to the top part (positions from `top`) are added
    /// to `acc`. Per supernode: its unit lower triangle, its rows below (accumulated column
    /// by column in `tmp`, contiguous in the column-major values, then scattered), then its
    /// pivots (`D` or `B`), whose entries no later supernode changes; applying them here,
    /// while the supernode's values are in cache, saves a pass.
    #[inline(always)]
    fn forward_impl(
        &self,
        order: &[usize],
        x: &mut [f64],
        off: usize,
        acc: &mut [f64],
        top: usize,
        tmp: &mut [f64],
    ) {
        for &s in order {
            let (c0, m) = (self.xbeg[s] - off, self.begin[s + 1] - self.begin[s]);
            let rows = &self.rows[self.row_ptr[s]..self.row_ptr[s + 1]];
            let p = rows.len();
            let ld = m + p;
            let v = &self.values[self.val_ptr[s]..self.val_ptr[s + 1]];
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
            let own = self.own_rows[s];
            for (&r, &ti) in rows[..own].iter().zip(&t[..own]) {
                x[r - off] -= ti;
            }
            for (&r, &ti) in rows[own..].iter().zip(&t[own..]) {
                acc[r - top] += ti;
            }
            // 1x1 pivots, and 2x2 pivots where `subdiag` is nonzero (evaluated as in faer
            // 0.24.4's `solve_in_place_no_numeric_permute_with_conj`).
            let mut j = 0;
            while j < m {
                let (i, col) = (c0 + j, self.begin[s] + j);
                let e = self.subdiag.map_or(0.0, |sd| sd[col]);
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
    }

    /// Backward substitution over the supernodes `order` (taken in reverse) of one part with
    /// entries `x` (positions from `off`), reading the final top entries `x_top` (positions
    /// from `top`): per supernode, its rows below (gathered once into `tmp`; they belong to
    /// later supernodes, already final), column by column in storage order, then the
    /// transposed unit triangle from its last column.
    #[inline(always)]
    fn backward_impl<const AVX2: bool>(
        &self,
        order: &[usize],
        x: &mut [f64],
        off: usize,
        x_top: &[f64],
        top: usize,
        tmp: &mut [f64],
    ) {
        for &s in order.iter().rev() {
            let (c0, m) = (self.xbeg[s] - off, self.begin[s + 1] - self.begin[s]);
            let rows = &self.rows[self.row_ptr[s]..self.row_ptr[s + 1]];
            let p = rows.len();
            let ld = m + p;
            let v = &self.values[self.val_ptr[s]..self.val_ptr[s + 1]];
            let t = &mut tmp[..p];
            let own = self.own_rows[s];
            for (ti, &r) in t[..own].iter_mut().zip(&rows[..own]) {
                *ti = x[r - off];
            }
            for (ti, &r) in t[own..].iter_mut().zip(&rows[own..]) {
                *ti = x_top[r - top];
            }
            for j in 0..m {
                let lj = &v[j * ld + m..(j + 1) * ld];
                #[cfg(target_arch = "x86_64")]
                let d = if AVX2 {
                    // SAFETY: `AVX2` is true only inside `with_avx2`, called where the
                    // processor has AVX2.
                    unsafe { V::dot_avx2(lj, t) }
                } else {
                    dot(lj, t)
                };
                #[cfg(not(target_arch = "x86_64"))]
                let d = dot(lj, t);
                x[c0 + j] -= d;
            }
            // Row j of the transposed triangle: a dot product with the entries after j (in
            // the partial sums of `dot`, which vectorise; one running sum waited on every
            // addition).
            for j in (0..m).rev() {
                let col = &v[j * ld + j + 1..j * ld + m];
                let (head, after) = x[c0..c0 + m].split_at_mut(j + 1);
                #[cfg(target_arch = "x86_64")]
                let d = if AVX2 {
                    // SAFETY: as above.
                    unsafe { V::dot_avx2(col, after) }
                } else {
                    dot(col, after)
                };
                #[cfg(not(target_arch = "x86_64"))]
                let d = dot(col, after);
                head[j] -= d;
            }
        }
    }
}

/// Dot product in eight independent partial sums (so that it vectorises), combined as
/// `((s0 + s4) + (s1 + s5)) + ((s2 + s6) + (s3 + s7))`, then the tail: the same operations, in
/// the same order, as [`FactorValue::dot_avx2`].
#[inline(always)]
fn dot<V: Copy + Into<f64>>(a: &[V], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a8, ar) = a[..n].split_at(n - n % 8);
    let (b8, br) = b[..n].split_at(n - n % 8);
    let mut s = [0.0; 8];
    for (ca, cb) in a8.chunks_exact(8).zip(b8.chunks_exact(8)) {
        for k in 0..8 {
            s[k] += ca[k].into() * cb[k];
        }
    }
    let mut tail = 0.0;
    for (x, y) in ar.iter().zip(br) {
        tail += (*x).into() * y;
    }
    combine([s[0] + s[4], s[1] + s[5], s[2] + s[6], s[3] + s[7]], tail)
}

#[inline(always)]
fn combine(v: [f64; 4], tail: f64) -> f64 {
    (v[0] + v[1]) + (v[2] + v[3]) + tail
}

/// Run `f` with AVX2 code generation (`f` is inlined here, so its loops are compiled for it).
///
/// # Safety
/// The processor must have AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn with_avx2<R>(f: impl FnOnce() -> R) -> R {
    f()
}

/// A stored value of the factor: double precision, or its single-precision copy.
trait FactorValue: Copy + Into<f64> + Sync {
    /// [`dot`] with AVX2 instructions (two four-lane accumulators, no fused multiply–add: the
    /// same result).
    ///
    /// # Safety
    /// The processor must have AVX2.
    #[cfg(target_arch = "x86_64")]
    unsafe fn dot_avx2(a: &[Self], b: &[f64]) -> f64;
}

/// The loop of [`FactorValue::dot_avx2`] for any value type: `load(i)` gives `a[i..i + 4]` in
/// double precision.
///
/// # Safety
/// The processor must have AVX2, and `load(i)` must be valid for `i + 4 <= a.len()`.
#[cfg(target_arch = "x86_64")]
#[inline(always)]
unsafe fn dot_avx2_with<V: Copy + Into<f64>>(
    a: &[V],
    b: &[f64],
    load: impl Fn(usize) -> std::arch::x86_64::__m256d,
) -> f64 {
    use std::arch::x86_64::*;
    let n = a.len().min(b.len());
    let full = n - n % 8;
    // SAFETY: AVX2 is required of the caller; `i + 8 <= full <= n` bounds every load.
    unsafe {
        let (mut acc0, mut acc1) = (_mm256_setzero_pd(), _mm256_setzero_pd());
        let mut i = 0;
        while i < full {
            let b0 = _mm256_loadu_pd(b.as_ptr().add(i));
            let b1 = _mm256_loadu_pd(b.as_ptr().add(i + 4));
            acc0 = _mm256_add_pd(acc0, _mm256_mul_pd(load(i), b0));
            acc1 = _mm256_add_pd(acc1, _mm256_mul_pd(load(i + 4), b1));
            i += 8;
        }
        let mut v = [0.0f64; 4];
        _mm256_storeu_pd(v.as_mut_ptr(), _mm256_add_pd(acc0, acc1));
        let mut tail = 0.0;
        for (x, y) in a[full..n].iter().zip(&b[full..n]) {
            tail += (*x).into() * y;
        }
        combine(v, tail)
    }
}

impl FactorValue for f32 {
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn dot_avx2(a: &[f32], b: &[f64]) -> f64 {
        use std::arch::x86_64::*;
        // SAFETY: AVX2 is required of the caller; the loop only loads within `a`.
        unsafe { dot_avx2_with(a, b, |i| _mm256_cvtps_pd(_mm_loadu_ps(a.as_ptr().add(i)))) }
    }
}

impl FactorValue for f64 {
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn dot_avx2(a: &[f64], b: &[f64]) -> f64 {
        use std::arch::x86_64::*;
        // SAFETY: AVX2 is required of the caller; the loop only loads within `a`.
        unsafe { dot_avx2_with(a, b, |i| _mm256_loadu_pd(a.as_ptr().add(i))) }
    }
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

    /// The AVX2 dot products are the portable ones to the last bit (same operations in the
    /// same order), for every tail length.
    #[cfg(target_arch = "x86_64")]
    #[test]
    fn avx2_dot_is_the_portable_dot() {
        if !std::arch::is_x86_feature_detected!("avx2") {
            eprintln!("no AVX2 on this processor: nothing to compare");
            return;
        }
        for n in 0..40 {
            let a: Vec<f64> = (0..n)
                .map(|i| ((i * 7919 % 113) as f64 - 56.0) / 9.7)
                .collect();
            let b: Vec<f64> = (0..n)
                .map(|i| ((i * 104729 % 97) as f64 - 48.0) / 3.1)
                .collect();
            let a32: Vec<f32> = a.iter().map(|&v| v as f32).collect();
            // SAFETY: AVX2 detected above.
            let (d64, d32) = unsafe { (f64::dot_avx2(&a, &b), f32::dot_avx2(&a32, &b)) };
            assert_eq!(d64.to_bits(), dot(&a, &b).to_bits(), "f64, n = {n}");
            assert_eq!(d32.to_bits(), dot(&a32, &b).to_bits(), "f32, n = {n}");
        }
    }

    /// The elimination-tree split gives two parts of nearly equal work with a small top part,
    /// and running the parts on two threads changes no bit of the solution.
    #[test]
    fn tree_split_is_balanced_and_thread_count_independent() {
        let a = cahn_hilliard_form([40, 40, 1], -2.75);
        let b = rhs(a.n_rows());
        for ordering in [Ordering::Amd, Ordering::NestedDissection] {
            let mut s = FaerLdlt::new(DirectParams::with_ordering(ordering));
            s.analyze(&a.pattern).unwrap();
            s.factor(&a).unwrap();
            let fast = s.fast.as_ref().expect("supernodal");
            let work = |order: &[usize]| -> f64 {
                order
                    .iter()
                    .map(|&k| {
                        let m = fast.begin[k + 1] - fast.begin[k];
                        ((m + fast.row_ptr[k + 1] - fast.row_ptr[k]) * m) as f64
                    })
                    .sum()
            };
            let [w0, w1, wt] = [0, 1, 2].map(|k| work(&fast.split.order[k]));
            let total = w0 + w1 + wt;
            eprintln!(
                "{ordering:?}: parts {:.3} and {:.3}, top {:.3} of the work",
                w0 / total,
                w1 / total,
                wt / total
            );
            assert!(w0 > 0.0 && w1 > 0.0, "{ordering:?}: a part is empty");
            assert!(
                (w0 - w1).abs() <= SPLIT_IMBALANCE * (w0 + w1),
                "{ordering:?}: parts {w0} and {w1}"
            );
            assert!(
                wt <= SPLIT_TOP_SHARE * total,
                "{ordering:?}: top {wt} of {total}"
            );

            let mut one = b.to_vec();
            s.apply_factor(&mut one).unwrap();
            s.set_solve_parallelism(crate::parallel::Parallelism::Rayon { threads: 2 });
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(2)
                .build()
                .unwrap();
            let mut two = b.to_vec();
            pool.install(|| s.apply_factor(&mut two)).unwrap();
            s.set_solve_parallelism(crate::parallel::Parallelism::Sequential);
            assert!(
                one.iter()
                    .zip(&two)
                    .all(|(p, q)| p.to_bits() == q.to_bits()),
                "{ordering:?}: one and two threads differ"
            );
            let r = residual(&a, &one, &b);
            assert!(r <= 1e-10, "{ordering:?}: residual {r:e}");
        }
    }

    /// A factorisation in single precision, with both pivoting strategies, is an approximate
    /// inverse fit for a preconditioner (the double-precision `L` is never formed); a matrix
    /// beyond the single-precision range is factored in double precision instead, and then
    /// solves exactly.
    #[test]
    fn single_precision_factor_preconditions_and_falls_back() {
        let quasi_definite = cahn_hilliard_form([12, 12, 12], 2.0);
        let signs: Vec<i8> = (0..quasi_definite.n_rows())
            .map(|i| if i % 2 == 0 { -1 } else { 1 })
            .collect();
        let cases = [
            (
                cahn_hilliard_form([24, 24, 1], -2.75),
                LdltPivoting::IntranodeBunchKaufman,
            ),
            (
                quasi_definite,
                LdltPivoting::Signed(SignedPivots::with_signs(signs)),
            ),
        ];
        for (a, pivoting) in cases {
            let name = match pivoting {
                LdltPivoting::IntranodeBunchKaufman => "Bunch-Kaufman",
                LdltPivoting::Signed(_) => "signed",
            };
            let n = a.n_rows();
            let b = rhs(n);
            let params = DirectParams::with_ordering(Ordering::Amd);
            let mut double = FaerLdlt::with_pivoting(params, pivoting.clone());
            double.analyze(&a.pattern).unwrap();
            double.factor(&a).unwrap();
            let mut x64 = b.clone();
            double.apply_factor(&mut x64).unwrap();

            let mut s = FaerLdlt::with_pivoting(params, pivoting.clone());
            s.set_single_precision_factor(true);
            s.analyze(&a.pattern).unwrap();
            // A factor this small stays in double precision (with single-precision solves)...
            s.factor(&a).unwrap();
            assert!(
                s.l_values.iter().any(|&v| v != 0.0),
                "{name}: a small factor was not formed in double precision"
            );
            // ... unless the size limit is lowered.
            s.single_min_values = 0;
            s.l_values.fill(0.0);
            s.factor(&a).unwrap();
            assert!(s.single_ready, "{name}: the single factor is not in use");
            assert!(
                s.l_values.iter().all(|&v| v == 0.0),
                "{name}: a double-precision factor was formed"
            );
            let mut x32 = b.clone();
            s.apply_factor(&mut x32).unwrap();
            // Rounding of 6e-8 amplified by the factor's growth: far from exact, far below
            // one (each GMRES iteration gains about four digits with it).
            let (d, r) = (rel_diff(&x32, &x64), residual(&a, &x32, &b));
            eprintln!("{name}: single factor: difference {d:e}, residual {r:e}");
            assert!(
                d > 0.0 && r <= 1e-4,
                "{name}: difference {d:e}, residual {r:e}"
            );

            let mut big = a.clone();
            for v in &mut big.values {
                *v *= 1e39;
            }
            s.factor(&big).unwrap();
            assert!(!s.single_ready, "{name}: f32 cannot hold these entries");
            let mut x = b.clone();
            s.apply_factor(&mut x).unwrap();
            let r = residual(&big, &x, &b);
            assert!(r <= 1e-10, "{name}: fallback residual {r:e}");
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

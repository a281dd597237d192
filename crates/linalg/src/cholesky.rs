//! Sparse Cholesky `LLᵀ` on faer for symmetric positive definite matrices, and the symbolic
//! analysis it shares with the symmetric indefinite solver in [`crate::ldlt`].
//!
//! Both read the lower triangle of the full CSR input (row `i`, columns `j <= i`), compute the
//! fill-reducing ordering and faer's symbolic factorisation once in `analyze`, and reuse that
//! symbolic object for every `factor`.

use faer::dyn_stack::{MemBuffer, MemStack, StackReq};
use faer::linalg::cholesky::llt::factor::LltError;
use faer::perm::PermRef;
use faer::sparse::linalg::cholesky::{
    factorize_symbolic_cholesky, CholeskySymbolicParams, LltRef, SymbolicCholesky,
    SymmetricOrdering,
};
use faer::sparse::linalg::SupernodalThreshold;
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use faer::{Conj, MatMut, Side};

use crate::csr::{CsrMatrix, CsrPattern};
use crate::direct::{
    check_finite, check_probe, check_rhs_len, condition_lower_bound, infinity_norm, probe_rhs,
    AnalysedPattern, DirectParams, DirectStats,
};
use crate::ordering::{build_permutation, Permutation};
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// faer reads our CSR arrays as CSC, i.e. it sees `Aᵀ`, which equals `A` for a symmetric
/// matrix. The CSR lower triangle (`j <= i`) is then the upper triangle of what faer sees.
pub(crate) const FAER_SIDE: Side = Side::Upper;

/// Everything computed by `analyze`.
pub(crate) struct SymbolicState {
    pub(crate) pattern: AnalysedPattern,
    pub(crate) perm: Permutation,
    pub(crate) symbolic: SymbolicCholesky<usize>,
    /// Workspace for numeric factorisation and solves, sized once.
    pub(crate) mem: MemBuffer,
}

pub(crate) fn analyze_symmetric(
    pattern: &CsrPattern,
    params: DirectParams,
    threshold: SupernodalThreshold,
    scratch: impl Fn(&SymbolicCholesky<usize>) -> StackReq,
) -> Result<SymbolicState, LinalgError> {
    let analysed = AnalysedPattern::new(pattern)?;
    let n = pattern.n_rows;
    let perm = build_permutation(pattern, params.ordering)?;
    let a = SymbolicSparseColMatRef::new_checked(n, n, &pattern.row_ptr, None, &pattern.col_idx);
    // Always pass an explicit permutation (identity for Natural): faer then filters the chosen
    // triangle while permuting; with `SymmetricOrdering::Identity` it would hand the full matrix
    // straight to the numeric kernels (faer 0.24.4, cholesky.rs, factorize_numeric_llt).
    let perm_ref = PermRef::new_checked(&perm.fwd, &perm.inv, n);
    let symbolic_params = CholeskySymbolicParams {
        supernodal_flop_ratio_threshold: threshold,
        ..Default::default()
    };
    let symbolic = factorize_symbolic_cholesky(
        a,
        FAER_SIDE,
        SymmetricOrdering::Custom(perm_ref),
        symbolic_params,
    )
    .map_err(|e| LinalgError::Backend(format!("symbolic Cholesky failed: {e:?}")))?;
    let req = scratch(&symbolic)
        .or(symbolic.solve_in_place_scratch::<f64>(1, params.parallelism.to_faer()));
    let mem = MemBuffer::try_new(req)
        .map_err(|_| LinalgError::Backend("out of memory for factorisation workspace".into()))?;
    Ok(SymbolicState {
        pattern: analysed,
        perm,
        symbolic,
        mem,
    })
}

pub(crate) fn faer_view<'a, T>(
    pattern: &'a CsrPattern,
    values: &'a [T],
) -> SparseColMatRef<'a, usize, T> {
    let n = pattern.n_rows;
    let a = SymbolicSparseColMatRef::new_checked(n, n, &pattern.row_ptr, None, &pattern.col_idx);
    SparseColMatRef::new(a, values)
}

/// faer's numeric `LLᵀ` of `values` (on `pattern`) into `l`, in the precision `T`.
fn factor_llt<T: faer::traits::RealField>(
    state: &mut SymbolicState,
    l: &mut [T],
    pattern: &CsrPattern,
    values: &[T],
    params: DirectParams,
) -> Result<(), LltError> {
    state
        .symbolic
        .factorize_numeric_llt(
            l,
            faer_view(pattern, values),
            FAER_SIDE,
            Default::default(),
            params.parallelism.to_faer(),
            MemStack::new(&mut state.mem),
            Default::default(),
        )
        .map(|_| ())
}

pub(crate) fn missing_analysis() -> LinalgError {
    LinalgError::Usage("factor called before analyze".into())
}

pub(crate) fn missing_factor() -> LinalgError {
    LinalgError::Usage("solve called before a successful factor".into())
}

/// Sparse Cholesky `A = LLᵀ` (supernodal or simplicial, as faer's symbolic analysis decides)
/// for symmetric positive definite matrices. A matrix that is not numerically positive
/// definite gives [`LinalgError::Singular`] with the failing pivot in original numbering.
///
/// Optionally ([`FaerCholesky::set_single_precision_factor`]) the factorisation runs in single
/// precision and each solve refines its result in double precision until the residual is at
/// the level of a double-precision backward-stable solve; a matrix too ill-conditioned for that
/// is factored in double precision instead (see there).
pub struct FaerCholesky {
    params: DirectParams,
    state: Option<SymbolicState>,
    l_values: Vec<f64>,
    factored: bool,
    stats: DirectStats,
    /// Factor in single precision and refine (see `set_single_precision_factor`).
    single: bool,
    /// The single-precision factor's values (kept allocated), and whether the current
    /// factorisation is that one.
    l_single: Vec<f32>,
    single_ready: bool,
    /// The factored matrix and its infinity norm, for the refinement's residuals.
    matrix: Option<(CsrMatrix, f64)>,
    /// Refinement steps of all solves so far, and matrices factored again in double precision
    /// because the single-precision path failed.
    refinements: usize,
    double_fallbacks: usize,
}

/// Largest number of refinement steps of one solve before the factorisation is redone in
/// double precision (30 in LAPACK's `DSPOSV`, from memory).
const MAX_REFINEMENTS: usize = 30;

impl FaerCholesky {
    /// A Cholesky solver with the given ordering and threads.
    pub fn new(params: DirectParams) -> Self {
        FaerCholesky {
            params,
            state: None,
            l_values: Vec::new(),
            factored: false,
            stats: DirectStats::default(),
            single: false,
            l_single: Vec::new(),
            single_ready: false,
            matrix: None,
            refinements: 0,
            double_fallbacks: 0,
        }
    }

    /// Factor in single precision and refine each solve in double precision (mixed-precision
    /// iterative refinement as in LAPACK's `DSPOSV`; Langou, Luszczek, Kurzak, Buttari and
    /// Dongarra, "Exploiting the performance of 32 bit floating point arithmetic in obtaining
    /// 64 bit accuracy", SC'06, from memory). The single-precision factorisation moves half the
    /// bytes and runs at twice the vector width; each refinement step costs a single-precision
    /// solve and a product with `A`. A solve stops when `‖b − A x‖∞ ≤ ‖x‖∞ ‖A‖∞ ε` (ε of double
    /// precision): `DSPOSV`'s test without its factor `√n`, which on 3D elasticity with 53k
    /// unknowns stopped one step earlier, at a relative residual of 9e-11 against 1.5e-12 for
    /// the double-precision factorisation (7.5e-13 without it). The factorisation is redone in
    /// double precision when the single-precision one fails (an entry beyond its range, a non-positive pivot, a matrix
    /// singular to single precision by the probe of `factor`) or a solve does not meet
    /// the test within `MAX_REFINEMENTS` steps or stops improving. Off by default; the factor
    /// and a copy of the matrix values are kept.
    pub fn set_single_precision_factor(&mut self, on: bool) {
        self.single = on;
    }

    /// Refinement steps of all solves so far and the matrices factored again in double
    /// precision (see [`FaerCholesky::set_single_precision_factor`]).
    pub fn refinement_stats(&self) -> (usize, usize) {
        (self.refinements, self.double_fallbacks)
    }

    /// `rhs := (LLᵀ)⁻¹ rhs` with the single-precision factor, `rhs` scaled to unit max norm
    /// for the rounding to `f32` and scaled back.
    fn apply_single_factor(&mut self, rhs: &mut [f64], buf: &mut Vec<f32>) {
        let state = self.state.as_mut().expect("analysed");
        let l = &self.l_single;
        let n = state.pattern.n();
        let scale = rhs.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        if scale == 0.0 || !scale.is_finite() {
            return;
        }
        buf.clear();
        buf.extend(rhs.iter().map(|v| (v / scale) as f32));
        LltRef::<usize, f32>::new(&state.symbolic, l).solve_in_place_with_conj(
            Conj::No,
            MatMut::from_column_major_slice_mut(buf, n, 1),
            self.params.parallelism.to_faer(),
            MemStack::new(&mut state.mem),
        );
        for (r, &v) in rhs.iter_mut().zip(buf.iter()) {
            *r = v as f64 * scale;
        }
    }

    /// Solve `A x = b` (`rhs`: `b` on entry, `x` on return) by refinement with the
    /// single-precision factor; `Ok(steps)`, or `Err(())` when the test is not met, with `rhs`
    /// left unchanged.
    fn refine(&mut self, rhs: &mut [f64]) -> Result<usize, ()> {
        let (a, a_norm) = self.matrix.take().expect("matrix kept");
        let result = self.refine_with(&a, a_norm, rhs);
        self.matrix = Some((a, a_norm));
        result
    }

    fn refine_with(&mut self, a: &CsrMatrix, a_norm: f64, rhs: &mut [f64]) -> Result<usize, ()> {
        let n = rhs.len();
        let b = rhs.to_vec();
        let mut x = vec![0.0; n];
        let mut r = b.clone();
        let mut d = vec![0.0; n];
        let mut buf = Vec::with_capacity(n);
        let inf = |v: &[f64]| v.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
        let bound = |x: &[f64]| inf(x) * a_norm * f64::EPSILON;
        let mut previous = f64::INFINITY;
        for step in 1..=MAX_REFINEMENTS {
            d.copy_from_slice(&r);
            self.apply_single_factor(&mut d, &mut buf);
            for (xi, di) in x.iter_mut().zip(&d) {
                *xi += di;
            }
            a.mul_vec_into(&x, &mut r);
            for (ri, bi) in r.iter_mut().zip(&b) {
                *ri = bi - *ri;
            }
            let rn = inf(&r);
            if !rn.is_finite() {
                return Err(());
            }
            if rn <= bound(&x) {
                rhs.copy_from_slice(&x);
                return Ok(step);
            }
            // Stagnation: the single-precision factor no longer reduces the residual.
            if step > 2 && rn > 0.5 * previous {
                return Err(());
            }
            previous = rn;
        }
        Err(())
    }

    /// Factor `matrix` in single precision; false when that fails (the caller then factors
    /// in double precision).
    fn factor_single(&mut self, matrix: &CsrMatrix) -> bool {
        let state = self.state.as_mut().expect("analysed");
        if matrix.values.iter().any(|v| v.abs() > f32::MAX as f64) {
            return false;
        }
        let values: Vec<f32> = matrix.values.iter().map(|&v| v as f32).collect();
        self.l_single.resize(state.symbolic.len_val(), 0.0);
        let result = factor_llt(
            state,
            &mut self.l_single,
            &matrix.pattern,
            &values,
            self.params,
        );
        self.stats.n_factorizations += 1;
        if result.is_err() {
            return false;
        }
        let a_norm = infinity_norm(matrix);
        self.single_ready = true;
        self.matrix = Some((matrix.clone(), a_norm));
        // Probe: a matrix singular to single precision (cond ≥ 1/ε_f32 by the lower bound of
        // `check_probe`) cannot be refined. (A refinement that fails later, in a solve, also
        // sends the matrix to double precision.)
        let b = probe_rhs(matrix.n_rows());
        let mut y = b.clone();
        let mut buf = Vec::new();
        self.apply_single_factor(&mut y, &mut buf);
        let conditioned = y.iter().all(|v| v.is_finite())
            && condition_lower_bound(a_norm, &b, &y) < 1.0 / f32::EPSILON as f64;
        if !conditioned {
            self.single_ready = false;
            self.matrix = None;
        }
        conditioned
    }

    /// Counts of analyses and factorisations, and the size of `L`.
    pub fn stats(&self) -> DirectStats {
        self.stats
    }

    /// The fill-reducing permutation of the last analysis.
    pub fn permutation(&self) -> Option<&Permutation> {
        self.state.as_ref().map(|s| &s.perm)
    }

    /// `rhs := (LLᵀ)⁻¹ rhs` with the current factor.
    fn apply_factor(&mut self, rhs: &mut [f64]) -> Result<(), LinalgError> {
        let state = self.state.as_mut().ok_or_else(missing_factor)?;
        let n = state.pattern.n();
        LltRef::new(&state.symbolic, &self.l_values).solve_in_place_with_conj(
            Conj::No,
            MatMut::from_column_major_slice_mut(rhs, n, 1),
            self.params.parallelism.to_faer(),
            MemStack::new(&mut state.mem),
        );
        check_finite(rhs)
    }
}

impl LinearSolver for FaerCholesky {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.state = None;
        self.factored = false;
        let par = self.params.parallelism.to_faer();
        let state = analyze_symmetric(pattern, self.params, SupernodalThreshold::AUTO, |s| {
            s.factorize_numeric_llt_scratch::<f64>(par, Default::default())
        })?;
        self.l_values = Vec::new();
        self.l_single = Vec::new();
        self.stats.n_analyses += 1;
        self.stats.factor_nnz = state.symbolic.len_val();
        self.state = Some(state);
        Ok(())
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.factored = false;
        self.single_ready = false;
        self.matrix = None;
        let state = self.state.as_mut().ok_or_else(missing_analysis)?;
        state.pattern.check(matrix)?;
        if self.single {
            if self.factor_single(matrix) {
                self.factored = true;
                return Ok(());
            }
            self.double_fallbacks += 1;
            self.l_single = Vec::new();
        }
        let state = self.state.as_mut().ok_or_else(missing_analysis)?;
        // Allocated at the first double-precision factorisation (a mixed-precision solver may
        // never need it).
        self.l_values.resize(state.symbolic.len_val(), 0.0);
        let result = factor_llt(
            state,
            &mut self.l_values,
            &matrix.pattern,
            &matrix.values,
            self.params,
        );
        self.stats.n_factorizations += 1;
        if let Err(LltError::NonPositivePivot { index }) = result {
            return Err(LinalgError::Singular {
                pivot: state.perm.fwd.get(index).copied(),
            });
        }
        // Probe solve: a positive but rounding-level pivot (a semi-definite matrix) gives a huge
        // solution (see `check_probe`).
        let b = probe_rhs(state.pattern.n());
        let mut x = b.clone();
        self.factored = true;
        let probe = self
            .apply_factor(&mut x)
            .and_then(|()| check_probe(matrix, &b, &x));
        self.factored = probe.is_ok();
        probe
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let state = self.state.as_mut().ok_or_else(missing_factor)?;
        if !self.factored {
            return Err(missing_factor());
        }
        check_rhs_len(state.pattern.n(), rhs)?;
        if self.single_ready {
            // A failed refinement leaves `rhs` as it was (`b`).
            match self.refine(rhs) {
                Ok(steps) => {
                    self.refinements += steps;
                    return Ok(SolveInfo {
                        iterations: steps,
                        residual: None,
                    });
                }
                Err(()) => {
                    // Factor this matrix again in double precision and solve directly.
                    let (a, _) = self.matrix.take().expect("matrix kept");
                    self.double_fallbacks += 1;
                    self.l_single = Vec::new();
                    let single = std::mem::replace(&mut self.single, false);
                    let result = self.factor(&a);
                    self.single = single;
                    result?;
                }
            }
        }
        self.apply_factor(rhs)?;
        Ok(SolveInfo {
            iterations: 0,
            residual: None,
        })
    }

    fn name(&self) -> String {
        if self.single {
            format!("faer-cholesky-mixed/{}", self.params.ordering.name())
        } else {
            format!("faer-cholesky/{}", self.params.ordering.name())
        }
    }
}

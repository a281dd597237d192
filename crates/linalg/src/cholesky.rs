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
    check_finite, check_probe, check_rhs_len, probe_rhs, AnalysedPattern, DirectParams, DirectStats,
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

pub(crate) fn missing_analysis() -> LinalgError {
    LinalgError::Usage("factor called before analyze".into())
}

pub(crate) fn missing_factor() -> LinalgError {
    LinalgError::Usage("solve called before a successful factor".into())
}

/// Sparse Cholesky `A = LLᵀ` (supernodal or simplicial, as faer's symbolic analysis decides)
/// for symmetric positive definite matrices. A matrix that is not numerically positive
/// definite gives [`LinalgError::Singular`] with the failing pivot in original numbering.
pub struct FaerCholesky {
    params: DirectParams,
    state: Option<SymbolicState>,
    l_values: Vec<f64>,
    factored: bool,
    stats: DirectStats,
}

impl FaerCholesky {
    /// A Cholesky solver with the given ordering and threads.
    pub fn new(params: DirectParams) -> Self {
        FaerCholesky {
            params,
            state: None,
            l_values: Vec::new(),
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
        self.l_values = vec![0.0; state.symbolic.len_val()];
        self.stats.n_analyses += 1;
        self.stats.factor_nnz = state.symbolic.len_val();
        self.state = Some(state);
        Ok(())
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.factored = false;
        let state = self.state.as_mut().ok_or_else(missing_analysis)?;
        state.pattern.check(matrix)?;
        let a = faer_view(&matrix.pattern, &matrix.values);
        let result = state.symbolic.factorize_numeric_llt(
            &mut self.l_values,
            a,
            FAER_SIDE,
            Default::default(),
            self.params.parallelism.to_faer(),
            MemStack::new(&mut state.mem),
            Default::default(),
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
        self.apply_factor(rhs)?;
        Ok(SolveInfo {
            iterations: 0,
            residual: None,
        })
    }

    fn name(&self) -> String {
        format!("faer-cholesky/{}", self.params.ordering.name())
    }
}

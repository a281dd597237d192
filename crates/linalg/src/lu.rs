//! General sparse direct solver: faer's supernodal LU with partial pivoting.
//!
//! faer's high-level symbolic LU always orders the columns with COLAMD, so this back-end drives
//! faer's public lower-level steps itself (column elimination tree, postorder, column counts of
//! `MᵀM`, supernodal symbolic LU), which accept any column permutation.
//!
//! Our CSR arrays read as CSC describe `M = Aᵀ`. We factor `M` (rows pivoted, columns in the
//! fill-reducing order) and solve `A x = Mᵀ x = b` with faer's transpose solve, so the input is
//! never copied into another layout except for the transpose that faer's numeric LU needs, whose
//! index map is computed once in `analyze`.

use faer::dyn_stack::{MemBuffer, MemStack, StackReq};
use faer::perm::PermRef;
use faer::sparse::linalg::lu::supernodal::{
    factorize_supernodal_numeric_lu, factorize_supernodal_numeric_lu_scratch,
    factorize_supernodal_symbolic_lu, factorize_supernodal_symbolic_lu_scratch,
    solve_transpose_in_place_scratch, SupernodalLu, SymbolicSupernodalLu,
};
use faer::sparse::linalg::qr::{
    col_etree, col_etree_scratch, column_counts_aat_scratch, column_counts_ata, postorder,
    postorder_scratch,
};
use faer::sparse::linalg::{colamd, LuError, SymbolicSupernodalParams};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use faer::{Conj, MatMut};

use crate::csr::{CsrMatrix, CsrPattern};
use crate::direct::{
    check_finite, check_probe, check_rhs_len, probe_rhs, AnalysedPattern, DirectParams, DirectStats,
};
use crate::ordering::{build_permutation, Ordering, Permutation};
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// Everything computed by `analyze`.
struct LuSymbolic {
    pattern: AnalysedPattern,
    /// Column permutation of `M = Aᵀ` (so a row permutation of `A`).
    col_perm: Permutation,
    symbolic: SymbolicSupernodalLu<usize>,
    /// CSC of `Mᵀ = A` (i.e. CSR of `Aᵀ`): pointers, indices, and for each of its entries the
    /// position of the same entry in the input value array.
    t_ptr: Vec<usize>,
    t_idx: Vec<usize>,
    t_src: Vec<usize>,
    mem: MemBuffer,
}

/// Sparse LU with partial (row) pivoting for general square matrices.
///
/// A zero pivot is detected by a probe solve after the numeric factorisation (faer's supernodal
/// LU does not report numerically zero pivots, only structural rank deficiency; checked in
/// faer 0.24.4, lu.rs) and returned as [`LinalgError::Singular`]. The same probe rejects a
/// matrix that is singular to working precision (a rounding-level pivot, as in a pure-Neumann
/// Laplacian): its solution gives a condition-number lower bound of at least `1/ε`.
///
/// The matrix is equilibrated before factorisation, `(R A C) y = R b`, `x = C y`, with diagonal
/// `R` and `C` from Ruiz's iteration (every row and column of `R A C` ends with largest entry
/// close to one; see `equilibrate_into`).
/// Coupled problems mix equations whose entries differ by twenty orders of magnitude (stress
/// rows in pascals, mass rows in mol/s); without scaling, partial pivoting picks pivots by units
/// rather than by merit and the probe below would see a huge but meaningless "condition".
///
/// Memory warning (design notes, section 4): faer's sparse LU ran out of memory on a 202k-DOF
/// 3D elasticity matrix that Cholesky factors in 2.3 GiB. Prefer a symmetric formulation.
pub struct FaerLu {
    params: DirectParams,
    state: Option<LuSymbolic>,
    numeric: SupernodalLu<usize, f64>,
    row_fwd: Vec<usize>,
    row_inv: Vec<usize>,
    t_values: Vec<f64>,
    /// Equilibrated values `r_i a_ij c_j` in the input's CSR order.
    scaled: Vec<f64>,
    row_scale: Vec<f64>,
    col_scale: Vec<f64>,
    factored: bool,
    stats: DirectStats,
}

impl FaerLu {
    /// An LU solver with the given ordering and threads. [`Ordering::Amd`] means faer's COLAMD
    /// here, the column variant suited to LU; [`Ordering::NestedDissection`] orders the graph of
    /// `A + Aᵀ` and uses it as the column order.
    pub fn new(params: DirectParams) -> Self {
        FaerLu {
            params,
            state: None,
            numeric: SupernodalLu::new(),
            row_fwd: Vec::new(),
            row_inv: Vec::new(),
            t_values: Vec::new(),
            scaled: Vec::new(),
            row_scale: Vec::new(),
            col_scale: Vec::new(),
            factored: false,
            stats: DirectStats::default(),
        }
    }

    /// Counts of analyses and factorisations (`factor_nnz` is not reported by faer's LU: 0).
    pub fn stats(&self) -> DirectStats {
        self.stats
    }

    /// The fill-reducing permutation of the last analysis.
    pub fn permutation(&self) -> Option<&Permutation> {
        self.state.as_ref().map(|s| &s.col_perm)
    }

    fn solve_with_factor(&mut self, rhs: &mut [f64]) -> Result<(), LinalgError> {
        let state = self.state.as_mut().ok_or_else(missing_factor)?;
        let n = state.pattern.n();
        self.numeric.solve_transpose_in_place_with_conj(
            PermRef::new_checked(&self.row_fwd, &self.row_inv, n),
            PermRef::new_checked(&state.col_perm.fwd, &state.col_perm.inv, n),
            Conj::No,
            MatMut::from_column_major_slice_mut(rhs, n, 1),
            self.params.parallelism.to_faer(),
            MemStack::new(&mut state.mem),
        );
        check_finite(rhs)
    }
}

fn missing_factor() -> LinalgError {
    LinalgError::Usage("solve called before a successful factor".into())
}

fn out_of_memory(what: &str) -> LinalgError {
    LinalgError::Backend(format!("out of memory for {what}"))
}

/// CSR of `Aᵀ` with, for each entry, its position in `A`'s value array.
fn build_transpose(pattern: &CsrPattern) -> (Vec<usize>, Vec<usize>, Vec<usize>) {
    let n = pattern.n_cols;
    let mut ptr = vec![0usize; n + 1];
    for &j in &pattern.col_idx {
        ptr[j + 1] += 1;
    }
    for j in 0..n {
        ptr[j + 1] += ptr[j];
    }
    let mut next = ptr[..n].to_vec();
    let mut idx = vec![0usize; pattern.nnz()];
    let mut src = vec![0usize; pattern.nnz()];
    for i in 0..pattern.n_rows {
        for k in pattern.row_ptr[i]..pattern.row_ptr[i + 1] {
            let j = pattern.col_idx[k];
            idx[next[j]] = i;
            src[next[j]] = k;
            next[j] += 1;
        }
    }
    (ptr, idx, src)
}

fn column_permutation(
    pattern: &CsrPattern,
    ordering: Ordering,
) -> Result<Permutation, LinalgError> {
    if ordering != Ordering::Amd {
        return build_permutation(pattern, ordering);
    }
    let n = pattern.n_rows;
    let m = SymbolicSparseColMatRef::new_checked(n, n, &pattern.row_ptr, None, &pattern.col_idx);
    let mut fwd = vec![0usize; n];
    let mut inv = vec![0usize; n];
    let mut mem = MemBuffer::try_new(colamd::order_scratch::<usize>(n, n, pattern.nnz()))
        .map_err(|_| out_of_memory("COLAMD workspace"))?;
    colamd::order(
        &mut fwd,
        &mut inv,
        m,
        colamd::Control::default(),
        MemStack::new(&mut mem),
    )
    .map_err(|e| LinalgError::Backend(format!("COLAMD failed: {e:?}")))?;
    Ok(Permutation { fwd, inv })
}

impl LinearSolver for FaerLu {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.state = None;
        self.factored = false;
        let analysed = AnalysedPattern::new(pattern)?;
        let n = pattern.n_rows;
        let col_perm = column_permutation(pattern, self.params.ordering)?;
        let (t_ptr, t_idx, t_src) = build_transpose(pattern);
        let m_sym =
            SymbolicSparseColMatRef::new_checked(n, n, &pattern.row_ptr, None, &pattern.col_idx);
        let mt_sym = SymbolicSparseColMatRef::new_checked(n, n, &t_ptr, None, &t_idx);
        let q = PermRef::new_checked(&col_perm.fwd, &col_perm.inv, n);

        let req = StackReq::any_of(&[
            col_etree_scratch::<usize>(n, n),
            postorder_scratch::<usize>(n),
            column_counts_aat_scratch::<usize>(n, n),
            factorize_supernodal_symbolic_lu_scratch::<usize>(n, n),
        ]);
        let mut mem =
            MemBuffer::try_new(req).map_err(|_| out_of_memory("symbolic LU workspace"))?;
        let mut etree = vec![0usize; n];
        let mut post = vec![0usize; n];
        let mut col_counts = vec![0usize; n];
        let mut min_col = vec![0usize; n];
        let etree = col_etree(m_sym, Some(q), &mut etree, MemStack::new(&mut mem));
        postorder(&mut post, etree, MemStack::new(&mut mem));
        column_counts_ata(
            &mut col_counts,
            &mut min_col,
            mt_sym,
            Some(q),
            etree,
            &post,
            MemStack::new(&mut mem),
        );
        let symbolic = factorize_supernodal_symbolic_lu(
            m_sym,
            Some(q),
            &min_col,
            etree,
            &col_counts,
            MemStack::new(&mut mem),
            SymbolicSupernodalParams::default(),
        )
        .map_err(|e| LinalgError::Backend(format!("symbolic LU failed: {e:?}")))?;

        let par = self.params.parallelism.to_faer();
        let req =
            factorize_supernodal_numeric_lu_scratch::<usize, f64>(&symbolic, Default::default())
                .or(solve_transpose_in_place_scratch::<usize, f64>(n, 1, par));
        let mem = MemBuffer::try_new(req).map_err(|_| out_of_memory("numeric LU workspace"))?;
        self.t_values = vec![0.0; pattern.nnz()];
        self.row_fwd = vec![0; n];
        self.row_inv = vec![0; n];
        self.numeric = SupernodalLu::new();
        self.stats.n_analyses += 1;
        self.state = Some(LuSymbolic {
            pattern: analysed,
            col_perm,
            symbolic,
            t_ptr,
            t_idx,
            t_src,
            mem,
        });
        Ok(())
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.factored = false;
        let state = self
            .state
            .as_mut()
            .ok_or_else(|| LinalgError::Usage("factor called before analyze".into()))?;
        state.pattern.check(matrix)?;
        let n = state.pattern.n();
        let p = matrix.pattern.as_ref();
        equilibrate_into(
            matrix,
            &mut self.row_scale,
            &mut self.col_scale,
            &mut self.scaled,
        )?;
        for (t, &s) in self.t_values.iter_mut().zip(&state.t_src) {
            *t = self.scaled[s];
        }
        let m = SparseColMatRef::new(
            SymbolicSparseColMatRef::new_checked(n, n, &p.row_ptr, None, &p.col_idx),
            &self.scaled[..],
        );
        let mt = SparseColMatRef::new(
            SymbolicSparseColMatRef::new_checked(n, n, &state.t_ptr, None, &state.t_idx),
            &self.t_values[..],
        );
        let result = factorize_supernodal_numeric_lu(
            &mut self.row_fwd,
            &mut self.row_inv,
            &mut self.numeric,
            m,
            mt,
            PermRef::new_checked(&state.col_perm.fwd, &state.col_perm.inv, n),
            &state.symbolic,
            self.params.parallelism.to_faer(),
            MemStack::new(&mut state.mem),
            Default::default(),
        );
        self.stats.n_factorizations += 1;
        match result {
            Ok(()) => {}
            Err(LuError::SymbolicSingular { index }) => {
                // faer counts columns of the column-permuted matrix (faer 0.24.4 source,
                // sparse/linalg/lu.rs: column j is the input's column `fwd[j]`); report the
                // input's index, a column of M = Aᵀ, i.e. an equation (row) of A.
                let original = state.col_perm.fwd.get(index).copied();
                return Err(LinalgError::Singular { pivot: original });
            }
            Err(LuError::Generic(e)) => {
                return Err(LinalgError::Backend(format!("numeric LU failed: {e:?}")));
            }
        }
        // Probe solve: a zero pivot leaves infinities or NaNs in the factors, a rounding-level
        // pivot a huge solution (see `check_probe`).
        let b = probe_rhs(n);
        let mut x = b.clone();
        self.solve_with_factor(&mut x)?;
        let scaled = CsrMatrix {
            pattern: matrix.pattern.clone(),
            values: std::mem::take(&mut self.scaled),
        };
        let probe = check_probe(&scaled, &b, &x);
        self.scaled = scaled.values;
        probe?;
        self.factored = true;
        Ok(())
    }

    /// The row scales followed by the column scales of the last equilibration (the warm start
    /// of the next one); empty before the first factorisation.
    fn carried_state(&self) -> Vec<f64> {
        let mut s = self.row_scale.clone();
        s.extend_from_slice(&self.col_scale);
        s
    }

    fn restore_carried_state(&mut self, state: &[f64]) -> Result<(), LinalgError> {
        let n = self
            .state
            .as_ref()
            .ok_or_else(|| LinalgError::Usage("restore_carried_state before analyze".into()))?
            .pattern
            .n();
        if !state.is_empty() && state.len() != 2 * n {
            return Err(LinalgError::Usage(format!(
                "carried LU state has {} values, expected 0 or {} (row and column scales)",
                state.len(),
                2 * n
            )));
        }
        let (rows, cols) = state.split_at(state.len() / 2);
        self.row_scale = rows.to_vec();
        self.col_scale = cols.to_vec();
        Ok(())
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let n = self.state.as_ref().ok_or_else(missing_factor)?.pattern.n();
        if !self.factored {
            return Err(missing_factor());
        }
        check_rhs_len(n, rhs)?;
        for (b, r) in rhs.iter_mut().zip(&self.row_scale) {
            *b *= r;
        }
        self.solve_with_factor(rhs)?;
        for (x, c) in rhs.iter_mut().zip(&self.col_scale) {
            *x *= c;
        }
        Ok(SolveInfo {
            iterations: 0,
            residual: None,
        })
    }

    fn name(&self) -> String {
        let ordering = match self.params.ordering {
            Ordering::Amd => "colamd",
            other => other.name(),
        };
        format!("faer-lu/{ordering}")
    }

    /// The factorisations so far (the symbolic analyses are done once per pattern).
    fn activity(&self) -> Option<String> {
        Some(format!(
            "{} numeric factorisations; symbolic analyses: {}",
            self.stats.n_factorizations, self.stats.n_analyses
        ))
    }
}

/// Equilibration of `a` (see [`FaerLu`]): Ruiz's iteration, which divides every row and
/// column by the square root of its largest scaled entry until all of them are close to one
/// (D. Ruiz, "A scaling algorithm to equilibrate both rows and columns norms in matrices",
/// RAL-TR-2001-034, 2001; from memory). A zero row or column is singular.
fn equilibrate_into(
    a: &CsrMatrix,
    row_scale: &mut Vec<f64>,
    col_scale: &mut Vec<f64>,
    scaled: &mut Vec<f64>,
) -> Result<(), LinalgError> {
    const MAX_SWEEPS: usize = 30;
    const TOLERANCE: f64 = 0.05;
    let p = a.pattern.as_ref();
    let n = p.n_rows;
    // Warm start: the scaling of the previous factorisation of this pattern (Newton iterations
    // and time steps change the values little), which usually leaves one or two sweeps to do.
    let warm = row_scale.len() == n
        && col_scale.len() == p.n_cols
        && row_scale
            .iter()
            .chain(col_scale.iter())
            .all(|s| s.is_finite() && *s > 0.0);
    if !warm {
        row_scale.clear();
        row_scale.resize(n, 1.0);
        col_scale.clear();
        col_scale.resize(p.n_cols, 1.0);
    }
    scaled.clear();
    scaled.extend_from_slice(&a.values);
    if warm {
        for i in 0..n {
            for k in p.row_ptr[i]..p.row_ptr[i + 1] {
                scaled[k] = row_scale[i] * a.values[k] * col_scale[p.col_idx[k]];
            }
        }
    }
    let mut row_max = vec![0.0f64; n];
    let mut col_max = vec![0.0f64; p.n_cols];
    for sweep in 0..MAX_SWEEPS {
        row_max.iter_mut().for_each(|m| *m = 0.0);
        col_max.iter_mut().for_each(|m| *m = 0.0);
        for i in 0..n {
            for k in p.row_ptr[i]..p.row_ptr[i + 1] {
                let v = scaled[k].abs();
                row_max[i] = row_max[i].max(v);
                col_max[p.col_idx[k]] = col_max[p.col_idx[k]].max(v);
            }
        }
        if let Some(i) = row_max.iter().position(|&m| m == 0.0 || !m.is_finite()) {
            return Err(LinalgError::Singular { pivot: Some(i) });
        }
        if let Some(j) = col_max.iter().position(|&m| m == 0.0 || !m.is_finite()) {
            return Err(LinalgError::Singular { pivot: Some(j) });
        }
        let off = row_max
            .iter()
            .chain(&col_max)
            .fold(0.0f64, |m, &v| m.max((1.0 - v).abs()));
        if off <= TOLERANCE && (sweep > 0 || warm) {
            break;
        }
        for (r, m) in row_scale.iter_mut().zip(&row_max) {
            *r /= m.sqrt();
        }
        for (c, m) in col_scale.iter_mut().zip(&col_max) {
            *c /= m.sqrt();
        }
        for i in 0..n {
            for k in p.row_ptr[i]..p.row_ptr[i + 1] {
                scaled[k] = row_scale[i] * a.values[k] * col_scale[p.col_idx[k]];
            }
        }
    }
    Ok(())
}

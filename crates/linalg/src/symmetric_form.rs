//! A solver for coupled systems that are nearly symmetric after their rows are rearranged.
//!
//! The Jacobian `J` of a mixed problem is often assembled with its equations in an order (and
//! units) that hides a symmetric structure: the Jacobian of the coupled displacement–
//! concentration–potential problem becomes symmetric, up to the terms of a concentration-
//! dependent mobility and of boundary exchange, once the mass and potential rows of each node
//! trade places and are scaled (see docs/theory.md, "Symmetric form of the coupled Jacobian").
//! The caller describes that rearrangement as a [`RowTransform`] `T` (a row permutation with
//! a scale per row). This solver then
//!
//! 1. forms `A = T J` and its symmetric part `S = (A + Aᵀ)/2`;
//! 2. equilibrates `S` symmetrically, `Ŝ = D S D` (Ruiz's iteration with square roots of row
//!    maxima, which keeps the symmetry);
//! 3. factors `Ŝ` with the signed `LDLᵀ` of [`crate::ldlt`] (static pivots whose signs the
//!    transform gives: `+` for the positive definite block, `−` for the potential block), whose
//!    fill is that of a symmetric factorisation of the pattern, far below the `AᵀA`-bounded
//!    fill of a sparse LU with partial pivoting;
//! 4. solves `(D A D) y = D T b`, `x = D y` by GMRES right-preconditioned with `Ŝ⁻¹` (where `A`
//!    is exactly symmetric, one iteration; otherwise as many as the nonsymmetric part needs).
//!
//! The factorisation of `Ŝ` may be kept from one `factor` call to the next while GMRES still
//! converges in few iterations ([`SymmetricFormParams::reuse_iterations`]): the solves stay
//! exact to the GMRES tolerance whatever the preconditioner's age. If the signed `LDLᵀ` breaks
//! down, or GMRES does not converge even with a fresh preconditioner, the solve falls back to
//! the sparse LU ([`crate::lu::FaerLu`]) on `J` itself, and counts it in the statistics.
//! Without a transform (a system that provides none) every solve is the LU's.

use std::sync::Arc;

use rayon::prelude::*;

use crate::csr::{CsrMatrix, CsrPattern};
use crate::direct::{check_rhs_len, DirectParams};
use crate::gmres::gmres_iterate;
use crate::krylov::{spmv, spmv_u32, KrylovParams};
use crate::ldlt::{FaerLdlt, LdltPivoting, SignedPivots};
use crate::lu::FaerLu;
use crate::ordering::Ordering;
use crate::parallel::Parallelism;
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// A row rearrangement `T` of a square system: row `i` of `J` becomes row `target[i]` of
/// `T J`, multiplied by `scale[i]`.
#[derive(Clone, Debug, PartialEq)]
pub struct RowTransform {
    /// A permutation of `0..n`.
    pub target: Vec<usize>,
    /// Nonzero, finite factors.
    pub scale: Vec<f64>,
    /// Expected sign (`+1` or `−1`) of the pivot of each unknown in the symmetric form; `0`
    /// where it is not known in advance (then the factorisation pivots: Bunch–Kaufman within
    /// supernodes instead of static signed pivots).
    pub signs: Vec<i8>,
}

impl RowTransform {
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.target.len()
    }

    /// True for a transform of no rows.
    pub fn is_empty(&self) -> bool {
        self.target.is_empty()
    }

    fn check(&self, n: usize) -> Result<(), LinalgError> {
        let bad = |what: &str| Err(LinalgError::Usage(format!("row transform: {what}")));
        if self.target.len() != n || self.scale.len() != n || self.signs.len() != n {
            return bad(&format!(
                "lengths {}, {}, {} for {n} rows",
                self.target.len(),
                self.scale.len(),
                self.signs.len()
            ));
        }
        let mut seen = vec![false; n];
        for &t in &self.target {
            if t >= n || seen[t] {
                return bad("target is not a permutation");
            }
            seen[t] = true;
        }
        if self.scale.iter().any(|s| !s.is_finite() || *s == 0.0) {
            return bad("a scale is zero or not finite");
        }
        Ok(())
    }
}

/// Settings of [`SymmetricFormSolver`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SymmetricFormParams {
    /// Fill-reducing ordering of the symmetric factorisation.
    pub ordering: Ordering,
    /// Threads for the factorisations (and the LU fallback's solves).
    pub parallelism: Parallelism,
    /// Threads for the solve phase: GMRES's matrix–vector products and the preconditioner's
    /// triangular solves (which, with a sequential factorisation, run the two parts of the
    /// elimination-tree split at once; `FaerLdlt::set_solve_parallelism`). None: as
    /// `parallelism`. Results do not depend on it.
    pub solve_parallelism: Option<Parallelism>,
    /// GMRES tolerance (relative, on the equilibrated system), restart and iteration limit.
    pub krylov: KrylovParams,
    /// Keep the factorisation of an earlier `factor` call while the last solve needed at most
    /// this many GMRES iterations (0: factor on every call).
    pub reuse_iterations: usize,
    /// Stop GMRES at the reduction asked for through [`LinearSolver::set_requested_reduction`]
    /// (an inexact Newton method's forcing term, never looser than `MAX_REQUESTED_REDUCTION`)
    /// instead of always at `krylov.rel_tol`. Off by default: the request is ignored and every
    /// solve is as tight as `krylov.rel_tol`.
    pub follow_requested_reduction: bool,
}

impl Default for SymmetricFormParams {
    /// AMD ordering, sequential, GMRES(40) to `1e-8` in at most 80 iterations, preconditioner
    /// kept while a solve takes at most 12 iterations (measured on the charging-particle
    /// benchmark, docs/performance.md: with the two-thread solve phase a fresh factorisation
    /// costs about as much as ten GMRES iterations there; 6, 9, 12, 16 and 24 were compared,
    /// and on the spinodal benchmark the choice made no difference above the noise).
    fn default() -> Self {
        SymmetricFormParams {
            ordering: Ordering::Amd,
            parallelism: Parallelism::Sequential,
            solve_parallelism: None,
            krylov: KrylovParams {
                rel_tol: 1e-8,
                abs_tol: 0.0,
                max_iter: 80,
                restart: 40,
            },
            reuse_iterations: 12,
            follow_requested_reduction: false,
        }
    }
}

/// The loosest reduction a solve accepts from [`LinearSolver::set_requested_reduction`]: a
/// Newton correction from a solve that reduced the residual by less than this would hardly be
/// a Newton step any more.
const MAX_REQUESTED_REDUCTION: f64 = 0.1;

/// The GMRES iterations a solve would have needed for the reduction `full_tol`, from the
/// iterations it took and the reduction it reached (assuming the same reduction per iteration,
/// rounded up): a solve asked for less ends after fewer iterations with the same
/// preconditioner, and the reuse test must not read that as a better preconditioner.
fn equivalent_iterations(info: &SolveInfo, full_tol: f64) -> usize {
    match info.residual {
        Some(r) if r > full_tol && r < 1.0 && info.iterations > 0 => {
            let scaled = info.iterations as f64 * full_tol.ln() / r.ln();
            scaled.ceil() as usize
        }
        _ => info.iterations,
    }
}

/// What the solver did so far.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct SymmetricFormStats {
    /// `factor` calls.
    pub factor_calls: usize,
    /// Factorisations of the symmetric part (the rest reused an earlier one).
    pub symmetric_factorizations: usize,
    /// Solves.
    pub solves: usize,
    /// GMRES iterations over all solves.
    pub gmres_iterations: usize,
    /// Solves done by the LU fallback.
    pub lu_solves: usize,
    /// Wall time spent in `factor` (symmetric factorisations, the copy of `J`) and in `solve_in_place` (GMRES with its preconditioner, LU fallbacks).
    pub factor_time: std::time::Duration,
    pub solve_time: std::time::Duration,
}

/// Index structure for one transform permutation on one pattern.
struct Structure {
    target: Vec<usize>,
    signs: Vec<i8>,
    /// Pattern of `A = T J`.
    a_pattern: Arc<CsrPattern>,
    /// For each entry of `A` (CSR order): the index of the same value in `J`.
    a_src: Vec<usize>,
    /// The row of `J` that row `r` of `A` came from.
    a_row_src: Vec<usize>,
    /// Pattern of `S` (symmetric closure of `A`'s pattern).
    s_pattern: Arc<CsrPattern>,
    /// For each entry `(r, c)` of `A`: positions of `(r, c)` and `(c, r)` in `S`.
    s_pos: Vec<[usize; 2]>,
}

impl Structure {
    fn build(j: &CsrPattern, t: &RowTransform) -> Structure {
        let n = j.n_rows;
        let mut a_row_src = vec![0; n];
        for (i, &r) in t.target.iter().enumerate() {
            a_row_src[r] = i;
        }
        let mut row_ptr = Vec::with_capacity(n + 1);
        row_ptr.push(0);
        let mut col_idx = Vec::with_capacity(j.nnz());
        let mut a_src = Vec::with_capacity(j.nnz());
        for &i in &a_row_src {
            col_idx.extend_from_slice(j.row(i));
            a_src.extend(j.row_ptr[i]..j.row_ptr[i + 1]);
            row_ptr.push(col_idx.len());
        }
        let a_pattern = CsrPattern {
            n_rows: n,
            n_cols: j.n_cols,
            row_ptr,
            col_idx,
        };
        // `S = A + Aᵀ` row by row, merging row `r` of `A` with row `r` of `Aᵀ` (both sorted),
        // and the places of each entry of `A` in it, in time linear in the entries (the
        // version with a vector per row and a search per entry took 90–110 ms on the charging
        // particle's 1.3 M entries).
        let nnz = a_pattern.nnz();
        // `Aᵀ` by counting: for each column, the rows holding it (ascending) and their entries.
        let mut t_ptr = vec![0usize; n + 1];
        for &c in &a_pattern.col_idx {
            t_ptr[c + 1] += 1;
        }
        for c in 0..n {
            t_ptr[c + 1] += t_ptr[c];
        }
        let mut fill = t_ptr.clone();
        let mut t_row = vec![0usize; nnz];
        let mut t_entry = vec![0usize; nnz];
        for r in 0..n {
            for k in a_pattern.row_ptr[r]..a_pattern.row_ptr[r + 1] {
                let c = a_pattern.col_idx[k];
                t_row[fill[c]] = r;
                t_entry[fill[c]] = k;
                fill[c] += 1;
            }
        }
        let mut row_ptr = Vec::with_capacity(n + 1);
        row_ptr.push(0);
        let mut col_idx = Vec::with_capacity(nnz + nnz / 8);
        let mut s_pos = vec![[0usize; 2]; nnz];
        for r in 0..n {
            let (mut ka, ea) = (a_pattern.row_ptr[r], a_pattern.row_ptr[r + 1]);
            let (mut kt, et) = (t_ptr[r], t_ptr[r + 1]);
            while ka < ea || kt < et {
                let ca = if ka < ea {
                    a_pattern.col_idx[ka]
                } else {
                    usize::MAX
                };
                let ct = if kt < et { t_row[kt] } else { usize::MAX };
                let col = ca.min(ct);
                let here = col_idx.len();
                col_idx.push(col);
                if ca == col {
                    // Entry (r, col) of A.
                    s_pos[ka][0] = here;
                    ka += 1;
                }
                if ct == col {
                    // Entry (col, r) of A: its transpose place.
                    s_pos[t_entry[kt]][1] = here;
                    kt += 1;
                }
            }
            row_ptr.push(col_idx.len());
        }
        let s_pattern = CsrPattern {
            n_rows: n,
            n_cols: n,
            row_ptr,
            col_idx,
        };
        Structure {
            target: t.target.clone(),
            signs: t.signs.clone(),
            a_pattern: Arc::new(a_pattern),
            a_src,
            a_row_src,
            s_pattern: Arc::new(s_pattern),
            s_pos,
        }
    }
}

/// The symmetric-part preconditioned solver (see the module documentation).
pub struct SymmetricFormSolver {
    params: SymmetricFormParams,
    pattern: Option<Arc<CsrPattern>>,
    transform: Option<RowTransform>,
    structure: Option<Structure>,
    ldlt: Option<FaerLdlt>,
    /// Symmetric scaling `D` of the current factorisation.
    d: Vec<f64>,
    /// Whether `ldlt` holds a usable factorisation.
    preconditioner_ready: bool,
    /// Whether the factorisation was built from the current `J`.
    preconditioner_fresh: bool,
    /// GMRES iterations of the last solve, scaled to the full tolerance `krylov.rel_tol` when
    /// that solve was asked for less (see [`equivalent_iterations`]): what the reuse test of
    /// `factor` compares with `reuse_iterations`.
    last_iterations: usize,
    /// The reduction asked for by [`LinearSolver::set_requested_reduction`], if any.
    requested: Option<f64>,
    /// The current `J`, for the LU fallback and for refreshing the preconditioner.
    jac: Option<CsrMatrix>,
    /// The column indices of `J`'s pattern as `u32`, for GMRES's products (None: too many
    /// columns for `u32`).
    cols32: Option<Vec<u32>>,
    lu: Option<FaerLu>,
    lu_factored: bool,
    /// The transform and the values of `J` the current preconditioner was built from (its
    /// inputs: the build is deterministic), kept for [`LinearSolver::carried_state`].
    built_from: Option<(RowTransform, Vec<f64>)>,
    stats: SymmetricFormStats,
}

impl SymmetricFormSolver {
    /// A solver with the given settings.
    pub fn new(params: SymmetricFormParams) -> Self {
        SymmetricFormSolver {
            params,
            pattern: None,
            transform: None,
            structure: None,
            ldlt: None,
            d: Vec::new(),
            preconditioner_ready: false,
            preconditioner_fresh: false,
            last_iterations: 0,
            requested: None,
            jac: None,
            cols32: None,
            lu: None,
            lu_factored: false,
            built_from: None,
            stats: SymmetricFormStats::default(),
        }
    }

    /// Counts of factorisations, GMRES iterations and fallbacks so far.
    pub fn stats(&self) -> SymmetricFormStats {
        self.stats
    }

    fn solve_parallelism(&self) -> Parallelism {
        self.params
            .solve_parallelism
            .unwrap_or(self.params.parallelism)
    }

    fn direct_params(&self) -> DirectParams {
        DirectParams {
            ordering: self.params.ordering,
            parallelism: self.params.parallelism,
        }
    }

    /// Make sure the structure and the symbolic `LDLᵀ` belong to the current transform.
    fn prepare_structure(&mut self) -> Result<(), LinalgError> {
        let (Some(pattern), Some(t)) = (self.pattern.as_ref(), self.transform.as_ref()) else {
            return Ok(());
        };
        let current = self
            .structure
            .as_ref()
            .is_some_and(|s| s.target == t.target && s.signs == t.signs);
        if current {
            return Ok(());
        }
        let structure = Structure::build(pattern, t);
        // A sign 0 says the pivot's sign is not known in advance (an indefinite block, e.g. a
        // non-convex free energy): static pivots would meet wrong signs, so the factorisation
        // pivots (Bunch–Kaufman within supernodes) instead.
        let pivots = if t.signs.contains(&0) {
            LdltPivoting::IntranodeBunchKaufman
        } else {
            LdltPivoting::Signed(SignedPivots::with_signs(t.signs.clone()))
        };
        let mut ldlt = FaerLdlt::with_pivoting(self.direct_params(), pivots);
        ldlt.set_solve_parallelism(self.solve_parallelism());
        // Only a preconditioner: GMRES corrects its rounding, so `Ŝ` is factored (and the
        // factor applied) in single precision (FaerLdlt::set_single_precision_factor).
        ldlt.set_single_precision_factor(true);
        ldlt.analyze(&structure.s_pattern)?;
        self.structure = Some(structure);
        self.ldlt = Some(ldlt);
        self.preconditioner_ready = false;
        self.d.clear();
        Ok(())
    }

    /// Factor the symmetric part of `T J` (for the `J` stored in `self.jac`) and set `D`.
    fn build_preconditioner(&mut self) -> Result<(), LinalgError> {
        self.preconditioner_ready = false;
        let par = self.solve_parallelism().is_parallel();
        let (Some(st), Some(t), Some(jac), Some(ldlt)) = (
            self.structure.as_ref(),
            self.transform.as_ref(),
            self.jac.as_ref(),
            self.ldlt.as_mut(),
        ) else {
            return Err(LinalgError::Usage("symmetric form not prepared".into()));
        };
        let mut s = CsrMatrix::zeros(st.s_pattern.clone());
        for r in 0..st.a_pattern.n_rows {
            let src_row = st.a_row_src[r];
            let scale = 0.5 * t.scale[src_row];
            for k in st.a_pattern.row_ptr[r]..st.a_pattern.row_ptr[r + 1] {
                let v = scale * jac.values[st.a_src[k]];
                let [rc, cr] = st.s_pos[k];
                s.values[rc] += v;
                s.values[cr] += v;
            }
        }
        symmetric_equilibrate_into(&mut s, &mut self.d, par)?;
        ldlt.factor(&s)?;
        self.stats.symmetric_factorizations += 1;
        self.preconditioner_ready = true;
        self.preconditioner_fresh = true;
        match self.built_from.as_mut() {
            Some((bt, bj)) => {
                bt.clone_from(t);
                bj.clone_from(&jac.values);
            }
            None => self.built_from = Some((t.clone(), jac.values.clone())),
        }
        Ok(())
    }

    fn lu_solve(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let jac = self.jac.as_ref().ok_or_else(missing_factor)?;
        if self.lu.is_none() {
            let pattern = self.pattern.as_ref().ok_or_else(missing_factor)?;
            let mut lu = FaerLu::new(self.direct_params());
            lu.analyze(pattern)?;
            self.lu = Some(lu);
        }
        let lu = self.lu.as_mut().expect("set above");
        if !self.lu_factored {
            lu.factor(jac)?;
            self.lu_factored = true;
        }
        self.stats.lu_solves += 1;
        lu.solve_in_place(rhs)
    }

    /// GMRES on `D T J D y = D T b` with the current preconditioner; `rhs` is unchanged on
    /// failure.
    fn gmres_solve(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let solve_par = self.solve_parallelism();
        let (Some(t), Some(jac), Some(ldlt)) = (
            self.transform.as_ref(),
            self.jac.as_ref(),
            self.ldlt.as_mut(),
        ) else {
            return Err(missing_factor());
        };
        let d = &self.d;
        let cols32 = self.cols32.as_deref();
        let n = rhs.len();
        let mut y = vec![0.0; n];
        for (i, &b) in rhs.iter().enumerate() {
            let r = t.target[i];
            y[r] = d[r] * t.scale[i] * b;
        }
        let mut precondition = |r: &[f64], z: &mut [f64]| {
            z.copy_from_slice(r);
            ldlt.apply_factor(z)
        };
        let mut krylov = self.params.krylov;
        if let Some(r) = self.requested {
            krylov.rel_tol = r.clamp(krylov.rel_tol, MAX_REQUESTED_REDUCTION);
        }
        // `D T J D x` without forming the matrix: `J` on `D x`, then each row of `J` to its
        // place in `T J` with its factor `d_r s_i` (rows of `J` are never copied).
        let (mut dx, mut jdx) = (vec![0.0; n], vec![0.0; n]);
        let mut product = |x: &[f64], out: &mut [f64]| {
            for ((u, xi), di) in dx.iter_mut().zip(x).zip(d) {
                *u = xi * di;
            }
            match cols32 {
                Some(cols) => spmv_u32(jac, cols, &dx, &mut jdx, solve_par),
                None => spmv(jac, &dx, &mut jdx, solve_par),
            }
            for (i, (v, s)) in jdx.iter().zip(&t.scale).enumerate() {
                let r = t.target[i];
                out[r] = d[r] * s * v;
            }
        };
        let info = gmres_iterate(&mut product, &mut precondition, &krylov, &mut y)?;
        for (x, (yi, di)) in rhs.iter_mut().zip(y.iter().zip(d)) {
            *x = yi * di;
        }
        Ok(info)
    }
}

impl SymmetricFormSolver {
    /// GMRES with the current preconditioner, counted in the statistics: `Ok(None)` when it
    /// did not converge (then `rhs` is unchanged and the next `factor` builds a new
    /// factorisation).
    fn counted_gmres(&mut self, rhs: &mut [f64]) -> Result<Option<SolveInfo>, LinalgError> {
        match self.gmres_solve(rhs) {
            Ok(info) => {
                self.stats.gmres_iterations += info.iterations;
                self.last_iterations = equivalent_iterations(&info, self.params.krylov.rel_tol);
                Ok(Some(info))
            }
            Err(LinalgError::NotConverged { iterations, .. }) => {
                self.stats.gmres_iterations += iterations;
                self.last_iterations = usize::MAX;
                Ok(None)
            }
            Err(e) => Err(e),
        }
    }
}

fn missing_factor() -> LinalgError {
    LinalgError::Usage("solve called before a successful factor".into())
}

/// Symmetric Ruiz scaling: `d_i ← d_i / sqrt(max_j |d_i s_ij d_j|)` until every row maximum of
/// `D S D` is within 5 % of one (at most 30 sweeps), then `s := D S D`. Keeps `S` symmetric
/// (Ruiz, RAL-TR-2001-034, 2001, the symmetric case; from memory). A zero row is singular.
/// With `par`, rows are measured and scaled on rayon's threads (row by row, the same values).
fn symmetric_equilibrate_into(
    s: &mut CsrMatrix,
    d: &mut Vec<f64>,
    par: bool,
) -> Result<(), LinalgError> {
    const MAX_SWEEPS: usize = 30;
    const TOLERANCE: f64 = 0.05;
    let p = s.pattern.clone();
    let n = p.n_rows;
    d.clear();
    d.resize(n, 1.0);
    let original = s.values.clone();
    let mut row_max = vec![0.0f64; n];
    for _ in 0..MAX_SWEEPS {
        let d_now = &*d;
        let measure = |(i, m): (usize, &mut f64)| {
            *m = scaled_row_max(
                d_now[i],
                &original[p.row_ptr[i]..p.row_ptr[i + 1]],
                &p.col_idx[p.row_ptr[i]..p.row_ptr[i + 1]],
                d_now,
            );
        };
        if par && n >= PAR_MIN_ROWS {
            row_max
                .par_iter_mut()
                .enumerate()
                .with_min_len(PAR_MIN_ROWS / 4)
                .for_each(measure);
        } else {
            row_max.iter_mut().enumerate().for_each(measure);
        }
        if let Some(i) = row_max
            .iter()
            .position(|m| m.is_nan() || *m <= 0.0 || !m.is_finite())
        {
            return Err(LinalgError::Singular { pivot: Some(i) });
        }
        if row_max.iter().all(|m| (m - 1.0).abs() <= TOLERANCE) {
            break;
        }
        for (di, m) in d.iter_mut().zip(&row_max) {
            *di /= m.sqrt();
        }
    }
    let d = &*d;
    for_each_row_mut(&p, &mut s.values, par, |i, row| {
        let start = p.row_ptr[i];
        for (v, k) in row.iter_mut().zip(start..) {
            *v = d[i] * original[k] * d[p.col_idx[k]];
        }
    });
    Ok(())
}

/// Fewest rows for which the row loops of this module use threads.
const PAR_MIN_ROWS: usize = 4096;

/// `f(i, values of row i)` for every row of `p`; with `par` (and at least [`PAR_MIN_ROWS`]
/// rows) over blocks of rows on rayon's threads.
fn for_each_row_mut(
    p: &CsrPattern,
    values: &mut [f64],
    par: bool,
    f: impl Fn(usize, &mut [f64]) + Sync,
) {
    let n = p.n_rows;
    if !par || n < PAR_MIN_ROWS {
        for i in 0..n {
            f(i, &mut values[p.row_ptr[i]..p.row_ptr[i + 1]]);
        }
        return;
    }
    const BLOCKS: usize = 64;
    let per_block = n.div_ceil(BLOCKS);
    let mut blocks = Vec::with_capacity(BLOCKS);
    let mut rest = values;
    let mut taken = p.row_ptr[0];
    for r0 in (0..n).step_by(per_block) {
        let r1 = (r0 + per_block).min(n);
        let (head, tail) = rest.split_at_mut(p.row_ptr[r1] - taken);
        taken = p.row_ptr[r1];
        rest = tail;
        blocks.push((r0..r1, head));
    }
    blocks.into_par_iter().for_each(|(rows, block)| {
        let base = p.row_ptr[rows.start];
        for i in rows {
            f(i, &mut block[p.row_ptr[i] - base..p.row_ptr[i + 1] - base]);
        }
    });
}

/// `max_k |d_i a_k d_{col_k}|` over one row (0 for an empty row), in four independent running
/// maxima so that the comparisons do not wait on each other. A NaN entry is passed over, as
/// `f64::max` does; the caller checks the result.
#[inline]
fn scaled_row_max(di: f64, values: &[f64], cols: &[usize], d: &[f64]) -> f64 {
    let mut m = [0.0f64; 4];
    let chunks = values.chunks_exact(4).zip(cols.chunks_exact(4));
    for (v4, c4) in chunks {
        for t in 0..4 {
            let x = (di * v4[t] * d[c4[t]]).abs();
            if x > m[t] {
                m[t] = x;
            }
        }
    }
    let done = values.len() - values.len() % 4;
    for (v, &c) in values[done..].iter().zip(&cols[done..]) {
        let x = (di * v * d[c]).abs();
        if x > m[0] {
            m[0] = x;
        }
    }
    m[0].max(m[1]).max(m[2].max(m[3]))
}

impl LinearSolver for SymmetricFormSolver {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        if pattern.n_rows != pattern.n_cols {
            return Err(LinalgError::Usage("matrix is not square".into()));
        }
        self.pattern = Some(Arc::new(pattern.clone()));
        self.cols32 = pattern
            .col_idx
            .iter()
            .map(|&c| u32::try_from(c).ok())
            .collect();
        self.structure = None;
        self.ldlt = None;
        self.lu = None;
        self.lu_factored = false;
        self.preconditioner_ready = false;
        self.jac = None;
        self.prepare_structure()
    }

    /// What a later solve depends on besides the next matrix: whether a preconditioner is
    /// kept, the GMRES count that decides its reuse, the transform and `J` it was built from
    /// (it is rebuilt from them on restore, to the same bits), and the LU's carried state.
    /// Layout: `[ready, last_iterations, n, target (n), scale (n), signs (n), m, J (m),
    /// LU state...]`, with `n = m = 0` when no preconditioner is kept.
    fn carried_state(&self) -> Vec<f64> {
        let mut out = vec![
            f64::from(u8::from(self.preconditioner_ready)),
            self.last_iterations as f64,
        ];
        match (&self.built_from, self.preconditioner_ready) {
            (Some((t, j)), true) => {
                out.push(t.len() as f64);
                out.extend(t.target.iter().map(|&v| v as f64));
                out.extend_from_slice(&t.scale);
                out.extend(t.signs.iter().map(|&v| f64::from(v)));
                out.push(j.len() as f64);
                out.extend_from_slice(j);
            }
            _ => out.extend([0.0, 0.0]),
        }
        if let Some(lu) = &self.lu {
            out.extend(lu.carried_state());
        }
        out
    }

    fn restore_carried_state(&mut self, state: &[f64]) -> Result<(), LinalgError> {
        if state.is_empty() {
            return Ok(());
        }
        let bad = || LinalgError::Usage("carried symmetric-form state is malformed".into());
        let take = |at: &mut usize, k: usize| -> Result<&[f64], LinalgError> {
            let part = state.get(*at..*at + k).ok_or_else(bad)?;
            *at += k;
            Ok(part)
        };
        let mut at = 0;
        let head = take(&mut at, 3)?;
        let (ready, last_iterations, n) = (head[0] != 0.0, head[1] as usize, head[2] as usize);
        let target: Vec<usize> = take(&mut at, n)?.iter().map(|&v| v as usize).collect();
        let scale = take(&mut at, n)?.to_vec();
        let signs: Vec<i8> = take(&mut at, n)?.iter().map(|&v| v as i8).collect();
        let m = take(&mut at, 1)?[0] as usize;
        let values = take(&mut at, m)?.to_vec();
        let lu_state = &state[at..];
        if ready {
            let pattern = self.pattern.clone().ok_or_else(bad)?;
            if values.len() != pattern.nnz() {
                return Err(bad());
            }
            self.set_row_transform(RowTransform {
                target,
                scale,
                signs,
            })?;
            self.jac = Some(CsrMatrix { pattern, values });
            self.build_preconditioner()?;
        }
        self.last_iterations = last_iterations;
        if !lu_state.is_empty() {
            let pattern = self.pattern.as_ref().ok_or_else(bad)?;
            let mut lu = FaerLu::new(self.direct_params());
            lu.analyze(pattern)?;
            lu.restore_carried_state(lu_state)?;
            self.lu = Some(lu);
        }
        Ok(())
    }

    fn set_row_transform(&mut self, transform: RowTransform) -> Result<(), LinalgError> {
        let n = self.pattern.as_ref().map_or(transform.len(), |p| p.n_rows);
        transform.check(n)?;
        self.transform = Some(transform);
        self.prepare_structure()
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        let start = std::time::Instant::now();
        let result = self.factor_timed(matrix);
        self.stats.factor_time += start.elapsed();
        result
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let start = std::time::Instant::now();
        let result = self.solve_timed(rhs);
        self.stats.solve_time += start.elapsed();
        result
    }

    fn set_requested_reduction(&mut self, reduction: Option<f64>) {
        self.requested = reduction.filter(|_| self.params.follow_requested_reduction);
    }

    fn follows_requested_reduction(&self) -> bool {
        self.params.follow_requested_reduction
    }

    fn name(&self) -> String {
        format!("gmres/symmetric-ldlt/{}", self.params.ordering.name())
    }

    fn activity(&self) -> Option<String> {
        let s = self.stats;
        Some(format!(
            "{} matrices, {} symmetric factorisations, {} solves with {} GMRES iterations, {} solves by the LU fallback; {:.2} s in factor, {:.2} s in solve",
            s.factor_calls,
            s.symmetric_factorizations,
            s.solves,
            s.gmres_iterations,
            s.lu_solves,
            s.factor_time.as_secs_f64(),
            s.solve_time.as_secs_f64()
        ))
    }
}

impl SymmetricFormSolver {
    fn factor_timed(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.stats.factor_calls += 1;
        let pattern = self
            .pattern
            .as_ref()
            .ok_or_else(|| LinalgError::Usage("factor called before analyze".into()))?;
        if matrix.pattern.as_ref() != pattern.as_ref() {
            return Err(LinalgError::Usage(
                "matrix pattern differs from the analysed one".into(),
            ));
        }
        match self.jac.as_mut() {
            Some(j) => j.values.copy_from_slice(&matrix.values),
            None => self.jac = Some(matrix.clone()),
        }
        self.lu_factored = false;
        self.preconditioner_fresh = false;
        if self.structure.is_none() {
            return Ok(());
        }
        let reuse = self.preconditioner_ready
            && self.params.reuse_iterations > 0
            && self.last_iterations <= self.params.reuse_iterations;
        if !reuse {
            // A breakdown of the signed factorisation is not an error of the system: the
            // solves fall back to the LU.
            if self.build_preconditioner().is_err() {
                self.preconditioner_ready = false;
            }
        }
        Ok(())
    }

    fn solve_timed(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let n = self.pattern.as_ref().ok_or_else(missing_factor)?.n_rows;
        check_rhs_len(n, rhs)?;
        self.stats.solves += 1;
        if !self.preconditioner_ready {
            return self.lu_solve(rhs);
        }
        if let Some(info) = self.counted_gmres(rhs)? {
            return Ok(info);
        }
        // Not converged: retry with a preconditioner from this very matrix, then the LU.
        if !self.preconditioner_fresh && self.build_preconditioner().is_ok() {
            if let Some(info) = self.counted_gmres(rhs)? {
                return Ok(info);
            }
        }
        self.lu_solve(rhs)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The structure of `S = A + Aᵀ`, `A = T J`, against a direct construction: a pattern that
    /// is not structurally symmetric (with empty rows) and a row permutation with cycles.
    #[test]
    fn structure_is_the_symmetric_closure_of_the_permuted_pattern() {
        let n = 40;
        // Row i of J holds i, (7 i + 3) mod n and (i * i) mod n when i is not a multiple of 9.
        let rows: Vec<Vec<usize>> = (0..n)
            .map(|i| {
                if i % 9 == 4 {
                    Vec::new()
                } else {
                    vec![i, (7 * i + 3) % n, (i * i) % n]
                }
            })
            .collect();
        let j = CsrPattern::from_rows(n, rows);
        let target: Vec<usize> = (0..n).map(|i| (i * 13 + 5) % n).collect();
        let t = RowTransform {
            target: target.clone(),
            scale: vec![1.0; n],
            signs: vec![1; n],
        };
        let st = Structure::build(&j, &t);
        // A: row target[i] is row i of J.
        let mut expected: Vec<Vec<usize>> = vec![Vec::new(); n];
        for (i, &r) in target.iter().enumerate() {
            for &c in j.row(i) {
                expected[r].push(c);
                expected[c].push(r);
            }
        }
        let s_expected = CsrPattern::from_rows(n, expected);
        assert_eq!(*st.s_pattern, s_expected);
        for r in 0..n {
            assert_eq!(st.a_pattern.row(r), j.row(st.a_row_src[r]));
            for k in st.a_pattern.row_ptr[r]..st.a_pattern.row_ptr[r + 1] {
                let c = st.a_pattern.col_idx[k];
                assert_eq!(j.col_idx[st.a_src[k]], c);
                assert_eq!(Some(st.s_pos[k][0]), s_expected.find(r, c));
                assert_eq!(Some(st.s_pos[k][1]), s_expected.find(c, r));
            }
        }
    }
}

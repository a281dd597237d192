//! Fill-reducing orderings for the sparse direct solvers.
//!
//! In 3D the ordering decides everything: on a 202k-DOF 3D elasticity matrix measured on this
//! kind of machine (design notes, section 4), faer's supernodal Cholesky took 12 s and 2.3 GiB
//! with METIS nested dissection but 123 s and 8.7 GiB with AMD. In 2D plain AMD was the cheaper
//! of the two. Hence [`Ordering::default_for_dimension`]: nested dissection for 3D-sized
//! problems, AMD for 2D.
//!
//! Measured here (`benches/direct.rs`, release, one thread, 2 shared cores under load) on the
//! 3D 7-point Laplacian with 30³ = 27 000 unknowns: nnz(L) 5.18 M with METIS against 7.60 M
//! with AMD; symbolic analysis 239 ms against 64 ms (METIS_NodeND alone about 250 ms, AMD
//! 45 ms); numeric factorisation 248 ms against 406 ms; solve 18 ms against 27 ms. METIS pays
//! for itself from the second factorisation on one pattern, and the gap grows with size.

use crate::csr::CsrPattern;
use crate::solver::LinalgError;

/// Which fill-reducing ordering a direct solver computes in its symbolic analysis.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Ordering {
    /// METIS node nested dissection (`METIS_NodeND`) of the symmetrised graph of the pattern,
    /// diagonal removed. George, "Nested dissection of a regular finite element mesh",
    /// SIAM J. Numer. Anal. 10 (1973) 345 (from memory); Karypis & Kumar, SIAM J. Sci. Comput.
    /// 20 (1998) 359 (from memory).
    NestedDissection,
    /// Approximate minimum degree from faer (Amestoy, Davis & Duff, SIAM J. Matrix Anal. Appl.
    /// 17 (1996) 886, from memory). For LU, faer's column variant COLAMD is used instead
    /// (Davis, Gilbert, Larimore & Ng, ACM TOMS 30 (2004) 353, from memory).
    Amd,
    /// No reordering: the unknowns are eliminated in their given order.
    Natural,
}

impl Default for Ordering {
    /// Nested dissection: the safe choice for the 3D problems that dominate run time.
    fn default() -> Self {
        Ordering::NestedDissection
    }
}

impl Ordering {
    /// The recommended ordering for a mesh of the given spatial dimension: nested dissection in
    /// 3D (10x faster and 4x less memory than AMD at 202k DOF, design notes section 4), AMD in
    /// 1D and 2D where it is the cheaper of the two.
    pub fn default_for_dimension(dim: usize) -> Self {
        if dim >= 3 {
            Ordering::NestedDissection
        } else {
            Ordering::Amd
        }
    }

    /// Short name used in solver names and on the command line ("metis", "amd", "natural").
    pub fn name(self) -> &'static str {
        match self {
            Ordering::NestedDissection => "metis",
            Ordering::Amd => "amd",
            Ordering::Natural => "natural",
        }
    }

    /// Inverse of [`Ordering::name`]; also accepts "nd" and "nested-dissection".
    pub fn from_name(name: &str) -> Option<Self> {
        match name {
            "metis" | "nd" | "nested-dissection" => Some(Ordering::NestedDissection),
            "amd" => Some(Ordering::Amd),
            "natural" | "none" => Some(Ordering::Natural),
            _ => None,
        }
    }
}

/// A permutation of `0..n`: new position `k` holds old index `fwd[k]`, and `inv[fwd[k]] == k`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Permutation {
    /// `fwd[new] = old`.
    pub fwd: Vec<usize>,
    /// `inv[old] = new`.
    pub inv: Vec<usize>,
}

impl Permutation {
    /// The identity on `0..n`.
    pub fn identity(n: usize) -> Self {
        Permutation {
            fwd: (0..n).collect(),
            inv: (0..n).collect(),
        }
    }

    /// Build from the forward array, checking that it is a bijection of `0..n`.
    pub fn from_fwd(fwd: Vec<usize>) -> Result<Self, LinalgError> {
        let n = fwd.len();
        let mut inv = vec![usize::MAX; n];
        for (new, &old) in fwd.iter().enumerate() {
            if old >= n || inv[old] != usize::MAX {
                return Err(LinalgError::Backend(format!(
                    "ordering is not a permutation (entry {new} -> {old})"
                )));
            }
            inv[old] = new;
        }
        Ok(Permutation { fwd, inv })
    }

    /// Number of entries.
    pub fn len(&self) -> usize {
        self.fwd.len()
    }

    /// True for the permutation of the empty set.
    pub fn is_empty(&self) -> bool {
        self.fwd.is_empty()
    }

    /// True when `fwd` and `inv` are mutually inverse bijections of `0..n`.
    pub fn is_valid(&self) -> bool {
        let n = self.fwd.len();
        self.inv.len() == n
            && self
                .fwd
                .iter()
                .enumerate()
                .all(|(new, &old)| old < n && self.inv[old] == new)
    }
}

/// Compute `ordering` for a square pattern (its structure is symmetrised as `A + Aᵀ`).
pub fn build_permutation(
    pattern: &CsrPattern,
    ordering: Ordering,
) -> Result<Permutation, LinalgError> {
    if pattern.n_rows != pattern.n_cols {
        return Err(LinalgError::Usage(format!(
            "ordering needs a square pattern, got {}x{}",
            pattern.n_rows, pattern.n_cols
        )));
    }
    match ordering {
        Ordering::Natural => Ok(Permutation::identity(pattern.n_rows)),
        Ordering::Amd => amd_permutation(pattern),
        Ordering::NestedDissection => nested_dissection_permutation(pattern),
    }
}

/// Adjacency of the graph of `A + Aᵀ` without self-loops, in CSR form (`xadj`, `adjncy`).
pub fn build_symmetric_graph(pattern: &CsrPattern) -> (Vec<usize>, Vec<usize>) {
    let n = pattern.n_rows;
    let mut degree = vec![0usize; n];
    for i in 0..n {
        for &j in pattern.row(i) {
            if j != i {
                degree[i] += 1;
                degree[j] += 1;
            }
        }
    }
    let mut xadj = vec![0usize; n + 1];
    for i in 0..n {
        xadj[i + 1] = xadj[i] + degree[i];
    }
    let mut fill = xadj[..n].to_vec();
    let mut adjncy = vec![0usize; xadj[n]];
    for i in 0..n {
        for &j in pattern.row(i) {
            if j != i {
                adjncy[fill[i]] = j;
                fill[i] += 1;
                adjncy[fill[j]] = i;
                fill[j] += 1;
            }
        }
    }
    // Sort and remove the duplicates that a structurally symmetric pattern produces.
    let mut out_ptr = vec![0usize; n + 1];
    let mut write = 0;
    for i in 0..n {
        let (start, end) = (xadj[i], xadj[i + 1]);
        adjncy[start..end].sort_unstable();
        let mut last = usize::MAX;
        for k in start..end {
            let j = adjncy[k];
            if j != last {
                adjncy[write] = j;
                write += 1;
                last = j;
            }
        }
        out_ptr[i + 1] = write;
    }
    adjncy.truncate(write);
    (out_ptr, adjncy)
}

fn amd_permutation(pattern: &CsrPattern) -> Result<Permutation, LinalgError> {
    use faer::dyn_stack::{MemBuffer, MemStack};
    use faer::sparse::linalg::amd;
    use faer::sparse::SymbolicSparseColMatRef;

    let n = pattern.n_rows;
    if n == 0 {
        return Ok(Permutation::identity(0));
    }
    // faer orders the pattern of A + Aᵀ, so the CSR arrays read as CSC (that is, Aᵀ) will do.
    let a = SymbolicSparseColMatRef::new_checked(n, n, &pattern.row_ptr, None, &pattern.col_idx);
    let mut fwd = vec![0usize; n];
    let mut inv = vec![0usize; n];
    let mut mem = MemBuffer::try_new(amd::order_scratch::<usize>(n, pattern.nnz()))
        .map_err(|_| LinalgError::Backend("out of memory for AMD workspace".into()))?;
    amd::order(
        &mut fwd,
        &mut inv,
        a,
        amd::Control::default(),
        MemStack::new(&mut mem),
    )
    .map_err(|e| LinalgError::Backend(format!("AMD ordering failed: {e:?}")))?;
    let perm = Permutation { fwd, inv };
    debug_assert!(perm.is_valid());
    Ok(perm)
}

fn nested_dissection_permutation(pattern: &CsrPattern) -> Result<Permutation, LinalgError> {
    let n = pattern.n_rows;
    let (xadj, adjncy) = build_symmetric_graph(pattern);
    if n <= 1 || adjncy.is_empty() {
        // No edges: every order is fill-free.
        return Ok(Permutation::identity(n));
    }
    let to_idx = |v: usize| {
        metis_sys::idx_t::try_from(v).map_err(|_| {
            LinalgError::Backend(format!("graph too large for 32-bit METIS indices ({v})"))
        })
    };
    let mut nvtxs = to_idx(n)?;
    let mut xadj: Vec<metis_sys::idx_t> = xadj.into_iter().map(to_idx).collect::<Result<_, _>>()?;
    let mut adjncy: Vec<metis_sys::idx_t> =
        adjncy.into_iter().map(to_idx).collect::<Result<_, _>>()?;
    let mut options = [0 as metis_sys::idx_t; metis_sys::METIS_NOPTIONS as usize];
    let mut perm = vec![0 as metis_sys::idx_t; n];
    let mut iperm = vec![0 as metis_sys::idx_t; n];
    // SAFETY: every pointer refers to a live, correctly sized buffer: `xadj` has n + 1 entries,
    // `adjncy` has xadj[n] entries, `perm`/`iperm` have n entries and `options` has
    // METIS_NOPTIONS entries (set to defaults by METIS_SetDefaultOptions). METIS does not keep
    // the pointers after returning. A null `vwgt` means unit vertex weights (METIS manual,
    // METIS_NodeND, from memory).
    // METIS seeds its random number generator at every call, but the generator's state is a
    // process-wide static of GKlib (`mt[]` in GKlib/random.c, vendored by metis-sys): two calls
    // at once from two threads race on it, and each may get a different ordering than when
    // alone (seen as a run that differed in the last bits between two runs of the test suite).
    // One call at a time makes every ordering the one of a call alone.
    static METIS: std::sync::Mutex<()> = std::sync::Mutex::new(());
    let _one_at_a_time = METIS.lock().unwrap_or_else(|e| e.into_inner());
    let status = unsafe {
        metis_sys::METIS_SetDefaultOptions(options.as_mut_ptr());
        options[metis_sys::moptions_et_METIS_OPTION_NUMBERING as usize] = 0;
        metis_sys::METIS_NodeND(
            &mut nvtxs,
            xadj.as_mut_ptr(),
            adjncy.as_mut_ptr(),
            std::ptr::null_mut(),
            options.as_mut_ptr(),
            perm.as_mut_ptr(),
            iperm.as_mut_ptr(),
        )
    };
    if status != metis_sys::rstatus_et_METIS_OK as std::os::raw::c_int {
        return Err(LinalgError::Backend(format!(
            "METIS_NodeND failed with status {status}"
        )));
    }
    // METIS: A' = A(perm, perm), i.e. perm[new] = old (METIS manual, from memory); the bijection
    // check below guards against any misreading.
    let fwd: Vec<usize> = perm.into_iter().map(|p| p as usize).collect();
    Permutation::from_fwd(fwd)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Nested dissection from several threads at once gives each the ordering of a call
    /// alone (METIS's random number generator is shared by the process; see
    /// `nested_dissection_permutation`).
    #[test]
    fn concurrent_nested_dissections_equal_a_lone_one() {
        // The graph of a 60 × 60 five-point grid: large enough for METIS to use its random
        // matchings.
        let m = 60;
        let rows: Vec<Vec<usize>> = (0..m * m)
            .map(|k| {
                let (i, j) = (k / m, k % m);
                let mut r = vec![k];
                if i > 0 {
                    r.push(k - m);
                }
                if i + 1 < m {
                    r.push(k + m);
                }
                if j > 0 {
                    r.push(k - 1);
                }
                if j + 1 < m {
                    r.push(k + 1);
                }
                r
            })
            .collect();
        let pattern = CsrPattern::from_rows(m * m, rows);
        let alone = build_permutation(&pattern, Ordering::NestedDissection).unwrap();
        std::thread::scope(|s| {
            let handles: Vec<_> = (0..4)
                .map(|_| {
                    s.spawn(|| {
                        (0..20)
                            .map(|_| build_permutation(&pattern, Ordering::NestedDissection))
                            .collect::<Vec<_>>()
                    })
                })
                .collect();
            for h in handles {
                for p in h.join().unwrap() {
                    assert_eq!(p.unwrap(), alone);
                }
            }
        });
    }
}

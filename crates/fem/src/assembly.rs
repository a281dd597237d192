//! The assembly driver: sparsity pattern, cell colouring, parallel deterministic scatter.
//!
//! Cells are grouped into chunks of consecutive cells ([`chunk_cells`]), and the chunks are
//! coloured so that no two chunks of one colour share a node, hence no DOF and no matrix entry.
//! Nodes linked by periodicity (see `DofMap::build_linked`) count as one node here: the
//! adjacency, the pattern and the colouring are built on master nodes, since two cells on
//! opposite sides of a periodic body write the same DOFs.
//! Colours are processed one after another, the chunks of a colour in parallel, and the cells of
//! a chunk in order on one thread. Every matrix and vector entry therefore receives its
//! contributions in the same order (colour order, then the one chunk of that colour touching it,
//! then cell order) whatever the number of threads, and the result is identical to the last bit
//! for 1 and N threads. Chunks rather than single cells keep the memory traffic local: a chunk of
//! neighbouring cells works on a compact set of matrix rows, and a mesh needs few chunk colours,
//! so the matrix is swept a few times rather than once per cell colour.
//!
//! Kernels ([`CellKernel`], [`FacetKernel`]) see one cell at a time and write a dense local
//! matrix and vector; they never see global data. The assembler never sees physics.

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, Parallelism};
use dilata_mesh::{CellKind, Facet, Mesh};
use rayon::prelude::{
    IndexedParallelIterator, IntoParallelRefIterator, ParallelIterator, ParallelSliceMut,
};

use crate::constraints::Constraints;
use crate::dofs::{DofMap, FieldHandle};

/// One cell as a kernel sees it.
#[derive(Clone, Copy, Debug)]
pub struct CellInput<'a> {
    /// Global cell id.
    pub id: usize,
    pub kind: CellKind,
    /// Mesh nodes of the cell.
    pub nodes: &'a [usize],
    /// Coordinates of the cell's nodes.
    pub coords: &'a [[f64; 3]],
    /// Local-to-global DOF map (layout: see `DofMap::local_range`).
    pub dofs: &'a [usize],
}

/// One boundary facet as a kernel sees it. Local outputs are sized for the parent cell's DOFs.
#[derive(Clone, Copy, Debug)]
pub struct FacetInput<'a> {
    pub facet: Facet,
    pub cell: CellInput<'a>,
    pub facet_kind: CellKind,
    /// Local node indices (within the parent cell) of the facet's nodes, outward-ordered.
    pub local_nodes: &'a [usize],
    /// Coordinates of the facet's nodes.
    pub facet_coords: &'a [[f64; 3]],
}

/// Where local results go. The local matrix is row-major `n × n` with `n = input.dofs.len()`;
/// both buffers are zeroed before each call. A kernel must fill only what is requested.
pub struct LocalOutput<'a> {
    pub matrix: Option<&'a mut [f64]>,
    pub vector: Option<&'a mut [f64]>,
}

/// An element kernel: computes a local matrix and/or vector for one cell.
pub trait CellKernel: Sync {
    /// Per-thread scratch space (cell values, buffers), built once per thread task.
    type Scratch: Send;
    type Error: Send;
    fn build_scratch(&self) -> Self::Scratch;
    fn cell_into(
        &self,
        input: &CellInput<'_>,
        scratch: &mut Self::Scratch,
        out: LocalOutput<'_>,
    ) -> Result<(), Self::Error>;

    /// The local indices outside of which every row and every column of this kernel's local
    /// matrix is zero on cells of `kind` (`None`: anywhere). The scatter then adds only that
    /// block to the global matrix: it skips additions of zeros, and the sums are the same.
    fn matrix_support(&self, _kind: CellKind) -> Option<std::ops::Range<usize>> {
        None
    }
}

/// A boundary kernel: computes local contributions of one facet (sized for its parent cell).
pub trait FacetKernel {
    type Scratch;
    type Error;
    fn build_scratch(&self) -> Self::Scratch;
    fn facet_into(
        &self,
        input: &FacetInput<'_>,
        scratch: &mut Self::Scratch,
        out: LocalOutput<'_>,
    ) -> Result<(), Self::Error>;
}

/// What an assembly pass writes: a matrix on the assembler's pattern and/or a vector, with
/// optional constraints and the values they prescribe (in constraint-slot order).
///
/// The vector is treated as the right-hand side `f` of `K x = f`: known columns move to it as
/// `f_i −= K_ij g_j` and constrained rows become `d x_i = d g_i`. A caller that assembles a
/// residual `R` and solves `J δ = −R` must therefore pass the *negated* prescribed increments
/// `−δ_j` (or, as the problems in `dilata-solve` do, impose the values on the state first and
/// pass zeros).
pub struct AssemblyTarget<'a> {
    pub matrix: Option<&'a mut CsrMatrix>,
    pub vector: Option<&'a mut [f64]>,
    pub constraints: Option<(&'a Constraints, &'a [f64])>,
}

/// Sparsity pattern and colouring of one mesh and DOF map, built once and reused.
pub struct Assembler {
    pattern: Arc<CsrPattern>,
    /// Per colour, the cell ranges (chunks) of that colour.
    colors: Vec<Vec<std::ops::Range<usize>>>,
    threads: AssemblyThreads,
    parallelism: Parallelism,
    /// Where each local matrix entry of each cell goes in the CSR values (see [`EntryTable`]);
    /// `None` for cells with fewer than `ENTRY_TABLE_MIN_DOFS` DOFs, or when the table would
    /// hold more bytes than twice the matrix values.
    entries: Option<EntryTable>,
}

/// For every cell and local entry `(a, b)`, the position of column `dofs[b]` in CSR row
/// `dofs[a]`, relative to the row's start, computed once from the cell DOFs the assembler was
/// built with: the scatter then writes each entry at its place without searching the row or
/// sorting the cell's DOFs.
struct EntryTable {
    /// Start of each cell's `n²` offsets (`n_cells + 1` entries).
    cell_start: Vec<usize>,
    offsets: Vec<u16>,
    /// A checksum of the cell DOFs the table was built from: `add_cells` with a DOF map whose
    /// cells differ uses the searching scatter instead.
    fingerprint: u64,
}

/// Fewest DOFs per cell for which [`EntryTable`] is built. Measured (`fe_problems` and the
/// coupled benchmarks, docs/performance.md): no gain over the searching scatter with 4 DOFs
/// per cell (2D Poisson Q1), 20–35 % less assembly time with 12 (Tet4 elasticity), within the
/// noise with 24 (Hex8 elasticity), about 14 % less with 32 (the axisymmetric particle's quad8
/// coupled cells). With 8 (the spinodal benchmark's `c`, `μ` on quad4) no gain at first; once
/// its kernel had become cheaper (2026-12-03), a Jacobian pass took 32.8–37.1 ms instead of
/// 37.8–41.1 ms on one thread (best of 100, four alternating pairs), 20.0–23.9 ms instead of
/// 22.3–23.6 ms on two.
const ENTRY_TABLE_MIN_DOFS: usize = 8;

/// The [`EntryTable`] offset of a local entry outside the pattern (`Assembler::build_coupled`).
const OUTSIDE: u16 = u16::MAX;

/// Checksum of the DOFs of every cell, in cell order (see [`EntryTable::fingerprint`]).
fn dof_fingerprint(mesh: &Mesh, dofs: &DofMap) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for c in 0..mesh.n_cells() {
        for &d in dofs.cell_dofs(c) {
            h = (h ^ d as u64).wrapping_mul(0x0100_0000_01b3);
        }
        h = (h ^ 0xff).wrapping_mul(0x0100_0000_01b3);
    }
    h
}

impl EntryTable {
    /// The table, or `None` when the cells are small (fewer than [`ENTRY_TABLE_MIN_DOFS`]
    /// DOFs), it would hold more bytes than twice the matrix values (`8 nnz`), or a row is too
    /// long for 16-bit offsets.
    fn build(mesh: &Mesh, dofs: &DofMap, pattern: &CsrPattern) -> Option<EntryTable> {
        if dofs.max_cell_dofs() < ENTRY_TABLE_MIN_DOFS {
            return None;
        }
        let n_cells = mesh.n_cells();
        let total: usize = (0..n_cells).map(|c| dofs.cell_dofs(c).len().pow(2)).sum();
        let longest = (0..pattern.n_rows)
            .map(|i| pattern.row_ptr[i + 1] - pattern.row_ptr[i])
            .max()
            .unwrap_or(0);
        // Offsets up to `u16::MAX − 1`; `u16::MAX` marks a local entry outside the pattern.
        if 2 * total > 16 * pattern.col_idx.len() || longest > u16::MAX as usize {
            return None;
        }
        let mut cell_start = Vec::with_capacity(n_cells + 1);
        let mut offsets = Vec::with_capacity(total);
        cell_start.push(0);
        for c in 0..n_cells {
            let cd = dofs.cell_dofs(c);
            for &i in cd {
                let cols = pattern.row(i);
                for &j in cd {
                    let k = cols.binary_search(&j).map_or(OUTSIDE, |k| k as u16);
                    offsets.push(k);
                }
            }
            cell_start.push(offsets.len());
        }
        Some(EntryTable {
            cell_start,
            offsets,
            fingerprint: dof_fingerprint(mesh, dofs),
        })
    }
}

/// Where the chunks of a colour run.
enum AssemblyThreads {
    /// On the calling thread.
    Sequential,
    /// On rayon's global pool (or the pool the caller runs in), which has the requested size:
    /// the threads the linear solvers use too, so that the two never compete for the cores.
    Current,
    /// On a pool of the requested size of its own.
    Private(rayon::ThreadPool),
}

impl Assembler {
    /// Build the pattern (from connectivity) and the colouring.
    pub fn build(mesh: &Mesh, dofs: &DofMap, parallelism: Parallelism) -> Self {
        Self::build_coupled(mesh, dofs, parallelism, |_, _, _| true)
    }

    /// [`Self::build`] with a pattern that leaves out the blocks a kernel never fills:
    /// `couples(f, node, g)` says whether the rows of field `f` at (master) node `node` hold
    /// columns of field `g` (the diagonal block, `f == g`, is always kept). A kernel's local
    /// entries outside the pattern must be exact zeros: the scatter drops them (a debug build
    /// checks that they are zero).
    pub fn build_coupled(
        mesh: &Mesh,
        dofs: &DofMap,
        parallelism: Parallelism,
        couples: impl Fn(FieldHandle, usize, FieldHandle) -> bool,
    ) -> Self {
        let adjacency = build_node_adjacency(mesh, dofs);
        let pattern = Arc::new(build_pattern(dofs, &adjacency, &couples));
        let colors = build_colors(mesh, dofs, &adjacency.node_cells);
        // The same `Parallelism` value as the linear solvers: `Sequential` assembles on the
        // calling thread, `Rayon { threads }` on that many threads (0: all cores): the current
        // rayon pool (the global one, where the threaded solvers run) when it has that size,
        // else a private pool. Chunks and colours do not depend on it.
        let threads = match parallelism {
            Parallelism::Sequential => AssemblyThreads::Sequential,
            Parallelism::Rayon { threads } => {
                let n = if threads == 0 {
                    std::thread::available_parallelism().map_or(1, |n| n.get())
                } else {
                    threads
                };
                if n == rayon::current_num_threads() {
                    AssemblyThreads::Current
                } else {
                    AssemblyThreads::Private(
                        rayon::ThreadPoolBuilder::new()
                            .num_threads(n)
                            .build()
                            .expect("cannot start assembly threads"),
                    )
                }
            }
        };
        let entries = EntryTable::build(mesh, dofs, &pattern);
        Assembler {
            pattern,
            colors,
            threads,
            parallelism,
            entries,
        }
    }

    /// Whether the matrix scatter uses the per-cell entry table (built when the cells have at
    /// least 8 DOFs and the table is not larger than twice the matrix values; see
    /// `ENTRY_TABLE_MIN_DOFS` in the source).
    pub fn has_entry_table(&self) -> bool {
        self.entries.is_some()
    }

    /// Free the entry table (its memory: two bytes per local matrix entry of every cell); the
    /// scatter then searches each row as it would without one. The assembled values are the
    /// same.
    pub fn drop_entry_table(&mut self) {
        self.entries = None;
    }

    /// `f` over consecutive chunks of `0..n` (`chunk` items each, the last one shorter) on the
    /// assembler's threads, the same ones its assembly uses; the results come back in chunk
    /// order, so a caller that folds them in that order gets the same bits for any number of
    /// threads. For cell loops other than assembly (post-processing, energies).
    pub fn map_chunks<T, F>(&self, n: usize, chunk: usize, f: F) -> Vec<T>
    where
        T: Send,
        F: Fn(std::ops::Range<usize>) -> T + Sync + Send,
    {
        let chunk = chunk.max(1);
        let ranges: Vec<std::ops::Range<usize>> = (0..n)
            .step_by(chunk)
            .map(|s| s..(s + chunk).min(n))
            .collect();
        match &self.threads {
            AssemblyThreads::Sequential => ranges.into_iter().map(f).collect(),
            _ => self.install(|| ranges.par_iter().map(|r| f(r.clone())).collect()),
        }
    }

    /// Run `f`, whose parallel loops then use the assembler's threads: its own pool if it has
    /// one, the caller's otherwise.
    fn install<R: Send>(&self, f: impl FnOnce() -> R + Send) -> R {
        match &self.threads {
            AssemblyThreads::Private(pool) => pool.install(f),
            _ => f(),
        }
    }

    pub fn pattern(&self) -> &Arc<CsrPattern> {
        &self.pattern
    }

    pub fn n_colors(&self) -> usize {
        self.colors.len()
    }

    /// The chunks (ranges of cell ids) of colour `k`, processed in parallel in one sweep.
    pub fn color_chunks(&self, k: usize) -> &[std::ops::Range<usize>] {
        &self.colors[k]
    }

    pub fn parallelism(&self) -> Parallelism {
        self.parallelism
    }

    /// A zero matrix on this assembler's pattern.
    pub fn build_matrix(&self) -> CsrMatrix {
        CsrMatrix::zeros(self.pattern.clone())
    }

    /// Zero the target's matrix and vector.
    pub fn begin(&self, target: &mut AssemblyTarget<'_>) {
        if let Some(m) = target.matrix.as_deref_mut() {
            assert!(
                Arc::ptr_eq(&m.pattern, &self.pattern) || *m.pattern == *self.pattern,
                "matrix not on the assembler's pattern"
            );
            self.zero(&mut m.values);
        }
        if let Some(v) = target.vector.as_deref_mut() {
            v.iter_mut().for_each(|x| *x = 0.0);
        }
    }

    /// [`Self::begin`] with the matrix set to `base` instead of zero: for a caller that adds the
    /// cells' contributions to a part of the matrix it assembled earlier (on this assembler's
    /// pattern, without [`Self::finish`]).
    ///
    /// # Panics
    /// If `base` does not have one value per entry of the pattern.
    pub fn begin_from(&self, target: &mut AssemblyTarget<'_>, base: &[f64]) {
        if let Some(m) = target.matrix.as_deref_mut() {
            assert!(
                Arc::ptr_eq(&m.pattern, &self.pattern) || *m.pattern == *self.pattern,
                "matrix not on the assembler's pattern"
            );
            assert_eq!(base.len(), m.values.len(), "one base value per entry");
            self.set(&mut m.values, Some(base));
        }
        if let Some(v) = target.vector.as_deref_mut() {
            v.iter_mut().for_each(|x| *x = 0.0);
        }
    }

    /// Set `values` to zero, in blocks on the assembler's threads (a matrix's values are
    /// megabytes: on one thread the zeroing was 3–5 % of the Newton assembly time of the
    /// charging-particle benchmark, measured with a temporary timer).
    fn zero(&self, values: &mut [f64]) {
        self.set(values, None);
    }

    /// Copy `base` into `values`, or zero them without one, in blocks on the assembler's threads.
    fn set(&self, values: &mut [f64], base: Option<&[f64]>) {
        const BLOCK: usize = 1 << 16;
        let fill = |(i, b): (usize, &mut [f64])| match base {
            Some(base) => b.copy_from_slice(&base[i * BLOCK..i * BLOCK + b.len()]),
            None => b.fill(0.0),
        };
        if values.len() <= BLOCK || matches!(self.threads, AssemblyThreads::Sequential) {
            values.chunks_mut(BLOCK).enumerate().for_each(fill);
        } else {
            self.install(|| values.par_chunks_mut(BLOCK).enumerate().for_each(fill));
        }
    }

    /// Add the contributions of every cell, in parallel by colour.
    pub fn add_cells<K: CellKernel>(
        &self,
        mesh: &Mesh,
        dofs: &DofMap,
        kernel: &K,
        target: &mut AssemblyTarget<'_>,
    ) -> Result<(), K::Error> {
        let want_matrix = target.matrix.is_some();
        let want_vector = target.vector.is_some();
        let shared = SharedTarget {
            matrix: target
                .matrix
                .as_deref_mut()
                .map(|m| SharedSlice::new(&mut m.values)),
            vector: target.vector.as_deref_mut().map(SharedSlice::new),
        };
        let constraints = target.constraints;
        let pattern = &*self.pattern;
        let n_max = dofs.max_cell_dofs();
        // The entry table serves only the DOF map it was built from.
        let table = self
            .entries
            .as_ref()
            .filter(|t| want_matrix && t.fingerprint == dof_fingerprint(mesh, dofs));
        let run_color = |chunks: &[std::ops::Range<usize>]| -> Result<(), K::Error> {
            let work = |scratch: &mut (K::Scratch, LocalBuffers),
                        chunk: &std::ops::Range<usize>|
             -> Result<(), K::Error> {
                let (ks, buf) = scratch;
                for c in chunk.clone() {
                    let (kind, nodes) = mesh.cell(c);
                    let mut coords = std::mem::take(&mut buf.coords);
                    coords.clear();
                    coords.extend(nodes.iter().map(|&n| mesh.points[n]));
                    let cd = dofs.cell_dofs(c);
                    let n = cd.len();
                    let input = CellInput {
                        id: c,
                        kind,
                        nodes,
                        coords: &coords,
                        dofs: cd,
                    };
                    let support = kernel.matrix_support(kind).unwrap_or(0..n);
                    debug_assert!(support.end <= n);
                    let (ke, fe) = buf.zeroed(n, want_matrix, want_vector);
                    let result = kernel.cell_into(
                        &input,
                        ks,
                        LocalOutput {
                            matrix: ke,
                            vector: fe,
                        },
                    );
                    buf.coords = coords;
                    result?;
                    // SAFETY: chunks of one colour share no (master) node, hence no DOF, row or
                    // entry; each entry is written by exactly one task (chunk) of this colour.
                    unsafe {
                        match table {
                            Some(t) => scatter_with_table(
                                pattern,
                                cd,
                                &t.offsets[t.cell_start[c]..t.cell_start[c + 1]],
                                buf,
                                &shared,
                                constraints,
                                want_vector,
                                support,
                            ),
                            None => scatter_local(
                                pattern,
                                cd,
                                buf,
                                &shared,
                                constraints,
                                want_matrix,
                                want_vector,
                                support,
                            ),
                        }
                    };
                }
                Ok(())
            };
            let parallel = || {
                chunks.par_iter().with_min_len(1).try_for_each_init(
                    || (kernel.build_scratch(), LocalBuffers::new(n_max)),
                    |s, chunk| work(s, chunk),
                )
            };
            match &self.threads {
                AssemblyThreads::Sequential => {
                    let mut s = (kernel.build_scratch(), LocalBuffers::new(n_max));
                    chunks.iter().try_for_each(|chunk| work(&mut s, chunk))
                }
                _ => self.install(parallel),
            }
        };
        for chunks in &self.colors {
            run_color(chunks)?;
        }
        Ok(())
    }

    /// Add the contributions of boundary facets (serially, in the given order).
    pub fn add_facets<K: FacetKernel>(
        &self,
        mesh: &Mesh,
        dofs: &DofMap,
        facets: &[Facet],
        kernel: &K,
        target: &mut AssemblyTarget<'_>,
    ) -> Result<(), K::Error> {
        let want_matrix = target.matrix.is_some();
        let want_vector = target.vector.is_some();
        let shared = SharedTarget {
            matrix: target
                .matrix
                .as_deref_mut()
                .map(|m| SharedSlice::new(&mut m.values)),
            vector: target.vector.as_deref_mut().map(SharedSlice::new),
        };
        let mut scratch = kernel.build_scratch();
        let mut buf = LocalBuffers::new(dofs.max_cell_dofs());
        let mut facet_coords = Vec::new();
        for &f in facets {
            let (kind, nodes) = mesh.cell(f.cell);
            let mut coords = std::mem::take(&mut buf.coords);
            coords.clear();
            coords.extend(nodes.iter().map(|&n| mesh.points[n]));
            let (fk, local) = kind.facets()[f.local as usize];
            facet_coords.clear();
            facet_coords.extend(local.iter().map(|&l| mesh.points[nodes[l]]));
            let cd = dofs.cell_dofs(f.cell);
            let n = cd.len();
            let result = {
                let input = FacetInput {
                    facet: f,
                    cell: CellInput {
                        id: f.cell,
                        kind,
                        nodes,
                        coords: &coords,
                        dofs: cd,
                    },
                    facet_kind: fk,
                    local_nodes: local,
                    facet_coords: &facet_coords,
                };
                let (ke, fe) = buf.zeroed(n, want_matrix, want_vector);
                kernel.facet_into(
                    &input,
                    &mut scratch,
                    LocalOutput {
                        matrix: ke,
                        vector: fe,
                    },
                )
            };
            buf.coords = coords;
            result?;
            // SAFETY: serial loop, no concurrent writer.
            unsafe {
                scatter_local(
                    &self.pattern,
                    cd,
                    &mut buf,
                    &shared,
                    target.constraints,
                    want_matrix,
                    want_vector,
                    0..cd.len(),
                )
            };
        }
        Ok(())
    }

    /// Write the rows of constrained DOFs: `d · x_i = d · g_i` (see `constraints`).
    pub fn finish(&self, target: &mut AssemblyTarget<'_>) {
        let Some((cons, values)) = target.constraints else {
            return;
        };
        assert_eq!(
            values.len(),
            cons.n_constrained(),
            "one value per constrained DOF"
        );
        let d = cons.diagonal;
        for (&dof, &g) in cons.dofs().iter().zip(values) {
            if let Some(m) = target.matrix.as_deref_mut() {
                let k = self
                    .pattern
                    .find(dof, dof)
                    .expect("diagonal entry in pattern");
                m.values[k] = d;
            }
            if let Some(v) = target.vector.as_deref_mut() {
                v[dof] = d * g;
            }
        }
    }

    /// `begin`, `add_cells`, `finish` in one call.
    pub fn assemble<K: CellKernel>(
        &self,
        mesh: &Mesh,
        dofs: &DofMap,
        kernel: &K,
        mut target: AssemblyTarget<'_>,
    ) -> Result<(), K::Error> {
        self.begin(&mut target);
        self.add_cells(mesh, dofs, kernel, &mut target)?;
        self.finish(&mut target);
        Ok(())
    }
}

/// Per-thread local buffers (allocated once per task, reused for every cell).
struct LocalBuffers {
    matrix: Vec<f64>,
    vector: Vec<f64>,
    coords: Vec<[f64; 3]>,
    /// Local indices sorted by global DOF.
    order: Vec<usize>,
}

impl LocalBuffers {
    fn new(n_max: usize) -> Self {
        LocalBuffers {
            matrix: vec![0.0; n_max * n_max],
            vector: vec![0.0; n_max],
            coords: Vec::with_capacity(27),
            order: Vec::with_capacity(n_max),
        }
    }

    fn zeroed(
        &mut self,
        n: usize,
        matrix: bool,
        vector: bool,
    ) -> (Option<&mut [f64]>, Option<&mut [f64]>) {
        let ke = if matrix {
            let m = &mut self.matrix[..n * n];
            m.iter_mut().for_each(|v| *v = 0.0);
            Some(m)
        } else {
            None
        };
        let fe = if vector {
            let v = &mut self.vector[..n];
            v.iter_mut().for_each(|x| *x = 0.0);
            Some(v)
        } else {
            None
        };
        (ke, fe)
    }
}

/// A raw view of a mutable slice shared between tasks that write disjoint entries.
#[derive(Clone, Copy)]
struct SharedSlice {
    ptr: *mut f64,
    len: usize,
}

// SAFETY: only used for disjoint writes guaranteed by the colouring (see `add_cells`).
unsafe impl Send for SharedSlice {}
unsafe impl Sync for SharedSlice {}

impl SharedSlice {
    fn new(s: &mut [f64]) -> Self {
        SharedSlice {
            ptr: s.as_mut_ptr(),
            len: s.len(),
        }
    }

    /// # Safety
    /// No other thread may access entry `i` concurrently.
    #[inline]
    unsafe fn add(&self, i: usize, v: f64) {
        debug_assert!(i < self.len);
        *self.ptr.add(i) += v;
    }
}

struct SharedTarget {
    matrix: Option<SharedSlice>,
    vector: Option<SharedSlice>,
}

/// Scatter one local system into the global one, with constraint elimination. Of the local
/// matrix only the rows and columns in `support` are added (`CellKernel::matrix_support`: the
/// others are zero).
///
/// # Safety
/// No other thread may touch the rows of `dofs` concurrently.
#[allow(clippy::too_many_arguments)]
unsafe fn scatter_local(
    pattern: &CsrPattern,
    dofs: &[usize],
    buf: &mut LocalBuffers,
    target: &SharedTarget,
    constraints: Option<(&Constraints, &[f64])>,
    want_matrix: bool,
    want_vector: bool,
    support: std::ops::Range<usize>,
) {
    let n = dofs.len();
    if want_matrix {
        // The local columns in the order of the global ones, for the merge below (a vector
        // alone needs no order: sorting took a twentieth of a residual pass of the coupled
        // kernel).
        buf.order.clear();
        buf.order.extend(support.clone());
        buf.order.sort_unstable_by_key(|&a| dofs[a]);
    }
    // Most cells have no constrained DOF: then the per-entry tests below have nothing to find.
    let constraints = constraints.filter(|(cons, _)| dofs.iter().any(|&d| cons.is_constrained(d)));
    for a in 0..n {
        let i = dofs[a];
        if let Some((cons, _)) = constraints {
            if cons.is_constrained(i) {
                continue;
            }
        }
        if want_vector {
            let mut f = buf.vector[a];
            if let (Some((cons, values)), true) = (constraints, want_matrix) {
                // Move known columns to the right-hand side.
                let row = &buf.matrix[a * n..(a + 1) * n];
                for (&j, &kab) in dofs.iter().zip(row) {
                    if let Some(s) = cons.slot(j) {
                        f -= kab * values[s];
                    }
                }
            }
            target.vector.expect("vector requested").add(i, f);
        }
        if want_matrix && support.contains(&a) {
            let m = target.matrix.expect("matrix requested");
            // Merge the sorted local columns with the row's sorted pattern columns.
            let start = pattern.row_ptr[i];
            let cols = pattern.row(i);
            let mut k = 0;
            for &b in &buf.order {
                let j = dofs[b];
                if let Some((cons, _)) = constraints {
                    if cons.is_constrained(j) {
                        continue;
                    }
                }
                while k < cols.len() && cols[k] < j {
                    k += 1;
                }
                if cols.get(k) == Some(&j) {
                    m.add(start + k, buf.matrix[a * n + b]);
                } else {
                    // Outside a coupled pattern (`Assembler::build_coupled`).
                    debug_assert_eq!(
                        buf.matrix[a * n + b],
                        0.0,
                        "local entry outside the pattern"
                    );
                }
            }
        }
    }
}

/// [`scatter_local`] for a matrix target with the cell's entry offsets (`offsets[a n + b]`: the
/// place of column `dofs[b]` in row `dofs[a]`, from the row's start): the same additions, to
/// the same entries in the same order per entry.
///
/// # Safety
/// As [`scatter_local`].
#[allow(clippy::too_many_arguments)]
unsafe fn scatter_with_table(
    pattern: &CsrPattern,
    dofs: &[usize],
    offsets: &[u16],
    buf: &mut LocalBuffers,
    target: &SharedTarget,
    constraints: Option<(&Constraints, &[f64])>,
    want_vector: bool,
    support: std::ops::Range<usize>,
) {
    let n = dofs.len();
    debug_assert_eq!(offsets.len(), n * n);
    let constraints = constraints.filter(|(cons, _)| dofs.iter().any(|&d| cons.is_constrained(d)));
    let m = target.matrix.expect("matrix requested");
    for a in 0..n {
        let i = dofs[a];
        if let Some((cons, _)) = constraints {
            if cons.is_constrained(i) {
                continue;
            }
        }
        let row = &buf.matrix[a * n..(a + 1) * n];
        if want_vector {
            let mut f = buf.vector[a];
            if let Some((cons, values)) = constraints {
                // Move known columns to the right-hand side.
                for (&j, &kab) in dofs.iter().zip(row) {
                    if let Some(s) = cons.slot(j) {
                        f -= kab * values[s];
                    }
                }
            }
            target.vector.expect("vector requested").add(i, f);
        }
        if !support.contains(&a) {
            continue;
        }
        let start = pattern.row_ptr[i];
        let offs = &offsets[a * n + support.start..a * n + support.end];
        let (row, cols) = (&row[support.clone()], &dofs[support.clone()]);
        match constraints {
            None => {
                for (&k, &v) in offs.iter().zip(row) {
                    if k != OUTSIDE {
                        m.add(start + k as usize, v);
                    } else {
                        debug_assert_eq!(v, 0.0, "local entry outside the pattern");
                    }
                }
            }
            Some((cons, _)) => {
                for ((&k, &v), &j) in offs.iter().zip(row).zip(cols) {
                    if k != OUTSIDE && !cons.is_constrained(j) {
                        m.add(start + k as usize, v);
                    } else {
                        debug_assert!(k != OUTSIDE || v == 0.0, "local entry outside the pattern");
                    }
                }
            }
        }
    }
}

/// Node-to-cell incidence, on master nodes: a linked node's cells are listed under its master
/// (and a linked node itself has none).
struct NodeAdjacency {
    /// CSR: cells of each master node.
    node_cells: (Vec<usize>, Vec<usize>),
    /// CSR: master nodes sharing a cell with each master node (sorted, including itself).
    node_nodes: (Vec<usize>, Vec<usize>),
}

fn build_node_adjacency(mesh: &Mesh, dofs: &DofMap) -> NodeAdjacency {
    let n_points = mesh.n_points();
    let master = |n: usize| dofs.master_node(n);
    let mut count = vec![0usize; n_points + 1];
    for (_, _, nodes) in mesh.cells() {
        for &n in nodes {
            count[master(n) + 1] += 1;
        }
    }
    for i in 0..n_points {
        count[i + 1] += count[i];
    }
    let mut fill = count.clone();
    let mut cells = vec![0usize; count[n_points]];
    for (c, _, nodes) in mesh.cells() {
        for &n in nodes {
            let m = master(n);
            cells[fill[m]] = c;
            fill[m] += 1;
        }
    }
    let mut ptr = vec![0usize];
    let mut adj = Vec::new();
    let mut row = Vec::new();
    for n in 0..n_points {
        row.clear();
        for &c in &cells[count[n]..count[n + 1]] {
            row.extend(mesh.cell(c).1.iter().map(|&m| master(m)));
        }
        row.sort_unstable();
        row.dedup();
        adj.extend_from_slice(&row);
        ptr.push(adj.len());
    }
    NodeAdjacency {
        node_cells: (count, cells),
        node_nodes: (ptr, adj),
    }
}

/// Pattern: DOF (field f, node n) couples with DOF (field g, node m) iff n and m share a cell
/// and `couples(f, n, g)` (always for `f == g`).
fn build_pattern(
    dofs: &DofMap,
    adj: &NodeAdjacency,
    couples: &impl Fn(FieldHandle, usize, FieldHandle) -> bool,
) -> CsrPattern {
    let n = dofs.n_dofs();
    let (nptr, nadj) = &adj.node_nodes;
    let handles: Vec<_> = (0..dofs.n_fields()).map(FieldHandle).collect();
    let mut row_ptr = Vec::with_capacity(n + 1);
    row_ptr.push(0);
    let mut col_idx = Vec::new();
    let mut row = Vec::new();
    for &f in &handles {
        let ncf = dofs.spec(f).n_components;
        if ncf == 0 {
            continue;
        }
        for node in dofs.field_nodes(f) {
            row.clear();
            for &g in &handles {
                let ncg = dofs.spec(g).n_components;
                if ncg == 0 || (g != f && !couples(f, node, g)) {
                    continue;
                }
                for &m in &nadj[nptr[node]..nptr[node + 1]] {
                    if let Ok(d0) = dofs.node_dof(g, m, 0) {
                        row.extend(d0..d0 + ncg);
                    }
                }
            }
            debug_assert!(row.windows(2).all(|w| w[0] < w[1]));
            for _ in 0..ncf {
                col_idx.extend_from_slice(&row);
                row_ptr.push(col_idx.len());
            }
        }
    }
    CsrPattern {
        n_rows: n,
        n_cols: n,
        row_ptr,
        col_idx,
    }
}

/// Largest number of consecutive cells in one assembly chunk.
pub const CHUNK_CELLS: usize = 256;

/// Smallest number of cells in one assembly chunk.
pub const MIN_CHUNK_CELLS: usize = 8;

/// Cells per assembly chunk on a mesh of `n_cells` cells: [`CHUNK_CELLS`] on large meshes, and
/// on small ones a size that still gives about 64 chunks (at least [`MIN_CHUNK_CELLS`] cells),
/// so that each colour has enough chunks to keep the threads busy (a mesh of 1 728 cells had
/// seven chunks of 256, one or two per colour). A function of the mesh only, never of the
/// thread count, so that the colouring, hence the order of floating-point sums, never depends
/// on it.
pub fn chunk_cells(n_cells: usize) -> usize {
    (n_cells / 64).clamp(MIN_CHUNK_CELLS, CHUNK_CELLS)
}

/// Greedy colouring of the chunks: no two chunks of one colour share a node (linked nodes
/// counting as their master). Deterministic (chunk order).
fn build_colors(
    mesh: &Mesh,
    dofs: &DofMap,
    node_cells: &(Vec<usize>, Vec<usize>),
) -> Vec<Vec<std::ops::Range<usize>>> {
    let (ptr, cells) = node_cells;
    let n_cells = mesh.n_cells();
    let chunk = chunk_cells(n_cells);
    let n_chunks = n_cells.div_ceil(chunk);
    let mut color = vec![usize::MAX; n_chunks];
    // forbidden[k] == q marks colour k as taken for chunk q.
    let mut forbidden: Vec<usize> = Vec::new();
    let mut colors: Vec<Vec<std::ops::Range<usize>>> = Vec::new();
    let mut cell_iter = mesh.cells().peekable();
    for q in 0..n_chunks {
        let range = q * chunk..((q + 1) * chunk).min(n_cells);
        while let Some((c, _, nodes)) = cell_iter.next_if(|(c, _, _)| range.contains(c)) {
            debug_assert!(range.contains(&c));
            for &n in nodes {
                let n = dofs.master_node(n);
                for &other in &cells[ptr[n]..ptr[n + 1]] {
                    let k = color[other / chunk];
                    if k != usize::MAX {
                        forbidden[k] = q;
                    }
                }
            }
        }
        let k = (0..forbidden.len())
            .find(|&k| forbidden[k] != q)
            .unwrap_or(forbidden.len());
        if k == forbidden.len() {
            forbidden.push(usize::MAX);
            colors.push(Vec::new());
        }
        color[q] = k;
        colors[k].push(range);
    }
    colors
}

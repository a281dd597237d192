//! The mesh data structure: points, cell blocks, named regions, boundaries and node sets.

use std::collections::BTreeMap;

use crate::cell::CellKind;
use crate::error::MeshError;

/// A block of cells of one kind; connectivity stored flat, `kind.n_nodes()` entries per cell.
#[derive(Clone, Debug, PartialEq)]
pub struct CellBlock {
    pub kind: CellKind,
    /// Node indices, `kind.n_nodes()` per cell, in Dilata (VTK) node order.
    pub connectivity: Vec<usize>,
}

impl CellBlock {
    pub fn new(kind: CellKind) -> Self {
        CellBlock {
            kind,
            connectivity: Vec::new(),
        }
    }

    pub fn n_cells(&self) -> usize {
        self.connectivity.len() / self.kind.n_nodes()
    }

    /// Nodes of cell `i` of this block.
    #[inline]
    pub fn cell(&self, i: usize) -> &[usize] {
        let n = self.kind.n_nodes();
        &self.connectivity[i * n..(i + 1) * n]
    }
}

/// One facet of the mesh: the parent cell (global cell id) and the local facet index within it
/// (see [`CellKind::facets`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Facet {
    pub cell: usize,
    pub local: u8,
}

/// A finite-element mesh.
///
/// Cells are numbered globally across blocks in block order: cell ids `0..n0` are block 0, the
/// next `n1` are block 1, and so on. All cells of all blocks have the mesh's dimension.
/// Points always carry three coordinates; in 2D the third is zero.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Mesh {
    /// Spatial dimension (2 or 3; 1 is allowed for line meshes).
    pub dim: usize,
    pub points: Vec<[f64; 3]>,
    pub blocks: Vec<CellBlock>,
    /// Named cell sets (global cell ids, sorted, unique).
    pub regions: BTreeMap<String, Vec<usize>>,
    /// Named facet sets (sorted, unique).
    pub boundaries: BTreeMap<String, Vec<Facet>>,
    /// Named node sets (sorted, unique).
    pub node_sets: BTreeMap<String, Vec<usize>>,
}

impl Mesh {
    pub fn n_points(&self) -> usize {
        self.points.len()
    }

    pub fn n_cells(&self) -> usize {
        self.blocks.iter().map(CellBlock::n_cells).sum()
    }

    /// Block index and index within the block of a global cell id.
    #[inline]
    pub fn locate_cell(&self, cell: usize) -> (usize, usize) {
        let mut first = 0;
        for (b, block) in self.blocks.iter().enumerate() {
            let n = block.n_cells();
            if cell < first + n {
                return (b, cell - first);
            }
            first += n;
        }
        panic!(
            "cell id {cell} out of range (mesh has {} cells)",
            self.n_cells()
        );
    }

    /// Kind and nodes of a global cell id.
    #[inline]
    pub fn cell(&self, cell: usize) -> (CellKind, &[usize]) {
        let (b, i) = self.locate_cell(cell);
        (self.blocks[b].kind, self.blocks[b].cell(i))
    }

    /// Iterate over all cells as `(global id, kind, nodes)`.
    pub fn cells(&self) -> impl Iterator<Item = (usize, CellKind, &[usize])> + '_ {
        self.blocks
            .iter()
            .flat_map(|b| (0..b.n_cells()).map(move |i| (b.kind, b.cell(i))))
            .enumerate()
            .map(|(id, (k, n))| (id, k, n))
    }

    /// Kind of a facet and its global node indices, ordered for an outward normal.
    pub fn facet_nodes(&self, facet: Facet) -> (CellKind, Vec<usize>) {
        let (kind, nodes) = self.cell(facet.cell);
        let (fk, local) = kind.facets()[facet.local as usize];
        (fk, local.iter().map(|&i| nodes[i]).collect())
    }

    /// Coordinates of the nodes of a cell, in node order.
    pub fn cell_coords(&self, cell: usize) -> Vec<[f64; 3]> {
        self.cell(cell).1.iter().map(|&n| self.points[n]).collect()
    }

    /// Look up a boundary by name; the error lists the names that exist.
    pub fn boundary(&self, name: &str) -> Result<&[Facet], MeshError> {
        self.boundaries
            .get(name)
            .map(Vec::as_slice)
            .ok_or_else(|| MeshError::UnknownName {
                what: "boundary",
                name: name.to_string(),
                available: self.boundaries.keys().cloned().collect(),
            })
    }

    /// Look up a region by name; the error lists the names that exist.
    pub fn region(&self, name: &str) -> Result<&[usize], MeshError> {
        self.regions
            .get(name)
            .map(Vec::as_slice)
            .ok_or_else(|| MeshError::UnknownName {
                what: "region",
                name: name.to_string(),
                available: self.regions.keys().cloned().collect(),
            })
    }

    /// Look up a node set by name; the error lists the names that exist.
    pub fn node_set(&self, name: &str) -> Result<&[usize], MeshError> {
        self.node_sets
            .get(name)
            .map(Vec::as_slice)
            .ok_or_else(|| MeshError::UnknownName {
                what: "node set",
                name: name.to_string(),
                available: self.node_sets.keys().cloned().collect(),
            })
    }

    /// Sorted unique nodes on a named boundary.
    pub fn boundary_nodes(&self, name: &str) -> Result<Vec<usize>, MeshError> {
        let mut nodes: Vec<usize> = Vec::new();
        for &f in self.boundary(name)? {
            nodes.extend(self.facet_nodes(f).1);
        }
        nodes.sort_unstable();
        nodes.dedup();
        Ok(nodes)
    }

    /// Count of cells per kind.
    pub fn cell_counts(&self) -> BTreeMap<CellKind, usize> {
        let mut m = BTreeMap::new();
        for b in &self.blocks {
            *m.entry(b.kind).or_insert(0) += b.n_cells();
        }
        m
    }

    /// Region id of every cell: index of the first region (in name order) containing it, or
    /// `-1` for none. Used to colour cells in a visualizer.
    pub fn region_ids(&self) -> Vec<i32> {
        let mut ids = vec![-1; self.n_cells()];
        for (r, cells) in self.regions.values().enumerate() {
            for &c in cells {
                if ids[c] < 0 {
                    ids[c] = r as i32;
                }
            }
        }
        ids
    }

    /// Structural consistency: node indices in range, cell dimension equals mesh dimension,
    /// set members in range. Returns the first problem found.
    pub fn validate_structure(&self) -> Result<(), MeshError> {
        let n_points = self.points.len();
        let mut first = 0;
        for b in &self.blocks {
            if b.connectivity.len() % b.kind.n_nodes() != 0 {
                return Err(MeshError::Invalid(format!(
                    "block of {} has {} connectivity entries, not a multiple of {}",
                    b.kind,
                    b.connectivity.len(),
                    b.kind.n_nodes()
                )));
            }
            if b.kind.dim() != self.dim {
                return Err(MeshError::Invalid(format!(
                    "block of {} cells (dimension {}) in a {}D mesh",
                    b.kind,
                    b.kind.dim(),
                    self.dim
                )));
            }
            for i in 0..b.n_cells() {
                if let Some(&bad) = b.cell(i).iter().find(|&&n| n >= n_points) {
                    return Err(MeshError::Invalid(format!(
                        "cell {} refers to node {bad}, but the mesh has {n_points} nodes",
                        first + i
                    )));
                }
            }
            first += b.n_cells();
        }
        let n_cells = self.n_cells();
        for (name, cells) in &self.regions {
            if let Some(&c) = cells.iter().find(|&&c| c >= n_cells) {
                return Err(MeshError::Invalid(format!(
                    "region '{name}' lists cell {c}, but the mesh has {n_cells} cells"
                )));
            }
        }
        for (name, facets) in &self.boundaries {
            for f in facets {
                if f.cell >= n_cells {
                    return Err(MeshError::Invalid(format!(
                        "boundary '{name}' lists cell {}, but the mesh has {n_cells} cells",
                        f.cell
                    )));
                }
                let k = self.cell(f.cell).0;
                if f.local as usize >= k.n_facets() {
                    return Err(MeshError::Invalid(format!(
                        "boundary '{name}' lists facet {} of cell {} ({k} has {} facets)",
                        f.local,
                        f.cell,
                        k.n_facets()
                    )));
                }
            }
        }
        for (name, nodes) in &self.node_sets {
            if let Some(&n) = nodes.iter().find(|&&n| n >= n_points) {
                return Err(MeshError::Invalid(format!(
                    "node set '{name}' lists node {n}, but the mesh has {n_points} nodes"
                )));
            }
        }
        Ok(())
    }
}

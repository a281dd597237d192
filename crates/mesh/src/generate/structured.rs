//! Structured-block machinery shared by every generator.
//!
//! A generated mesh is a union of *blocks*. A block is a smooth map from the unit parameter
//! square (2D) or cube (3D) to space, cut into `n_cells[d]` equal parameter intervals per
//! direction. Nodes live on a lattice of *half steps*: lattice index `h[d]` in `0..=2 n_cells[d]`
//! sits at parameter `h[d] / (2 n_cells[d])`, so corners of cells have even indices and the
//! mid-edge, mid-face and centre nodes of quadratic cells have odd ones. Node positions are always
//! the block map evaluated at the node's parameter, so quadratic nodes on a curved block face lie
//! on that curved face.
//!
//! Nodes shared between blocks (or across the seam of a closed block) are merged exactly: every
//! block names each of its lattice nodes by an integer [`NodeKey`] that is the same in every block
//! touching that node, and the builder creates one node per key. No coordinate tolerance is used.
//!
//! Cell node ordering follows [`CellKind::reference_nodes`]: a quadrilateral or hexahedral cell's
//! node with reference coordinate `ξ` is the lattice node `2 c + 1 + ξ` of the cell `c`, which
//! yields the Dilata (VTK) order for every linear and quadratic kind by construction. Simplices
//! come from splitting each lattice cell (two triangles per square, six tetrahedra per cube, all
//! sharing the cell's main diagonal, which makes the split conforming across cells).

use std::collections::{BTreeMap, HashMap};

use crate::cell::{CellKind, Shape};
use crate::mesh::{CellBlock, Facet, Mesh};

/// Integer name of a node, identical in every block that contains the node.
pub(super) type NodeKey = [i64; 4];

/// The two ends of a parameter direction.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Side {
    /// Parameter 0.
    Min,
    /// Parameter 1.
    Max,
}

/// One structured block of a generated mesh.
pub(super) trait Block {
    /// Cells per parameter direction; entries beyond the mesh dimension are ignored.
    fn n_cells(&self) -> [usize; 3];

    /// Canonical key of the node at half-step lattice index `h` (trailing entries zero in 2D).
    fn key(&self, h: [usize; 3]) -> NodeKey;

    /// Physical position at parameter `u` in the unit square or cube (`z = 0` in 2D).
    fn point(&self, u: [f64; 3]) -> [f64; 3];

    /// Name of the boundary that the block face `side` of parameter direction `axis` belongs to,
    /// or `None` when that face is inside the mesh (shared with another block or a seam).
    fn face_name(&self, axis: usize, side: Side) -> Option<&'static str>;
}

/// Accumulates the blocks of one mesh with one cell kind.
pub(super) struct Builder {
    dim: usize,
    kind: CellKind,
    points: Vec<[f64; 3]>,
    node_of_key: HashMap<NodeKey, usize>,
    connectivity: Vec<usize>,
    n_cells: usize,
    boundaries: BTreeMap<String, Vec<Facet>>,
}

/// One cell of a lattice split into simplices: the simplex corners as offsets in `{0, 1}^dim`.
type SimplexCorners = Vec<[usize; 3]>;

impl Builder {
    /// An empty builder for a `dim`-dimensional mesh of `kind` cells (the kind's dimension must
    /// equal `dim`; the public generators check this before building).
    pub(super) fn new(dim: usize, kind: CellKind) -> Self {
        debug_assert_eq!(kind.dim(), dim);
        Builder {
            dim,
            kind,
            points: Vec::new(),
            node_of_key: HashMap::new(),
            connectivity: Vec::new(),
            n_cells: 0,
            boundaries: BTreeMap::new(),
        }
    }

    /// Number of cells added so far (the id the next cell will get).
    pub(super) fn n_cells(&self) -> usize {
        self.n_cells
    }

    /// Add every cell of `block`, creating the nodes not created by earlier blocks.
    pub(super) fn add_block(&mut self, block: &dyn Block) {
        let n = block.n_cells();
        let mut extent = [1usize; 3];
        extent[..self.dim].copy_from_slice(&n[..self.dim]);
        let splits = match self.kind.shape() {
            Shape::Triangle | Shape::Tetrahedron => Some(build_simplex_split(self.dim)),
            _ => None,
        };
        let reference = self.kind.reference_nodes();
        let mut lattice: Vec<[usize; 3]> = Vec::with_capacity(self.kind.n_nodes());
        for k in 0..extent[2] {
            for j in 0..extent[1] {
                for i in 0..extent[0] {
                    let cell = [i, j, k];
                    match &splits {
                        None => {
                            lattice.clear();
                            lattice.extend(reference.iter().map(|xi| self.tensor_node(cell, *xi)));
                            self.add_cell(block, &lattice);
                        }
                        Some(simplices) => {
                            for corners in simplices {
                                lattice.clear();
                                lattice.extend(
                                    reference
                                        .iter()
                                        .map(|xi| self.simplex_node(cell, corners, *xi)),
                                );
                                self.add_cell(block, &lattice);
                            }
                        }
                    }
                }
            }
        }
    }

    /// Lattice index of the node at reference coordinate `xi` (in `[-1, 1]^dim`) of cell `cell`.
    fn tensor_node(&self, cell: [usize; 3], xi: [f64; 3]) -> [usize; 3] {
        let mut h = [0usize; 3];
        for d in 0..self.dim {
            // xi[d] is exactly -1, 0 or 1, so 1 + xi[d] is an exact small integer.
            h[d] = 2 * cell[d] + (1.0 + xi[d]).round() as usize;
        }
        h
    }

    /// Lattice index of the node at reference coordinate `xi` (unit simplex) of the simplex with
    /// corner offsets `corners` in cell `cell`.
    fn simplex_node(&self, cell: [usize; 3], corners: &[[usize; 3]], xi: [f64; 3]) -> [usize; 3] {
        let mut weights = [0.0; 4];
        weights[0] = 1.0 - xi[..self.dim].iter().sum::<f64>();
        weights[1..=self.dim].copy_from_slice(&xi[..self.dim]);
        let mut h = [0usize; 3];
        for d in 0..self.dim {
            // Barycentric weights are 0, 1/2 or 1 and offsets 0 or 1: the sum is an exact integer.
            let offset: f64 = corners
                .iter()
                .zip(weights)
                .map(|(c, w)| 2.0 * w * c[d] as f64)
                .sum();
            h[d] = 2 * cell[d] + offset.round() as usize;
        }
        h
    }

    /// Add one cell given the lattice indices of its nodes in Dilata order.
    fn add_cell(&mut self, block: &dyn Block, lattice: &[[usize; 3]]) {
        let n = block.n_cells();
        for &h in lattice {
            let key = block.key(h);
            let id = match self.node_of_key.get(&key) {
                Some(&id) => id,
                None => {
                    let mut u = [0.0; 3];
                    for d in 0..self.dim {
                        u[d] = h[d] as f64 / (2 * n[d]) as f64;
                    }
                    let id = self.points.len();
                    self.points.push(block.point(u));
                    self.node_of_key.insert(key, id);
                    id
                }
            };
            self.connectivity.push(id);
        }
        for (local, (_, facet)) in self.kind.facets().iter().enumerate() {
            for axis in 0..self.dim {
                let last = 2 * n[axis];
                let side = if facet.iter().all(|&f| lattice[f][axis] == 0) {
                    Side::Min
                } else if facet.iter().all(|&f| lattice[f][axis] == last) {
                    Side::Max
                } else {
                    continue;
                };
                if let Some(name) = block.face_name(axis, side) {
                    // A kind has at most 6 facets, so the local index fits in a u8.
                    let facet = Facet {
                        cell: self.n_cells,
                        local: local as u8,
                    };
                    self.boundaries
                        .entry(name.to_string())
                        .or_default()
                        .push(facet);
                }
            }
        }
        self.n_cells += 1;
    }

    /// The finished mesh: one cell block, region `domain` holding every cell, and the named
    /// boundaries sorted and free of repeats.
    pub(super) fn finish(self) -> Mesh {
        let mut boundaries = self.boundaries;
        for facets in boundaries.values_mut() {
            facets.sort_unstable();
            facets.dedup();
        }
        let mut regions = BTreeMap::new();
        regions.insert("domain".to_string(), (0..self.n_cells).collect());
        Mesh {
            dim: self.dim,
            points: self.points,
            blocks: vec![CellBlock {
                kind: self.kind,
                connectivity: self.connectivity,
            }],
            regions,
            boundaries,
            node_sets: BTreeMap::new(),
        }
    }
}

/// Geometric radial spacing: `s(u) = (q^(n u) − 1)/(q^n − 1)` with `q = g^(1/(n−1))` per cell,
/// so that the last of `n` cells is `g` times the first; `s(u) = u` for `g = 1`. Continuous and
/// increasing in `u`, so mid-edge nodes follow the same map and orientation is kept.
pub(super) fn graded(u: f64, n: usize, grading: f64) -> f64 {
    if (grading - 1.0).abs() < 1e-12 {
        return u;
    }
    let n = n as f64;
    let q = grading.powf(1.0 / (n - 1.0).max(1.0));
    (q.powf(n * u) - 1.0) / (q.powf(n) - 1.0)
}

/// Simplices of one lattice cell: two triangles per square or six tetrahedra per cube, each the
/// path from corner `0` to corner `1…1` along one ordering of the axes (Kuhn/Freudenthal split).
/// Every simplex is ordered so that its signed measure in lattice coordinates is positive.
fn build_simplex_split(dim: usize) -> Vec<SimplexCorners> {
    let orders: Vec<Vec<usize>> = if dim == 2 {
        vec![vec![0, 1], vec![1, 0]]
    } else {
        vec![
            vec![0, 1, 2],
            vec![0, 2, 1],
            vec![1, 0, 2],
            vec![1, 2, 0],
            vec![2, 0, 1],
            vec![2, 1, 0],
        ]
    };
    orders
        .into_iter()
        .map(|order| {
            let mut corners = vec![[0usize; 3]];
            let mut at = [0usize; 3];
            for axis in order {
                at[axis] = 1;
                corners.push(at);
            }
            if lattice_orientation(&corners, dim) < 0 {
                corners.swap(1, 2);
            }
            corners
        })
        .collect()
}

/// Sign-carrying measure (determinant of the edge vectors from corner 0) of a lattice simplex.
fn lattice_orientation(corners: &[[usize; 3]], dim: usize) -> i64 {
    let edge = |v: usize, d: usize| corners[v][d] as i64 - corners[0][d] as i64;
    if dim == 2 {
        edge(1, 0) * edge(2, 1) - edge(1, 1) * edge(2, 0)
    } else {
        edge(1, 0) * (edge(2, 1) * edge(3, 2) - edge(2, 2) * edge(3, 1))
            - edge(1, 1) * (edge(2, 0) * edge(3, 2) - edge(2, 2) * edge(3, 0))
            + edge(1, 2) * (edge(2, 0) * edge(3, 1) - edge(2, 1) * edge(3, 0))
    }
}

#[cfg(test)]
mod tests {
    use super::{build_simplex_split, lattice_orientation};

    /// The split covers the cell exactly once: the simplices' lattice measures add up to the
    /// cell's (2 halves of a unit square, 6 sixths of a unit cube; Kuhn triangulation, common
    /// practice, no source), and each is positively oriented.
    #[test]
    fn simplex_split_is_positive_and_fills_the_cell() {
        for (dim, n_simplices) in [(2usize, 2usize), (3, 6)] {
            let split = build_simplex_split(dim);
            assert_eq!(split.len(), n_simplices);
            let total: i64 = split.iter().map(|s| lattice_orientation(s, dim)).sum();
            assert!(
                split.iter().all(|s| lattice_orientation(s, dim) == 1),
                "dim {dim}"
            );
            assert_eq!(total as usize, n_simplices, "dim {dim}");
        }
    }
}

//! Periodic node links: the nodes of one boundary identified with those of another boundary
//! that is its copy shifted by a translation.
//!
//! [`link_boundaries`] pairs the nodes of each given boundary pair and resolves chains (the
//! corners and edges of a box periodic in two or three directions are linked through several
//! pairs) so that every class of linked nodes has one *master*, its smallest node index. The
//! result, [`NodeLinks`], is purely geometric; `dilata-fem` turns it into shared degrees of
//! freedom.
//!
//! ```
//! use dilata_mesh::generate::{rectangle, RectangleParams};
//! use dilata_mesh::periodic::{link_boundaries, BoundaryPair};
//! use dilata_mesh::CellKind;
//!
//! let mesh = rectangle(&RectangleParams {
//!     origin: [0.0, 0.0],
//!     lengths: [2.0, 1.0],
//!     n_cells: [4, 2],
//!     kind: CellKind::Quad4,
//! })?;
//! let pairs = [BoundaryPair::new("left", "right"), BoundaryPair::new("bottom", "top")];
//! let links = link_boundaries(&mesh, &pairs)?;
//! // 3 right-side nodes and 5 top-side nodes, the top-right corner counted once.
//! assert_eq!(links.n_linked(), 7);
//! // All four corners are one node.
//! assert_eq!(links.master(14), 0);
//! # Ok::<(), dilata_mesh::MeshError>(())
//! ```

use crate::error::MeshError;
use crate::mesh::Mesh;

/// Two boundaries whose nodes are identified: `second` is `first` shifted by a translation (the
/// difference of their bounding-box minima). Nodes of `second` become linked to those of
/// `first`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct BoundaryPair {
    pub first: String,
    pub second: String,
}

impl BoundaryPair {
    pub fn new(first: &str, second: &str) -> Self {
        BoundaryPair {
            first: first.to_string(),
            second: second.to_string(),
        }
    }
}

/// Node identification: every node has a master (itself when it is not linked).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct NodeLinks {
    /// Master of every node; empty when no node is linked (every node is its own master).
    master: Vec<usize>,
    /// Translation of each pair, `second − first`.
    shifts: Vec<[f64; 3]>,
}

impl NodeLinks {
    /// No links.
    pub fn none() -> Self {
        NodeLinks::default()
    }

    /// True if no node is linked to another.
    pub fn is_empty(&self) -> bool {
        self.master.is_empty()
    }

    /// Master node of `node` (the smallest node index of its class).
    #[inline]
    pub fn master(&self, node: usize) -> usize {
        if self.master.is_empty() {
            node
        } else {
            self.master[node]
        }
    }

    /// Number of nodes that are not their own master.
    pub fn n_linked(&self) -> usize {
        self.master
            .iter()
            .enumerate()
            .filter(|&(n, &m)| n != m)
            .count()
    }

    /// `(node, master)` for every node that is not its own master, by node index.
    pub fn pairs(&self) -> impl Iterator<Item = (usize, usize)> + '_ {
        self.master
            .iter()
            .enumerate()
            .filter(|&(n, &m)| n != m)
            .map(|(n, &m)| (n, m))
    }

    /// Translation (`second − first`) of each boundary pair, in the order given.
    pub fn shifts(&self) -> &[[f64; 3]] {
        &self.shifts
    }

    /// Check that the links fit a mesh of `n_points` nodes (a programmer error otherwise).
    pub fn assert_fits(&self, n_points: usize) {
        assert!(
            self.master.is_empty() || self.master.len() == n_points,
            "node links for {} nodes used with a mesh of {n_points} nodes",
            self.master.len()
        );
    }
}

/// How many unmatched nodes an error lists.
const LISTED: usize = 5;

/// Relative position tolerance: two nodes match when they are closer than this times the
/// shortest facet edge of the two boundaries. Far below the half edge at which a wrong node
/// could match, far above the rounding of coordinates written with 8 or more significant digits
/// (common practice, no source).
pub const MATCH_TOLERANCE: f64 = 1e-4;

/// Link the nodes of every pair (see [`BoundaryPair`]) and resolve chains to one master per
/// class of linked nodes.
///
/// # Errors
/// An unknown boundary name; two boundaries that are not translated copies of each other
/// (nodes without a partner, listed with their coordinates); a pair whose translation is zero.
pub fn link_boundaries(mesh: &Mesh, pairs: &[BoundaryPair]) -> Result<NodeLinks, MeshError> {
    if pairs.is_empty() {
        return Ok(NodeLinks::none());
    }
    let mut parent: Vec<usize> = (0..mesh.n_points()).collect();
    let mut shifts = Vec::with_capacity(pairs.len());
    for pair in pairs {
        let first = mesh.boundary_nodes(&pair.first)?;
        let second = mesh.boundary_nodes(&pair.second)?;
        let h = shortest_edge(mesh, &pair.first)?.min(shortest_edge(mesh, &pair.second)?);
        let tol = MATCH_TOLERANCE * h;
        let shift: [f64; 3] = {
            let (a, b) = (bbox_min(mesh, &first), bbox_min(mesh, &second));
            std::array::from_fn(|d| b[d] - a[d])
        };
        if shift.iter().map(|s| s * s).sum::<f64>().sqrt() <= tol {
            return Err(MeshError::Periodic {
                first: pair.first.clone(),
                second: pair.second.clone(),
                message: "the two boundaries do not lie apart (zero translation)".to_string(),
            });
        }
        let partner = match_nodes(mesh, &first, &second, shift, tol);
        let unmatched_second: Vec<usize> = second
            .iter()
            .zip(&partner)
            .filter(|(_, p)| p.is_none())
            .map(|(&n, _)| n)
            .collect();
        let mut hit = vec![false; first.len()];
        for p in partner.iter().flatten() {
            hit[*p] = true;
        }
        let unmatched_first: Vec<usize> = first
            .iter()
            .zip(&hit)
            .filter(|(_, h)| !**h)
            .map(|(&n, _)| n)
            .collect();
        if !unmatched_second.is_empty() || !unmatched_first.is_empty() {
            return Err(MeshError::Periodic {
                first: pair.first.clone(),
                second: pair.second.clone(),
                message: describe_unmatched(mesh, pair, shift, &unmatched_first, &unmatched_second),
            });
        }
        for (&s, p) in second.iter().zip(&partner) {
            let m = first[p.expect("all matched")];
            union(&mut parent, s, m);
        }
        shifts.push(shift);
    }
    // Resolve every class to its smallest node (the root of the union-find keeps the smallest).
    let master: Vec<usize> = (0..parent.len()).map(|n| find(&parent, n)).collect();
    Ok(NodeLinks { master, shifts })
}

/// Smallest coordinates of a node set.
fn bbox_min(mesh: &Mesh, nodes: &[usize]) -> [f64; 3] {
    let mut m = [f64::INFINITY; 3];
    for &n in nodes {
        for d in 0..3 {
            m[d] = m[d].min(mesh.points[n][d]);
        }
    }
    m
}

/// Shortest distance between two distinct nodes of one facet of a boundary.
fn shortest_edge(mesh: &Mesh, boundary: &str) -> Result<f64, MeshError> {
    let mut h = f64::INFINITY;
    for &f in mesh.boundary(boundary)? {
        let (_, nodes) = mesh.facet_nodes(f);
        for (i, &a) in nodes.iter().enumerate() {
            for &b in &nodes[i + 1..] {
                let d = dist(mesh.points[a], mesh.points[b]);
                if d > 0.0 {
                    h = h.min(d);
                }
            }
        }
    }
    if h.is_finite() {
        Ok(h)
    } else {
        Err(MeshError::Invalid(format!(
            "boundary '{boundary}' has no facet of positive size"
        )))
    }
}

fn dist(a: [f64; 3], b: [f64; 3]) -> f64 {
    (0..3).map(|d| (a[d] - b[d]).powi(2)).sum::<f64>().sqrt()
}

/// For every node of `second`, the index (into `first`) of the node at its position minus
/// `shift`, if one lies within `tol`.
fn match_nodes(
    mesh: &Mesh,
    first: &[usize],
    second: &[usize],
    shift: [f64; 3],
    tol: f64,
) -> Vec<Option<usize>> {
    // First-boundary nodes sorted by x: a window search along x, then the full distance.
    let mut by_x: Vec<usize> = (0..first.len()).collect();
    let x_of = |i: usize| mesh.points[first[i]][0];
    by_x.sort_by(|&a, &b| x_of(a).total_cmp(&x_of(b)).then(a.cmp(&b)));
    let xs: Vec<f64> = by_x.iter().map(|&i| x_of(i)).collect();
    second
        .iter()
        .map(|&s| {
            let p = mesh.points[s];
            let target: [f64; 3] = std::array::from_fn(|d| p[d] - shift[d]);
            let start = xs.partition_point(|&x| x < target[0] - tol);
            let mut best: Option<(f64, usize)> = None;
            for k in start..xs.len() {
                if xs[k] > target[0] + tol {
                    break;
                }
                let i = by_x[k];
                let d = dist(mesh.points[first[i]], target);
                if d <= tol && best.is_none_or(|(bd, _)| d < bd) {
                    best = Some((d, i));
                }
            }
            best.map(|(_, i)| i)
        })
        .collect()
}

fn describe_unmatched(
    mesh: &Mesh,
    pair: &BoundaryPair,
    shift: [f64; 3],
    first: &[usize],
    second: &[usize],
) -> String {
    let show = |nodes: &[usize]| -> String {
        let mut s: Vec<String> = nodes
            .iter()
            .take(LISTED)
            .map(|&n| {
                let p = mesh.points[n];
                format!("node {n} at ({:e}, {:e}, {:e})", p[0], p[1], p[2])
            })
            .collect();
        if nodes.len() > LISTED {
            s.push(format!("… ({} more)", nodes.len() - LISTED));
        }
        s.join(", ")
    };
    let mut parts = Vec::new();
    if !second.is_empty() {
        parts.push(format!(
            "{} node(s) of '{}' have no partner on '{}': {}",
            second.len(),
            pair.second,
            pair.first,
            show(second)
        ));
    }
    if !first.is_empty() {
        parts.push(format!(
            "{} node(s) of '{}' have no partner on '{}': {}",
            first.len(),
            pair.first,
            pair.second,
            show(first)
        ));
    }
    format!(
        "the boundaries are not copies of each other shifted by ({:e}, {:e}, {:e}) (the \
         difference of their smallest coordinates): {}",
        shift[0],
        shift[1],
        shift[2],
        parts.join("; ")
    )
}

fn find(parent: &[usize], mut n: usize) -> usize {
    while parent[n] != n {
        n = parent[n];
    }
    n
}

/// Join the classes of `a` and `b`; the smaller root becomes the root.
fn union(parent: &mut [usize], a: usize, b: usize) {
    let (ra, rb) = (find(parent, a), find(parent, b));
    let (lo, hi) = if ra < rb { (ra, rb) } else { (rb, ra) };
    parent[hi] = lo;
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::generate::{cuboid, rectangle, BoxParams, RectangleParams};
    use crate::CellKind;

    fn plate(kind: CellKind, n: [usize; 2]) -> Mesh {
        rectangle(&RectangleParams {
            origin: [0.5, -1.0],
            lengths: [2.0, 1.0],
            n_cells: n,
            kind,
        })
        .unwrap()
    }

    /// Every linked node sits at its master's position plus a sum of the pair shifts.
    fn check_positions(mesh: &Mesh, links: &NodeLinks, lengths: &[f64]) {
        for (n, m) in links.pairs() {
            let (p, q) = (mesh.points[n], mesh.points[m]);
            for d in 0..lengths.len() {
                let k = (p[d] - q[d]) / lengths[d];
                assert!(
                    (k - k.round()).abs() < 1e-12 && k.round() >= 0.0,
                    "node {n} {p:?} master {m} {q:?}"
                );
            }
            assert!(m < n);
        }
    }

    #[test]
    fn rectangle_corners_resolve_to_one_master() {
        for kind in [
            CellKind::Quad4,
            CellKind::Quad9,
            CellKind::Tri6,
            CellKind::Quad8,
        ] {
            let mesh = plate(kind, [3, 2]);
            let links = link_boundaries(
                &mesh,
                &[
                    BoundaryPair::new("left", "right"),
                    BoundaryPair::new("bottom", "top"),
                ],
            )
            .unwrap();
            let right = mesh.boundary_nodes("right").unwrap();
            let top = mesh.boundary_nodes("top").unwrap();
            let mut slaves: Vec<usize> = right.iter().chain(&top).copied().collect();
            slaves.sort_unstable();
            slaves.dedup();
            assert_eq!(links.n_linked(), slaves.len(), "{kind}");
            check_positions(&mesh, &links, &[2.0, 1.0]);
            let corners: Vec<usize> = (0..mesh.n_points())
                .filter(|&n| {
                    let p = mesh.points[n];
                    (p[0] == 0.5 || p[0] == 2.5) && (p[1] == -1.0 || p[1] == 0.0)
                })
                .collect();
            assert_eq!(corners.len(), 4);
            let m = links.master(corners[0]);
            assert!(corners.iter().all(|&c| links.master(c) == m), "{kind}");
            assert_eq!(links.shifts(), &[[2.0, 0.0, 0.0], [0.0, 1.0, 0.0]]);
        }
    }

    #[test]
    fn box_edges_and_corners_in_three_directions() {
        let mesh = cuboid(&BoxParams {
            origin: [0.0; 3],
            lengths: [1.0, 2.0, 3.0],
            n_cells: [2, 3, 2],
            kind: CellKind::Hex20,
        })
        .unwrap();
        let links = link_boundaries(
            &mesh,
            &[
                BoundaryPair::new("left", "right"),
                BoundaryPair::new("bottom", "top"),
                BoundaryPair::new("back", "front"),
            ],
        )
        .unwrap();
        check_positions(&mesh, &links, &[1.0, 2.0, 3.0]);
        // Masters are exactly the nodes with no coordinate at its upper end.
        for n in 0..mesh.n_points() {
            let p = mesh.points[n];
            let upper = p[0] == 1.0 || p[1] == 2.0 || p[2] == 3.0;
            assert_eq!(links.master(n) != n, upper, "node {n} {p:?}");
        }
    }

    #[test]
    fn unmatched_nodes_are_listed_with_both_names() {
        let mut mesh = plate(CellKind::Quad4, [2, 3]);
        // Move one node of the right edge off its partner's height.
        let right = mesh.boundary_nodes("right").unwrap();
        let n = right[1];
        mesh.points[n][1] += 1e-3;
        let err = link_boundaries(&mesh, &[BoundaryPair::new("left", "right")]).unwrap_err();
        let text = err.to_string();
        assert!(
            text.contains("'left'") && text.contains("'right'"),
            "{text}"
        );
        assert!(text.contains(&format!("node {n} at")), "{text}");
    }

    #[test]
    fn different_node_counts_are_refused() {
        let mesh = plate(CellKind::Quad4, [2, 3]);
        // left has 4 nodes, top 3: not copies of each other.
        let err = link_boundaries(&mesh, &[BoundaryPair::new("left", "top")]).unwrap_err();
        assert!(err.to_string().contains("no partner"), "{err}");
        let err = link_boundaries(&mesh, &[BoundaryPair::new("left", "left")]).unwrap_err();
        assert!(err.to_string().contains("zero translation"), "{err}");
        let err = link_boundaries(&mesh, &[BoundaryPair::new("left", "rim")]).unwrap_err();
        assert!(err.to_string().contains("unknown boundary 'rim'"), "{err}");
    }
}

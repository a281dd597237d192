//! MSH element type codes and the conversion of MSH node orderings to Dilata's (VTK) ordering.
//!
//! The permutations are not typed in: they are derived from the MSH definitions of each
//! kind's mid-edge nodes (as pairs of corners) and face-centre nodes (as sets of corners),
//! matched against [`CellKind::edges`] and the faces of [`CellKind::Hex8`]. Corners come first
//! and in the same order in both conventions.

use crate::cell::{CellKind, Shape};

/// Element type codes of the MSH format (format documentation, "MSH file format", element
/// types; from memory) and the Dilata kind each one maps to.
const CODES: [(i64, CellKind); 13] = [
    (15, CellKind::Point1),
    (1, CellKind::Line2),
    (8, CellKind::Line3),
    (2, CellKind::Tri3),
    (9, CellKind::Tri6),
    (3, CellKind::Quad4),
    (16, CellKind::Quad8),
    (10, CellKind::Quad9),
    (4, CellKind::Tet4),
    (11, CellKind::Tet10),
    (5, CellKind::Hex8),
    (17, CellKind::Hex20),
    (12, CellKind::Hex27),
];

/// The Dilata kind of an MSH element type code.
pub(crate) fn kind_of_code(code: i64) -> Option<CellKind> {
    CODES.iter().find(|(c, _)| *c == code).map(|&(_, k)| k)
}

/// The supported codes, for error messages: `"15 (point1), 1 (line2), ..."`.
pub(crate) fn supported_codes() -> String {
    CODES
        .iter()
        .map(|(c, k)| format!("{c} ({k})"))
        .collect::<Vec<_>>()
        .join(", ")
}

// MSH node ordering, from memory of the format documentation ("Node ordering"); cross-checked
// in the tests against geometry (mid-edge nodes must land on edge midpoints after conversion).

/// Mid-edge nodes of MSH lines, after the corners.
const MSH_LINE_EDGES: [(usize, usize); 1] = [(0, 1)];
/// Mid-edge nodes of MSH triangles, after the corners.
const MSH_TRI_EDGES: [(usize, usize); 3] = [(0, 1), (1, 2), (2, 0)];
/// Mid-edge nodes of MSH quadrilaterals, after the corners (then the centre for quad9).
const MSH_QUAD_EDGES: [(usize, usize); 4] = [(0, 1), (1, 2), (2, 3), (3, 0)];
/// Mid-edge nodes of MSH tetrahedra, after the corners: the last two differ from VTK.
const MSH_TET_EDGES: [(usize, usize); 6] = [(0, 1), (1, 2), (2, 0), (0, 3), (2, 3), (1, 3)];
/// Mid-edge nodes of MSH hexahedra, after the corners.
const MSH_HEX_EDGES: [(usize, usize); 12] = [
    (0, 1),
    (0, 3),
    (0, 4),
    (1, 2),
    (1, 5),
    (2, 3),
    (2, 6),
    (3, 7),
    (4, 5),
    (4, 7),
    (5, 6),
    (6, 7),
];
/// Face-centre nodes of MSH hex27, after the mid-edge nodes: z-min, y-min, x-min, x-max,
/// y-max, z-max; the body centre comes last.
const MSH_HEX_FACES: [[usize; 4]; 6] = [
    [0, 1, 2, 3],
    [0, 1, 5, 4],
    [0, 3, 7, 4],
    [1, 2, 6, 5],
    [2, 3, 7, 6],
    [4, 5, 6, 7],
];

fn msh_edges(shape: Shape) -> &'static [(usize, usize)] {
    match shape {
        Shape::Point => &[],
        Shape::Line => &MSH_LINE_EDGES,
        Shape::Triangle => &MSH_TRI_EDGES,
        Shape::Quadrilateral => &MSH_QUAD_EDGES,
        Shape::Tetrahedron => &MSH_TET_EDGES,
        Shape::Hexahedron => &MSH_HEX_EDGES,
    }
}

fn same_pair(a: (usize, usize), b: (usize, usize)) -> bool {
    a == b || (a.0 == b.1 && a.1 == b.0)
}

fn sorted4(mut f: [usize; 4]) -> [usize; 4] {
    f.sort_unstable();
    f
}

/// `perm[i]` is the MSH local index of the node that Dilata stores at local index `i`.
///
/// Panics only if the tables in this module are inconsistent with [`CellKind`], which the
/// unit tests rule out.
pub(crate) fn msh_to_dilata(kind: CellKind) -> Vec<usize> {
    let n = kind.n_nodes();
    let corners = kind.n_corners();
    let mut perm: Vec<usize> = (0..n).collect();
    if kind.order() == 1 {
        return perm;
    }
    let msh = msh_edges(kind.shape());
    for &(a, b, mid) in kind.edges() {
        let j = msh
            .iter()
            .position(|&e| same_pair(e, (a, b)))
            .unwrap_or_else(|| panic!("MSH edge table of {kind} lacks edge {a}-{b}"));
        perm[mid] = corners + j;
    }
    if kind == CellKind::Hex27 {
        let first_face = corners + MSH_HEX_EDGES.len();
        for (i, (_, face)) in CellKind::Hex8.facets().iter().enumerate() {
            let key = match face {
                [a, b, c, d] => sorted4([*a, *b, *c, *d]),
                _ => panic!("hex8 facet with {} nodes", face.len()),
            };
            let j = MSH_HEX_FACES
                .iter()
                .position(|&f| sorted4(f) == key)
                .unwrap_or_else(|| panic!("MSH face table of hex27 lacks face {face:?}"));
            perm[first_face + i] = first_face + j;
        }
    }
    perm
}

/// Permutations for every kind, computed once per read.
pub(crate) struct Orderings {
    perms: Vec<(CellKind, Vec<usize>)>,
}

impl Orderings {
    pub(crate) fn new() -> Self {
        Orderings {
            perms: CellKind::ALL
                .iter()
                .map(|&k| (k, msh_to_dilata(k)))
                .collect(),
        }
    }

    /// The MSH → Dilata permutation of `kind`.
    pub(crate) fn of(&self, kind: CellKind) -> &[usize] {
        self.perms
            .iter()
            .find(|(k, _)| *k == kind)
            .map_or(&[], |(_, p)| p.as_slice())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_permutation_is_a_bijection() {
        for k in CellKind::ALL {
            let mut p = msh_to_dilata(k);
            assert_eq!(p.len(), k.n_nodes(), "{k}");
            p.sort_unstable();
            assert_eq!(p, (0..k.n_nodes()).collect::<Vec<_>>(), "{k}");
        }
    }

    #[test]
    fn tet10_swaps_the_last_two_nodes() {
        // From memory of the format documentation and of the VTK quadratic-tetra ordering.
        assert_eq!(
            msh_to_dilata(CellKind::Tet10),
            vec![0, 1, 2, 3, 4, 5, 6, 7, 9, 8]
        );
    }

    #[test]
    fn linear_and_planar_quadratic_kinds_keep_their_order() {
        // From memory: these kinds share the VTK ordering.
        for k in [
            CellKind::Line2,
            CellKind::Line3,
            CellKind::Tri3,
            CellKind::Tri6,
            CellKind::Quad4,
            CellKind::Quad8,
            CellKind::Quad9,
            CellKind::Tet4,
            CellKind::Hex8,
        ] {
            assert_eq!(
                msh_to_dilata(k),
                (0..k.n_nodes()).collect::<Vec<_>>(),
                "{k}"
            );
        }
    }

    /// Reference nodes of `kind` in MSH order, placed from the MSH tables of this module.
    fn msh_reference_nodes(kind: CellKind) -> Vec<[f64; 3]> {
        let corners = kind.linear().reference_nodes();
        let mean = |ids: &[usize]| {
            let mut m = [0.0; 3];
            for &i in ids {
                for d in 0..3 {
                    m[d] += corners[i][d] / ids.len() as f64;
                }
            }
            m
        };
        let mut x = corners.clone();
        if kind.order() == 2 {
            for &(a, b) in msh_edges(kind.shape()) {
                x.push(mean(&[a, b]));
            }
        }
        match kind {
            CellKind::Quad9 => x.push(mean(&[0, 1, 2, 3])),
            CellKind::Hex27 => {
                for f in MSH_HEX_FACES {
                    x.push(mean(&f));
                }
                x.push(mean(&[0, 1, 2, 3, 4, 5, 6, 7]));
            }
            _ => {}
        }
        x
    }

    #[test]
    fn converted_reference_cells_match_the_dilata_reference_nodes() {
        // Geometry, not tables: place every node of a reference cell where the MSH ordering
        // says it is, convert, and compare with the Dilata (VTK) reference nodes of cell.rs.
        for k in CellKind::ALL {
            let msh = msh_reference_nodes(k);
            let converted: Vec<[f64; 3]> = msh_to_dilata(k).iter().map(|&p| msh[p]).collect();
            assert_eq!(converted, k.reference_nodes(), "{k}");
        }
    }

    #[test]
    fn codes_are_unique_and_known() {
        assert_eq!(kind_of_code(11), Some(CellKind::Tet10));
        assert_eq!(kind_of_code(6), None);
        for (c, k) in CODES {
            assert_eq!(kind_of_code(c), Some(k));
        }
    }
}

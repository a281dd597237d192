//! Cell kinds, their node counts, reference-node ordering and local facets.
//!
//! Node ordering convention: Dilata uses the VTK ordering for every cell kind (VTK file format
//! documentation, "VTK cell types"; common practice). Reference coordinates: lines, quadrilaterals
//! and hexahedra on `[-1, 1]^d`; triangles and tetrahedra on the unit simplex with vertex 0 at the
//! origin. Readers of other formats convert to this ordering on input.
//!
//! Local facets are listed with their nodes ordered so that the right-hand rule gives the outward
//! normal (for 2D cells: walking the edge with the cell on the left). The facet node list follows
//! the facet kind's own ordering (corners first, then mid-edge nodes, then face centre).

/// The kinds of cell Dilata knows.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum CellKind {
    Point1,
    Line2,
    Line3,
    Tri3,
    Tri6,
    Quad4,
    Quad8,
    Quad9,
    Tet4,
    Tet10,
    Hex8,
    Hex20,
    Hex27,
}

/// Shape family of a cell kind.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Shape {
    Point,
    Line,
    Triangle,
    Quadrilateral,
    Tetrahedron,
    Hexahedron,
}

impl CellKind {
    /// Every cell kind, in declaration order.
    pub const ALL: [CellKind; 13] = [
        CellKind::Point1,
        CellKind::Line2,
        CellKind::Line3,
        CellKind::Tri3,
        CellKind::Tri6,
        CellKind::Quad4,
        CellKind::Quad8,
        CellKind::Quad9,
        CellKind::Tet4,
        CellKind::Tet10,
        CellKind::Hex8,
        CellKind::Hex20,
        CellKind::Hex27,
    ];

    /// Number of nodes.
    pub const fn n_nodes(self) -> usize {
        match self {
            CellKind::Point1 => 1,
            CellKind::Line2 => 2,
            CellKind::Line3 => 3,
            CellKind::Tri3 => 3,
            CellKind::Tri6 => 6,
            CellKind::Quad4 => 4,
            CellKind::Quad8 => 8,
            CellKind::Quad9 => 9,
            CellKind::Tet4 => 4,
            CellKind::Tet10 => 10,
            CellKind::Hex8 => 8,
            CellKind::Hex20 => 20,
            CellKind::Hex27 => 27,
        }
    }

    /// Topological dimension.
    pub const fn dim(self) -> usize {
        match self.shape() {
            Shape::Point => 0,
            Shape::Line => 1,
            Shape::Triangle | Shape::Quadrilateral => 2,
            Shape::Tetrahedron | Shape::Hexahedron => 3,
        }
    }

    /// Shape family.
    pub const fn shape(self) -> Shape {
        match self {
            CellKind::Point1 => Shape::Point,
            CellKind::Line2 | CellKind::Line3 => Shape::Line,
            CellKind::Tri3 | CellKind::Tri6 => Shape::Triangle,
            CellKind::Quad4 | CellKind::Quad8 | CellKind::Quad9 => Shape::Quadrilateral,
            CellKind::Tet4 | CellKind::Tet10 => Shape::Tetrahedron,
            CellKind::Hex8 | CellKind::Hex20 | CellKind::Hex27 => Shape::Hexahedron,
        }
    }

    /// Polynomial order of the geometry (1 linear, 2 quadratic).
    pub const fn order(self) -> usize {
        match self {
            CellKind::Point1
            | CellKind::Line2
            | CellKind::Tri3
            | CellKind::Quad4
            | CellKind::Tet4
            | CellKind::Hex8 => 1,
            _ => 2,
        }
    }

    /// Number of corner (vertex) nodes; corners always come first in the node list.
    pub const fn n_corners(self) -> usize {
        self.linear().n_nodes()
    }

    /// The linear kind with the same shape (e.g. `Tet10` → `Tet4`).
    pub const fn linear(self) -> CellKind {
        match self.shape() {
            Shape::Point => CellKind::Point1,
            Shape::Line => CellKind::Line2,
            Shape::Triangle => CellKind::Tri3,
            Shape::Quadrilateral => CellKind::Quad4,
            Shape::Tetrahedron => CellKind::Tet4,
            Shape::Hexahedron => CellKind::Hex8,
        }
    }

    /// Short lower-case name used in messages and summaries (`"tet10"`).
    pub const fn name(self) -> &'static str {
        match self {
            CellKind::Point1 => "point1",
            CellKind::Line2 => "line2",
            CellKind::Line3 => "line3",
            CellKind::Tri3 => "tri3",
            CellKind::Tri6 => "tri6",
            CellKind::Quad4 => "quad4",
            CellKind::Quad8 => "quad8",
            CellKind::Quad9 => "quad9",
            CellKind::Tet4 => "tet4",
            CellKind::Tet10 => "tet10",
            CellKind::Hex8 => "hex8",
            CellKind::Hex20 => "hex20",
            CellKind::Hex27 => "hex27",
        }
    }

    /// Parse a name produced by [`CellKind::name`].
    pub fn from_name(name: &str) -> Option<CellKind> {
        CellKind::ALL.into_iter().find(|k| k.name() == name)
    }

    /// Number of local facets (faces of 3D cells, edges of 2D cells, end points of lines).
    pub fn n_facets(self) -> usize {
        self.facets().len()
    }

    /// Local facets: the facet's kind and its nodes as local indices of this cell, ordered for an
    /// outward normal.
    pub fn facets(self) -> &'static [(CellKind, &'static [usize])] {
        use CellKind as K;
        match self {
            K::Point1 => &[],
            K::Line2 | K::Line3 => &[(K::Point1, &[0]), (K::Point1, &[1])],
            K::Tri3 => &[
                (K::Line2, &[0, 1]),
                (K::Line2, &[1, 2]),
                (K::Line2, &[2, 0]),
            ],
            K::Tri6 => &[
                (K::Line3, &[0, 1, 3]),
                (K::Line3, &[1, 2, 4]),
                (K::Line3, &[2, 0, 5]),
            ],
            K::Quad4 => &[
                (K::Line2, &[0, 1]),
                (K::Line2, &[1, 2]),
                (K::Line2, &[2, 3]),
                (K::Line2, &[3, 0]),
            ],
            K::Quad8 | K::Quad9 => &[
                (K::Line3, &[0, 1, 4]),
                (K::Line3, &[1, 2, 5]),
                (K::Line3, &[2, 3, 6]),
                (K::Line3, &[3, 0, 7]),
            ],
            K::Tet4 => &[
                (K::Tri3, &[0, 2, 1]),
                (K::Tri3, &[0, 1, 3]),
                (K::Tri3, &[1, 2, 3]),
                (K::Tri3, &[0, 3, 2]),
            ],
            K::Tet10 => &[
                (K::Tri6, &[0, 2, 1, 6, 5, 4]),
                (K::Tri6, &[0, 1, 3, 4, 8, 7]),
                (K::Tri6, &[1, 2, 3, 5, 9, 8]),
                (K::Tri6, &[0, 3, 2, 7, 9, 6]),
            ],
            // Faces in the order x-min, x-max, y-min, y-max, z-min, z-max (reference axes), so
            // that face i of a hex27 has its centre node at local index 20 + i.
            K::Hex8 => &[
                (K::Quad4, &[0, 4, 7, 3]),
                (K::Quad4, &[1, 2, 6, 5]),
                (K::Quad4, &[0, 1, 5, 4]),
                (K::Quad4, &[3, 7, 6, 2]),
                (K::Quad4, &[0, 3, 2, 1]),
                (K::Quad4, &[4, 5, 6, 7]),
            ],
            K::Hex20 => &[
                (K::Quad8, &[0, 4, 7, 3, 16, 15, 19, 11]),
                (K::Quad8, &[1, 2, 6, 5, 9, 18, 13, 17]),
                (K::Quad8, &[0, 1, 5, 4, 8, 17, 12, 16]),
                (K::Quad8, &[3, 7, 6, 2, 19, 14, 18, 10]),
                (K::Quad8, &[0, 3, 2, 1, 11, 10, 9, 8]),
                (K::Quad8, &[4, 5, 6, 7, 12, 13, 14, 15]),
            ],
            K::Hex27 => &[
                (K::Quad9, &[0, 4, 7, 3, 16, 15, 19, 11, 20]),
                (K::Quad9, &[1, 2, 6, 5, 9, 18, 13, 17, 21]),
                (K::Quad9, &[0, 1, 5, 4, 8, 17, 12, 16, 22]),
                (K::Quad9, &[3, 7, 6, 2, 19, 14, 18, 10, 23]),
                (K::Quad9, &[0, 3, 2, 1, 11, 10, 9, 8, 24]),
                (K::Quad9, &[4, 5, 6, 7, 12, 13, 14, 15, 25]),
            ],
        }
    }

    /// Edges as pairs of local corner indices, with the local index of the mid-edge node for
    /// quadratic kinds (VTK ordering).
    pub fn edges(self) -> &'static [(usize, usize, usize)] {
        use CellKind as K;
        // (a, b, mid); mid is meaningful only for quadratic kinds.
        match self.shape() {
            Shape::Point => &[],
            Shape::Line => &[(0, 1, 2)],
            Shape::Triangle => &[(0, 1, 3), (1, 2, 4), (2, 0, 5)],
            Shape::Quadrilateral => &[(0, 1, 4), (1, 2, 5), (2, 3, 6), (3, 0, 7)],
            Shape::Tetrahedron => &[
                (0, 1, 4),
                (1, 2, 5),
                (2, 0, 6),
                (0, 3, 7),
                (1, 3, 8),
                (2, 3, 9),
            ],
            Shape::Hexahedron => {
                let _ = K::Hex8;
                &[
                    (0, 1, 8),
                    (1, 2, 9),
                    (2, 3, 10),
                    (3, 0, 11),
                    (4, 5, 12),
                    (5, 6, 13),
                    (6, 7, 14),
                    (7, 4, 15),
                    (0, 4, 16),
                    (1, 5, 17),
                    (2, 6, 18),
                    (3, 7, 19),
                ]
            }
        }
    }

    /// Reference coordinates of every node (unused trailing components are zero).
    pub fn reference_nodes(self) -> Vec<[f64; 3]> {
        let corners: &[[f64; 3]] = match self.shape() {
            Shape::Point => &[[0.0; 3]],
            Shape::Line => &[[-1.0, 0.0, 0.0], [1.0, 0.0, 0.0]],
            Shape::Triangle => &[[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]],
            Shape::Quadrilateral => &[
                [-1.0, -1.0, 0.0],
                [1.0, -1.0, 0.0],
                [1.0, 1.0, 0.0],
                [-1.0, 1.0, 0.0],
            ],
            Shape::Tetrahedron => &[
                [0.0, 0.0, 0.0],
                [1.0, 0.0, 0.0],
                [0.0, 1.0, 0.0],
                [0.0, 0.0, 1.0],
            ],
            Shape::Hexahedron => &[
                [-1.0, -1.0, -1.0],
                [1.0, -1.0, -1.0],
                [1.0, 1.0, -1.0],
                [-1.0, 1.0, -1.0],
                [-1.0, -1.0, 1.0],
                [1.0, -1.0, 1.0],
                [1.0, 1.0, 1.0],
                [-1.0, 1.0, 1.0],
            ],
        };
        let mut nodes: Vec<[f64; 3]> = corners.to_vec();
        if self.order() == 1 {
            return nodes;
        }
        let mid = |a: [f64; 3], b: [f64; 3]| {
            [
                (a[0] + b[0]) / 2.0,
                (a[1] + b[1]) / 2.0,
                (a[2] + b[2]) / 2.0,
            ]
        };
        for &(a, b, m) in self.edges() {
            debug_assert_eq!(m, nodes.len());
            nodes.push(mid(corners[a], corners[b]));
        }
        match self {
            CellKind::Quad9 => nodes.push([0.0, 0.0, 0.0]),
            CellKind::Hex27 => {
                for (_, face) in CellKind::Hex8.facets() {
                    let mut c = [0.0; 3];
                    for &i in face.iter() {
                        for d in 0..3 {
                            c[d] += corners[i][d] / 4.0;
                        }
                    }
                    nodes.push(c);
                }
                nodes.push([0.0, 0.0, 0.0]);
            }
            _ => {}
        }
        debug_assert_eq!(nodes.len(), self.n_nodes());
        nodes
    }
}

impl std::fmt::Display for CellKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_node_counts_match() {
        for k in CellKind::ALL {
            assert_eq!(k.reference_nodes().len(), k.n_nodes(), "{k}");
        }
    }

    #[test]
    fn facet_nodes_lie_on_one_reference_facet_and_have_facet_kind_size() {
        for k in CellKind::ALL {
            for (fk, nodes) in k.facets() {
                assert_eq!(fk.n_nodes(), nodes.len(), "{k} facet {fk}");
                assert!(nodes.iter().all(|&i| i < k.n_nodes()));
            }
        }
    }

    /// Facet orientation: the facet normal computed from its first corners points away from the
    /// reference-cell centroid (the convention stated in the module docs).
    #[test]
    fn facets_are_outward() {
        for k in CellKind::ALL.into_iter().filter(|k| k.dim() >= 2) {
            let x = k.reference_nodes();
            let n = k.n_corners() as f64;
            let mut centroid = [0.0; 3];
            for p in &x[..k.n_corners()] {
                for d in 0..3 {
                    centroid[d] += p[d] / n;
                }
            }
            for (_, f) in k.facets() {
                let a = x[f[0]];
                let b = x[f[1]];
                let sub = |p: [f64; 3], q: [f64; 3]| [p[0] - q[0], p[1] - q[1], p[2] - q[2]];
                let outward = sub(a, centroid);
                let normal = if k.dim() == 2 {
                    let t = sub(b, a);
                    [t[1], -t[0], 0.0]
                } else {
                    let c = x[f[2]];
                    let (u, v) = (sub(b, a), sub(c, a));
                    [
                        u[1] * v[2] - u[2] * v[1],
                        u[2] * v[0] - u[0] * v[2],
                        u[0] * v[1] - u[1] * v[0],
                    ]
                };
                let dot: f64 = (0..3).map(|d| normal[d] * outward[d]).sum();
                assert!(dot > 0.0, "{k} facet {f:?} not outward");
            }
        }
    }
}

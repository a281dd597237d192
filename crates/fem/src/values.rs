//! Geometry modes, the isoparametric mapping and per-cell values at quadrature points.
//!
//! [`CellValues`] holds, for one cell kind and one quadrature rule, the tabulated reference shape
//! functions of the geometry and of every interpolation space used by the fields; `reinit_into`
//! maps one cell and fills physical gradients and integration weights in place (no allocation).

use dilata_mesh::CellKind;

use crate::quadrature::QuadratureRule;
use crate::shape::ShapeTable;

/// How a 2D or 3D mesh represents the body. A property of the problem, not of the element.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum GeometryMode {
    /// Three-dimensional solid.
    ThreeD,
    /// 2D section of a long body: out-of-plane strain zero.
    PlaneStrain,
    /// 2D thin plate: out-of-plane stress zero.
    PlaneStress,
    /// 2D r–z section of a body of revolution; x is the radius r, y the axis z. Integration
    /// weight `2πr`, hoop strain `u_r / r`.
    Axisymmetric,
}

impl GeometryMode {
    /// Spatial dimension of meshes this mode accepts.
    pub const fn space_dim(self) -> usize {
        match self {
            GeometryMode::ThreeD => 3,
            _ => 2,
        }
    }

    /// Lower-case name used in files and messages.
    pub const fn name(self) -> &'static str {
        match self {
            GeometryMode::ThreeD => "3d",
            GeometryMode::PlaneStrain => "plane-strain",
            GeometryMode::PlaneStress => "plane-stress",
            GeometryMode::Axisymmetric => "axisymmetric",
        }
    }

    /// Parse a name produced by [`GeometryMode::name`].
    pub fn from_name(s: &str) -> Option<Self> {
        [
            Self::ThreeD,
            Self::PlaneStrain,
            Self::PlaneStress,
            Self::Axisymmetric,
        ]
        .into_iter()
        .find(|m| m.name() == s)
    }
}

/// Failure to map a cell: its Jacobian determinant is not positive at a quadrature point.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("cell {cell} is inverted or degenerate (Jacobian determinant {det:e} at quadrature point {point})")]
pub struct InvertedCell {
    pub cell: usize,
    pub point: usize,
    pub det: f64,
}

/// Interpolation space of a field on a cell: the kind whose shape functions it uses.
/// `space_kind(mesh_kind, order)`: order 1 uses the linear kind, order 2 the mesh kind itself.
pub fn space_kind(mesh_kind: CellKind, order: usize) -> Option<CellKind> {
    match order {
        1 => Some(mesh_kind.linear()),
        2 if mesh_kind.order() == 2 => Some(mesh_kind),
        _ => None,
    }
}

/// Physical values of one interpolation space on the current cell.
#[derive(Clone, Debug)]
pub struct SpaceValues {
    pub table: ShapeTable,
    /// Physical gradients, `n_points × n_nodes`, point-major.
    pub grads: Vec<[f64; 3]>,
}

impl SpaceValues {
    /// Shape values at quadrature point `q`.
    #[inline]
    pub fn values(&self, q: usize) -> &[f64] {
        self.table.values_at(q)
    }

    /// Physical shape gradients at quadrature point `q`.
    #[inline]
    pub fn grads(&self, q: usize) -> &[[f64; 3]] {
        let n = self.table.n_nodes;
        &self.grads[q * n..(q + 1) * n]
    }

    #[inline]
    pub fn n_nodes(&self) -> usize {
        self.table.n_nodes
    }
}

/// Per-cell values for one cell kind and one quadrature rule.
#[derive(Clone, Debug)]
pub struct CellValues {
    pub kind: CellKind,
    pub mode: GeometryMode,
    pub rule: QuadratureRule,
    geometry: ShapeTable,
    /// Spaces in the order given at construction.
    pub spaces: Vec<SpaceValues>,
    /// Integration weight per point: quadrature weight × det J (× 2πr in axisymmetry).
    pub jxw: Vec<f64>,
    /// Physical position of each quadrature point.
    pub points: Vec<[f64; 3]>,
    /// Jacobian determinant per point.
    pub det: Vec<f64>,
    inv_jac: Vec<[[f64; 3]; 3]>,
    /// Node coordinates of the last mapped cell relative to its first node, and whether the
    /// Jacobians, determinants and gradients above belong to them (see `reinit`).
    relative: Vec<[f64; 3]>,
    mapped: bool,
}

impl CellValues {
    /// Values for cells of `kind`, with one entry in `spaces` per interpolation space kind
    /// (e.g. `[Tet10, Tet4]`), all evaluated at the points of `rule`.
    pub fn new(
        kind: CellKind,
        mode: GeometryMode,
        rule: QuadratureRule,
        spaces: &[CellKind],
    ) -> Self {
        let geometry = ShapeTable::new(kind, &rule.points);
        let nq = rule.points.len();
        let spaces = spaces
            .iter()
            .map(|&sk| {
                assert_eq!(sk.shape(), kind.shape(), "space {sk} on a {kind} cell");
                let table = ShapeTable::new(sk, &rule.points);
                let grads = vec![[0.0; 3]; nq * table.n_nodes];
                SpaceValues { table, grads }
            })
            .collect();
        CellValues {
            kind,
            mode,
            spaces,
            jxw: vec![0.0; nq],
            points: vec![[0.0; 3]; nq],
            det: vec![0.0; nq],
            inv_jac: vec![[[0.0; 3]; 3]; nq],
            relative: vec![[0.0; 3]; geometry.n_nodes],
            mapped: false,
            geometry,
            rule,
        }
    }

    pub fn n_points(&self) -> usize {
        self.rule.points.len()
    }

    /// Map the cell with node coordinates `coords` (geometry nodes, in node order).
    ///
    /// The Jacobian is formed from the coordinates relative to the first node
    /// (`Σ_a (x_a − x_0) ⊗ ∇N_a`, equal to `Σ_a x_a ⊗ ∇N_a` since the shape functions sum to
    /// one), so a cell that is a translate of the last one mapped, to the last bit of those
    /// differences (every cell of a generated uniform grid), has the same Jacobians,
    /// determinants and shape gradients: they are kept, and only the point positions (and
    /// axisymmetric weights) are computed. The result is the same whichever cell came before.
    pub fn reinit(&mut self, cell: usize, coords: &[[f64; 3]]) -> Result<(), InvertedCell> {
        assert_eq!(
            coords.len(),
            self.geometry.n_nodes,
            "coordinates of a {} cell",
            self.kind
        );
        // The reference dimension as a constant, so the small loops below unroll.
        match self.kind.dim() {
            1 => self.reinit_dim::<1>(cell, coords),
            2 => self.reinit_dim::<2>(cell, coords),
            3 => self.reinit_dim::<3>(cell, coords),
            d => panic!("cells of dimension {d} have no isoparametric map"),
        }
    }

    fn reinit_dim<const D: usize>(
        &mut self,
        cell: usize,
        coords: &[[f64; 3]],
    ) -> Result<(), InvertedCell> {
        let n = self.geometry.n_nodes;
        let x0 = coords[0];
        let translate = self.mapped
            && coords
                .iter()
                .zip(&self.relative)
                .all(|(c, r)| (0..3).all(|i| c[i] - x0[i] == r[i]));
        if translate {
            for q in 0..self.n_points() {
                let nv = self.geometry.values_at(q);
                let mut x = [0.0; 3];
                for (xa, na) in coords.iter().zip(nv) {
                    for i in 0..3 {
                        x[i] += na * xa[i];
                    }
                }
                if self.mode == GeometryMode::Axisymmetric {
                    // The same operations as below.
                    let mut w = self.rule.weights[q] * self.det[q];
                    w *= 2.0 * std::f64::consts::PI * x[0];
                    self.jxw[q] = w;
                }
                self.points[q] = x;
            }
            return Ok(());
        }
        self.mapped = false;
        for (r, c) in self.relative.iter_mut().zip(coords) {
            *r = [c[0] - x0[0], c[1] - x0[1], c[2] - x0[2]];
        }
        for q in 0..self.n_points() {
            let nv = self.geometry.values_at(q);
            let dn = self.geometry.grads_at(q);
            let mut x = [0.0; 3];
            let mut jac = [[0.0; 3]; 3]; // jac[i][j] = d x_i / d xi_j
            for a in 0..n {
                let (xa, ra, na, ga) = (&coords[a], &self.relative[a], nv[a], &dn[a]);
                for i in 0..3 {
                    x[i] += na * xa[i];
                }
                for i in 0..D {
                    for j in 0..D {
                        jac[i][j] += ra[i] * ga[j];
                    }
                }
            }
            let (det, inv) = invert(D, &jac);
            if det.is_nan() || det <= 0.0 {
                return Err(InvertedCell {
                    cell,
                    point: q,
                    det,
                });
            }
            let mut w = self.rule.weights[q] * det;
            if self.mode == GeometryMode::Axisymmetric {
                w *= 2.0 * std::f64::consts::PI * x[0];
            }
            self.jxw[q] = w;
            self.points[q] = x;
            self.det[q] = det;
            self.inv_jac[q] = inv;
        }
        for k in 0..self.spaces.len() {
            // A space tabulated like an earlier one (several fields of the same order) has
            // the same physical gradients: copied, not recomputed.
            let kind = self.spaces[k].table.kind;
            if let Some(j) = (0..k).find(|&j| self.spaces[j].table.kind == kind) {
                let (done, rest) = self.spaces.split_at_mut(k);
                rest[0].grads.copy_from_slice(&done[j].grads);
                continue;
            }
            let s = &mut self.spaces[k];
            let ns = s.table.n_nodes;
            for q in 0..self.rule.points.len() {
                let inv = &self.inv_jac[q];
                let dref = s.table.grads_at(q);
                let out = &mut s.grads[q * ns..(q + 1) * ns];
                for (o, d) in out.iter_mut().zip(dref) {
                    let mut g = [0.0; 3];
                    // dN/dx_i = sum_j dN/dxi_j * dxi_j/dx_i
                    for i in 0..D {
                        for j in 0..D {
                            g[i] += d[j] * inv[j][i];
                        }
                    }
                    *o = g;
                }
            }
        }
        self.mapped = true;
        Ok(())
    }
}

/// Determinant and inverse of the leading `dim × dim` block.
fn invert(dim: usize, m: &[[f64; 3]; 3]) -> (f64, [[f64; 3]; 3]) {
    let mut inv = [[0.0; 3]; 3];
    match dim {
        1 => {
            let d = m[0][0];
            inv[0][0] = 1.0 / d;
            (d, inv)
        }
        2 => {
            let d = m[0][0] * m[1][1] - m[0][1] * m[1][0];
            inv[0][0] = m[1][1] / d;
            inv[0][1] = -m[0][1] / d;
            inv[1][0] = -m[1][0] / d;
            inv[1][1] = m[0][0] / d;
            (d, inv)
        }
        3 => {
            let c00 = m[1][1] * m[2][2] - m[1][2] * m[2][1];
            let c01 = m[1][2] * m[2][0] - m[1][0] * m[2][2];
            let c02 = m[1][0] * m[2][1] - m[1][1] * m[2][0];
            let d = m[0][0] * c00 + m[0][1] * c01 + m[0][2] * c02;
            inv[0][0] = c00 / d;
            inv[1][0] = c01 / d;
            inv[2][0] = c02 / d;
            inv[0][1] = (m[0][2] * m[2][1] - m[0][1] * m[2][2]) / d;
            inv[1][1] = (m[0][0] * m[2][2] - m[0][2] * m[2][0]) / d;
            inv[2][1] = (m[0][1] * m[2][0] - m[0][0] * m[2][1]) / d;
            inv[0][2] = (m[0][1] * m[1][2] - m[0][2] * m[1][1]) / d;
            inv[1][2] = (m[0][2] * m[1][0] - m[0][0] * m[1][2]) / d;
            inv[2][2] = (m[0][0] * m[1][1] - m[0][1] * m[1][0]) / d;
            (d, inv)
        }
        _ => panic!("cell dimension {dim} has no Jacobian inverse"),
    }
}

/// Values of a facet (boundary) integration: shape functions of the facet kind, the outward unit
/// normal and the surface weight at each point.
#[derive(Clone, Debug)]
pub struct FacetValues {
    pub kind: CellKind,
    pub mode: GeometryMode,
    pub rule: QuadratureRule,
    /// Shape functions of facet spaces (facet kinds of each field's space), same order as given.
    pub spaces: Vec<ShapeTable>,
    geometry: ShapeTable,
    /// Surface weight: quadrature weight × surface Jacobian (× 2πr in axisymmetry).
    pub jxw: Vec<f64>,
    pub points: Vec<[f64; 3]>,
    /// Outward unit normal per point (given that facet nodes are ordered outward).
    pub normals: Vec<[f64; 3]>,
}

impl FacetValues {
    /// Facet values for facets of `kind` (Point1, Line2/3, Tri3/6, Quad4/8/9).
    pub fn new(
        kind: CellKind,
        mode: GeometryMode,
        rule: QuadratureRule,
        spaces: &[CellKind],
    ) -> Self {
        let nq = rule.points.len();
        let table = |k: CellKind| {
            if k == CellKind::Point1 {
                // A point facet has one shape function equal to one.
                ShapeTable {
                    kind: k,
                    n_nodes: 1,
                    n_points: nq,
                    values: vec![1.0; nq],
                    grads: vec![[0.0; 3]; nq],
                }
            } else {
                ShapeTable::new(k, &rule.points)
            }
        };
        let geometry = table(kind);
        let spaces = spaces.iter().map(|&sk| table(sk)).collect();
        FacetValues {
            kind,
            mode,
            geometry,
            spaces,
            jxw: vec![0.0; nq],
            points: vec![[0.0; 3]; nq],
            normals: vec![[0.0; 3]; nq],
            rule,
        }
    }

    pub fn n_points(&self) -> usize {
        self.rule.points.len()
    }

    /// Map one facet with outward-ordered node coordinates.
    pub fn reinit(&mut self, coords: &[[f64; 3]]) {
        let fdim = self.kind.dim();
        for q in 0..self.n_points() {
            let nv = self.geometry.values_at(q);
            let dn = self.geometry.grads_at(q);
            let mut x = [0.0; 3];
            let mut t = [[0.0; 3]; 2];
            for a in 0..nv.len() {
                for i in 0..3 {
                    x[i] += nv[a] * coords[a][i];
                    for j in 0..fdim {
                        t[j][i] += coords[a][i] * dn[a][j];
                    }
                }
            }
            let (normal, area) = match fdim {
                // End point of a 1D domain: normal along the line direction is not known here;
                // callers of 1D problems treat the weight as 1.
                0 => ([0.0; 3], 1.0),
                1 => {
                    // Edge in 2D walked with the body on the left: outward normal (t_y, -t_x).
                    let n = [t[0][1], -t[0][0], 0.0];
                    let a = (n[0] * n[0] + n[1] * n[1]).sqrt();
                    ([n[0] / a, n[1] / a, 0.0], a)
                }
                _ => {
                    let n = cross(t[0], t[1]);
                    let a = (n[0] * n[0] + n[1] * n[1] + n[2] * n[2]).sqrt();
                    ([n[0] / a, n[1] / a, n[2] / a], a)
                }
            };
            let mut w = self.rule.weights[q] * area;
            if self.mode == GeometryMode::Axisymmetric {
                w *= 2.0 * std::f64::consts::PI * x[0];
            }
            self.jxw[q] = w;
            self.points[q] = x;
            self.normals[q] = normal;
        }
    }
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::quadrature::rule_for;

    /// Every output of `reinit` as bits, for comparisons to the last bit.
    fn snapshot(v: &CellValues) -> Vec<u64> {
        let mut out: Vec<u64> = Vec::new();
        out.extend(v.jxw.iter().map(|x| x.to_bits()));
        out.extend(v.det.iter().map(|x| x.to_bits()));
        out.extend(v.points.iter().flatten().map(|x| x.to_bits()));
        for s in &v.spaces {
            out.extend(s.grads.iter().flatten().map(|x| x.to_bits()));
        }
        out
    }

    /// A cell mapped right after a translate of itself (the reused Jacobians) gives the same
    /// bits as the same cell mapped by fresh values, in every geometry mode; a cell that is
    /// not a translate is mapped anew.
    #[test]
    fn a_translated_cell_reuses_its_jacobians_to_the_same_bits() {
        // Dyadic coordinates, so that shifts by 0.25 and 0.5 keep every difference exact.
        let base = [
            [1.0, 0.5, 0.0],
            [1.25, 0.5, 0.0],
            [1.375, 0.875, 0.0],
            [0.9375, 0.8125, 0.0],
        ];
        let shift = |c: &[[f64; 3]; 4], dx: f64, dy: f64| c.map(|p| [p[0] + dx, p[1] + dy, 0.0]);
        // A shift by (0.7, 0.3) does not keep them all exact: that cell is a translate only to rounding
        // and is mapped anew.
        let cells = [
            base,
            shift(&base, 0.25, 0.0),
            shift(&base, 0.25, 0.5),
            shift(&base, 0.7, 0.3),
            base.map(|p| [p[0] * 1.5, p[1], 0.0]),
            base,
        ];
        for mode in [GeometryMode::PlaneStrain, GeometryMode::Axisymmetric] {
            let make = || {
                CellValues::new(
                    CellKind::Quad4,
                    mode,
                    rule_for(CellKind::Quad4.shape(), 2),
                    &[CellKind::Quad4, CellKind::Quad4],
                )
            };
            let mut running = make();
            for (k, c) in cells.iter().enumerate() {
                running.reinit(k, c).unwrap();
                let mut fresh = make();
                fresh.reinit(k, c).unwrap();
                assert_eq!(snapshot(&running), snapshot(&fresh), "{mode:?}, cell {k}");
                assert!(running.mapped);
                // Cells 1 and 2 take the reuse path: exact translates of their predecessor.
                let translate = k > 0
                    && c.iter()
                        .zip(&cells[k - 1])
                        .all(|(p, q)| (0..3).all(|i| p[i] - c[0][i] == q[i] - cells[k - 1][0][i]));
                assert_eq!(translate, k == 1 || k == 2, "cell {k}");
            }
            // An inverted cell after a valid one is still reported.
            let inverted = [base[1], base[0], base[3], base[2]];
            assert!(running.reinit(9, &inverted).is_err());
            assert!(!running.mapped);
        }
    }
}

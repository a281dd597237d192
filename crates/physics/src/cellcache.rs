//! Per-thread cache of [`CellValues`], one per cell kind met during assembly.

use dilata_fem::quadrature::rule_for;
use dilata_fem::{CellValues, GeometryMode};
use dilata_mesh::CellKind;

/// Chooses the quadrature degree for a cell kind.
pub type DegreeRule = fn(CellKind) -> usize;

/// "Full" integration: degree `2p` for a field of the cell's order `p` (Gauss with `p + 1`
/// points per direction on quadrilaterals and hexahedra). Exact for stiffness terms on affine
/// cells, and the usual choice for curved (isoparametric) cells, sources and the `1/r` terms
/// of axisymmetry (common practice, no source).
pub fn stiffness_degree(kind: CellKind) -> usize {
    2 * kind.order()
}

/// Degree for a pure stiffness term (products of gradients, no source, no `1/r` term): zero on
/// linear simplices, whose gradients are constant (affine cells: one point is exact), else
/// [`stiffness_degree`].
pub fn gradient_product_degree(kind: CellKind) -> usize {
    match kind {
        CellKind::Tri3 | CellKind::Tet4 | CellKind::Line2 => 0,
        _ => stiffness_degree(kind),
    }
}

/// CellValues keyed by cell kind, built lazily.
pub struct CellValuesCache {
    mode: GeometryMode,
    degree: DegreeRule,
    /// Space orders (1 or 2) to tabulate, in field order.
    orders: Vec<usize>,
    entries: Vec<CellValues>,
}

impl CellValuesCache {
    pub fn new(mode: GeometryMode, degree: DegreeRule, orders: Vec<usize>) -> Self {
        CellValuesCache {
            mode,
            degree,
            orders,
            entries: Vec::new(),
        }
    }

    /// Values for cells of `kind` (not yet mapped to a cell: call `reinit`).
    pub fn get(&mut self, kind: CellKind) -> &mut CellValues {
        let pos = match self.entries.iter().position(|v| v.kind == kind) {
            Some(p) => p,
            None => {
                let spaces: Vec<CellKind> = self
                    .orders
                    .iter()
                    .map(|&o| {
                        dilata_fem::values::space_kind(kind, o)
                            .expect("field order validated by the DOF map")
                    })
                    .collect();
                self.entries.push(CellValues::new(
                    kind,
                    self.mode,
                    rule_for(kind.shape(), (self.degree)(kind)),
                    &spaces,
                ));
                self.entries.len() - 1
            }
        };
        &mut self.entries[pos]
    }
}

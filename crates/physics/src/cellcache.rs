//! Per-thread cache of [`CellValues`], one per cell kind met during assembly.

use dilata_fem::quadrature::rule_for;
use dilata_fem::{CellValues, GeometryMode};
use dilata_mesh::CellKind;

/// Chooses the quadrature degree for a cell kind.
pub type DegreeRule = fn(CellKind) -> usize;

/// Quadrature degree that integrates a stiffness (products of gradients) of a field of the
/// cell's order exactly on affine cells, plus two for curved (isoparametric) cells and sources.
pub fn stiffness_degree(kind: CellKind) -> usize {
    2 * kind.order() + 2
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

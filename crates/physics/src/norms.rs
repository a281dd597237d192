//! Error norms against a known exact field (verification by manufactured solutions).

use dilata_fem::dofs::DofMap;
use dilata_fem::quadrature::rule_for;
use dilata_fem::values::space_kind;
use dilata_fem::{CellValues, FieldHandle, GeometryMode, InvertedCell};
use dilata_mesh::Mesh;

use crate::cellcache::stiffness_degree;

/// An exact scalar field: value and gradient at a point.
pub trait ExactScalar: Sync {
    fn value(&self, x: [f64; 3]) -> f64;
    fn gradient(&self, x: [f64; 3]) -> [f64; 3];
}

/// L2 norm of the error and H1 semi-norm (gradient) of the error of a scalar field.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ErrorNorms {
    pub l2: f64,
    pub h1_semi: f64,
}

/// Integrate the error of component 0 of `field` against `exact` with a rule of degree
/// `2 p + 4` (high enough that quadrature error does not pollute the observed rates).
pub fn scalar_error_norms(
    mesh: &Mesh,
    dofs: &DofMap,
    field: FieldHandle,
    mode: GeometryMode,
    solution: &[f64],
    exact: &dyn ExactScalar,
) -> Result<ErrorNorms, InvertedCell> {
    let order = dofs.spec(field).order;
    let mut cache: Vec<CellValues> = Vec::new();
    let (mut l2, mut h1) = (0.0, 0.0);
    let mut coords = Vec::new();
    for (id, kind, nodes) in mesh.cells() {
        let pos = match cache.iter().position(|c| c.kind == kind) {
            Some(p) => p,
            None => {
                let sk = space_kind(kind, order).expect("validated by the DOF map");
                cache.push(CellValues::new(
                    kind,
                    mode,
                    rule_for(kind.shape(), 2 * kind.order().max(order) + 4),
                    &[sk],
                ));
                cache.len() - 1
            }
        };
        let cv = &mut cache[pos];
        coords.clear();
        coords.extend(nodes.iter().map(|&n| mesh.points[n]));
        cv.reinit(id, &coords)?;
        let range = dofs.local_range(field, kind);
        let local = &dofs.cell_dofs(id)[range];
        let sv = &cv.spaces[0];
        for q in 0..cv.n_points() {
            let nv = sv.values(q);
            let g = sv.grads(q);
            let mut uh = 0.0;
            let mut gh = [0.0; 3];
            for a in 0..sv.n_nodes() {
                let ua = solution[local[a]];
                uh += nv[a] * ua;
                for d in 0..3 {
                    gh[d] += g[a][d] * ua;
                }
            }
            let x = cv.points[q];
            let e = uh - exact.value(x);
            let ge = exact.gradient(x);
            l2 += e * e * cv.jxw[q];
            let dim = mesh.dim;
            h1 += (0..dim).map(|d| (gh[d] - ge[d]).powi(2)).sum::<f64>() * cv.jxw[q];
        }
    }
    Ok(ErrorNorms {
        l2: l2.sqrt(),
        h1_semi: h1.sqrt(),
    })
}

/// Integral of component 0 of a field over the mesh, `∫ u dV` (with the `2πr` weight in
/// axisymmetry), using the cell quadrature of the kernels ([`stiffness_degree`]) so that a
/// discrete balance assembled by them (e.g. the total amount of species against the integrated
/// inflow) holds to round-off.
pub fn field_integral(
    mesh: &Mesh,
    dofs: &DofMap,
    field: FieldHandle,
    mode: GeometryMode,
    solution: &[f64],
) -> Result<f64, InvertedCell> {
    let order = dofs.spec(field).order;
    let mut cache: Vec<CellValues> = Vec::new();
    let mut coords = Vec::new();
    let mut total = 0.0;
    for (id, kind, nodes) in mesh.cells() {
        let pos = match cache.iter().position(|c| c.kind == kind) {
            Some(p) => p,
            None => {
                let sk = space_kind(kind, order).expect("validated by the DOF map");
                cache.push(CellValues::new(
                    kind,
                    mode,
                    rule_for(kind.shape(), stiffness_degree(kind)),
                    &[sk],
                ));
                cache.len() - 1
            }
        };
        let cv = &mut cache[pos];
        coords.clear();
        coords.extend(nodes.iter().map(|&n| mesh.points[n]));
        cv.reinit(id, &coords)?;
        let local = &dofs.cell_dofs(id)[dofs.local_range(field, kind)];
        let ncomp = dofs.spec(field).n_components;
        for q in 0..cv.n_points() {
            let v = cv.spaces[0].values(q);
            let value: f64 = (0..v.len())
                .map(|a| v[a] * solution[local[a * ncomp]])
                .sum();
            total += value * cv.jxw[q];
        }
    }
    Ok(total)
}

//! Nodal values of derived quantities.
//!
//! Projection used throughout Dilata (documented in docs/theory.md): each cell evaluates the
//! quantity at its own nodes from its shape-function gradients; a node's value is the unweighted
//! mean over the cells that share it. Exact for fields the element reproduces (e.g. constant
//! stress of a patch test); smooths jumps between cells otherwise.

use dilata_fem::dofs::DofMap;
use dilata_fem::quadrature::QuadratureRule;
use dilata_fem::values::SpaceValues;
use dilata_fem::{CellValues, FieldHandle, GeometryMode, InvertedCell};
use dilata_material::elastic::{Stiffness, Voigt};
use dilata_mesh::{CellKind, Mesh};

use crate::elasticity::strain_at;

/// What to recover.
#[derive(Clone, Copy, Debug)]
pub struct StressRecovery<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub stiffness: &'a Stiffness,
    pub solution: &'a [f64],
}

/// Nodal stress (Voigt `[xx, yy, zz, xy, yz, xz]`) at every mesh node.
pub fn recover_nodal_stress(
    mesh: &Mesh,
    r: &StressRecovery<'_>,
) -> Result<Vec<Voigt>, InvertedCell> {
    let mut sum = vec![Voigt::zeros(); mesh.n_points()];
    let mut count = vec![0u32; mesh.n_points()];
    let order = r.dofs.spec(r.field).order;
    let nc = r.dofs.spec(r.field).n_components;
    let mut cache: Vec<CellValues> = Vec::new();
    let mut u = Vec::new();
    for (id, kind, nodes) in mesh.cells() {
        let pos = match cache.iter().position(|c| c.kind == kind) {
            Some(p) => p,
            None => {
                cache.push(nodal_values(kind, r.mode, &[order]));
                cache.len() - 1
            }
        };
        let cv = &mut cache[pos];
        let coords: Vec<[f64; 3]> = nodes.iter().map(|&n| mesh.points[n]).collect();
        cv.reinit(id, &coords)?;
        let range = r.dofs.local_range(r.field, kind);
        u.clear();
        u.extend(r.dofs.cell_dofs(id)[range].iter().map(|&d| r.solution[d]));
        let sv = &cv.spaces[0];
        let size = cell_size(&coords);
        for (q, &node) in nodes.iter().enumerate() {
            let eps = nodal_strain(r.mode, sv, q, cv.points[q][0], size, &u, nc);
            sum[node] += r.stiffness * eps;
            count[node] += 1;
        }
    }
    for (s, &c) in sum.iter_mut().zip(&count) {
        if c > 0 {
            *s /= c as f64;
        }
    }
    Ok(sum)
}

/// Strain at node `q` of a cell whose values were tabulated at its own nodes
/// ([`nodal_values`]). In axisymmetry a node on the axis (`|r| < 1e-12 · size`) takes the limit
/// of the hoop strain: `u_r / r → ∂u_r/∂r` (L'Hôpital, `u_r = 0` on the axis).
pub(crate) fn nodal_strain(
    mode: GeometryMode,
    sv: &SpaceValues,
    q: usize,
    radius: f64,
    size: f64,
    u: &[f64],
    nc: usize,
) -> Voigt {
    if mode == GeometryMode::Axisymmetric && radius.abs() < 1e-12 * size {
        // Use the radial strain for the hoop.
        let mut e = strain_at(
            GeometryMode::PlaneStrain,
            sv.grads(q),
            sv.values(q),
            1.0,
            u,
            nc,
        );
        e[2] = e[0];
        e
    } else {
        strain_at(mode, sv.grads(q), sv.values(q), radius, u, nc)
    }
}

/// Largest taxicab distance between two nodes of a cell (its size, for relative tests).
pub(crate) fn cell_size(coords: &[[f64; 3]]) -> f64 {
    let mut m: f64 = 0.0;
    for p in coords {
        for q in coords {
            m = m.max((p[0] - q[0]).abs() + (p[1] - q[1]).abs() + (p[2] - q[2]).abs());
        }
    }
    m
}

/// Cell values whose "quadrature points" are the cell's own reference nodes, with one space per
/// entry of `orders` (field interpolation orders, in the caller's order).
pub(crate) fn nodal_values(kind: CellKind, mode: GeometryMode, orders: &[usize]) -> CellValues {
    let points = kind.reference_nodes();
    let n = points.len();
    let rule = QuadratureRule {
        points,
        weights: vec![1.0; n],
        degree: 0,
        source: "cell nodes (evaluation only)",
    };
    let spaces: Vec<CellKind> = orders
        .iter()
        .map(|&o| dilata_fem::values::space_kind(kind, o).expect("validated by the DOF map"))
        .collect();
    CellValues::new(kind, mode, rule, &spaces)
}

//! Stress of a coupled solution at chosen points of every cell, evaluated in the test itself
//! (strain from the displacement field, concentration interpolated, the point law evaluated
//! there), and the rotation of a stress into the spherical frame of a point.

use dilata_fem::dofs::DofMap;
use dilata_fem::quadrature::{rule_for, QuadratureRule};
use dilata_fem::values::space_kind;
use dilata_fem::{CellValues, GeometryMode};
use dilata_material::coupled::{CoupledPointLaw, PointInput};
use dilata_material::elastic::{voigt_to_tensor, Voigt};
use dilata_mesh::Mesh;
use dilata_physics::coupled::CoupledFields;
use dilata_physics::elasticity::strain_at;

/// Where in each cell the stress is evaluated.
#[derive(Clone, Copy, Debug)]
pub enum Sampling {
    /// The points of the cell rule of the given polynomial degree.
    Quadrature { degree: usize },
    /// The cell's own geometry nodes (stress of that cell there, not averaged over cells).
    Nodes,
}

/// Stress and concentration at one point of one cell.
#[derive(Clone, Copy, Debug)]
pub struct PointStress {
    pub cell: usize,
    /// Index of the point within the cell (node index for `Sampling::Nodes`).
    pub local: usize,
    pub position: [f64; 3],
    pub c: f64,
    pub stress: Voigt,
}

/// The sample points of a cell kind's reference cell.
fn sample_rule(kind: dilata_mesh::CellKind, sampling: Sampling) -> QuadratureRule {
    match sampling {
        Sampling::Quadrature { degree } => rule_for(kind.shape(), degree),
        Sampling::Nodes => {
            let points = kind.reference_nodes();
            QuadratureRule {
                weights: vec![0.0; points.len()],
                points,
                degree: 0,
                source: "cell nodes (sample points only, not a quadrature rule)",
            }
        }
    }
}

/// Stress of `law` at the sample points of every cell for the solution `x`.
///
/// In axisymmetry (x the radius) a point on the axis has the hoop strain `u_r / r` of the form
/// 0/0; there it is replaced by its limit `∂u_r/∂r` (L'Hôpital, with `u_r = 0` on the axis).
pub fn coupled_stresses(
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    mode: GeometryMode,
    law: &CoupledPointLaw,
    x: &[f64],
    sampling: Sampling,
) -> Vec<PointStress> {
    let u_order = dofs.spec(fields.u).order;
    let c_order = dofs.spec(fields.c).order;
    let ncomp = dofs.spec(fields.u).n_components;
    // Length below which a point counts as lying on the axis.
    let size = mesh
        .points
        .iter()
        .map(|p| p[0].abs().max(p[1].abs()).max(p[2].abs()))
        .fold(0.0, f64::max);
    let mut out = Vec::new();
    for cell in 0..mesh.n_cells() {
        let (kind, nodes) = mesh.cell(cell);
        let coords: Vec<[f64; 3]> = nodes.iter().map(|&i| mesh.points[i]).collect();
        let mut cv = CellValues::new(
            kind,
            mode,
            sample_rule(kind, sampling),
            &[
                space_kind(kind, u_order).unwrap(),
                space_kind(kind, c_order).unwrap(),
            ],
        );
        cv.reinit(cell, &coords).unwrap();
        let cd = dofs.cell_dofs(cell);
        let u: Vec<f64> = cd[dofs.local_range(fields.u, kind)]
            .iter()
            .map(|&d| x[d])
            .collect();
        let c: Vec<f64> = cd[dofs.local_range(fields.c, kind)]
            .iter()
            .map(|&d| x[d])
            .collect();
        for q in 0..cv.n_points() {
            let (su, sc) = (&cv.spaces[0], &cv.spaces[1]);
            let r = cv.points[q][0];
            let on_axis = mode == GeometryMode::Axisymmetric && r.abs() <= 1e-12 * size;
            let mut strain = strain_at(
                mode,
                su.grads(q),
                su.values(q),
                if on_axis { 1.0 } else { r },
                &u,
                ncomp,
            );
            if on_axis {
                strain[2] = strain[0];
            }
            let cq: f64 = sc.values(q).iter().zip(&c).map(|(v, c)| v * c).sum();
            let p = law
                .evaluate(&PointInput {
                    strain,
                    c: cq,
                    grad_mu: Default::default(),
                    grad_c: Default::default(),
                })
                .unwrap();
            out.push(PointStress {
                cell,
                local: q,
                position: cv.points[q],
                c: cq,
                stress: p.stress,
            });
        }
    }
    out
}

/// Components of a stress in the spherical frame of a point at `position` (centre at the
/// origin): the radial normal stress, the two hoop normal stresses and the largest shear
/// magnitude among the three frame directions.
#[derive(Clone, Copy, Debug)]
pub struct SphericalStress {
    pub radial: f64,
    pub hoop: [f64; 2],
    /// Largest |t_a · σ · t_b| for distinct frame directions a, b.
    pub shear: f64,
}

/// Rotate `stress` into the spherical frame at `position`. In 3D the frame is n = p/|p| and
/// two unit vectors orthogonal to it; in axisymmetry (tensor index 0 = r, 1 = z, 2 = θ) it is
/// n = (r, z)/ρ, the meridional direction (−z, r)/ρ and the azimuth θ. `position` must not be
/// the centre.
pub fn spherical(stress: &Voigt, position: [f64; 3], mode: GeometryMode) -> SphericalStress {
    let s = voigt_to_tensor(stress);
    let norm = |v: [f64; 3]| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    let scale = |v: [f64; 3], f: f64| [v[0] * f, v[1] * f, v[2] * f];
    let cross = |a: [f64; 3], b: [f64; 3]| {
        [
            a[1] * b[2] - a[2] * b[1],
            a[2] * b[0] - a[0] * b[2],
            a[0] * b[1] - a[1] * b[0],
        ]
    };
    let (n, t1, t2) = match mode {
        GeometryMode::Axisymmetric => {
            let rho = position[0].hypot(position[1]);
            assert!(rho > 0.0, "spherical frame at the centre");
            (
                [position[0] / rho, position[1] / rho, 0.0],
                [-position[1] / rho, position[0] / rho, 0.0],
                [0.0, 0.0, 1.0],
            )
        }
        GeometryMode::ThreeD => {
            let rho = norm(position);
            assert!(rho > 0.0, "spherical frame at the centre");
            let n = scale(position, 1.0 / rho);
            // Any axis not parallel to n gives the first tangent.
            let axis = if n[2].abs() < 0.9 {
                [0.0, 0.0, 1.0]
            } else {
                [1.0, 0.0, 0.0]
            };
            let t1 = cross(axis, n);
            let t1 = scale(t1, 1.0 / norm(t1));
            let t2 = cross(n, t1);
            (n, t1, t2)
        }
        _ => panic!("the spherical frame needs a 3D or axisymmetric model"),
    };
    let f = |a: [f64; 3], b: [f64; 3]| {
        let mut v = 0.0;
        for i in 0..3 {
            for j in 0..3 {
                v += a[i] * s[(i, j)] * b[j];
            }
        }
        v
    };
    SphericalStress {
        radial: f(n, n),
        hoop: [f(t1, t1), f(t2, t2)],
        shear: f(n, t1).abs().max(f(n, t2).abs()).max(f(t1, t2).abs()),
    }
}

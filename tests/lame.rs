//! Thick-walled cylinder under internal pressure (Lamé problem), quadratic elements.
//! Exact solution (Timoshenko & Goodier, Theory of Elasticity, 3rd ed., thick-walled cylinder;
//! section number from memory): with bore radius a, outer radius b and internal pressure p,
//!   σ_r(r) = p a²/(b² − a²) (1 − b²/r²),   σ_θ(r) = p a²/(b² − a²) (1 + b²/r²),
//! so σ_θ(a) = p (a² + b²)/(b² − a²). In plane strain (and in an axisymmetric model with the
//! axial displacement held at zero) σ_z = ν (σ_r + σ_θ). Acceptance: bore hoop stress within 0.1 %.

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, FieldSpec, GeometryMode};
use dilata_linalg::Parallelism;
use dilata_material::elastic::{Isotropic, Voigt};
use dilata_mesh::generate::{annulus_sector, rectangle, AnnulusParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::elasticity::mode_stiffness;
use dilata_physics::recovery::{recover_nodal_stress, StressRecovery};
use dilata_solve::{BoundaryLoad, BulkLaw, FieldProblem};

const A: f64 = 0.1;
const B: f64 = 0.2;
const P: f64 = 30e6;

fn lame_hoop(r: f64) -> f64 {
    P * A * A / (B * B - A * A) * (1.0 + B * B / (r * r))
}

/// Solve and return the nodal stresses.
fn solve(
    mesh: &Mesh,
    mode: GeometryMode,
    fixes: &[(&str, usize)],
    pressure_on: &str,
) -> Vec<Voigt> {
    let kind = mesh.blocks[0].kind;
    let dofs = DofMap::build(mesh, &[FieldSpec::vector("u", 2, kind.order())]).unwrap();
    let u = dofs.field("u").unwrap();
    let stiffness = mode_stiffness(&Isotropic::new(200e9, 0.3).unwrap().stiffness(), mode);
    let mut problem = FieldProblem::new(
        mesh,
        dofs,
        u,
        mode,
        BulkLaw::Elasticity {
            stiffness: Box::new(stiffness),
            body_force: None,
        },
        Parallelism::Sequential,
    );
    for &(b, c) in fixes {
        problem
            .constraints
            .add_boundary(
                mesh,
                &problem.dofs,
                BoundaryTarget {
                    boundary: b,
                    field: u,
                    component: c,
                },
                0.0,
            )
            .unwrap();
    }
    problem.loads.push((
        mesh.boundary(pressure_on).unwrap().to_vec(),
        BoundaryLoad::Pressure(P),
    ));
    let x = common::solve(&mut problem);
    recover_nodal_stress(
        mesh,
        &StressRecovery {
            dofs: &problem.dofs,
            field: u,
            mode,
            stiffness: &stiffness,
            solution: &x,
        },
    )
    .unwrap()
}

#[test]
fn plane_strain_quarter_annulus_bore_hoop_stress() {
    for kind in [CellKind::Quad8, CellKind::Quad9] {
        let mesh = annulus_sector(&AnnulusParams {
            inner_radius: A,
            outer_radius: B,
            angle: std::f64::consts::FRAC_PI_2,
            n_radial: 24,
            n_angular: 48,
            kind,
        })
        .unwrap();
        let stress = solve(
            &mesh,
            GeometryMode::PlaneStrain,
            &[("start", 1), ("end", 0)],
            "inner",
        );
        let exact = lame_hoop(A);
        let mut worst: f64 = 0.0;
        for n in mesh.boundary_nodes("inner").unwrap() {
            let [x, y, _] = mesh.points[n];
            let (s, c) = y.atan2(x).sin_cos();
            let st = stress[n];
            let hoop = st[0] * s * s + st[1] * c * c - 2.0 * st[3] * s * c;
            worst = worst.max((hoop - exact).abs() / exact);
        }
        eprintln!("{kind} plane strain: worst bore hoop error {worst:.3e}");
        assert!(worst < 1e-3, "{kind}: bore hoop stress off by {worst:.3e}");
    }
}

#[test]
fn axisymmetric_tube_bore_hoop_stress() {
    for kind in [CellKind::Quad8, CellKind::Quad9] {
        // r–z section: r from a to b, height 0.05; axial displacement held on both ends.
        let mesh = rectangle(&RectangleParams {
            origin: [A, 0.0],
            lengths: [B - A, 0.05],
            n_cells: [32, 4],
            kind,
        })
        .unwrap();
        let stress = solve(
            &mesh,
            GeometryMode::Axisymmetric,
            &[("bottom", 1), ("top", 1)],
            "left",
        );
        let exact = lame_hoop(A);
        let mut worst: f64 = 0.0;
        for n in mesh.boundary_nodes("left").unwrap() {
            worst = worst.max((stress[n][2] - exact).abs() / exact);
        }
        eprintln!("{kind} axisymmetric: worst bore hoop error {worst:.3e}");
        assert!(worst < 1e-3, "{kind}: bore hoop stress off by {worst:.3e}");
    }
}

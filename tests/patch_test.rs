//! Linear-elasticity patch test on distorted meshes of every element kind and every geometry
//! mode: a displacement field the elements can represent exactly (linear, with constant strain)
//! is prescribed on the boundary; the interior must reproduce it and the stress must be constant.
//! Source: the patch test of Irons, as set out in Zienkiewicz & Taylor, The Finite Element
//! Method, vol. 1, ch. "the patch test" (chapter number from memory).

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::quality::check_cells;
use dilata_fem::{FieldSpec, GeometryMode};
use dilata_linalg::Parallelism;
use dilata_material::elastic::{Isotropic, Voigt};
use dilata_mesh::generate::{cuboid, rectangle, BoxParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::elasticity::mode_stiffness;
use dilata_physics::recovery::{recover_nodal_stress, StressRecovery};
use dilata_solve::{BulkLaw, FieldProblem};

/// Exact displacement of the patch, per mode.
fn exact(mode: GeometryMode, x: [f64; 3]) -> [f64; 3] {
    let [x, y, z] = x;
    match mode {
        GeometryMode::ThreeD => [
            1e-3 * x + 2e-4 * y - 3e-4 * z + 1e-5,
            -5e-4 * x + 7e-4 * y + 1e-4 * z - 2e-5,
            3e-4 * x - 2e-4 * y + 4e-4 * z + 3e-5,
        ],
        GeometryMode::PlaneStrain | GeometryMode::PlaneStress => {
            [1e-3 * x + 2e-4 * y + 1e-5, -5e-4 * x + 7e-4 * y - 2e-5, 0.0]
        }
        // u_r = a r and u_z = b z + d: constant strain with σ_rr = σ_θθ and no shear, the linear
        // field that satisfies the axisymmetric equilibrium equations
        //   ∂σ_rr/∂r + ∂σ_rz/∂z + (σ_rr − σ_θθ)/r = 0,  ∂σ_rz/∂r + ∂σ_zz/∂z + σ_rz/r = 0
        // without body force (Timoshenko & Goodier, Theory of Elasticity, equilibrium in
        // cylindrical coordinates; from memory). A shear term c·r would leave σ_rz/r unbalanced.
        GeometryMode::Axisymmetric => [8e-4 * x, 6e-4 * y + 1e-5, 0.0],
    }
}

/// Constant strain of the exact field (Voigt, engineering shears).
fn exact_strain(mode: GeometryMode) -> Voigt {
    let v = match mode {
        GeometryMode::ThreeD => [1e-3, 7e-4, 4e-4, 2e-4 - 5e-4, 1e-4 - 2e-4, -3e-4 + 3e-4],
        GeometryMode::PlaneStrain => [1e-3, 7e-4, 0.0, 2e-4 - 5e-4, 0.0, 0.0],
        // In plane stress ε_zz follows from σ_zz = 0; the condensed stiffness ignores it.
        GeometryMode::PlaneStress => [1e-3, 7e-4, 0.0, 2e-4 - 5e-4, 0.0, 0.0],
        GeometryMode::Axisymmetric => [8e-4, 6e-4, 8e-4, 0.0, 0.0, 0.0],
    };
    Voigt::from_column_slice(&v)
}

fn run_patch(mut mesh: Mesh, mode: GeometryMode) {
    let kind = mesh.blocks[0].kind;
    common::distort(&mut mesh, 0.25, 0.2);
    check_cells(&mesh).expect("distorted mesh stays valid");
    let dim = mesh.dim;
    let order = kind.order();
    let dofs = DofMap::build(&mesh, &[FieldSpec::vector("u", dim, order)]).unwrap();
    let u = dofs.field("u").unwrap();
    let law = Isotropic::new(70e9, 0.3).unwrap();
    let stiffness = mode_stiffness(&law.stiffness(), mode);
    let mut problem = FieldProblem::new(
        &mesh,
        dofs,
        u,
        mode,
        BulkLaw::Elasticity {
            stiffness: Box::new(stiffness),
            body_force: None,
        },
        Parallelism::Sequential,
    );
    for n in common::all_boundary_nodes(&mesh) {
        let val = exact(mode, mesh.points[n]);
        for c in 0..dim {
            let d = problem.dofs.node_dof(u, n, c).unwrap();
            problem.constraints.add_group("patch", &[d], val[c]);
        }
    }
    let x = common::solve(&mut problem);
    let mut max_err: f64 = 0.0;
    let mut max_u: f64 = 0.0;
    for n in 0..mesh.n_points() {
        let val = exact(mode, mesh.points[n]);
        for c in 0..dim {
            let d = problem.dofs.node_dof(u, n, c).unwrap();
            max_err = max_err.max((x[d] - val[c]).abs());
            max_u = max_u.max(val[c].abs());
        }
    }
    assert!(
        max_err <= 1e-10 * max_u,
        "{kind} {mode:?}: displacement error {max_err:e} (scale {max_u:e})"
    );
    let sigma_exact = stiffness * exact_strain(mode);
    let scale = sigma_exact.amax();
    let stress = recover_nodal_stress(
        &mesh,
        &StressRecovery {
            dofs: &problem.dofs,
            field: u,
            mode,
            stiffness: &stiffness,
            solution: &x,
        },
    )
    .unwrap();
    let worst = stress
        .iter()
        .map(|s| (s - sigma_exact).amax())
        .fold(0.0, f64::max);
    assert!(
        worst <= 1e-10 * scale,
        "{kind} {mode:?}: stress error {worst:e} relative to {scale:e}"
    );
}

#[test]
fn patch_test_2d_every_kind_every_mode() {
    for kind in [
        CellKind::Tri3,
        CellKind::Tri6,
        CellKind::Quad4,
        CellKind::Quad8,
        CellKind::Quad9,
    ] {
        for mode in [
            GeometryMode::PlaneStrain,
            GeometryMode::PlaneStress,
            GeometryMode::Axisymmetric,
        ] {
            // Away from the axis for the axisymmetric mode (r from 0.5 to 1.5).
            let mesh = rectangle(&RectangleParams {
                origin: [0.5, 0.0],
                lengths: [1.0, 1.0],
                n_cells: [4, 4],
                kind,
            })
            .unwrap();
            run_patch(mesh, mode);
        }
    }
}

#[test]
fn patch_test_3d_every_kind() {
    for kind in [
        CellKind::Tet4,
        CellKind::Tet10,
        CellKind::Hex8,
        CellKind::Hex20,
        CellKind::Hex27,
    ] {
        let mesh = cuboid(&BoxParams {
            origin: [0.0; 3],
            lengths: [1.0; 3],
            n_cells: [4, 4, 4],
            kind,
        })
        .unwrap();
        run_patch(mesh, GeometryMode::ThreeD);
    }
}

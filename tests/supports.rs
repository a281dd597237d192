//! Rigid-body modes left free by the constraints (`dilata_solve::supports`) and the point
//! supports that pin them: a free body swelling under a linear concentration field, pinned, has
//! the stress of the unconstrained body and no reactions.

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, Constraints, FieldHandle, GeometryMode};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::coupled::CoupledPointLaw;
use dilata_mesh::generate::{
    cuboid, quarter_disc, rectangle, BoxParams, DiscParams, RectangleParams,
};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::LawMap;
use dilata_physics::coupled_post::{recover_coupled_nodal, CoupledPost};
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::supports::{pin_rigid_modes, rigid_modes_left, RigidBody, RigidMode};
use dilata_solve::{newton, DiscreteSystem, NewtonParams, TransientSystem};

const E: f64 = 10e9;
const NU: f64 = 0.3;
const OMEGA: f64 = 3.5e-6;
const C0: f64 = 1000.0;
const DC: f64 = 500.0;

fn law(mode: GeometryMode) -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&common::DiluteHost {
        young: E,
        poisson: NU,
        omega: OMEGA,
        diffusivity: 7e-15,
        temperature: 298.15,
        c_ref: C0,
    });
    if mode == GeometryMode::PlaneStress {
        parts.stiffness = parts.stiffness.plane_stress();
    }
    CoupledPointLaw::new(parts).unwrap()
}

fn block(kind: CellKind) -> Mesh {
    if kind.dim() == 2 {
        rectangle(&RectangleParams {
            origin: [0.0, 0.0],
            lengths: [2e-6, 1e-6],
            n_cells: [4, 2],
            kind,
        })
        .unwrap()
    } else {
        cuboid(&BoxParams {
            origin: [0.0; 3],
            lengths: [2e-6, 1e-6, 1e-6],
            n_cells: [2, 2, 2],
            kind,
        })
        .unwrap()
    }
}

fn constrain(
    mesh: &Mesh,
    dofs: &DofMap,
    u: FieldHandle,
    constraints: &mut Constraints,
    list: &[(&str, usize)],
) {
    for &(boundary, component) in list {
        constraints
            .add_boundary(
                mesh,
                dofs,
                BoundaryTarget {
                    boundary,
                    field: u,
                    component,
                },
                0.0,
            )
            .unwrap();
    }
}

/// Which modes the constraints leave free: none given (all modes of the geometry mode), a fully
/// clamped face (none), symmetry planes (the modes parallel to them that no plane stops), one
/// pinned node in 2D (the rotation about it), and the axisymmetric axis (only the axial
/// translation exists; u_r = 0 on the axis does not stop it). Expected sets from rigid-body
/// kinematics (common practice, no source).
#[test]
fn free_modes_of_typical_supports() {
    use RigidMode::{AxialTranslation, Rotation, Translation};
    let box_mesh = block(CellKind::Hex8);
    let disc = quarter_disc(&DiscParams {
        radius: 1e-6,
        n_cells: 2,
        kind: CellKind::Quad8,
    })
    .unwrap();
    type Case<'a> = (
        &'a str,
        &'a Mesh,
        GeometryMode,
        Vec<(&'a str, usize)>,
        Vec<RigidMode>,
    );
    let all_3d = vec![
        Translation(0),
        Translation(1),
        Translation(2),
        Rotation(0),
        Rotation(1),
        Rotation(2),
    ];
    let cases: Vec<Case<'_>> = vec![
        (
            "3D, no supports",
            &box_mesh,
            GeometryMode::ThreeD,
            vec![],
            all_3d,
        ),
        (
            "3D, clamped face",
            &box_mesh,
            GeometryMode::ThreeD,
            vec![("left", 0), ("left", 1), ("left", 2)],
            vec![],
        ),
        (
            "3D, symmetry planes x = 0 and y = 0",
            &box_mesh,
            GeometryMode::ThreeD,
            vec![("left", 0), ("bottom", 1)],
            vec![Translation(2)],
        ),
        (
            "3D, symmetry plane z = 0",
            &box_mesh,
            GeometryMode::ThreeD,
            vec![("back", 2)],
            vec![Translation(0), Translation(1), Rotation(2)],
        ),
        (
            "3D, three symmetry planes",
            &box_mesh,
            GeometryMode::ThreeD,
            vec![("left", 0), ("bottom", 1), ("back", 2)],
            vec![],
        ),
        (
            "plane strain, no supports",
            &disc,
            GeometryMode::PlaneStrain,
            vec![],
            vec![Translation(0), Translation(1), Rotation(2)],
        ),
        (
            "plane stress, symmetry y = 0",
            &disc,
            GeometryMode::PlaneStress,
            vec![("symmetry_y", 1)],
            vec![Translation(0)],
        ),
        (
            "plane strain, both symmetry edges",
            &disc,
            GeometryMode::PlaneStrain,
            vec![("symmetry_x", 0), ("symmetry_y", 1)],
            vec![],
        ),
        (
            "axisymmetric, nothing on z",
            &disc,
            GeometryMode::Axisymmetric,
            vec![("axis", 0)],
            vec![AxialTranslation],
        ),
        (
            "axisymmetric, z on the base",
            &disc,
            GeometryMode::Axisymmetric,
            vec![("axis", 0), ("symmetry_y", 1)],
            vec![],
        ),
    ];
    for (name, mesh, mode, list, expect) in cases {
        let (dofs, fields) = common::coupled_dofs(mesh, mesh.blocks[0].kind.order());
        let mut constraints = Constraints::new(dofs.n_dofs());
        constrain(mesh, &dofs, fields.u, &mut constraints, &list);
        let body = RigidBody {
            mesh,
            dofs: &dofs,
            u_field: fields.u,
            mode,
        };
        assert_eq!(rigid_modes_left(&body, &constraints), expect, "{name}");
    }
    // One node fixed in both components (a corner of the quarter disc away from the centroid):
    // the body can still turn about it.
    let (dofs, fields) = common::coupled_dofs(&disc, 2);
    let mut constraints = Constraints::new(dofs.n_dofs());
    let node = disc
        .points
        .iter()
        .position(|p| (p[0] - 1e-6).abs() < 1e-15 && p[1].abs() < 1e-15)
        .unwrap();
    let pinned: Vec<usize> = (0..2)
        .map(|k| dofs.node_dof(fields.u, node, k).unwrap())
        .collect();
    constraints.add_group("pin", &pinned, 0.0);
    let body = RigidBody {
        mesh: &disc,
        dofs: &dofs,
        u_field: fields.u,
        mode: GeometryMode::PlaneStrain,
    };
    assert_eq!(rigid_modes_left(&body, &constraints), vec![Rotation(2)]);
}

/// Linear concentration `c = C0 + ΔC s(x)` prescribed in a body with no supports other than the
/// point supports of `pin_rigid_modes` (plus u_r = 0 on the axis in axisymmetry). A linear
/// eigenstrain is compatible, so a free body takes it without stress (Timoshenko & Goodier,
/// Theory of Elasticity, thermal stresses: a linear temperature field in an unconstrained body
/// produces no stress; from memory); in plane strain `ε_zz = 0` leaves the out-of-plane stress
/// `σ_zz = −E Ω (c − c_ref)/3` and no in-plane stress (same source, plane strain thermal
/// stresses). The displacement is quadratic, which Quad8, Hex20 and Tet10 on straight-sided,
/// affine cells reproduce, so the discrete stress is exact: checked at every node to 1e-9 of
/// the clamped stress scale `E Ω ΔC/(3(1 − 2ν))`. The internal force on every displacement DOF
/// (the reactions of the point supports included) vanishes to 1e-9 of a typical nodal force of
/// the clamped state: the supports carry nothing. As a control, the same field with the body
/// clamped (u = 0) gives nodal stress of the full scale.
#[test]
fn pinned_free_body_under_linear_swelling_is_stress_free() {
    let cases = [
        (CellKind::Hex20, GeometryMode::ThreeD, 6),
        (CellKind::Tet10, GeometryMode::ThreeD, 6),
        (CellKind::Quad8, GeometryMode::PlaneStrain, 3),
        (CellKind::Quad8, GeometryMode::PlaneStress, 3),
        (CellKind::Quad8, GeometryMode::Axisymmetric, 1),
    ];
    let scale = E * OMEGA * DC / (3.0 * (1.0 - 2.0 * NU));
    for (kind, mode, n_pins) in cases {
        let mesh = block(kind);
        let (dofs, fields) = common::coupled_dofs(&mesh, 2);
        // Axially linear in axisymmetry (a field linear in r is not linear in 3D).
        let shape = move |p: [f64; 3]| match mode {
            GeometryMode::Axisymmetric => p[1] / 1e-6,
            _ => (p[0] + 0.6 * p[1] - 0.4 * p[2]) / 2e-6,
        };
        let conc = move |p: [f64; 3]| C0 + DC * shape(p);
        let laws = LawMap::uniform(law(mode), mesh.n_cells());
        let mut problem = CoupledProblem::new(
            &mesh,
            dofs.clone(),
            fields,
            mode,
            laws.clone(),
            Parallelism::Sequential,
        );
        // Prescribe c everywhere.
        let c_dofs: Vec<usize> = dofs
            .field_nodes(fields.c)
            .iter()
            .map(|&n| dofs.node_dof(fields.c, n, 0).unwrap())
            .collect();
        let mut c_value = vec![0.0; dofs.n_dofs()];
        for &n in &dofs.field_nodes(fields.c) {
            c_value[dofs.node_dof(fields.c, n, 0).unwrap()] = conc(mesh.points[n]);
        }
        let group = problem.constraints.add_group("c", &c_dofs, 0.0);
        problem
            .constraints
            .set_group_values_with(group, |d| c_value[d]);
        let only_c = problem.constraints.clone();
        if mode == GeometryMode::Axisymmetric {
            constrain(
                &mesh,
                &dofs,
                fields.u,
                &mut problem.constraints,
                &[("left", 0)],
            );
        }
        let body = RigidBody {
            mesh: &mesh,
            dofs: &dofs,
            u_field: fields.u,
            mode,
        };
        let pins = pin_rigid_modes(&body, &mut problem.constraints).unwrap();
        assert_eq!(pins.len(), n_pins, "{kind} {mode:?}: pins {pins:?}");
        assert!(rigid_modes_left(&body, &problem.constraints).is_empty());
        // Pinning again adds nothing.
        let mut again = problem.constraints.clone();
        assert!(pin_rigid_modes(&body, &mut again).unwrap().is_empty());

        let x = solve_static(&mut problem);
        let post = CoupledPost {
            dofs: &dofs,
            fields,
            mode,
            laws: &laws,
            solution: &x,
        };
        let nodal = recover_coupled_nodal(&mesh, &post).unwrap();
        let mut worst: f64 = 0.0;
        for (node, s) in nodal.stress.iter().enumerate() {
            let mut expect = [0.0; 6];
            if mode == GeometryMode::PlaneStrain {
                expect[2] = -E * OMEGA * (conc(mesh.points[node]) - C0) / 3.0;
            }
            for k in 0..6 {
                worst = worst.max((s[k] - expect[k]).abs());
            }
        }
        let u_max = dofs
            .field_range(fields.u)
            .map(|d| x[d].abs())
            .fold(0.0, f64::max);
        eprintln!(
            "{kind} {mode:?}: pins {pins:?}, largest |u| {u_max:.3e} m, worst nodal stress error {worst:.3e} Pa (scale {scale:.3e} Pa)"
        );
        assert!(u_max > 1e-3 * OMEGA * DC * 1e-6, "the body did swell");
        assert!(
            worst <= 1e-9 * scale,
            "{kind} {mode:?}: nodal stress off by {worst:e} Pa"
        );

        // Internal forces: zero at the solution, of full size for the clamped body.
        let mut free = CoupledProblem::new(
            &mesh,
            dofs.clone(),
            fields,
            mode,
            laws.clone(),
            Parallelism::Sequential,
        );
        free.constraints = only_c;
        let n = dofs.n_dofs();
        free.begin_step(0.0, 0.0, &vec![0.0; n]);
        let mut r = vec![0.0; n];
        free.residual_into(&x, &mut r).unwrap();
        let force = |r: &[f64]| {
            dofs.field_range(fields.u)
                .map(|d| r[d].abs())
                .fold(0.0, f64::max)
        };
        let reaction = force(&r);
        let mut clamped_x = x.clone();
        dofs.field_range(fields.u).for_each(|d| clamped_x[d] = 0.0);
        free.residual_into(&clamped_x, &mut r).unwrap();
        let typical = force(&r);
        let clamped_post = CoupledPost {
            solution: &clamped_x,
            ..post
        };
        let clamped_stress = recover_coupled_nodal(&mesh, &clamped_post).unwrap();
        let clamped_worst = clamped_stress
            .stress
            .iter()
            .map(|s| s[0].abs())
            .fold(0.0, f64::max);
        eprintln!("  largest internal force {reaction:.3e} N, clamped {typical:.3e} N");
        assert!(
            reaction <= 1e-9 * typical,
            "{kind} {mode:?}: reaction {reaction:e} vs {typical:e}"
        );
        assert!(
            clamped_worst > 0.5 * scale,
            "control: clamped body is stressed"
        );
    }
}

fn solve_static(problem: &mut CoupledProblem<'_>) -> Vec<f64> {
    let n = problem.dofs.n_dofs();
    problem.begin_step(0.0, 0.0, &vec![0.0; n]);
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let mut x = vec![0.0; n];
    let params = NewtonParams {
        abs_tol: 0.0,
        rel_tol: 1e-13,
        step_tol: 1e-13,
        max_iterations: 8,
        max_backtracks: 0,
    };
    newton(problem, &mut solver, &mut x, &params).expect("a linear problem");
    x
}

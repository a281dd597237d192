//! The total-Lagrangian coupled kernel at mesh level: its consistent tangent against central
//! differences of its residual (plain and with swapped rows), finite-strain patch tests on
//! distorted meshes, and frame indifference of a rotated gel (the point laws themselves are
//! checked in crates/material/tests/finite_laws.rs).

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::{CellInput, CellKernel, GeometryMode, LocalOutput};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::chemical::{ChemicalLaw, IdealDiluteParams, LatticeGasParams};
use dilata_material::elastic::Isotropic;
use dilata_material::finite::{
    cauchy_voigt, FiniteInput, FiniteLaw, GelLaw, GelParams, HostLaw, HostParams,
};
use dilata_material::gradient::GradientEnergy;
use dilata_material::mobility::{
    Diffusivity, DiluteMobilityParams, LatticeGasMobilityParams, MobilityLaw,
};
use dilata_mesh::generate::{cuboid, rectangle, BoxParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{
    CoupledFields, CoupledKernel, LawMap, RateTerm, RowSwap, SwappedRows, TangentPart,
};
use dilata_physics::coupled_post::{coupled_integrals, recover_coupled_nodal, CoupledPost};
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::{newton, NewtonParams};
use nalgebra::{Matrix3, Vector3};

/// Body size of every mesh here (m).
const L: f64 = 1e-6;
const T: f64 = 298.15;
/// Gel: network modulus, solvent molar volume (water), reference stretch (invented demo
/// numbers of a hydrogel, orders of magnitude from memory).
const G_GEL: f64 = 4.1e5;
const OMEGA_GEL: f64 = 1.8e-5;
const LAMBDA0: f64 = 2.0;
/// Host: partial molar volume, lattice capacity (invented demo numbers).
const OMEGA_HOST: f64 = 9e-6;
const C_MAX: f64 = 3e5;

fn gel_law() -> GelLaw {
    GelLaw::new(GelParams {
        shear_modulus: G_GEL,
        solvent_molar_volume: OMEGA_GEL,
        chi: 0.3,
        temperature: T,
        diffusivity: 1e-9,
        reference_stretch: LAMBDA0,
    })
    .unwrap()
}

/// Host with a lattice-gas chemical law and mobility, optionally with a gradient energy
/// `κ` (J·m⁵/mol²).
fn lattice_host(kappa: f64) -> FiniteLaw {
    FiniteLaw::Host(
        HostLaw::new(HostParams {
            elastic: Isotropic::new(80e9, 0.22).unwrap(),
            partial_molar_volume: OMEGA_HOST,
            c_ref: 0.0,
            chemical: ChemicalLaw::lattice_gas(LatticeGasParams {
                mu0: 0.0,
                temperature: T,
                c_max: C_MAX,
                interaction: 4000.0,
            })
            .unwrap(),
            mobility: MobilityLaw::lattice_gas(LatticeGasMobilityParams {
                diffusivity: Diffusivity::isotropic(1e-15).unwrap(),
                temperature: T,
                c_max: C_MAX,
            })
            .unwrap(),
            gradient: if kappa > 0.0 {
                GradientEnergy::isotropic(kappa).unwrap()
            } else {
                GradientEnergy::none()
            },
        })
        .unwrap(),
    )
}

/// Host with the ideal dilute chemical law and mobility.
fn dilute_host() -> FiniteLaw {
    FiniteLaw::Host(
        HostLaw::new(HostParams {
            elastic: Isotropic::new(10e9, 0.3).unwrap(),
            partial_molar_volume: OMEGA_HOST,
            c_ref: 1e4,
            chemical: ChemicalLaw::ideal_dilute(IdealDiluteParams {
                mu0: 0.0,
                temperature: T,
                c_ref: 1e4,
            })
            .unwrap(),
            mobility: MobilityLaw::dilute(DiluteMobilityParams {
                diffusivity: Diffusivity::isotropic(1e-14).unwrap(),
                temperature: T,
            })
            .unwrap(),
            gradient: GradientEnergy::none(),
        })
        .unwrap(),
    )
}

fn square(kind: CellKind, origin: [f64; 2], n: usize) -> Mesh {
    rectangle(&RectangleParams {
        origin,
        lengths: [L, L],
        n_cells: [n, n],
        kind,
    })
    .unwrap()
}

fn cube(kind: CellKind, n: usize) -> Mesh {
    cuboid(&BoxParams {
        origin: [0.0; 3],
        lengths: [L; 3],
        n_cells: [n; 3],
        kind,
    })
    .unwrap()
}

/// Scales of the tangent checks' states: displacements of 0.2 × the body size (so `F` has
/// entries up to about 0.6 away from `I`), `c` around `c` of the law, `μ` of 1e3 J/mol.
fn finite_scales(law: &FiniteLaw) -> common::StateScales {
    let c = match law {
        FiniteLaw::Gel(g) => g.reference_concentration(),
        FiniteLaw::Host(_) => 3e4,
    };
    common::StateScales {
        length: L,
        u: 0.2 * L,
        c,
        mu: 1e3,
    }
}

/// Smallest and largest swelling ratio of the state (`det F` for a host, `λ0³ det F` for a
/// gel) over the nodes, from the nodal recovery (which evaluates the law at every node of every
/// cell with the kernel's `F`), to show the state is genuinely finite.
fn swelling_range(
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    mode: GeometryMode,
    laws: &LawMap,
    x: &[f64],
) -> (f64, f64) {
    let nodal = recover_coupled_nodal(
        mesh,
        &CoupledPost {
            dofs,
            fields,
            mode,
            laws,
            solution: x,
        },
    )
    .unwrap();
    let r = &nodal.finite.unwrap().swelling_ratio;
    (
        r.iter().cloned().fold(f64::INFINITY, f64::min),
        r.iter().cloned().fold(0.0, f64::max),
    )
}

/// The coupled kernel at state `xs` with a backward-Euler-like rate term.
fn kernel_at<'a>(
    dofs: &'a DofMap,
    fields: CoupledFields,
    mode: GeometryMode,
    laws: &'a LawMap,
    history: &'a [f64],
    xs: &'a [f64],
) -> CoupledKernel<'a> {
    CoupledKernel {
        dofs,
        fields,
        mode,
        laws,
        rate: RateTerm { a0: 1e2, history },
        source: None,
        body_force: None,
        potential_source: None,
        solution: xs,
        tangent: TangentPart::Whole,
    }
}

/// Every tangent block of the finite-strain cell kernel equals central differences of its
/// residual (the consistent-tangent check of DEVELOPERS.md; common practice, no source), for
/// the gel and the host (lattice-gas and dilute chemistry, one with a gradient energy), in 3D
/// (hex8, tet10), plane strain (quad4; quad9 with u quadratic and c, μ linear) and
/// axisymmetry (quad8 away from the axis), at a finite deformation (displacements of 0.2 × the
/// cell size) with non-uniform c and μ; then the same through `SwappedRows` with the μ rows of
/// two vertices of the cell swapped.
#[test]
fn finite_tangent_matches_finite_differences() {
    let gel = FiniteLaw::Gel(gel_law());
    let cases: Vec<(Mesh, GeometryMode, usize, FiniteLaw)> = vec![
        (cube(CellKind::Hex8, 1), GeometryMode::ThreeD, 1, gel),
        (
            cube(CellKind::Hex8, 1),
            GeometryMode::ThreeD,
            1,
            lattice_host(0.0),
        ),
        (cube(CellKind::Tet10, 1), GeometryMode::ThreeD, 2, gel),
        (
            cube(CellKind::Tet10, 1),
            GeometryMode::ThreeD,
            2,
            lattice_host(0.0),
        ),
        (
            square(CellKind::Quad4, [0.0, 0.0], 1),
            GeometryMode::PlaneStrain,
            1,
            gel,
        ),
        (
            square(CellKind::Quad4, [0.0, 0.0], 1),
            GeometryMode::PlaneStrain,
            1,
            lattice_host(0.0),
        ),
        (
            square(CellKind::Quad9, [0.0, 0.0], 1),
            GeometryMode::PlaneStrain,
            2,
            gel,
        ),
        // With a gradient energy (κ/h² of the order of dμ/dc on this cell).
        (
            square(CellKind::Quad9, [0.0, 0.0], 1),
            GeometryMode::PlaneStrain,
            2,
            lattice_host(5e-14),
        ),
        (
            square(CellKind::Quad8, [0.5 * L, 0.0], 1),
            GeometryMode::Axisymmetric,
            2,
            gel,
        ),
        (
            square(CellKind::Quad8, [0.5 * L, 0.0], 1),
            GeometryMode::Axisymmetric,
            2,
            lattice_host(0.0),
        ),
        (
            square(CellKind::Quad8, [0.5 * L, 0.0], 1),
            GeometryMode::Axisymmetric,
            2,
            dilute_host(),
        ),
    ];
    let mut worst_all: f64 = 0.0;
    for (mesh, mode, u_order, law) in &cases {
        let (dofs, fields) = common::coupled_dofs(mesh, *u_order);
        let n = dofs.n_dofs();
        let scales = finite_scales(law);
        let x = common::smooth_state(mesh, &dofs, fields, &scales);
        let history: Vec<f64> = (0..n).map(|i| -((i % 7) as f64) * 1e2).collect();
        let laws = LawMap::finite(vec![*law], vec![0; mesh.n_cells()]);
        let (lo, hi) = swelling_range(mesh, &dofs, fields, *mode, &laws, &x);
        let plain = |xs: &[f64], input: &CellInput<'_>, out: LocalOutput<'_>| {
            let k = kernel_at(&dofs, fields, *mode, &laws, &history, xs);
            k.cell_into(input, &mut k.build_scratch(), out).unwrap();
        };
        let (kind, nodes) = mesh.cell(0);
        let mut swapped = vec![false; mesh.n_points()];
        swapped[nodes[0]] = true;
        swapped[nodes[2]] = true;
        let with_swap = |xs: &[f64], input: &CellInput<'_>, out: LocalOutput<'_>| {
            let k = SwappedRows {
                inner: kernel_at(&dofs, fields, *mode, &laws, &history, xs),
                swap: RowSwap {
                    dofs: &dofs,
                    fields,
                    swapped: &swapped,
                },
            };
            k.cell_into(input, &mut k.build_scratch(), out).unwrap();
        };
        let name = match law {
            FiniteLaw::Gel(_) => "gel",
            FiniteLaw::Host(_) => "host",
        };
        // The swap happened: the c-row of local node 0 of the swapped matrix is the μ-row of
        // the plain one.
        let m = dofs.cell_dofs(0).len();
        let coords: Vec<[f64; 3]> = nodes.iter().map(|&i| mesh.points[i]).collect();
        let input = CellInput {
            id: 0,
            kind,
            nodes,
            coords: &coords,
            dofs: dofs.cell_dofs(0),
        };
        let matrix_of = |run: &dyn Fn(&[f64], &CellInput<'_>, LocalOutput<'_>)| {
            let mut ke = vec![0.0; m * m];
            run(
                &x,
                &input,
                LocalOutput {
                    matrix: Some(&mut ke),
                    vector: None,
                },
            );
            ke
        };
        let (kp, ks) = (matrix_of(&plain), matrix_of(&with_swap));
        let (rc, rm) = (
            dofs.local_range(fields.c, kind).start,
            dofs.local_range(fields.mu, kind).start,
        );
        assert_eq!(ks[rc * m..(rc + 1) * m], kp[rm * m..(rm + 1) * m]);
        assert_ne!(ks[rc * m..(rc + 1) * m], kp[rc * m..(rc + 1) * m]);
        let (worst, at) = common::tangent_error(mesh, &dofs, fields, &x, &scales, plain);
        let (worst_s, at_s) = common::tangent_error(mesh, &dofs, fields, &x, &scales, with_swap);
        println!(
            "{kind} {mode:?} {name}: swelling ratio {lo:.3}..{hi:.3}, tangent error {worst:.2e}, \
             swapped {worst_s:.2e}"
        );
        assert!(
            worst < 1e-6,
            "{kind} {mode:?} {name}: tangent differs from finite differences by {worst:e} at \
             (row, column, tangent, difference) {at:?}"
        );
        assert!(
            worst_s < 1e-6,
            "{kind} {mode:?} {name}, swapped rows: tangent differs from finite differences by \
             {worst_s:e} at {at_s:?}"
        );
        worst_all = worst_all.max(worst).max(worst_s);
    }
    println!("worst tangent error over all cases: {worst_all:.2e}");
}

/// Newton parameters of the static solves: tight, with a line search.
fn static_newton() -> NewtonParams {
    NewtonParams {
        abs_tol: 0.0,
        rel_tol: 1e-14,
        step_tol: 1e-14,
        max_iterations: 30,
        max_backtracks: 8,
    }
}

/// Solve the static problem (no rate term: the problem as built, at time 0) from `x`.
fn solve_static(problem: &mut CoupledProblem<'_>, x: &mut [f64]) -> usize {
    problem.check_setup().unwrap();
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let info = newton(problem, &mut solver, x, &static_newton()).unwrap();
    info.iterations
}

/// `(F − I) X` in the components of the mesh (in axisymmetry `(u_r, u_z)` of
/// `F = diag(a, b, a)`).
fn affine_u(f: &Matrix3<f64>, p: [f64; 3], dim: usize) -> [f64; 3] {
    let mut u = [0.0; 3];
    for i in 0..dim {
        for k in 0..dim {
            let d = if i == k { 1.0 } else { 0.0 };
            u[i] += (f[(i, k)] - d) * p[k];
        }
    }
    u
}

/// Constrain the displacement of `nodes` to `(F − I) X` (one group, returned).
fn prescribe_affine(
    mesh: &Mesh,
    problem: &mut CoupledProblem<'_>,
    f: &Matrix3<f64>,
    nodes: &[usize],
) -> dilata_fem::GroupId {
    let mut value = vec![0.0; problem.dofs.n_dofs()];
    let mut list = Vec::new();
    for &node in nodes {
        let u = affine_u(f, mesh.points[node], mesh.dim);
        for (comp, &uc) in u.iter().enumerate().take(mesh.dim) {
            let d = problem.dofs.node_dof(problem.fields.u, node, comp).unwrap();
            value[d] = uc;
            list.push(d);
        }
    }
    let g = problem.constraints.add_group("u = (F - I) X", &list, 0.0);
    problem.constraints.set_group_values_with(g, |d| value[d]);
    g
}

/// Constrain a scalar field at every node that carries it.
fn prescribe_scalar(
    problem: &mut CoupledProblem<'_>,
    field: dilata_fem::FieldHandle,
    nodes: &[usize],
    value: f64,
) {
    let list: Vec<usize> = nodes
        .iter()
        .filter_map(|&n| problem.dofs.node_dof(field, n, 0).ok())
        .collect();
    problem.constraints.add_group("scalar", &list, value);
}

/// Worst errors of one patch test: interior displacement (relative to the largest exact
/// displacement), nodal nominal and Cauchy stress (relative to the largest component of `P`),
/// the free scalar field (c of a gel relative to `c_J`, μ of a host relative to the larger of
/// `|μ_local|` and `RT`) and the deformed volume (relative to `det F̄ V`).
struct PatchErrors {
    u: f64,
    nominal: f64,
    cauchy: f64,
    scalar: f64,
    volume: f64,
    iterations: usize,
}

/// Finite-strain patch test on a distorted mesh: boundary displacements `(F̄ − I) X`, interior
/// free (starting from zero, four load steps); a gel with `μ` prescribed everywhere and `c`
/// free, a host with `c` prescribed everywhere and `μ` free.
fn patch(
    mut mesh: Mesh,
    n: usize,
    mode: GeometryMode,
    u_order: usize,
    law: FiniteLaw,
    fbar: Matrix3<f64>,
) -> PatchErrors {
    common::distort(&mut mesh, L / n as f64, 0.25);
    let (dofs, fields) = common::coupled_dofs(&mesh, u_order);
    let all_nodes: Vec<usize> = (0..mesh.n_points()).collect();
    let boundary = common::all_boundary_nodes(&mesh);
    let mut problem = CoupledProblem::new(
        &mesh,
        dofs,
        fields,
        mode,
        LawMap::finite(vec![law], vec![0; mesh.n_cells()]),
        Parallelism::Sequential,
    );
    let group = prescribe_affine(&mesh, &mut problem, &fbar, &boundary);
    let rt = 8.314462618 * T;
    // The scalar of the law: μ of the gel, c of the host (prescribed), and the exact value of
    // the other one, from the point law at F̄.
    let (c_bar, mu_bar) = match law {
        FiniteLaw::Gel(g) => {
            let mu = g.free_swelling_potential(1.1 * LAMBDA0);
            let c_j = (fbar.determinant() - LAMBDA0.powi(-3)) / OMEGA_GEL;
            prescribe_scalar(&mut problem, fields.mu, &all_nodes, mu);
            (c_j, mu)
        }
        FiniteLaw::Host(_) => {
            let c = 2e4;
            prescribe_scalar(&mut problem, fields.c, &all_nodes, c);
            // The potential row is μ − μ_local: at μ = 0 it is −μ_local.
            let at_zero = law
                .evaluate(&FiniteInput {
                    f: fbar,
                    c,
                    mu: 0.0,
                    grad_mu: Vector3::zeros(),
                    grad_c: Vector3::zeros(),
                })
                .unwrap();
            (c, -at_zero.potential)
        }
    };
    let mut x = vec![0.0; problem.dofs.n_dofs()];
    if matches!(law, FiniteLaw::Gel(_)) {
        for node in problem.dofs.field_nodes(fields.c) {
            x[problem.dofs.node_dof(fields.c, node, 0).unwrap()] =
                gel_law().reference_concentration();
        }
    }
    // Four load steps F = I + t (F̄ − I), each Newton solve starting from the last solution
    // (from interior displacements zero, a full step can take a gel point below its dry
    // volume in the first Newton iterations).
    let mut iterations = 0;
    for step in 1..=4 {
        let t = step as f64 / 4.0;
        let f_t = Matrix3::identity() + (fbar - Matrix3::identity()) * t;
        let mut value = vec![0.0; problem.dofs.n_dofs()];
        for &node in &boundary {
            let u = affine_u(&f_t, mesh.points[node], mesh.dim);
            for (comp, &uc) in u.iter().enumerate().take(mesh.dim) {
                value[problem.dofs.node_dof(fields.u, node, comp).unwrap()] = uc;
            }
        }
        problem
            .constraints
            .set_group_values_with(group, |d| value[d]);
        iterations += solve_static(&mut problem, &mut x);
    }
    let point = law
        .evaluate(&FiniteInput {
            f: fbar,
            c: c_bar,
            mu: mu_bar,
            grad_mu: Vector3::zeros(),
            grad_c: Vector3::zeros(),
        })
        .unwrap();
    let dim = mesh.dim;
    let u_scale = (0..mesh.n_points())
        .map(|n| {
            affine_u(&fbar, mesh.points[n], dim)
                .iter()
                .fold(0.0_f64, |m, v| m.max(v.abs()))
        })
        .fold(0.0, f64::max);
    let mut u_err: f64 = 0.0;
    for node in 0..mesh.n_points() {
        let exact = affine_u(&fbar, mesh.points[node], dim);
        for (comp, &e) in exact.iter().enumerate().take(dim) {
            let d = problem.dofs.node_dof(fields.u, node, comp).unwrap();
            u_err = u_err.max((x[d] - e).abs() / u_scale);
        }
    }
    let mut scalar_err: f64 = 0.0;
    for node in problem.dofs.field_nodes(fields.c) {
        let c = x[problem.dofs.node_dof(fields.c, node, 0).unwrap()];
        let mu = x[problem.dofs.node_dof(fields.mu, node, 0).unwrap()];
        let e = match law {
            FiniteLaw::Gel(_) => (c - c_bar).abs() / c_bar,
            FiniteLaw::Host(_) => (mu - mu_bar).abs() / mu_bar.abs().max(rt),
        };
        scalar_err = scalar_err.max(e);
    }
    let post = CoupledPost {
        dofs: &problem.dofs,
        fields,
        mode,
        laws: &problem.laws,
        solution: &x,
    };
    let nodal = recover_coupled_nodal(&mesh, &post).unwrap();
    let totals = coupled_integrals(&mesh, &post).unwrap();
    let volume = (totals.deformed_volume - fbar.determinant() * totals.volume).abs()
        / (fbar.determinant() * totals.volume);
    let p_scale = point.stress.amax();
    let sigma = cauchy_voigt(&point.stress, &fbar);
    let mut nominal: f64 = 0.0;
    let mut cauchy: f64 = 0.0;
    let fin = nodal.finite.as_ref().unwrap();
    for node in 0..mesh.n_points() {
        for i in 0..3 {
            for k in 0..3 {
                nominal = nominal.max(
                    (fin.nominal_stress[node][3 * i + k] - point.stress[(i, k)]).abs() / p_scale,
                );
                // The recovered deformation gradient is F̄ itself.
                let df = (fin.deformation_gradient[node][3 * i + k] - fbar[(i, k)]).abs();
                assert!(df < 1e-10, "node {node}: F[{i}{k}] off by {df:e}");
            }
        }
        cauchy = cauchy.max((nodal.stress[node] - sigma).amax() / p_scale);
    }
    PatchErrors {
        u: u_err,
        nominal,
        cauchy,
        scalar: scalar_err,
        volume,
        iterations,
    }
}

/// Finite-strain patch test (common practice, no source; in the style of the patch tests of
/// Taylor, Simo & Zienkiewicz, Int. J. Numer. Methods Eng. 22 (1986), reference from memory):
/// on meshes with displaced interior nodes, boundary displacements `(F̄ − I) X` of a
/// stretch-and-shear `F̄` (`det F̄ ≈ 1.2`) make the solved displacements `(F̄ − I) X` to 1e-10
/// relative, the recovered nominal stress uniform and equal to the point law's `P(F̄)` (Cauchy
/// stress `P F̄ᵀ / det F̄`), and the deformed volume `det F̄` times the reference volume. Gel:
/// `μ` prescribed everywhere, `c` free and equal to `c_J(F̄)`; host: `c` prescribed everywhere,
/// `μ` free and equal to `μ_local(F̄, c)`. Plane strain, axisymmetry (`F̄ = diag(a, b)` in r–z
/// with hoop stretch `a`; one mesh touching the axis, one away from it) and 3D.
#[test]
fn finite_patch_tests() {
    let f_plane = Matrix3::new(1.15, 0.2, 0.0, 0.05, 1.05, 0.0, 0.0, 0.0, 1.0);
    let f_axi = Matrix3::new(1.08, 0.0, 0.0, 0.0, 1.03, 0.0, 0.0, 0.0, 1.08);
    let f_3d = Matrix3::new(1.1, 0.15, -0.05, 0.04, 1.05, 0.1, 0.06, -0.08, 1.03);
    for f in [&f_plane, &f_axi, &f_3d] {
        let j: f64 = f.determinant();
        assert!((j - 1.2).abs() < 0.02, "det F̄ = {j}");
    }
    let cases: Vec<(Mesh, usize, GeometryMode, usize, Matrix3<f64>)> = vec![
        (
            square(CellKind::Quad4, [0.0, 0.0], 4),
            4,
            GeometryMode::PlaneStrain,
            1,
            f_plane,
        ),
        (
            square(CellKind::Tri6, [0.0, 0.0], 3),
            3,
            GeometryMode::PlaneStrain,
            2,
            f_plane,
        ),
        (
            square(CellKind::Quad8, [0.0, 0.0], 3),
            3,
            GeometryMode::Axisymmetric,
            2,
            f_axi,
        ),
        (
            square(CellKind::Quad4, [0.3 * L, 0.0], 4),
            4,
            GeometryMode::Axisymmetric,
            1,
            f_axi,
        ),
        (cube(CellKind::Hex8, 3), 3, GeometryMode::ThreeD, 1, f_3d),
        (cube(CellKind::Tet10, 2), 2, GeometryMode::ThreeD, 2, f_3d),
    ];
    let mut worst = [0.0_f64; 5];
    for (mesh, n, mode, u_order, fbar) in cases {
        for law in [FiniteLaw::Gel(gel_law()), lattice_host(0.0)] {
            let kind = mesh.cell(0).0;
            let name = match law {
                FiniteLaw::Gel(_) => "gel",
                FiniteLaw::Host(_) => "host",
            };
            let e = patch(mesh.clone(), n, mode, u_order, law, fbar);
            println!(
                "{kind} {mode:?} {name}: {} Newton iterations; u {:.2e}, P {:.2e}, σ {:.2e}, \
                 {} {:.2e}, deformed volume {:.2e}",
                e.iterations,
                e.u,
                e.nominal,
                e.cauchy,
                if name == "gel" { "c" } else { "μ" },
                e.scalar,
                e.volume
            );
            assert!(
                e.u < 1e-10,
                "{kind} {mode:?} {name}: displacement error {:e}",
                e.u
            );
            assert!(
                e.nominal < 1e-10,
                "{kind} {mode:?} {name}: nominal stress error {:e}",
                e.nominal
            );
            assert!(
                e.cauchy < 1e-10,
                "{kind} {mode:?} {name}: Cauchy stress error {:e}",
                e.cauchy
            );
            assert!(
                e.scalar < 1e-10,
                "{kind} {mode:?} {name}: c or μ error {:e}",
                e.scalar
            );
            assert!(
                e.volume < 1e-12,
                "{kind} {mode:?} {name}: deformed volume error {:e}",
                e.volume
            );
            for (w, v) in worst
                .iter_mut()
                .zip([e.u, e.nominal, e.cauchy, e.scalar, e.volume])
            {
                *w = w.max(v);
            }
        }
    }
    println!(
        "worst patch errors: u {:.2e}, P {:.2e}, σ {:.2e}, c/μ {:.2e}, deformed volume {:.2e}",
        worst[0], worst[1], worst[2], worst[3], worst[4]
    );
}

/// Rotation by `angle` about the unit axis `n` (Rodrigues' formula).
fn rotation(n: Vector3<f64>, angle: f64) -> Matrix3<f64> {
    let n = n.normalize();
    let k = Matrix3::new(0.0, -n[2], n[1], n[2], 0.0, -n[0], -n[1], n[0], 0.0);
    Matrix3::identity() + k * angle.sin() + k * k * (1.0 - angle.cos())
}

/// Frame indifference on the mesh (material frame indifference; common practice, e.g.
/// Holzapfel, Nonlinear Solid Mechanics, 2000, §6.2 — section from memory): a gel in its
/// free-swelling reference state (`c = c_ref`, `μ = μ_0(λ0)`) rigidly rotated by 90° (about z
/// in plane strain, about a skew axis in 3D) on a distorted mesh has zero recovered Cauchy and
/// nominal stress to round-off (relative to G); and solving with the rotation imposed on the
/// boundary, `μ = μ_0` prescribed on the boundary, and interior `u`, `c`, `μ` free from a
/// perturbed start returns the rotation, `c_ref` and an unchanged `μ = μ_0`.
#[test]
fn rotated_gel_stays_stress_free() {
    let gel = gel_law();
    let law = FiniteLaw::Gel(gel);
    let c0 = gel.reference_concentration();
    let mu0 = gel.free_swelling_potential(LAMBDA0);
    let rt = gel.rt();
    let half_pi = std::f64::consts::FRAC_PI_2;
    let cases = vec![
        (
            square(CellKind::Quad8, [0.0, 0.0], 3),
            3,
            GeometryMode::PlaneStrain,
            2,
            rotation(Vector3::z(), half_pi),
        ),
        (
            cube(CellKind::Hex8, 3),
            3,
            GeometryMode::ThreeD,
            1,
            rotation(Vector3::new(1.0, 2.0, 3.0), half_pi),
        ),
    ];
    let mut worst = [0.0_f64; 5];
    for (mut mesh, n, mode, u_order, q) in cases {
        let kind = mesh.cell(0).0;
        common::distort(&mut mesh, L / n as f64, 0.25);
        let (dofs, fields) = common::coupled_dofs(&mesh, u_order);
        let laws = LawMap::finite(vec![law], vec![0; mesh.n_cells()]);
        // 1. The rotated reference state, every node given.
        let mut x = vec![0.0; dofs.n_dofs()];
        for node in 0..mesh.n_points() {
            let u = affine_u(&q, mesh.points[node], mesh.dim);
            for (comp, &uc) in u.iter().enumerate().take(mesh.dim) {
                x[dofs.node_dof(fields.u, node, comp).unwrap()] = uc;
            }
            if let Ok(d) = dofs.node_dof(fields.c, node, 0) {
                x[d] = c0;
                x[dofs.node_dof(fields.mu, node, 0).unwrap()] = mu0;
            }
        }
        let nodal = recover_coupled_nodal(
            &mesh,
            &CoupledPost {
                dofs: &dofs,
                fields,
                mode,
                laws: &laws,
                solution: &x,
            },
        )
        .unwrap();
        let fin = nodal.finite.as_ref().unwrap();
        let nominal = fin
            .nominal_stress
            .iter()
            .flat_map(|p| p.iter())
            .fold(0.0_f64, |m, v| m.max(v.abs()))
            / G_GEL;
        let cauchy = nodal.stress.iter().map(|s| s.amax()).fold(0.0, f64::max) / G_GEL;
        // Stretches all 1 (a rotation), swelling ratio λ0³.
        let stretch = fin
            .stretches
            .iter()
            .flat_map(|s| s.iter())
            .fold(0.0_f64, |m, v| m.max((v - 1.0).abs()));
        assert!(
            stretch < 1e-12,
            "{kind}: principal stretches of a rotation off 1 by {stretch:e}"
        );
        // 2. Solve with the rotation on the boundary and μ0 prescribed there, from a start
        // perturbed in the interior.
        let boundary = common::all_boundary_nodes(&mesh);
        let mut problem = CoupledProblem::new(
            &mesh,
            dofs.clone(),
            fields,
            mode,
            laws.clone(),
            Parallelism::Sequential,
        );
        prescribe_affine(&mesh, &mut problem, &q, &boundary);
        prescribe_scalar(&mut problem, fields.mu, &boundary, mu0);
        let on_boundary: std::collections::BTreeSet<usize> = boundary.iter().copied().collect();
        let mut start = x.clone();
        for node in 0..mesh.n_points() {
            if on_boundary.contains(&node) {
                continue;
            }
            let p = mesh.points[node];
            let wave = (7.0 * p[0] / L).sin() * (5.0 * p[1] / L + 1.0).cos();
            for comp in 0..mesh.dim {
                start[dofs.node_dof(fields.u, node, comp).unwrap()] += 0.01 * L * wave;
            }
            if let Ok(d) = dofs.node_dof(fields.c, node, 0) {
                start[d] *= 1.0 + 0.05 * wave;
                start[dofs.node_dof(fields.mu, node, 0).unwrap()] += 0.1 * rt * wave;
            }
        }
        // The start is off the answer by a visible amount in every field.
        let off = |field: dilata_fem::FieldHandle, scale: f64| {
            problem
                .dofs
                .field_range(field)
                .map(|i| (start[i] - x[i]).abs() / scale)
                .fold(0.0, f64::max)
        };
        assert!(off(fields.u, L) > 1e-3 && off(fields.c, c0) > 1e-2 && off(fields.mu, rt) > 1e-2);
        let iterations = solve_static(&mut problem, &mut start);
        let (mut du, mut dc, mut dmu) = (0.0_f64, 0.0_f64, 0.0_f64);
        for i in 0..x.len() {
            let e = (start[i] - x[i]).abs();
            if dofs.field_range(fields.u).contains(&i) {
                du = du.max(e / L);
            } else if dofs.field_range(fields.c).contains(&i) {
                dc = dc.max(e / c0);
            } else {
                dmu = dmu.max(e / rt);
            }
        }
        println!(
            "{kind} {mode:?}: |P|/G {nominal:.2e}, |σ|/G {cauchy:.2e}; solved in {iterations} \
             iterations: u {du:.2e} (of L), c {dc:.2e} (of c_ref), μ {dmu:.2e} (of RT)"
        );
        assert!(nominal < 1e-12, "{kind}: nominal stress {nominal:e} G");
        assert!(cauchy < 1e-12, "{kind}: Cauchy stress {cauchy:e} G");
        assert!(
            du < 1e-10,
            "{kind}: displacement off the rotation by {du:e} L"
        );
        assert!(dc < 1e-10, "{kind}: c off c_ref by {dc:e}");
        assert!(dmu < 1e-10, "{kind}: μ off μ0 by {dmu:e} RT");
        for (w, v) in worst.iter_mut().zip([nominal, cauchy, du, dc, dmu]) {
            *w = w.max(v);
        }
    }
    println!(
        "worst: |P|/G {:.2e}, |σ|/G {:.2e}, u {:.2e}, c {:.2e}, μ {:.2e}",
        worst[0], worst[1], worst[2], worst[3], worst[4]
    );
}

/// The Jacobian of a whole finite-strain problem with pressures on two sides (a load that
/// follows the deformed surface, `FollowerPressureKernel`) equals central differences of its
/// residual, column by column (consistent tangent, common practice, no source), in plane strain,
/// axisymmetry and 3D at a finite deformation.
#[test]
fn follower_pressure_tangent_matches_finite_differences() {
    let cases: Vec<(Mesh, GeometryMode, Vec<&str>)> = vec![
        (
            square(CellKind::Quad8, [0.0, 0.0], 2),
            GeometryMode::PlaneStrain,
            vec!["right", "top"],
        ),
        (
            square(CellKind::Quad8, [0.5 * L, 0.0], 2),
            GeometryMode::Axisymmetric,
            vec!["right", "top", "left"],
        ),
        (
            cube(CellKind::Hex8, 1),
            GeometryMode::ThreeD,
            vec!["right", "top", "front"],
        ),
    ];
    for (mesh, mode, sides) in cases {
        let law = dilute_host();
        let (dofs, fields) = common::coupled_dofs(&mesh, mesh.blocks[0].kind.order());
        let scales = finite_scales(&law);
        let x = common::smooth_state(&mesh, &dofs, fields, &scales);
        let mut problem = CoupledProblem::new(
            &mesh,
            dofs,
            fields,
            mode,
            LawMap::finite(vec![law], vec![0; mesh.n_cells()]),
            Parallelism::Sequential,
        );
        for side in &sides {
            let facets = mesh.boundary(side).unwrap().to_vec();
            problem
                .loads
                .push((facets, dilata_solve::BoundaryLoad::Pressure(3e9)));
        }
        let n = problem.dofs.n_dofs();
        let zeros = vec![0.0; n];
        dilata_solve::time::TransientSystem::begin_step(&mut problem, 0.0, 1e2, &zeros);
        let pattern = dilata_solve::newton::DiscreteSystem::pattern(&problem);
        let mut jac = dilata_linalg::CsrMatrix::zeros(pattern);
        let mut r = vec![0.0; n];
        dilata_solve::newton::DiscreteSystem::assemble_into(&mut problem, &x, &mut jac, &mut r)
            .unwrap();
        let u_range = problem.dofs.field_range(fields.u);
        let mut worst: f64 = 0.0;
        for col in u_range.clone() {
            let h = 1e-7 * scales.u;
            let mut eval = |d: f64| {
                let mut xp = x.clone();
                xp[col] += d;
                let mut rp = vec![0.0; n];
                dilata_solve::newton::DiscreteSystem::residual_into(&mut problem, &xp, &mut rp)
                    .unwrap();
                rp
            };
            let (rp, rm) = (eval(h), eval(-h));
            for row in u_range.clone() {
                let fd = (rp[row] - rm[row]) / (2.0 * h);
                let row_scale = u_range
                    .clone()
                    .map(|c| jac.get(row, c).abs())
                    .fold(1e-300, f64::max);
                worst = worst.max((jac.get(row, col) - fd).abs() / row_scale);
            }
        }
        println!("{mode:?}: follower pressure tangent error {worst:.2e}");
        assert!(worst < 1e-6, "{mode:?}: {worst:e}");
    }
}

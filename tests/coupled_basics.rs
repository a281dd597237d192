//! First checks of the coupled deformation–diffusion kernel and problem (work in progress on
//! the coupled-model issue): consistent tangent against finite differences, the swelling patch
//! states, and the discrete mass balance.

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, CellInput, CellKernel, GeometryMode, LocalOutput};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::chemical::{ChemicalLaw, LatticeGasParams};
use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw};
use dilata_material::elastic::Isotropic;
use dilata_material::mobility::{Diffusivity, LatticeGasMobilityParams, MobilityLaw};
use dilata_material::stiffness::StiffnessLaw;
use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};
use dilata_mesh::generate::{cuboid, rectangle, BoxParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{
    CoupledFields, CoupledKernel, LawMap, RateTerm, RowSwap, SwappedRows, TangentPart,
};
use dilata_physics::norms::field_integral;
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::newton::NewtonParams;
use dilata_solve::time::{Integrator, IntegratorParams, Scheme, StepSizing};
use dilata_solve::BoundaryLoad;

// Demo-scale material numbers of an insertion host (order of magnitude only, mostly
// from memory): E 10 GPa, ν 0.3, Ω 3.5e-6 m³/mol, D 7e-15 m²/s, c_max 2.37e4 mol/m³.
const E: f64 = 10e9;
const NU: f64 = 0.3;
const OMEGA: f64 = 3.5e-6;
const D: f64 = 7e-15;
const T: f64 = 298.15;
const C0: f64 = 1000.0;
const C_MAX: f64 = 2.37e4;

/// Magnitudes of the tangent checks' states: 1 µm cells, displacements of 1 nm, c around C0,
/// μ of 1e3 J/mol.
const SCALES: common::StateScales = common::StateScales {
    length: 1e-6,
    u: 1e-9,
    c: C0,
    mu: 1e3,
};

fn host() -> common::DiluteHost {
    common::DiluteHost {
        young: E,
        poisson: NU,
        omega: OMEGA,
        diffusivity: D,
        temperature: T,
        c_ref: C0,
    }
}

fn dilute_law(plane_stress: bool) -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&host());
    if plane_stress {
        parts.stiffness = parts.stiffness.plane_stress();
    }
    CoupledPointLaw::new(parts).unwrap()
}

/// The dilute law with the swelling strain in the x–y plane only.
fn in_plane_law() -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&host());
    parts.swelling = parts.swelling.in_plane_only();
    CoupledPointLaw::new(parts).unwrap()
}

fn lattice_law() -> CoupledPointLaw {
    CoupledPointLaw::new(CoupledLawParts {
        stiffness: StiffnessLaw::isotropic(Isotropic::new(E, NU).unwrap()),
        swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: OMEGA,
            c_ref: C0,
        })
        .unwrap(),
        chemical: ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 0.0,
            temperature: T,
            c_max: C_MAX,
            interaction: 4000.0,
        })
        .unwrap(),
        mobility: MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: Diffusivity::isotropic(D).unwrap(),
            temperature: T,
            c_max: C_MAX,
        })
        .unwrap(),
        gradient: dilata_material::gradient::GradientEnergy::none(),
    })
    .unwrap()
}

/// `law` with a gradient energy `κ` (J·m⁵/mol²; on these 1 µm cells `κ/h²` is of the order of
/// `dμ/dc`, so both terms of the potential row are exercised).
fn with_gradient(law: CoupledPointLaw, kappa: nalgebra::Matrix3<f64>) -> CoupledPointLaw {
    CoupledPointLaw::new(CoupledLawParts {
        gradient: dilata_material::gradient::GradientEnergy::tensor(kappa).unwrap(),
        ..*law.parts()
    })
    .unwrap()
}

/// A double-well host (wells at 500 and 1500 mol/m³ around the test state's C0) with a
/// constant mobility and an isotropic gradient energy.
fn double_well_law() -> CoupledPointLaw {
    use dilata_material::chemical::DoubleWellParams;
    let parts = CoupledLawParts {
        chemical: ChemicalLaw::double_well(DoubleWellParams {
            height: 1e-6,
            c_a: 500.0,
            c_b: 1500.0,
        })
        .unwrap(),
        mobility: MobilityLaw::constant(nalgebra::Matrix3::identity() * 1e-18).unwrap(),
        gradient: dilata_material::gradient::GradientEnergy::isotropic(2e-12).unwrap(),
        ..*lattice_law().parts()
    };
    CoupledPointLaw::new(parts).unwrap()
}

/// Every tangent block of the cell kernel equals central differences of its residual
/// (common practice, no source: the consistent-tangent check described in DEVELOPERS.md),
/// with and without the gradient energy of phase separation.
#[test]
fn coupled_tangent_matches_finite_differences() {
    let cases: Vec<(Mesh, GeometryMode, CoupledPointLaw)> = vec![
        (
            cuboid(&BoxParams {
                origin: [0.0; 3],
                lengths: [1e-6; 3],
                n_cells: [1, 1, 1],
                kind: CellKind::Hex20,
            })
            .unwrap(),
            GeometryMode::ThreeD,
            dilute_law(false),
        ),
        (
            cuboid(&BoxParams {
                origin: [0.0; 3],
                lengths: [1e-6; 3],
                n_cells: [1, 1, 1],
                kind: CellKind::Tet10,
            })
            .unwrap(),
            GeometryMode::ThreeD,
            lattice_law(),
        ),
        (
            rectangle(&RectangleParams {
                origin: [0.0, 0.0],
                lengths: [1e-6, 1e-6],
                n_cells: [1, 1],
                kind: CellKind::Quad8,
            })
            .unwrap(),
            GeometryMode::PlaneStrain,
            lattice_law(),
        ),
        (
            rectangle(&RectangleParams {
                origin: [0.0, 0.0],
                lengths: [1e-6, 1e-6],
                n_cells: [1, 1],
                kind: CellKind::Tri6,
            })
            .unwrap(),
            GeometryMode::PlaneStress,
            dilute_law(true),
        ),
        (
            rectangle(&RectangleParams {
                origin: [0.5e-6, 0.0],
                lengths: [1e-6, 1e-6],
                n_cells: [1, 1],
                kind: CellKind::Quad9,
            })
            .unwrap(),
            GeometryMode::Axisymmetric,
            dilute_law(false),
        ),
        (
            rectangle(&RectangleParams {
                origin: [0.5e-6, 0.0],
                lengths: [1e-6, 1e-6],
                n_cells: [1, 1],
                kind: CellKind::Quad9,
            })
            .unwrap(),
            GeometryMode::Axisymmetric,
            with_gradient(
                lattice_law(),
                nalgebra::Matrix3::new(3e-12, 1e-12, 0.0, 1e-12, 2e-12, 0.0, 0.0, 0.0, 1e-12),
            ),
        ),
        (
            rectangle(&RectangleParams {
                origin: [0.0, 0.0],
                lengths: [1e-6, 1e-6],
                n_cells: [1, 1],
                kind: CellKind::Quad8,
            })
            .unwrap(),
            GeometryMode::PlaneStrain,
            double_well_law(),
        ),
        (
            cuboid(&BoxParams {
                origin: [0.0; 3],
                lengths: [1e-6; 3],
                n_cells: [1, 1, 1],
                kind: CellKind::Hex20,
            })
            .unwrap(),
            GeometryMode::ThreeD,
            double_well_law(),
        ),
        // Plane strain with the in-plane-only swelling convention (plane_strain_swelling =
        // "in_plane").
        (
            rectangle(&RectangleParams {
                origin: [0.0, 0.0],
                lengths: [1e-6, 1e-6],
                n_cells: [1, 1],
                kind: CellKind::Quad8,
            })
            .unwrap(),
            GeometryMode::PlaneStrain,
            in_plane_law(),
        ),
    ];
    for (mesh, mode, law) in &cases {
        let (dofs, fields) = common::coupled_dofs(mesh, 2);
        let n = dofs.n_dofs();
        let x = common::smooth_state(mesh, &dofs, fields, &SCALES);
        let history: Vec<f64> = (0..n).map(|i| -((i % 7) as f64) * 1e2).collect();
        let laws = LawMap::uniform(*law, mesh.n_cells());
        let run = |xs: &[f64], input: &CellInput<'_>, out: LocalOutput<'_>| {
            let k = CoupledKernel {
                dofs: &dofs,
                fields,
                mode: *mode,
                laws: &laws,
                rate: RateTerm {
                    a0: 1e2,
                    history: &history,
                },
                source: None,
                body_force: None,
                potential_source: None,
                solution: xs,
                tangent: TangentPart::Whole,
            };
            k.cell_into(input, &mut k.build_scratch(), out).unwrap();
        };
        let (worst, at) = common::tangent_error(mesh, &dofs, fields, &x, &SCALES, run);
        let kind = mesh.cell(0).0;
        assert!(
            worst < 1e-6,
            "{kind} {mode:?}: tangent differs from finite differences by {worst:e} at (row, column, tangent, difference) {at:?}"
        );
    }
}

/// The same check on the row-swapped system of a prescribed potential: μ constrained on the
/// left edge, so those nodes carry the potential equation in their c-row and the mass equation
/// in their μ-row; the swapped tangent must match central differences of the swapped residual.
#[test]
fn swapped_tangent_matches_finite_differences() {
    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [1e-6, 1e-6],
        n_cells: [1, 1],
        kind: CellKind::Quad8,
    })
    .unwrap();
    let (dofs, fields) = common::coupled_dofs(&mesh, 2);
    let n = dofs.n_dofs();
    let x = common::smooth_state(&mesh, &dofs, fields, &SCALES);
    let history: Vec<f64> = (0..n).map(|i| -((i % 7) as f64) * 1e2).collect();
    let laws = LawMap::uniform(lattice_law(), mesh.n_cells());
    let mut swapped = vec![false; mesh.n_points()];
    for node in mesh.boundary_nodes("left").unwrap() {
        swapped[node] = true;
    }
    let run = |xs: &[f64], input: &CellInput<'_>, out: LocalOutput<'_>| {
        let k = SwappedRows {
            inner: CoupledKernel {
                dofs: &dofs,
                fields,
                mode: GeometryMode::PlaneStrain,
                laws: &laws,
                rate: RateTerm {
                    a0: 1e2,
                    history: &history,
                },
                source: None,
                body_force: None,
                potential_source: None,
                solution: xs,
                tangent: TangentPart::Whole,
            },
            swap: RowSwap {
                dofs: &dofs,
                fields,
                swapped: &swapped,
            },
        };
        k.cell_into(input, &mut k.build_scratch(), out).unwrap();
    };
    let (worst, at) = common::tangent_error(&mesh, &dofs, fields, &x, &SCALES, run);
    assert!(
        worst < 1e-6,
        "swapped rows: tangent differs from finite differences by {worst:e} at {at:?}"
    );
    // The swap did happen: the c-row of a left node now holds the potential equation, whose
    // derivative with respect to that node's μ is the (positive) mass-matrix entry.
    let (kind, nodes) = mesh.cell(0);
    let rc = dofs.local_range(fields.c, kind);
    let rm = dofs.local_range(fields.mu, kind);
    assert!(swapped[nodes[0]], "local node 0 lies on the left edge");
    let m = dofs.cell_dofs(0).len();
    let mut ke = vec![0.0; m * m];
    let coords: Vec<[f64; 3]> = nodes.iter().map(|&i| mesh.points[i]).collect();
    run(
        &x,
        &CellInput {
            id: 0,
            kind,
            nodes,
            coords: &coords,
            dofs: dofs.cell_dofs(0),
        },
        LocalOutput {
            matrix: Some(&mut ke),
            vector: None,
        },
    );
    assert!(ke[rc.start * m + rm.start] > 0.0);
}

/// Run one backward-Euler step of a coupled problem from a uniform state.
fn one_step(problem: &mut CoupledProblem<'_>, x0: Vec<f64>, dt: f64) -> Vec<f64> {
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let params = IntegratorParams {
        scheme: Scheme::BackwardEuler,
        sizing: StepSizing::Fixed { dt },
        newton: NewtonParams {
            abs_tol: 0.0,
            rel_tol: 1e-12,
            step_tol: 1e-12,
            max_iterations: 12,
            max_backtracks: 4,
        },
        cut_factor: 0.5,
        dt_min: dt * 1e-3,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, x0);
    integ.step(problem, &mut solver, dt).unwrap();
    integ.state.x
}

fn uniform_state(mesh: &Mesh, dofs: &DofMap, fields: CoupledFields, c: f64) -> Vec<f64> {
    let mut x = vec![0.0; dofs.n_dofs()];
    for node in dofs.field_nodes(fields.c) {
        x[dofs.node_dof(fields.c, node, 0).unwrap()] = c;
    }
    let _ = mesh;
    x
}

/// A uniform concentration change in a body free to expand gives zero stress and the strain
/// (Ω/3)Δc I; fully clamped it gives σ = −E Ω Δc / (3(1 − 2ν)) I (elementary thermoelasticity
/// with αΔT replaced by ΩΔc/3; common practice, no source).
#[test]
fn uniform_swelling_free_and_clamped() {
    let dc = 500.0;
    let mesh = cuboid(&BoxParams {
        origin: [0.0; 3],
        lengths: [2e-6, 1e-6, 1e-6],
        n_cells: [3, 2, 2],
        kind: CellKind::Hex20,
    })
    .unwrap();
    for clamped in [false, true] {
        let (dofs, fields) = common::coupled_dofs(&mesh, 2);
        let mut problem = CoupledProblem::new(
            &mesh,
            dofs,
            fields,
            GeometryMode::ThreeD,
            LawMap::uniform(dilute_law(false), mesh.n_cells()),
            Parallelism::Sequential,
        );
        let supports: Vec<(&str, usize)> = if clamped {
            ["left", "right", "bottom", "top", "back", "front"]
                .iter()
                .flat_map(|&b| (0..3).map(move |c| (b, c)))
                .collect()
        } else {
            vec![("left", 0), ("bottom", 1), ("back", 2)]
        };
        for (b, comp) in supports {
            problem
                .constraints
                .add_boundary(
                    &mesh,
                    &problem.dofs,
                    BoundaryTarget {
                        boundary: b,
                        field: fields.u,
                        component: comp,
                    },
                    0.0,
                )
                .unwrap();
        }
        let x0 = uniform_state(&mesh, &problem.dofs, fields, C0 + dc);
        let x = one_step(&mut problem, x0, 10.0);
        let eps = OMEGA * dc / 3.0;
        for node in 0..mesh.n_points() {
            let p = mesh.points[node];
            for comp in 0..3 {
                let u = x[problem.dofs.node_dof(fields.u, node, comp).unwrap()];
                let expect = if clamped { 0.0 } else { eps * p[comp] };
                assert!(
                    (u - expect).abs() <= 1e-10 * eps * 2e-6,
                    "clamped={clamped} node {node} comp {comp}: u {u:e}, expected {expect:e}"
                );
            }
            if let Ok(d) = problem.dofs.node_dof(fields.c, node, 0) {
                assert!((x[d] - (C0 + dc)).abs() <= 1e-9 * C0, "c changed: {}", x[d]);
            }
        }
        // The potential is uniform and equals μ_chem − Ω σ_h.
        let sigma_h = if clamped {
            -E * OMEGA * dc / (3.0 * (1.0 - 2.0 * NU))
        } else {
            0.0
        };
        let mu_expect = 8.314462618 * T * ((C0 + dc) / C0).ln() - OMEGA * sigma_h;
        for node in problem.dofs.field_nodes(fields.mu) {
            let mu = x[problem.dofs.node_dof(fields.mu, node, 0).unwrap()];
            assert!(
                (mu - mu_expect).abs() <= 1e-8 * mu_expect.abs(),
                "clamped={clamped}: μ {mu}, expected {mu_expect}"
            );
        }
    }
}

/// Discrete mass balance: with backward Euler the change of the total amount over a step equals
/// Δt times the integrated inward flux, because the test functions of the mass equation sum to
/// one (common practice, no source). Checked to 1e-10 relative over several steps.
#[test]
fn mass_balance_with_inward_flux() {
    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [2e-6, 1e-6],
        n_cells: [8, 4],
        kind: CellKind::Quad8,
    })
    .unwrap();
    let (dofs, fields) = common::coupled_dofs(&mesh, 2);
    let mut problem = CoupledProblem::new(
        &mesh,
        dofs,
        fields,
        GeometryMode::PlaneStrain,
        LawMap::uniform(dilute_law(false), mesh.n_cells()),
        Parallelism::Sequential,
    );
    problem
        .constraints
        .add_boundary(
            &mesh,
            &problem.dofs,
            BoundaryTarget {
                boundary: "left",
                field: fields.u,
                component: 0,
            },
            0.0,
        )
        .unwrap();
    problem
        .constraints
        .add_boundary(
            &mesh,
            &problem.dofs,
            BoundaryTarget {
                boundary: "bottom",
                field: fields.u,
                component: 1,
            },
            0.0,
        )
        .unwrap();
    let j = 1e-5; // mol/(m² s), into the body through the right edge
    problem.loads.push((
        mesh.boundary("right").unwrap().to_vec(),
        BoundaryLoad::Flux(Box::new(move |_| j)),
    ));
    let area_rate = j * 1e-6; // flux × edge length (per unit thickness)
    let total = |x: &[f64], problem: &CoupledProblem<'_>| amount(&mesh, &problem.dofs, fields, x);
    let mut x = uniform_state(&mesh, &problem.dofs, fields, C0);
    let dt = 0.05;
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let params = IntegratorParams {
        scheme: Scheme::BackwardEuler,
        sizing: StepSizing::Fixed { dt },
        newton: NewtonParams {
            abs_tol: 0.0,
            rel_tol: 1e-13,
            step_tol: 1e-13,
            max_iterations: 15,
            max_backtracks: 4,
        },
        cut_factor: 0.5,
        dt_min: 1e-6,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, x.clone());
    let m0 = total(&x, &problem);
    for step in 1..=4 {
        let before = total(&integ.state.x, &problem);
        let report = integ.step(&mut problem, &mut solver, 1.0).unwrap();
        assert!(
            report.rejections.is_empty(),
            "step {step}: rejections {:?}",
            report.rejections
        );
        x = integ.state.x.clone();
        let after = total(&x, &problem);
        let inflow = area_rate * report.dt;
        let err = ((after - before) - inflow).abs() / inflow;
        assert!(
            err < 1e-10,
            "step {step}: amount change {:e} vs inflow {inflow:e} (rel {err:e})",
            after - before
        );
    }
    assert!(total(&x, &problem) > m0);
}

/// ∫ c dV with the kernels' cell quadrature (see `field_integral`).
fn amount(mesh: &Mesh, dofs: &DofMap, fields: CoupledFields, x: &[f64]) -> f64 {
    field_integral(mesh, dofs, fields.c, GeometryMode::PlaneStrain, x).unwrap()
}

/// The Jacobian assembled from the stored state-independent blocks plus the state-dependent
/// ones (`CoupledProblem::reuse_fixed_tangent`, `TangentPart`) is the Jacobian assembled whole,
/// to the bit: in every geometry mode, with supports, a prescribed concentration, a prescribed
/// potential (row swap) and an exchange boundary, at several states and rate terms, and again
/// after the constraints change. A stiffness that depends on the concentration turns the reuse
/// off. (An identity of the implementation: no outside source.)
#[test]
fn fixed_tangent_blocks_add_up_to_the_whole_jacobian() {
    use dilata_material::stiffness::LinearYoungParams;
    use dilata_solve::newton::DiscreteSystem;
    use dilata_solve::time::TransientSystem;

    let linear_young = CoupledPointLaw::new(CoupledLawParts {
        stiffness: StiffnessLaw::linear_young(LinearYoungParams {
            young_at_zero: E,
            young_at_max: 0.5 * E,
            poisson: NU,
            c_max: C_MAX,
        })
        .unwrap(),
        ..*lattice_law().parts()
    })
    .unwrap();
    let quad8 = |origin: [f64; 2]| {
        rectangle(&RectangleParams {
            origin,
            lengths: [2e-6, 1e-6],
            n_cells: [4, 3],
            kind: CellKind::Quad8,
        })
        .unwrap()
    };
    let hex = cuboid(&BoxParams {
        origin: [0.0; 3],
        lengths: [1e-6; 3],
        n_cells: [2, 2, 2],
        kind: CellKind::Hex8,
    })
    .unwrap();
    let (plane, axisym) = (quad8([0.0, 0.0]), quad8([0.5e-6, 0.0]));
    let cases: Vec<(&str, &Mesh, GeometryMode, CoupledPointLaw, bool)> = vec![
        (
            "plane strain",
            &plane,
            GeometryMode::PlaneStrain,
            lattice_law(),
            true,
        ),
        (
            "plane stress",
            &plane,
            GeometryMode::PlaneStress,
            dilute_law(true),
            true,
        ),
        (
            "axisymmetric",
            &axisym,
            GeometryMode::Axisymmetric,
            lattice_law(),
            true,
        ),
        (
            "3D",
            &hex,
            GeometryMode::ThreeD,
            with_gradient(lattice_law(), nalgebra::Matrix3::identity() * 1e-12),
            true,
        ),
        (
            "linear Young",
            &plane,
            GeometryMode::PlaneStrain,
            linear_young,
            false,
        ),
    ];
    // Each case with and without the assembler's entry table (its two scatters).
    let cases = cases.into_iter().flat_map(|c| [(c, true), (c, false)]);
    for ((name, mesh, mode, law, reusable), table) in cases {
        let build = |reuse: bool| {
            let u_order = if mesh.dim == 3 { 1 } else { 2 };
            let (dofs, fields) = common::coupled_dofs(mesh, u_order);
            let mut p = CoupledProblem::new(
                mesh,
                dofs,
                fields,
                mode,
                LawMap::uniform(law, mesh.n_cells()),
                Parallelism::Sequential,
            );
            p.reuse_fixed_tangent = reuse;
            // The reference (whole) assembly keeps the table.
            if reuse && !table {
                p.assembler.drop_entry_table();
            }
            p.constraints = held(
                mesh,
                &p.dofs,
                &[
                    ("left", fields.u, 0, 0.0),
                    ("bottom", fields.u, 1, 0.0),
                    ("top", fields.mu, 0, 150.0),
                    ("right", fields.c, 0, 1.1 * C0),
                ],
            );
            p.loads.push((
                mesh.boundary("right").unwrap().to_vec(),
                BoundaryLoad::Exchange {
                    rate: 1e-9,
                    outside: 2.0 * C0,
                },
            ));
            p.check_setup().unwrap();
            p
        };
        let (mut reused, mut whole) = (build(true), build(false));
        let fields = reused.fields;
        let n = reused.dofs.n_dofs();
        let mut jr = reused.assembler.build_matrix();
        let mut jw = whole.assembler.build_matrix();
        let (mut rr, mut rw) = (vec![0.0; n], vec![0.0; n]);
        let compare = |reused: &mut CoupledProblem<'_>,
                       whole: &mut CoupledProblem<'_>,
                       jr: &mut dilata_linalg::CsrMatrix,
                       jw: &mut dilata_linalg::CsrMatrix,
                       rr: &mut [f64],
                       rw: &mut [f64],
                       k: usize| {
            let mut x = uniform_state(mesh, &reused.dofs, fields, C0);
            for (node, p) in mesh.points.iter().enumerate() {
                let (s, t) = (p[0] / 2e-6, p[1] / 1e-6 + 0.3 * k as f64);
                for comp in 0..mesh.dim {
                    let d = reused.dofs.node_dof(fields.u, node, comp).unwrap();
                    x[d] = 1e-9 * (s * t + 0.2 * comp as f64 + 0.1 * k as f64);
                }
                if let Ok(d) = reused.dofs.node_dof(fields.c, node, 0) {
                    x[d] = C0 * (1.0 + 0.3 * s * s - 0.2 * t + 0.1 * k as f64);
                }
                if let Ok(d) = reused.dofs.node_dof(fields.mu, node, 0) {
                    x[d] = 1e3 * (s - t * t);
                }
            }
            let history: Vec<f64> = x.iter().map(|v| -0.7 * v).collect();
            let a0 = 10.0 * (k + 1) as f64;
            reused.begin_step(0.0, a0, &history);
            whole.begin_step(0.0, a0, &history);
            // A residual alone in between (as a line search does) keeps the stored blocks.
            reused.residual_into(&x, rr).unwrap();
            reused.assemble_into(&x, jr, rr).unwrap();
            whole.assemble_into(&x, jw, rw).unwrap();
            assert_eq!(reused.used_fixed_tangent(), reusable, "{name}");
            assert!(!whole.used_fixed_tangent(), "{name}");
            let same_bits = jr
                .values
                .iter()
                .zip(&jw.values)
                .all(|(a, b)| a.to_bits() == b.to_bits());
            assert!(same_bits, "{name}, state {k}: Jacobians differ");
            assert!(jw.values.iter().any(|v| *v != 0.0));
            assert_eq!(rr, rw, "{name}, state {k}: residuals differ");
        };
        // Two stages: the second no longer prescribes the potential (no row swap) but the
        // concentration; the stored blocks are assembled once per stage.
        for (stage, states) in [(1, 0..3), (2, 3..5)] {
            if stage == 2 {
                for p in [&mut reused, &mut whole] {
                    p.constraints = held(
                        mesh,
                        &p.dofs,
                        &[
                            ("left", fields.u, 0, 0.0),
                            ("bottom", fields.u, 1, 0.0),
                            ("top", fields.c, 0, C0),
                        ],
                    );
                }
            }
            for k in states {
                compare(
                    &mut reused,
                    &mut whole,
                    &mut jr,
                    &mut jw,
                    &mut rr,
                    &mut rw,
                    k,
                );
            }
            assert_eq!(
                reused.fixed_tangent_assemblies(),
                stage * usize::from(reusable),
                "{name}"
            );
        }
        assert_eq!(whole.fixed_tangent_assemblies(), 0);
    }
}

/// The sparse pattern of `CoupledProblem::with_sparse_coupling` leaves out only entries the
/// whole pattern holds as exact zeros: with a prescribed potential on the declared edge (row
/// swap), supports and an exchange edge, every Jacobian entry of the sparse problem equals the
/// full problem's entry to the bit and every entry left out is zero there; the residuals are
/// equal. A potential prescribed on an edge that was not declared is refused by `check_setup`.
/// (An identity of the implementation: no outside source.)
#[test]
fn sparse_coupling_leaves_out_only_zero_blocks() {
    use dilata_solve::coupled::CoupledSetupError;
    use dilata_solve::newton::DiscreteSystem;
    use dilata_solve::time::TransientSystem;

    let mesh = rectangle(&RectangleParams {
        origin: [0.5e-6, 0.0],
        lengths: [2e-6, 1e-6],
        n_cells: [4, 3],
        kind: CellKind::Quad8,
    })
    .unwrap();
    let (dofs, fields) = common::coupled_dofs(&mesh, 2);
    // `μ` may be prescribed on the top edge only.
    let mut top = vec![false; mesh.n_points()];
    for f in mesh.boundary("top").unwrap() {
        let (kind, nodes) = mesh.cell(f.cell);
        for &local in kind.facets()[f.local as usize].1 {
            top[nodes[local]] = true;
        }
    }
    let laws = LawMap::uniform(lattice_law(), mesh.n_cells());
    let mode = GeometryMode::Axisymmetric;
    let par = Parallelism::Sequential;
    let mut sparse = CoupledProblem::with_sparse_coupling(
        &mesh,
        dofs.clone(),
        fields,
        mode,
        laws.clone(),
        par,
        &top,
    );
    let mut full = CoupledProblem::new(&mesh, dofs, fields, mode, laws, par);
    let (ps, pf) = (
        sparse.assembler.pattern().clone(),
        full.assembler.pattern().clone(),
    );
    assert!(ps.nnz() < pf.nnz() * 9 / 10, "{} vs {}", ps.nnz(), pf.nnz());
    let constrain = |p: &mut CoupledProblem<'_>, mu_on: &str| {
        p.constraints = held(
            &mesh,
            &p.dofs,
            &[
                ("left", fields.u, 1, 0.0),
                ("bottom", fields.u, 1, 0.0),
                (mu_on, fields.mu, 0, 150.0),
            ],
        );
        p.loads = vec![(
            mesh.boundary("right").unwrap().to_vec(),
            BoundaryLoad::Exchange {
                rate: 1e-9,
                outside: 2.0 * C0,
            },
        )];
        p.check_setup()
    };
    constrain(&mut sparse, "top").unwrap();
    constrain(&mut full, "top").unwrap();
    let mut x = uniform_state(&mesh, &sparse.dofs, fields, C0);
    for (node, p) in mesh.points.iter().enumerate() {
        let (s, t) = (p[0] / 2e-6, p[1] / 1e-6);
        for comp in 0..2 {
            x[sparse.dofs.node_dof(fields.u, node, comp).unwrap()] = 1e-9 * (s * t + comp as f64);
        }
        if let Ok(d) = sparse.dofs.node_dof(fields.c, node, 0) {
            x[d] = C0 * (1.0 + 0.3 * s * s - 0.2 * t);
        }
        if let Ok(d) = sparse.dofs.node_dof(fields.mu, node, 0) {
            x[d] = 1e3 * (s - t * t);
        }
    }
    let history: Vec<f64> = x.iter().map(|v| -0.7 * v).collect();
    let n = x.len();
    let (mut js, mut jf) = (
        sparse.assembler.build_matrix(),
        full.assembler.build_matrix(),
    );
    let (mut rs, mut rf) = (vec![0.0; n], vec![0.0; n]);
    for p in [&mut sparse, &mut full] {
        p.begin_step(0.0, 20.0, &history);
    }
    sparse.assemble_into(&x, &mut js, &mut rs).unwrap();
    full.assemble_into(&x, &mut jf, &mut rf).unwrap();
    assert_eq!(rs, rf);
    let mut kept = 0;
    for i in 0..n {
        for k in pf.row_ptr[i]..pf.row_ptr[i + 1] {
            let j = pf.col_idx[k];
            match ps.find(i, j) {
                Some(ks) => {
                    assert_eq!(
                        js.values[ks].to_bits(),
                        jf.values[k].to_bits(),
                        "({i}, {j})"
                    );
                    kept += 1;
                }
                None => assert_eq!(jf.values[k], 0.0, "({i}, {j}) left out but not zero"),
            }
        }
    }
    assert_eq!(kept, ps.nnz());
    // A potential on an edge the sparse pattern was not built for.
    match constrain(&mut sparse, "right") {
        Err(CoupledSetupError::PotentialNotDeclared { node }) => {
            assert!(!top[node], "node {node} was declared")
        }
        other => panic!("expected PotentialNotDeclared, got {other:?}"),
    }
}

/// Constraints holding `value` on `component` of `field` along each named boundary.
fn held(
    mesh: &Mesh,
    dofs: &DofMap,
    values: &[(&str, dilata_fem::FieldHandle, usize, f64)],
) -> dilata_fem::Constraints {
    let mut constraints = dilata_fem::Constraints::new(dofs.n_dofs());
    for &(boundary, field, component, value) in values {
        constraints
            .add_boundary(
                mesh,
                dofs,
                BoundaryTarget {
                    boundary,
                    field,
                    component,
                },
                value,
            )
            .unwrap();
    }
    constraints
}

//! Post-processing of the coupled problem (`dilata_physics::coupled_post`): nodal stress and
//! flux against elementary states, volume integrals against exact volumes and energies, and
//! boundary means. The states are written directly into the solution vector (no solve), so
//! these tests check the post-processing alone.

mod common;

use std::f64::consts::PI;

use dilata_fem::dofs::DofMap;
use dilata_fem::GeometryMode;
use dilata_material::chemical::GAS_CONSTANT;
use dilata_material::coupled::CoupledPointLaw;
use dilata_mesh::generate::{
    annulus_sector, ball_octant, cuboid, disc, quarter_disc, rectangle, AnnulusParams, BallParams,
    BoxParams, DiscParams, RectangleParams,
};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{CoupledFields, LawMap};
use dilata_physics::coupled_post::{
    boundary_mean, build_nodal_invariants, coupled_integrals, coupled_integrals_on,
    recover_coupled_nodal, recover_coupled_nodal_on, BoundaryField, CoupledPost, PostThreads,
    ZeroArea, POST_CHUNK_CELLS,
};

// Demo-scale numbers of an insertion host (order of magnitude only, from memory).
const E: f64 = 10e9;
const NU: f64 = 0.3;
const OMEGA: f64 = 3.5e-6;
const D: f64 = 7e-15;
const T: f64 = 298.15;
const C0: f64 = 1000.0;
const DC: f64 = 500.0;

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

fn law(mode: GeometryMode) -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&host());
    if mode == GeometryMode::PlaneStress {
        parts.stiffness = parts.stiffness.plane_stress();
    }
    CoupledPointLaw::new(parts).unwrap()
}

/// A unit-sized rectangle or box (micrometres) of `kind`, distorted inside so that the cells are
/// irregular; in 2D its left edge lies on x = 0 (the axis in axisymmetry).
fn body(kind: CellKind) -> Mesh {
    let (mut mesh, h) = if kind.dim() == 2 {
        let m = rectangle(&RectangleParams {
            origin: [0.0, 0.0],
            lengths: [2e-6, 1e-6],
            n_cells: [4, 3],
            kind,
        })
        .unwrap();
        (m, 1e-6 / 3.0)
    } else {
        let m = cuboid(&BoxParams {
            origin: [0.0; 3],
            lengths: [2e-6, 1e-6, 1e-6],
            n_cells: [3, 2, 2],
            kind,
        })
        .unwrap();
        (m, 0.5e-6)
    };
    common::distort(&mut mesh, h, 0.2);
    mesh
}

/// Solution vector: displacement `u(x)`, concentration `c(x)`, potential `mu(x)` at their nodes.
fn state(
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    u: impl Fn([f64; 3]) -> [f64; 3],
    c: impl Fn([f64; 3]) -> f64,
    mu: impl Fn([f64; 3]) -> f64,
) -> Vec<f64> {
    let mut x = vec![0.0; dofs.n_dofs()];
    let nc = dofs.spec(fields.u).n_components;
    for node in dofs.field_nodes(fields.u) {
        let v = u(mesh.points[node]);
        for k in 0..nc {
            x[dofs.node_dof(fields.u, node, k).unwrap()] = v[k];
        }
    }
    for node in dofs.field_nodes(fields.c) {
        x[dofs.node_dof(fields.c, node, 0).unwrap()] = c(mesh.points[node]);
    }
    for node in dofs.field_nodes(fields.mu) {
        x[dofs.node_dof(fields.mu, node, 0).unwrap()] = mu(mesh.points[node]);
    }
    x
}

const CASES: [(CellKind, GeometryMode); 6] = [
    (CellKind::Tri6, GeometryMode::PlaneStrain),
    (CellKind::Quad8, GeometryMode::PlaneStrain),
    (CellKind::Quad8, GeometryMode::PlaneStress),
    (CellKind::Quad8, GeometryMode::Axisymmetric),
    (CellKind::Hex8, GeometryMode::ThreeD),
    (CellKind::Tet10, GeometryMode::ThreeD),
];

/// Uniform concentration change Δc, eigenstrain ε* = ΩΔc/3: free to expand (u = ε* x, which
/// every element reproduces) the stress is zero, except in plane strain, where the held
/// `ε_zz = 0` gives u = (1 + ν) ε* x in plane, no in-plane stress and σ_zz = −E ε*; fully
/// clamped (u = 0) it is σ = −E Ω Δc / (3(1 − 2ν)) I, and in plane stress (σ_zz = 0, ε_zz free)
/// σ_xx = σ_yy = −E Ω Δc / (3(1 − ν)) (elementary thermoelasticity with αΔT replaced by ε*;
/// Timoshenko & Goodier, Theory of Elasticity, thermal stresses, plane strain; from memory; the
/// rest common practice, no source). Checked at every
/// node, including the nodes on the axis of the axisymmetric model (where the hoop strain is the
/// limit ∂u_r/∂r), to 1e-10 of the clamped stress (round-off).
#[test]
fn nodal_stress_of_uniform_swelling_free_and_clamped() {
    let eps = OMEGA * DC / 3.0;
    let sigma_clamped = -E * OMEGA * DC / (3.0 * (1.0 - 2.0 * NU));
    for (kind, mode) in CASES {
        let mesh = body(kind);
        let (dofs, fields) = common::coupled_dofs(&mesh, kind.order());
        let laws = LawMap::uniform(law(mode), mesh.n_cells());
        let n_axis = mesh.points.iter().filter(|p| p[0] == 0.0).count();
        assert!(n_axis > 0);
        for clamped in [false, true] {
            let x = state(
                &mesh,
                &dofs,
                fields,
                |p| {
                    if clamped {
                        [0.0; 3]
                    } else if mode == GeometryMode::PlaneStrain {
                        // ε_zz = 0 held: the section expands by (1 + ν) ε* in plane.
                        [(1.0 + NU) * eps * p[0], (1.0 + NU) * eps * p[1], 0.0]
                    } else {
                        [eps * p[0], eps * p[1], eps * p[2]]
                    }
                },
                |_| C0 + DC,
                |_| 123.0,
            );
            let post = CoupledPost {
                dofs: &dofs,
                fields,
                mode,
                laws: &laws,
                solution: &x,
            };
            let nodal = recover_coupled_nodal(&mesh, &post).unwrap();
            let expect: [f64; 6] = match (clamped, mode) {
                (false, GeometryMode::PlaneStrain) => [0.0, 0.0, -E * eps, 0.0, 0.0, 0.0],
                (false, _) => [0.0; 6],
                (true, GeometryMode::PlaneStress) => {
                    let s = -E * OMEGA * DC / (3.0 * (1.0 - NU));
                    [s, s, 0.0, 0.0, 0.0, 0.0]
                }
                (true, _) => [sigma_clamped, sigma_clamped, sigma_clamped, 0.0, 0.0, 0.0],
            };
            let mut worst: f64 = 0.0;
            for (node, s) in nodal.stress.iter().enumerate() {
                for k in 0..6 {
                    worst = worst.max((s[k] - expect[k]).abs());
                }
                // Uniform μ: the flux is round-off of the gradient of a constant (μ / h · M ·
                // 1e-12 bounds it, measured 6e-23 mol/(m² s)).
                let bound = 1e-12 * 123.0 / 1e-7 * D * (C0 + DC) / (GAS_CONSTANT * T);
                assert!(
                    nodal.flux[node].iter().all(|j| j.abs() <= bound),
                    "uniform μ gives no flux: {:?}",
                    nodal.flux[node]
                );
            }
            assert!(
                worst <= 1e-10 * sigma_clamped.abs(),
                "{kind} {mode:?} clamped={clamped}: nodal stress off by {worst:e} Pa"
            );
            let inv = build_nodal_invariants(&nodal.stress);
            if clamped && mode != GeometryMode::PlaneStress {
                for i in 0..mesh.n_points() {
                    assert!(
                        (inv.hydrostatic[i] - sigma_clamped).abs() <= 1e-10 * sigma_clamped.abs()
                    );
                    assert!(inv.von_mises[i].abs() <= 1e-6 * sigma_clamped.abs());
                    assert!(
                        (inv.max_principal[i] - sigma_clamped).abs() <= 1e-9 * sigma_clamped.abs()
                    );
                }
            }
        }
    }
}

/// Dilute law, uniform c and a linear potential μ = μ0 + g·x: the flux is
/// `J = −(D c/RT) g` everywhere (dilute mobility, Sofronis & McMeeking 1989 as summarised in
/// /work/shared/references.md; from memory). Exact at every node (to 1e-12 relative).
#[test]
fn nodal_flux_of_linear_potential() {
    let c = 1.7 * C0;
    let g = [3.0e9, -1.5e9, 2.0e9]; // J/(mol m)
    for (kind, mode) in CASES {
        let mesh = body(kind);
        let (dofs, fields) = common::coupled_dofs(&mesh, kind.order());
        let laws = LawMap::uniform(law(mode), mesh.n_cells());
        let dim = mesh.dim;
        let x = state(
            &mesh,
            &dofs,
            fields,
            |_| [0.0; 3],
            |_| c,
            |p| 50.0 + (0..dim).map(|d| g[d] * p[d]).sum::<f64>(),
        );
        let post = CoupledPost {
            dofs: &dofs,
            fields,
            mode,
            laws: &laws,
            solution: &x,
        };
        let nodal = recover_coupled_nodal(&mesh, &post).unwrap();
        let m = D * c / (GAS_CONSTANT * T);
        let scale = m * g[0];
        for (node, j) in nodal.flux.iter().enumerate() {
            for d in 0..3 {
                let expect = if d < dim { -m * g[d] } else { 0.0 };
                assert!(
                    (j[d] - expect).abs() <= 1e-12 * scale,
                    "{kind} {mode:?} node {node} component {d}: J {} vs {expect}",
                    j[d]
                );
            }
        }
    }
}

/// A concentration the law cannot take (c ≤ 0 in the dilute law) is a typed error naming the
/// cell, not NaN output.
#[test]
fn out_of_range_concentration_is_an_error() {
    let mesh = body(CellKind::Quad8);
    let (dofs, fields) = common::coupled_dofs(&mesh, 2);
    let laws = LawMap::uniform(law(GeometryMode::PlaneStrain), mesh.n_cells());
    let x = state(&mesh, &dofs, fields, |_| [0.0; 3], |p| p[0] - 1e-6, |_| 0.0);
    let post = CoupledPost {
        dofs: &dofs,
        fields,
        mode: GeometryMode::PlaneStrain,
        laws: &laws,
        solution: &x,
    };
    let err = recover_coupled_nodal(&mesh, &post).unwrap_err();
    assert!(err.to_string().contains("cell"), "{err}");
    assert!(coupled_integrals(&mesh, &post).is_err());
}

fn volume(mesh: &Mesh, mode: GeometryMode) -> f64 {
    let (dofs, fields) = common::coupled_dofs(mesh, mesh.blocks[0].kind.order());
    let laws = LawMap::uniform(law(mode), mesh.n_cells());
    let x = state(mesh, &dofs, fields, |_| [0.0; 3], |_| C0, |_| 0.0);
    let post = CoupledPost {
        dofs: &dofs,
        fields,
        mode,
        laws: &laws,
        solution: &x,
    };
    coupled_integrals(mesh, &post).unwrap().volume
}

/// Volumes of curved bodies against exact formulas. The boundary is the quadratic isoparametric
/// image of a circle (sphere) through its mid-edge nodes, so the volume is not exact: the
/// quadratic interpolation of an arc of angle θ deviates from it by O(θ³ R), with a sign that
/// changes along the arc, so the area between them is O(θ⁵ R²) per arc and the total relative
/// error O(h⁴) (common practice, no source). The test asserts that order (at least 3.5 from
/// n = 2 to n = 4, h halved) and, as a regression guard, a relative error below 2e-4 at n = 4.
/// Measured when written (relative error at n = 2 / n = 4): disc 2.3e-4 / 1.5e-5, quarter
/// annulus 4.9e-5 / 3.1e-6, half ball 2.4e-4 / 1.7e-5, half shell 7.4e-5 / 4.6e-6, ball octant
/// 1.5e-3 / 9.9e-5, orders 3.86 to 4.00. A wrong weight (e.g. a missing 2πr) fails both checks.
#[test]
fn volumes_of_curved_bodies() {
    let r: f64 = 1.5e-6;
    let (ri, ro): (f64, f64) = (0.5e-6, 1.5e-6);
    type Build = Box<dyn Fn(usize) -> Mesh>;
    let cases: Vec<(&str, GeometryMode, Build, f64)> = vec![
        (
            "disc (area)",
            GeometryMode::PlaneStrain,
            Box::new(move |n: usize| {
                disc(&DiscParams {
                    radius: r,
                    n_cells: n,
                    kind: CellKind::Quad8,
                })
                .unwrap()
            }),
            PI * r * r,
        ),
        (
            "quarter annulus (area)",
            GeometryMode::PlaneStress,
            Box::new(move |n: usize| {
                annulus_sector(&AnnulusParams {
                    inner_radius: ri,
                    outer_radius: ro,
                    angle: PI / 2.0,
                    n_radial: n,
                    n_angular: 2 * n,
                    kind: CellKind::Quad9,
                })
                .unwrap()
            }),
            PI / 4.0 * (ro * ro - ri * ri),
        ),
        (
            "quarter disc about its axis (half ball)",
            GeometryMode::Axisymmetric,
            Box::new(move |n: usize| {
                quarter_disc(&DiscParams {
                    radius: r,
                    n_cells: n,
                    kind: CellKind::Quad8,
                })
                .unwrap()
            }),
            2.0 / 3.0 * PI * r.powi(3),
        ),
        (
            "quarter annulus about its axis (half shell)",
            GeometryMode::Axisymmetric,
            Box::new(move |n: usize| {
                annulus_sector(&AnnulusParams {
                    inner_radius: ri,
                    outer_radius: ro,
                    angle: PI / 2.0,
                    n_radial: n,
                    n_angular: 2 * n,
                    kind: CellKind::Quad8,
                })
                .unwrap()
            }),
            2.0 / 3.0 * PI * (ro.powi(3) - ri.powi(3)),
        ),
        (
            "ball octant",
            GeometryMode::ThreeD,
            Box::new(move |n: usize| {
                ball_octant(&BallParams {
                    radius: r,
                    n_cells: n,
                    kind: CellKind::Hex20,
                })
                .unwrap()
            }),
            PI * r.powi(3) / 6.0,
        ),
    ];
    for (name, mode, build, exact) in cases {
        let coarse = (volume(&build(2), mode) - exact).abs() / exact;
        let fine = (volume(&build(4), mode) - exact).abs() / exact;
        let order = (coarse / fine).log2();
        eprintln!("{name}: relative volume error {coarse:.3e} (n = 2), {fine:.3e} (n = 4), order {order:.2}");
        assert!(
            order >= 3.5,
            "{name}: {coarse:e} -> {fine:e}, order {order} below 4"
        );
        assert!(fine < 2e-4, "{name}: relative error {fine:e}");
    }
}

/// Straight-sided bodies are exact: the volume of a hollow cylinder `π(ro² − ri²)h` (r–z
/// rectangle in axisymmetry, weight 2πr linear in r) and of a box (elementary geometry).
#[test]
fn volumes_of_straight_bodies_are_exact() {
    let (ri, ro, h): (f64, f64, f64) = (0.5e-6, 2e-6, 1e-6);
    let mut tube = rectangle(&RectangleParams {
        origin: [ri, 0.0],
        lengths: [ro - ri, h],
        n_cells: [3, 2],
        kind: CellKind::Quad8,
    })
    .unwrap();
    common::distort(&mut tube, 0.5e-6, 0.2);
    let exact = PI * (ro * ro - ri * ri) * h;
    let v = volume(&tube, GeometryMode::Axisymmetric);
    assert!((v - exact).abs() <= 1e-13 * exact, "{v:e} vs {exact:e}");
    let b = body(CellKind::Tet10);
    let v = volume(&b, GeometryMode::ThreeD);
    assert!((v - 2e-18).abs() <= 1e-13 * 2e-18, "{v:e}");
}

/// Clamped uniform swelling: elastic energy `½ σ:ε_el V` with `ε_el = −(ΩΔc/3) I` and
/// `σ = −3K (ΩΔc/3) I`, i.e. `(9/2) K (ΩΔc/3)² V`; chemical energy of the uniform dilute state
/// `ψ V = (μ0 c + RT c (ln(c/c_ref) − 1)) V` (ideal dilute free energy, docs/theory.md, after
/// Sofronis & McMeeking 1989; from memory); amount `c V`. Uniform fields are integrated exactly:
/// checked to 1e-12 relative, on the tube (axisymmetric) and a box (3D), as well as plane strain.
#[test]
fn energies_and_amount_of_uniform_states() {
    let (ri, ro, h): (f64, f64, f64) = (0.5e-6, 2e-6, 1e-6);
    let eps = OMEGA * DC / 3.0;
    let bulk = E / (3.0 * (1.0 - 2.0 * NU));
    let c = C0 + DC;
    let psi = GAS_CONSTANT * T * c * ((c / C0).ln() - 1.0);
    let tube = rectangle(&RectangleParams {
        origin: [ri, 0.0],
        lengths: [ro - ri, h],
        n_cells: [3, 2],
        kind: CellKind::Quad8,
    })
    .unwrap();
    let cases = [
        (
            tube,
            GeometryMode::Axisymmetric,
            PI * (ro * ro - ri * ri) * h,
        ),
        (body(CellKind::Hex8), GeometryMode::ThreeD, 2e-18),
        (body(CellKind::Tri6), GeometryMode::PlaneStrain, 2e-12),
    ];
    for (mesh, mode, v) in cases {
        let (dofs, fields) = common::coupled_dofs(&mesh, mesh.blocks[0].kind.order());
        let laws = LawMap::uniform(law(mode), mesh.n_cells());
        let x = state(&mesh, &dofs, fields, |_| [0.0; 3], |_| c, |_| 0.0);
        let post = CoupledPost {
            dofs: &dofs,
            fields,
            mode,
            laws: &laws,
            solution: &x,
        };
        let got = coupled_integrals(&mesh, &post).unwrap();
        let elastic = 4.5 * bulk * eps * eps * v;
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-12 * b.abs();
        assert!(
            close(got.volume, v),
            "{mode:?}: volume {:e} vs {v:e}",
            got.volume
        );
        assert!(
            close(got.amount, c * v),
            "{mode:?}: amount {:e}",
            got.amount
        );
        assert!(
            close(got.elastic_energy, elastic),
            "{mode:?}: elastic energy {:e} vs {elastic:e}",
            got.elastic_energy
        );
        assert!(
            close(got.chemical_energy, psi * v),
            "{mode:?}: chemical energy {:e} vs {:e}",
            got.chemical_energy,
            psi * v
        );
    }
}

/// The area-weighted mean of a linear field over a straight boundary is the value at the
/// boundary's centroid (elementary calculus): on the top edge of a rectangle in plane strain,
/// on the top of the tube in axisymmetry (weight 2πr: centroid radius `(2/3)(ro³ − ri³)/(ro² −
/// ri²)`), and on a face of a box. Exact to 1e-13 relative. An empty set is a typed error.
#[test]
fn boundary_mean_of_linear_fields() {
    let (a, b) = (7.0, [2e6, -3e6, 5e5]);
    let lin = move |p: [f64; 3]| a + b[0] * p[0] + b[1] * p[1] + b[2] * p[2];
    let (ri, ro, h): (f64, f64, f64) = (0.5e-6, 2e-6, 1e-6);
    let r_bar = 2.0 / 3.0 * (ro.powi(3) - ri.powi(3)) / (ro * ro - ri * ri);
    let tube = rectangle(&RectangleParams {
        origin: [ri, 0.0],
        lengths: [ro - ri, h],
        n_cells: [3, 2],
        kind: CellKind::Quad8,
    })
    .unwrap();
    let cases = [
        (
            body(CellKind::Quad8),
            GeometryMode::PlaneStrain,
            "top",
            [1e-6, 1e-6, 0.0],
        ),
        (tube, GeometryMode::Axisymmetric, "top", [r_bar, h, 0.0]),
        (
            body(CellKind::Hex8),
            GeometryMode::ThreeD,
            "front",
            [1e-6, 0.5e-6, 1e-6],
        ),
        (
            body(CellKind::Tet10),
            GeometryMode::ThreeD,
            "right",
            [2e-6, 0.5e-6, 0.5e-6],
        ),
    ];
    for (mesh, mode, name, centroid) in cases {
        let (dofs, fields) = common::coupled_dofs(&mesh, mesh.blocks[0].kind.order());
        // Linear c and μ fields; also component 1 of u (quadratic on these meshes).
        let x = state(&mesh, &dofs, fields, |p| [0.0, lin(p), 0.0], lin, lin);
        let facets = mesh.boundary(name).unwrap();
        for (field, component) in [(fields.c, 0), (fields.mu, 0), (fields.u, 1)] {
            let mean = boundary_mean(
                &mesh,
                &BoundaryField {
                    dofs: &dofs,
                    field,
                    component,
                    mode,
                    solution: &x,
                },
                facets,
            )
            .unwrap();
            let expect = lin(centroid);
            assert!(
                (mean - expect).abs() <= 1e-13 * expect.abs(),
                "{mode:?} {name}: mean {mean} vs {expect}"
            );
        }
        let empty = boundary_mean(
            &mesh,
            &BoundaryField {
                dofs: &dofs,
                field: fields.c,
                component: 0,
                mode,
                solution: &x,
            },
            &[],
        );
        assert_eq!(empty, Err(ZeroArea { n_facets: 0 }));
    }
}

/// The cell loops of the post-processing on two threads (chunks of cells combined in cell
/// order) give the same bits as on the calling thread: nodal stress and flux, every integral,
/// and the first out-of-range cell of a bad state. Common practice, no source.
#[test]
fn post_processing_on_two_threads_is_bitwise_the_sequential_one() {
    use dilata_fem::assembly::Assembler;
    use dilata_fem::Parallelism;
    let mut mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [2e-6, 1e-6],
        n_cells: [40, 20],
        kind: CellKind::Quad8,
    })
    .unwrap();
    common::distort(&mut mesh, 1e-6 / 20.0, 0.2);
    assert!(mesh.n_cells() > 3 * POST_CHUNK_CELLS, "several chunks");
    let (dofs, fields) = common::coupled_dofs(&mesh, 2);
    let laws = LawMap::uniform(law(GeometryMode::PlaneStrain), mesh.n_cells());
    let assembler = Assembler::build(&mesh, &dofs, Parallelism::Rayon { threads: 2 });
    let x = state(
        &mesh,
        &dofs,
        fields,
        |p| [1e-3 * p[0] * p[1] / 1e-6, -2e-3 * p[0] + 1e-3 * p[1], 0.0],
        |p| C0 * (1.0 + 0.3 * (p[0] / 2e-6).sin() * (p[1] / 1e-6)),
        |p| 1e3 * (p[0] / 1e-6).powi(2),
    );
    let post = CoupledPost {
        dofs: &dofs,
        fields,
        mode: GeometryMode::PlaneStrain,
        laws: &laws,
        solution: &x,
    };
    let threads = PostThreads::Assembler(&assembler);
    let (one, two) = (
        recover_coupled_nodal(&mesh, &post).unwrap(),
        recover_coupled_nodal_on(&mesh, &post, threads).unwrap(),
    );
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    for (a, b) in one.stress.iter().zip(&two.stress) {
        assert_eq!(bits(a.as_slice()), bits(b.as_slice()));
    }
    for (a, b) in one.flux.iter().zip(&two.flux) {
        assert_eq!(bits(a), bits(b));
    }
    assert!(one.stress.iter().any(|s| s.norm() > 0.0));
    let (one, two) = (
        coupled_integrals(&mesh, &post).unwrap(),
        coupled_integrals_on(&mesh, &post, threads).unwrap(),
    );
    let all = |i: &dilata_physics::coupled_post::CoupledIntegrals| {
        bits(&[
            i.volume,
            i.amount,
            i.elastic_energy,
            i.chemical_energy,
            i.gradient_energy,
            i.gradient_norm,
            i.volume_above_mean,
            i.deformed_volume,
        ])
    };
    assert_eq!(all(&one), all(&two));
    // A concentration below zero from the middle of the body on: the same first cell.
    let bad = state(
        &mesh,
        &dofs,
        fields,
        |_| [0.0; 3],
        |p| C0 * (1.0 - p[0] / 1e-6),
        |_| 0.0,
    );
    let post = CoupledPost {
        solution: &bad,
        ..post
    };
    let e1 = recover_coupled_nodal(&mesh, &post).unwrap_err().to_string();
    let e2 = recover_coupled_nodal_on(&mesh, &post, threads)
        .unwrap_err()
        .to_string();
    assert_eq!(e1, e2);
    let e1 = coupled_integrals(&mesh, &post).unwrap_err().to_string();
    let e2 = coupled_integrals_on(&mesh, &post, threads)
        .unwrap_err()
        .to_string();
    assert_eq!(e1, e2);
    assert!(e1.contains("cell"), "{e1}");
}

//! Equilibrium patch of the coupled model through the whole pipeline (scenario text, driver,
//! recovery): a uniform concentration change Δc from the stress-free concentration, in every
//! geometry mode with linear and quadratic elements.
//!
//! Expected (elementary thermoelasticity with αΔT replaced by ε* = ΩΔc/3; Timoshenko & Goodier,
//! Theory of Elasticity, thermal stresses, from memory; common practice):
//! * free body (symmetry supports only): `u = ε* x` and zero stress in 3D, axisymmetry and plane
//!   stress; in plane strain (ε_zz held at zero) `u = (1 + ν) ε* x` in plane, no in-plane
//!   stress and `σ_zz = −E ε*`;
//! * fully clamped: `u = 0` and `σ = −E ε* /(1 − 2ν)` on the diagonal (3D, axisymmetry, plane
//!   strain), `σ_xx = σ_yy = −E ε*/(1 − ν)` and `σ_zz = 0` in plane stress;
//! * everywhere `μ = μ0 + RT ln(c/c_ref) − Ω σ_h` (the potential of the dilute law under stress).
//!
//! All to round-off: 1e-10 of the clamped stress, of `ε*` times the body size, of `RT`.

use std::path::Path;

use dilata_material::chemical::GAS_CONSTANT;
use dilata_material::elastic::hydrostatic;
use dilata_physics::coupled_post::{recover_coupled_nodal, CoupledPost};
use dilata_run::{build_dofs, build_model, nodal_field};

mod common;

const E: f64 = 10e9;
const NU: f64 = 0.3;
const OMEGA: f64 = 3.5e-6;
const C0: f64 = 1000.0;
const DC: f64 = 200.0;
const T: f64 = 298.15;

fn scenario(geometry: &str, element: &str, clamped: bool) -> String {
    let three_d = geometry == "three_d";
    let shape = if three_d {
        format!("{{ kind = \"box\", size = [2e-6, 1e-6, 1.5e-6], cells = [2, 2, 2], element = \"{element}\" }}")
    } else {
        format!("{{ kind = \"rectangle\", size = [2e-6, 1e-6], cells = [3, 2], element = \"{element}\" }}")
    };
    let mut supports = String::new();
    let faces: &[(&str, &[&str])] = if three_d {
        &[
            ("left", &["u_x"]),
            ("bottom", &["u_y"]),
            ("back", &["u_z"]),
            ("right", &["u_x"]),
            ("top", &["u_y"]),
            ("front", &["u_z"]),
        ]
    } else {
        &[
            ("left", &["u_x"]),
            ("bottom", &["u_y"]),
            ("right", &["u_x"]),
            ("top", &["u_y"]),
        ]
    };
    let all: &[&str] = if three_d {
        &["u_x", "u_y", "u_z"]
    } else {
        &["u_x", "u_y"]
    };
    for (i, (face, comps)) in faces.iter().enumerate() {
        let free_side = i >= faces.len() / 2;
        if free_side && !clamped {
            continue;
        }
        supports.push_str(&format!("\n[[boundary]]\non = \"{face}\"\n"));
        let list: &[&str] = if clamped { all } else { comps };
        for c in list {
            supports.push_str(&format!("{c} = 0.0\n"));
        }
    }
    format!(
        r#"title = "swelling patch"
[body]
geometry = "{geometry}"
shape = {shape}

[[material]]
name = "host"
young_modulus = {E:e}
poisson_ratio = {NU}
partial_molar_volume = {OMEGA:e}
stress_free_concentration = {C0:e}
free_energy = "dilute"
reference_concentration = {C0:e}
temperature = {T}
diffusivity = 1e-14

[initial]
concentration = {c:e}
{supports}
[[stage]]
name = "hold"
duration = 1.0

[time]
fixed_step = 1.0

[output]
fields = false
"#,
        c = C0 + DC
    )
}

#[test]
fn uniform_swelling_is_exact_in_every_mode_and_element() {
    let eps = OMEGA * DC / 3.0;
    let clamped_sigma = -E * eps / (1.0 - 2.0 * NU);
    let rt = GAS_CONSTANT * T;
    let cases: &[(&str, &[&str])] = &[
        ("plane_strain", &["tri3", "quad4", "tri6", "quad8", "quad9"]),
        ("plane_stress", &["tri3", "quad4", "tri6", "quad8", "quad9"]),
        ("axisymmetric", &["tri3", "quad4", "tri6", "quad8", "quad9"]),
        ("three_d", &["tet4", "hex8", "tet10", "hex20", "hex27"]),
    ];
    for (geometry, elements) in cases {
        for element in *elements {
            for clamped in [false, true] {
                let label = format!("{geometry} {element} clamped={clamped}");
                let model = build_model(
                    scenario(geometry, element, clamped),
                    "patch.toml",
                    Path::new("."),
                )
                .unwrap_or_else(|e| panic!("{label}: {e}"));
                let (summary, _dir) =
                    common::run_in_tempdir(&model, 1).unwrap_or_else(|e| panic!("{label}: {e}"));
                let (dofs, fields) = build_dofs(&model);
                let x = &summary.final_solution;
                let mesh = &model.mesh;
                let dim = mesh.dim;
                let u = nodal_field(mesh, &dofs, fields.u, x);
                let c = nodal_field(mesh, &dofs, fields.c, x);
                let mu = nodal_field(mesh, &dofs, fields.mu, x);
                let stress = recover_coupled_nodal(
                    mesh,
                    &CoupledPost {
                        dofs: &dofs,
                        fields,
                        mode: model.mode,
                        laws: &model.laws,
                        solution: x,
                    },
                )
                .unwrap()
                .stress;
                let stretch = match (*geometry, clamped) {
                    (_, true) => 0.0,
                    ("plane_strain", false) => (1.0 + NU) * eps,
                    _ => eps,
                };
                let expected: [f64; 3] = match (*geometry, clamped) {
                    ("plane_strain", false) => [0.0, 0.0, -E * eps],
                    ("plane_stress", true) => {
                        let s = -E * eps / (1.0 - NU);
                        [s, s, 0.0]
                    }
                    (_, true) => [clamped_sigma; 3],
                    _ => [0.0; 3],
                };
                for node in 0..mesh.n_points() {
                    let p = mesh.points[node];
                    for d in 0..dim {
                        let err = (u[node * dim + d] - stretch * p[d]).abs();
                        assert!(
                            err <= 1e-10 * eps * 2e-6,
                            "{label}: u at node {node}: {err:e}"
                        );
                    }
                    assert!(
                        (c[node] - (C0 + DC)).abs() <= 1e-10 * C0,
                        "{label}: c at node {node}: {}",
                        c[node]
                    );
                    let s = &stress[node];
                    for k in 0..3 {
                        assert!(
                            (s[k] - expected[k]).abs() <= 1e-10 * clamped_sigma.abs(),
                            "{label}: sigma[{k}] at node {node}: {} vs {}",
                            s[k],
                            expected[k]
                        );
                    }
                    for k in 3..6 {
                        assert!(s[k].abs() <= 1e-10 * clamped_sigma.abs(), "{label}: shear");
                    }
                    let mu_exact = rt * ((C0 + DC) / C0).ln() - OMEGA * hydrostatic(s);
                    assert!(
                        (mu[node] - mu_exact).abs() <= 1e-10 * rt,
                        "{label}: mu at node {node}: {} vs {mu_exact}",
                        mu[node]
                    );
                }
            }
        }
    }
}

/// The in-plane swelling convention (`plane_strain_swelling = "in_plane"`) through the whole
/// pipeline, plane strain, linear and quadratic cells: free, `u = ε* x` and no stress at all;
/// clamped, `σ_xx = σ_yy = −2(λ + G) ε*` and `σ_zz = −2λ ε*`; everywhere
/// `μ = RT ln(c/c_ref) − (Ω/3)(σ_xx + σ_yy)` (μ_mech = −σ:β with β = (Ω/3)(1, 1, 0); the same
/// elementary thermoelasticity as above with the z expansion removed).
#[test]
fn in_plane_swelling_through_the_pipeline() {
    let eps = OMEGA * DC / 3.0;
    let material = dilata_material::elastic::Isotropic::new(E, NU).unwrap();
    let (lambda, g) = (material.lambda(), material.shear());
    let rt = GAS_CONSTANT * T;
    for element in ["tri3", "quad8"] {
        for clamped in [false, true] {
            let label = format!("in-plane {element} clamped={clamped}");
            let text = scenario("plane_strain", element, clamped).replacen(
                "stress_free_concentration",
                "plane_strain_swelling = \"in_plane\"\nstress_free_concentration",
                1,
            );
            let model = build_model(text, "patch.toml", Path::new(".")).unwrap();
            let (summary, _dir) =
                common::run_in_tempdir(&model, 1).unwrap_or_else(|e| panic!("{label}: {e}"));
            let (dofs, fields) = build_dofs(&model);
            let x = &summary.final_solution;
            let mesh = &model.mesh;
            let u = nodal_field(mesh, &dofs, fields.u, x);
            let mu = nodal_field(mesh, &dofs, fields.mu, x);
            let stress = recover_coupled_nodal(
                mesh,
                &CoupledPost {
                    dofs: &dofs,
                    fields,
                    mode: model.mode,
                    laws: &model.laws,
                    solution: x,
                },
            )
            .unwrap()
            .stress;
            let (stretch, expected) = if clamped {
                let s = -2.0 * (lambda + g) * eps;
                (0.0, [s, s, -2.0 * lambda * eps])
            } else {
                (eps, [0.0; 3])
            };
            let scale = 2.0 * (lambda + g) * eps;
            for node in 0..mesh.n_points() {
                let p = mesh.points[node];
                for d in 0..2 {
                    let err = (u[node * 2 + d] - stretch * p[d]).abs();
                    assert!(
                        err <= 1e-10 * eps * 2e-6,
                        "{label}: u at node {node}: {err:e}"
                    );
                }
                let s = &stress[node];
                for k in 0..3 {
                    assert!(
                        (s[k] - expected[k]).abs() <= 1e-10 * scale,
                        "{label}: sigma[{k}] at node {node}: {} vs {}",
                        s[k],
                        expected[k]
                    );
                }
                let mu_exact = rt * ((C0 + DC) / C0).ln() - OMEGA / 3.0 * (s[0] + s[1]);
                assert!(
                    (mu[node] - mu_exact).abs() <= 1e-10 * rt,
                    "{label}: mu at node {node}: {} vs {mu_exact}",
                    mu[node]
                );
            }
        }
    }
}

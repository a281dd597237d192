//! Polymer gels in finite strain, run through the driver of `dilata run` (release mode:
//! `cargo test --release --test gel_swelling`): free swelling in a solvent and a layer bonded to
//! a rigid substrate, both run from a swollen reference state to equilibrium with the bath, and
//! compared with the closed-form equilibria of Hong, Zhao, Zhou & Suo (J. Mech. Phys. Solids 56
//! (2008) 1779, §3) and Hong, Liu & Suo (Int. J. Solids Struct. 46 (2009) 3282, §4); section,
//! equation and page numbers from memory, the formulas derived again in docs/theory.md §14.
//!
//! Free energy per dry volume (Hong et al. 2008, eq. 2.6 with molecular incompressibility):
//! `W = ½ G (F:F − 3 − 2 ln J) + (RT/Ω)[(J − 1) ln(1 − 1/J) + χ (1 − 1/J)]`, `G = N k T`,
//! `Nv = G Ω / RT`. The bath's chemical potential is 0 (pure solvent).

use dilata_material::chemical::GAS_CONSTANT;
use dilata_physics::coupled_post::{recover_coupled_nodal, CoupledPost};
use dilata_run::{build_dofs, nodal_field, Model, RunSummary};

mod common;

use common::gel::{bonded_stress, bonded_stretch, free_potential_over_rt, free_stretch};
use common::{column, history, run_text};

const T: f64 = 298.15;
/// Molar volume of water, m³/mol (common practice, no source).
const OMEGA: f64 = 1.8e-5;

fn rt() -> f64 {
    GAS_CONSTANT * T
}

/// Chemical potential (J/mol) of free swelling at stretch λ from dry: the potential of the
/// stress-free reference state.
fn free_potential(nv: f64, chi: f64, l: f64) -> f64 {
    rt() * free_potential_over_rt(nv, chi, l)
}

/// A gel material and a bath potential ramped from the reference state's potential to 0 over
/// `ramp` seconds (a sudden jump at the surface would ask an infinite rate of swelling there).
struct GelCase {
    nv: f64,
    chi: f64,
    l0: f64,
}

impl GelCase {
    fn shear_modulus(&self) -> f64 {
        self.nv * rt() / OMEGA
    }

    fn material(&self) -> String {
        format!(
            r#"
[[material]]
name = "gel"
free_energy = "gel"
shear_modulus = {g:.17e}
solvent_molar_volume = {OMEGA:e}
chi = {chi}
temperature = {T}
diffusivity = 1.0e-9
reference_stretch = {l0}
"#,
            g = self.shear_modulus(),
            chi = self.chi,
            l0 = self.l0
        )
    }

    fn bath(&self, boundary: &str, ramp: f64) -> String {
        let mu0 = free_potential(self.nv, self.chi, self.l0);
        format!(
            r#"
[[stage.boundary]]
on = "{boundary}"
mu = {{ time = [0.0, {ramp:e}], value = [{mu0:.17e}, 0.0] }}
"#
        )
    }
}

fn run_gel(body: &str, case: &GelCase, supports: &str, baths: &[&str]) -> (Model, RunSummary) {
    let baths: String = baths.iter().map(|b| case.bath(b, 2000.0)).collect();
    let text = format!(
        r#"
title = "gel to equilibrium with its bath"
{body}
{material}
{supports}
[[stage]]
name = "soak"
duration = 1.0e9
{baths}
[time]
scheme = "bdf2"
tolerance = 1.0e-4
[output]
fields = false
"#,
        material = case.material()
    );
    let (model, summary, dir) = run_text(&text);
    // Mass balance of the whole run (history column, mol): round-off of the amount.
    let rows = history(dir.path());
    let amount = column(&rows, "amount_mol");
    let balance = column(&rows, "balance_error_mol");
    let worst = balance.iter().fold(0.0f64, |m, b| m.max(b.abs()));
    let last = *amount.last().unwrap();
    assert!(
        worst < 1e-9 * last,
        "mass balance error {worst:e} of {last:e} mol"
    );
    (model, summary)
}

/// Nodal displacement components and potential of the final state.
fn final_fields(model: &Model, summary: &RunSummary) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let (dofs, fields) = build_dofs(model);
    let x = &summary.final_solution;
    (
        nodal_field(&model.mesh, &dofs, fields.u, x),
        nodal_field(&model.mesh, &dofs, fields.c, x),
        nodal_field(&model.mesh, &dofs, fields.mu, x),
    )
}

// Acceptance item 1 of the finite-strain issue: free swelling to equilibrium with a pure
// solvent gives the isotropic stretch of Hong, Zhao, Zhou & Suo (2008, eq. 3.3) to 1e-6
// relative, for several (Nv, χ), in axisymmetry (a cylinder: stretch from the radial and axial
// displacements of its corner) and in 3D (a cube octant). Also item 6: μ uniform at
// equilibrium and the mass balance (in `run_gel`).
#[test]
fn free_swelling_matches_the_equilibrium_stretch() {
    let cases = [
        (1e-3, 0.2, "axisymmetric"),
        (1e-2, 0.5, "axisymmetric"),
        (5e-2, 0.8, "axisymmetric"),
        (1e-2, 0.4, "three_d"),
    ];
    for (nv, chi, geometry) in cases {
        let lambda = free_stretch(nv, chi);
        let case = GelCase {
            nv,
            chi,
            l0: 1.0 + 0.6 * (lambda - 1.0),
        };
        let side = 1.0e-3;
        let (body, supports, baths): (String, &str, &[&str]) = if geometry == "three_d" {
            (
                format!(
                    r#"[body]
geometry = "three_d"
strain = "finite"
shape = {{ kind = "box", size = [{side:e}, {side:e}, {side:e}], cells = [2, 2, 2], element = "hex20" }}"#
                ),
                r#"
[[boundary]]
on = "left"
symmetry = true
[[boundary]]
on = "bottom"
symmetry = true
[[boundary]]
on = "back"
symmetry = true
"#,
                &["right", "top", "front"],
            )
        } else {
            (
                format!(
                    r#"[body]
geometry = "axisymmetric"
strain = "finite"
shape = {{ kind = "rectangle", size = [{side:e}, {side:e}], cells = [3, 3], element = "quad8" }}"#
                ),
                r#"
[[boundary]]
on = "left"
symmetry = true
[[boundary]]
on = "bottom"
symmetry = true
"#,
                &["right", "top"],
            )
        };
        let (model, summary) = run_gel(&body, &case, supports, baths);
        let (u, _c, mu) = final_fields(&model, &summary);
        let dim = model.mesh.dim;
        // The far corner: every coordinate equal to `side`.
        let corner = model
            .mesh
            .points
            .iter()
            .position(|p| (0..dim).all(|d| (p[d] - side).abs() < 1e-12))
            .unwrap();
        for d in 0..dim {
            let stretch = case.l0 * (1.0 + u[corner * dim + d] / side);
            let rel = (stretch - lambda) / lambda;
            println!("{geometry} Nv {nv} χ {chi}: stretch {stretch:.12} along {d}, root {lambda:.12} (rel {rel:.2e})");
            assert!(rel.abs() < 1e-6, "stretch {stretch} vs {lambda}");
        }
        let worst_mu = mu.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!(
            worst_mu < 1e-8 * rt(),
            "μ not uniform at 0: {worst_mu:e} J/mol"
        );
    }
}

// Acceptance item 2 of the finite-strain issue: a layer bonded to a rigid substrate (bottom
// fixed, sides sliding: a homogeneous column, free of the creasing of Kang & Huang, J. Mech.
// Phys. Solids 58 (2010) 1582) swells only through its thickness; the stretch and the in-plane
// stress match the laterally constrained equilibrium of Hong, Liu & Suo (2009), generalised to a
// reference stretch λ0 (see `bonded_stretch`, `bonded_stress`), to 1e-6 relative.
#[test]
fn bonded_layer_matches_the_constrained_equilibrium() {
    for (nv, chi, l0) in [(1e-2, 0.5, 1.15), (2e-3, 0.3, 1.05)] {
        let case = GelCase { nv, chi, l0 };
        let (w, h) = (0.5e-3, 1.0e-3);
        let body = format!(
            r#"[body]
geometry = "plane_strain"
strain = "finite"
shape = {{ kind = "rectangle", size = [{w:e}, {h:e}], cells = [2, 4], element = "quad9" }}"#
        );
        let supports = r#"
[[boundary]]
on = "bottom"
u_x = 0.0
u_y = 0.0
[[boundary]]
on = "left"
symmetry = true
[[boundary]]
on = "right"
symmetry = true
"#;
        let (model, summary) = run_gel(&body, &case, supports, &["top"]);
        let lt = bonded_stretch(nv, chi, l0);
        let (u, _c, _mu) = final_fields(&model, &summary);
        let top = model
            .mesh
            .points
            .iter()
            .position(|p| (p[1] - h).abs() < 1e-12 && p[0].abs() < 1e-12)
            .unwrap();
        let stretch = l0 * (1.0 + u[top * 2 + 1] / h);
        let rel = (stretch - lt) / lt;
        println!("bonded Nv {nv} χ {chi} λ0 {l0}: thickness stretch {stretch:.12}, root {lt:.12} (rel {rel:.2e})");
        assert!(rel.abs() < 1e-6, "thickness stretch {stretch} vs {lt}");
        // In-plane Cauchy stress, recovered at every node.
        let (dofs, fields) = build_dofs(&model);
        let nodal = recover_coupled_nodal(
            &model.mesh,
            &CoupledPost {
                dofs: &dofs,
                fields,
                mode: model.mode,
                laws: &model.laws,
                solution: &summary.final_solution,
            },
        )
        .unwrap();
        let expected = bonded_stress(case.shear_modulus(), l0, lt);
        for s in &nodal.stress {
            for (k, name) in [(0, "xx"), (2, "zz")] {
                let rel = (s[k] - expected) / expected;
                assert!(rel.abs() < 1e-6, "σ_{name} {} vs {expected}", s[k]);
            }
            assert!(s[1].abs() < 1e-6 * expected.abs(), "σ_yy {}", s[1]);
        }
        println!(
            "  in-plane stress {:.6e} Pa, closed form {expected:.6e} Pa",
            nodal.stress[0][0]
        );
    }
}

// A state the law cannot take is a rejected step, never a crash: a coarse gel dried fast from
// a corner (bath potential ramped to −3000 J/mol in 100 s) reaches states whose deformation,
// extrapolated to a corner node, is below the dry volume of the network. Those steps are cut
// and retried; when the step falls below its minimum the run stops with a message naming the
// law and the cell, and keeps the history written so far (the behaviour required of every
// model, docs/theory.md §13; common practice, no source).
#[test]
fn steps_leaving_the_gel_range_are_cut_then_the_run_stops_cleanly() {
    let case = GelCase {
        nv: 1e5 * OMEGA / rt(),
        chi: 0.4,
        l0: 1.5,
    };
    let mu0 = free_potential(case.nv, case.chi, case.l0);
    let text = format!(
        r#"
[body]
geometry = "plane_strain"
strain = "finite"
shape = {{ kind = "rectangle", size = [1.0e-3, 1.0e-3], cells = [2, 2], element = "quad8" }}
{material}
[[boundary]]
on = "left"
symmetry = true
[[boundary]]
on = "bottom"
symmetry = true
[[stage]]
name = "dry"
duration = 1000.0
[[stage.boundary]]
on = "top"
mu = {{ time = [0.0, 100.0], value = [{mu0:.17e}, -3000.0] }}
[[stage.boundary]]
on = "right"
mu = {{ time = [0.0, 100.0], value = [{mu0:.17e}, -3000.0] }}
[time]
first_step = 100.0
[output]
fields = false
"#,
        material = case.material()
    );
    let model = dilata_run::build_model(text, "dry.toml", std::path::Path::new(".")).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let result = dilata_run::run(
        &model,
        &dilata_run::RunOptions {
            out: dir.path().to_path_buf(),
            threads: Some(1),
        },
        &mut |_| {},
    );
    match result {
        Err(dilata_run::RunError::Stalled { message, time, .. }) => {
            assert!(
                message.contains("gel mixing energy") && message.contains("cell "),
                "{message}"
            );
            assert!(time > 0.0);
        }
        other => panic!("expected a stalled run, got {other:?}"),
    }
    let log = std::fs::read_to_string(dir.path().join("run.log")).unwrap();
    assert!(
        log.contains("rejected and retried smaller: cell ")
            && log.contains("at its local node")
            && log.contains("below its bound 1"),
        "{log}"
    );
    // Accepted steps before the stop are kept.
    assert!(history(dir.path()).len() > 2);
}

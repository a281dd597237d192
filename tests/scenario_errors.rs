//! Bad scenario files: every mistake is reported before computing, with the file, line and column
//! of the value at fault and what was expected (issue acceptance: "each bad-input case has a test
//! that checks the message"). The base scenario is valid; each case changes one thing.

use std::path::Path;

use dilata_run::{build_model, check_model, RunError};

const BASE: &str = r#"title = "slab"
[body]
geometry = "plane_strain"
shape = { kind = "rectangle", size = [1e-3, 2e-4], cells = [6, 2], element = "quad4" }

[[body.zone]]
name = "skin"
min = [0.0, 0.0]
max = [2e-4, 2e-4]

[[material]]
name = "host"
young_modulus = 10e9
poisson_ratio = 0.3
partial_molar_volume = 3e-6
reference_concentration = 100.0
diffusivity = 1e-12

[initial]
concentration = 100.0

[[boundary]]
on = "left"
u_x = 0.0

[[boundary]]
on = "bottom"
u_y = 0.0

[[stage]]
name = "soak"
duration = 10.0

[[stage.boundary]]
on = "right"
c = 200.0
"#;

fn error_of(text: &str) -> String {
    match build_model(text.to_string(), "case.toml", Path::new(".")) {
        Ok(model) => match check_model(&model) {
            Ok(()) => panic!("scenario was accepted:\n{text}"),
            Err(e) => e.to_string(),
        },
        Err(e) => e.to_string(),
    }
}

/// Replace the first occurrence of `from` (which must exist) in the base scenario.
fn with(from: &str, to: &str) -> String {
    assert!(BASE.contains(from), "{from}");
    BASE.replacen(from, to, 1)
}

/// 1-based line of the first occurrence of `needle` in `text`.
fn line_of(text: &str, needle: &str) -> usize {
    text[..text.find(needle).expect(needle)]
        .matches('\n')
        .count()
        + 1
}

#[test]
fn the_base_scenario_is_valid() {
    let model = build_model(BASE.to_string(), "case.toml", Path::new(".")).unwrap();
    check_model(&model).unwrap();
    assert_eq!(model.stages.len(), 1);
}

#[test]
fn unknown_key_names_line_column_and_valid_keys() {
    let text = with("young_modulus = 10e9", "youngs_modulus = 10e9");
    let e = error_of(&text);
    let line = line_of(&text, "youngs_modulus");
    assert!(e.starts_with(&format!("case.toml:{line}:1:")), "{e}");
    assert!(
        e.contains("youngs_modulus") && e.contains("young_modulus"),
        "{e}"
    );
}

#[test]
fn wrong_type_is_located() {
    let text = with("duration = 10.0", "duration = \"long\"");
    let e = error_of(&text);
    let line = line_of(&text, "\"long\"");
    assert!(e.starts_with(&format!("case.toml:{line}:12:")), "{e}");
    assert!(e.contains("invalid type"), "{e}");
}

#[test]
fn syntax_error_is_located() {
    let text = with("name = \"soak\"", "name = \"soak");
    let e = error_of(&text);
    let line = line_of(&text, "\"soak");
    assert!(e.starts_with(&format!("case.toml:{line}:")), "{e}");
}

#[test]
fn unknown_boundary_lists_the_boundaries() {
    let text = with("on = \"right\"", "on = \"rigth\"");
    let e = error_of(&text);
    let line = line_of(&text, "\"rigth\"");
    assert!(e.starts_with(&format!("case.toml:{line}:6:")), "{e}");
    assert!(e.contains("unknown boundary 'rigth'"), "{e}");
    assert!(e.contains("bottom, left, right, top"), "{e}");
}

#[test]
fn unknown_zone_lists_the_zones() {
    let text = with("name = \"host\"", "name = \"host\"\nzones = [\"skn\"]");
    let e = error_of(&text);
    assert!(
        e.contains("unknown zone 'skn'; the zones are: domain, skin"),
        "{e}"
    );
    let line = line_of(&text, "\"skn\"");
    assert!(e.starts_with(&format!("case.toml:{line}:")), "{e}");
}

#[test]
fn out_of_range_material_value_names_the_material() {
    let e = error_of(&with("poisson_ratio = 0.3", "poisson_ratio = 0.6"));
    assert!(e.contains("material 'host'"), "{e}");
    assert!(e.to_lowercase().contains("poisson"), "{e}");
    // The material table's header line.
    let line = line_of(BASE, "[[material]]");
    assert!(e.starts_with(&format!("case.toml:{line}:")), "{e}");
}

#[test]
fn non_positive_duration_is_refused() {
    let e = error_of(&with("duration = 10.0", "duration = -1.0"));
    assert!(
        e.contains("stage 'soak'") && e.contains("must be positive"),
        "{e}"
    );
}

#[test]
fn two_species_conditions_on_one_boundary_are_refused() {
    let e = error_of(&with("c = 200.0", "c = 200.0\ninward_flux = 1e-6"));
    assert!(e.contains("at most one species condition"), "{e}");
    assert!(e.contains("c, inward_flux"), "{e}");
}

#[test]
fn a_stage_may_not_repeat_a_top_level_condition() {
    let e = error_of(&with(
        "c = 200.0",
        "c = 200.0\n\n[[stage.boundary]]\non = \"left\"\nu_x = 1e-9",
    ));
    assert!(e.contains("already has a condition on u_x"), "{e}");
}

#[test]
fn formula_with_unknown_variable_is_located() {
    let text = with(
        "[initial]\nconcentration = 100.0",
        "[initial]\nconcentration = \"100 + 5*t\"",
    );
    let e = error_of(&text);
    let line = line_of(&text, "\"100 + 5*t\"");
    assert!(e.starts_with(&format!("case.toml:{line}:")), "{e}");
    assert!(e.contains("unknown variable 't'"), "{e}");
}

#[test]
fn third_displacement_component_in_2d_is_refused() {
    let e = error_of(&with("u_y = 0.0", "u_z = 0.0"));
    assert!(e.contains("u_z does not exist in a 2D body"), "{e}");
}

#[test]
fn time_table_lengths_must_match() {
    let e = error_of(&with(
        "c = 200.0",
        "c = { time = [0.0, 5.0], value = [100.0] }",
    ));
    assert!(e.contains("as many values as times"), "{e}");
}

#[test]
fn prescribed_potential_needs_equal_orders() {
    let text = with("c = 200.0", "mu = 100.0").replacen(
        "[[material]]",
        "[orders]\nu = 1\nc = 1\nmu = 1\n\n[[material]]",
        1,
    );
    // Equal orders: accepted.
    build_model(text.clone(), "case.toml", Path::new(".")).unwrap();
    let quadratic = text
        .replacen("element = \"quad4\"", "element = \"quad8\"", 1)
        .replacen("mu = 1\n", "mu = 2\n", 1);
    let e = error_of(&quadratic);
    assert!(e.contains("equal orders of c and mu"), "{e}");
}

#[test]
fn missing_supports_list_the_free_rigid_modes() {
    let text = with("on = \"bottom\"\nu_y = 0.0", "on = \"bottom\"\nc = 100.0");
    let e = error_of(&text);
    assert!(e.contains("rigid-body modes free"), "{e}");
    assert!(e.contains("body.rigid_modes = \"pin\""), "{e}");
    // With pinning requested the same scenario checks.
    let pinned = text.replacen("[[body.zone]]", "rigid_modes = \"pin\"\n\n[[body.zone]]", 1);
    let model = build_model(pinned, "case.toml", Path::new(".")).unwrap();
    check_model(&model).unwrap();
}

#[test]
fn missing_mesh_file_names_the_file() {
    let text = with(
        "shape = { kind = \"rectangle\", size = [1e-3, 2e-4], cells = [6, 2], element = \"quad4\" }",
        "mesh = \"no-such-file.msh\"",
    );
    let e = error_of(&text);
    assert!(e.contains("no-such-file.msh"), "{e}");
}

#[test]
fn unreadable_scenario_file_is_reported() {
    let e = dilata_run::load_model(Path::new("/no/such/scenario.toml"))
        .err()
        .expect("missing file");
    assert!(matches!(e, RunError::Read { .. }), "{e}");
    assert!(e.to_string().contains("/no/such/scenario.toml"), "{e}");
}

#[test]
fn a_generated_body_of_absurd_size_is_refused_before_meshing() {
    let e = error_of(&with("cells = [6, 2]", "cells = [200000, 60000]"));
    assert!(e.starts_with("case.toml:4:9:"), "{e}");
    assert!(
        e.contains("a generated body of 12000000000 cells") && e.contains("at most 10000000"),
        "{e}"
    );
}

/// The cell counts behind the size limit agree with what the generators make.
#[test]
fn generated_cell_counts_match_the_generators() {
    let shapes = [
        (
            "plane_strain",
            r#"{ kind = "rectangle", size = [1.0, 1.0], cells = [3, 2], element = "tri3" }"#,
        ),
        (
            "plane_strain",
            r#"{ kind = "quarter_disc", radius = 1.0, cells = 3, element = "quad4" }"#,
        ),
        (
            "plane_strain",
            r#"{ kind = "disc", radius = 1.0, cells = 2, element = "quad4" }"#,
        ),
        (
            "plane_strain",
            r#"{ kind = "annulus_sector", inner_radius = 1.0, outer_radius = 2.0, angle_degrees = 90.0, cells = [3, 4], element = "quad4" }"#,
        ),
        (
            "plane_strain",
            r#"{ kind = "notched_plate", width = 2.0, height = 2.0, radius = 0.5, cells = [3, 2], element = "quad4" }"#,
        ),
        (
            "three_d",
            r#"{ kind = "box", size = [1.0, 1.0, 1.0], cells = [2, 2, 1], element = "tet4" }"#,
        ),
        (
            "three_d",
            r#"{ kind = "ball_octant", radius = 1.0, cells = 2, element = "hex8" }"#,
        ),
        (
            "three_d",
            r#"{ kind = "shell_octant", inner_radius = 1.0, outer_radius = 2.0, cells = [2, 3], element = "hex8" }"#,
        ),
        (
            "plane_strain",
            r#"{ kind = "inclusion_quarter_disc", inclusion_radius = 1.0, radius = 5.0, cells = [3, 4], grading = 2.0, element = "quad8" }"#,
        ),
        (
            "three_d",
            r#"{ kind = "inclusion_ball_octant", inclusion_radius = 1.0, radius = 5.0, cells = [2, 3], element = "hex8" }"#,
        ),
    ];
    for (geometry, shape) in shapes {
        let text = format!(
            "[body]\ngeometry = \"{geometry}\"\nshape = {shape}\n\
             [[material]]\nname = \"m\"\nyoung_modulus = 1e9\npoisson_ratio = 0.3\n\
             partial_molar_volume = 1e-6\nreference_concentration = 1.0\ndiffusivity = 1e-12\n\
             [initial]\nconcentration = 1.0\n[[stage]]\nname = \"s\"\nduration = 1.0\n"
        );
        let model = build_model(text.clone(), "count.toml", Path::new("."))
            .unwrap_or_else(|e| panic!("{shape}: {e}"));
        let expected = dilata_io::scenario::generated_cells(
            model.scenario.body.shape.as_ref().unwrap().get_ref(),
        );
        assert_eq!(model.mesh.n_cells() as u128, expected, "{shape}");
    }
}

/// The in-plane swelling convention is a plane-strain option: accepted there (and it drops the
/// out-of-plane swelling entries), refused in other geometry modes with the material named.
#[test]
fn in_plane_swelling_needs_plane_strain() {
    let text = with(
        "partial_molar_volume = 3e-6",
        "partial_molar_volume = 3e-6\nplane_strain_swelling = \"in_plane\"",
    );
    let model = build_model(text.clone(), "case.toml", Path::new(".")).unwrap();
    let beta = model.laws.laws()[0].parts().swelling.expansion();
    assert!((beta[0] - 1e-6).abs() < 1e-20 && (beta[1] - 1e-6).abs() < 1e-20);
    assert_eq!((beta[2], beta[4], beta[5]), (0.0, 0.0, 0.0));
    let e = error_of(&text.replace("\"plane_strain\"", "\"plane_stress\""));
    assert!(e.contains("material 'host'"), "{e}");
    assert!(e.contains("plane_strain_swelling"), "{e}");
    let line = line_of(BASE, "[[material]]");
    assert!(e.starts_with(&format!("case.toml:{line}:")), "{e}");
    let e = error_of(&with(
        "partial_molar_volume = 3e-6",
        "partial_molar_volume = 3e-6\nplane_strain_swelling = \"sideways\"",
    ));
    assert!(e.contains("in_plane") && e.contains("all_axes"), "{e}");
}

/// Phase-separation keys: the double well needs both of its parameters and refuses the
/// lattice's interaction; well keys without the double well; a body without mechanics refuses
/// elastic and swelling keys, displacement conditions and a stress stop rule; noise needs a
/// non-negative amplitude; an indefinite gradient-energy tensor is refused. Each message is
/// located in the file (checked for the first and for the noise: `case.toml:21:9`).
#[test]
fn phase_separation_keys_are_checked() {
    let well = |extra: &str| {
        with(
            "diffusivity = 1e-12\n",
            &format!("diffusivity = 1e-12\nfree_energy = \"double_well\"\nmobility = \"dilute\"\n{extra}"),
        )
    };
    let e = error_of(&well("well_height = 1.0\n"));
    assert!(
        e.contains("case.toml:") && e.contains("needs well_concentrations"),
        "{e}"
    );
    let e = error_of(&well("well_concentrations = [0.2, 0.8]\n"));
    assert!(e.contains("needs well_height"), "{e}");
    let e = error_of(&well(
        "well_height = 1.0\nwell_concentrations = [0.8, 0.2]\n",
    ));
    assert!(e.contains("c_b - c_a must be positive"), "{e}");
    let e = error_of(&with(
        "diffusivity = 1e-12\n",
        "diffusivity = 1e-12\nwell_height = 1.0\n",
    ));
    assert!(e.contains("need free_energy = \"double_well\""), "{e}");
    let e = error_of(&with(
        "diffusivity = 1e-12\n",
        "diffusivity = 1e-12\ngradient_energy = [[1.0, 0.0, 0.0], [0.0, -1.0, 0.0], [0.0, 0.0, 1.0]]\n",
    ));
    assert!(e.contains("positive semi-definite"), "{e}");
    let e = error_of(&with(
        "[initial]\nconcentration = 100.0\n",
        "[initial]\nconcentration = 100.0\nnoise = { amplitude = -1.0, seed = 3 }\n",
    ));
    assert!(
        e.contains("case.toml:21:9:") && e.contains("non-negative"),
        "{e}"
    );
    // Without mechanics.
    let no_mech = with(
        "element = \"quad4\" }\n",
        "element = \"quad4\" }\nmechanics = false\n",
    );
    let e = error_of(&no_mech);
    assert!(
        e.contains("young_modulus, poisson_ratio, partial_molar_volume have no effect"),
        "{e}"
    );
    let bare = no_mech
        .replace("young_modulus = 10e9\n", "")
        .replace("poisson_ratio = 0.3\n", "")
        .replace("partial_molar_volume = 3e-6\n", "");
    let e = error_of(&bare);
    assert!(
        e.contains("boundary 'left': u_x need a displacement field"),
        "{e}"
    );
    let free = bare
        .replace("[[boundary]]\non = \"left\"\nu_x = 0.0\n", "")
        .replace("[[boundary]]\non = \"bottom\"\nu_y = 0.0\n", "");
    let stop = free.replace(
        "duration = 10.0\n",
        "duration = 10.0\nstop = { when = \"peak_hydrostatic_stress\", value = 1e6 }\n",
    );
    let e = error_of(&stop);
    assert!(e.contains("needs body.mechanics = true"), "{e}");
    // And the bare body without mechanics is accepted.
    let model = build_model(free, "case.toml", Path::new(".")).unwrap();
    check_model(&model).unwrap();
}

/// Finite-strain keys: a gel needs finite strain, its own keys only, no `[initial]`, quadratic
/// cells with lower-order c and mu; finite strain refuses plane stress, bodies without
/// mechanics, periodic bodies, a stiffness tensor, an anisotropic mobility, and a host without
/// `[initial]`. Each message names the material or key and where it is.
#[test]
fn finite_strain_keys_are_checked() {
    let finite = |text: &str| {
        text.replacen(
            "element = \"quad4\" }\n",
            "element = \"quad8\" }\nstrain = \"finite\"\n",
            1,
        )
    };
    let gel_material = "[[material]]\nname = \"gel\"\nfree_energy = \"gel\"\nshear_modulus = 1e5\nsolvent_molar_volume = 1.8e-5\nchi = 0.4\ndiffusivity = 1e-9\nreference_stretch = 1.5\n";
    let host_block = "[[material]]\nname = \"host\"\nyoung_modulus = 10e9\npoisson_ratio = 0.3\npartial_molar_volume = 3e-6\nreference_concentration = 100.0\ndiffusivity = 1e-12\n";
    let gel = finite(&BASE.replacen(host_block, gel_material, 1))
        .replacen("[initial]\nconcentration = 100.0\n", "", 1)
        .replacen("c = 200.0", "mu = 0.0", 1);
    // The gel scenario itself is valid.
    build_model(gel.clone(), "case.toml", Path::new(".")).unwrap();
    // Gel in small strain.
    let e = error_of(&gel.replacen("strain = \"finite\"\n", "", 1));
    assert!(
        e.contains("material 'gel'") && e.contains("needs body.strain = \"finite\""),
        "{e}"
    );
    // Gel with a key of another law.
    let e = error_of(&gel.replacen("chi = 0.4\n", "chi = 0.4\npartial_molar_volume = 3e-6\n", 1));
    assert!(
        e.contains("partial_molar_volume do not apply to free_energy = \"gel\""),
        "{e}"
    );
    // Gel key missing.
    let e = error_of(&gel.replacen("reference_stretch = 1.5\n", "", 1));
    assert!(e.contains("needs reference_stretch"), "{e}");
    // Reference stretch at or below one.
    let e = error_of(&gel.replacen("reference_stretch = 1.5", "reference_stretch = 0.9", 1));
    assert!(
        e.contains("reference stretch minus one must be positive"),
        "{e}"
    );
    // Gel keys on a host.
    let e = error_of(&finite(BASE).replacen(
        "diffusivity = 1e-12\n",
        "diffusivity = 1e-12\nchi = 0.3\n",
        1,
    ));
    assert!(e.contains("chi belong to free_energy = \"gel\""), "{e}");
    // A gel with [initial].
    let e = error_of(&gel.replacen(
        "[[boundary]]",
        "[initial]\nconcentration = 100.0\n\n[[boundary]]",
        1,
    ));
    assert!(
        e.contains("remove [initial]") && e.contains("case.toml:"),
        "{e}"
    );
    // A host without [initial].
    let e = error_of(&finite(BASE).replacen("[initial]\nconcentration = 100.0\n", "", 1));
    assert!(e.contains("no [initial] table"), "{e}");
    // A gel on linear cells, or with equal orders.
    let e = error_of(&gel.replacen("element = \"quad8\"", "element = \"quad4\"", 1));
    assert!(
        e.contains("a gel needs u of a higher order than c and mu"),
        "{e}"
    );
    let e = error_of(&gel.replacen("[[boundary]]", "[orders]\nc = 2\nmu = 2\n\n[[boundary]]", 1));
    assert!(e.contains("got orders u 2, c 2, mu 2"), "{e}");
    // Plane stress, no mechanics, periodic.
    let e = error_of(&finite(BASE).replacen("plane_strain", "plane_stress", 1));
    assert!(e.contains("not plane stress"), "{e}");
    let e = error_of(&finite(BASE).replacen(
        "strain = \"finite\"\n",
        "strain = \"finite\"\nmechanics = false\n",
        1,
    ));
    assert!(e.contains("needs body.mechanics = true"), "{e}");
    let e = error_of(&finite(BASE).replacen(
        "strain = \"finite\"\n",
        "strain = \"finite\"\nperiodic = [\"x\"]\n",
        1,
    ));
    assert!(
        e.contains("small-strain only") && e.contains("case.toml:"),
        "{e}"
    );
    // A stiffness tensor or an anisotropic diffusivity on a host.
    let e = error_of(&finite(BASE).replacen(
        "diffusivity = 1e-12\n",
        "diffusivity = [[1e-12, 0.0, 0.0], [0.0, 2e-12, 0.0], [0.0, 0.0, 1e-12]]\n",
        1,
    ));
    assert!(e.contains("isotropic mobility"), "{e}");
    let e = error_of(&finite(BASE).replacen(
        "young_modulus = 10e9\npoisson_ratio = 0.3\n",
        "young_modulus = 10e9\npoisson_ratio = 0.3\nyoung_modulus_full = 5e9\nmax_concentration = 1000.0\n",
        1,
    ));
    assert!(
        e.contains("young_modulus_full are not available in finite strain"),
        "{e}"
    );
}

#[test]
fn the_newton_error_fraction_is_a_fraction_of_an_adaptive_tolerance() {
    let good = format!("{BASE}\n[solver]\nnewton_error_fraction = 0.1\n");
    let model = build_model(good, "case.toml", Path::new(".")).unwrap();
    check_model(&model).unwrap();
    for (value, expected) in [
        ("1.5", "must be at most 1"),
        ("0.0", "must be a positive number"),
        ("-0.1", "must be a positive number"),
    ] {
        let text = format!("{BASE}\n[solver]\nnewton_error_fraction = {value}\n");
        let e = error_of(&text);
        let line = line_of(&text, "newton_error_fraction");
        assert!(
            e.contains(expected) && e.contains(&format!("case.toml:{line}:")),
            "{value}: {e}"
        );
    }
    let text =
        format!("{BASE}\n[time]\nfixed_step = 1.0\n\n[solver]\nnewton_error_fraction = 0.1\n");
    let e = error_of(&text);
    assert!(
        e.contains("needs adaptive steps") && e.contains("time.fixed_step"),
        "{e}"
    );
}

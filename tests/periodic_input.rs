//! Periodic input (`body.periodic`, `body.periodic_pairs`): the rigid modes a periodic body
//! keeps, imported meshes linked by named boundary pairs, and the scenario errors of periodic
//! input with their place in the file (through the library and through `dilata check`).

mod common;

use dilata_run::{build_model, check_model};

use common::periodic::{model, scenario, scenario_error, L};

/// With `rigid_modes = "refuse"`, a body periodic in every direction lists only its
/// translations: periodicity itself stops the rotations.
#[test]
fn rigid_modes_of_a_periodic_body_are_its_translations() {
    let refuse = |text: String| text.replace("rigid_modes = \"pin\"", "rigid_modes = \"refuse\"");
    let text = refuse(scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x", "y"]"#,
        3e-6,
        "duration = 1.0",
        "",
    ));
    let err = check_model(&model(&text)).unwrap_err().to_string();
    assert!(
        err.contains("translation x, translation y") && !err.contains("rotation"),
        "{err}"
    );
    // Periodic in x only: still no rotation, both translations.
    let text = refuse(scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x"]"#,
        3e-6,
        "duration = 1.0",
        "",
    ));
    let err = check_model(&model(&text)).unwrap_err().to_string();
    assert!(
        err.contains("translation x, translation y") && !err.contains("rotation"),
        "{err}"
    );
    // Periodic in x, with the bottom held in y: translation x is the one mode left.
    let text = refuse(scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x"]"#,
        3e-6,
        "duration = 1.0",
        "[[boundary]]\non = \"bottom\"\nu_y = 0.0",
    ));
    let err = check_model(&model(&text)).unwrap_err().to_string();
    assert!(
        err.contains("translation x") && !err.contains("translation y"),
        "{err}"
    );
    // A box periodic in x, y and z: three translations; in x only: the rotation about x too.
    let box_text = |periodic: &str| {
        format!(
            r#"
[body]
geometry = "three_d"
shape = {{ kind = "box", size = [1e-6, 1e-6, 1e-6], cells = [3, 3, 3], element = "hex8" }}
{periodic}

[[material]]
name = "host"
young_modulus = 50.0e9
poisson_ratio = 0.25
partial_molar_volume = 3e-6
reference_concentration = 1000.0
diffusivity = 1e-14

[initial]
concentration = 1000.0

[[stage]]
name = "hold"
duration = 1.0
"#
        )
    };
    let err = check_model(&model(&box_text(r#"periodic = ["x", "y", "z"]"#)))
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("translation x, translation y, translation z") && !err.contains("rotation"),
        "{err}"
    );
    let err = check_model(&model(&box_text(r#"periodic = ["x"]"#)))
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("translation x, translation y, translation z, rotation about x")
            && !err.contains("rotation about y")
            && !err.contains("rotation about z"),
        "{err}"
    );
}

/// Errors of periodic input, each with its place in the file.
#[test]
fn periodic_input_errors_name_their_place() {
    // A condition on a boundary of a periodic pair.
    let text = scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x"]"#,
        0.0,
        "duration = 1.0",
        "[[boundary]]\non = \"right\"\nc = 1000.0",
    );
    let err = scenario_error(&text);
    println!("{err}");
    let line = text
        .lines()
        .position(|l| l.starts_with("on = \"right\""))
        .unwrap()
        + 1;
    assert!(
        err.starts_with(&format!("periodic.toml:{line}:6:")),
        "{err}"
    );
    assert!(
        err.contains("boundary 'right' belongs to a periodic pair"),
        "{err}"
    );
    // The same in a stage.
    let text = scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["y"]"#,
        0.0,
        "duration = 1.0\n[[stage.boundary]]\non = \"bottom\"\nu_y = 0.0",
        "",
    );
    assert!(
        scenario_error(&text).contains("boundary 'bottom' belongs to a periodic pair"),
        "{}",
        scenario_error(&text)
    );
    // Directions on a shape that has none.
    let text = scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x"]"#,
        0.0,
        "duration = 1.0",
        "",
    )
    .replace(
        &format!(
            "{{ kind = \"rectangle\", size = [{L:e}, {:e}], cells = [4, 2], element = \"quad4\" }}",
            L / 4.0
        ),
        "{ kind = \"quarter_disc\", radius = 1e-6, cells = 2, element = \"quad4\" }",
    );
    let err = scenario_error(&text);
    println!("{err}");
    let line = text
        .lines()
        .position(|l| l.starts_with("periodic"))
        .unwrap()
        + 1;
    assert!(
        err.starts_with(&format!("periodic.toml:{line}:12:")),
        "{err}"
    );
    assert!(err.contains("needs a generated rectangle or box"), "{err}");
    // An axisymmetric body: periodic along its axis (y) only; then the axial translation is
    // its one rigid mode.
    let axi = |periodic: &str| {
        scenario([4, 2], "quad4", periodic, 3e-6, "duration = 1.0", "")
            .replace("plane_strain", "axisymmetric")
            .replace("rigid_modes = \"pin\"", "")
    };
    let err = scenario_error(&axi(r#"periodic = ["x"]"#));
    assert!(err.contains("only along its axis"), "{err}");
    let err = check_model(&model(&axi(r#"periodic = ["y"]"#)))
        .unwrap_err()
        .to_string();
    assert!(err.contains("translation z (along the axis)"), "{err}");
    // A direction the body does not have.
    let text = scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["z"]"#,
        0.0,
        "duration = 1.0",
        "",
    );
    let err = scenario_error(&text);
    assert!(err.contains("unknown periodic direction 'z'"), "{err}");
    assert!(err.contains(&format!("periodic.toml:{line}:13:")), "{err}");
    // Pairs of boundaries that are not copies of each other (a generated rectangle whose left
    // and top sides differ): the unmatched nodes are listed with both names.
    let text = scenario(
        [4, 2],
        "quad4",
        r#"periodic_pairs = [["left", "top"]]"#,
        0.0,
        "duration = 1.0",
        "",
    );
    let err = scenario_error(&text);
    println!("{err}");
    assert!(err.contains(&format!("periodic.toml:{line}:18:")), "{err}");
    assert!(
        err.contains("'left' / 'top'") && err.contains("no partner"),
        "{err}"
    );
}

/// Four quadrilaterals on the unit square in an MSH 2.2 file, boundaries `west` (x = 0) and
/// `east` (x = 1); `east_shift` moves the middle node of the east side up.
fn square_msh(east_shift: f64) -> String {
    let mut nodes = String::new();
    let mut id = 1;
    for j in 0..3 {
        for i in 0..3 {
            let (x, mut y) = (i as f64 * 0.5, j as f64 * 0.5);
            if i == 2 && j == 1 {
                y += east_shift;
            }
            nodes += &format!("{id} {x} {y} 0\n");
            id += 1;
        }
    }
    let n = |i: usize, j: usize| j * 3 + i + 1;
    let mut elements = Vec::new();
    for j in 0..2 {
        elements.push(format!("1 2 1 1 {} {}", n(0, j + 1), n(0, j)));
        elements.push(format!("1 2 2 2 {} {}", n(2, j), n(2, j + 1)));
    }
    for j in 0..2 {
        for i in 0..2 {
            elements.push(format!(
                "3 2 3 3 {} {} {} {}",
                n(i, j),
                n(i + 1, j),
                n(i + 1, j + 1),
                n(i, j + 1)
            ));
        }
    }
    let mut text = String::from(
        "$MeshFormat\n2.2 0 8\n$EndMeshFormat\n$PhysicalNames\n3\n1 1 \"west\"\n1 2 \"east\"\n\
         2 3 \"body\"\n$EndPhysicalNames\n$Nodes\n9\n",
    );
    text += &nodes;
    text += &format!("$EndNodes\n$Elements\n{}\n", elements.len());
    for (k, e) in elements.iter().enumerate() {
        text += &format!("{} {e}\n", k + 1);
    }
    text += "$EndElements\n";
    text
}

/// An imported mesh: matching boundaries link (and the body keeps only its translations);
/// boundaries that do not match are refused with the unmatched node and its coordinates.
#[test]
fn imported_meshes_link_by_named_pairs() {
    let dir = tempfile::tempdir().unwrap();
    let text = |mesh: &str| {
        format!(
            r#"
[body]
geometry = "plane_strain"
mesh = "{mesh}"
periodic_pairs = [["west", "east"]]

[[material]]
name = "host"
young_modulus = 50.0e9
poisson_ratio = 0.25
partial_molar_volume = 3e-6
reference_concentration = 1000.0
diffusivity = 1e-14

[initial]
concentration = 1000.0

[[stage]]
name = "hold"
duration = 1.0
"#
        )
    };
    std::fs::write(dir.path().join("good.msh"), square_msh(0.0)).unwrap();
    std::fs::write(dir.path().join("bad.msh"), square_msh(0.1)).unwrap();
    let good = build_model(text("good.msh"), "square.toml", dir.path()).unwrap();
    assert_eq!(good.links.n_linked(), 3);
    let err = check_model(&good).unwrap_err().to_string();
    assert!(
        err.contains("translation x, translation y") && !err.contains("rotation"),
        "{err}"
    );
    let err = match build_model(text("bad.msh"), "square.toml", dir.path()) {
        Ok(_) => panic!("unmatched boundaries accepted"),
        Err(e) => e.to_string(),
    };
    println!("{err}");
    assert!(err.starts_with("square.toml:5:18:"), "{err}");
    assert!(err.contains("'west' / 'east'"), "{err}");
    assert!(err.contains("node 5 at (1e0, 6e-1, 0e0)"), "{err}");
}

/// `dilata check` on a periodic scenario names the linked nodes; on a periodic scenario with a
/// condition on a periodic boundary it fails with the place in the file.
#[test]
fn dilata_check_reports_periodic_bodies() {
    let dir = tempfile::tempdir().unwrap();
    let good = scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x", "y"]"#,
        3.0e-6,
        "duration = 1.0",
        "",
    );
    let bad = scenario(
        [4, 2],
        "quad4",
        r#"periodic = ["x", "y"]"#,
        3.0e-6,
        "duration = 1.0",
        "[[boundary]]\non = \"top\"\nsymmetry = true",
    );
    let check = |name: &str, text: &str| {
        let path = dir.path().join(name);
        std::fs::write(&path, text).unwrap();
        std::process::Command::new(env!("CARGO_BIN_EXE_dilata"))
            .args(["check", path.to_str().unwrap()])
            .output()
            .unwrap()
    };
    let out = check("good.toml", &good);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{stdout}");
    // 4 × 2 cells: 3 nodes on the right, 5 on top, the corner once.
    assert!(
        stdout.contains("periodic   7 boundary nodes share the unknowns of their partners"),
        "{stdout}"
    );
    let out = check("bad.toml", &bad);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!out.status.success());
    let line = bad.lines().position(|l| l == "on = \"top\"").unwrap() + 1;
    assert!(stderr.contains(&format!("bad.toml:{line}:6:")), "{stderr}");
    assert!(
        stderr.contains("boundary 'top' belongs to a periodic pair"),
        "{stderr}"
    );
}

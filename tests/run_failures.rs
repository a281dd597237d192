//! A run that cannot go on stops with a message naming the stage, the time, the cause and the
//! cell (with its material and zones), and keeps every result written so far.

use std::path::Path;

use dilata_run::{build_model, run, Model, RunError, RunOptions};

/// A lattice-gas slab filled through its left edge by a flux far larger than diffusion can carry
/// away: the concentration at the edge must pass the site concentration, which the law refuses.
const OVERFILLED: &str = r#"title = "overfilled slab"
[body]
geometry = "plane_strain"
shape = { kind = "rectangle", size = [1e-4, 2e-5], cells = [8, 2], element = "quad4" }

[[body.zone]]
name = "entry"
min = [0.0, 0.0]
max = [2e-5, 2e-5]

[[material]]
name = "host"
young_modulus = 10e9
poisson_ratio = 0.3
partial_molar_volume = 1e-6
free_energy = "lattice"
max_concentration = 1000.0
diffusivity = 1e-15

[initial]
concentration = 100.0

[[boundary]]
on = "left"
u_x = 0.0

[[boundary]]
on = "bottom"
u_y = 0.0

[[stage]]
name = "flood"
duration = 100.0

[[stage.boundary]]
on = "left"
inward_flux = 1.0

[time]
first_step = 1.0
min_step = 1e-6
"#;

/// Run `model` into a fresh folder; the run must fail. Prints and returns the error, and the
/// folder with what the run kept.
fn run_to_failure(model: &Model) -> (RunError, tempfile::TempDir) {
    let dir = tempfile::tempdir().unwrap();
    let err = run(
        model,
        &RunOptions {
            out: dir.path().to_path_buf(),
            threads: Some(1),
        },
        &mut |_| {},
    )
    .unwrap_err();
    println!("{err}");
    (err, dir)
}

#[test]
fn a_stalled_run_names_the_cell_and_keeps_its_results() {
    let model = build_model(OVERFILLED.to_string(), "overfilled.toml", Path::new(".")).unwrap();
    let (err, dir) = run_to_failure(&model);
    let text = err.to_string();
    match &err {
        RunError::Stalled { stage, time, .. } => {
            assert_eq!(stage, "flood");
            assert!(*time < 100.0);
        }
        other => panic!("expected a stalled run, got {other}"),
    }
    assert!(text.contains("below the minimum"), "{text}");
    assert!(text.contains("material 'host'"), "{text}");
    assert!(text.contains("zones [domain, entry]"), "{text}");
    assert!(text.contains(&dir.path().display().to_string()), "{text}");
    // Results so far: the initial row at least, a snapshot of the last good state, the log.
    let history = std::fs::read_to_string(dir.path().join("history.csv")).unwrap();
    assert!(history.lines().count() >= 2, "{history}");
    let pvd = std::fs::read_to_string(dir.path().join("fields.pvd")).unwrap();
    assert!(pvd.matches("<DataSet").count() >= 2, "{pvd}");
    let log = std::fs::read_to_string(dir.path().join("run.log")).unwrap();
    assert!(log.contains("stage 'flood' stopped"), "{log}");
    // The last good state is also a checkpoint, from which a changed scenario can go on.
    let (path, checkpoint) = dilata_run::load_checkpoint(dir.path()).unwrap();
    assert!(log.contains(&path.display().to_string()), "{log}");
    match &err {
        RunError::Stalled { time, .. } => assert_eq!(checkpoint.integrator.t, *time),
        _ => unreachable!(),
    }
}

/// One zone so stiff (E = 1e307 Pa) that its tangent overflows to infinity: the failure says
/// so (before the linear solve, which would only call the matrix singular) and names the
/// unknown, its node, and the cells, materials and zones around it.
#[test]
fn an_overflowing_tangent_names_the_unknown_and_the_zone() {
    let text = OVERFILLED
        .replacen(
            "[initial]",
            r#"[[material]]
name = "overflowing"
zones = ["right_end"]
young_modulus = 1e307
poisson_ratio = 0.3
partial_molar_volume = 1e-6
free_energy = "lattice"
max_concentration = 1000.0
diffusivity = 1e-15

[initial]"#,
            1,
        )
        .replacen(
            "[[material]]",
            "[[body.zone]]\nname = \"right_end\"\nmin = [8e-5, 0.0]\nmax = [1e-4, 2e-5]\n\n[[material]]",
            1,
        );
    let model = build_model(text, "overflowing.toml", Path::new(".")).unwrap();
    let (err, _dir) = run_to_failure(&model);
    let text = err.to_string();
    assert!(matches!(err, RunError::Numerical(_)), "{text}");
    assert!(text.contains("non-finite Jacobian entry"), "{text}");
    assert!(text.contains("material 'overflowing'"), "{text}");
    assert!(text.contains("right_end"), "{text}");
    assert!(text.contains("at node"), "{text}");
}

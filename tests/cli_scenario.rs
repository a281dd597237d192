//! `dilata check` and `dilata run` from the command line: exit codes, located messages, and a bad
//! scenario or an unwritable results folder never destroying earlier results.

use std::path::Path;
use std::process::Command;

fn dilata(args: &[&str]) -> (bool, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn example(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples")
        .join(name)
        .join("scenario.toml")
        .display()
        .to_string()
}

#[test]
fn every_example_checks() {
    for name in ["charging_particle", "bilayer_strip", "notched_plate"] {
        let (ok, stdout, stderr) = dilata(&["check", &example(name)]);
        assert!(ok, "{name}: {stderr}");
        assert!(stdout.contains("no problems found"), "{stdout}");
    }
}

#[test]
fn a_bad_scenario_is_refused_with_its_location_and_leaves_results_alone() {
    let dir = tempfile::tempdir().unwrap();
    let good = std::fs::read_to_string(example("charging_particle")).unwrap();
    let bad = good.replacen("on = \"outer\"", "on = \"outside\"", 1);
    let file = dir.path().join("bad.toml");
    std::fs::write(&file, &bad).unwrap();
    let results = dir.path().join("results");
    std::fs::create_dir(&results).unwrap();
    std::fs::write(results.join("history.csv"), "earlier results\n").unwrap();
    let (ok, _, stderr) = dilata(&[
        "run",
        file.to_str().unwrap(),
        "--out",
        results.to_str().unwrap(),
    ]);
    assert!(!ok);
    let line = bad[..bad.find("\"outside\"").unwrap()]
        .matches('\n')
        .count()
        + 1;
    assert!(
        stderr.contains(&format!("bad.toml:{line}:6: unknown boundary 'outside'")),
        "{stderr}"
    );
    assert!(
        stderr.contains("axis, outer, symmetry_x, symmetry_y"),
        "{stderr}"
    );
    assert_eq!(
        std::fs::read_to_string(results.join("history.csv")).unwrap(),
        "earlier results\n"
    );
}

#[test]
fn an_unwritable_results_folder_fails_before_computing() {
    // A results path below a regular file can be created by nobody, root included.
    let dir = tempfile::tempdir().unwrap();
    let blocker = dir.path().join("blocker");
    std::fs::write(&blocker, "keep me").unwrap();
    let results = blocker.join("results");
    let (ok, stdout, stderr) = dilata(&[
        "run",
        &example("charging_particle"),
        "--out",
        results.to_str().unwrap(),
    ]);
    assert!(!ok);
    assert!(stderr.contains("create results directory"), "{stderr}");
    assert!(stderr.contains("blocker"), "{stderr}");
    assert!(!stdout.contains("done:"), "{stdout}");
    assert_eq!(std::fs::read_to_string(&blocker).unwrap(), "keep me");
}

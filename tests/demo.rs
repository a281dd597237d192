//! The built-in demo (the README's first command) runs the charging-particle scenario, writes its
//! files, and its headline number holds: the charge stage ends when the mean concentration
//! reaches its target, at the time the mass balance of a sphere under a uniform current density
//! gives, `t = Δc R F / (3 i)` (mass balance, common practice, no source; F from CODATA 2018,
//! from memory).

use std::process::Command;

#[test]
fn demo_runs_and_ends_its_charge_at_the_faraday_time() {
    let dir = tempfile::tempdir().unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .args(["demo", "--threads", "2", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "demo failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    for f in [
        "scenario.toml",
        "history.csv",
        "fields.pvd",
        "fields_0000.vtu",
        "summary.json",
    ] {
        let len = std::fs::metadata(dir.path().join(f)).unwrap().len();
        assert!(len > 100, "{f} is {len} bytes");
    }
    let line = stdout
        .lines()
        .find(|l| l.contains("stage charge"))
        .expect("charge stage line");
    assert!(line.contains("mean concentration reached"), "{line}");
    // "... s .. <end> s, ended by ..."
    let end: f64 = line
        .split(" .. ")
        .nth(1)
        .and_then(|s| s.split(' ').next())
        .unwrap()
        .parse()
        .unwrap();
    let expected = (12000.0 - 1200.0) * 5.0e-6 * dilata_run::FARADAY / (3.0 * 2.0);
    assert!(
        (end - expected).abs() < 2e-6 * expected,
        "charge ended at {end} s, expected {expected} s"
    );
    assert!(stdout.contains("do not certify"), "safety caution missing");
    let summary = std::fs::read_to_string(dir.path().join("summary.json")).unwrap();
    assert!(summary.contains("\"ended_by\""), "{summary}");
}

#[test]
fn help_lists_every_command() {
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .arg("--help")
        .output()
        .unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for cmd in ["mesh", "check", "run", "demo"] {
        assert!(text.contains(cmd), "--help lacks {cmd}:\n{text}");
    }
    let bad = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .arg("no-such-command")
        .output()
        .unwrap();
    assert!(!bad.status.success());
}

//! The built-in demo (the README's first command) runs, writes its files, and its headline
//! number holds: the bore hoop stress of the pressurised tube against the Lamé solution
//! `σ_θ(a) = p (a² + b²)/(b² − a²)` (Timoshenko & Goodier, Theory of Elasticity, thick-walled
//! cylinder; from memory). The demo mesh is coarse (refinement level 3), so the bound is 0.3 %;
//! tests/lame.rs checks 0.1 % on finer meshes.

use std::process::Command;

#[test]
fn demo_runs_and_matches_lame_at_the_bore() {
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
    for f in ["tube.vtu", "tube.pvd", "tube.expect.json"] {
        let len = std::fs::metadata(dir.path().join(f)).unwrap().len();
        assert!(len > 100, "{f} is {len} bytes");
    }
    let line = stdout
        .lines()
        .find(|l| l.contains("largest relative difference"))
        .expect("headline line");
    let value: f64 = line.rsplit(' ').next().unwrap().parse().unwrap();
    assert!(
        value < 3e-3,
        "bore hoop stress differs from Lamé by {value:e}"
    );
    assert!(stdout.contains("do not certify"), "safety caution missing");
}

#[test]
fn help_lists_every_command() {
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .arg("--help")
        .output()
        .unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for cmd in ["mesh", "demo"] {
        assert!(text.contains(cmd), "--help lacks {cmd}:\n{text}");
    }
    let bad = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .arg("no-such-command")
        .output()
        .unwrap();
    assert!(!bad.status.success());
}

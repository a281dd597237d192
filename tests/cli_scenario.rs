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
    for name in [
        "charging_particle",
        "bilayer_strip",
        "notched_plate",
        "spinodal_quench",
        "misfit_precipitate",
        "gel_disc",
        "gel_layer",
        "swelling_particle",
    ] {
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

/// A directory made unwritable for this test: permission bits 0o555, and where those do not
/// stop writes (a root user) the immutable attribute when `chattr` can set it. Restored on drop.
struct ReadOnlyDir {
    path: std::path::PathBuf,
    immutable: bool,
}

impl ReadOnlyDir {
    /// `None`, with the reason, when no way to make `path` unwritable works here.
    fn new(path: &Path) -> Result<ReadOnlyDir, String> {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(path, std::fs::Permissions::from_mode(0o555)).unwrap();
        let mut dir = ReadOnlyDir {
            path: path.to_path_buf(),
            immutable: false,
        };
        if !Self::writable(path) {
            return Ok(dir);
        }
        let chattr = Command::new("chattr").arg("+i").arg(path).output();
        if chattr.is_ok_and(|o| o.status.success()) {
            dir.immutable = true;
            if !Self::writable(path) {
                return Ok(dir);
            }
        }
        Err(format!(
            "permission bits do not stop writes into {} (running as root?) and the immutable \
             attribute could not be set",
            path.display()
        ))
    }

    fn writable(path: &Path) -> bool {
        let probe = path.join(".write-probe");
        let ok = std::fs::write(&probe, "x").is_ok();
        let _ = std::fs::remove_file(&probe);
        ok
    }
}

impl Drop for ReadOnlyDir {
    fn drop(&mut self) {
        use std::os::unix::fs::PermissionsExt;
        if self.immutable {
            let _ = Command::new("chattr").arg("-i").arg(&self.path).output();
        }
        let _ = std::fs::set_permissions(&self.path, std::fs::Permissions::from_mode(0o755));
    }
}

/// Names and contents of the files in `dir`, sorted.
fn snapshot(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let e = e.unwrap();
            (
                e.file_name().to_string_lossy().into_owned(),
                std::fs::read(e.path()).unwrap(),
            )
        })
        .collect();
    files.sort();
    files
}

#[test]
fn a_read_only_results_folder_is_refused_before_computing_and_keeps_earlier_results() {
    let dir = tempfile::tempdir().unwrap();
    let results = dir.path().join("results");
    std::fs::create_dir(&results).unwrap();
    // Earlier outputs; the files themselves stay writable, only the folder is locked, so a
    // driver that truncated history.csv before noticing would destroy it.
    for (name, text) in [
        ("history.csv", "time_s,step,stage,dt_s\n1,1,a,1\n2,2,a,1\n"),
        ("summary.json", "{\"earlier\": true}\n"),
        ("plot_concentration.svg", "<svg/>\n"),
    ] {
        std::fs::write(results.join(name), text).unwrap();
    }
    let before = snapshot(&results);
    let locked = match ReadOnlyDir::new(&results) {
        Ok(l) => l,
        Err(reason) => {
            println!("skipped: {reason}");
            return;
        }
    };
    let (ok, stdout, stderr) = dilata(&[
        "run",
        &example("charging_particle"),
        "--out",
        results.to_str().unwrap(),
    ]);
    assert!(!ok, "{stdout}");
    assert!(
        stderr.contains(&format!(
            "cannot write the results in {}",
            results.display()
        )),
        "{stderr}"
    );
    assert!(
        stderr.contains("ermission denied") || stderr.contains("peration not permitted"),
        "{stderr}"
    );
    assert!(!stdout.contains("done:"), "{stdout}");
    // The progress line never appeared: nothing was computed.
    assert!(!stderr.contains("stage 1/"), "{stderr}");
    assert_eq!(snapshot(&results), before, "earlier results changed");

    // Redrawing figures there fails at the first figure and leaves the old ones alone.
    let (ok, _, stderr) = dilata(&["plot", results.to_str().unwrap()]);
    assert!(!ok);
    assert!(stderr.contains("cannot write the figure"), "{stderr}");
    assert_eq!(snapshot(&results), before, "earlier results changed");
    drop(locked);
}

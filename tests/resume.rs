//! Long runs that survive: a run killed with SIGKILL and resumed from its checkpoint, or stopped
//! with SIGINT/SIGTERM and resumed, gives the same files, byte for byte, as a run never
//! interrupted; a changed scenario is refused unless forced; 1 and 2 threads give identical
//! files. Only `timing.csv` and the checkpoints (which hold wall-clock seconds) may differ.
//!
//! The scenario is tests/fixtures/small_particle.toml (a coarse copy of the charging-particle
//! example, about one second in a release build) with a checkpoint every 200 s of simulated time;
//! the thread test uses tests/fixtures/threads_particle.toml, fine enough to be assembled in
//! parallel.

use std::path::{Path, PathBuf};
use std::process::{Child, Command, Output, Stdio};
use std::time::{Duration, Instant};

use vtkio::model::DataSet;
use vtkio::Vtk;

fn fixture() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("fixtures")
        .join("small_particle.toml")
}

fn dilata(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_dilata"))
        .args(args)
        .output()
        .unwrap()
}

fn run_to_end(scenario: &Path, out: &Path, threads: &str) {
    let o = dilata(&[
        "run",
        scenario.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--threads",
        threads,
    ]);
    assert!(
        o.status.success(),
        "run failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

fn spawn_run(scenario: &Path, out: &Path) -> Child {
    Command::new(env!("CARGO_BIN_EXE_dilata"))
        .args(["run", scenario.to_str().unwrap(), "--out"])
        .arg(out)
        .args(["--threads", "1"])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap()
}

/// Wait (polling) until `ready` holds, at most 120 s.
fn wait_for(what: &str, mut ready: impl FnMut() -> bool) {
    let start = Instant::now();
    while !ready() {
        assert!(
            start.elapsed() < Duration::from_secs(120),
            "timed out waiting for {what}"
        );
        std::thread::sleep(Duration::from_millis(2));
    }
}

/// Checkpoint files in `dir` (none while the folder does not exist yet).
fn checkpoints(dir: &Path) -> Vec<String> {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut v: Vec<String> = entries
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with("checkpoint_") && n.ends_with(".dck"))
        .collect();
    v.sort();
    v
}

fn history_rows(dir: &Path) -> usize {
    std::fs::read_to_string(dir.join("history.csv"))
        .map(|t| t.lines().count().saturating_sub(1))
        .unwrap_or(0)
}

/// Every file of `a` but the wall-clock ones has an identical twin in `b`, and `b` has no
/// other result file. Returns how many files were compared.
fn assert_same_results(a: &Path, b: &Path) -> usize {
    let wall_clock = |name: &str| name == "timing.csv" || name.ends_with(".dck");
    let names = |dir: &Path| -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| !wall_clock(n))
            .collect();
        v.sort();
        v
    };
    let (na, nb) = (names(a), names(b));
    assert_eq!(na, nb, "different sets of result files");
    for name in &na {
        let (x, y) = (
            std::fs::read(a.join(name)).unwrap(),
            std::fs::read(b.join(name)).unwrap(),
        );
        if x != y {
            let first = x.iter().zip(&y).position(|(p, q)| p != q);
            panic!(
                "{name} differs (lengths {} and {}, first difference at byte {first:?})",
                x.len(),
                y.len()
            );
        }
    }
    na.len()
}

#[test]
fn a_killed_run_resumed_from_its_checkpoint_gives_identical_results() {
    let dir = tempfile::tempdir().unwrap();
    let whole = dir.path().join("whole");
    let cut = dir.path().join("cut");
    run_to_end(&fixture(), &whole, "1");
    let total_rows = history_rows(&whole);

    let mut child = spawn_run(&fixture(), &cut);
    wait_for("the first checkpoint", || !checkpoints(&cut).is_empty());
    child.kill().unwrap(); // SIGKILL on Unix: no chance to clean up
    child.wait().unwrap();
    let rows_at_kill = history_rows(&cut);
    println!(
        "killed with {rows_at_kill} of {total_rows} history rows written, checkpoints {:?}",
        checkpoints(&cut)
    );
    assert!(
        !cut.join("summary.json").exists(),
        "the run finished before it was killed; the test needs a slower scenario"
    );
    assert!(rows_at_kill < total_rows);

    let o = dilata(&["resume", cut.to_str().unwrap(), "--threads", "1"]);
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(
        o.status.success(),
        "{stdout}{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(stdout.contains("resuming from"), "{stdout}");
    let n = assert_same_results(&whole, &cut);
    println!("{n} result files identical");
    // The last snapshot, read back: the same bits in every point array.
    let last = |d: &Path| {
        let mut vtus: Vec<PathBuf> = std::fs::read_dir(d)
            .unwrap()
            .flatten()
            .map(|e| e.path())
            .filter(|p| p.extension().is_some_and(|x| x == "vtu"))
            .collect();
        vtus.sort();
        point_arrays(vtus.last().unwrap())
    };
    let (a, b) = (last(&whole), last(&cut));
    assert!(a.len() >= 8, "{} point arrays", a.len());
    for ((name, x), (_, y)) in a.iter().zip(&b) {
        let bits = |v: &[f64]| v.iter().map(|f| f.to_bits()).collect::<Vec<u64>>();
        assert_eq!(bits(x), bits(y), "array {name}");
    }
}

/// Point arrays of a `.vtu` file as (name, values).
fn point_arrays(path: &Path) -> Vec<(String, Vec<f64>)> {
    let vtk =
        Vtk::import(path).unwrap_or_else(|e| panic!("vtkio cannot read {}: {e}", path.display()));
    let DataSet::UnstructuredGrid { pieces, .. } = vtk.data else {
        panic!("{}: not an unstructured grid", path.display());
    };
    let piece = pieces
        .into_iter()
        .next()
        .unwrap()
        .into_loaded_piece_data(None)
        .unwrap();
    piece
        .data
        .point
        .into_iter()
        .map(|a| match a {
            vtkio::model::Attribute::DataArray(d) => {
                (d.name.clone(), d.data.cast_into::<f64>().unwrap())
            }
            vtkio::model::Attribute::Field { name, .. } => (name, Vec::new()),
        })
        .collect()
}

#[cfg(unix)]
#[test]
fn sigint_and_sigterm_stop_with_a_checkpoint_and_a_resume_hint() {
    let dir = tempfile::tempdir().unwrap();
    let whole = dir.path().join("whole");
    run_to_end(&fixture(), &whole, "1");
    for signal in ["INT", "TERM"] {
        let out = dir.path().join(signal);
        let child = spawn_run(&fixture(), &out);
        wait_for("a few steps", || history_rows(&out) >= 5);
        let status = Command::new("kill")
            .args([format!("-{signal}"), child.id().to_string()])
            .status()
            .unwrap();
        assert!(status.success());
        let o = child.wait_with_output().unwrap();
        let stderr = String::from_utf8_lossy(&o.stderr);
        println!("SIG{signal}: exit {:?}; {stderr}", o.status.code());
        assert_eq!(o.status.code(), Some(130), "{stderr}");
        assert!(
            stderr.contains(&format!("dilata resume {}", out.display())),
            "{stderr}"
        );
        assert!(!checkpoints(&out).is_empty());
        assert!(!out.join("summary.json").exists());
        // Partial outputs: every history row has every column and parses; every snapshot in
        // the collection exists and reads.
        let history = std::fs::read_to_string(out.join("history.csv")).unwrap();
        let mut lines = history.lines();
        let n_columns = lines.next().unwrap().split(',').count();
        assert_eq!(n_columns, dilata_run::HISTORY_COLUMNS.len());
        let mut n_rows = 0;
        for line in lines {
            let fields: Vec<&str> = line.split(',').collect();
            assert_eq!(fields.len(), n_columns, "{line}");
            let t: f64 = fields[0].parse().unwrap();
            assert!(t.is_finite());
            n_rows += 1;
        }
        assert!(n_rows >= 5);
        let pvd = std::fs::read_to_string(out.join("fields.pvd")).unwrap();
        let files: Vec<&str> = pvd
            .split("file=\"")
            .skip(1)
            .map(|s| &s[..s.find('"').unwrap()])
            .collect();
        // t = 0 and the state at the interruption.
        assert!(files.len() >= 2, "{pvd}");
        for f in &files {
            assert!(point_arrays(&out.join(f)).len() >= 8, "{f}");
        }
        let log = std::fs::read_to_string(out.join("run.log")).unwrap();
        assert!(log.contains("interrupted at step"), "{log}");

        let o = dilata(&["resume", out.to_str().unwrap(), "--threads", "1"]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        assert_same_results(&whole, &out);
    }
}

#[test]
fn a_changed_scenario_is_refused_unless_forced() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = dir.path().join("particle.toml");
    let text = std::fs::read_to_string(fixture()).unwrap();
    std::fs::write(&scenario, &text).unwrap();
    let out = dir.path().join("out");
    run_to_end(&scenario, &out, "1");
    let before = std::fs::read(out.join("history.csv")).unwrap();
    let last_time = |h: &[u8]| -> f64 {
        let t = String::from_utf8_lossy(h);
        let line = t.lines().last().unwrap().to_string();
        line.split(',').next().unwrap().parse().unwrap()
    };
    // A longer rest: the same mesh, a different scenario.
    let changed = text.replacen("duration = 1800.0", "duration = 2400.0", 1);
    assert_ne!(changed, text);
    std::fs::write(&scenario, &changed).unwrap();

    let o = dilata(&["resume", out.to_str().unwrap()]);
    let stderr = String::from_utf8_lossy(&o.stderr);
    println!("{stderr}");
    assert_eq!(o.status.code(), Some(1), "{stderr}");
    assert!(stderr.contains("differs from the one the run"), "{stderr}");
    assert!(stderr.contains("--force"), "{stderr}");
    assert_eq!(std::fs::read(out.join("history.csv")).unwrap(), before);

    let o = dilata(&["resume", out.to_str().unwrap(), "--force", "--threads", "1"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let after = std::fs::read(out.join("history.csv")).unwrap();
    let (t0, t1) = (last_time(&before), last_time(&after));
    println!("end time {t0} s before, {t1} s after the forced resume");
    assert!((t1 - t0 - 600.0).abs() < 1e-6 * t1, "{t0} -> {t1}");
    let copy = std::fs::read_to_string(out.join("scenario.toml")).unwrap();
    assert_eq!(copy, changed);
}

#[test]
fn one_and_two_threads_give_identical_files() {
    let scenario = fixture().with_file_name("threads_particle.toml");
    // The mesh must give two threads work to share: more assembly chunks than colours, so
    // that some colour has two chunks assembled in parallel.
    let model = dilata_run::load_model(&scenario).unwrap();
    let (dofs, _) = dilata_run::build_dofs(&model);
    let assembler = dilata_fem::Assembler::build(
        &model.mesh,
        &dofs,
        dilata_fem::Parallelism::Rayon { threads: 2 },
    );
    let n_chunks = model
        .mesh
        .n_cells()
        .div_ceil(dilata_fem::assembly::chunk_cells(model.mesh.n_cells()));
    println!(
        "{} cells, {n_chunks} chunks, {} colours",
        model.mesh.n_cells(),
        assembler.n_colors()
    );
    assert!(assembler.n_colors() < n_chunks);

    let dir = tempfile::tempdir().unwrap();
    let (one, two) = (dir.path().join("one"), dir.path().join("two"));
    run_to_end(&scenario, &one, "1");
    run_to_end(&scenario, &two, "2");
    let n = assert_same_results(&one, &two);
    println!("{n} result files identical");
    assert!(n >= 6, "{n} files");
}

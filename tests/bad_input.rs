//! Malformed inputs reach the user as one clear line that says where and what was expected,
//! exit non-zero, and never destroy earlier results. One test per case (issue acceptance 9).
//! The MSH format facts used to corrupt the sample (section names, element type codes) follow
//! the MSH 2.2 format description (common practice, no source).

use std::path::{Path, PathBuf};
use std::process::Command;

use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, Constraints, FieldSpec};
use dilata_mesh::generate::{rectangle, RectangleParams};
use dilata_mesh::CellKind;

const SAMPLE: &str = "meshes/tri3_v22_ascii.msh";

fn sample() -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join(SAMPLE)).unwrap()
}

/// Run `dilata mesh FILE [extra]` on `text` and return (exit success, stderr).
fn run_mesh(dir: &Path, text: &str, extra: &[&str]) -> (bool, String) {
    let file: PathBuf = dir.join("input.msh");
    std::fs::write(&file, text).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .arg("mesh")
        .arg(&file)
        .args(extra)
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn assert_one_line_error(ok: bool, err: &str, needles: &[&str]) {
    assert!(!ok, "expected failure");
    let lines: Vec<&str> = err.lines().collect();
    assert_eq!(lines.len(), 1, "one-line cause expected, got:\n{err}");
    for n in needles {
        assert!(err.contains(n), "message lacks '{n}':\n{err}");
    }
}

#[test]
fn truncated_file_names_section_and_line() {
    let dir = tempfile::tempdir().unwrap();
    let text = sample();
    let cut = text.find("$EndNodes").unwrap() - 30;
    let (ok, err) = run_mesh(dir.path(), &text[..cut], &[]);
    assert_one_line_error(ok, &err, &["input.msh", "line", "$Nodes"]);
}

#[test]
fn wrong_section_marker_is_reported() {
    let dir = tempfile::tempdir().unwrap();
    let text = sample().replacen("$EndNodes", "$EndNodez", 1);
    let (ok, err) = run_mesh(dir.path(), &text, &[]);
    assert_one_line_error(ok, &err, &["line", "$Nodes", "$EndNodes"]);
}

#[test]
fn unknown_element_code_names_code_and_element() {
    let dir = tempfile::tempdir().unwrap();
    // Element 1 of the sample is "1 2 2 10 1 5 116 227": give it type code 99.
    let text = sample().replacen("\n1 2 2 10 1 5 116 227\n", "\n1 99 2 10 1 5 116 227\n", 1);
    let (ok, err) = run_mesh(dir.path(), &text, &[]);
    assert_one_line_error(ok, &err, &["$Elements", "99", "element 1"]);
}

#[test]
fn missing_node_names_element_and_node() {
    let dir = tempfile::tempdir().unwrap();
    let text = sample().replacen("\n1 2 2 10 1 5 116 227\n", "\n1 2 2 10 1 5 116 9999\n", 1);
    let (ok, err) = run_mesh(dir.path(), &text, &[]);
    assert_one_line_error(ok, &err, &["9999", "element 1"]);
}

#[test]
fn inverted_cell_is_rejected_with_its_id_and_earlier_output_survives() {
    let dir = tempfile::tempdir().unwrap();
    // Swap two nodes of element 1: the triangle turns clockwise (negative Jacobian).
    let text = sample().replacen("\n1 2 2 10 1 5 116 227\n", "\n1 2 2 10 1 116 5 227\n", 1);
    let vtu = dir.path().join("earlier.vtu");
    std::fs::write(&vtu, "earlier result").unwrap();
    let (ok, err) = run_mesh(dir.path(), &text, &["--vtu", vtu.to_str().unwrap()]);
    assert_one_line_error(ok, &err, &["inverted or degenerate", "ids: 0"]);
    assert_eq!(
        std::fs::read_to_string(&vtu).unwrap(),
        "earlier result",
        "earlier result destroyed"
    );
}

#[test]
fn unknown_boundary_name_lists_the_names_that_exist() {
    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [1.0, 1.0],
        n_cells: [2, 2],
        kind: CellKind::Quad4,
    })
    .unwrap();
    let dofs = DofMap::build(&mesh, &[FieldSpec::scalar("c", 1)]).unwrap();
    let c = dofs.field("c").unwrap();
    let mut cons = Constraints::new(dofs.n_dofs());
    let err = cons
        .add_boundary(
            &mesh,
            &dofs,
            BoundaryTarget {
                boundary: "lft",
                field: c,
                component: 0,
            },
            0.0,
        )
        .unwrap_err()
        .to_string();
    assert!(err.contains("unknown boundary 'lft'"), "{err}");
    for name in ["bottom", "left", "right", "top"] {
        assert!(err.contains(name), "{err}");
    }
}

#[test]
fn missing_file_is_one_line() {
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .args(["mesh", "/nonexistent/dir/x.msh"])
        .output()
        .unwrap();
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(err.contains("/nonexistent/dir/x.msh"), "{err}");
}

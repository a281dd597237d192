//! Integration tests of the VTU and PVD writers: files are written, read back with vtkio's XML
//! reader (which decodes the zlib-compressed base64 blocks), and checked value by value.
//!
//! Set `DILATA_IO_KEEP=/some/dir` to keep a copy of every written `.vtu` there, each with a
//! `.expect.json` beside it for `.ci/check_vtu.py --expect-json`.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use dilata_io::{
    format_time, write_atomic, write_vtu, Association, FieldData, FieldKind, IoError, PvdWriter,
};
use dilata_mesh::{CellBlock, CellKind, Mesh};
use vtkio::model::{
    Attribute, CellType, DataSet, IOBuffer, Piece, UnstructuredGridPiece, VertexNumbers,
};
use vtkio::Vtk;

/// Two quad9 cells side by side on a 5 × 3 grid of nodes over [0, 2] × [0, 1]; node `j*5 + i`
/// sits at (i/2, j/2). Region "left" holds cell 0; cell 1 is in no region.
fn quad9_mesh() -> Mesh {
    let mut points = Vec::new();
    for j in 0..3 {
        for i in 0..5 {
            points.push([0.5 * i as f64, 0.5 * j as f64, 0.0]);
        }
    }
    // VTK biquadratic quad order: 4 corners counter-clockwise, 4 mid-edge nodes, centre.
    let connectivity = vec![
        0, 2, 12, 10, 1, 7, 11, 5, 6, //
        2, 4, 14, 12, 3, 9, 13, 7, 8,
    ];
    Mesh {
        dim: 2,
        points,
        blocks: vec![CellBlock {
            kind: CellKind::Quad9,
            connectivity,
        }],
        regions: BTreeMap::from([("left".to_string(), vec![0])]),
        ..Mesh::default()
    }
}

/// Two tet10 cells sharing the face (1, 2, 3); mid-edge nodes are created from the corner
/// connectivity with `CellKind::Tet10.edges()`, shared edges sharing their node. Regions "a" =
/// {1} and "b" = {0, 1} give region ids [1, 0].
fn tet10_mesh() -> Mesh {
    let mut points = vec![
        [0.0, 0.0, 0.0],
        [1.0, 0.0, 0.0],
        [0.0, 1.0, 0.0],
        [0.0, 0.0, 1.0],
        [1.0, 1.0, 1.0],
    ];
    let corners = [[0usize, 1, 2, 3], [1, 2, 3, 4]];
    let mut mid: HashMap<(usize, usize), usize> = HashMap::new();
    let mut connectivity = Vec::new();
    for cell in corners {
        let mut nodes = cell.to_vec();
        for &(a, b, m) in CellKind::Tet10.edges() {
            let (ga, gb) = (cell[a], cell[b]);
            let key = (ga.min(gb), ga.max(gb));
            let id = *mid.entry(key).or_insert_with(|| {
                let (pa, pb) = (points[ga], points[gb]);
                points.push([
                    (pa[0] + pb[0]) / 2.0,
                    (pa[1] + pb[1]) / 2.0,
                    (pa[2] + pb[2]) / 2.0,
                ]);
                points.len() - 1
            });
            assert_eq!(nodes.len(), m);
            nodes.push(id);
        }
        connectivity.extend(nodes);
    }
    assert_eq!(points.len(), 14);
    Mesh {
        dim: 3,
        points,
        blocks: vec![CellBlock {
            kind: CellKind::Tet10,
            connectivity,
        }],
        regions: BTreeMap::from([("a".to_string(), vec![1]), ("b".to_string(), vec![0, 1])]),
        ..Mesh::default()
    }
}

/// Read back a `.vtu` with vtkio and return its single inline piece.
fn read_piece(path: &Path) -> UnstructuredGridPiece {
    let vtk =
        Vtk::import(path).unwrap_or_else(|e| panic!("vtkio cannot read {}: {e}", path.display()));
    let DataSet::UnstructuredGrid { mut pieces, .. } = vtk.data else {
        panic!("not an unstructured grid");
    };
    assert_eq!(pieces.len(), 1);
    match pieces.remove(0) {
        Piece::Inline(p) => *p,
        _ => panic!("piece is not inline"),
    }
}

/// Number of components and decoded values of the named array.
fn array<'a>(attrs: &'a [Attribute], name: &str) -> (usize, &'a IOBuffer) {
    for a in attrs {
        if let Attribute::DataArray(d) = a {
            if d.name == name {
                return (d.num_comp(), &d.data);
            }
        }
    }
    panic!("array '{name}' not found")
}

fn f64s(buf: &IOBuffer) -> Vec<f64> {
    match buf {
        IOBuffer::F64(v) => v.clone(),
        other => panic!("expected Float64 data, got {:?}", other.scalar_type()),
    }
}

/// Value of attribute `attr` in the first tag that contains `marker`.
fn xml_attr(xml: &str, marker: &str, attr: &str) -> String {
    let at = xml
        .find(marker)
        .unwrap_or_else(|| panic!("'{marker}' not in file"));
    let start = xml[..at + 1].rfind('<').unwrap();
    let end = at + xml[at..].find('>').unwrap();
    let tag = &xml[start..end];
    let key = format!("{attr}=\"");
    let from = tag
        .find(&key)
        .unwrap_or_else(|| panic!("no {attr} in {tag}"))
        + key.len();
    tag[from..from + tag[from..].find('"').unwrap()].to_string()
}

/// Files in `dir`, sorted by name.
fn dir_listing(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

/// Copy `path` to `$DILATA_IO_KEEP` (if set) with an expectation file for `.ci/check_vtu.py`.
fn keep_copy(path: &Path, expect_json: &str) {
    if let Some(dir) = std::env::var_os("DILATA_IO_KEEP") {
        let dir = PathBuf::from(dir);
        std::fs::create_dir_all(&dir).unwrap();
        let name = path.file_name().unwrap();
        std::fs::copy(path, dir.join(name)).unwrap();
        let stem = path.file_stem().unwrap().to_string_lossy();
        write_atomic(
            &dir.join(format!("{stem}.expect.json")),
            expect_json.as_bytes(),
        )
        .unwrap();
    }
}

#[test]
fn quad9_mesh_round_trips_through_vtkio() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("quad9.vtu");
    let mesh = quad9_mesh();
    let c: Vec<f64> = mesh
        .points
        .iter()
        .map(|p| p[0] + 10.0 * p[1] + 0.1)
        .collect();
    let u: Vec<f64> = (0..mesh.n_points())
        .flat_map(|i| [i as f64 * 0.25, -(i as f64) / 3.0])
        .collect();
    let sigma: Vec<f64> = (0..12).map(|k| 1e6 * (k as f64 + 1.0) / 7.0).collect();
    let damage = vec![0.125, 1.0 / 3.0];
    write_vtu(
        &path,
        &mesh,
        &[
            FieldData::new("c", FieldKind::Scalar, c.clone()),
            FieldData::new("u", FieldKind::Vector, u.clone()),
        ],
        &[
            FieldData::new("sigma", FieldKind::SymTensor, sigma.clone()),
            FieldData::new("damage", FieldKind::Scalar, damage),
        ],
    )
    .unwrap();
    assert_eq!(
        dir_listing(dir.path()),
        ["quad9.vtu"],
        "a temporary file was left behind"
    );

    // The header, as text: format choices the brief asks for.
    let xml = std::fs::read_to_string(&path).unwrap();
    assert_eq!(
        xml_attr(&xml, "type=\"UnstructuredGrid\"", "header_type"),
        "UInt64"
    );
    assert_eq!(
        xml_attr(&xml, "type=\"UnstructuredGrid\"", "compressor"),
        "vtkZLibDataCompressor"
    );
    assert_eq!(
        xml_attr(&xml, "type=\"UnstructuredGrid\"", "byte_order"),
        "LittleEndian"
    );
    assert_eq!(xml_attr(&xml, "NumberOfPoints", "NumberOfPoints"), "15");
    assert_eq!(xml_attr(&xml, "NumberOfPoints", "NumberOfCells"), "2");
    assert_eq!(xml_attr(&xml, "Name=\"Points\"", "type"), "Float64");
    assert_eq!(xml_attr(&xml, "Name=\"u\"", "NumberOfComponents"), "3");
    assert_eq!(xml_attr(&xml, "Name=\"sigma\"", "NumberOfComponents"), "6");
    assert_eq!(xml_attr(&xml, "Name=\"region\"", "type"), "Int32");
    assert!(!xml.contains("format=\"ascii\"") && !xml.contains("format=\"appended\""));

    let piece = read_piece(&path);
    assert_eq!(piece.num_points(), 15);
    assert_eq!(piece.cells.types, vec![CellType::BiquadraticQuad; 2]);
    let VertexNumbers::XML {
        connectivity,
        offsets,
    } = piece.cells.cell_verts.clone()
    else {
        panic!("expected XML-style cell vertices");
    };
    let stored: Vec<u64> = mesh.blocks[0]
        .connectivity
        .iter()
        .map(|&n| n as u64)
        .collect();
    assert_eq!(connectivity, stored);
    assert_eq!(offsets, vec![9, 18]);
    let points = f64s(&piece.points);
    assert_eq!(points[3 * 7..3 * 8], [1.0, 0.5, 0.0]);

    let (nc, data) = array(&piece.data.point, "c");
    assert_eq!((nc, f64s(data)), (1, c));
    let (nc, data) = array(&piece.data.point, "u");
    let u_read = f64s(data);
    assert_eq!((nc, u_read.len()), (3, 45));
    assert_eq!(
        u_read[3 * 7..3 * 8],
        [u[14], u[15], 0.0],
        "2D vector not padded with a zero"
    );
    let (nc, data) = array(&piece.data.cell, "sigma");
    assert_eq!((nc, f64s(data)), (6, sigma));
    let (nc, data) = array(&piece.data.cell, "region");
    assert_eq!((nc, data.clone()), (1, IOBuffer::I32(vec![0, -1])));

    keep_copy(
        &path,
        &format!(
            r#"{{"points": 15, "cells": 2, "cell_type_counts": {{"quad9": 2}},
 "cell_points": [[0, [0, 2, 12, 10, 1, 7, 11, 5, 6]], [1, [2, 4, 14, 12, 3, 9, 13, 7, 8]]],
 "file_attributes": {{"type": "UnstructuredGrid", "header_type": "UInt64", "compressor": "vtkZLibDataCompressor"}},
 "arrays": [
  {{"association": "coords", "name": "Points", "components": 3, "values": [[21, 1.0], [22, 0.5]]}},
  {{"association": "point", "name": "c", "components": 1, "values": [[7, {c7:e}]]}},
  {{"association": "point", "name": "u", "components": 3, "values": [[21, {u14:e}], [22, {u15:e}], [23, 0]]}},
  {{"association": "cell", "name": "sigma", "components": 6, "values": [[11, {s11:e}]]}},
  {{"association": "cell", "name": "damage", "components": 1, "values": [[1, {d1:e}]]}},
  {{"association": "cell", "name": "region", "components": 1, "values": [[0, 0], [1, -1]]}}
 ]}}"#,
            c7 = mesh.points[7][0] + 10.0 * mesh.points[7][1] + 0.1,
            u14 = u[14],
            u15 = u[15],
            s11 = 1e6 * 12.0 / 7.0,
            d1 = 1.0 / 3.0,
        ),
    );
}

#[test]
fn tet10_mesh_round_trips_through_vtkio() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("tet10.vtu");
    let mesh = tet10_mesh();
    let n = mesh.n_points();
    let mu: Vec<f64> = (0..n).map(|i| (i as f64).sqrt() - 1.5).collect();
    let u: Vec<f64> = (0..3 * n).map(|k| (k as f64) * 1e-3 - 7e-3).collect();
    let strain: Vec<f64> = (0..n * 6).map(|k| (k as f64).sin()).collect();
    let sigma: Vec<f64> = (0..12).map(|k| -(k as f64) * 2.5e7).collect();
    write_vtu(
        &path,
        &mesh,
        &[
            FieldData::new("mu", FieldKind::Scalar, mu.clone()),
            FieldData::new("u", FieldKind::Vector, u.clone()),
            FieldData::new("strain", FieldKind::SymTensor, strain.clone()),
        ],
        &[FieldData::new("sigma", FieldKind::SymTensor, sigma.clone())],
    )
    .unwrap();
    assert_eq!(dir_listing(dir.path()), ["tet10.vtu"]);

    let piece = read_piece(&path);
    assert_eq!(piece.num_points(), 14);
    assert_eq!(piece.cells.types, vec![CellType::QuadraticTetra; 2]);
    let VertexNumbers::XML {
        connectivity,
        offsets,
    } = piece.cells.cell_verts.clone()
    else {
        panic!("expected XML-style cell vertices");
    };
    assert_eq!(connectivity.len(), 20);
    assert_eq!(offsets, vec![10, 20]);
    // The shared edge (1, 2) has one node: local 5 (edge 1-2) of cell 0 and local 4 (edge 0-1,
    // i.e. global 1-2) of cell 1.
    assert_eq!(connectivity[5], connectivity[14]);
    assert_eq!(
        f64s(&piece.points),
        mesh.points.iter().flatten().copied().collect::<Vec<f64>>()
    );
    let (nc, data) = array(&piece.data.point, "mu");
    assert_eq!((nc, f64s(data)), (1, mu.clone()));
    let (nc, data) = array(&piece.data.point, "u");
    assert_eq!((nc, f64s(data)), (3, u.clone()));
    let (nc, data) = array(&piece.data.point, "strain");
    assert_eq!((nc, f64s(data)), (6, strain.clone()));
    let (nc, data) = array(&piece.data.cell, "sigma");
    assert_eq!((nc, f64s(data)), (6, sigma.clone()));
    let (_, data) = array(&piece.data.cell, "region");
    assert_eq!(data.clone(), IOBuffer::I32(vec![1, 0]));

    keep_copy(
        &path,
        &format!(
            r#"{{"points": 14, "cells": 2, "cell_type_counts": {{"tet10": 2}},
 "cell_points": [[0, {c0:?}], [1, {c1:?}]],
 "file_attributes": {{"header_type": "UInt64", "compressor": "vtkZLibDataCompressor"}},
 "arrays": [
  {{"association": "point", "name": "mu", "components": 1, "values": [[13, {m:e}]]}},
  {{"association": "point", "name": "u", "components": 3, "values": [[41, {u:e}]]}},
  {{"association": "point", "name": "strain", "components": 6, "values": [[83, {s:e}]]}},
  {{"association": "cell", "name": "sigma", "components": 6, "values": [[7, {g:e}]]}},
  {{"association": "cell", "name": "region", "components": 1, "values": [[0, 1], [1, 0]]}}
 ]}}"#,
            c0 = &mesh.blocks[0].connectivity[..10],
            c1 = &mesh.blocks[0].connectivity[10..],
            m = mu[13],
            u = u[41],
            s = strain[83],
            g = sigma[7],
        ),
    );
}

/// vtkio cuts compressed data into 32768-byte blocks. An array of exactly one block (4096
/// Float64 values) and one of exactly three blocks (4096 points × 3 coordinates) are the edge
/// cases of its block count; both must decode to the values written.
#[test]
fn arrays_filling_whole_compression_blocks_round_trip() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("blocks.vtu");
    let n = 4096;
    let points: Vec<[f64; 3]> = (0..n)
        .map(|i| [i as f64 / 7.0, (i % 13) as f64, -(i as f64)])
        .collect();
    let connectivity: Vec<usize> = (0..n - 1).flat_map(|i| [i, i + 1]).collect();
    let mesh = Mesh {
        dim: 1,
        points,
        blocks: vec![CellBlock {
            kind: CellKind::Line2,
            connectivity,
        }],
        ..Mesh::default()
    };
    let c: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).cos()).collect();
    write_vtu(
        &path,
        &mesh,
        &[FieldData::new("c", FieldKind::Scalar, c.clone())],
        &[],
    )
    .unwrap();
    let piece = read_piece(&path);
    assert_eq!(
        f64s(&piece.points),
        mesh.points.iter().flatten().copied().collect::<Vec<f64>>()
    );
    assert_eq!(f64s(array(&piece.data.point, "c").1), c);
    assert_eq!(piece.cells.types.len(), n - 1);
    keep_copy(
        &path,
        &format!(
            r#"{{"points": {n}, "cells": {cells}, "cell_type_counts": {{"line2": {cells}}},
 "arrays": [
  {{"association": "coords", "name": "Points", "components": 3, "values": [[12287, {z:e}]]}},
  {{"association": "point", "name": "c", "components": 1, "values": [[4095, {c:e}]]}}
 ]}}"#,
            cells = n - 1,
            z = -4095.0,
            c = c[4095],
        ),
    );
}

#[test]
fn wrong_length_names_the_array_and_the_expected_count() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bad.vtu");
    let mesh = quad9_mesh();
    let good = FieldData::new("c", FieldKind::Scalar, vec![0.0; 15]);

    let bad_scalar = FieldData::new("concentration", FieldKind::Scalar, vec![0.0; 14]);
    let err = write_vtu(&path, &mesh, &[good.clone(), bad_scalar], &[]).unwrap_err();
    let msg = err.to_string();
    assert!(
        matches!(
            err,
            IoError::DataLength {
                association: Association::Point,
                actual: 14,
                ..
            }
        ),
        "{err:?}"
    );
    assert!(
        msg.contains("'concentration'") && msg.contains("expected 15"),
        "{msg}"
    );

    // 2D vectors: 2 or 3 components per point are accepted, 4 is not.
    let bad_vector = FieldData::new("u", FieldKind::Vector, vec![0.0; 60]);
    let msg = write_vtu(&path, &mesh, &[bad_vector], &[])
        .unwrap_err()
        .to_string();
    assert!(msg.contains("'u'") && msg.contains("30 or 45"), "{msg}");

    let bad_tensor = FieldData::new("sigma", FieldKind::SymTensor, vec![0.0; 3 * 2]);
    let err = write_vtu(&path, &mesh, &[], &[bad_tensor]).unwrap_err();
    assert!(
        matches!(
            err,
            IoError::DataLength {
                association: Association::Cell,
                ..
            }
        ),
        "{err:?}"
    );
    assert!(
        err.to_string().contains("'sigma'") && err.to_string().contains("expected 12"),
        "{err}"
    );

    let clash = FieldData::new("region", FieldKind::Scalar, vec![0.0; 2]);
    let err = write_vtu(&path, &mesh, &[], &[clash]).unwrap_err();
    assert!(matches!(err, IoError::DuplicateArray { .. }), "{err:?}");

    let mut broken = quad9_mesh();
    broken.blocks[0].connectivity[17] = 15; // one past the last node
    let err = write_vtu(&path, &broken, &[], &[]).unwrap_err();
    assert!(matches!(err, IoError::InvalidMesh { .. }), "{err:?}");
    assert!(err.to_string().contains("node 15"), "{err}");

    assert!(
        dir_listing(dir.path()).is_empty(),
        "a failed write left a file behind"
    );
}

#[test]
fn atomic_write_replaces_the_file_and_leaves_no_temporary() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("out.txt");
    write_atomic(&path, b"first").unwrap();
    write_atomic(&path, b"second, longer").unwrap();
    assert_eq!(std::fs::read(&path).unwrap(), b"second, longer");
    assert_eq!(dir_listing(dir.path()), ["out.txt"]);

    // Renaming a file over a non-empty directory fails: the error names the operation and the
    // path, and the temporary file is cleaned up.
    let blocker = dir.path().join("blocker");
    std::fs::create_dir(&blocker).unwrap();
    std::fs::write(blocker.join("inside"), b"x").unwrap();
    let err = write_atomic(&blocker, b"data").unwrap_err();
    assert!(
        matches!(
            err,
            IoError::Io {
                operation: "rename temporary file over target",
                ..
            }
        ),
        "{err:?}"
    );
    assert!(err.to_string().contains("blocker"), "{err}");
    assert_eq!(dir_listing(dir.path()), ["blocker", "out.txt"]);

    // A missing directory: the error names the temporary file that could not be created.
    let err = write_atomic(&dir.path().join("missing").join("x.vtu"), b"data").unwrap_err();
    assert!(
        matches!(
            err,
            IoError::Io {
                operation: "create temporary file",
                ..
            }
        ),
        "{err:?}"
    );
}

/// Undo the five XML escapes (XML 1.0, section 4.6 predefined entities).
fn unescape(s: &str) -> String {
    s.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&apos;", "'")
        .replace("&amp;", "&")
}

/// (timestep, file) of every DataSet element of a PVD text.
fn parse_pvd(xml: &str) -> Vec<(String, String)> {
    assert!(xml.starts_with("<?xml version=\"1.0\"?>"));
    assert!(xml.contains("<VTKFile type=\"Collection\""));
    assert!(xml.trim_end().ends_with("</VTKFile>"));
    xml.lines()
        .filter(|l| l.trim_start().starts_with("<DataSet "))
        .map(|l| {
            (
                unescape(&xml_attr(l, "<DataSet", "timestep")),
                unescape(&xml_attr(l, "<DataSet", "file")),
            )
        })
        .collect()
}

#[test]
fn pvd_keeps_times_exactly_and_is_rewritten_after_each_add() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("run.pvd");
    let times = [
        0.0,
        0.1,
        1.0 / 3.0,
        1e-300,
        2.5,
        1.0 + f64::EPSILON,
        6.02214076e23,
        -0.0,
        5e-324,
    ];
    let mut pvd = PvdWriter::new(&path);
    for (k, &t) in times.iter().enumerate() {
        let file = if k == 2 {
            "odd & <name> \"3\".vtu".to_string()
        } else {
            format!("run_{k:04}.vtu")
        };
        pvd.add(t, &file);
        pvd.write().unwrap();
        let entries = parse_pvd(&std::fs::read_to_string(&path).unwrap());
        assert_eq!(
            entries.len(),
            k + 1,
            "collection not rewritten after add {k}"
        );
        assert_eq!(entries[k].1, file);
    }
    let entries = parse_pvd(&std::fs::read_to_string(&path).unwrap());
    for ((text, _), &t) in entries.iter().zip(&times) {
        assert_eq!(text, &format_time(t));
        let back: f64 = text.parse().unwrap();
        assert_eq!(
            back.to_bits(),
            t.to_bits(),
            "time {t:?} printed as {text} does not round-trip"
        );
    }
    assert_eq!(dir_listing(dir.path()), ["run.pvd"]);

    // A collection over two of the files kept by the other tests, for a check with VTK's
    // collection reader.
    if let Some(keep) = std::env::var_os("DILATA_IO_KEEP") {
        let keep = PathBuf::from(keep);
        std::fs::create_dir_all(&keep).unwrap();
        let mut series = PvdWriter::new(&keep.join("series.pvd"));
        series.add(0.1, "quad9.vtu");
        series.add(1.0 / 3.0, "nonfinite.vtu");
        series.write().unwrap();
    }
}

/// Edge cases a solver can produce: an empty mesh, and non-finite values after a failed step
/// (written as they are, so that the failure can be looked at).
#[test]
fn empty_mesh_and_non_finite_values_are_written() {
    let dir = tempfile::tempdir().unwrap();
    let empty = dir.path().join("empty.vtu");
    write_vtu(
        &empty,
        &Mesh {
            dim: 3,
            ..Mesh::default()
        },
        &[FieldData::new("c", FieldKind::Scalar, vec![])],
        &[],
    )
    .unwrap();
    let piece = read_piece(&empty);
    assert_eq!((piece.num_points(), piece.cells.types.len()), (0, 0));
    // vtkio omits zero counts; the writer puts them back (VTK's reader requires them).
    let xml = std::fs::read_to_string(&empty).unwrap();
    assert_eq!(xml_attr(&xml, "<Piece", "NumberOfPoints"), "0");
    assert_eq!(xml_attr(&xml, "<Piece", "NumberOfCells"), "0");
    keep_copy(
        &empty,
        r#"{"points": 0, "cells": 0, "cell_type_counts": {}}"#,
    );

    let path = dir.path().join("nonfinite.vtu");
    let mesh = quad9_mesh();
    let mut c = vec![1.0; 15];
    c[3] = f64::NAN;
    c[4] = f64::INFINITY;
    c[5] = f64::NEG_INFINITY;
    write_vtu(
        &path,
        &mesh,
        &[FieldData::new("c", FieldKind::Scalar, c)],
        &[],
    )
    .unwrap();
    let read = f64s(array(&read_piece(&path).data.point, "c").1);
    assert!(read[3].is_nan() && read[4] == f64::INFINITY && read[5] == f64::NEG_INFINITY);
    assert_eq!(read[6], 1.0);
    keep_copy(
        &path,
        r#"{"points": 15, "cells": 2, "arrays": [{"association": "point", "name": "c", "components": 1, "values": [[6, 1.0]]}]}"#,
    );
}

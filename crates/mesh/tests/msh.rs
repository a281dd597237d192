//! Reading the MSH samples in `meshes/` and rejecting malformed files with located errors.
//!
//! The samples are written by `meshes/make_samples.py` from structured grids, so the expected
//! counts below follow from the grid sizes stated in each test. Node orderings are checked by
//! geometry: after conversion every mid-edge node must sit at the midpoint of the corner pair
//! that `CellKind::edges()` names, and face/body centres at the mean of their corners.

use std::collections::BTreeMap;
use std::path::PathBuf;

use dilata_mesh::msh::{parse_msh, read_msh};
use dilata_mesh::{CellKind, Location, Mesh, MeshError};

fn sample_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../meshes")
        .join(name)
}

fn sample(name: &str) -> Mesh {
    let mesh = read_msh(&sample_path(name)).unwrap_or_else(|e| panic!("{name}: {e}"));
    mesh.validate_structure()
        .unwrap_or_else(|e| panic!("{name}: {e}"));
    mesh
}

fn sample_bytes(name: &str) -> Vec<u8> {
    std::fs::read(sample_path(name)).unwrap()
}

fn counts(mesh: &Mesh) -> BTreeMap<CellKind, usize> {
    mesh.cell_counts()
}

fn sizes<T>(sets: &BTreeMap<String, Vec<T>>) -> Vec<(&str, usize)> {
    sets.iter().map(|(k, v)| (k.as_str(), v.len())).collect()
}

fn mean(points: &[[f64; 3]]) -> [f64; 3] {
    let n = points.len() as f64;
    let mut m = [0.0; 3];
    for p in points {
        for d in 0..3 {
            m[d] += p[d] / n;
        }
    }
    m
}

fn close(a: [f64; 3], b: [f64; 3]) -> bool {
    (0..3).all(|d| (a[d] - b[d]).abs() < 1e-12)
}

/// Mid-edge nodes at edge midpoints, quad9/hex27 centres at corner means (Dilata/VTK order as
/// documented in cell.rs).
fn assert_high_order_nodes_in_place(mesh: &Mesh) {
    for (id, kind, _) in mesh.cells() {
        let x = mesh.cell_coords(id);
        if kind.order() == 2 {
            for &(a, b, m) in kind.edges() {
                assert!(
                    close(x[m], mean(&[x[a], x[b]])),
                    "{kind} cell {id}: node {m} is not the midpoint of {a}-{b}"
                );
            }
        }
        let corners = &x[..kind.n_corners()];
        if kind == CellKind::Quad9 {
            assert!(close(x[8], mean(corners)), "quad9 cell {id}: centre");
        }
        if kind == CellKind::Hex27 {
            for (i, (_, face)) in CellKind::Hex8.facets().iter().enumerate() {
                let pts: Vec<[f64; 3]> = face.iter().map(|&j| x[j]).collect();
                assert!(
                    close(x[20 + i], mean(&pts)),
                    "hex27 cell {id}: face centre {}",
                    20 + i
                );
            }
            assert!(close(x[26], mean(corners)), "hex27 cell {id}: body centre");
        }
    }
}

fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn det3(u: [f64; 3], v: [f64; 3], w: [f64; 3]) -> f64 {
    u[0] * (v[1] * w[2] - v[2] * w[1]) - u[1] * (v[0] * w[2] - v[2] * w[0])
        + u[2] * (v[0] * w[1] - v[1] * w[0])
}

/// Positive orientation: counter-clockwise corners in 2D (shoelace area), positive Jacobian at
/// the centre of 3D cells (VTK corner ordering, common practice).
fn assert_positive_orientation(mesh: &Mesh) {
    for (id, kind, _) in mesh.cells() {
        let x = mesh.cell_coords(id);
        let c = &x[..kind.n_corners()];
        let measure = match kind.dim() {
            2 => (0..c.len())
                .map(|i| {
                    let (p, q) = (c[i], c[(i + 1) % c.len()]);
                    p[0] * q[1] - q[0] * p[1]
                })
                .sum::<f64>(),
            3 if kind.linear() == CellKind::Tet4 => {
                det3(sub(c[1], c[0]), sub(c[2], c[0]), sub(c[3], c[0]))
            }
            3 => {
                // d x / d(xi, eta, zeta) at the centre of the trilinear map.
                let signs = CellKind::Hex8.reference_nodes();
                let mut j = [[0.0; 3]; 3];
                for (p, s) in c.iter().zip(&signs) {
                    for (a, col) in j.iter_mut().enumerate() {
                        for d in 0..3 {
                            col[d] += s[a] * p[d] / 8.0;
                        }
                    }
                }
                det3(j[0], j[1], j[2])
            }
            _ => 1.0,
        };
        assert!(
            measure > 0.0,
            "{kind} cell {id} is not positively oriented ({measure})"
        );
    }
}

/// Every node of every facet of a boundary satisfies `on`.
fn assert_boundary_on(mesh: &Mesh, name: &str, on: impl Fn([f64; 3]) -> bool) {
    for &f in mesh.boundary(name).unwrap() {
        for n in mesh.facet_nodes(f).1 {
            assert!(
                on(mesh.points[n]),
                "boundary {name}: node {n} at {:?}",
                mesh.points[n]
            );
        }
    }
}

fn check_tri3_plate(mesh: &Mesh) {
    // 4 x 2 squares on [0,2]x[0,1], two triangles each: 15 nodes, 16 cells.
    assert_eq!(mesh.dim, 2);
    assert_eq!(mesh.n_points(), 15);
    assert_eq!(counts(mesh), BTreeMap::from([(CellKind::Tri3, 16)]));
    assert_eq!(sizes(&mesh.regions), vec![("plate", 16)]);
    assert_eq!(
        sizes(&mesh.boundaries),
        vec![("bottom", 4), ("left", 2), ("right", 2), ("top", 4)]
    );
    assert_eq!(sizes(&mesh.node_sets), vec![("origin", 1)]);
    assert_eq!(
        mesh.points[mesh.node_set("origin").unwrap()[0]],
        [0.0, 0.0, 0.0]
    );
    assert_boundary_on(mesh, "bottom", |p| p[1] == 0.0);
    assert_boundary_on(mesh, "top", |p| p[1] == 1.0);
    assert_boundary_on(mesh, "left", |p| p[0] == 0.0);
    assert_boundary_on(mesh, "right", |p| p[0] == 2.0);
    assert!(mesh.points.iter().all(|p| p[2] == 0.0));
    assert_positive_orientation(mesh);
}

#[test]
fn tri3_plate_reads_the_same_from_every_version_and_encoding() {
    let a = sample("tri3_v22_ascii.msh");
    let b = sample("tri3_v41_ascii.msh");
    let c = sample("tri3_v41_binary.msh");
    check_tri3_plate(&a);
    check_tri3_plate(&b);
    check_tri3_plate(&c);
    assert_eq!(a, b);
    assert_eq!(b, c);
}

#[test]
fn quad9_strip_v41_ascii() {
    // Two quad9 on [0,2]x[0,1]: a 5 x 3 node lattice.
    let m = sample("quad9_v41_ascii.msh");
    assert_eq!((m.dim, m.n_points()), (2, 15));
    assert_eq!(counts(&m), BTreeMap::from([(CellKind::Quad9, 2)]));
    assert_eq!(sizes(&m.regions), vec![("sheet", 2)]);
    assert_eq!(sizes(&m.boundaries), vec![("bottom", 2), ("top", 2)]);
    assert_boundary_on(&m, "bottom", |p| p[1] == 0.0);
    assert_boundary_on(&m, "top", |p| p[1] == 1.0);
    assert_high_order_nodes_in_place(&m);
    assert_positive_orientation(&m);
}

#[test]
fn quad8_strip_v22_binary() {
    // Same strip without the two centre nodes.
    let m = sample("quad8_v22_binary.msh");
    assert_eq!((m.dim, m.n_points()), (2, 13));
    assert_eq!(counts(&m), BTreeMap::from([(CellKind::Quad8, 2)]));
    assert_eq!(sizes(&m.regions), vec![("sheet", 2)]);
    assert_eq!(sizes(&m.boundaries), vec![("bottom", 2), ("top", 2)]);
    assert_boundary_on(&m, "top", |p| p[1] == 1.0);
    assert_high_order_nodes_in_place(&m);
    assert_positive_orientation(&m);
}

fn check_tet10_block(m: &Mesh, n_cubes: usize) {
    // n unit cubes along x, six tet10 each; boundary triangles on x = 0, x = n, z = 0, z = 1
    // (two per unit square); a line3 "hinge" on the edge x = z = 0.
    let lattice = (2 * n_cubes + 1) * 3 * 3;
    assert_eq!((m.dim, m.n_points()), (3, lattice));
    assert_eq!(counts(m), BTreeMap::from([(CellKind::Tet10, 6 * n_cubes)]));
    assert_eq!(sizes(&m.regions), vec![("solid", 6 * n_cubes)]);
    assert_eq!(
        sizes(&m.boundaries),
        vec![("floor_and_roof", 4 * n_cubes), ("xmax", 2), ("xmin", 2)]
    );
    assert_eq!(sizes(&m.node_sets), vec![("hinge", 3)]);
    let xmax = n_cubes as f64;
    assert_boundary_on(m, "xmin", |p| p[0] == 0.0);
    assert_boundary_on(m, "xmax", |p| p[0] == xmax);
    assert_boundary_on(m, "floor_and_roof", |p| p[2] == 0.0 || p[2] == 1.0);
    for &n in m.node_set("hinge").unwrap() {
        assert!(m.points[n][0] == 0.0 && m.points[n][2] == 0.0);
    }
    assert_high_order_nodes_in_place(m);
    assert_positive_orientation(m);
}

#[test]
fn tet10_block_v41_ascii() {
    check_tet10_block(&sample("tet10_v41_ascii.msh"), 1);
}

#[test]
fn tet10_block_v22_binary() {
    check_tet10_block(&sample("tet10_v22_binary.msh"), 2);
}

#[test]
fn hex27_bar_v41_binary() {
    // 2 x 1 x 1 hex27: a 5 x 3 x 3 lattice; quad9 faces at x = 0 and x = 2.
    let m = sample("hex27_v41_binary.msh");
    assert_eq!((m.dim, m.n_points()), (3, 45));
    assert_eq!(counts(&m), BTreeMap::from([(CellKind::Hex27, 2)]));
    assert_eq!(sizes(&m.regions), vec![("bar", 2)]);
    assert_eq!(sizes(&m.boundaries), vec![("left", 1), ("right", 1)]);
    assert_boundary_on(&m, "left", |p| p[0] == 0.0);
    assert_boundary_on(&m, "right", |p| p[0] == 2.0);
    // The left face is the x-min face (local 0) of cell 0, the right one x-max (1) of cell 1.
    assert_eq!(m.boundary("left").unwrap()[0].local, 0);
    assert_eq!(m.boundary("right").unwrap()[0].local, 1);
    assert_high_order_nodes_in_place(&m);
    assert_positive_orientation(&m);
}

#[test]
fn hex20_column_v41_ascii() {
    // 1 x 1 x 2 hex20: 12 corners + 20 mid-edge nodes; quad8 faces at x = 0 and x = 1.
    let m = sample("hex20_v41_ascii.msh");
    assert_eq!((m.dim, m.n_points()), (3, 32));
    assert_eq!(counts(&m), BTreeMap::from([(CellKind::Hex20, 2)]));
    assert_eq!(sizes(&m.boundaries), vec![("left", 2), ("right", 2)]);
    assert_boundary_on(&m, "right", |p| p[0] == 1.0);
    assert_high_order_nodes_in_place(&m);
    assert_positive_orientation(&m);
}

#[test]
fn hex8_v22_repeated_elements_are_one_cell_in_several_groups() {
    // 2 x 2 x 1 hex8. The file lists hex 1 again under the same tag and hex 2 again under tag
    // 102 (both in "core"), and bottom face 5 again under tag 105 in "clamp"; the top face of
    // hex 1 is in group 7 of dimension 2, which has no name.
    let m = sample("hex8_v22_ascii_repeats.msh");
    assert_eq!((m.dim, m.n_points()), (3, 18));
    assert_eq!(counts(&m), BTreeMap::from([(CellKind::Hex8, 4)]));
    assert_eq!(sizes(&m.regions), vec![("body", 4), ("core", 2)]);
    assert_eq!(m.region("core").unwrap(), &[0, 1]);
    assert_eq!(
        sizes(&m.boundaries),
        vec![("bottom", 4), ("clamp", 1), ("group_2_7", 1)]
    );
    assert_eq!(
        m.boundary("clamp").unwrap()[0],
        m.boundary("bottom").unwrap()[0]
    );
    assert_boundary_on(&m, "bottom", |p| p[2] == 0.0);
    assert_boundary_on(&m, "group_2_7", |p| p[2] == 1.0);
    assert_positive_orientation(&m);
}

// ------------------------------------------------------------------ small inline files

/// A valid MSH 2.2 ASCII file with one triangle (line numbers matter to the tests below).
/// Layout: MSH specification, "MSH file format version 2" (from memory): node lines
/// `tag x y z`, element lines `tag type n-tags physical entity nodes...`.
fn tiny22() -> String {
    [
        "$MeshFormat",     // line 1
        "2.2 0 8",         // line 2
        "$EndMeshFormat",  // line 3
        "$Nodes",          // line 4
        "3",               // line 5
        "1 0 0 0",         // line 6
        "2 1 0 0",         // line 7
        "3 0 1 0",         // line 8
        "$EndNodes",       // line 9
        "$Elements",       // line 10
        "2",               // line 11
        "1 2 2 7 1 1 2 3", // line 12
        "2 1 2 8 1 1 2",   // line 13
        "$EndElements",    // line 14
        "",
    ]
    .join("\n")
}

fn parse_error(text: &str) -> (Location, String, String) {
    match parse_msh(text.as_bytes(), "bad.msh") {
        Err(MeshError::Parse {
            file,
            location,
            section,
            message,
        }) => {
            assert_eq!(file, "bad.msh");
            (location, section, message)
        }
        Err(other) => panic!("expected a parse error, got {other}"),
        Ok(_) => panic!("expected a parse error, got a mesh"),
    }
}

#[test]
fn tiny22_is_valid() {
    let m = parse_msh(tiny22().as_bytes(), "tiny.msh").unwrap();
    assert_eq!((m.dim, m.n_points(), m.n_cells()), (2, 3, 1));
    assert_eq!(sizes(&m.regions), vec![("group_2_7", 1)]);
    assert_eq!(sizes(&m.boundaries), vec![("group_1_8", 1)]);
}

#[test]
fn truncated_ascii_file_names_section_and_end() {
    // Longer node lines, so that the bytes left after the cut could still hold the three
    // nodes announced (a shorter rest is refused at the count, see msh_sizes.rs).
    let text = tiny22().replace("1 0 0 0\n2 1 0 0\n", "1 0.000 0.000 0\n2 1.000 0.000 0\n");
    let cut = &text[..text.find("3 0 1 0").unwrap() + 4];
    let (loc, section, msg) = parse_error(cut);
    assert_eq!(section, "$Nodes");
    assert!(
        msg.contains("unexpected end of file") && msg.contains("$Nodes"),
        "{msg}"
    );
    assert_eq!(loc, Location::Line { line: 8, column: 5 });
}

#[test]
fn truncated_binary_file_gives_byte_offset() {
    let bytes = sample_bytes("tri3_v41_binary.msh");
    let start = bytes.windows(10).position(|w| w == b"$Elements\n").unwrap();
    let cut = &bytes[..start + 40];
    match parse_msh(cut, "cut.msh") {
        Err(MeshError::Parse {
            location,
            section,
            message,
            ..
        }) => {
            assert_eq!(section, "$Elements");
            // The cut falls inside the fourth size_t of the section header (MSH 4.1:
            // nBlocks nElements minTag maxTag, 8 bytes each); the error points at its start.
            assert!(message.contains("unexpected end of file"), "{message}");
            assert!(message.contains("largest element tag"), "{message}");
            assert_eq!(location, Location::Byte(start + 10 + 24));
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn wrong_end_marker() {
    let (loc, section, msg) = parse_error(&tiny22().replace("$EndNodes", "$EndNode"));
    assert_eq!(section, "$Nodes");
    assert!(
        msg.contains("expected '$EndNodes'") && msg.contains("'$EndNode'"),
        "{msg}"
    );
    assert_eq!(loc, Location::Line { line: 9, column: 1 });
}

#[test]
fn more_nodes_than_announced_is_a_count_mismatch() {
    let (loc, section, msg) = parse_error(&tiny22().replace("$Nodes\n3\n", "$Nodes\n2\n"));
    assert_eq!(section, "$Nodes");
    assert!(msg.contains("after the 2 nodes announced"), "{msg}");
    assert_eq!(loc, Location::Line { line: 8, column: 1 });
}

#[test]
fn unclosed_unknown_section() {
    let text = tiny22().replace("$Nodes\n", "$Comments\nhello\n$EndComment\n$Nodes\n");
    let (loc, section, msg) = parse_error(&text);
    assert_eq!(section, "$Comments");
    assert!(msg.contains("not closed by '$EndComments'"), "{msg}");
    assert_eq!(loc, Location::Line { line: 4, column: 1 });
}

#[test]
fn unknown_sections_are_skipped() {
    let text = tiny22().replace(
        "$Nodes\n",
        "$Comments\n$Nodes inside a comment\n$EndComments\n$Nodes\n",
    );
    assert_eq!(parse_msh(text.as_bytes(), "c.msh").unwrap().n_cells(), 1);
}

#[test]
fn unknown_element_code_names_code_and_element() {
    // Code 6 is a 6-node prism in the MSH specification (from memory); Dilata has no prism.
    let (loc, section, msg) = parse_error(&tiny22().replace("1 2 2 7 1 1 2 3", "1 6 2 7 1 1 2 3"));
    assert_eq!(section, "$Elements");
    assert!(
        msg.contains("element type code 6") && msg.contains("element 1"),
        "{msg}"
    );
    assert_eq!(
        loc,
        Location::Line {
            line: 12,
            column: 3
        }
    );
}

#[test]
fn unknown_element_code_in_binary_file() {
    let mut bytes = sample_bytes("hex27_v41_binary.msh");
    // MSH 4.1 binary $Elements (specification, from memory): a header of four size_t, then per
    // block entity dim (int), entity tag (int), type (int), count (size_t).
    let data = bytes.windows(10).position(|w| w == b"$Elements\n").unwrap() + 10 + 32;
    let code_at = data + 8;
    assert_eq!(bytes[code_at..code_at + 4], 12i32.to_le_bytes());
    bytes[code_at..code_at + 4].copy_from_slice(&99i32.to_le_bytes());
    match parse_msh(&bytes, "b.msh") {
        Err(MeshError::Parse {
            location,
            section,
            message,
            ..
        }) => {
            assert_eq!(section, "$Elements");
            assert!(
                message.contains("element type code 99") && message.contains("element 1"),
                "{message}"
            );
            assert_eq!(location, Location::Byte(code_at));
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn missing_node_names_element_and_node() {
    let (loc, section, msg) = parse_error(&tiny22().replace("1 2 2 7 1 1 2 3", "1 2 2 7 1 1 2 99"));
    assert_eq!(section, "$Elements");
    assert!(msg.contains("element 1 refers to node 99"), "{msg}");
    assert_eq!(
        loc,
        Location::Line {
            line: 12,
            column: 1
        }
    );
}

#[test]
fn bad_number_gives_line_and_column_of_the_token() {
    let (loc, section, msg) = parse_error(&tiny22().replace("2 1 0 0", "2 1 x 0"));
    assert_eq!(section, "$Nodes");
    assert!(msg.contains("y coordinate") && msg.contains("'x'"), "{msg}");
    assert_eq!(loc, Location::Line { line: 7, column: 5 });
}

#[test]
fn unsupported_version() {
    let (loc, section, msg) = parse_error(&tiny22().replace("2.2 0 8", "3.0 0 8"));
    assert_eq!(section, "$MeshFormat");
    assert!(msg.contains("'3.0' is not supported"), "{msg}");
    assert_eq!(loc, Location::Line { line: 2, column: 1 });
}

#[test]
fn binary_header_checks_data_size_and_endianness() {
    // MSH specification, $MeshFormat (from memory): binary files give data size 8 and write
    // the int 1 right after the header line so that a reader can detect the byte order.
    let (_, section, msg) = parse_error("$MeshFormat\n4.1 1 4\n");
    assert_eq!(section, "$MeshFormat");
    assert!(msg.contains("data size 8"), "{msg}");
    let mut big = b"$MeshFormat\n4.1 1 8\n".to_vec();
    big.extend_from_slice(&1i32.to_be_bytes());
    big.extend_from_slice(b"\n$EndMeshFormat\n");
    match parse_msh(&big, "big.msh") {
        Err(MeshError::Parse {
            location, message, ..
        }) => {
            assert!(message.contains("big-endian"), "{message}");
            assert_eq!(location, Location::Byte(20));
        }
        other => panic!("{other:?}"),
    }
}

#[test]
fn node_count_in_v41_header_must_match_blocks() {
    // MSH 4.1 $Nodes header (specification, from memory): numEntityBlocks numNodes minTag
    // maxTag; the sample has 2 blocks and 15 nodes.
    let text = String::from_utf8(sample_bytes("tri3_v41_ascii.msh")).unwrap();
    let (_, section, msg) = parse_error(&text.replace("$Nodes\n2 15 ", "$Nodes\n2 16 "));
    assert_eq!(section, "$Nodes");
    assert!(
        msg.contains("announces 16 nodes but the blocks hold 15"),
        "{msg}"
    );
}

#[test]
fn fewer_elements_than_announced_is_a_count_mismatch() {
    let (loc, section, msg) = parse_error(&tiny22().replace("$Elements\n2\n", "$Elements\n3\n"));
    assert_eq!(section, "$Elements");
    assert!(
        msg.contains("found '$EndElements'") && msg.contains("section ends before"),
        "{msg}"
    );
    assert_eq!(
        loc,
        Location::Line {
            line: 14,
            column: 1
        }
    );
}

#[test]
fn v41_element_of_an_entity_missing_from_entities_is_an_error() {
    let text = String::from_utf8(sample_bytes("quad9_v41_ascii.msh")).unwrap();
    // The first element block belongs to surface 1; point it at surface 9, which is not listed.
    let start = text.find("$Elements\n").unwrap();
    let block = text[start..].find("\n2 1 10 ").unwrap() + start;
    let bad = format!(
        "{}\n2 9 10 {}",
        &text[..block],
        &text[block + "\n2 1 10 ".len()..]
    );
    let (_, section, msg) = parse_error(&bad);
    assert_eq!(section, "$Elements");
    assert!(
        msg.contains("entity (dimension 2, tag 9), which is not listed in $Entities"),
        "{msg}"
    );
}

#[test]
fn one_d_mesh_point_groups_are_boundaries() {
    // Two line3 on [0, 2]; the end points are point elements in groups 1 and 2 (MSH 2.2
    // element line: tag type n-tags physical entity nodes; from memory of the specification).
    let text = "$MeshFormat\n2.2 0 8\n$EndMeshFormat\n\
                $Nodes\n5\n1 0 0 0\n2 1 0 0\n3 2 0 0\n4 0.5 0 0\n5 1.5 0 0\n$EndNodes\n\
                $Elements\n4\n1 8 2 3 1 1 2 4\n2 8 2 3 1 2 3 5\n3 15 2 1 1 1\n4 15 2 2 2 3\n$EndElements\n";
    let m = parse_msh(text.as_bytes(), "bar.msh").unwrap();
    assert_eq!((m.dim, m.n_cells()), (1, 2));
    assert_eq!(
        sizes(&m.boundaries),
        vec![("group_0_1", 1), ("group_0_2", 1)]
    );
    // Point 1 is the first end of cell 0 (local facet 0); point 3 the second end of cell 1.
    assert_eq!(
        m.boundary("group_0_1").unwrap()[0],
        dilata_mesh::Facet { cell: 0, local: 0 }
    );
    assert_eq!(
        m.boundary("group_0_2").unwrap()[0],
        dilata_mesh::Facet { cell: 1, local: 1 }
    );
    assert_high_order_nodes_in_place(&m);
}

#[test]
fn ungrouped_cells_stay_ungrouped_facets_go_and_internal_facets_attach_to_the_first_cell() {
    // Two triangles of the unit square; physical tag 0 means "no group" (MSH 2.2
    // specification, element tags; from memory). Element 3 lies on the shared diagonal.
    let text = "$MeshFormat\n2.2 0 8\n$EndMeshFormat\n\
                $Nodes\n4\n1 0 0 0\n2 1 0 0\n3 1 1 0\n4 0 1 0\n$EndNodes\n\
                $Elements\n4\n1 2 2 0 1 1 2 3\n2 2 2 7 1 1 3 4\n3 1 2 8 1 3 1\n4 1 2 0 1 1 2\n$EndElements\n";
    let m = parse_msh(text.as_bytes(), "square.msh").unwrap();
    assert_eq!(m.n_cells(), 2);
    assert_eq!(m.region("group_2_7").unwrap(), &[1]);
    assert_eq!(sizes(&m.boundaries), vec![("group_1_8", 1)]);
    // Cell 0 has nodes (1, 2, 3); its local facet 2 runs from node 3 to node 1.
    assert_eq!(
        m.boundary("group_1_8").unwrap(),
        &[dilata_mesh::Facet { cell: 0, local: 2 }]
    );
}

#[test]
fn file_without_groups_gives_cells_only() {
    let text = tiny22()
        .replace("1 2 2 7 1", "1 2 2 0 1")
        .replace("2 1 2 8 1", "2 1 2 0 1");
    let m = parse_msh(text.as_bytes(), "plain.msh").unwrap();
    assert_eq!(m.n_cells(), 1);
    assert!(m.regions.is_empty() && m.boundaries.is_empty() && m.node_sets.is_empty());
}

#[test]
fn windows_line_endings_are_accepted() {
    let m = parse_msh(tiny22().replace('\n', "\r\n").as_bytes(), "crlf.msh").unwrap();
    assert_eq!((m.n_points(), m.n_cells()), (3, 1));
    assert_eq!(sizes(&m.boundaries), vec![("group_1_8", 1)]);
}

#[test]
fn facet_element_that_is_no_cell_face_is_an_error() {
    let (_, section, msg) = parse_error(&tiny22().replace("2 1 2 8 1 1 2", "2 1 2 8 1 1 1"));
    assert_eq!(section, "$Elements");
    assert!(msg.contains("line2 element 2 is not a facet"), "{msg}");
}

#[test]
fn same_tag_for_different_elements_is_an_error() {
    let text = tiny22().replace("2 1 2 8 1 1 2", "1 1 2 8 1 1 2");
    let (_, _, msg) = parse_error(&text);
    assert!(msg.contains("element tag 1 is used twice"), "{msg}");
}

#[test]
fn absurd_counts_do_not_allocate_or_panic() {
    let text = tiny22().replace("$Nodes\n3\n", "$Nodes\n18446744073709551615\n");
    let (loc, section, msg) = parse_error(&text);
    assert_eq!(section, "$Nodes");
    // Refused at the count by the size check, before anything is allocated for it.
    assert_eq!(loc, Location::Line { line: 5, column: 1 });
    assert!(
        msg.contains("announces 18446744073709551615 nodes, but only"),
        "{msg}"
    );
    let (_, _, msg) =
        parse_error(&tiny22().replace("$Nodes\n3\n", "$Nodes\n18446744073709551616\n"));
    assert!(msg.contains("the number of nodes"), "{msg}");
}

#[test]
fn two_d_mesh_must_lie_in_the_z_plane() {
    let (_, section, msg) = parse_error(&tiny22().replace("3 0 1 0\n", "3 0 1 0.5\n"));
    assert_eq!(section, "$Nodes");
    assert!(msg.contains("node 3 has z = 0.5"), "{msg}");
}

#[test]
fn v41_parametric_nodes_are_skipped() {
    // A surface block with parametric = 1 carries u, v after x, y, z (MSH 4.1 specification,
    // $Nodes; from memory).
    let text = "$MeshFormat\n4.1 0 8\n$EndMeshFormat\n\
                $Entities\n0 0 1 0\n1 0 0 0 1 1 0 1 5 0\n$EndEntities\n\
                $Nodes\n1 3 1 3\n2 1 1 3\n1\n2\n3\n0 0 0 0.25 0.5\n1 0 0 0.75 0.5\n0 1 0 0.5 0.75\n$EndNodes\n\
                $Elements\n1 1 1 1\n2 1 2 1\n1 1 2 3\n$EndElements\n";
    let m = parse_msh(text.as_bytes(), "p.msh").unwrap();
    assert_eq!(
        m.points,
        vec![[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]]
    );
    assert_eq!(sizes(&m.regions), vec![("group_2_5", 1)]);
}

#[test]
fn missing_file_is_an_io_error() {
    let e = read_msh(&sample_path("no_such_file.msh")).unwrap_err();
    assert!(matches!(e, MeshError::Io { .. }), "{e}");
}

// ------------------------------------------------------------------ robustness

const SAMPLES: [&str; 10] = [
    "tri3_v22_ascii.msh",
    "tri3_v41_ascii.msh",
    "tri3_v41_binary.msh",
    "quad9_v41_ascii.msh",
    "quad8_v22_binary.msh",
    "tet10_v41_ascii.msh",
    "tet10_v22_binary.msh",
    "hex8_v22_ascii_repeats.msh",
    "hex27_v41_binary.msh",
    "hex20_v41_ascii.msh",
];

#[test]
fn every_prefix_of_every_sample_is_rejected_without_panic() {
    for name in SAMPLES {
        let bytes = sample_bytes(name);
        // Cutting before the last end marker must fail; only trailing white space may go.
        let last_marker = bytes.iter().rposition(|&b| b == b'$').unwrap();
        for len in 0..=last_marker {
            assert!(
                parse_msh(&bytes[..len], name).is_err(),
                "{name} cut at {len} parsed"
            );
        }
    }
}

mod fuzz {
    use super::{sample_bytes, SAMPLES};
    use dilata_mesh::msh::parse_msh;
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]

        /// Overwrite, insert and delete bytes of a valid sample; the reader may accept or
        /// reject the result, but must not panic.
        #[test]
        fn mutated_samples_never_panic(
            which in 0..SAMPLES.len(),
            edits in proptest::collection::vec((any::<prop::sample::Index>(), any::<u8>(), 0u8..3), 1..8),
            cut in any::<prop::sample::Index>(),
        ) {
            let mut bytes = sample_bytes(SAMPLES[which]);
            for (at, byte, op) in edits {
                let i = at.index(bytes.len().max(1));
                match op {
                    0 if i < bytes.len() => bytes[i] = byte,
                    1 => bytes.insert(i.min(bytes.len()), byte),
                    _ if i < bytes.len() => { bytes.remove(i); }
                    _ => {}
                }
            }
            let len = bytes.len();
            let keep = len - cut.index(len.max(1)) / 4;
            let _ = parse_msh(&bytes[..keep.min(len)], "fuzz.msh");
        }

        /// Digits replaced by other digits keep the syntax but change counts, tags and codes.
        #[test]
        fn digit_changes_never_panic(
            which in 0..SAMPLES.len(),
            edits in proptest::collection::vec((any::<prop::sample::Index>(), 0u8..10), 1..6),
        ) {
            let mut bytes = sample_bytes(SAMPLES[which]);
            let digits: Vec<usize> = (0..bytes.len()).filter(|&i| bytes[i].is_ascii_digit()).collect();
            for (at, d) in edits {
                let i = digits[at.index(digits.len())];
                bytes[i] = b'0' + d;
            }
            let _ = parse_msh(&bytes, "fuzz.msh");
        }
    }
}

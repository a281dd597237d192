//! Reader for MSH format 2.2 and 4.1 files, ASCII and binary (an open, documented
//! mesh-interchange format).
//!
//! ```
//! use dilata_mesh::msh::parse_msh;
//! let text = "$MeshFormat\n2.2 0 8\n$EndMeshFormat\n\
//!             $PhysicalNames\n1\n2 7 \"plate\"\n$EndPhysicalNames\n\
//!             $Nodes\n3\n1 0 0 0\n2 1 0 0\n3 0 1 0\n$EndNodes\n\
//!             $Elements\n1\n1 2 2 7 1 1 2 3\n$EndElements\n";
//! let mesh = parse_msh(text.as_bytes(), "plate.msh").unwrap();
//! assert_eq!((mesh.dim, mesh.n_points(), mesh.n_cells()), (2, 3, 1));
//! assert_eq!(mesh.region("plate").unwrap(), &[0]);
//! ```
//!
//! # What is read
//!
//! Sections `$MeshFormat`, `$PhysicalNames`, `$Entities` (4.1), `$Nodes` and `$Elements`; any
//! other section (`$Comments`, `$NodeData`, ...) is skipped up to its `$End...` line. Binary
//! files must be little endian (the marker integer reads 1) with 8-byte `size_t`.
//! Element type codes 15 (point), 1 and 8 (lines), 2 and 9 (triangles), 3, 16 and 10
//! (quadrilaterals), 4 and 11 (tetrahedra), 5, 17 and 12 (hexahedra) are accepted; node
//! orderings are converted to Dilata's (see [`crate::cell`]).
//!
//! # How the file becomes a mesh
//!
//! * The mesh dimension is the highest element dimension in the file (1, 2 or 3); elements of that
//!   dimension are the cells, one block per kind in order of first appearance, cells in file
//!   order. Cells without a physical group still belong to the body.
//! * Each physical group of cells becomes a region; each physical group of elements one
//!   dimension lower becomes a boundary, each element matched (by its corner nodes) to a facet
//!   of a cell; a facet shared by two cells is attached to the cell with the lower id (so in a
//!   1D mesh, point groups are boundaries). Physical groups of still lower dimension become node
//!   sets (all nodes of their elements), e.g. point and line groups of a 3D mesh.
//!   Lower-dimension elements without a physical group are dropped.
//! * Names come from `$PhysicalNames`; a group without a name is called `group_<dim>_<tag>`
//!   (see [`default_group_name`]). Groups of one dimension with the same name are merged.
//! * An element listed more than once (MSH 2.2 repeats an element once per physical group) is
//!   one cell belonging to every group listed; repeats are recognised by element tag and, in
//!   2.2 files, by an identical set of nodes under another tag.
//! * Node tags may be sparse and unordered; points keep file order. A 2D mesh must lie in the
//!   plane z = 0 (z is set exactly to zero within round-off).
//!
//! Counts in section headers (nodes, elements, physical tags of an entity) are checked against
//! the bytes left in the file before anything is allocated for them: a count that the rest of
//! the file cannot hold, at the smallest possible record size, is refused where it is written.
//!
//! Every problem is a [`MeshError::Parse`] with the file label, the location (line and column
//! in ASCII files, byte offset in binary files), the section and what was expected.

mod build;
mod cursor;
mod kinds;
mod v2;
mod v4;

use std::collections::HashMap;
use std::path::Path;

use crate::error::MeshError;
use crate::mesh::Mesh;

pub use build::default_group_name;

use build::{build_mesh, RawMesh, Repeats};
use cursor::{show, Cursor, Encoding};

/// MSH format versions this reader understands.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum MshVersion {
    /// Format 2.2.
    V2_2,
    /// Format 4.1.
    V4_1,
}

/// Read an MSH file from disk; see the [module documentation](self) for the rules.
pub fn read_msh(path: &Path) -> Result<Mesh, MeshError> {
    let bytes = std::fs::read(path).map_err(|source| MeshError::Io {
        path: path.display().to_string(),
        source,
    })?;
    parse_msh(&bytes, &path.display().to_string())
}

/// Parse the bytes of an MSH file; `file_label` names the file in error messages.
pub fn parse_msh(bytes: &[u8], file_label: &str) -> Result<Mesh, MeshError> {
    let mut cur = Cursor::new(bytes, file_label);
    let version = read_header(&mut cur)?;
    let mut raw = RawMesh {
        repeats: match version {
            MshVersion::V2_2 => Repeats::SameTagOrSameNodes,
            MshVersion::V4_1 => Repeats::SameTag,
        },
        names: HashMap::new(),
        entities: None,
        node_tags: Vec::new(),
        points: Vec::new(),
        nodes_offset: None,
        elements: Vec::new(),
        element_nodes: Vec::new(),
        elements_offset: None,
    };
    let mut seen_names = false;
    loop {
        cur.set_section("(between sections)");
        if cur.at_end() {
            break;
        }
        let (start, tok) = cur.token("a section start")?;
        let Some(name) = tok.strip_prefix(b"$") else {
            return Err(cur.error_at(
                start,
                format!(
                    "expected a section start such as '$Nodes', found '{}'",
                    show(tok)
                ),
            ));
        };
        let name = String::from_utf8_lossy(name).into_owned();
        if name.starts_with("End") || name.is_empty() {
            return Err(cur.error_at(
                start,
                format!("unexpected '{}' outside any section", show(tok)),
            ));
        }
        cur.set_section(&format!("${name}"));
        // Binary data starts on the line after the section start.
        cur.end_of_line("the section content")?;
        let duplicate = match name.as_str() {
            "MeshFormat" => true,
            "PhysicalNames" => std::mem::replace(&mut seen_names, true),
            "Entities" if version == MshVersion::V4_1 => raw.entities.is_some(),
            "Nodes" => raw.nodes_offset.is_some(),
            "Elements" => raw.elements_offset.is_some(),
            _ => false,
        };
        if duplicate {
            return Err(cur.error_at(start, format!("section ${name} appears more than once")));
        }
        match (name.as_str(), version) {
            ("PhysicalNames", _) => read_physical_names(&mut cur, &mut raw)?,
            ("Entities", MshVersion::V4_1) => v4::read_entities(&mut cur, &mut raw)?,
            ("Nodes", v) => {
                raw.nodes_offset = Some(start);
                match v {
                    MshVersion::V2_2 => v2::read_nodes(&mut cur, &mut raw)?,
                    MshVersion::V4_1 => v4::read_nodes(&mut cur, &mut raw)?,
                }
            }
            ("Elements", v) => {
                raw.elements_offset = Some(start);
                match v {
                    MshVersion::V2_2 => v2::read_elements(&mut cur, &mut raw)?,
                    MshVersion::V4_1 => v4::read_elements(&mut cur, &mut raw)?,
                }
            }
            _ => cur.skip_section(&name, start)?,
        }
    }
    build_mesh(&raw, cur.locator())
}

/// Read `$MeshFormat` and set the cursor's encoding; returns the version.
fn read_header(cur: &mut Cursor<'_>) -> Result<MshVersion, MeshError> {
    cur.set_section("$MeshFormat");
    let (start, tok) = cur.token("'$MeshFormat'")?;
    if tok != b"$MeshFormat" {
        return Err(cur.error_at(
            start,
            format!(
                "an MSH file must start with '$MeshFormat', found '{}'",
                show(tok)
            ),
        ));
    }
    let (at, version_tok) = cur.token("the format version")?;
    let version = match version_tok {
        b"2.2" => MshVersion::V2_2,
        b"4.1" => MshVersion::V4_1,
        other => {
            return Err(cur.error_at(
                at,
                format!(
                    "MSH format version '{}' is not supported; supported versions: 2.2, 4.1",
                    show(other)
                ),
            ))
        }
    };
    cur.skip_space();
    let type_at = cur.offset();
    let encoding = match cur.text_uint("the file type (0 ASCII, 1 binary)")? {
        0 => Encoding::Ascii,
        1 => Encoding::Binary,
        t => {
            return Err(cur.error_at(
                type_at,
                format!("expected the file type 0 (ASCII) or 1 (binary), found {t}"),
            ))
        }
    };
    cur.skip_space();
    let size_at = cur.offset();
    let data_size = cur.text_uint("the data size")?;
    if encoding == Encoding::Binary {
        if data_size != 8 {
            return Err(cur.error_at(
                size_at,
                format!("binary files must have data size 8 (8-byte size_t), found {data_size}"),
            ));
        }
        cur.end_of_line("the endianness marker")?;
        cur.set_encoding(Encoding::Binary);
        let marker_at = cur.offset();
        let one = cur.bin_i32("the endianness marker (the integer 1)")?;
        if one != 1 {
            let hint = if one == 0x0100_0000 {
                " (a big-endian file, which is not supported)"
            } else {
                ""
            };
            return Err(cur.error_at(
                marker_at,
                format!("expected the endianness marker 1, read {one}{hint}"),
            ));
        }
    }
    cur.expect_token("$EndMeshFormat")?;
    Ok(version)
}

/// Read `$PhysicalNames` (always text): a count, then `dim tag "name"` per line.
fn read_physical_names(cur: &mut Cursor<'_>, raw: &mut RawMesh) -> Result<(), MeshError> {
    let count = cur.text_uint("the number of physical names")?;
    for _ in 0..count {
        cur.skip_space();
        let at = cur.offset();
        let dim = cur.text_uint("the dimension of a physical group")?;
        let dim = match usize::try_from(dim) {
            Ok(d) if d <= 3 => d,
            _ => return Err(cur.error_at(at, format!("expected a dimension 0 to 3, found {dim}"))),
        };
        let tag = cur.text_int("the tag of a physical group")?;
        let name = cur.quoted("the name of a physical group")?;
        raw.names.insert((dim, tag), name);
    }
    cur.expect_end("$EndPhysicalNames", &format!("the {count} names announced"))
}

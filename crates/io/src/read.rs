//! Reading back what this crate writes: the `.pvd` collection of a run ([`read_pvd`]) and one
//! `.vtu` snapshot ([`read_vtu`]), for figures drawn from a run's own results.
//!
//! The VTU file is decoded by `vtkio` (the same crate that writes it: XML, zlib-compressed
//! binary arrays, 64-bit headers); the collection is read by a small parser of exactly the
//! layout [`crate::PvdWriter`] writes (one `<DataSet .../>` element per line with `timestep` and
//! `file` attributes). Files of other origin may work but are not the aim.

use std::path::{Path, PathBuf};

use vtkio::model::{Attribute, CellType, DataSet};
use vtkio::Vtk;

use crate::error::IoError;

/// One snapshot read back: points, cells (VTK type id and node list) and point arrays.
#[derive(Clone, Debug, PartialEq)]
pub struct VtuSnapshot {
    /// Point coordinates (always three).
    pub points: Vec<[f64; 3]>,
    /// VTK cell type id (see [`crate::vtk_cell_type`]) and node indices of every cell, in file
    /// order.
    pub cells: Vec<(u8, Vec<usize>)>,
    /// Point arrays in file order: name, components per point, values point-major.
    pub point_arrays: Vec<PointArray>,
}

/// A point array of a snapshot.
#[derive(Clone, Debug, PartialEq)]
pub struct PointArray {
    /// Name in the file.
    pub name: String,
    /// Components per point.
    pub components: usize,
    /// Values, point-major.
    pub values: Vec<f64>,
}

impl VtuSnapshot {
    /// The point array called `name`, if any.
    pub fn point_array(&self, name: &str) -> Option<&PointArray> {
        self.point_arrays.iter().find(|a| a.name == name)
    }

    /// Names of the point arrays, in file order.
    pub fn point_array_names(&self) -> Vec<&str> {
        self.point_arrays.iter().map(|a| a.name.as_str()).collect()
    }
}

fn bad(path: &Path, message: impl Into<String>) -> IoError {
    IoError::Read {
        path: path.to_path_buf(),
        message: message.into(),
    }
}

/// Read one `.vtu` file written by [`crate::write_vtu`].
pub fn read_vtu(path: &Path) -> Result<VtuSnapshot, IoError> {
    if !path.is_file() {
        return Err(bad(path, "no such file"));
    }
    let vtk = Vtk::import(path).map_err(|e| bad(path, format!("not a readable VTK file: {e}")))?;
    let DataSet::UnstructuredGrid { pieces, .. } = vtk.data else {
        return Err(bad(path, "not an unstructured grid (.vtu)"));
    };
    if pieces.len() != 1 {
        return Err(bad(
            path,
            format!("{} pieces, expected exactly one", pieces.len()),
        ));
    }
    let piece = pieces
        .into_iter()
        .next()
        .expect("one piece")
        .into_loaded_piece_data(None)
        .map_err(|e| bad(path, format!("cannot load the piece: {e}")))?;
    let coords = piece
        .points
        .cast_into::<f64>()
        .ok_or_else(|| bad(path, "point coordinates are not numbers"))?;
    if coords.len() % 3 != 0 {
        return Err(bad(
            path,
            format!("{} point coordinates, not a multiple of 3", coords.len()),
        ));
    }
    let points: Vec<[f64; 3]> = coords.chunks_exact(3).map(|p| [p[0], p[1], p[2]]).collect();
    let n = points.len();
    let types = piece.cells.types;
    let (connectivity, offsets) = piece.cells.cell_verts.into_xml();
    if offsets.len() != types.len() {
        return Err(bad(
            path,
            format!(
                "{} cell offsets but {} cell types",
                offsets.len(),
                types.len()
            ),
        ));
    }
    let mut cells = Vec::with_capacity(types.len());
    let mut start = 0_usize;
    for (i, (&end, &kind)) in offsets.iter().zip(&types).enumerate() {
        let end = end as usize;
        if end < start || end > connectivity.len() {
            return Err(bad(path, format!("cell {i}: offset {end} out of order")));
        }
        let nodes: Vec<usize> = connectivity[start..end]
            .iter()
            .map(|&v| v as usize)
            .collect();
        if let Some(&m) = nodes.iter().find(|&&v| v >= n) {
            return Err(bad(
                path,
                format!("cell {i}: node {m} but the file has {n} points"),
            ));
        }
        cells.push((cell_type_id(kind), nodes));
        start = end;
    }
    let mut point_arrays = Vec::new();
    for attribute in piece.data.point {
        let Attribute::DataArray(array) = attribute else {
            continue;
        };
        let values = array
            .data
            .cast_into::<f64>()
            .ok_or_else(|| bad(path, format!("point array '{}' is not numeric", array.name)))?;
        let components = values.len().checked_div(n).unwrap_or(1);
        if components == 0 || components * n != values.len() {
            return Err(bad(
                path,
                format!(
                    "point array '{}' has {} values for {n} points",
                    array.name,
                    values.len()
                ),
            ));
        }
        point_arrays.push(PointArray {
            name: array.name,
            components,
            values,
        });
    }
    Ok(VtuSnapshot {
        points,
        cells,
        point_arrays,
    })
}

/// VTK's numeric id of a vtkio cell type.
fn cell_type_id(kind: CellType) -> u8 {
    kind as u8
}

/// Read a `.pvd` collection written by [`crate::PvdWriter`]: (time, data file path) in file
/// order, the data file paths resolved against the collection's directory.
pub fn read_pvd(path: &Path) -> Result<Vec<(f64, PathBuf)>, IoError> {
    let text = std::fs::read_to_string(path).map_err(|e| bad(path, e.to_string()))?;
    let base = path.parent().unwrap_or(Path::new("."));
    let mut out = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let line = line.trim();
        if !line.starts_with("<DataSet") {
            continue;
        }
        let at = |message: String| bad(path, format!("line {}: {message}", i + 1));
        let time_text = attribute(line, "timestep")
            .ok_or_else(|| at("DataSet without a timestep attribute".into()))?;
        let time: f64 = time_text
            .parse()
            .map_err(|_| at(format!("timestep '{time_text}' is not a number")))?;
        let file =
            attribute(line, "file").ok_or_else(|| at("DataSet without a file attribute".into()))?;
        out.push((time, base.join(unescape_attribute(&file))));
    }
    if out.is_empty() && !text.contains("<Collection") {
        return Err(bad(path, "not a VTK collection (no <Collection> element)"));
    }
    Ok(out)
}

/// The value of `name="..."` in one XML start tag (no quotes inside; the writer escapes them).
fn attribute(tag: &str, name: &str) -> Option<String> {
    let key = format!(" {name}=\"");
    let start = tag.find(&key)? + key.len();
    let end = tag[start..].find('"')? + start;
    Some(tag[start..end].to_string())
}

/// Undo the escaping of `PvdWriter` (XML 1.0 predefined entities).
fn unescape_attribute(text: &str) -> String {
    text.replace("&quot;", "\"")
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&amp;", "&")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{write_vtu, FieldData, FieldKind, PvdWriter};
    use dilata_mesh::{CellBlock, CellKind, Mesh};

    #[test]
    fn a_written_snapshot_reads_back_exactly() {
        let dir = tempfile::tempdir().unwrap();
        let mesh = Mesh {
            dim: 2,
            points: vec![
                [0.0, 0.0, 0.0],
                [1.0, 0.0, 0.0],
                [1.0, 1.0, 0.0],
                [0.0, 1.0, 0.0],
                [2.0, 0.0, 0.0],
            ],
            blocks: vec![
                CellBlock {
                    kind: CellKind::Quad4,
                    connectivity: vec![0, 1, 2, 3],
                },
                CellBlock {
                    kind: CellKind::Tri3,
                    connectivity: vec![1, 4, 2],
                },
            ],
            ..Mesh::default()
        };
        let c = FieldData::new("c", FieldKind::Scalar, vec![0.5, 1.0, 2.0, 3.0, -0.1]);
        let u = FieldData::new("u", FieldKind::Vector, (0..10).map(f64::from).collect());
        let path = dir.path().join("s.vtu");
        write_vtu(&path, &mesh, &[u, c], &[]).unwrap();
        let snap = read_vtu(&path).unwrap();
        assert_eq!(snap.points, mesh.points);
        assert_eq!(snap.cells, vec![(9, vec![0, 1, 2, 3]), (5, vec![1, 4, 2])]);
        assert_eq!(snap.point_array_names(), vec!["u", "c"]);
        let c = snap.point_array("c").unwrap();
        assert_eq!(
            (c.components, c.values.clone()),
            (1, vec![0.5, 1.0, 2.0, 3.0, -0.1])
        );
        // Vectors come back padded to three components.
        let u = snap.point_array("u").unwrap();
        assert_eq!(u.components, 3);
        assert_eq!(&u.values[..6], &[0.0, 1.0, 0.0, 2.0, 3.0, 0.0]);

        let mut pvd = PvdWriter::new(&dir.path().join("f.pvd"));
        pvd.add(0.0, "s.vtu");
        pvd.add(2.5e-1, "a&b.vtu");
        pvd.write().unwrap();
        let entries = read_pvd(&dir.path().join("f.pvd")).unwrap();
        assert_eq!(
            entries,
            vec![
                (0.0, dir.path().join("s.vtu")),
                (0.25, dir.path().join("a&b.vtu"))
            ]
        );
    }

    #[test]
    fn unreadable_files_name_the_file() {
        let dir = tempfile::tempdir().unwrap();
        let missing = dir.path().join("none.vtu");
        let e = read_vtu(&missing).unwrap_err().to_string();
        assert!(e.contains("none.vtu") && e.contains("no such file"), "{e}");
        let junk = dir.path().join("junk.vtu");
        std::fs::write(&junk, "hello").unwrap();
        let e = read_vtu(&junk).unwrap_err().to_string();
        assert!(e.contains("junk.vtu"), "{e}");
        let pvd = dir.path().join("x.pvd");
        std::fs::write(
            &pvd,
            "<Collection>\n<DataSet timestep=\"abc\" file=\"a.vtu\"/>\n",
        )
        .unwrap();
        let e = read_pvd(&pvd).unwrap_err().to_string();
        assert!(
            e.contains("x.pvd") && e.contains("line 2") && e.contains("abc"),
            "{e}"
        );
    }
}

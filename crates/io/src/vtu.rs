//! VTK XML unstructured-grid (`.vtu`) writer, built on the `vtkio` crate.
//!
//! File layout (VTK file formats documentation, "XML File Formats", UnstructuredGrid):
//! `VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian"
//! header_type="UInt64" compressor="vtkZLibDataCompressor"`, one `Piece`, every `DataArray`
//! inline with `format="binary"` (base64 of the zlib-compressed block layout). Points and all
//! field data are Float64; `connectivity` and `offsets` are UInt64, `types` is UInt8; the cell
//! array `region` is Int32.

use std::collections::BTreeSet;
use std::path::Path;

use dilata_mesh::{CellKind, Mesh};
use vtkio::model::{
    Attribute, Attributes, ByteOrder, CellType, Cells, DataArray, DataSet, ElementType, IOBuffer,
    UnstructuredGridPiece, Version, VertexNumbers, Vtk,
};
use vtkio::xml::Compressor;

use crate::atomic::write_atomic;
use crate::error::{Association, IoError};

/// zlib level used for every array: a balance of speed and size (flate2 levels 0-9).
const ZLIB_LEVEL: u32 = 6;

/// Name of the Int32 cell array holding [`Mesh::region_ids`]; reserved.
pub const REGION_ARRAY: &str = "region";

/// What one entity (point or cell) carries in a [`FieldData`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum FieldKind {
    /// One value per entity.
    Scalar,
    /// `mesh.dim` or 3 values per entity; written padded with zeros to 3 components.
    Vector,
    /// 6 values per entity in VTK's symmetric-tensor order XX, YY, ZZ, XY, YZ, XZ, in 2D too.
    ///
    /// Order checked with the `vtk` Python package 9.7.2: vtkTensorPrincipalInvariants on a
    /// 6-component array gives the eigenvalues of the matrix built in exactly this order.
    SymTensor,
    /// 9 values per entity, a full (non-symmetric) tensor row by row: XX, XY, XZ, YX, YY, YZ,
    /// ZX, ZY, ZZ, in 2D too.
    Tensor,
}

/// A named array of point or cell values.
///
/// `values` is entity-major: all components of entity 0, then entity 1, and so on.
/// Scalar: 1 per entity. Vector: `mesh.dim` (or 3) components per entity, written padded to 3.
/// SymTensor: 6 components per entity in VTK order XX, YY, ZZ, XY, YZ, XZ (always 6, also in 2D).
#[derive(Clone, Debug, PartialEq)]
pub struct FieldData {
    /// Array name as it appears in the file.
    pub name: String,
    /// How many components each entity has.
    pub kind: FieldKind,
    /// The values, entity-major.
    pub values: Vec<f64>,
}

impl FieldData {
    /// Convenience constructor.
    pub fn new(name: impl Into<String>, kind: FieldKind, values: Vec<f64>) -> Self {
        FieldData {
            name: name.into(),
            kind,
            values,
        }
    }
}

/// VTK cell type of a Dilata cell kind (ids from vtkCellType.h; checked against the `vtk` Python
/// package 9.7.2: vtkCommonDataModel constants VTK_VERTEX … VTK_TRIQUADRATIC_HEXAHEDRON).
pub fn vtk_cell_type(kind: CellKind) -> u8 {
    vtkio_cell_type(kind) as u8
}

fn vtkio_cell_type(kind: CellKind) -> CellType {
    match kind {
        CellKind::Point1 => CellType::Vertex,                // 1
        CellKind::Line2 => CellType::Line,                   // 3
        CellKind::Line3 => CellType::QuadraticEdge,          // 21
        CellKind::Tri3 => CellType::Triangle,                // 5
        CellKind::Tri6 => CellType::QuadraticTriangle,       // 22
        CellKind::Quad4 => CellType::Quad,                   // 9
        CellKind::Quad8 => CellType::QuadraticQuad,          // 23
        CellKind::Quad9 => CellType::BiquadraticQuad,        // 28
        CellKind::Tet4 => CellType::Tetra,                   // 10
        CellKind::Tet10 => CellType::QuadraticTetra,         // 24
        CellKind::Hex8 => CellType::Hexahedron,              // 12
        CellKind::Hex20 => CellType::QuadraticHexahedron,    // 25
        CellKind::Hex27 => CellType::TriquadraticHexahedron, // 29
    }
}

/// Write `mesh` with the given point and cell arrays to a `.vtu` file at `path`, atomically.
///
/// Besides the given arrays, an Int32 cell array `region` holds [`Mesh::region_ids`] (`-1` for
/// cells in no region). Connectivity is written as stored: Dilata's node order is VTK's.
/// Every array's length is checked first; a wrong length gives [`IoError::DataLength`] naming the
/// array and the expected count, and nothing is written.
pub fn write_vtu(
    path: &Path,
    mesh: &Mesh,
    point_data: &[FieldData],
    cell_data: &[FieldData],
) -> Result<(), IoError> {
    // vtkio stores the piece's point and cell counts as u32 (and panics beyond).
    for (what, count) in [("points", mesh.n_points()), ("cells", mesh.n_cells())] {
        if u32::try_from(count).is_err() {
            return Err(IoError::TooLarge {
                path: path.to_path_buf(),
                what,
                count,
            });
        }
    }
    mesh.validate_structure()
        .map_err(|source| IoError::InvalidMesh {
            path: path.to_path_buf(),
            source,
        })?;
    let point_attrs = build_attributes(path, mesh, Association::Point, point_data)?;
    let mut cell_attrs = build_attributes(path, mesh, Association::Cell, cell_data)?;
    cell_attrs.push(Attribute::DataArray(DataArray {
        name: REGION_ARRAY.to_string(),
        elem: ElementType::Generic(1),
        data: IOBuffer::I32(mesh.region_ids()),
    }));

    let points: Vec<f64> = mesh.points.iter().flat_map(|p| p.iter().copied()).collect();
    let mut connectivity: Vec<u64> = Vec::new();
    let mut offsets: Vec<u64> = Vec::with_capacity(mesh.n_cells());
    let mut types: Vec<CellType> = Vec::with_capacity(mesh.n_cells());
    for block in &mesh.blocks {
        let cell_type = vtkio_cell_type(block.kind);
        for i in 0..block.n_cells() {
            connectivity.extend(block.cell(i).iter().map(|&n| n as u64));
            offsets.push(connectivity.len() as u64);
            types.push(cell_type);
        }
    }

    let vtk = Vtk {
        version: Version::new_xml(1, 0),
        byte_order: ByteOrder::LittleEndian,
        title: String::new(),
        file_path: None,
        data: DataSet::inline(UnstructuredGridPiece {
            points: IOBuffer::F64(points),
            cells: Cells {
                cell_verts: VertexNumbers::XML {
                    connectivity,
                    offsets,
                },
                types,
            },
            data: Attributes {
                point: point_attrs,
                cell: cell_attrs,
            },
        }),
    };
    let encode_err = |source| IoError::Encode {
        path: path.to_path_buf(),
        source,
    };
    let xml = vtk
        .try_into_xml_format(Compressor::ZLib, ZLIB_LEVEL)
        .map_err(encode_err)?;
    let mut bytes = Vec::new();
    xml.write(&mut bytes).map_err(encode_err)?;
    let mut bytes = complete_piece_counts(bytes, mesh.n_points(), mesh.n_cells());
    bytes.push(b'\n');
    write_atomic(path, &bytes)
}

/// vtkio leaves out `NumberOfPoints` / `NumberOfCells` on the `Piece` element when they are zero
/// (serde `skip_serializing_if = "is_zero"` in vtkio 0.7.0-rc2), and VTK's reader then reports
/// "Piece 0 is missing its NumberOfPoints attribute" (seen with the `vtk` Python package 9.7.2).
/// Insert the missing attribute(s) into the first `Piece` tag, which comes before any data array,
/// so no array name can be mistaken for it.
fn complete_piece_counts(xml: Vec<u8>, n_points: usize, n_cells: usize) -> Vec<u8> {
    const TAG: &[u8] = b"<Piece";
    let Some(at) = xml.windows(TAG.len()).position(|w| w == TAG) else {
        return xml;
    };
    let Some(end) = xml[at..].iter().position(|&b| b == b'>').map(|e| at + e) else {
        return xml;
    };
    let tag = String::from_utf8_lossy(&xml[at..end]);
    let mut extra = String::new();
    if !tag.contains("NumberOfPoints=") {
        extra.push_str(&format!(" NumberOfPoints=\"{n_points}\""));
    }
    if !tag.contains("NumberOfCells=") {
        extra.push_str(&format!(" NumberOfCells=\"{n_cells}\""));
    }
    if extra.is_empty() {
        return xml;
    }
    let insert_at = at + TAG.len();
    let mut out = Vec::with_capacity(xml.len() + extra.len());
    out.extend_from_slice(&xml[..insert_at]);
    out.extend_from_slice(extra.as_bytes());
    out.extend_from_slice(&xml[insert_at..]);
    out
}

/// Check names and lengths and turn the fields into vtkio attributes (vectors padded to 3).
fn build_attributes(
    path: &Path,
    mesh: &Mesh,
    association: Association,
    fields: &[FieldData],
) -> Result<Vec<Attribute>, IoError> {
    let (n, entity) = match association {
        Association::Point => (mesh.n_points(), "points"),
        Association::Cell => (mesh.n_cells(), "cells"),
    };
    let mut names = BTreeSet::new();
    if association == Association::Cell {
        names.insert(REGION_ARRAY);
    }
    let mut out = Vec::with_capacity(fields.len());
    for field in fields {
        if !names.insert(field.name.as_str()) {
            return Err(IoError::DuplicateArray {
                path: path.to_path_buf(),
                association,
                array: field.name.clone(),
            });
        }
        let length_err = |expected: String| IoError::DataLength {
            path: path.to_path_buf(),
            association,
            array: field.name.clone(),
            expected,
            actual: field.values.len(),
        };
        let (elem, data) = match field.kind {
            FieldKind::Scalar => {
                if field.values.len() != n {
                    return Err(length_err(format!("{n} ({n} {entity} × 1 component)")));
                }
                (
                    ElementType::Scalars {
                        num_comp: 1,
                        lookup_table: None,
                    },
                    field.values.clone(),
                )
            }
            FieldKind::Vector => {
                let given =
                    vector_components(field.values.len(), n, mesh.dim).ok_or_else(|| {
                        let dim = mesh.dim;
                        length_err(if dim == 3 {
                            format!("{} ({n} {entity} × 3 components)", 3 * n)
                        } else {
                            format!(
                                "{} or {} ({n} {entity} × {dim} or 3 components)",
                                dim * n,
                                3 * n
                            )
                        })
                    })?;
                (ElementType::Vectors, pad_to_3(&field.values, given))
            }
            FieldKind::SymTensor => {
                if field.values.len() != 6 * n {
                    return Err(length_err(format!(
                        "{} ({n} {entity} × 6 components)",
                        6 * n
                    )));
                }
                (ElementType::Generic(6), field.values.clone())
            }
            FieldKind::Tensor => {
                if field.values.len() != 9 * n {
                    return Err(length_err(format!(
                        "{} ({n} {entity} × 9 components)",
                        9 * n
                    )));
                }
                (ElementType::Generic(9), field.values.clone())
            }
        };
        out.push(Attribute::DataArray(DataArray {
            name: field.name.clone(),
            elem,
            data: IOBuffer::F64(data),
        }));
    }
    Ok(out)
}

/// Components per entity of a vector array of `len` values over `n` entities in a `dim`-D mesh:
/// `dim` or 3, decided from the length. With no entities, any empty array is accepted as 3.
fn vector_components(len: usize, n: usize, dim: usize) -> Option<usize> {
    if len == 3 * n {
        Some(3)
    } else if (1..3).contains(&dim) && len == dim * n {
        Some(dim)
    } else {
        None
    }
}

/// Pad entity-major vectors of `given` components with zeros to 3 components.
fn pad_to_3(values: &[f64], given: usize) -> Vec<f64> {
    if given == 3 {
        return values.to_vec();
    }
    let mut out = Vec::with_capacity(values.len() / given * 3);
    for v in values.chunks_exact(given) {
        out.extend_from_slice(v);
        out.extend(std::iter::repeat_n(0.0, 3 - given));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vector_components_from_length() {
        assert_eq!(vector_components(6, 3, 2), Some(2));
        assert_eq!(vector_components(9, 3, 2), Some(3));
        assert_eq!(vector_components(9, 3, 3), Some(3));
        assert_eq!(vector_components(6, 3, 3), None);
        assert_eq!(vector_components(7, 3, 2), None);
        assert_eq!(vector_components(3, 3, 1), Some(1));
    }

    #[test]
    fn zero_counts_are_added_to_the_piece_tag() {
        let fixed =
            complete_piece_counts(b"<A><Piece><B Name=\"Piece\"/></Piece></A>".to_vec(), 0, 0);
        assert_eq!(
            String::from_utf8(fixed).unwrap(),
            "<A><Piece NumberOfPoints=\"0\" NumberOfCells=\"0\"><B Name=\"Piece\"/></Piece></A>"
        );
        let fixed = complete_piece_counts(b"<Piece NumberOfPoints=\"4\"></Piece>".to_vec(), 4, 0);
        assert_eq!(
            fixed,
            b"<Piece NumberOfCells=\"0\" NumberOfPoints=\"4\"></Piece>"
        );
        let whole = b"<Piece NumberOfPoints=\"4\" NumberOfCells=\"1\"></Piece>".to_vec();
        assert_eq!(complete_piece_counts(whole.clone(), 4, 1), whole);
    }

    #[test]
    fn padding_keeps_values_and_adds_zeros() {
        assert_eq!(
            pad_to_3(&[1.0, 2.0, 3.0, 4.0], 2),
            vec![1.0, 2.0, 0.0, 3.0, 4.0, 0.0]
        );
        assert_eq!(pad_to_3(&[1.0, 2.0, 3.0], 3), vec![1.0, 2.0, 3.0]);
    }

    /// Cell type ids as listed in vtkCellType.h (VTK source; values re-checked with the `vtk`
    /// Python package 9.7.2, see `.ci/check_vtu.py` runs in the crate report).
    #[test]
    fn cell_type_ids() {
        let expected = [
            (CellKind::Point1, 1),
            (CellKind::Line2, 3),
            (CellKind::Line3, 21),
            (CellKind::Tri3, 5),
            (CellKind::Tri6, 22),
            (CellKind::Quad4, 9),
            (CellKind::Quad8, 23),
            (CellKind::Quad9, 28),
            (CellKind::Tet4, 10),
            (CellKind::Tet10, 24),
            (CellKind::Hex8, 12),
            (CellKind::Hex20, 25),
            (CellKind::Hex27, 29),
        ];
        assert_eq!(expected.len(), CellKind::ALL.len());
        for (kind, id) in expected {
            assert_eq!(vtk_cell_type(kind), id, "{kind}");
        }
    }
}

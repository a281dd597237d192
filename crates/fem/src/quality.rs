//! Jacobian-based mesh quality checks.
//!
//! The Jacobian of a cell at a reference point is `J = sum_i x_i ⊗ dN_i/dxi`, built from the first
//! `mesh.dim` coordinates of the cell's nodes. It is sampled at the reference nodes of the cell and
//! at the points of a degree-2 quadrature rule ([`rule_for`]).
//!
//! * When the cell dimension equals the mesh dimension the signed determinant is used, so an
//!   inverted cell shows up as a negative value.
//! * A lower-dimensional cell (a line in a 2D mesh, say) has no signed determinant; its measure
//!   density `sqrt(det(J^T J))` is used instead, which detects degenerate but not inverted cells.
//!
//! A cell is *bad* when its smallest determinant is not above
//! [`DEGENERATE_TOLERANCE`]` * h^d`, where `h` is its longest corner edge and `d` its dimension
//! (or when the determinant is not a number). The Jacobian ratio of a cell is
//! `min det / max |det|`: 1 for an affine cell, in `(0, 1)` for a distorted but valid one and
//! `<= 0` for an inverted or degenerate one.

use dilata_mesh::{CellKind, Mesh, MeshError};

use crate::quadrature::rule_for;
use crate::shape::ShapeTable;

/// Relative threshold below which a Jacobian determinant counts as degenerate (relative to the
/// `d`-th power of the cell's longest corner edge).
pub const DEGENERATE_TOLERANCE: f64 = 1e-12;

/// Quality measures of one cell.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CellQuality {
    /// Smallest Jacobian determinant over the sample points.
    pub min_det: f64,
    /// Largest Jacobian determinant over the sample points.
    pub max_det: f64,
    /// Longest corner edge divided by shortest corner edge (infinite if an edge has zero length).
    pub aspect_ratio: f64,
}

impl CellQuality {
    /// `min_det / max(|min_det|, |max_det|)`: 1 for an affine cell, in `(0, 1)` for a distorted
    /// valid cell, `<= 0` for an inverted or degenerate one (0 when every determinant is zero).
    pub fn jacobian_ratio(&self) -> f64 {
        let scale = self.min_det.abs().max(self.max_det.abs());
        if scale > 0.0 {
            self.min_det / scale
        } else if scale == 0.0 {
            0.0
        } else {
            f64::NAN
        }
    }
}

/// Summary of the quality of every cell of a mesh.
#[derive(Clone, Debug, PartialEq)]
pub struct QualityReport {
    /// Number of cells examined.
    pub n_cells: usize,
    /// Smallest Jacobian ratio over all cells. The four extremes are 1 for a mesh without cells
    /// and NaN if no cell has a finite value.
    pub min_jacobian_ratio: f64,
    /// Largest Jacobian ratio over all cells.
    pub max_jacobian_ratio: f64,
    /// Largest aspect ratio over all cells.
    pub max_aspect_ratio: f64,
    /// Smallest aspect ratio over all cells.
    pub min_aspect_ratio: f64,
    /// Ids of inverted or degenerate cells, ascending.
    pub bad_cells: Vec<usize>,
}

/// Shape functions of `kind` tabulated at its sample points: reference nodes, then the points of
/// a degree-2 quadrature rule.
fn sample_table(kind: CellKind) -> ShapeTable {
    let mut points = kind.reference_nodes();
    points.extend_from_slice(&rule_for(kind.shape(), 2).points);
    ShapeTable::new(kind, &points)
}

/// Running minimum and maximum of the non-NaN values seen.
struct Extremes {
    min: f64,
    max: f64,
    seen: bool,
}

impl Extremes {
    fn new() -> Self {
        Extremes {
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
            seen: false,
        }
    }

    fn add(&mut self, v: f64) {
        if !v.is_nan() {
            self.min = self.min.min(v);
            self.max = self.max.max(v);
            self.seen = true;
        }
    }

    /// `(min, max)`; `(empty, empty)` if nothing was seen.
    fn get(&self, empty: f64) -> (f64, f64) {
        if self.seen {
            (self.min, self.max)
        } else {
            (empty, empty)
        }
    }
}

/// Result of examining one cell: its quality and whether it is bad.
struct CellCheck {
    quality: CellQuality,
    bad: bool,
}

/// Determinant (or measure density for lower-dimensional cells) of the `sdim x kdim` Jacobian.
fn jacobian_measure(sdim: usize, kdim: usize, j: &[[f64; 3]; 3]) -> f64 {
    if sdim == kdim {
        return det_block(kdim, j);
    }
    // Gram matrix G = J^T J (kdim x kdim).
    let mut g = [[0.0; 3]; 3];
    for a in 0..kdim {
        for b in 0..kdim {
            g[a][b] = (0..sdim).map(|r| j[r][a] * j[r][b]).sum();
        }
    }
    det_block(kdim, &g).max(0.0).sqrt()
}

/// Determinant of the leading `n x n` block of `m` (`n` in 0..=3; 1 for `n == 0`).
fn det_block(n: usize, m: &[[f64; 3]; 3]) -> f64 {
    match n {
        0 => 1.0,
        1 => m[0][0],
        2 => m[0][0] * m[1][1] - m[0][1] * m[1][0],
        _ => {
            m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
                - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
                + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
        }
    }
}

fn distance(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// Examine cell `cell` of `mesh` using the sample table of its kind (`None` for point cells);
/// `coords` is scratch.
fn check_one(
    mesh: &Mesh,
    cell: usize,
    table: Option<&ShapeTable>,
    coords: &mut Vec<[f64; 3]>,
) -> CellCheck {
    let (kind, nodes) = mesh.cell(cell);
    let Some(table) = table else {
        // Point cells have no Jacobian: neutral quality, never bad.
        let quality = CellQuality {
            min_det: 1.0,
            max_det: 1.0,
            aspect_ratio: 1.0,
        };
        return CellCheck {
            quality,
            bad: false,
        };
    };
    coords.clear();
    coords.extend(nodes.iter().map(|&n| mesh.points[n]));
    let kdim = kind.dim();
    let sdim = mesh.dim.clamp(kdim, 3);

    let (mut h_min, mut h_max) = (f64::INFINITY, 0.0f64);
    for &(a, b, _) in kind.edges() {
        let h = distance(coords[a], coords[b]);
        h_min = h_min.min(h);
        h_max = h_max.max(h);
    }
    let aspect_ratio = if h_min > 0.0 {
        h_max / h_min
    } else {
        f64::INFINITY
    };

    let (mut min_det, mut max_det) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut has_nan = false;
    for q in 0..table.n_points {
        let mut j = [[0.0; 3]; 3];
        for (x, g) in coords.iter().zip(table.grads_at(q)) {
            for r in 0..sdim {
                for c in 0..kdim {
                    j[r][c] += x[r] * g[c];
                }
            }
        }
        let det = jacobian_measure(sdim, kdim, &j);
        has_nan |= det.is_nan();
        min_det = min_det.min(det);
        max_det = max_det.max(det);
    }
    if has_nan {
        min_det = f64::NAN;
        max_det = f64::NAN;
    }
    let threshold = DEGENERATE_TOLERANCE * h_max.powi(kdim as i32);
    let bad = min_det.is_nan() || min_det <= threshold;
    CellCheck {
        quality: CellQuality {
            min_det,
            max_det,
            aspect_ratio,
        },
        bad,
    }
}

/// Quality measures of one cell (global id `cell`).
///
/// # Panics
/// If `cell` is out of range.
pub fn cell_quality(mesh: &Mesh, cell: usize) -> CellQuality {
    let kind = mesh.cell(cell).0;
    let table = (kind != CellKind::Point1).then(|| sample_table(kind));
    let mut coords = Vec::with_capacity(kind.n_nodes());
    check_one(mesh, cell, table.as_ref(), &mut coords).quality
}

/// Quality report over every cell of `mesh`; cells that are inverted or degenerate are listed in
/// `bad_cells` (see the module docs for the criterion).
pub fn build_quality_report(mesh: &Mesh) -> QualityReport {
    let mut tables: Vec<Option<ShapeTable>> = CellKind::ALL.iter().map(|_| None).collect();
    for block in &mesh.blocks {
        let slot = &mut tables[block.kind as usize];
        if slot.is_none() && block.kind != CellKind::Point1 {
            *slot = Some(sample_table(block.kind));
        }
    }
    let mut coords = Vec::with_capacity(27);
    let (mut ratio, mut aspect) = (Extremes::new(), Extremes::new());
    let mut bad_cells = Vec::new();
    for (id, kind, _) in mesh.cells() {
        let check = check_one(mesh, id, tables[kind as usize].as_ref(), &mut coords);
        // NaN values (non-finite coordinates) stay out of the extremes; such cells are bad.
        ratio.add(check.quality.jacobian_ratio());
        aspect.add(check.quality.aspect_ratio);
        if check.bad {
            bad_cells.push(id);
        }
    }
    let n_cells = mesh.n_cells();
    let empty = if n_cells == 0 { 1.0 } else { f64::NAN };
    let (min_jacobian_ratio, max_jacobian_ratio) = ratio.get(empty);
    let (min_aspect_ratio, max_aspect_ratio) = aspect.get(empty);
    QualityReport {
        n_cells,
        min_jacobian_ratio,
        max_jacobian_ratio,
        max_aspect_ratio,
        min_aspect_ratio,
        bad_cells,
    }
}

/// Check every cell: `Err(MeshError::BadCells { cells })` listing every cell whose Jacobian
/// determinant is `<= 0`, or below the degenerate threshold, at any node or quadrature point;
/// otherwise the quality report.
pub fn check_cells(mesh: &Mesh) -> Result<QualityReport, MeshError> {
    let report = build_quality_report(mesh);
    if report.bad_cells.is_empty() {
        Ok(report)
    } else {
        Err(MeshError::BadCells {
            cells: report.bad_cells,
        })
    }
}

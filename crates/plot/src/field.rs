//! Colour maps of a nodal field of a 2D run, one picture per snapshot, drawn from the run's own
//! `fields.pvd` and `.vtu` files (read back with `dilata_io::read_pvd` / `read_vtu`).
//!
//! Every cell is drawn as filled polygons: linear cells whole, quadratic cells split at their
//! mid-edge (and centre) nodes into four or five pieces; every piece is split again 3 × 3 with
//! values interpolated from its corners (linearly on triangles, bilinearly on quadrilaterals),
//! and each small polygon is filled with the colour of the mean of its corner values. The colour range is the same in every picture of one call (the
//! smallest and largest value over all pictures drawn, or the range asked for), so pictures of
//! one field compare directly. Colours: [`crate::colour`].

use std::path::{Path, PathBuf};

use dilata_io::{read_pvd, read_vtu, VtuSnapshot};
use plotters::backend::{BitMapBackend, DrawingBackend, SVGBackend};
use plotters::chart::ChartBuilder;
use plotters::coord::Shift;
use plotters::drawing::{DrawingArea, IntoDrawingArea};
use plotters::element::{Polygon, Rectangle, Text};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{Color, IntoFont, TextStyle, BLACK, WHITE};

use crate::colour::colour;
use crate::figure::{format_tick, FAMILY};
use crate::{encode_png, register_font, write_file, PlotError};

/// Name of the snapshot collection inside a results directory.
pub const FIELDS_FILE: &str = "fields.pvd";

/// What to draw.
#[derive(Clone, Debug)]
pub struct FieldPlotOptions {
    /// The point array: a name (`c`, `mu`, `von_mises_stress`, ...) or one component of a
    /// vector or tensor array as `name[i]` (`u[0]`, `stress[3]`).
    pub field: String,
    /// Times to draw (the snapshot nearest to each); `None`: every snapshot.
    pub times: Option<Vec<f64>>,
    /// Colour range; `None`: smallest to largest value over the pictures drawn.
    pub range: Option<(f64, f64)>,
    /// Picture size in pixels.
    pub size: (u32, u32),
    /// Also write an SVG next to every PNG.
    pub svg: bool,
    /// Directory the pictures go to (default: the run directory).
    pub out: Option<PathBuf>,
}

impl FieldPlotOptions {
    /// Every snapshot of `field`, default size, PNG only, into the run directory.
    pub fn new(field: &str) -> Self {
        FieldPlotOptions {
            field: field.to_string(),
            times: None,
            range: None,
            size: (800, 640),
            svg: false,
            out: None,
        }
    }
}

/// A filled piece of a cell: corner coordinates (x, y) and the value that sets its colour.
type Piece = (Vec<(f64, f64)>, f64);

/// One picture's data: the time and the polygons (corner coordinates, value).
struct Picture {
    time: f64,
    /// File stem, e.g. `field_c_0003`.
    stem: String,
    polygons: Vec<Piece>,
}

fn field_error(dir: &Path, message: impl Into<String>) -> PlotError {
    PlotError::Field {
        path: dir.to_path_buf(),
        message: message.into(),
    }
}

/// Draw `options.field` of the run in `dir`; returns the files written (per snapshot: PNG, then
/// SVG if asked), in time order.
pub fn plot_field_dir(dir: &Path, options: &FieldPlotOptions) -> Result<Vec<PathBuf>, PlotError> {
    let pvd = dir.join(FIELDS_FILE);
    if !dir.is_dir() {
        return Err(field_error(dir, "no such results directory"));
    }
    if !pvd.is_file() {
        return Err(field_error(
            dir,
            format!("no {FIELDS_FILE} here; field pictures need the snapshots a run writes"),
        ));
    }
    let entries = read_pvd(&pvd).map_err(|e| PlotError::Snapshot(Box::new(e)))?;
    if entries.is_empty() {
        return Err(field_error(&pvd, "the collection lists no snapshots"));
    }
    let chosen = choose(&pvd, &entries, options.times.as_deref())?;
    let (name, component) = parse_field(&options.field)?;
    let mut pictures = Vec::with_capacity(chosen.len());
    for &i in &chosen {
        let (time, path) = &entries[i];
        let snap = read_vtu(path).map_err(|e| PlotError::Snapshot(Box::new(e)))?;
        let values = nodal_values(path, &snap, &options.field, &name, component)?;
        let stem_index = path
            .file_stem()
            .and_then(|s| s.to_str())
            .and_then(|s| s.rsplit('_').next())
            .filter(|s| s.chars().all(|c| c.is_ascii_digit()) && !s.is_empty())
            .map(str::to_string)
            .unwrap_or_else(|| format!("{i:04}"));
        pictures.push(Picture {
            time: *time,
            stem: format!("field_{}_{stem_index}", file_safe(&options.field)),
            polygons: polygons(path, &snap, &values)?,
        });
    }
    let (lo, hi) = match options.range {
        Some((lo, hi)) => {
            if !(lo.is_finite() && hi.is_finite() && hi > lo) {
                return Err(field_error(
                    dir,
                    format!("colour range {lo}..{hi}: expected two finite numbers, low < high"),
                ));
            }
            (lo, hi)
        }
        None => value_range(&pictures),
    };
    let bounds = bounds(&pictures);
    let out = options.out.as_deref().unwrap_or(dir);
    register_font();
    let mut written = Vec::new();
    for picture in &pictures {
        let scene = Scene {
            field: &options.field,
            picture,
            range: (lo, hi),
            bounds,
        };
        let png_path = out.join(format!("{}.png", picture.stem));
        let (w, h) = options.size;
        let mut pixels = vec![0_u8; w as usize * h as usize * 3];
        {
            let root = BitMapBackend::with_buffer(&mut pixels, options.size).into_drawing_area();
            draw(&root, &scene).map_err(|message| PlotError::Draw {
                path: png_path.clone(),
                message,
            })?;
        }
        let bytes = encode_png(&pixels, options.size).map_err(|message| PlotError::Draw {
            path: png_path.clone(),
            message,
        })?;
        write_file(&png_path, &bytes)?;
        written.push(png_path);
        if options.svg {
            let svg_path = out.join(format!("{}.svg", picture.stem));
            let mut svg = String::new();
            {
                let root = SVGBackend::with_string(&mut svg, options.size).into_drawing_area();
                draw(&root, &scene).map_err(|message| PlotError::Draw {
                    path: svg_path.clone(),
                    message,
                })?;
            }
            write_file(&svg_path, svg.as_bytes())?;
            written.push(svg_path);
        }
    }
    Ok(written)
}

/// Indices of the snapshots to draw: all, or the nearest to each asked time (each once, in
/// time order). A time outside the snapshots' span is an error that gives the span.
fn choose(
    pvd: &Path,
    entries: &[(f64, PathBuf)],
    times: Option<&[f64]>,
) -> Result<Vec<usize>, PlotError> {
    let Some(times) = times else {
        return Ok((0..entries.len()).collect());
    };
    let first = entries[0].0;
    let last = entries[entries.len() - 1].0;
    let slack = 1e-9 * first.abs().max(last.abs()).max(f64::MIN_POSITIVE);
    let mut chosen = Vec::new();
    for &t in times {
        if !t.is_finite() || t < first - slack || t > last + slack {
            return Err(field_error(
                pvd,
                format!(
                    "time {t}: the {} snapshots span {first} s to {last} s",
                    entries.len()
                ),
            ));
        }
        let nearest = (0..entries.len())
            .min_by(|&a, &b| {
                (entries[a].0 - t)
                    .abs()
                    .total_cmp(&(entries[b].0 - t).abs())
            })
            .expect("at least one snapshot");
        chosen.push(nearest);
    }
    chosen.sort_unstable();
    chosen.dedup();
    Ok(chosen)
}

/// `name` or `name[i]`.
fn parse_field(field: &str) -> Result<(String, Option<usize>), PlotError> {
    let bad = || PlotError::FieldName {
        field: field.to_string(),
        message: "expected an array name, or name[i] for component i".into(),
    };
    match field.split_once('[') {
        None if !field.is_empty() && !field.contains(']') => Ok((field.to_string(), None)),
        None => Err(bad()),
        Some((name, rest)) => {
            let index = rest.strip_suffix(']').ok_or_else(bad)?;
            let index: usize = index.parse().map_err(|_| bad())?;
            if name.is_empty() {
                return Err(bad());
            }
            Ok((name.to_string(), Some(index)))
        }
    }
}

/// A name usable in a file name: letters, digits, `_` and `-` kept, others become `_`
/// (`u[0]` gives `u_0`).
fn file_safe(field: &str) -> String {
    let s: String = field
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    s.trim_end_matches('_').to_string()
}

/// One value per point of the requested array (component).
fn nodal_values(
    path: &Path,
    snap: &VtuSnapshot,
    field: &str,
    name: &str,
    component: Option<usize>,
) -> Result<Vec<f64>, PlotError> {
    let Some(array) = snap.point_array(name) else {
        return Err(PlotError::FieldName {
            field: field.to_string(),
            message: format!(
                "{} has no point array '{name}'; it has: {}",
                path.display(),
                snap.point_array_names().join(", ")
            ),
        });
    };
    let nc = array.components;
    let k = match (component, nc) {
        (None, 1) | (Some(0), 1) => 0,
        (None, _) => {
            return Err(PlotError::FieldName {
                field: field.to_string(),
                message: format!(
                    "'{name}' has {nc} components per point; pick one as {name}[0] … {name}[{}]",
                    nc - 1
                ),
            })
        }
        (Some(k), _) if k < nc => k,
        (Some(k), _) => {
            return Err(PlotError::FieldName {
                field: field.to_string(),
                message: format!(
                    "component {k} asked but '{name}' has {nc} (0 to {})",
                    nc - 1
                ),
            })
        }
    };
    Ok(array.values.iter().skip(k).step_by(nc).copied().collect())
}

/// VTK cell type ids of 3D cells (tetrahedra and hexahedra, linear and quadratic).
const SOLID_CELLS: [(u8, &str); 5] = [
    (10, "tetrahedron"),
    (12, "hexahedron"),
    (24, "quadratic tetrahedron"),
    (25, "quadratic hexahedron"),
    (29, "triquadratic hexahedron"),
];

/// Node lists (local indices) of the pieces a 2D cell is drawn as; `None` for points and lines.
fn pieces(vtk_type: u8) -> Option<&'static [&'static [usize]]> {
    Some(match vtk_type {
        5 => &[&[0, 1, 2]],
        9 => &[&[0, 1, 2, 3]],
        // Triangle with mid-edge nodes 3 (0-1), 4 (1-2), 5 (2-0).
        22 => &[&[0, 3, 5], &[3, 1, 4], &[5, 4, 2], &[3, 4, 5]],
        // Quad with mid-edge nodes 4 (0-1), 5 (1-2), 6 (2-3), 7 (3-0).
        23 => &[
            &[0, 4, 7],
            &[4, 1, 5],
            &[5, 2, 6],
            &[6, 3, 7],
            &[4, 5, 6, 7],
        ],
        // The same with the centre node 8.
        28 => &[&[0, 4, 8, 7], &[4, 1, 5, 8], &[8, 5, 2, 6], &[7, 8, 6, 3]],
        _ => return None,
    })
}

/// The polygons of every 2D cell with the mean of their corner values. A 3D cell, or a point off
/// the plane z = 0, is an error: only 2D runs are drawn.
fn polygons(path: &Path, snap: &VtuSnapshot, values: &[f64]) -> Result<Vec<Piece>, PlotError> {
    let only_2d = |what: String| PlotError::Not2d {
        path: path.to_path_buf(),
        what,
    };
    let mut out = Vec::new();
    for (i, (kind, nodes)) in snap.cells.iter().enumerate() {
        if let Some((_, name)) = SOLID_CELLS.iter().find(|(id, _)| id == kind) {
            return Err(only_2d(format!("cell {i} is a {name}")));
        }
        let Some(parts) = pieces(*kind) else {
            continue;
        };
        let needed = parts
            .iter()
            .flat_map(|p| p.iter())
            .max()
            .map_or(0, |m| m + 1);
        if nodes.len() < needed {
            return Err(field_error(
                path,
                format!(
                    "cell {i} (VTK type {kind}) has {} nodes, expected {needed}",
                    nodes.len()
                ),
            ));
        }
        for part in parts {
            let corners: Vec<(f64, f64)> = part
                .iter()
                .map(|&k| {
                    let p = snap.points[nodes[k]];
                    (p[0], p[1])
                })
                .collect();
            let corner_values: Vec<f64> = part.iter().map(|&k| values[nodes[k]]).collect();
            subdivide(&corners, &corner_values, &mut out);
        }
    }
    if let Some(p) = snap.points.iter().position(|p| p[2] != 0.0) {
        return Err(only_2d(format!(
            "point {p} lies at z = {}",
            snap.points[p][2]
        )));
    }
    if out.is_empty() {
        return Err(field_error(path, "no 2D cells to draw"));
    }
    Ok(out)
}

/// Sub-pieces per edge of every piece: a piece is drawn as `SUBDIVISION²` smaller triangles or
/// quadrilaterals, their values interpolated linearly (triangles) or bilinearly
/// (quadrilaterals) from the piece's corner values, each filled with the mean of its corners.
const SUBDIVISION: usize = 3;

/// Split a triangle or quadrilateral piece (corners in order) into `SUBDIVISION²` smaller ones
/// and push them with their mean values.
fn subdivide(corners: &[(f64, f64)], values: &[f64], out: &mut Vec<Piece>) {
    let k = SUBDIVISION;
    let kf = k as f64;
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    if corners.len() == 3 {
        // Point (i, j) = p0 + (i/k)(p1 − p0) + (j/k)(p2 − p0), i + j ≤ k.
        let at = |i: usize, j: usize| {
            let (a, b) = (i as f64 / kf, j as f64 / kf);
            let w = [1.0 - a - b, a, b];
            let x = (0..3).map(|n| w[n] * corners[n].0).sum::<f64>();
            let y = (0..3).map(|n| w[n] * corners[n].1).sum::<f64>();
            let v = (0..3).map(|n| w[n] * values[n]).sum::<f64>();
            ((x, y), v)
        };
        let mut push = |tri: [(usize, usize); 3]| {
            let pts: Vec<((f64, f64), f64)> = tri.iter().map(|&(i, j)| at(i, j)).collect();
            let vals: Vec<f64> = pts.iter().map(|p| p.1).collect();
            out.push((pts.iter().map(|p| p.0).collect(), mean(&vals)));
        };
        for j in 0..k {
            for i in 0..k - j {
                push([(i, j), (i + 1, j), (i, j + 1)]);
                if i + j + 2 <= k {
                    push([(i + 1, j), (i + 1, j + 1), (i, j + 1)]);
                }
            }
        }
    } else {
        // Bilinear map of the unit square onto the corners 0, 1, 2, 3.
        let at = |i: usize, j: usize| {
            let (u, v) = (i as f64 / kf, j as f64 / kf);
            let w = [(1.0 - u) * (1.0 - v), u * (1.0 - v), u * v, (1.0 - u) * v];
            let x = (0..4).map(|n| w[n] * corners[n].0).sum::<f64>();
            let y = (0..4).map(|n| w[n] * corners[n].1).sum::<f64>();
            let val = (0..4).map(|n| w[n] * values[n]).sum::<f64>();
            ((x, y), val)
        };
        for j in 0..k {
            for i in 0..k {
                let pts = [at(i, j), at(i + 1, j), at(i + 1, j + 1), at(i, j + 1)];
                let vals: Vec<f64> = pts.iter().map(|p| p.1).collect();
                out.push((pts.iter().map(|p| p.0).collect(), mean(&vals)));
            }
        }
    }
}

/// Smallest and largest finite value over all pictures (a flat field gets a span of its own).
fn value_range(pictures: &[Picture]) -> (f64, f64) {
    let (lo, hi) = pictures
        .iter()
        .flat_map(|p| p.polygons.iter().map(|q| q.1))
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    if hi > lo {
        (lo, hi)
    } else {
        let pad = if lo == 0.0 { 1.0 } else { 0.05 * lo.abs() };
        (lo - pad, hi + pad)
    }
}

/// Bounding box `(x0, x1, y0, y1)` of every picture's polygons.
fn bounds(pictures: &[Picture]) -> (f64, f64, f64, f64) {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for (x, y) in pictures
        .iter()
        .flat_map(|p| p.polygons.iter().flat_map(|q| q.0.iter()))
    {
        b = (b.0.min(*x), b.1.max(*x), b.2.min(*y), b.3.max(*y));
    }
    if b.1 <= b.0 {
        b.1 = b.0 + 1.0;
    }
    if b.3 <= b.2 {
        b.3 = b.2 + 1.0;
    }
    b
}

/// Everything one picture shows.
struct Scene<'a> {
    field: &'a str,
    picture: &'a Picture,
    range: (f64, f64),
    bounds: (f64, f64, f64, f64),
}

/// Margins of the picture in pixels.
const TITLE: u32 = 50;
const Y_LABELS: u32 = 76;
const X_LABELS: u32 = 44;
const BAR_BAND: u32 = 150;
const PAD: u32 = 14;

/// Time label: short fixed point for moderate magnitudes, exponent form otherwise.
fn time_label(t: f64) -> String {
    if t == 0.0 {
        return "0".into();
    }
    if (1e-3..1e5).contains(&t.abs()) {
        let s = format!("{t:.4}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{t:.4e}")
    }
}

/// Draw one picture: title, the field map with its axes (equal scales), the colour bar.
fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    scene: &Scene<'_>,
) -> Result<(), String> {
    let err = |e: &dyn std::fmt::Display| e.to_string();
    root.fill(&WHITE).map_err(|e| err(&e))?;
    let (w, h) = root.dim_in_pixel();
    let (x0, x1, y0, y1) = scene.bounds;
    let (lo, hi) = scene.range;
    let title = format!(
        "{}  at  t = {} s",
        scene.field,
        time_label(scene.picture.time)
    );
    root.draw(&Text::new(
        title,
        (PAD as i32, (PAD / 2) as i32 + 4),
        (FAMILY, 26).into_font(),
    ))
    .map_err(|e| err(&e))?;

    // Map area with equal scales on both axes.
    let avail_w = w.saturating_sub(Y_LABELS + BAR_BAND + 2 * PAD).max(10) as f64;
    let avail_h = h.saturating_sub(TITLE + X_LABELS + PAD).max(10) as f64;
    let scale = (avail_w / (x1 - x0)).min(avail_h / (y1 - y0));
    let (map_w, map_h) = (
        ((x1 - x0) * scale).round().max(1.0) as u32,
        ((y1 - y0) * scale).round().max(1.0) as u32,
    );
    let area = root
        .clone()
        .shrink((PAD, TITLE), (map_w + Y_LABELS, map_h + X_LABELS));
    let mut chart = ChartBuilder::on(&area)
        .x_label_area_size(X_LABELS)
        .y_label_area_size(Y_LABELS)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(|e| err(&e))?;
    let (xs, ys) = (x1 - x0, y1 - y0);
    chart
        .configure_mesh()
        .disable_mesh()
        .x_label_formatter(&|v: &f64| format_tick(*v, xs))
        .y_label_formatter(&|v: &f64| format_tick(*v, ys))
        .label_style((FAMILY, 15).into_font())
        .x_labels(6)
        .y_labels(6)
        .draw()
        .map_err(|e| err(&e))?;
    let span = hi - lo;
    chart
        .draw_series(
            scene.picture.polygons.iter().map(|(corners, v)| {
                Polygon::new(corners.clone(), colour((v - lo) / span).filled())
            }),
        )
        .map_err(|e| err(&e))?;

    // A frame around the domain's bounding box (it also covers the outermost pixel row and
    // column, which the polygon filler leaves partly blank).
    chart
        .draw_series(std::iter::once(Rectangle::new(
            [(x0, y0), (x1, y1)],
            BLACK.stroke_width(1),
        )))
        .map_err(|e| err(&e))?;

    // Colour bar: 128 bands from the bottom to the top of the range, five labelled ticks.
    let bar_left = (PAD + Y_LABELS + map_w + 28) as i32;
    let bar_w = 26;
    let (top, bottom) = (TITLE as i32, (TITLE + map_h) as i32);
    let bands = 128;
    for k in 0..bands {
        let ya = bottom - ((k + 1) * (bottom - top)) / bands;
        let yb = bottom - (k * (bottom - top)) / bands;
        let s = (k as f64 + 0.5) / bands as f64;
        root.draw(&Rectangle::new(
            [(bar_left, ya), (bar_left + bar_w, yb)],
            colour(s).filled(),
        ))
        .map_err(|e| err(&e))?;
    }
    root.draw(&Rectangle::new(
        [(bar_left, top), (bar_left + bar_w, bottom)],
        BLACK.stroke_width(1),
    ))
    .map_err(|e| err(&e))?;
    let label: TextStyle =
        TextStyle::from((FAMILY, 15).into_font()).pos(Pos::new(HPos::Left, VPos::Center));
    for k in 0..=4 {
        let v = lo + span * k as f64 / 4.0;
        let y = bottom - (k * (bottom - top)) / 4;
        root.draw(&plotters::element::PathElement::new(
            vec![(bar_left + bar_w, y), (bar_left + bar_w + 5, y)],
            BLACK,
        ))
        .map_err(|e| err(&e))?;
        root.draw(&Text::new(
            format_tick(v, span),
            (bar_left + bar_w + 8, y),
            label.clone(),
        ))
        .map_err(|e| err(&e))?;
    }
    root.present().map_err(|e| err(&e))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_names_and_file_stems() {
        assert_eq!(parse_field("c").unwrap(), ("c".to_string(), None));
        assert_eq!(parse_field("u[1]").unwrap(), ("u".to_string(), Some(1)));
        for bad in ["", "u[", "u[x]", "[0]", "u]"] {
            assert!(parse_field(bad).is_err(), "{bad}");
        }
        assert_eq!(file_safe("u[0]"), "u_0");
        assert_eq!(file_safe("von_mises_stress"), "von_mises_stress");
    }

    #[test]
    fn quadratic_cells_split_into_pieces_that_use_every_node() {
        for (kind, n) in [(22_u8, 6_usize), (23, 8), (28, 9)] {
            let parts = pieces(kind).unwrap();
            let mut used: Vec<usize> = parts.iter().flat_map(|p| p.iter().copied()).collect();
            used.sort_unstable();
            used.dedup();
            assert_eq!(used, (0..n).collect::<Vec<_>>(), "type {kind}");
        }
        assert!(pieces(3).is_none());
    }

    #[test]
    fn subdivision_covers_the_piece_and_interpolates() {
        // Triangle: 9 pieces of a ninth of the area each; the values of a linear field are
        // reproduced (mean of the sub-triangle's corners = value at its centroid).
        let tri = [(0.0, 0.0), (3.0, 0.0), (0.0, 3.0)];
        let f = |x: f64, y: f64| 1.0 + 2.0 * x - y;
        let vals: Vec<f64> = tri.iter().map(|p| f(p.0, p.1)).collect();
        let mut out = Vec::new();
        subdivide(&tri, &vals, &mut out);
        assert_eq!(out.len(), 9);
        let area = |p: &[(f64, f64)]| {
            let n = p.len();
            0.5 * (0..n)
                .map(|i| p[i].0 * p[(i + 1) % n].1 - p[(i + 1) % n].0 * p[i].1)
                .sum::<f64>()
        };
        for (poly, v) in &out {
            assert!((area(poly) - 0.5).abs() < 1e-12, "{poly:?}");
            let cx = poly.iter().map(|p| p.0).sum::<f64>() / 3.0;
            let cy = poly.iter().map(|p| p.1).sum::<f64>() / 3.0;
            assert!((v - f(cx, cy)).abs() < 1e-12);
        }
        // Quadrilateral: 9 pieces covering it.
        let quad = [(0.0, 0.0), (3.0, 0.0), (3.0, 3.0), (0.0, 3.0)];
        let mut out = Vec::new();
        subdivide(&quad, &[0.0, 1.0, 1.0, 0.0], &mut out);
        assert_eq!(out.len(), 9);
        let total: f64 = out.iter().map(|(p, _)| area(p)).sum();
        assert!((total - 9.0).abs() < 1e-12);
    }

    #[test]
    fn nearest_snapshots_are_chosen_once_in_order() {
        let e: Vec<(f64, PathBuf)> = [0.0, 1.0, 2.0, 4.0]
            .iter()
            .map(|&t| (t, PathBuf::from("x")))
            .collect();
        let p = Path::new("f.pvd");
        assert_eq!(choose(p, &e, None).unwrap(), vec![0, 1, 2, 3]);
        assert_eq!(choose(p, &e, Some(&[3.9, 0.2, 0.4])).unwrap(), vec![0, 3]);
        let msg = choose(p, &e, Some(&[5.0])).unwrap_err().to_string();
        assert!(msg.contains("span 0 s to 4 s"), "{msg}");
    }
}

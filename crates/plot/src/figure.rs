//! One figure: some history columns against time, stage changes marked, drawn on any plotters
//! back-end (the caller picks SVG or a pixel buffer).

use plotters::backend::DrawingBackend;
use plotters::chart::{ChartBuilder, ChartContext, SeriesLabelPosition};
use plotters::coord::cartesian::Cartesian2d;
use plotters::coord::ranged1d::Ranged;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::drawing::DrawingArea;
use plotters::element::{PathElement, Text};
use plotters::series::{DashedLineSeries, LineSeries};
use plotters::style::{Color, IntoFont, RGBColor, ShapeStyle, TextStyle, BLACK, WHITE};

use crate::table::HistoryTable;

/// Font family every text is drawn with (registered with the embedded font).
pub(crate) const FAMILY: &str = "sans-serif";

/// Line colours, in series order (a colour-blind-safe qualitative set).
const COLOURS: [RGBColor; 4] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
];

/// What one figure shows.
#[derive(Clone, Copy, Debug)]
pub struct FigureSpec {
    /// File name without extension (`.png` and `.svg` are added).
    pub stem: &'static str,
    /// Title above the plot.
    pub title: &'static str,
    /// Quantity on the vertical axis, without unit.
    pub quantity: &'static str,
    /// SI unit of the columns.
    pub unit: &'static str,
    /// Scale the values by a power of 1000 and prefix the unit (Pa to MPa, ...).
    pub prefixed: bool,
    /// Logarithmic vertical axis.
    pub log_y: bool,
    /// Columns drawn, with their legend text.
    pub series: &'static [(&'static str, &'static str)],
}

/// The figures `plot_run_dir` draws, in order.
pub const FIGURES: [FigureSpec; 4] = [
    FigureSpec {
        stem: "plot_concentration",
        title: "Concentration",
        quantity: "concentration",
        unit: "mol/m^3",
        prefixed: false,
        log_y: false,
        series: &[
            ("c_mean_mol_m3", "mean"),
            ("c_min_mol_m3", "minimum"),
            ("c_max_mol_m3", "maximum"),
        ],
    },
    FigureSpec {
        stem: "plot_stress",
        title: "Peak stresses",
        quantity: "stress",
        unit: "Pa",
        prefixed: true,
        log_y: false,
        series: &[
            ("peak_hydrostatic_stress_pa", "hydrostatic"),
            ("peak_max_principal_stress_pa", "max. principal"),
            ("peak_von_mises_stress_pa", "von Mises"),
        ],
    },
    FigureSpec {
        stem: "plot_energy",
        title: "Energies",
        quantity: "energy",
        unit: "J",
        prefixed: false,
        log_y: false,
        series: &[
            ("elastic_energy_j", "elastic"),
            ("chemical_energy_j", "chemical"),
        ],
    },
    FigureSpec {
        stem: "plot_step_size",
        title: "Time step size",
        quantity: "step size",
        unit: "s",
        prefixed: false,
        log_y: true,
        series: &[("dt_s", "accepted step")],
    },
];

/// The data of one figure, ready to draw.
pub(crate) struct Prepared {
    /// Legend text and (time, value) points of each series with at least one finite value.
    pub series: Vec<(&'static str, Vec<(f64, f64)>)>,
    /// Horizontal axis range (s): covers every row's time.
    pub x: (f64, f64),
    /// Vertical axis range, in the scaled unit.
    pub y: (f64, f64),
    /// Axis description of the vertical axis.
    pub y_label: String,
}

/// Columns of `spec` present in `table`, scaled, with axis ranges; `None` when the table has
/// none of them or none holds a finite (for a log axis: positive) value.
pub(crate) fn prepare(spec: &FigureSpec, table: &HistoryTable) -> Option<Prepared> {
    let usable = |v: f64| v.is_finite() && (!spec.log_y || v > 0.0);
    let raw: Vec<(&'static str, &[f64])> = spec
        .series
        .iter()
        .filter_map(|(col, legend)| table.column(col).map(|v| (*legend, v)))
        .filter(|(_, v)| v.iter().any(|&x| usable(x)))
        .collect();
    if raw.is_empty() {
        return None;
    }
    let largest = raw
        .iter()
        .flat_map(|(_, v)| v.iter())
        .filter(|v| usable(**v))
        .fold(0.0_f64, |m, v| m.max(v.abs()));
    let (factor, prefix) = if spec.prefixed {
        unit_prefix(largest)
    } else {
        (1.0, "")
    };
    let series: Vec<(&'static str, Vec<(f64, f64)>)> = raw
        .iter()
        .map(|(legend, v)| {
            let points = table
                .time
                .iter()
                .zip(v.iter())
                .filter(|(_, y)| usable(**y))
                .map(|(t, y)| (*t, y / factor))
                .collect();
            (*legend, points)
        })
        .collect();
    let ys = series.iter().flat_map(|(_, p)| p.iter().map(|q| q.1));
    let (lo, hi) = ys.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), y| {
        (a.min(y), b.max(y))
    });
    let y = if spec.log_y {
        let (lo, hi) = if hi > lo {
            (lo, hi)
        } else {
            (lo / 2.0, hi * 2.0)
        };
        (lo / 1.5, hi * 1.5)
    } else {
        padded(lo, hi)
    };
    Some(Prepared {
        series,
        x: time_axis(table.time_range()),
        y,
        y_label: format!("{} ({}{})", spec.quantity, prefix, spec.unit),
    })
}

/// Horizontal axis range for rows spanning `(t0, t1)`: from zero when the rows start near it
/// (the usual program start), never narrower than the rows.
pub(crate) fn time_axis((t0, t1): (f64, f64)) -> (f64, f64) {
    if t1 <= t0 {
        let pad = if t0 == 0.0 { 1.0 } else { 0.05 * t0.abs() };
        return (t0 - pad, t1 + pad);
    }
    let start = if t0 >= 0.0 && t0 <= 0.25 * (t1 - t0) {
        0.0
    } else {
        t0
    };
    (start, t1)
}

/// `(lo, hi)` widened by 5 % of the span on each side (a flat series gets a span of its own).
fn padded(lo: f64, hi: f64) -> (f64, f64) {
    let span = hi - lo;
    if span > 1e-12 * hi.abs().max(lo.abs()) && span > 0.0 {
        (lo - 0.05 * span, hi + 0.05 * span)
    } else {
        let pad = if lo == 0.0 { 1.0 } else { 0.05 * lo.abs() };
        (lo - pad, hi + pad)
    }
}

/// Divisor and SI prefix that put `largest` between 1 and 1000.
fn unit_prefix(largest: f64) -> (f64, &'static str) {
    const PREFIXES: [(f64, &str); 5] = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, "")];
    PREFIXES
        .iter()
        .copied()
        .find(|(f, _)| largest >= *f)
        .unwrap_or((1.0, ""))
}

/// Tick label that reads back as the number it stands for (fixed point for moderate
/// magnitudes, exponent form otherwise).
pub fn format_tick(v: f64, span: f64) -> String {
    let magnitude = v.abs().max(span.abs());
    if v == 0.0 {
        return "0".into();
    }
    if !(1e-3..1e5).contains(&magnitude) {
        return format!("{v:.2e}");
    }
    let digits = (2.0 - span.abs().max(1e-300).log10().floor()).clamp(0.0, 6.0) as usize;
    let s = format!("{v:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Draw `data` of `spec` with the stage changes of `stages` on `root`.
pub(crate) fn draw<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    spec: &FigureSpec,
    data: &Prepared,
    stages: &[(f64, String)],
) -> Result<(), String> {
    let err = |e: &dyn std::fmt::Display| e.to_string();
    root.fill(&WHITE).map_err(|e| err(&e))?;
    let mut builder = ChartBuilder::on(root);
    builder
        .caption(spec.title, (FAMILY, 26).into_font())
        .margin(16)
        .x_label_area_size(52)
        .y_label_area_size(84);
    let x_span = data.x.1 - data.x.0;
    let y_span = data.y.1 - data.y.0;
    let label_style: TextStyle = (FAMILY, 16).into_font().into();
    let axis_style: TextStyle = (FAMILY, 18).into_font().into();
    let x_fmt = |v: &f64| format_tick(*v, x_span);
    if spec.log_y {
        let mut chart = builder
            .build_cartesian_2d(
                data.x.0..data.x.1,
                plotters::coord::combinators::IntoLogRange::log_scale(data.y.0..data.y.1),
            )
            .map_err(|e| err(&e))?;
        chart
            .configure_mesh()
            .x_desc("time (s)")
            .y_desc(data.y_label.as_str())
            .x_label_formatter(&x_fmt)
            .y_label_formatter(&|v: &f64| format!("{v:.1e}"))
            .label_style(label_style)
            .axis_desc_style(axis_style)
            .light_line_style(WHITE)
            .draw()
            .map_err(|e| err(&e))?;
        draw_content(&mut chart, data, stages, data.y.1 / 1.2)?;
    } else {
        let mut chart = builder
            .build_cartesian_2d(data.x.0..data.x.1, data.y.0..data.y.1)
            .map_err(|e| err(&e))?;
        chart
            .configure_mesh()
            .x_desc("time (s)")
            .y_desc(data.y_label.as_str())
            .x_label_formatter(&x_fmt)
            .y_label_formatter(&|v: &f64| format_tick(*v, y_span))
            .label_style(label_style)
            .axis_desc_style(axis_style)
            .light_line_style(WHITE)
            .draw()
            .map_err(|e| err(&e))?;
        draw_content(&mut chart, data, stages, data.y.1 - 0.04 * y_span)?;
    }
    root.present().map_err(|e| err(&e))
}

/// Stage marks, the series and their legend on a chart whose mesh is drawn; stage names are
/// written at height `label_y`.
fn draw_content<'a, DB: DrawingBackend + 'a, Y: Ranged<ValueType = f64>>(
    chart: &mut ChartContext<'a, DB, Cartesian2d<RangedCoordf64, Y>>,
    data: &Prepared,
    stages: &[(f64, String)],
    label_y: f64,
) -> Result<(), String> {
    let err = |e: &dyn std::fmt::Display| e.to_string();
    let stage_style: TextStyle = (FAMILY, 15).into_font().color(&BLACK.mix(0.7));
    for (t, name) in stages {
        let line = vec![(*t, data.y.0), (*t, data.y.1)];
        chart
            .draw_series(DashedLineSeries::new(line, 6, 4, BLACK.mix(0.5).into()))
            .map_err(|e| err(&e))?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!(" {name}"),
                (*t, label_y),
                stage_style.clone(),
            )))
            .map_err(|e| err(&e))?;
    }
    for (i, (legend, points)) in data.series.iter().enumerate() {
        let style = ShapeStyle::from(COLOURS[i % COLOURS.len()]).stroke_width(2);
        chart
            .draw_series(LineSeries::new(points.iter().copied(), style))
            .map_err(|e| err(&e))?
            .label(*legend)
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], style));
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::LowerRight)
        .label_font((FAMILY, 15).into_font())
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK.mix(0.4))
        .draw()
        .map_err(|e| err(&e))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_read_back() {
        // A label must read back to within 1 % of the axis span (ticks are about a tenth of the
        // span apart), whatever the magnitude.
        for (v, span) in [(1500.0, 5000.0), (0.125, 1.0), (3.0e-7, 1e-6), (2.5e6, 1e7)] {
            let s = format_tick(v, span);
            let back: f64 = s.parse().unwrap();
            assert!((back - v).abs() <= 1e-2 * span, "{v} -> {s}");
        }
        assert_eq!(format_tick(1500.0, 5000.0), "1500");
    }

    #[test]
    fn the_time_axis_covers_the_rows() {
        assert_eq!(time_axis((10.0, 5000.0)), (0.0, 5000.0));
        assert_eq!(time_axis((4000.0, 5000.0)), (4000.0, 5000.0));
        let (a, b) = time_axis((7.0, 7.0));
        assert!(a < 7.0 && b > 7.0);
    }

    #[test]
    fn prefixes() {
        assert_eq!(unit_prefix(2.5e8), (1e6, "M"));
        assert_eq!(unit_prefix(0.5), (1.0, ""));
    }
}

//! # dilata-plot
//!
//! Figures of a run: the `history.csv` that `dilata run` writes, drawn against time as PNG and
//! SVG files (concentration, peak stresses, energies, step size), with the changes of
//! loading-program stage marked by dashed lines; and, for a 2D run, colour maps of one nodal
//! field per snapshot ([`plot_field_dir`]), read back from the run's `fields.pvd` and `.vtu`
//! files through `dilata-io`. Knows nothing of solvers or physics.
//!
//! Text is drawn with a font compiled into the library (Go Regular, BSD-3-clause, see
//! `crates/plot/fonts/LICENSE`), so drawing needs no system library or font file. In the SVG
//! files text stays text (`font-family="sans-serif"`), rendered by the viewer.
//!
//! ```
//! let dir = tempfile::tempdir().unwrap();
//! std::fs::write(
//!     dir.path().join("history.csv"),
//!     "time_s,stage,dt_s,c_mean_mol_m3\n1,charge,1,10\n3,charge,2,12\n6,rest,3,12\n",
//! )
//! .unwrap();
//! let written = dilata_plot::plot_run_dir(dir.path(), &dilata_plot::PlotOptions::default())
//!     .unwrap();
//! // Concentration and step size (the file has no stress or energy columns), PNG and SVG.
//! assert_eq!(written.len(), 4);
//! ```

pub mod colour;
mod field;
mod figure;
mod table;

use std::path::{Path, PathBuf};
use std::sync::Once;

use plotters::backend::{BitMapBackend, SVGBackend};
use plotters::drawing::IntoDrawingArea;
use plotters::style::FontStyle;

pub use field::{plot_field_dir, FieldPlotOptions, FIELDS_FILE};
pub use figure::{format_tick, FigureSpec, FIGURES};
pub use table::{HistoryTable, STAGE_COLUMN, TIME_COLUMN};

/// The embedded font (see `fonts/LICENSE`).
const FONT: &[u8] = include_bytes!("../fonts/Go-Regular.ttf");

/// Name of the history file inside a results directory.
pub const HISTORY_FILE: &str = "history.csv";

/// Attribute on the root element of every SVG figure: the horizontal (time) axis range in
/// seconds, two numbers separated by a space, for readers that check what a figure covers.
pub const SVG_TIME_RANGE_ATTRIBUTE: &str = "data-time-range";

/// Errors of reading a history or writing a figure.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// The history file could not be read.
    #[error("{}: cannot read: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// What the operating system said.
        source: std::io::Error,
    },
    /// A line of the history file is not what `dilata run` writes.
    #[error("{}:{line}: {message}", path.display())]
    Syntax {
        /// The file.
        path: PathBuf,
        /// Line number, from 1.
        line: usize,
        /// What was expected and what was found.
        message: String,
    },
    /// The history has a header but no rows (a run that stopped before its first step).
    #[error("{}: no rows after the header, nothing to plot", path.display())]
    NoRows {
        /// The file.
        path: PathBuf,
    },
    /// The drawing library failed.
    #[error("{}: drawing failed: {message}", path.display())]
    Draw {
        /// The figure being drawn.
        path: PathBuf,
        /// The library's message.
        message: String,
    },
    /// A results directory or snapshot that cannot give field pictures (missing folder,
    /// missing collection, a time outside the snapshots, a bad colour range).
    #[error("{}: {message}", path.display())]
    Field {
        /// The folder or file concerned.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// The field asked for does not exist in a snapshot, or needs a component index.
    #[error("field '{field}': {message}")]
    FieldName {
        /// The field as asked for.
        field: String,
        /// What is wrong, with the names that exist.
        message: String,
    },
    /// Field pictures are drawn for 2D runs only.
    #[error("{}: field pictures are drawn for 2D runs only, but {what}", path.display())]
    Not2d {
        /// The snapshot.
        path: PathBuf,
        /// What makes it three-dimensional.
        what: String,
    },
    /// A snapshot or the collection could not be read back.
    #[error("cannot read a snapshot: {0}")]
    Snapshot(Box<dilata_io::IoError>),
    /// A figure file could not be written (the error names the file and the failed operation).
    #[error("cannot write the figure: {0}")]
    Write(Box<dilata_io::IoError>),
}

/// Size and output choices of the figures.
#[derive(Clone, Debug)]
pub struct PlotOptions {
    /// Width and height of every figure in pixels (the SVG's user units).
    pub size: (u32, u32),
    /// Directory the figures go to (default: the run directory itself).
    pub out: Option<PathBuf>,
}

impl Default for PlotOptions {
    fn default() -> Self {
        PlotOptions {
            size: (960, 540),
            out: None,
        }
    }
}

fn register_font() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        plotters::style::register_font(figure::FAMILY, FontStyle::Normal, FONT)
            .unwrap_or_else(|_| panic!("the embedded font fonts/Go-Regular.ttf does not load"));
    });
}

/// Read `dir/history.csv` and write every figure with data as `<stem>.png` and `<stem>.svg`
/// (see [`FIGURES`]); returns the files written, in order.
pub fn plot_run_dir(dir: &Path, options: &PlotOptions) -> Result<Vec<PathBuf>, PlotError> {
    let table = HistoryTable::read(&dir.join(HISTORY_FILE))?;
    let out = options.out.as_deref().unwrap_or(dir);
    write_figures(&table, out, options)
}

/// Write the figures of `table` into the directory `out` (which must exist).
pub fn write_figures(
    table: &HistoryTable,
    out: &Path,
    options: &PlotOptions,
) -> Result<Vec<PathBuf>, PlotError> {
    register_font();
    let stages = table.build_stage_boundaries();
    let mut written = Vec::new();
    for spec in &FIGURES {
        let Some(data) = figure::prepare(spec, table) else {
            continue;
        };
        let svg_path = out.join(format!("{}.svg", spec.stem));
        let mut svg = String::new();
        {
            let root = SVGBackend::with_string(&mut svg, options.size).into_drawing_area();
            figure::draw(&root, spec, &data, &stages).map_err(|message| PlotError::Draw {
                path: svg_path.clone(),
                message,
            })?;
        }
        let svg = mark_time_range(&svg, data.x);
        write_file(&svg_path, svg.as_bytes())?;
        written.push(svg_path);

        let png_path = out.join(format!("{}.png", spec.stem));
        let (w, h) = options.size;
        let mut pixels = vec![0_u8; w as usize * h as usize * 3];
        {
            let root = BitMapBackend::with_buffer(&mut pixels, options.size).into_drawing_area();
            figure::draw(&root, spec, &data, &stages).map_err(|message| PlotError::Draw {
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
    }
    Ok(written)
}

/// Put the time axis range on the root `<svg>` element.
fn mark_time_range(svg: &str, (t0, t1): (f64, f64)) -> String {
    let attribute = format!("<svg {SVG_TIME_RANGE_ATTRIBUTE}=\"{t0:e} {t1:e}\" ");
    svg.replacen("<svg ", &attribute, 1)
}

/// RGB pixels to PNG bytes.
fn encode_png(pixels: &[u8], (w, h): (u32, u32)) -> Result<Vec<u8>, String> {
    let mut bytes = Vec::new();
    let mut encoder = png::Encoder::new(&mut bytes, w, h);
    encoder.set_color(png::ColorType::Rgb);
    encoder.set_depth(png::BitDepth::Eight);
    let mut writer = encoder.write_header().map_err(|e| e.to_string())?;
    writer.write_image_data(pixels).map_err(|e| e.to_string())?;
    writer.finish().map_err(|e| e.to_string())?;
    Ok(bytes)
}

/// Write atomically (`dilata_io::write_atomic`): a failed write never leaves half a figure in
/// place of an earlier one.
fn write_file(path: &Path, bytes: &[u8]) -> Result<(), PlotError> {
    dilata_io::write_atomic(path, bytes).map_err(|e| PlotError::Write(Box::new(e)))
}

//! `dilata plot DIR` (history figures, or field pictures with `--field`), and the figures
//! `dilata run` draws when it ends.

use std::path::Path;

use anyhow::Context;
use dilata_plot::{FieldPlotOptions, HistoryTable, PlotOptions, HISTORY_FILE};

/// `dilata plot DIR [--out OUT]`: figures of `DIR/history.csv`.
pub fn plot(dir: &Path, out: Option<&Path>) -> anyhow::Result<()> {
    if let Some(out) = out {
        std::fs::create_dir_all(out)
            .with_context(|| format!("creating the figure directory {}", out.display()))?;
    }
    let written = draw(dir, out)?;
    println!("{} figures written:", written.len());
    for f in &written {
        println!("  {}", f.display());
    }
    Ok(())
}

/// Choices of `dilata plot --field`, as given on the command line.
pub struct FieldChoice {
    /// `--times`.
    pub times: Option<Vec<f64>>,
    /// `--range` (must be two numbers).
    pub range: Option<Vec<f64>>,
    /// `--svg`.
    pub svg: bool,
    /// `--size`.
    pub size: (u32, u32),
}

/// `dilata plot DIR --field NAME [--times ..] [--range LOW,HIGH] [--svg] [--size WxH]
/// [--out OUT]`: colour maps of each field, one per chosen snapshot.
pub fn fields(
    dir: &Path,
    out: Option<&Path>,
    fields: &[String],
    choice: FieldChoice,
) -> anyhow::Result<()> {
    let FieldChoice {
        times,
        range,
        svg,
        size,
    } = choice;
    let range = match range.as_deref() {
        None => None,
        Some(&[lo, hi]) => Some((lo, hi)),
        Some(other) => anyhow::bail!(
            "--range: expected two numbers LOW,HIGH, got {} ({other:?})",
            other.len()
        ),
    };
    if let Some(out) = out {
        std::fs::create_dir_all(out)
            .with_context(|| format!("creating the figure directory {}", out.display()))?;
    }
    let mut written = Vec::new();
    for field in fields {
        let options = FieldPlotOptions {
            times: times.clone(),
            range,
            svg,
            size,
            out: out.map(Path::to_path_buf),
            ..FieldPlotOptions::new(field)
        };
        written.extend(dilata_plot::plot_field_dir(dir, &options)?);
    }
    println!("{} field pictures written:", written.len());
    for f in &written {
        println!("  {}", f.display());
    }
    Ok(())
}

/// Figures of the run in `dir` (into `out`, default `dir`); returns the files written.
pub fn draw(dir: &Path, out: Option<&Path>) -> anyhow::Result<Vec<std::path::PathBuf>> {
    let table = HistoryTable::read(&dir.join(HISTORY_FILE))?;
    if table.dropped_partial_line {
        eprintln!(
            "note: the last line of the history is unfinished and is left out of the figures"
        );
    }
    let options = PlotOptions {
        out: out.map(Path::to_path_buf),
        ..PlotOptions::default()
    };
    Ok(dilata_plot::write_figures(
        &table,
        options.out.as_deref().unwrap_or(dir),
        &options,
    )?)
}

/// After a finished run: draw its figures, or say why not.
pub fn after_run(dir: &Path) -> anyhow::Result<()> {
    let written = draw(dir, None).context(
        "the run finished and its results are written, but drawing its figures failed \
         (rerun with --no-plot to skip them)",
    )?;
    println!(
        "  {} figures (PNG and SVG) in {}",
        written.len(),
        dir.display()
    );
    Ok(())
}

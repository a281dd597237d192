//! # dilata-cli
//!
//! Argument parsing, progress display and error presentation for the `dilata` command. No
//! numerics here: commands call the library crates and print what they return.

mod mesh_cmd;
mod plot_cmd;
mod scenario_cmd;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Dilata: coupled deformation and diffusion in solids, by the finite-element method.
#[derive(Debug, Parser)]
#[command(name = "dilata", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Read a mesh file (MSH 2.2 or 4.1, ASCII or binary) and print a summary: nodes, cells by
    /// kind, regions and boundaries with sizes, and quality figures.
    Mesh {
        /// The mesh file.
        file: PathBuf,
        /// Also write the mesh with its region ids as a VTK unstructured grid (.vtu).
        #[arg(long, value_name = "OUT")]
        vtu: Option<PathBuf>,
        /// Print the summary as one JSON object instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Check a scenario file without computing: syntax, keys, types, ranges, boundary and zone
    /// names, materials, rigid-body supports. Prints a short description.
    Check {
        /// The scenario file (TOML, see docs/scenario.md).
        file: PathBuf,
    },
    /// Run a scenario: fields as .vtu files with a .pvd index, history.csv, summary.json.
    Run {
        /// The scenario file (TOML, see docs/scenario.md).
        file: PathBuf,
        /// Results directory (default: dilata-out/<scenario name>).
        #[arg(long, value_name = "DIR")]
        out: Option<PathBuf>,
        /// Worker threads for assembly (and, in 3D, for the linear solver; default: all cores).
        #[arg(long, value_name = "N")]
        threads: Option<usize>,
        /// Do not draw the history figures at the end (see `dilata plot`).
        #[arg(long)]
        no_plot: bool,
    },
    /// Continue a run from the newest checkpoint in its results folder (after a crash, Ctrl-C
    /// or SIGTERM). The results are the same, to the last bit, as those of a run never
    /// interrupted.
    Resume {
        /// The results directory of the run.
        dir: PathBuf,
        /// Continue even though the scenario file changed since the run started (the mesh and
        /// the orders must not change).
        #[arg(long)]
        force: bool,
        /// Worker threads for assembly (and, in 3D, for the linear solver; default: all cores).
        #[arg(long, value_name = "N")]
        threads: Option<usize>,
        /// Do not draw the history figures at the end.
        #[arg(long)]
        no_plot: bool,
    },
    /// Run the built-in demonstration scenario: a spherical storage particle charged at
    /// constant current to half capacity, then resting (examples/charging_particle).
    Demo {
        /// Results directory (created if missing).
        #[arg(long, value_name = "DIR", default_value = "dilata-out/demo")]
        out: PathBuf,
        /// Worker threads for assembly (and, in 3D, for the linear solver; default: all cores).
        #[arg(long, value_name = "N")]
        threads: Option<usize>,
        /// Do not draw the history figures at the end (see `dilata plot`).
        #[arg(long)]
        no_plot: bool,
    },
    /// Draw the history of a run (DIR/history.csv) as PNG and SVG figures: concentration, peak
    /// stresses, energies and step size against time, stage changes marked. With --field: colour
    /// maps of a nodal field of a 2D run instead, one PNG per snapshot.
    Plot {
        /// Results directory of a run.
        dir: PathBuf,
        /// Directory for the figures (default: DIR).
        #[arg(long, value_name = "OUT")]
        out: Option<PathBuf>,
        /// Draw this point array of the snapshots (`c`, `mu`, `hydrostatic_stress`, ...; one
        /// component of a vector or tensor as `u[0]`); repeat for several fields.
        #[arg(long, value_name = "NAME")]
        field: Vec<String>,
        /// Only the snapshots nearest to these times in seconds (comma-separated; default: all).
        #[arg(
            long,
            value_name = "T,T,...",
            value_delimiter = ',',
            allow_hyphen_values = true,
            requires = "field"
        )]
        times: Option<Vec<f64>>,
        /// Colour range LOW,HIGH (default: smallest to largest value over the pictures drawn).
        #[arg(
            long,
            value_name = "LOW,HIGH",
            value_delimiter = ',',
            allow_hyphen_values = true,
            requires = "field"
        )]
        range: Option<Vec<f64>>,
        /// Also write every field picture as SVG.
        #[arg(long, requires = "field")]
        svg: bool,
        /// Size of the field pictures in pixels, WIDTHxHEIGHT.
        #[arg(long, value_name = "WxH", default_value = "800x640", value_parser = parse_size, requires = "field")]
        size: (u32, u32),
    },
}

/// `WIDTHxHEIGHT` in pixels, each from 200 to 8000.
fn parse_size(text: &str) -> Result<(u32, u32), String> {
    let bad =
        || format!("'{text}': expected WIDTHxHEIGHT in pixels, e.g. 800x640, each 200 to 8000");
    let (w, h) = text.split_once(['x', 'X']).ok_or_else(bad)?;
    let w: u32 = w.trim().parse().map_err(|_| bad())?;
    let h: u32 = h.trim().parse().map_err(|_| bad())?;
    if !(200..=8000).contains(&w) || !(200..=8000).contains(&h) {
        return Err(bad());
    }
    Ok((w, h))
}

/// Exit code of a run stopped by Ctrl-C or SIGTERM (128 + SIGINT, the shell convention).
pub const EXIT_INTERRUPTED: u8 = 130;

/// Entry point of the `dilata` binary. Exit code 0 on success; otherwise a one-line cause on
/// standard error and exit code 1 (2 for command-line usage errors, from the parser;
/// [`EXIT_INTERRUPTED`] for a run stopped by a signal, with the command that continues it).
pub fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Mesh { file, vtu, json } => mesh_cmd::run(&file, vtu.as_deref(), json),
        Command::Check { file } => scenario_cmd::check(&file),
        Command::Run {
            file,
            out,
            threads,
            no_plot,
        } => scenario_cmd::run(&file, out.as_deref(), threads, !no_plot),
        Command::Resume {
            dir,
            force,
            threads,
            no_plot,
        } => scenario_cmd::resume(&dir, force, threads, !no_plot),
        Command::Demo {
            out,
            threads,
            no_plot,
        } => scenario_cmd::demo(&out, threads, !no_plot),
        Command::Plot {
            dir,
            out,
            field,
            times,
            range,
            svg,
            size,
        } => {
            if field.is_empty() {
                plot_cmd::plot(&dir, out.as_deref())
            } else {
                let choice = plot_cmd::FieldChoice {
                    times,
                    range,
                    svg,
                    size,
                };
                plot_cmd::fields(&dir, out.as_deref(), &field, choice)
            }
        }
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            // A cause whose text its parent already quotes is not repeated.
            let mut line = String::new();
            for cause in e.chain().map(ToString::to_string) {
                if line.is_empty() {
                    line = cause;
                } else if !line.ends_with(&cause) {
                    line = format!("{line}: {cause}");
                }
            }
            eprintln!("error: {line}");
            let interrupted = matches!(
                e.downcast_ref::<dilata_run::RunError>(),
                Some(dilata_run::RunError::Interrupted { .. })
            );
            if interrupted {
                ExitCode::from(EXIT_INTERRUPTED)
            } else {
                ExitCode::FAILURE
            }
        }
    }
}

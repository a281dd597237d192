//! # dilata-cli
//!
//! Argument parsing, progress display and error presentation for the `dilata` command. No
//! numerics here: commands call the library crates and print what they return.

mod demo;
mod json;
mod mesh_cmd;

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
    /// Run the built-in demonstration: a pressurised thick-walled tube, meshed, solved and
    /// written as .vtu files, with the bore stress compared against the closed-form solution.
    Demo {
        /// Results directory (created if missing).
        #[arg(long, value_name = "DIR", default_value = "dilata-out/demo")]
        out: PathBuf,
        /// Worker threads for assembly and factorisation (default: all cores).
        #[arg(long, value_name = "N")]
        threads: Option<usize>,
        /// Mesh refinement level (cells across the wall = 4 × level).
        #[arg(long, value_name = "LEVEL", default_value_t = 3)]
        refine: usize,
    },
}

/// Entry point of the `dilata` binary. Exit code 0 on success; otherwise a one-line cause on
/// standard error and exit code 1 (2 for command-line usage errors, from the parser).
pub fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Mesh { file, vtu, json } => mesh_cmd::run(&file, vtu.as_deref(), json),
        Command::Demo {
            out,
            threads,
            refine,
        } => demo::run(&out, threads, refine),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            let chain: Vec<String> = e.chain().map(ToString::to_string).collect();
            eprintln!("error: {}", chain.join(": "));
            ExitCode::FAILURE
        }
    }
}

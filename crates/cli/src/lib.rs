//! # dilata-cli
//!
//! Argument parsing, progress display and error presentation for the `dilata` command.
//! No numerics here.

/// Entry point of the `dilata` binary.
pub fn main() -> std::process::ExitCode {
    std::process::ExitCode::SUCCESS
}

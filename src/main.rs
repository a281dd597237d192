//! The `dilata` command. All behaviour lives in the `dilata-cli` crate.
fn main() -> std::process::ExitCode {
    dilata_cli::main()
}

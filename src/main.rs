//! The acquest binary: parses flags, runs the library, renders, maps errors to exit codes.

mod cli;

fn main() -> std::process::ExitCode {
    cli::main()
}

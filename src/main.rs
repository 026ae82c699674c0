//! The `furrow` binary: parses the command line, calls the library, prints. Exit codes: 0 ok,
//! 1 a run failed (e.g. a diverging path), 2 bad input or usage.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::dispatch(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("furrow: error: {err:#}");
            ExitCode::from(cli::exit_code(&err))
        }
    }
}

//! The `furrow` binary: parses the command line, calls the library, prints. Exit codes: 0 ok,
//! 1 a run failed (e.g. a diverging path), 2 bad input or usage.

mod cli;

use std::process::ExitCode;

use clap::Parser;

/// On SIGINT or SIGTERM: delete the temporary files being written (so an interrupted run leaves no
/// debris and every output file is the whole old one or the whole new one), then die of the signal as
/// the default action would.
fn remove_temporaries_on_signals() {
    use signal_hook::consts::{SIGINT, SIGTERM};
    let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM]) else {
        return; // no handler: the default action still stops the run
    };
    std::thread::spawn(move || {
        if let Some(sig) = signals.forever().next() {
            furrow::output::remove_temporaries();
            let _ = signal_hook::low_level::emulate_default_handler(sig);
            std::process::exit(128 + sig);
        }
    });
}

fn main() -> ExitCode {
    remove_temporaries_on_signals();
    let args = cli::Cli::parse();
    match cli::dispatch(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("furrow: error: {err:#}");
            ExitCode::from(cli::exit_code(&err))
        }
    }
}

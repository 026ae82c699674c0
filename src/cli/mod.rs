//! Command-line definition and glue: one file per verb. Nothing here computes; it parses, calls the
//! library and prints (data to stdout or `--out`, talk to stderr).

mod check;
mod common;
mod compare;
mod fit;
mod mc_run;
mod report;
mod run;
mod stability;
mod storage;
mod sweep;

pub use common::exit_code;

use clap::{Parser, Subcommand};

/// furrow — try a market intervention on paper before it is tried on farmers.
#[derive(Debug, Parser)]
#[command(name = "furrow", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    pub verb: Verb,
}

/// The verbs.
#[derive(Debug, Subcommand)]
pub enum Verb {
    /// Validate market and policy files; print the steady state and the elasticities there.
    Check(check::CheckArgs),
    /// Simulate one path (or a Monte Carlo summary when replications > 1).
    Run(run::RunArgs),
    /// Eigenvalues and verdict for each regime of the linearised model.
    Stability(stability::StabilityArgs),
    /// Stability over a grid of one or two file keys (and long-run prices for one key).
    Sweep(sweep::SweepArgs),
    /// Side-by-side indicators for each policy against the market without intervention.
    Compare(compare::CompareArgs),
    /// A self-contained HTML briefing: tables, plots, cautions.
    Report(report::ReportArgs),
    /// Solve the competitive storage equilibrium with private storers.
    Storage(storage::StorageArgs),
    /// Estimate supply and demand from a history of seasons and write a market file.
    Fit(fit::FitArgs),
}

/// Runs one verb.
pub fn dispatch(cli: Cli) -> anyhow::Result<()> {
    match cli.verb {
        Verb::Check(a) => check::execute(&a),
        Verb::Run(a) => run::execute(&a),
        Verb::Stability(a) => stability::execute(&a),
        Verb::Sweep(a) => sweep::execute(&a),
        Verb::Compare(a) => compare::execute(&a),
        Verb::Report(a) => report::execute(&a),
        Verb::Storage(a) => storage::execute(&a),
        Verb::Fit(a) => {
            let text = fit::execute(&a)?;
            furrow::output::write_whole(std::path::Path::new("-"), text.as_bytes())?;
            Ok(())
        }
    }
}

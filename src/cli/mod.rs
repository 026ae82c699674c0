//! Command-line definition and glue: one file per verb. Nothing here computes; it parses, calls the
//! library and prints (data to stdout or `--out`, talk to stderr).

mod check;
mod common;
mod compare;
mod design;
mod figures;
mod fit;
mod report;
mod run;
mod sensitivity;
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
    /// Goal-seek a key (or two) that meets requirements; the cost–risk frontier.
    Design(design::DesignArgs),
    /// Side-by-side indicators for each policy against the market without intervention.
    Compare(compare::CompareArgs),
    /// A self-contained HTML briefing: tables, plots, cautions.
    Report(report::ReportArgs),
    /// Solve the competitive storage equilibrium with private storers.
    Storage(storage::StorageArgs),
    /// Estimate supply and demand from a history of seasons and write a market file.
    Fit(fit::FitArgs),
    /// How the comparison depends on the expectation rule and on file keys (panel, tornado).
    Sensitivity(sensitivity::SensitivityArgs),
}

/// Runs one verb. An error that names none of the verb's input files gets them in front (a diverging
/// path, a failed solve), so every message says which files it is about.
pub fn dispatch(cli: Cli) -> anyhow::Result<()> {
    let (verb, inputs) = inputs_of(&cli.verb);
    let result = match cli.verb {
        Verb::Check(a) => check::execute(&a),
        Verb::Run(a) => run::execute(&a),
        Verb::Stability(a) => stability::execute(&a),
        Verb::Sweep(a) => sweep::execute(&a),
        Verb::Compare(a) => compare::execute(&a),
        Verb::Design(a) => design::execute(&a),
        Verb::Report(a) => report::execute(&a),
        Verb::Storage(a) => storage::execute(&a),
        Verb::Sensitivity(a) => sensitivity::execute(&a),
        Verb::Fit(a) => fit::execute(&a).and_then(|text| {
            furrow::output::write_whole(std::path::Path::new("-"), text.as_bytes())?;
            Ok(())
        }),
    };
    result.map_err(|e| {
        let msg = format!("{e:#}");
        if inputs.is_empty() || inputs.iter().any(|f| msg.contains(f.as_str())) {
            e
        } else {
            e.context(format!("{verb} {}", inputs.join(", ")))
        }
    })
}

/// The verb's name and its input files.
fn inputs_of(verb: &Verb) -> (&'static str, Vec<String>) {
    let with = |name, market: &String, policies: Vec<&String>| {
        let mut v = vec![market.clone()];
        v.extend(policies.into_iter().cloned());
        (name, v)
    };
    match verb {
        Verb::Check(a) => ("check", a.files.clone()),
        Verb::Run(a) => with("run", &a.market, a.policy.iter().collect()),
        Verb::Stability(a) => with("stability", &a.market, a.policy.iter().collect()),
        Verb::Sweep(a) => with("sweep", &a.market, a.policy.iter().collect()),
        Verb::Design(a) => with("design", &a.market, a.policy.iter().collect()),
        Verb::Compare(a) => with("compare", &a.market, a.policies.iter().collect()),
        Verb::Report(a) => with("report", &a.market, a.policies.iter().collect()),
        Verb::Storage(a) => with("storage", &a.market, a.policy.iter().collect()),
        Verb::Fit(a) => ("fit", vec![a.data.display().to_string()]),
        Verb::Sensitivity(a) => with("sensitivity", &a.market, a.policies.iter().collect()),
    }
}

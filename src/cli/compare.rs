//! `furrow compare MARKET POLICY...`: indicators as rows, policies as columns, against the market
//! left alone under the same shocks. Also the progress bar shared with `run`'s Monte Carlo.

use std::io::IsTerminal;

use clap::Args;
use furrow::compare::{compare, render};
use furrow::scenario::Scenario;
use furrow::stochastic::{NoProgress, Progress};
use indicatif::{ProgressBar, ProgressStyle};

use super::common::{load_policy, say, CommonArgs};

/// Arguments of `compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// The market file.
    pub market: String,
    /// One or more policy files (each compared with the market left alone).
    #[arg(required = true, num_args = 1..)]
    pub policies: Vec<String>,
    /// Table layout: `wide` (indicators as rows, policies as columns, split into blocks that fit
    /// 120 columns), `long` (policies as rows, key indicators as columns), or `auto` (wide when it
    /// fits, else long).
    #[arg(long, default_value = "auto", value_parser = parse_layout)]
    pub layout: render::Layout,
    #[command(flatten)]
    pub common: CommonArgs,
}

fn parse_layout(s: &str) -> Result<render::Layout, String> {
    s.parse()
}

/// Runs `compare`.
pub fn execute(args: &CompareArgs) -> anyhow::Result<()> {
    let scenario = args.common.load_market(&args.market)?;
    let policies = args
        .policies
        .iter()
        .map(|p| load_policy(Some(p), &scenario))
        .collect::<anyhow::Result<Vec<_>>>()?;
    if scenario.shocks.is_deterministic() && scenario.run.replications > 1 {
        say("the market has no shocks: every replication is the same path");
    }
    // compare keeps two per-period series (price and stock) for its fan charts
    super::common::check_memory("compare", &scenario, policies.len() + 1, 2)?;
    let bar = progress_for(&scenario, policies.len() + 1);
    let result = compare(&scenario, &policies, bar.observer());
    bar.finish();
    let result = result?;
    for column in &result.policies {
        for line in &column.warnings {
            say(&format!("warning: \"{}\": {line}", column.name));
        }
    }
    for line in render::close_call_warnings(&result) {
        say(&format!("warning: {line}"));
    }
    if let Some(dir) = args.common.plot_dir() {
        super::report::plot_compare(&dir, &scenario, &args.policies, &result)?;
    }
    args.common.emit(&render::render_with(
        &result,
        args.common.format,
        args.layout,
    ))
}

/// A progress bar on stderr for long Monte Carlo runs when stderr is a terminal; silent otherwise.
pub(super) struct Bar(Option<ProgressBar>);

impl Progress for Bar {
    fn advance(&self, replications: u64) {
        if let Some(b) = &self.0 {
            b.inc(replications);
        }
    }
}

impl Bar {
    /// The observer to hand to the library.
    pub(super) fn observer(&self) -> &dyn Progress {
        if self.0.is_some() {
            self
        } else {
            &NoProgress
        }
    }

    /// Clears the bar.
    pub(super) fn finish(&self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}

/// Period-steps above which a run counts as long enough for a bar.
const LONG_RUN_STEPS: usize = 20_000_000;

/// A bar for `models` models of `scenario`'s replications and periods.
pub(super) fn progress_for(scenario: &Scenario, models: usize) -> Bar {
    let reps = scenario.run.replications;
    let steps = reps
        .saturating_mul(scenario.run.periods)
        .saturating_mul(models);
    if steps < LONG_RUN_STEPS || !std::io::stderr().is_terminal() {
        return Bar(None);
    }
    let b = ProgressBar::new(reps as u64);
    if let Ok(style) =
        ProgressStyle::with_template("furrow: {bar:40} {pos}/{len} replications, {eta} left")
    {
        b.set_style(style);
    }
    Bar(Some(b))
}

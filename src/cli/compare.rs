//! `furrow compare MARKET POLICY...`: indicators as rows, policies as columns, against the market
//! left alone under the same shocks.

use clap::Args;
use furrow::compare::{compare_with_households, render, Fans, Households};

use super::common::{check_memory, install_progress, load_policy, progress_for, say, CommonArgs};
use super::figures;

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
    /// Add the household groups' block (the market file's `[[households]]`): welfare change of
    /// each group as a share of its income, first order and with response, and the change in the
    /// cost of price risk, for every policy.
    #[arg(long)]
    pub households: bool,
    #[command(flatten)]
    pub common: CommonArgs,
}

fn parse_layout(s: &str) -> Result<render::Layout, String> {
    s.parse()
}

/// Runs `compare`.
pub fn execute(args: &CompareArgs) -> anyhow::Result<()> {
    let scenario = args.common.load_market(&args.market)?;
    if args.households && scenario.households.is_empty() {
        return Err(furrow::scenario::InputError::Missing {
            file: args.market.clone(),
            key: "[[households]]".into(),
            expected: "--households needs household groups in the market file: one \
                       [[households]] table per group with name, population_share, income, \
                       production_share and consumption_share (see the README)"
                .into(),
        }
        .into());
    }
    install_progress(); // storage solves of a market with storers, after a second
    let policies = args
        .policies
        .iter()
        .map(|p| load_policy(Some(p), &scenario))
        .collect::<anyhow::Result<Vec<_>>>()?;
    if scenario.is_deterministic() && scenario.run.replications > 1 {
        say("the market has no shocks: every replication is the same path");
    }
    // the fan charts only when plots are asked for: no table reads them
    let fans = match args.common.plot_dir() {
        Some(_) => Fans::Keep,
        None => Fans::Skip,
    };
    check_memory(
        "compare",
        &scenario,
        policies.len() + 1,
        fans.series().len(),
    )?;
    let bar = progress_for(&scenario, policies.len() + 1);
    // the household groups only when they are shown
    let households = match args.households {
        true => Households::Measure,
        false => Households::Skip,
    };
    let result = compare_with_households(&scenario, &policies, bar.observer(), fans, households);
    bar.finish();
    let (result, households) = result?;
    for column in &result.policies {
        for line in &column.warnings {
            say(&format!("warning: \"{}\": {line}", column.name));
        }
    }
    for line in render::close_call_warnings(&result) {
        say(&format!("warning: {line}"));
    }
    if let Some(dir) = args.common.plot_dir() {
        figures::plot_compare(&dir, &scenario, &args.policies, &result)?;
    }
    args.common.emit(&render::render_with_households(
        &result,
        households.as_ref(),
        args.common.format,
        args.layout,
    ))
}

//! `furrow report MARKET POLICY... --out FILE.html`. The briefing itself is built by
//! `furrow::briefing`; this file parses, calls and writes.

use anyhow::Context;
use clap::Args;
use furrow::briefing::{self, Overrides};
use furrow::output::Format;
use furrow::policies::PolicySpec;
use furrow::scenario::Scenario;

use super::common::{check_memory, columns, install_progress, progress_for, say, CommonArgs};
use super::figures;

/// Arguments of `report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The market file.
    pub market: String,
    /// One or more policy files (each compared with the market left alone).
    #[arg(required = true, num_args = 1..)]
    pub policies: Vec<String>,
    /// Place the policies by two indicators of the comparison, RISK across and COST up (both smaller
    /// is better), in an annex with the frontier figure, e.g. `price_cv,fiscal_cost_pv`.
    #[arg(long, value_name = "RISK,COST")]
    pub frontier: Option<String>,
    /// Add the assumption annex: every policy under each expectation rule (the panel of
    /// `furrow sensitivity`), the forecast-error decomposition and, with --range, the tornado.
    #[arg(long)]
    pub sensitivity: bool,
    /// With --sensitivity: the panel's rules, as `sensitivity --rules`.
    #[arg(
        long,
        value_name = "LIST",
        default_value = "",
        requires = "sensitivity"
    )]
    pub rules: String,
    /// With --sensitivity: a file key and its low and high value for the tornado, KEY=LOW:HIGH;
    /// repeatable.
    #[arg(long, value_name = "KEY=LOW:HIGH", requires = "sensitivity")]
    pub range: Vec<String>,
    /// With --sensitivity: an indicator of the panel, as `sensitivity --indicator`; repeatable.
    #[arg(long, value_name = "NAME", requires = "sensitivity")]
    pub indicator: Vec<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `report`.
pub fn execute(args: &ReportArgs) -> anyhow::Result<()> {
    let Some(out) = args.common.out.clone() else {
        anyhow::bail!("report needs --out FILE.html (the briefing is one HTML file; `--out -` writes it to stdout)")
    };
    if args.common.format != Format::Table {
        let f = format!("{:?}", args.common.format).to_lowercase();
        anyhow::bail!(
            "report writes one HTML briefing: --format {f} is not available for it (for the numbers as CSV or JSON use `furrow compare … --format {f}`)"
        );
    }
    let scenario = args.common.load_market(&args.market)?;
    install_progress(); // storage solves of a market with storers, after a second
    let cols = columns(&args.policies, &scenario)?;
    let frontier = match &args.frontier {
        Some(pair) => Some(frontier_pair(pair)?),
        None => None,
    };
    let (result, households) = run_compare(&scenario, &cols)?;
    let annex = if args.sensitivity {
        Some(furrow::sensitivity::annex::annex(
            &super::sensitivity::analyse(
                &args.market,
                &args.policies,
                &args.rules,
                &args.range,
                &args.indicator,
                &args.common,
            )?,
        ))
    } else {
        None
    };
    if let (Some((risk, cost)), Some(first)) = (&frontier, result.policies.first()) {
        for name in [risk, cost] {
            if !first.indicators.iter().any(|i| &i.key == name) {
                let known: Vec<&str> = first.indicators.iter().map(|i| i.key.as_str()).collect();
                anyhow::bail!(
                    "--frontier: \"{name}\" is not an indicator of this comparison; known: {}",
                    known.join(", ")
                );
            }
        }
    }
    let built = briefing::build_with_households(
        &briefing::Request {
            scenario: &scenario,
            market_path: &args.market,
            policy_paths: &args.policies,
            columns: &cols,
            comparison: &result,
            overrides: Overrides {
                seed: args.common.seed.is_some(),
                replications: args.common.replications.is_some(),
                periods: args.common.periods.is_some(),
            },
            command: std::env::args().collect::<Vec<_>>().join(" "),
            frontier,
            annexes: annex.iter().map(|(section, _)| section.clone()).collect(),
        },
        households.as_ref(),
    )?;
    if let Some(dir) = args.common.plot_dir() {
        figures::write_all(&dir, &built.figures)?;
        if let Some((_, annex_figures)) = &annex {
            figures::write_all(&dir, annex_figures)?;
        }
    }
    furrow::output::write_whole(&out, built.briefing.to_html().as_bytes())
        .with_context(|| format!("cannot write {}", out.display()))?;
    if out.as_os_str() != "-" {
        say(&format!("wrote the briefing to {}", out.display()));
    }
    Ok(())
}

/// The Monte Carlo comparison of the columns after the first (the market left alone), with the
/// household groups' block when the market has `[[households]]` (the briefing's "who gains").
fn run_compare(
    scenario: &Scenario,
    cols: &[(String, PolicySpec)],
) -> anyhow::Result<(
    furrow::compare::CompareResult,
    Option<furrow::households::HouseholdResult>,
)> {
    let mut specs: Vec<PolicySpec> = cols.iter().skip(1).map(|(_, p)| p.clone()).collect();
    if specs.is_empty() {
        specs.push(cols[0].1.clone());
    }
    // the briefing draws the fan charts: their per-period series are kept
    let fans = furrow::compare::Fans::Keep;
    check_memory("report", scenario, specs.len() + 1, fans.series().len())?;
    let bar = progress_for(scenario, specs.len() + 1);
    let result = furrow::compare::compare_with_households(
        scenario,
        &specs,
        bar.observer(),
        fans,
        furrow::compare::Households::Measure,
    );
    bar.finish();
    Ok(result?)
}

/// `RISK,COST` as two indicator names.
fn frontier_pair(pair: &str) -> anyhow::Result<(String, String)> {
    match pair.split_once(',') {
        Some((r, c)) if !r.trim().is_empty() && !c.trim().is_empty() && !c.contains(',') => {
            Ok((r.trim().to_string(), c.trim().to_string()))
        }
        _ => anyhow::bail!(
            "--frontier {pair}: give two indicator names, RISK,COST (e.g. price_cv,fiscal_cost_pv)"
        ),
    }
}

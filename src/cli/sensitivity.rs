//! `furrow sensitivity MARKET POLICY... [--rules LIST] [--range KEY=LOW:HIGH ...] [--indicator NAME ...]`:
//! the assumption panel, the forecast-error decomposition and the tornado.

use clap::Args;
use furrow::scenario::apply_override;
use furrow::sensitivity::{self, Inputs, Request};

use std::io::IsTerminal;

use furrow::stochastic::{NoProgress, Progress};
use indicatif::{ProgressBar, ProgressStyle};

use super::common::{check_memory, install_progress, load_policy, read_table, CommonArgs};

/// A bar over every comparison's replications (each comparison advances it by its own), on stderr
/// when it is a terminal and the work is long.
struct Bar(Option<ProgressBar>);

impl Progress for Bar {
    fn advance(&self, replications: u64) {
        if let Some(b) = &self.0 {
            b.inc(replications);
        }
    }
}

impl Bar {
    fn new(replications: usize, steps: usize) -> Bar {
        if steps < 20_000_000 || !std::io::stderr().is_terminal() {
            return Bar(None);
        }
        let b = ProgressBar::new(replications as u64);
        if let Ok(style) = ProgressStyle::with_template(
            "furrow: {bar:40} {pos}/{len} replications over all comparisons, {eta} left",
        ) {
            b.set_style(style);
        }
        Bar(Some(b))
    }

    fn observer(&self) -> &dyn Progress {
        if self.0.is_some() {
            self
        } else {
            &NoProgress
        }
    }

    fn finish(&self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}

/// Arguments of `sensitivity`.
#[derive(Debug, Args)]
pub struct SensitivityArgs {
    /// The market file.
    pub market: String,
    /// One or more policy files.
    #[arg(required = true, num_args = 1..)]
    pub policies: Vec<String>,
    /// Expectation rules of the panel, comma-separated, each NAME[:NUMBER][:KEY=VALUE]...
    /// (e.g. `naive,adaptive:0.6,normal-price:0.5,trailing-mean:3,rational`); default: every
    /// registered rule in its short form.
    #[arg(long, value_name = "LIST", default_value = "")]
    pub rules: String,
    /// A file key and its low and high value for the tornado, KEY=LOW:HIGH, or KEY=fit for the
    /// value ± two standard errors a market file written by `fit` records; repeatable.
    #[arg(long, value_name = "KEY=LOW:HIGH")]
    pub range: Vec<String>,
    /// An indicator of the panel (with its `_se`); repeatable; the first is the tornado's.
    /// Default: net_welfare_change_pv, fiscal_cost_pv, price_cv.
    #[arg(long, value_name = "NAME")]
    pub indicator: Vec<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `sensitivity`.
pub fn execute(args: &SensitivityArgs) -> anyhow::Result<()> {
    let result = analyse(
        &args.market,
        &args.policies,
        &args.rules,
        &args.range,
        &args.indicator,
        &args.common,
    )?;
    if let Some(dir) = args.common.plot_dir() {
        let figures = sensitivity::figures(&result);
        if figures.is_empty() {
            super::common::say(
                "--plots: the tornado needs at least one --range; no figure written",
            );
        }
        super::figures::write_all(&dir, &figures)?;
    }
    args.common
        .emit_with_caution(&sensitivity::render(&result, args.common.format))
}

/// The analysis of `sensitivity` (also the assumption annex of `report --sensitivity`): the files
/// validated first, then the panel, the forecast errors and the tornado.
pub fn analyse(
    market_path: &str,
    policy_paths: &[String],
    rules: &str,
    range: &[String],
    indicator: &[String],
    common: &CommonArgs,
) -> anyhow::Result<sensitivity::Sensitivity> {
    // the files as given, validated first (errors name the file or the option)
    let scenario = common.load_market(market_path)?;
    for p in policy_paths {
        load_policy(Some(p), &scenario)?;
    }
    let rules = sensitivity::parse_rules(rules)?;
    let market_text = furrow::input::read_file(market_path)?;
    let ranges = range
        .iter()
        .map(|r| sensitivity::read_range(r, market_path, &market_text))
        .collect::<Result<Vec<_>, _>>()?;
    let mut market = read_table(market_path)?;
    let flags = [
        ("run.seed", common.seed.map(|v| v as i64)),
        ("run.replications", common.replications.map(|v| v as i64)),
        ("run.periods", common.periods.map(|v| v as i64)),
    ];
    for (key, value) in flags {
        if let Some(v) = value {
            apply_override(&mut market, key, toml::Value::Integer(v))
                .map_err(anyhow::Error::msg)?;
        }
    }
    let policies = policy_paths
        .iter()
        .map(|p| Ok((p.clone(), read_table(p)?)))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let inputs = Inputs {
        market_file: market_path.to_string(),
        market,
        policies,
    };
    let request = Request {
        rules,
        ranges,
        indicators: indicator.to_vec(),
    };
    install_progress();
    // every comparison reads indicators only (compare without the fans)
    let series = furrow::compare::Fans::Skip.series().len();
    check_memory("sensitivity", &scenario, policy_paths.len() + 2, series)?;
    // a comparison per rule plus one for its forecast errors (two models), the base and two ends
    // per range (every policy and the baseline)
    let reps = scenario.run.replications;
    let columns = policy_paths.len() + 1;
    let models = request.rules.len() * (columns + 2)
        + if request.ranges.is_empty() {
            0
        } else {
            (1 + 2 * request.ranges.len()) * columns
        };
    let compares = request.rules.len() * 2
        + if request.ranges.is_empty() {
            0
        } else {
            1 + 2 * request.ranges.len()
        };
    let bar = Bar::new(
        reps.saturating_mul(compares),
        reps.saturating_mul(scenario.run.periods)
            .saturating_mul(models),
    );
    let result = sensitivity::sensitivity(&inputs, &request, bar.observer());
    bar.finish();
    Ok(result?)
}

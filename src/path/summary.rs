//! `run` with replications > 1: per-period mean and 5/50/95 % quantiles (Hyndman–Fan type 7)
//! across replications of the price, producer price, harvest and stock, for one policy (and of the
//! world price, private imports and exports on a market that trades).

use super::{with_models, LongRunModel, RunError, WithModels};
use crate::output::{fmt_full, fmt_num, Format, TextTable};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;
use crate::stochastic::{run_models, MonteCarlo, PathVariable, PolicyRuns, Progress};

/// The variables the summary keeps per period, in column order.
pub const SUMMARY_VARIABLES: [PathVariable; 4] = [
    PathVariable::Price,
    PathVariable::ProducerPrice,
    PathVariable::Harvest,
    PathVariable::Stock,
];

/// The variables kept for a market that trades (run by the period engine): [`SUMMARY_VARIABLES`],
/// then the world price, private imports and exports.
pub const SUMMARY_VARIABLES_TRADE: [PathVariable; 7] = [
    PathVariable::Price,
    PathVariable::ProducerPrice,
    PathVariable::Harvest,
    PathVariable::Stock,
    PathVariable::WorldPrice,
    PathVariable::Imports,
    PathVariable::Exports,
];

/// Columns shown by the terminal table (every column goes to CSV, Markdown and JSON).
const TABLE_COLUMNS: &[&str] = &[
    "period",
    "price_mean",
    "price_p05",
    "price_p50",
    "price_p95",
    "producer_price_mean",
    "harvest_mean",
    "harvest_p05",
    "harvest_p95",
    "stock_mean",
    "stock_p95",
    "world_price_mean",
    "imports_mean",
    "exports_mean",
];

/// The Monte Carlo of `policy` on `scenario`'s model (the period engine, or the storage
/// equilibrium for a market with private storers), keeping [`SUMMARY_VARIABLES`].
pub fn run_summary(
    scenario: &Scenario,
    policy: &PolicySpec,
    progress: &dyn Progress,
) -> Result<MonteCarlo, RunError> {
    struct SummaryRun<'a> {
        scenario: &'a Scenario,
        policy: &'a PolicySpec,
        progress: &'a dyn Progress,
    }
    impl WithModels for SummaryRun<'_> {
        type Output = Result<MonteCarlo, RunError>;
        fn with<M: LongRunModel>(self, models: &[M]) -> Self::Output {
            // the trade series for a market that trades on the period engine (the storage
            // equilibrium's records carry no trade)
            let s = self.scenario;
            let variables: &[PathVariable] = if s.trade.is_some() && s.storers.is_none() {
                &SUMMARY_VARIABLES_TRADE
            } else {
                &SUMMARY_VARIABLES
            };
            run_models(
                s,
                std::slice::from_ref(self.policy),
                models,
                variables,
                self.progress,
            )
            .map_err(RunError::Failed)
        }
    }
    let user = SummaryRun {
        scenario,
        policy,
        progress,
    };
    with_models(scenario, std::slice::from_ref(policy), user).map_err(RunError::Storage)?
}

/// The summary's table (the first policy of `mc`) in `format`: one row per period, the mean and
/// quantiles of each kept variable (the terminal shows a selection); JSON: one object per period,
/// `period` as an integer, the statistics as numbers (null if not finite).
pub fn render_summary(mc: &MonteCarlo, format: Format) -> String {
    let runs = &mc.policies[0];
    let mut columns = vec!["period".to_string()];
    for s in &runs.series {
        for stat in ["mean", "p05", "p50", "p95"] {
            columns.push(format!("{}_{stat}", s.series.name()));
        }
    }
    if format == Format::Json {
        return json(runs, &columns, mc.periods);
    }
    let shown: Vec<usize> = if format == Format::Table {
        TABLE_COLUMNS
            .iter()
            .filter_map(|c| columns.iter().position(|x| x == c))
            .collect()
    } else {
        (0..columns.len()).collect()
    };
    let f = |x: f64| {
        if format == Format::Csv {
            fmt_full(x)
        } else {
            fmt_num(x, 3)
        }
    };
    let headers: Vec<&String> = shown.iter().map(|&i| &columns[i]).collect();
    let mut table = TextTable::new(&headers);
    for t in 0..mc.periods {
        let mut row = vec![(t + 1).to_string()];
        for s in &runs.series {
            let q = s.periods[t];
            row.extend([f(q.mean), f(q.p05), f(q.p50), f(q.p95)]);
        }
        table.push(shown.iter().map(|&i| row[i].clone()).collect());
    }
    table.render(format)
}

fn json(runs: &PolicyRuns, columns: &[String], periods: usize) -> String {
    let rows: Vec<serde_json::Map<String, serde_json::Value>> = (0..periods)
        .map(|t| {
            let mut row = serde_json::Map::new();
            row.insert("period".into(), serde_json::json!(t + 1));
            let mut names = columns.iter().skip(1);
            for s in &runs.series {
                let q = s.periods[t];
                for x in [q.mean, q.p05, q.p50, q.p95] {
                    let v = if x.is_finite() {
                        serde_json::json!(x)
                    } else {
                        serde_json::Value::Null
                    };
                    if let Some(name) = names.next() {
                        row.insert(name.clone(), v);
                    }
                }
            }
            row
        })
        .collect();
    serde_json::to_string_pretty(&rows).unwrap_or_default() + "\n"
}

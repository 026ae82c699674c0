//! `run` with replications > 1: per-period mean and 5/50/95 % quantiles (Hyndman–Fan type 7) across
//! replications of the price, producer price, harvest and stock.

use furrow::output::{fmt_full, fmt_num, Format, TextTable};
use furrow::scenario::{PolicySpec, Scenario};
use furrow::stochastic::{run_monte_carlo_sources, sources, Series};

use super::common::say;
use super::compare::progress_for;
use super::run::RunArgs;

const SERIES: [Series; 4] = [
    Series::Price,
    Series::ProducerPrice,
    Series::Harvest,
    Series::Stock,
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
];

/// Runs the Monte Carlo summary of `run`.
pub fn execute(args: &RunArgs, scenario: &Scenario, policy: &PolicySpec) -> anyhow::Result<()> {
    super::common::check_memory("run", scenario, 1, SERIES.len())?;
    let bar = progress_for(scenario, 1);
    let paths = sources(scenario, std::slice::from_ref(policy))?;
    let mc = run_monte_carlo_sources(
        scenario,
        std::slice::from_ref(policy),
        &paths,
        &SERIES,
        bar.observer(),
    );
    bar.finish();
    let mc = mc?;
    for line in furrow::policies::summarise(scenario, policy, &mc.policies[0]) {
        say(&format!("warning: {line}"));
    }
    say(&format!(
        "{} replications × {} periods (seed {}): mean and 5/50/95 % quantiles across replications (type 7)",
        mc.replications, mc.periods, scenario.run.seed
    ));
    let runs = &mc.policies[0];
    if let Some(dir) = args.common.plot_dir() {
        super::report::plot_mc_run(&dir, scenario, runs, mc.replications)?;
    }
    let mut columns = vec!["period".to_string()];
    for s in &runs.series {
        for stat in ["mean", "p05", "p50", "p95"] {
            columns.push(format!("{}_{stat}", s.series.name()));
        }
    }
    let format = args.common.format;
    let shown: Vec<usize> = if format == Format::Table {
        TABLE_COLUMNS
            .iter()
            .filter_map(|c| columns.iter().position(|x| x == c))
            .collect()
    } else {
        (0..columns.len()).collect()
    };
    if format == Format::Json {
        return args
            .common
            .emit(&json(&mc.policies[0], &columns, mc.periods));
    }
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
    args.common.emit_with_caution(&table.render(format))
}

/// One object per period: `period` as an integer, the statistics as numbers (null if not finite).
fn json(runs: &furrow::stochastic::PolicyRuns, columns: &[String], periods: usize) -> String {
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

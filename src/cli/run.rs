//! `furrow run MARKET [--policy POLICY]`: one path, or a Monte Carlo summary.

use anyhow::Context;
use clap::Args;
use furrow::engine::{Model, PeriodRecord, PeriodShock};
use furrow::output::{csv_row, fmt_full, fmt_num, markdown_row, write_streamed, Format, TextTable};
use furrow::policies::PathTally;
use furrow::scenario::{PolicySpec, Scenario};
use furrow::stochastic::ShockStream;

use super::common::{load_policy, say, CommonArgs};

/// Arguments of `run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// The market file.
    pub market: String,
    /// A policy file (default: no intervention).
    #[arg(long)]
    pub policy: Option<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Columns of the one-path table, in order (INTERFACE.md's first, then the fiscal parts).
pub const RUN_COLUMNS: &[&str] = &[
    "period",
    "expected_price",
    "harvest",
    "price",
    "producer_price",
    "consumption",
    "purchases",
    "releases",
    "stock",
    "fiscal_cost",
    "consumer_surplus",
    "producer_surplus",
    "planted",
    "purchase_cost",
    "sales_revenue",
    "storage_cost",
    "financing_cost",
    "handling_cost",
    "deficiency_payments",
    "acted",
];

/// Columns the terminal table shows (the full set goes to CSV, Markdown and JSON).
const TABLE_COLUMNS: &[&str] = &[
    "period",
    "expected_price",
    "harvest",
    "price",
    "producer_price",
    "purchases",
    "releases",
    "stock",
    "fiscal_cost",
    "acted",
];

fn cell(r: &PeriodRecord, col: &str, full: bool) -> String {
    let f = |x: f64| if full { fmt_full(x) } else { fmt_num(x, 3) };
    match col {
        "period" => r.period.to_string(),
        "expected_price" => f(r.expected_price),
        "harvest" => f(r.harvest),
        "price" => f(r.price),
        "producer_price" => f(r.producer_price),
        "consumption" => f(r.consumption),
        "purchases" => f(r.purchases),
        "releases" => f(r.releases),
        "stock" => f(r.stock),
        "fiscal_cost" => f(r.fiscal_cost),
        "consumer_surplus" => f(r.consumer_surplus),
        "producer_surplus" => f(r.producer_surplus),
        "planted" => f(r.planted),
        "purchase_cost" => f(r.purchase_cost),
        "sales_revenue" => f(r.sales_revenue),
        "storage_cost" => f(r.storage_cost),
        "financing_cost" => f(r.financing_cost),
        "handling_cost" => f(r.handling_cost),
        "deficiency_payments" => f(r.deficiency_payments),
        "acted" => r.acted(),
        _ => String::new(),
    }
}

/// One record as a JSON object: every column, `acted` as text.
fn json_row(r: &PeriodRecord) -> serde_json::Value {
    let mut v = serde_json::to_value(r).unwrap_or_default();
    if let Some(o) = v.as_object_mut() {
        o.insert("acted".into(), serde_json::Value::String(r.acted()));
    }
    v
}

/// Renders one path in the requested format.
pub fn render_path(records: &[PeriodRecord], format: Format) -> String {
    match format {
        Format::Json => {
            let rows: Vec<serde_json::Value> = records.iter().map(json_row).collect();
            serde_json::to_string_pretty(&rows).unwrap_or_default() + "\n"
        }
        f => {
            let cols = if f == Format::Table {
                TABLE_COLUMNS
            } else {
                RUN_COLUMNS
            };
            let full = f == Format::Csv;
            let mut t = TextTable::new(cols);
            for r in records {
                t.push(cols.iter().map(|c| cell(r, c, full)).collect());
            }
            t.render(f)
        }
    }
}

/// One path of `scenario` under `policy` on the single-path shocks: the period engine, or the solved
/// storage equilibrium (replication 0's stream) for a market with private storers.
pub fn one_path(scenario: &Scenario, policy: &PolicySpec) -> anyhow::Result<Vec<PeriodRecord>> {
    if scenario.storers.is_some() {
        return Ok(furrow::storage::storage_records(scenario, policy, 0)?);
    }
    let model = Model::new(scenario, policy);
    let shocks = furrow::stochastic::single_path_shocks(scenario);
    Ok(model.run(scenario.run.periods, |t| {
        shocks.get(t - 1).copied().unwrap_or(PeriodShock::NONE)
    })?)
}

/// Runs `run`.
pub fn execute(args: &RunArgs) -> anyhow::Result<()> {
    let scenario = args.common.load_market(&args.market)?;
    let policy = load_policy(args.policy.as_deref(), &scenario)?;
    if scenario.run.replications > 1 {
        return super::mc_run::execute(args, &scenario, &policy);
    }
    let model = Model::new(&scenario, &policy);
    let format = args.common.format;
    // the boxed table needs every row to size its columns, plots need the whole path and the storage
    // equilibrium hands back its path whole; everything else is streamed period by period
    if scenario.storers.is_some() || args.common.plots.is_some() || format == Format::Table {
        let records = one_path(&scenario, &policy)?;
        for line in furrow::policies::diagnose(&scenario, &policy, &records) {
            say(&line);
        }
        if let Some(dir) = args.common.plot_dir() {
            super::report::plot_run(&dir, &scenario, &policy, &records)?;
        }
        return args
            .common
            .emit_with_caution(&render_path(&records, args.common.format));
    }
    let to_stdout = args
        .common
        .out
        .as_ref()
        .is_none_or(|p| p.as_os_str() == "-");
    let tally = if to_stdout {
        // a diverging path must print nothing: simulate once without output first
        let tally = simulate(&model, &scenario, |_| Ok(()))?;
        stream_to(&args.common, &model, &scenario)?;
        tally
    } else {
        // a file is written whole or not at all: a divergence removes the temporary file
        stream_to(&args.common, &model, &scenario)?
    };
    for line in furrow::policies::diagnose_tally(&scenario, &policy, &tally) {
        say(&line);
    }
    Ok(())
}

/// The single-path shock of every period, drawn as the periods go (the same draws as
/// [`furrow::stochastic::single_path_shocks`]).
fn shock_stream(scenario: &Scenario) -> impl FnMut() -> PeriodShock {
    let mut stream = (!scenario.shocks.is_deterministic())
        .then(|| ShockStream::new(&scenario.shocks, scenario.run.seed, 0));
    move || {
        stream
            .as_mut()
            .map_or(PeriodShock::NONE, |s| s.next_shock())
    }
}

/// Simulates the path period by period, handing each record to `row`; keeps only the tally the
/// diagnostics need.
fn simulate(
    model: &Model,
    scenario: &Scenario,
    mut row: impl FnMut(&PeriodRecord) -> std::io::Result<()>,
) -> anyhow::Result<PathTally> {
    let mut sim = model.simulator();
    let mut next = shock_stream(scenario);
    let mut tally = PathTally::default();
    for _ in 0..scenario.run.periods {
        let r = sim.step(&next())?;
        tally.add(&r);
        row(&r)?;
    }
    Ok(tally)
}

/// Streams the path in the chosen format (CSV, Markdown or JSON) to `--out` or stdout, never holding
/// more than one row.
fn stream_to(common: &CommonArgs, model: &Model, scenario: &Scenario) -> anyhow::Result<PathTally> {
    let path = common
        .out
        .clone()
        .unwrap_or_else(|| std::path::PathBuf::from("-"));
    let format = common.format;
    let mut failure: Option<anyhow::Error> = None;
    let mut tally = PathTally::default();
    let written = write_streamed(&path, |w| {
        let mut first = true;
        match format {
            Format::Json => w.write_all(b"[")?,
            Format::Markdown => {
                let cols: Vec<String> = RUN_COLUMNS.iter().map(|c| c.to_string()).collect();
                w.write_all(markdown_row(&cols).as_bytes())?;
                let rule: Vec<String> = cols.iter().map(|_| "---".to_string()).collect();
                w.write_all(markdown_row(&rule).as_bytes())?;
            }
            _ => {
                let cols: Vec<String> = RUN_COLUMNS.iter().map(|c| c.to_string()).collect();
                w.write_all(csv_row(&cols).as_bytes())?;
            }
        }
        let outcome = simulate(model, scenario, |r| {
            match format {
                Format::Json => {
                    // the same text as serde_json's pretty printer gives for the whole array
                    let item = serde_json::to_string_pretty(&json_row(r))?;
                    w.write_all(if first { b"\n  " } else { b",\n  " })?;
                    w.write_all(item.replace('\n', "\n  ").as_bytes())?;
                }
                f => {
                    let full = f == Format::Csv;
                    let cells: Vec<String> = RUN_COLUMNS.iter().map(|c| cell(r, c, full)).collect();
                    let line = if full {
                        csv_row(&cells)
                    } else {
                        markdown_row(&cells)
                    };
                    w.write_all(line.as_bytes())?;
                }
            }
            first = false;
            Ok(())
        });
        match outcome {
            Ok(t) => tally = t,
            Err(e) => {
                failure = Some(e);
                return Err(std::io::Error::other("the run failed"));
            }
        }
        match format {
            Format::Json => w.write_all(if first { b"]\n" } else { b"\n]\n" }),
            Format::Markdown => w.write_all(format!("\nCaution: {}\n", furrow::CAUTION).as_bytes()),
            _ => Ok(()),
        }
    });
    if let Some(e) = failure {
        return Err(e);
    }
    written.with_context(|| format!("cannot write {}", path.display()))?;
    Ok(tally)
}

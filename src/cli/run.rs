//! `furrow run MARKET [--policy POLICY]`: one path, or a Monte Carlo summary.

use clap::Args;
use furrow::engine::{Model, PeriodRecord, PeriodShock};
use furrow::output::{fmt_full, fmt_num, Format, TextTable};
use furrow::scenario::{PolicySpec, Scenario};

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

/// Renders one path in the requested format.
pub fn render_path(records: &[PeriodRecord], format: Format) -> String {
    match format {
        Format::Json => {
            let rows: Vec<serde_json::Value> = records
                .iter()
                .map(|r| {
                    let mut v = serde_json::to_value(r).unwrap_or_default();
                    if let Some(o) = v.as_object_mut() {
                        o.insert("acted".into(), serde_json::Value::String(r.acted()));
                    }
                    v
                })
                .collect();
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
    let records = one_path(&scenario, &policy)?;
    for line in furrow::policies::diagnose(&scenario, &policy, &model, &records) {
        say(&line);
    }
    if let Some(dir) = &args.common.plots {
        super::report::plot_run(dir, &scenario, &policy, &records)?;
    }
    args.common
        .emit_with_caution(&render_path(&records, args.common.format))
}

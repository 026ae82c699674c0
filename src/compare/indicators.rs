//! The indicators of one policy, computed from its Monte Carlo runs and the baseline's.
//!
//! Definitions (INTERFACE.md where it fixes them):
//! - `mean_price`, `price_sd`: mean and sample sd of P_t pooled over all periods and replications;
//!   `price_cv` = sd / mean; producer price and harvest likewise.
//! - `floor_binding_share`: share of periods (all replications) in which the agency bought or a
//!   deficiency payment was made; `stockout_share`: share with P_t above `sell_above` and no stock.
//! - `final_stock`: mean of S_T over replications.
//! - `*_pv`: mean over replications of the present value Σ_t x_t (1 + r)^−t; `*_change_pv`: the same
//!   of (policy − market left alone) replication by replication (common random numbers);
//!   `*_p05/_p50/_p95`: type-7 quantiles of these per-replication present values.
//! - `net_welfare_change_pv` = ΔCS + ΔPS − Δfiscal + terminal stock value (a treasury receipt at T).
//! - `producer_revenue_*`: producer price × harvest, pooled over periods and replications;
//!   `revenue_risk_premium` ≈ ½·R·CV²·mean revenue (Newbery and Stiglitz 1981, the Arrow–Pratt
//!   approximation; R = `[run] risk_aversion`), per period; `revenue_risk_premium_change` against the
//!   market left alone.
//! - `spectral_radius`, `verdict`: from the stability analysis (null / "n/a" when unavailable).
//! - markets with `[storers]` only: `private_stock_mean`, `public_stock_mean` (long-run means along one
//!   long path of the solved storage equilibrium, after burn-in) and `crowding_out` = (mean private
//!   stock without the policy − with it) / mean public stock with it (null when the agency holds none).

use super::{Indicator, Kind, Value};
use crate::scenario::{PolicySpec, Scenario};
use crate::stochastic::{quantiles, PolicyRuns};
use crate::storage::LongRun;
use crate::welfare::{risk_premium, WelfarePv};

/// Every key in display order, for a market without private storers (a market with `[storers]` adds
/// `private_stock_mean`, `public_stock_mean` and `crowding_out` at the end).
pub fn indicator_keys() -> Vec<&'static str> {
    SPECS
        .iter()
        .map(|(k, _, _)| *k)
        .filter(|k| !STORAGE_KEYS.contains(k))
        .collect()
}

const SPECS: &[(&str, &str, Kind)] = &[
    ("mean_price", "Mean market price", Kind::Price),
    ("price_sd", "Price standard deviation", Kind::Price),
    ("price_cv", "Price coefficient of variation", Kind::Share),
    ("mean_producer_price", "Mean producer price", Kind::Price),
    (
        "producer_price_sd",
        "Producer price standard deviation",
        Kind::Price,
    ),
    ("mean_harvest", "Mean harvest", Kind::Quantity),
    ("harvest_sd", "Harvest standard deviation", Kind::Quantity),
    (
        "floor_binding_share",
        "Share of periods the agency bought or paid",
        Kind::Share,
    ),
    (
        "stockout_share",
        "Share of periods with a stock-out",
        Kind::Share,
    ),
    (
        "final_stock",
        "Agency stock at the end (mean)",
        Kind::Quantity,
    ),
    ("fiscal_cost_pv", "Fiscal cost, PV", Kind::Money),
    ("fiscal_cost_pv_p05", "Fiscal cost, PV, 5 %", Kind::Money),
    ("fiscal_cost_pv_p50", "Fiscal cost, PV, median", Kind::Money),
    ("fiscal_cost_pv_p95", "Fiscal cost, PV, 95 %", Kind::Money),
    (
        "purchase_cost_pv",
        "Fiscal cost: purchases, PV",
        Kind::Money,
    ),
    (
        "sales_revenue_pv",
        "Fiscal cost: less sales receipts, PV",
        Kind::Money,
    ),
    ("storage_cost_pv", "Fiscal cost: storage, PV", Kind::Money),
    (
        "financing_cost_pv",
        "Fiscal cost: financing, PV",
        Kind::Money,
    ),
    ("handling_cost_pv", "Fiscal cost: handling, PV", Kind::Money),
    (
        "deficiency_payments_pv",
        "Fiscal cost: deficiency payments, PV",
        Kind::Money,
    ),
    (
        "terminal_stock_value_pv",
        "Value of the stock left at the end, PV",
        Kind::Money,
    ),
    (
        "consumer_surplus_change_pv",
        "Consumer surplus change, PV",
        Kind::Money,
    ),
    (
        "consumer_surplus_change_pv_p05",
        "Consumer surplus change, PV, 5 %",
        Kind::Money,
    ),
    (
        "consumer_surplus_change_pv_p50",
        "Consumer surplus change, PV, median",
        Kind::Money,
    ),
    (
        "consumer_surplus_change_pv_p95",
        "Consumer surplus change, PV, 95 %",
        Kind::Money,
    ),
    (
        "producer_surplus_change_pv",
        "Producer surplus change, PV",
        Kind::Money,
    ),
    (
        "producer_surplus_change_pv_p05",
        "Producer surplus change, PV, 5 %",
        Kind::Money,
    ),
    (
        "producer_surplus_change_pv_p50",
        "Producer surplus change, PV, median",
        Kind::Money,
    ),
    (
        "producer_surplus_change_pv_p95",
        "Producer surplus change, PV, 95 %",
        Kind::Money,
    ),
    (
        "net_welfare_change_pv",
        "Net welfare change, PV",
        Kind::Money,
    ),
    (
        "net_welfare_change_pv_p05",
        "Net welfare change, PV, 5 %",
        Kind::Money,
    ),
    (
        "net_welfare_change_pv_p50",
        "Net welfare change, PV, median",
        Kind::Money,
    ),
    (
        "net_welfare_change_pv_p95",
        "Net welfare change, PV, 95 %",
        Kind::Money,
    ),
    (
        "producer_revenue_mean",
        "Producer revenue per period (mean)",
        Kind::Money,
    ),
    (
        "producer_revenue_sd",
        "Producer revenue standard deviation",
        Kind::Money,
    ),
    (
        "producer_revenue_cv",
        "Producer revenue coefficient of variation",
        Kind::Share,
    ),
    (
        "revenue_risk_premium",
        "Producers' risk premium per period",
        Kind::Money,
    ),
    (
        "revenue_risk_premium_change",
        "Risk premium change per period",
        Kind::Money,
    ),
    (
        "spectral_radius",
        "Spectral radius (linearised)",
        Kind::Number,
    ),
    ("verdict", "Stability verdict", Kind::Text),
    (
        "private_stock_mean",
        "Private stock, long-run mean (storage equilibrium)",
        Kind::Quantity,
    ),
    (
        "public_stock_mean",
        "Public stock, long-run mean (storage equilibrium)",
        Kind::Quantity,
    ),
    (
        "crowding_out",
        "Crowding-out: fall in private stock per unit of public stock",
        Kind::Share,
    ),
];

/// Indicators that exist only for a market with private storers.
const STORAGE_KEYS: [&str; 3] = ["private_stock_mean", "public_stock_mean", "crowding_out"];

/// Builds the indicators of `runs` (under `spec`) against the baseline `base`.
pub(super) fn build(
    scenario: &Scenario,
    spec: &PolicySpec,
    runs: &PolicyRuns,
    base: &PolicyRuns,
    storage: Option<(&LongRun, &LongRun)>,
) -> Vec<Indicator> {
    let reps = runs.replications.len().max(1);
    let cells = (reps * scenario.run.periods).max(1) as f64;
    let mean_of = |f: &dyn Fn(&WelfarePv) -> f64| {
        runs.replications.iter().map(|r| f(&r.welfare)).sum::<f64>() / reps as f64
    };
    // per-replication changes against the baseline (same shocks)
    let change = |f: &dyn Fn(&WelfarePv) -> f64| -> Vec<f64> {
        runs.replications
            .iter()
            .zip(&base.replications)
            .map(|(p, b)| f(&p.welfare) - f(&b.welfare))
            .collect()
    };
    let mut out = Out(Vec::with_capacity(SPECS.len()));
    let pooled = &runs.pooled;
    out.num("mean_price", pooled.price.mean());
    out.num("price_sd", pooled.price.sd());
    out.num("price_cv", pooled.price.sd() / pooled.price.mean());
    out.num("mean_producer_price", pooled.producer_price.mean());
    out.num("producer_price_sd", pooled.producer_price.sd());
    out.num("mean_harvest", pooled.harvest.mean());
    out.num("harvest_sd", pooled.harvest.sd());
    let binding: u64 = runs
        .replications
        .iter()
        .map(|r| u64::from(r.floor_binding_periods))
        .sum();
    let stockout: u64 = runs
        .replications
        .iter()
        .map(|r| u64::from(r.stockout_periods))
        .sum();
    out.num("floor_binding_share", binding as f64 / cells);
    out.num("stockout_share", stockout as f64 / cells);
    out.num(
        "final_stock",
        runs.replications.iter().map(|r| r.final_stock).sum::<f64>() / reps as f64,
    );
    let fiscal: Vec<f64> = runs
        .replications
        .iter()
        .map(|r| r.welfare.fiscal_cost)
        .collect();
    out.with_quantiles(
        [
            "fiscal_cost_pv",
            "fiscal_cost_pv_p05",
            "fiscal_cost_pv_p50",
            "fiscal_cost_pv_p95",
        ],
        fiscal,
    );
    out.num("purchase_cost_pv", mean_of(&|w| w.purchase_cost));
    out.num("sales_revenue_pv", mean_of(&|w| w.sales_revenue));
    out.num("storage_cost_pv", mean_of(&|w| w.storage_cost));
    out.num("financing_cost_pv", mean_of(&|w| w.financing_cost));
    out.num("handling_cost_pv", mean_of(&|w| w.handling_cost));
    out.num(
        "deficiency_payments_pv",
        mean_of(&|w| w.deficiency_payments),
    );
    out.num(
        "terminal_stock_value_pv",
        mean_of(&|w| w.terminal_stock_value),
    );
    for (stem, f) in [
        (
            [
                "consumer_surplus_change_pv",
                "consumer_surplus_change_pv_p05",
                "consumer_surplus_change_pv_p50",
                "consumer_surplus_change_pv_p95",
            ],
            (|w: &WelfarePv| w.consumer_surplus) as fn(&WelfarePv) -> f64,
        ),
        (
            [
                "producer_surplus_change_pv",
                "producer_surplus_change_pv_p05",
                "producer_surplus_change_pv_p50",
                "producer_surplus_change_pv_p95",
            ],
            |w: &WelfarePv| w.producer_surplus,
        ),
        (
            [
                "net_welfare_change_pv",
                "net_welfare_change_pv_p05",
                "net_welfare_change_pv_p50",
                "net_welfare_change_pv_p95",
            ],
            |w: &WelfarePv| w.net(),
        ),
    ] {
        out.with_quantiles(stem, change(&f));
    }
    let r = scenario.run.risk_aversion;
    let (rev_mean, rev_sd) = (pooled.revenue.mean(), pooled.revenue.sd());
    let premium = risk_premium(rev_mean, rev_sd, r);
    let base_premium = risk_premium(base.pooled.revenue.mean(), base.pooled.revenue.sd(), r);
    out.num("producer_revenue_mean", rev_mean);
    out.num("producer_revenue_sd", rev_sd);
    out.num("producer_revenue_cv", rev_sd / rev_mean);
    out.num("revenue_risk_premium", premium);
    out.num("revenue_risk_premium_change", premium - base_premium);
    match crate::stability::analyse(scenario, spec) {
        Ok(report) => {
            out.num("spectral_radius", report.spectral_radius);
            out.0
                .push(("verdict", Value::Text(report.verdict.as_str().into())));
        }
        Err(_) => {
            out.0.push(("spectral_radius", Value::Missing));
            out.0.push(("verdict", Value::Missing));
        }
    }
    // with private storers: the long-run stocks of the solved equilibria (policy, then baseline)
    if let Some((with, without)) = storage {
        out.num("private_stock_mean", with.private_stock);
        out.num("public_stock_mean", with.public_stock);
        out.0.push((
            "crowding_out",
            with.crowding_out(without, scenario.steady.quantity)
                .map_or(Value::Missing, Value::Number),
        ));
    }
    SPECS
        .iter()
        .filter(|(key, _, _)| scenario.storers.is_some() || !STORAGE_KEYS.contains(key))
        .map(|(key, label, kind)| Indicator {
            key,
            label,
            kind: *kind,
            value: out
                .0
                .iter()
                .find(|(k, _)| k == key)
                .map(|(_, v)| v.clone())
                .unwrap_or(Value::Missing),
        })
        .collect()
}

struct Out(Vec<(&'static str, Value)>);

impl Out {
    fn num(&mut self, key: &'static str, x: f64) {
        self.0.push((key, Value::Number(x)));
    }

    /// Mean and 5/50/95 % quantiles of per-replication values under `keys` (mean, p05, p50, p95).
    fn with_quantiles(&mut self, keys: [&'static str; 4], mut v: Vec<f64>) {
        let mean = v.iter().sum::<f64>() / v.len().max(1) as f64;
        let q = quantiles(&mut v, &[0.05, 0.5, 0.95]);
        self.num(keys[0], mean);
        self.num(keys[1], q[0]);
        self.num(keys[2], q[1]);
        self.num(keys[3], q[2]);
    }
}

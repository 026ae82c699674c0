//! The indicators of one policy, computed from its Monte Carlo runs and its baseline's (the market
//! left alone under the same expectation rule, on the same shocks).
//!
//! Definitions (INTERFACE.md where it fixes them):
//! - `mean_price`, `price_sd`: mean and sample sd of P_t pooled over all periods and replications;
//!   `price_cv` = sd / mean; producer price and harvest likewise.
//! - `price_above_alert_share` (then `_2`, `_3`, … for further `[run] alert_price` values): share of
//!   seasons with P_t above the alert price, for every column.
//! - `floor_binding_share`: share of periods in which the agency bought or a deficiency payment was
//!   made; `stockout_share`: share with P_t above `sell_above` and no stock; `stockout_any_share`:
//!   share of replications with at least one stock-out season; `floor_failed_share`: seasons the
//!   producer price ended below a purchase floor because the store was full or the budget bound
//!   (null without one); `band_failed_share`: seasons the price left [buy_below, sell_above] while
//!   the agency could not act — store full or budget bound below, stock out above (null without a
//!   band); `capacity_full_share`, `budget_bound_share`: seasons a purchase was cut short;
//!   `diverged_share`: replications that diverged (a diverged replication fails the whole run, so a
//!   printed table always shows 0).
//! - `final_stock`: mean of S_T over replications.
//! - `*_pv`: mean over replications of the present value Σ_t x_t (1 + r)^−t, financing counted as
//!   its spread over the discount rate; `opening_stock_cost`: P_0 · initial stock when charged (an
//!   undiscounted outlay at t = 0, included in `fiscal_cost_pv`);
//!   `*_change_pv`: the same of (policy − baseline) replication by replication (common random
//!   numbers); `*_p05/_p50/_p95`: type-7 quantiles of these per-replication values.
//! - `net_welfare_change_pv` = ΔCS + ΔPS − λ·Δ(fiscal cost − terminal stock value),
//!   λ = `[run] public_funds_cost` (Alston and Hurd 1990).
//! - Fiscal risk (cash outlays per season, interest in full, undiscounted): `fiscal_cost_season_mean`,
//!   `_p95`, `_p99` pooled over seasons and replications (type 7); `worst_season_fiscal_cost_mean`:
//!   mean over replications of the largest season's outlay; `peak_cumulative_fiscal_cost_mean`,
//!   `_p95`: the largest running total within a replication (from the opening purchase when
//!   charged); with `[policy] annual_budget`: `budget_exceeded_share` (seasons above it) and
//!   `budget_ever_exceeded_share` (replications where it happens at least once).
//! - Producers' risk: income = α·(crop revenue share) — revenue plus other income held at
//!   (1 − α)/α · P*Q*, α = `[run] crop_income_share`. `revenue_risk_premium` ≈ ½·R·CV²·mean income
//!   per season (Arrow–Pratt, as used by Newbery and Stiglitz 1981), pooled;
//!   `revenue_risk_premium_exact`: E[I] − CE with CE = E[I^{1−R}]^{1/(1−R)} (log utility at R = 1),
//!   pooled; `revenue_risk_premium_pv`: Σ_t (1 + r)^−t of the exact premium of season t across
//!   replications; `revenue_risk_premium_change`, `revenue_risk_premium_change_pv` against the
//!   baseline; `risk_adjusted_net_welfare_change_pv` = net welfare change − the premium change PV.
//! - `NAME_se`: the Monte Carlo standard error of a mean or change: sd/√n over the per-replication
//!   values (replications are independent; for a pooled mean the per-replication means), for
//!   changes the sd of the paired differences. `risk_adjusted_net_welfare_change_pv_se` is that of
//!   the net welfare change (the premium's own sampling error is not included).
//! - `spectral_radius`, `verdict`: from the stability analysis (null / "n/a" when unavailable).
//! - markets with `[trade]` only: `imports_mean`, `exports_mean` (private imports and exports per
//!   season, mean over replications of each replication's mean), `import_season_share`,
//!   `export_season_share` (share of seasons with imports, with exports), `border_revenue_pv`
//!   (duties, levies and export taxes, a treasury receipt already off `fiscal_cost_pv`),
//!   `quota_rent_pv` (rents to domestic traders, counted in `net_welfare_change_pv`) and `leakage`
//!   with `leakage_se`: −Σ ΔNX_t·a_t / Σ a_t² pooled over replications, a_t = X_t − R_t the agency's
//!   net purchase at home and ΔNX_t the change in private net exports against the market left
//!   alone on the same shocks — the share of each unit the agency buys (sells) that private trade
//!   offsets instead of the domestic price moving (the storage module's definition; null when the
//!   agency never trades or the market has private storers).
//! - markets with `[storers]` only: `private_stock_mean`, `public_stock_mean` (long-run means along one
//!   long path of the solved storage equilibrium, after burn-in) and `crowding_out` = (mean private
//!   stock without the policy − with it) / mean public stock with it (null when the agency holds none).

use super::{Indicator, Kind, Value};
use crate::policies::PolicySpec;
use crate::scenario::{Scenario, MAX_ALERTS};
use crate::stochastic::montecarlo::{Count, Real};
use crate::stochastic::{quantiles, PolicyRuns};
use crate::storage::LongRunMeans;
use crate::welfare::{crra_premium, risk_premium};

/// Keys of the alert shares: the first alert price, then the second, …
const ALERT_KEYS: [&str; MAX_ALERTS] = [
    "price_above_alert_share",
    "price_above_alert_share_2",
    "price_above_alert_share_3",
    "price_above_alert_share_4",
    "price_above_alert_share_5",
    "price_above_alert_share_6",
    "price_above_alert_share_7",
    "price_above_alert_share_8",
];

/// Every key in display order for a market without private storers and without `alert_price`
/// (each alert price adds its share and its `_se` after `harvest_sd`; a market with `[storers]` adds
/// `private_stock_mean`, `public_stock_mean` and `crowding_out` at the end).
pub fn indicator_keys() -> Vec<String> {
    let mut keys = Vec::new();
    for (key, _, _, se) in SPECS {
        if *key == "alerts" || STORAGE_KEYS.contains(key) || TRADE_KEYS.contains(key) {
            continue;
        }
        keys.push(key.to_string());
        if QUANTILE_STEMS.contains(key) {
            for q in ["p05", "p50", "p95"] {
                keys.push(format!("{key}_{q}"));
            }
        }
        if *se {
            keys.push(format!("{key}_se"));
        }
    }
    keys
}

/// (key, label, kind, has a standard error). `alerts` stands for the alert shares.
const SPECS: &[(&str, &str, Kind, bool)] = &[
    ("mean_price", "Mean market price", Kind::Price, true),
    ("price_sd", "Price standard deviation", Kind::Price, false),
    (
        "price_cv",
        "Price coefficient of variation",
        Kind::Share,
        false,
    ),
    (
        "mean_producer_price",
        "Mean producer price",
        Kind::Price,
        true,
    ),
    (
        "producer_price_sd",
        "Producer price standard deviation",
        Kind::Price,
        false,
    ),
    ("mean_harvest", "Mean harvest", Kind::Quantity, true),
    (
        "harvest_sd",
        "Harvest standard deviation",
        Kind::Quantity,
        false,
    ),
    ("alerts", "", Kind::Share, true),
    (
        "floor_binding_share",
        "Share of periods the agency bought or paid",
        Kind::Share,
        true,
    ),
    (
        "stockout_share",
        "Share of periods with a stock-out",
        Kind::Share,
        true,
    ),
    (
        "stockout_any_share",
        "Share of replications with a stock-out",
        Kind::Share,
        true,
    ),
    (
        "floor_failed_share",
        "Share of seasons the floor failed (store full, budget)",
        Kind::Share,
        true,
    ),
    (
        "band_failed_share",
        "Share of seasons the band failed (store full, budget, stock out)",
        Kind::Share,
        true,
    ),
    (
        "capacity_full_share",
        "Share of seasons the store was full",
        Kind::Share,
        true,
    ),
    (
        "budget_bound_share",
        "Share of seasons the purchase budget bound",
        Kind::Share,
        true,
    ),
    (
        "diverged_share",
        "Share of replications that diverged",
        Kind::Share,
        true,
    ),
    (
        "final_stock",
        "Agency stock at the end (mean)",
        Kind::Quantity,
        true,
    ),
    (
        "imports_mean",
        "Private imports per season (mean)",
        Kind::Quantity,
        true,
    ),
    (
        "exports_mean",
        "Private exports per season (mean)",
        Kind::Quantity,
        true,
    ),
    (
        "import_season_share",
        "Share of seasons with imports",
        Kind::Share,
        true,
    ),
    (
        "export_season_share",
        "Share of seasons with exports",
        Kind::Share,
        true,
    ),
    ("fiscal_cost_pv", "Fiscal cost, PV", Kind::Money, true),
    (
        "purchase_cost_pv",
        "Fiscal cost: purchases, PV",
        Kind::Money,
        true,
    ),
    (
        "sales_revenue_pv",
        "Fiscal cost: less sales receipts, PV",
        Kind::Money,
        true,
    ),
    (
        "storage_cost_pv",
        "Fiscal cost: storage, PV",
        Kind::Money,
        true,
    ),
    (
        "financing_cost_pv",
        "Fiscal cost: financing above the discount rate, PV",
        Kind::Money,
        true,
    ),
    (
        "handling_cost_pv",
        "Fiscal cost: handling, PV",
        Kind::Money,
        true,
    ),
    (
        "deficiency_payments_pv",
        "Fiscal cost: deficiency payments, PV",
        Kind::Money,
        true,
    ),
    (
        "border_revenue_pv",
        "Fiscal receipts: border duties and export taxes, PV",
        Kind::Money,
        true,
    ),
    (
        "quota_rent_pv",
        "Quota rents to traders, PV",
        Kind::Money,
        true,
    ),
    (
        "leakage",
        "Leakage: share of the agency's net purchases offset by private trade",
        Kind::Share,
        true,
    ),
    (
        "opening_stock_cost",
        "Opening stock bought at t = 0",
        Kind::Money,
        true,
    ),
    (
        "terminal_stock_value_pv",
        "Value of the stock left at the end, PV",
        Kind::Money,
        true,
    ),
    (
        "fiscal_cost_season_mean",
        "Outlay per season (mean)",
        Kind::Money,
        true,
    ),
    (
        "fiscal_cost_season_p95",
        "Outlay per season, 95 %",
        Kind::Money,
        false,
    ),
    (
        "fiscal_cost_season_p99",
        "Outlay per season, 99 %",
        Kind::Money,
        false,
    ),
    (
        "worst_season_fiscal_cost_mean",
        "Worst season's outlay (mean)",
        Kind::Money,
        true,
    ),
    (
        "peak_cumulative_fiscal_cost_mean",
        "Peak running total of outlays (mean)",
        Kind::Money,
        true,
    ),
    (
        "peak_cumulative_fiscal_cost_p95",
        "Peak running total of outlays, 95 %",
        Kind::Money,
        false,
    ),
    (
        "budget_exceeded_share",
        "Share of seasons over the annual budget",
        Kind::Share,
        true,
    ),
    (
        "budget_ever_exceeded_share",
        "Share of replications ever over the annual budget",
        Kind::Share,
        true,
    ),
    (
        "consumer_surplus_change_pv",
        "Consumer surplus change, PV",
        Kind::Money,
        true,
    ),
    (
        "producer_surplus_change_pv",
        "Producer surplus change, PV",
        Kind::Money,
        true,
    ),
    (
        "net_welfare_change_pv",
        "Net welfare change, PV",
        Kind::Money,
        true,
    ),
    (
        "producer_revenue_mean",
        "Producer revenue per period (mean)",
        Kind::Money,
        true,
    ),
    (
        "producer_revenue_sd",
        "Producer revenue standard deviation",
        Kind::Money,
        false,
    ),
    (
        "producer_revenue_cv",
        "Producer revenue coefficient of variation",
        Kind::Share,
        false,
    ),
    (
        "revenue_risk_premium",
        "Producers' risk premium per period (approximation)",
        Kind::Money,
        false,
    ),
    (
        "revenue_risk_premium_exact",
        "Producers' risk premium per period (exact CRRA)",
        Kind::Money,
        false,
    ),
    (
        "revenue_risk_premium_change",
        "Risk premium change per period (approximation)",
        Kind::Money,
        false,
    ),
    (
        "revenue_risk_premium_pv",
        "Producers' risk premium, PV (exact CRRA)",
        Kind::Money,
        false,
    ),
    (
        "revenue_risk_premium_change_pv",
        "Risk premium change, PV (exact CRRA)",
        Kind::Money,
        false,
    ),
    (
        "risk_adjusted_net_welfare_change_pv",
        "Net welfare change with producers' risk, PV",
        Kind::Money,
        true,
    ),
    (
        "spectral_radius",
        "Spectral radius (linearised)",
        Kind::Number,
        false,
    ),
    ("verdict", "Stability verdict", Kind::Text, false),
    (
        "private_stock_mean",
        "Private stock, long-run mean (storage equilibrium)",
        Kind::Quantity,
        false,
    ),
    (
        "public_stock_mean",
        "Public stock, long-run mean (storage equilibrium)",
        Kind::Quantity,
        false,
    ),
    (
        "crowding_out",
        "Crowding-out: fall in private stock per unit of public stock",
        Kind::Share,
        false,
    ),
];

/// Indicators that also get 5/50/95 % quantile rows across replications.
const QUANTILE_STEMS: [&str; 4] = [
    "fiscal_cost_pv",
    "consumer_surplus_change_pv",
    "producer_surplus_change_pv",
    "net_welfare_change_pv",
];

/// Indicators that exist only for a market that trades (`[trade]`).
const TRADE_KEYS: [&str; 7] = [
    "imports_mean",
    "exports_mean",
    "import_season_share",
    "export_season_share",
    "border_revenue_pv",
    "quota_rent_pv",
    "leakage",
];

/// Indicators that exist only for a market with private storers.
const STORAGE_KEYS: [&str; 3] = ["private_stock_mean", "public_stock_mean", "crowding_out"];

/// Coefficient of variation of producers' revenue: sd / mean, and 0 when the mean is 0. Revenue
/// (producer price × harvest) is never negative, so a zero mean means it is 0 in every period of
/// every replication (a zero harvest diverges, so only a product below the smallest representable
/// number does this): nothing varies, and the CV is 0 rather than the undefined 0/0 (README,
/// "Indicators").
pub fn revenue_cv(sd: f64, mean: f64) -> f64 {
    if mean > 0.0 {
        sd / mean
    } else {
        0.0
    }
}

/// Mean and Monte Carlo standard error (sample sd / √n, divisor n − 1) of per-replication values,
/// summed in the given order. The standard error is `None` with fewer than two values. Both passes
/// fold the values (the iterator's own `fold`: a replication store reads block by block).
pub fn mean_se(values: impl Iterator<Item = f64> + Clone) -> (f64, Option<f64>) {
    let (n, sum) = values
        .clone()
        .fold((0usize, 0.0), |(n, sum), v| (n + 1, sum + v));
    if n == 0 {
        return (0.0, None);
    }
    let mean = sum / n as f64;
    if n < 2 {
        return (mean, None);
    }
    let ss: f64 = values.map(|v| (v - mean) * (v - mean)).sum();
    (
        mean,
        Some((ss / (n as f64 - 1.0)).sqrt() / (n as f64).sqrt()),
    )
}

/// The leakage of a policy's agency trades abroad and its Monte Carlo standard error, from each
/// replication's sums `sums` = (−Σ ΔNX_t·a_t, Σ a_t²) (`trade::leakage_sums`, the one
/// formula; folded by the Monte Carlo, [`crate::stochastic::MonteCarlo::leakage`]), where the
/// policy's path and the path of the market left alone under the same expectation rule are stepped
/// on the replication's shocks (common random numbers), a_t = X_t − R_t is the agency's net
/// purchase at home and ΔNX_t the change in private net exports. Pooled over replications:
/// leakage = Σ_i num_i / Σ_i den_i (None when the agency never trades), with the ratio estimator's
/// standard error √(Σ_i (num_i − L·den_i)² / (n(n − 1))) / mean(den) (Cochran 1977, ch. 6, from
/// memory).
fn leakage(sums: &[(f64, f64)]) -> (Option<f64>, Option<f64>) {
    let n = sums.len() as f64;
    let (num, den) = sums
        .iter()
        .fold((0.0, 0.0), |(a, b), (x, y)| (a + x, b + y));
    if den.is_nan() || den <= 0.0 {
        return (None, None);
    }
    let l = num / den;
    let se = (sums.len() > 1).then(|| {
        let ss: f64 = sums.iter().map(|(x, y)| (x - l * y).powi(2)).sum();
        (ss / (n * (n - 1.0))).sqrt() / (den / n)
    });
    (Some(l), se)
}

/// Builds the indicators of `runs` (under `spec`) against its baseline `base` (the market left alone
/// under the same expectation rule); `leakage_sums`: each replication's leakage sums of `spec`
/// against `base` (None for a policy that does not intervene and for a market with private
/// storers, whose storage report has its own leakage).
pub(super) fn build(
    scenario: &Scenario,
    spec: &PolicySpec,
    (runs, base): (&PolicyRuns, &PolicyRuns),
    storage: Option<(&LongRunMeans, &LongRunMeans)>,
    leakage_sums: Option<&[(f64, f64)]>,
) -> Vec<Indicator> {
    let periods = scenario.run.periods.max(1) as f64;
    let lambda = scenario.run.public_funds_cost;
    let reps = &runs.replications;
    let mut out = Out::default();
    // a mean over replications of a per-replication value, with its standard error (each value
    // read on its own, in replication order)
    let per_real = |out: &mut Out, key: &'static str, which: Real| {
        let (m, se) = mean_se(reps.reals(which));
        out.num(key, m);
        out.se(key, se);
    };
    let share = |n: u32| f64::from(n) / periods;
    let per_share = |out: &mut Out, key: &'static str, which: Count| {
        let (m, se) = mean_se(reps.counts(which).map(share));
        out.num(key, m);
        out.se(key, se);
    };
    let any = |n: u32| f64::from(u8::from(n > 0));
    let per_any = |out: &mut Out, key: &'static str, which: Count| {
        let (m, se) = mean_se(reps.counts(which).map(any));
        out.num(key, m);
        out.se(key, se);
    };
    let pooled = &runs.pooled;
    out.num("mean_price", pooled.price.mean());
    out.se("mean_price", mean_se(reps.reals(Real::MeanPrice)).1);
    out.num("price_sd", pooled.price.sd());
    out.num("price_cv", pooled.price.sd() / pooled.price.mean());
    out.num("mean_producer_price", pooled.producer_price.mean());
    out.se(
        "mean_producer_price",
        mean_se(reps.reals(Real::MeanProducerPrice)).1,
    );
    out.num("producer_price_sd", pooled.producer_price.sd());
    out.num("mean_harvest", pooled.harvest.mean());
    out.se("mean_harvest", mean_se(reps.reals(Real::MeanHarvest)).1);
    out.num("harvest_sd", pooled.harvest.sd());
    for (k, key) in ALERT_KEYS
        .iter()
        .enumerate()
        .take(scenario.run.alert_prices.len())
    {
        per_share(&mut out, key, Count::Alert(k));
    }
    per_share(&mut out, "floor_binding_share", Count::FloorBinding);
    per_share(&mut out, "stockout_share", Count::Stockout);
    per_any(&mut out, "stockout_any_share", Count::Stockout);
    if runs.watch.purchase_floor.is_some() {
        per_share(&mut out, "floor_failed_share", Count::FloorFailed);
    }
    if runs.watch.band.is_some() {
        per_share(&mut out, "band_failed_share", Count::BandFailed);
    }
    per_share(&mut out, "capacity_full_share", Count::CapacityFull);
    per_share(&mut out, "budget_bound_share", Count::BudgetBound);
    // a diverged replication fails the run (exit 1), so every replication here completed
    let (m, se) = mean_se(std::iter::repeat_n(0.0, reps.len()));
    out.num("diverged_share", m);
    out.se("diverged_share", se);
    per_real(&mut out, "final_stock", Real::FinalStock);
    if scenario.trade.is_some() {
        per_real(&mut out, "imports_mean", Real::MeanImports);
        per_real(&mut out, "exports_mean", Real::MeanExports);
        per_share(&mut out, "import_season_share", Count::ImportPeriods);
        per_share(&mut out, "export_season_share", Count::ExportPeriods);
    }
    per_real(&mut out, "fiscal_cost_pv", Real::FiscalCost);
    out.quantiles("fiscal_cost_pv", reps.reals(Real::FiscalCost).collect());
    per_real(&mut out, "purchase_cost_pv", Real::PurchaseCost);
    per_real(&mut out, "sales_revenue_pv", Real::SalesRevenue);
    per_real(&mut out, "storage_cost_pv", Real::StorageCost);
    per_real(&mut out, "financing_cost_pv", Real::FinancingCost);
    per_real(&mut out, "handling_cost_pv", Real::HandlingCost);
    per_real(&mut out, "deficiency_payments_pv", Real::DeficiencyPayments);
    if scenario.trade.is_some() {
        per_real(&mut out, "border_revenue_pv", Real::BorderRevenue);
        per_real(&mut out, "quota_rent_pv", Real::QuotaRent);
        let (l, se) = leakage_sums.map_or((None, None), leakage);
        out.0
            .push(("leakage".into(), l.map_or(Value::Missing, Value::Number)));
        out.se("leakage", se);
    }
    per_real(&mut out, "opening_stock_cost", Real::OpeningStockCost);
    per_real(
        &mut out,
        "terminal_stock_value_pv",
        Real::TerminalStockValue,
    );
    // fiscal risk: cash outlays per season
    per_real(&mut out, "fiscal_cost_season_mean", Real::MeanSeasonFiscal);
    match runs.season_fiscal.quantiles(&[0.95, 0.99]) {
        Some(q) => {
            out.num("fiscal_cost_season_p95", q[0]);
            out.num("fiscal_cost_season_p99", q[1]);
        }
        None => {
            out.0
                .push(("fiscal_cost_season_p95".into(), Value::Missing));
            out.0
                .push(("fiscal_cost_season_p99".into(), Value::Missing));
        }
    }
    per_real(
        &mut out,
        "worst_season_fiscal_cost_mean",
        Real::WorstSeasonFiscal,
    );
    per_real(
        &mut out,
        "peak_cumulative_fiscal_cost_mean",
        Real::PeakCumulativeFiscal,
    );
    let mut peaks: Vec<f64> = reps.reals(Real::PeakCumulativeFiscal).collect();
    out.num(
        "peak_cumulative_fiscal_cost_p95",
        quantiles(&mut peaks, &[0.95])[0],
    );
    if runs.watch.annual_budget.is_finite() {
        per_share(&mut out, "budget_exceeded_share", Count::BudgetExceeded);
        per_any(
            &mut out,
            "budget_ever_exceeded_share",
            Count::BudgetExceeded,
        );
    }
    // changes against the baseline, replication by replication (same shocks)
    let changes = |which: Real| {
        reps.reals(which)
            .zip(base.replications.reals(which))
            .map(|(p, b)| p - b)
    };
    // read once, in replication order, then summed and selected from the list
    let net_changes: Vec<f64> = reps
        .nets(lambda)
        .zip(base.replications.nets(lambda))
        .map(|(p, b)| p - b)
        .collect();
    for (key, which) in [
        ("consumer_surplus_change_pv", Some(Real::ConsumerSurplus)),
        ("producer_surplus_change_pv", Some(Real::ProducerSurplus)),
        ("net_welfare_change_pv", None),
    ] {
        let all: Vec<f64> = match which {
            Some(w) => changes(w).collect(),
            None => net_changes.clone(),
        };
        let (m, se) = mean_se(all.iter().copied());
        out.num(key, m);
        out.se(key, se);
        out.quantiles(key, all);
    }
    // producers' risk
    let watch = &runs.watch;
    let r_aversion = watch.risk_aversion;
    let other = watch.income_scale() - watch.reference_revenue;
    let scale = watch.income_scale();
    let (rev_mean, rev_sd) = (pooled.revenue.mean(), pooled.revenue.sd());
    per_real(&mut out, "producer_revenue_mean", Real::MeanRevenue);
    out.num("producer_revenue_sd", rev_sd);
    out.num("producer_revenue_cv", revenue_cv(rev_sd, rev_mean));
    let approx = |p: &PolicyRuns| {
        risk_premium(
            p.pooled.revenue.mean() + other,
            p.pooled.revenue.sd(),
            r_aversion,
        )
    };
    let exact = |p: &PolicyRuns| {
        let n = p.pooled.revenue.count.max(1) as f64;
        crra_premium(
            p.pooled.revenue.mean() + other,
            p.pooled.income_transform / n,
            scale,
            r_aversion,
        )
    };
    let premium_pv = |p: &PolicyRuns| {
        p.mean_income
            .iter()
            .zip(&p.mean_income_transform)
            .enumerate()
            .map(|(t, (m, u))| {
                watch.books.discount.factor(t + 1) * crra_premium(*m, *u, scale, r_aversion)
            })
            .sum::<f64>()
    };
    out.num("revenue_risk_premium", approx(runs));
    out.num("revenue_risk_premium_exact", exact(runs));
    out.num("revenue_risk_premium_change", approx(runs) - approx(base));
    let (pv, base_pv) = (premium_pv(runs), premium_pv(base));
    out.num("revenue_risk_premium_pv", pv);
    out.num("revenue_risk_premium_change_pv", pv - base_pv);
    let (net, net_se) = mean_se(net_changes.iter().copied());
    out.num("risk_adjusted_net_welfare_change_pv", net - (pv - base_pv));
    out.se("risk_adjusted_net_welfare_change_pv", net_se);
    match crate::stability::analyse(scenario, spec) {
        Ok(report) => {
            out.num("spectral_radius", report.spectral_radius);
            out.0.push((
                "verdict".into(),
                Value::Text(report.verdict.as_str().into()),
            ));
        }
        Err(_) => {
            out.0.push(("spectral_radius".into(), Value::Missing));
            out.0.push(("verdict".into(), Value::Missing));
        }
    }
    // with private storers: the long-run stocks of the solved equilibria (policy, then baseline)
    if let Some((with, without)) = storage {
        out.num("private_stock_mean", with.private_stock);
        out.num("public_stock_mean", with.public_stock);
        out.0.push((
            "crowding_out".into(),
            with.crowding_out(without, scenario.steady.quantity)
                .map_or(Value::Missing, Value::Number),
        ));
    }
    arrange(scenario, out)
}

/// The computed values in display order, with quantile and `_se` rows after their indicator.
fn arrange(scenario: &Scenario, out: Out) -> Vec<Indicator> {
    let value = |key: &str| {
        out.0
            .iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.clone())
            .unwrap_or(Value::Missing)
    };
    let mut rows = Vec::with_capacity(3 * SPECS.len());
    let unit = scenario.market.price_unit.as_str();
    for (key, label, kind, has_se) in SPECS {
        if STORAGE_KEYS.contains(key) && scenario.storers.is_none() {
            continue;
        }
        if TRADE_KEYS.contains(key) && scenario.trade.is_none() {
            continue;
        }
        if *key == "alerts" {
            for (k, p) in scenario.run.alert_prices.iter().enumerate() {
                let key = ALERT_KEYS[k];
                let label = format!(
                    "Share of seasons with the price above {} {unit}",
                    crate::output::fmt_num(*p, 2)
                );
                rows.push(Indicator {
                    key: key.into(),
                    label: label.clone(),
                    kind: Kind::Share,
                    value: value(key),
                });
                rows.push(Indicator {
                    key: format!("{key}_se"),
                    label: format!("{label} (standard error)"),
                    kind: Kind::Share,
                    value: value(&format!("{key}_se")),
                });
            }
            continue;
        }
        rows.push(Indicator {
            key: key.to_string(),
            label: label.to_string(),
            kind: *kind,
            value: value(key),
        });
        if QUANTILE_STEMS.contains(key) {
            for (q, name) in [("p05", "5 %"), ("p50", "median"), ("p95", "95 %")] {
                let k = format!("{key}_{q}");
                rows.push(Indicator {
                    value: value(&k),
                    key: k,
                    label: format!("{label}, {name}"),
                    kind: *kind,
                });
            }
        }
        if *has_se {
            let k = format!("{key}_se");
            rows.push(Indicator {
                value: value(&k),
                key: k,
                label: format!("{label} (standard error)"),
                kind: *kind,
            });
        }
    }
    rows
}

#[derive(Default)]
struct Out(Vec<(String, Value)>);

impl Out {
    fn num(&mut self, key: &str, x: f64) {
        self.0.push((key.to_string(), Value::Number(x)));
    }

    fn se(&mut self, key: &str, se: Option<f64>) {
        self.0.push((
            format!("{key}_se"),
            se.map_or(Value::Missing, Value::Number),
        ));
    }

    /// 5/50/95 % quantiles of per-replication values as `KEY_p05`, `KEY_p50`, `KEY_p95`.
    fn quantiles(&mut self, key: &str, mut v: Vec<f64>) {
        let q = quantiles(&mut v, &[0.05, 0.5, 0.95]);
        for (name, x) in ["p05", "p50", "p95"].iter().zip(q) {
            self.num(&format!("{key}_{name}"), x);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn standard_error_is_the_sample_formula() {
        // se = s/√n with s² = Σ(x − x̄)²/(n − 1) (the sample standard error of a mean; any
        // statistics text, e.g. Rice 2007, ch. 7): x = 1, 2, 3, 4 → x̄ = 2.5, s² = 5/3, se = √(5/12)
        let (m, se) = mean_se([1.0, 2.0, 3.0, 4.0].into_iter());
        assert!((m - 2.5).abs() < 1e-15);
        assert!((se.unwrap() - (5.0f64 / 12.0).sqrt()).abs() < 1e-15);
        assert_eq!(mean_se([7.0].into_iter()).1, None);
    }
}

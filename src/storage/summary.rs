//! What the `storage` verb prints: the solved rules on a grid, with accuracy and iterations.

use super::check::GridRow;
use super::simulate::Equilibrium;
use super::simulate::StoragePeriod;
use super::solve::SolveOptions;
use super::{check_options, StorageError};
use crate::output::{fmt_num, Format, TextTable};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;

/// The storage equilibrium summed up: what the `storage` verb prints.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StorageSummary {
    /// Market name.
    pub market: String,
    /// Policy name.
    pub policy: String,
    /// Solution method.
    pub method: String,
    /// Largest arbitrage residual on the dense test grid (relative to the price).
    pub euler_residual_max: f64,
    /// Iterations to convergence.
    pub iterations: usize,
    /// Price above which private storers hold nothing.
    pub stockout_price: f64,
    /// Share of the periods of the indicator path (the longest path furrow simulates: 10 200
    /// seasons) whose private stock lies beyond the solved grid, where the rules are extrapolated.
    pub extrapolated_share: f64,
    /// Points of the solution grid.
    pub grid_points: usize,
    /// Points of the dense test grid.
    pub test_points: usize,
    /// The solved rules on an even grid of availability.
    pub grid: Vec<GridRow>,
    /// In a market that trades: the parities, private trade on the indicator path, and a public
    /// stock's crowding-out and leakage (keys at the top level; none for a closed market).
    #[serde(flatten)]
    pub trade: Option<super::TradeReport>,
}

/// Solves the storage equilibrium of `scenario` under `policy` and sums it up on `rows` rows of
/// availability (times 5 levels of public stock carried in when the policy holds a stock).
pub fn summary(
    scenario: &Scenario,
    policy: &PolicySpec,
    options: &SolveOptions,
    rows: usize,
) -> Result<StorageSummary, StorageError> {
    check_options(options, rows)?;
    // (the indicator path the solve simulated on its rules, when it did, is not simulated again)
    let (eq, path) = super::solve_with_path(scenario, policy, options)?;
    let trade = super::trade_report(scenario, policy, &eq, options)?;
    let residual = eq.euler_residual_max();
    let extrapolated = match &path {
        Some(path) => super::share_beyond_grid(&eq, path),
        None => super::extrapolated_share(&eq, scenario, super::initial_public(policy)?),
    };
    let (market, policy) = (scenario.market.name.clone(), policy.name.clone());
    Ok(match eq {
        Equilibrium::Private(sol) => StorageSummary {
            market,
            policy,
            method: if sol.memory.is_some() {
                "endogenous grid method on private stock for each level of the farmers' memory (Carroll 2006), today's price a secant root of the arbitrage condition, monotone cubic interpolation in availability (Fritsch-Carlson), cubic Lagrange in the memory with the stockout points aligned, expectations by Gauss-Legendre quadrature over the shock split at the breakpoints of next period's price, grids refined where the residual exceeds 1e-7"
            } else {
                "endogenous grid method on private stock (Carroll 2006), monotone cubic interpolation (Fritsch-Carlson), expectations by Gauss-Legendre quadrature over the shock split at the breakpoints of next period's price, grid refined where the residual exceeds 1e-7 and extended as far as simulated paths carry stock"
            }
            .into(),
            euler_residual_max: residual,
            iterations: sol.iterations,
            stockout_price: sol.stockout_price(),
            extrapolated_share: extrapolated,
            grid_points: sol.stocks.len() * sol.memory.as_ref().map_or(1, |r| r.levels.len()),
            test_points: sol.test_points(options.test_points),
            grid: sol.grid(rows),
            trade,
        },
        Equilibrium::Public(sol) => {
            let (lo, hi) = sol.range();
            let levels = 5;
            let band = sol.band;
            let mut grid = Vec::with_capacity(rows * levels);
            for l in 0..levels {
                let g = band.keep * band.capacity * l as f64 / (levels - 1) as f64;
                for i in 0..rows {
                    let z = lo + (hi - lo) * i as f64 / (rows - 1) as f64;
                    let c = sol.clear(z, g);
                    grid.push(GridRow {
                        availability: z,
                        price: c.price,
                        private_stock: c.private_stock,
                        planted: sol.planted_at(c.private_stock, c.public_stock),
                        public_stock: Some(g),
                        expected_price: None,
                        last_price: None,
                    });
                }
            }
            let nz = options.test_points / 10 + 1;
            StorageSummary {
                market,
                policy,
                method: "endogenous grid method on private stock for each public stock of a grid (Carroll 2006), monotone cubic interpolation in availability (Fritsch-Carlson), cubic Lagrange in public stock with the stockout points aligned, expectations by Gauss-Legendre quadrature over the shock split at the breakpoints of next period's price".into(),
                euler_residual_max: residual,
                iterations: sol.iterations,
                stockout_price: sol.stockout_price(0.0),
                extrapolated_share: extrapolated,
                grid_points: sol.stocks.len() * sol.publics.len(),
                test_points: nz * 9,
                grid,
                trade,
            }
        }
    })
}

/// Columns of `storage --path`.
const PATH_COLUMNS: &[&str] = &[
    "period",
    "expected_price",
    "planted",
    "harvest",
    "availability",
    "price",
    "producer_price",
    "consumption",
    "private_stock",
    "purchases",
    "releases",
    "public_stock",
];

/// A storage path (`storage --path`) in `format`.
pub fn render_path(path: &[StoragePeriod], format: Format) -> String {
    if format == Format::Json {
        return serde_json::to_string_pretty(path).unwrap_or_default() + "\n";
    }
    let digits = if format == Format::Csv { 6 } else { 2 };
    let mut t = TextTable::new(PATH_COLUMNS);
    for r in path {
        let f = |x: f64| fmt_num(x, digits);
        t.push(vec![
            r.period.to_string(),
            f(r.expected_price),
            f(r.planted),
            f(r.harvest),
            f(r.availability),
            f(r.price),
            f(r.producer_price),
            f(r.consumption),
            f(r.private_stock),
            f(r.purchases),
            f(r.releases),
            f(r.public_stock),
        ]);
    }
    t.render(format)
}

/// The summary in `format`: a heading with the accuracy (not in CSV), then the grid.
pub fn render_summary(r: &StorageSummary, format: Format) -> String {
    if format == Format::Json {
        return serde_json::to_string_pretty(r).unwrap_or_default() + "\n";
    }
    let public = r.grid.iter().any(|g| g.public_stock.is_some());
    let mut headers = vec!["availability", "price", "private_stock", "planted"];
    if public {
        headers.insert(1, "public_stock");
    }
    let mut t = TextTable::new(&headers);
    let digits = if format == Format::Csv { 6 } else { 2 };
    for g in &r.grid {
        let mut row = vec![
            fmt_num(g.availability, digits),
            fmt_num(g.price, digits),
            fmt_num(g.private_stock, digits),
            fmt_num(g.planted, digits),
        ];
        if public {
            row.insert(1, fmt_num(g.public_stock.unwrap_or(0.0), digits));
        }
        t.push(row);
    }
    let mut out = String::new();
    if format != Format::Csv {
        out.push_str(&format!(
            "{} — {}\nEuler residual max {:.2e}, iterations {}, stockout price {}\n",
            r.market,
            r.policy,
            r.euler_residual_max,
            r.iterations,
            fmt_num(r.stockout_price, 2)
        ));
        if let Some(t) = &r.trade {
            out.push_str(&trade_lines(t));
        }
    }
    out.push_str(&t.render(format));
    out
}

/// The heading lines of a market that trades: parities, private trade, and with a public stock
/// its crowding-out and leakage.
fn trade_lines(t: &super::TradeReport) -> String {
    let parity = |p: Option<f64>| p.map_or_else(|| "none".to_string(), |v| fmt_num(v, 2));
    let share = |v: Option<f64>| v.map_or_else(|| "–".to_string(), |v| fmt_num(v, 3));
    let mut out = format!(
        "import parity {}, export parity {}; imports {} a season on average ({} of seasons), exports {} ({} of seasons)\n",
        parity(t.import_parity),
        parity(t.export_parity),
        fmt_num(t.imports_mean, 2),
        fmt_num(t.import_season_share, 3),
        fmt_num(t.exports_mean, 2),
        fmt_num(t.export_season_share, 3),
    );
    if t.private_stock_change.is_some() || t.net_exports_change.is_some() {
        out.push_str(&format!(
            "against the same border without the agency: crowding-out {}, leakage {}, private stock change {}, net exports change {}\n",
            share(t.crowding_out),
            share(t.leakage),
            share(t.private_stock_change),
            share(t.net_exports_change),
        ));
    }
    out
}

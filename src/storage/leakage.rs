//! A storage equilibrium in a market that trades: how much private trade does, and what a public
//! stock's trades do to private stocks (crowding-out) and to trade with the rest of the world
//! (leakage).
//!
//! Both equilibria (the policy, and the same market under the same border measures without the
//! agency's stock) are simulated on the indicator path's shocks (the market file's seed,
//! replication 0, [`simulate::BURN_IN`] periods dropped, [`simulate::INDICATOR_PERIODS`]
//! averaged):
//!
//! ```text
//! crowding_out = (mean private stock without − with) / mean public stock with
//! leakage      = −Σ_t ΔNX_t·a_t / Σ_t a_t²
//! ```
//!
//! with a_t = G_t − g_t the agency's net purchase in season t and ΔNX_t the change in private net
//! exports (exports − imports) that season against the path without the stock: the least-squares
//! share of each unit the agency buys (sells) that comes out of exports or is made up by imports
//! (comes out of imports or goes abroad as exports) instead of moving the domestic price. In a
//! small open economy with free trade much of a public stock's stabilisation leaks abroad this
//! way (Williams and Wright 1991, ch. 9).

use serde::Serialize;

use super::simulate::{self, Equilibrium, StoragePeriod};
use super::{indicator_path, initial_public, solve_bordered, SolveOptions, StorageError};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;
use crate::trade::leakage_sums;

/// Private trade under a storage equilibrium, and a public stock's crowding-out and leakage.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TradeReport {
    /// Import parity (`None`: no imports).
    pub import_parity: Option<f64>,
    /// Export parity (`None`: no exports).
    pub export_parity: Option<f64>,
    /// Mean private imports per season.
    pub imports_mean: f64,
    /// Mean private exports per season.
    pub exports_mean: f64,
    /// Share of seasons with imports.
    pub import_season_share: f64,
    /// Share of seasons with exports.
    pub export_season_share: f64,
    /// Crowding-out of private stock by the public one (`None`: no public stock held).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub crowding_out: Option<f64>,
    /// Leakage of the public stock's trades abroad (`None`: the agency does not trade).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub leakage: Option<f64>,
    /// Mean private stock with the policy less without it (`None` without a public stock).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub private_stock_change: Option<f64>,
    /// Mean net exports (exports − imports) with the policy less without it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub net_exports_change: Option<f64>,
}

/// Means over one path after the burn-in: (imports, exports, import share, export share, net
/// exports, private stock, public stock).
fn trade_means(path: &[StoragePeriod]) -> [f64; 7] {
    let n = path.len().max(1) as f64;
    let mean = |f: &dyn Fn(&StoragePeriod) -> f64| path.iter().map(f).sum::<f64>() / n;
    [
        mean(&|r| r.imports),
        mean(&|r| r.exports),
        mean(&|r| f64::from(u8::from(r.imports > 0.0))),
        mean(&|r| f64::from(u8::from(r.exports > 0.0))),
        mean(&|r| r.exports - r.imports),
        mean(&|r| r.private_stock),
        mean(&|r| r.public_stock),
    ]
}

/// The least-squares leakage of `with` (the policy's path, public stock `keep` kept per season,
/// `initial` held before period 1) against `without` on the same shocks: −Σ ΔNX·a / Σ a² (see
/// the module notes); `None` when the agency never trades.
pub fn leakage(
    with: &[StoragePeriod],
    without: &[StoragePeriod],
    keep: f64,
    initial: f64,
    from: usize,
) -> Option<f64> {
    let mut carried = initial;
    let pairs = with
        .iter()
        .zip(without)
        .enumerate()
        .filter_map(|(t, (a, b))| {
            let bought = a.public_stock - keep * carried;
            carried = a.public_stock;
            let dnx = (a.exports - a.imports) - (b.exports - b.imports);
            (t >= from).then_some((bought, dnx))
        });
    let (num, den) = leakage_sums(pairs);
    (den > 0.0).then(|| num / den)
}

/// The trade report of the solved equilibrium `eq` of `policy` on `scenario` (`None` for a closed
/// market): private trade on the indicator path, and with a public stock its crowding-out and
/// leakage against the same market and border without it (solved here).
pub fn trade_report(
    scenario: &Scenario,
    policy: &PolicySpec,
    eq: &Equilibrium,
    options: &SolveOptions,
) -> Result<Option<TradeReport>, StorageError> {
    let m = eq.market();
    let Some(border) = m.border else {
        return Ok(None);
    };
    let initial = initial_public(policy)?;
    let path = indicator_path(eq, scenario, initial);
    let from = simulate::BURN_IN;
    let [imports, exports, import_share, export_share, nx, private, public] =
        trade_means(&path[from..]);
    let mut report = TradeReport {
        import_parity: (border.import_quota > 0.0).then_some(border.import_parity),
        export_parity: (border.export_quota > 0.0).then_some(border.export_parity),
        imports_mean: imports,
        exports_mean: exports,
        import_season_share: import_share,
        export_season_share: export_share,
        crowding_out: None,
        leakage: None,
        private_stock_change: None,
        net_exports_change: None,
    };
    if let Equilibrium::Public(s) = eq {
        let border = super::agency::plan_of(policy)?.border;
        let base = solve_bordered(
            scenario,
            &PolicySpec::none(),
            &border,
            &policy.source,
            options,
        )?;
        let base_path = indicator_path(&base, scenario, 0.0);
        let [.., nx0, private0, _] = trade_means(&base_path[from..]);
        report.crowding_out = (public > 1e-6 * m.q_star).then(|| (private0 - private) / public);
        report.private_stock_change = Some(private - private0);
        report.net_exports_change = Some(nx - nx0);
        report.leakage = leakage(&path, &base_path, s.band.keep, initial, from);
    }
    Ok(Some(report))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::storage::public::AgencyMode;

    fn period(public_stock: f64, imports: f64, exports: f64) -> StoragePeriod {
        StoragePeriod {
            period: 0,
            expected_price: 0.0,
            planted: 0.0,
            harvest: 0.0,
            availability: 0.0,
            price: 0.0,
            producer_price: 0.0,
            deficiency_payments: 0.0,
            consumption: 0.0,
            private_stock: 0.0,
            purchases: 0.0,
            releases: 0.0,
            public_stock,
            stockout: false,
            demand_shock: 0.0,
            imports,
            exports,
            mode: AgencyMode::Inside,
            memory: 0.0,
        }
    }

    #[test]
    fn leakage_is_the_least_squares_share_of_net_purchases_that_changes_net_exports() {
        // Constructed so that every net purchase a_t changes net exports by exactly −0.7·a_t (a
        // purchase cuts exports, a sale cuts imports): the least-squares slope through the origin,
        // −Σ ΔNX·a / Σ a², is then 0.7 (the normal equation of a one-regressor fit).
        let keep = 0.9;
        let stocks = [10.0, 25.0, 12.0, 40.0, 30.0];
        let base: Vec<_> = (0..5).map(|_| period(0.0, 0.0, 20.0)).collect();
        let mut with = Vec::new();
        let mut carried = 5.0;
        for &g in &stocks {
            let a: f64 = g - keep * carried;
            carried = g;
            // net exports 20 − 0.7·a: fewer exports when buying, more when selling
            with.push(period(g, 0.0, 20.0 - 0.7 * a));
        }
        let l = leakage(&with, &base, keep, 5.0, 0).unwrap();
        assert!((l - 0.7).abs() < 1e-12, "{l}");
        // an agency that never trades has no leakage
        let idle: Vec<_> = (0..5).map(|_| period(0.0, 0.0, 20.0)).collect();
        assert_eq!(leakage(&idle, &base, keep, 0.0, 0), None);
    }
}

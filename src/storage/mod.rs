//! The competitive storage equilibrium under rational expectations: private storers who arbitrage
//! over time (Gustafson 1958; Wright and Williams 1982; Deaton and Laroque 1992), farmers who plant on
//! the rational expectation of next period's price, and optionally a public buffer stock whose rule
//! the storers know. See `docs/storage.md` for the model, the method and the assumptions.
//!
//! - [`market`]: curves, carrying terms and the Gauss–Hermite quadrature over next period's shocks;
//! - [`interp`]: monotone cubic interpolation (Fritsch and Carlson 1980);
//! - [`solve`]: the one-state equilibrium (endogenous grid method);
//! - [`check`]: Euler residuals on a dense grid and the printed grid.

pub mod check;
pub mod interp;
pub mod market;
pub mod public;
pub mod public_solve;
pub mod simulate;
pub mod solve;

pub use check::GridRow;
pub use market::{Node, StorageMarket};
pub use simulate::{simulate, Equilibrium, StorageIndicators, StoragePeriod};
pub use solve::{solve_private, PriceRule, PrivateSolution, SolveOptions};

use crate::scenario::{PolicySpec, Scenario};

/// Why the storage equilibrium could not be solved.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StorageError {
    /// The market file has no `[storers]` section.
    #[error("{file}: [storers]: missing; the storage model needs storage_cost, interest_rate and loss_rate (and rule = \"rational\")")]
    NoStorers { file: String },
    /// Persistent demand shocks would need another state variable.
    #[error("{file}: shocks.demand_persistence = {value}: the storage model treats demand shocks as independent from period to period; must be 0 when shocks.demand_sd > 0")]
    PersistentDemand { file: String, value: f64 },
    /// Storage that costs nothing has no stationary equilibrium.
    #[error("{file}: storers.interest_rate = 0 and storers.loss_rate = 0: carrying stock must cost something (interest or loss > 0) for the storage equilibrium to exist")]
    NoCarryingCost { file: String },
    /// A policy element the storage model does not cover.
    #[error("{file}: {key}: {reason}")]
    UnsupportedPolicy {
        file: String,
        key: String,
        reason: String,
    },
    /// A numerical setting out of range.
    #[error("{name} = {value}: {expected}")]
    BadOption {
        name: String,
        value: String,
        expected: String,
    },
    /// The iteration did not reach the tolerance.
    #[error("the storage equilibrium did not converge in {iterations} iterations (last change {change:.3e} of P*)")]
    NotConverged { iterations: usize, change: f64 },
}

/// Arbitrage residual the grid refinement aims below (relative to the price).
pub const REFINE_TARGET: f64 = 1e-7;
/// Largest refined grid.
pub const REFINE_MAX_POINTS: usize = 5000;

/// What `storage` reports.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StorageReport {
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
    /// Points of the solution grid.
    pub grid_points: usize,
    /// Points of the dense test grid.
    pub test_points: usize,
    /// The solved rules on an even grid of availability.
    pub grid: Vec<GridRow>,
}

/// Solves the private-storage equilibrium of `scenario` (no public stock) and reports it on `rows`
/// rows.
pub fn report_private(
    scenario: &Scenario,
    options: &SolveOptions,
    rows: usize,
) -> Result<StorageReport, StorageError> {
    check_options(options, rows)?;
    let m = StorageMarket::new(scenario, options.nodes)?;
    let sol = solve_private(m, options)?;
    let sol = solve::refine(sol, options, REFINE_TARGET, REFINE_MAX_POINTS)?;
    Ok(StorageReport {
        market: scenario.market.name.clone(),
        policy: "No intervention".into(),
        method: "endogenous grid method on private stock (Carroll 2006), monotone cubic interpolation (Fritsch-Carlson), Gauss-Hermite quadrature, grid refined where the residual exceeds 1e-7".into(),
        euler_residual_max: sol.euler_residual_max(options.test_points),
        iterations: sol.iterations,
        stockout_price: sol.stockout_price(),
        grid_points: sol.stocks.len(),
        test_points: options.test_points,
        grid: sol.grid(rows),
    })
}

/// Solves the storage equilibrium of `scenario` under `policy` and reports it on `rows` rows.
pub fn report(
    scenario: &Scenario,
    policy: &PolicySpec,
    options: &SolveOptions,
    rows: usize,
) -> Result<StorageReport, StorageError> {
    match band_of(policy)? {
        None => {
            let mut r = report_private(scenario, options, rows)?;
            r.policy = policy.name.clone();
            Ok(r)
        }
        Some(band) => {
            check_options(options, rows)?;
            let m = StorageMarket::new(scenario, options.nodes)?;
            let sol = public_solve::solve_public(m, band, options)?;
            let (lo, hi) = sol.range();
            let levels = 5;
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
                    });
                }
            }
            Ok(StorageReport {
                market: scenario.market.name.clone(),
                policy: policy.name.clone(),
                method: "endogenous grid method on private stock for each public stock of a grid (Carroll 2006), monotone cubic interpolation in availability (Fritsch-Carlson), linear in public stock, Gauss-Hermite quadrature".into(),
                euler_residual_max: sol.euler_residual_max(options.test_points / 10 + 1, 9),
                iterations: sol.iterations,
                stockout_price: sol.stockout_price(0.0),
                grid_points: sol.stocks.len() * sol.publics.len(),
                test_points: (options.test_points / 10 + 1) * 9,
                grid,
            })
        }
    }
}

/// The agency's rule as a price band inside the storage equilibrium, or `None` for a policy that
/// does not trade. Covered: a band stock (`release = "band"`), a floor defended by purchase (a band
/// that never sells), both with a finite capacity and no purchase budget.
pub fn band_of(policy: &PolicySpec) -> Result<Option<public::Band>, StorageError> {
    let unsupported = |key: &str, reason: &str| StorageError::UnsupportedPolicy {
        file: policy.source.clone(),
        key: key.into(),
        reason: reason.into(),
    };
    if let Some(e) = policy.expectations {
        if e != crate::scenario::ExpectationSpec::Rational {
            return Err(unsupported(
                "expectations.rule",
                &format!("\"{}\": the storage model needs rule = \"rational\" (farmers and storers look ahead)", e.rule_name()),
            ));
        }
    }
    let floor = match policy.floor {
        None => None,
        Some(f) => match f.instrument {
            crate::scenario::FloorInstrument::Purchase => Some(f.price),
            crate::scenario::FloorInstrument::DeficiencyPayment => {
                return Err(unsupported(
                    "floor.instrument",
                    "\"deficiency-payment\" is not covered by the storage model; supported: a purchase floor or a band stock",
                ))
            }
        },
    };
    let Some(stock) = policy.stock else {
        return match floor {
            None => Ok(None),
            Some(_) => Err(unsupported(
                "stock.capacity",
                "a purchase floor inside the storage model needs a [stock] section with a finite capacity",
            )),
        };
    };
    if stock.release != crate::scenario::ReleaseSpec::Band {
        return Err(unsupported(
            "stock.release",
            "only release = \"band\" is covered by the storage model",
        ));
    }
    if stock.purchase_budget.is_finite() {
        return Err(unsupported(
            "stock.purchase_budget",
            &format!(
                "= {}: the storage model covers only an unlimited purchase budget",
                stock.purchase_budget
            ),
        ));
    }
    if !stock.capacity.is_finite() {
        return Err(unsupported(
            "stock.capacity",
            "unlimited: the storage model needs a finite capacity (the public stock is a state on [0, capacity])",
        ));
    }
    let buy_below = floor.map_or(stock.buy_below, |f| f.max(stock.buy_below));
    let sell_above = if floor.is_some() && policy.stock.is_some() && stock.sell_above <= buy_below {
        f64::INFINITY
    } else {
        stock.sell_above
    };
    Ok(Some(public::Band {
        buy_below,
        sell_above,
        capacity: stock.capacity,
        keep: 1.0 - stock.loss_rate,
    }))
}

/// Checks the numerical settings.
pub fn check_options(o: &SolveOptions, rows: usize) -> Result<(), StorageError> {
    let bad = |name: &str, value: String, expected: &str| StorageError::BadOption {
        name: name.into(),
        value,
        expected: expected.into(),
    };
    if !(8..=20_000).contains(&o.grid) {
        return Err(bad(
            "--grid",
            o.grid.to_string(),
            "must be a whole number from 8 to 20000",
        ));
    }
    if !(8..=20_000).contains(&o.grid_2d) {
        return Err(bad(
            "--grid",
            o.grid_2d.to_string(),
            "must be a whole number from 8 to 20000",
        ));
    }
    if !(2..=2000).contains(&o.public_grid) {
        return Err(bad(
            "--public-grid",
            o.public_grid.to_string(),
            "must be a whole number from 2 to 2000",
        ));
    }
    if !(2..=64).contains(&o.nodes) {
        return Err(bad(
            "--nodes",
            o.nodes.to_string(),
            "must be a whole number from 2 to 64",
        ));
    }
    if !(2..=100_000).contains(&rows) {
        return Err(bad(
            "--rows",
            rows.to_string(),
            "must be a whole number from 2 to 100000",
        ));
    }
    if !(o.tolerance > 0.0 && o.tolerance < 1.0) {
        return Err(bad(
            "--tolerance",
            o.tolerance.to_string(),
            "must be between 0 and 1",
        ));
    }
    Ok(())
}

/// Solves the storage equilibrium of `scenario` under `policy`: private storers only when the policy
/// holds no stock (refined until the residual is below [`REFINE_TARGET`]), otherwise the two-state
/// equilibrium with the agency's band.
pub fn solve(
    scenario: &Scenario,
    policy: &PolicySpec,
    options: &SolveOptions,
) -> Result<Equilibrium, StorageError> {
    let m = StorageMarket::new(scenario, options.nodes)?;
    match band_of(policy)? {
        None => {
            let sol = solve_private(m, options)?;
            Ok(Equilibrium::Private(solve::refine(
                sol,
                options,
                REFINE_TARGET,
                REFINE_MAX_POINTS,
            )?))
        }
        Some(band) => Ok(Equilibrium::Public(public_solve::solve_public(
            m, band, options,
        )?)),
    }
}

/// The storage indicators of `policy` on `scenario`: both equilibria (without and with the policy)
/// solved, then one long path each on the same shocks (seed of the market file, replication 0,
/// [`simulate::BURN_IN`] periods dropped, [`simulate::INDICATOR_PERIODS`] averaged).
pub fn storage_indicators(
    scenario: &Scenario,
    policy: &PolicySpec,
) -> Result<StorageIndicators, StorageError> {
    let options = SolveOptions::default();
    let run = |eq: &Equilibrium, initial: f64| {
        let path = simulate(
            eq,
            &scenario.shocks,
            scenario.run.seed,
            0,
            initial,
            simulate::BURN_IN + simulate::INDICATOR_PERIODS,
        );
        simulate::moments(&path[simulate::BURN_IN..])
    };
    let base = solve(scenario, &PolicySpec::none(), &options)?;
    let without = run(&base, 0.0);
    let (eq, with) = if band_of(policy)?.is_some() {
        let eq = solve(scenario, policy, &options)?;
        let initial = policy.stock.map_or(0.0, |s| s.initial);
        let with = run(&eq, initial);
        (eq, with)
    } else {
        (base, without)
    };
    let [mean_price, price_sd, mean_harvest, private, public, private_out, stockout] = with;
    let crowding_out = if public > 1e-6 * scenario.steady.quantity {
        Some((without[3] - private) / public)
    } else {
        None
    };
    Ok(StorageIndicators {
        mean_price,
        price_sd,
        price_cv: if mean_price > 0.0 {
            price_sd / mean_price
        } else {
            0.0
        },
        mean_harvest,
        private_stock_mean: private,
        public_stock_mean: public,
        private_stock_mean_without_policy: without[3],
        crowding_out,
        private_stockout_share: private_out,
        stockout_share: stockout,
        euler_residual_max: eq.euler_residual_max(),
        iterations: eq.iterations(),
        periods: simulate::INDICATOR_PERIODS,
    })
}

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
pub mod solve;

pub use check::GridRow;
pub use market::{Node, StorageMarket};
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
    if policy.floor.is_none() && policy.stock.is_none() {
        let mut r = report_private(scenario, options, rows)?;
        r.policy = policy.name.clone();
        return Ok(r);
    }
    Err(StorageError::UnsupportedPolicy {
        file: policy.source.clone(),
        key: "stock".into(),
        reason: "public stocks inside the storage equilibrium are not built yet".into(),
    })
}

/// Checks the numerical settings.
pub fn check_options(o: &SolveOptions, rows: usize) -> Result<(), StorageError> {
    let bad = |name: &str, value: String, expected: &str| StorageError::BadOption {
        name: name.into(),
        value,
        expected: expected.into(),
    };
    if !(8..=20_000).contains(&o.grid) {
        return Err(bad("--grid", o.grid.to_string(), "must be a whole number from 8 to 20000"));
    }
    if !(2..=64).contains(&o.nodes) {
        return Err(bad("--nodes", o.nodes.to_string(), "must be a whole number from 2 to 64"));
    }
    if !(2..=100_000).contains(&rows) {
        return Err(bad("--rows", rows.to_string(), "must be a whole number from 2 to 100000"));
    }
    if !(o.tolerance > 0.0 && o.tolerance < 1.0) {
        return Err(bad("--tolerance", o.tolerance.to_string(), "must be between 0 and 1"));
    }
    Ok(())
}

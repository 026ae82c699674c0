//! The competitive storage equilibrium under rational expectations: private storers who arbitrage
//! over time (Gustafson 1958; Wright and Williams 1982; Deaton and Laroque 1992), farmers who plant on
//! the rational expectation of next period's price, and optionally a public buffer stock whose rule
//! the storers know. See `docs/storage.md` for the model, the method and the assumptions.
//!
//! - [`market`]: curves, carrying terms and the Gauss–Hermite quadrature over next period's shocks;
//! - [`split`], [`next_price`], [`blend`]: the two-state model's breakpoint-splitting quadrature,
//!   the breakpoints of next period's price, and the interpolation across public-stock levels;
//! - [`interp`]: monotone cubic interpolation (Fritsch and Carlson 1980);
//! - [`solve`]: the one-state equilibrium (endogenous grid method);
//! - [`check`]: Euler residuals on a dense grid and the printed grid.

pub mod agency;
pub mod blend;
pub mod check;
pub mod interp;
pub mod market;
pub mod next_price;
pub mod policy;
pub mod public;
pub mod public_solve;
pub mod records;
pub mod report;
pub mod simulate;
pub mod solve;
pub mod split;

pub use check::GridRow;
pub use market::{Node, StorageMarket};
pub use policy::{band_of, payment_floor, planting_floor};
pub use records::SolvedStorage;
pub use report::{report, StorageReport};
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
    /// Shocks so large that harvests at the quadrature nodes fall to zero, where constant-elasticity
    /// demand has no finite price.
    #[error("{file}: shocks.supply_sd / shocks.demand_sd / shocks.yield_cv: too large for constant-elasticity demand in the storage model: the lowest quadrature harvest at the steady state is {lowest:.1}, below 5 % of it, where the price has no finite bound; use smaller shocks or linear demand")]
    HarvestNearZero { file: String, lowest: f64 },
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
    #[error("the storage equilibrium did not converge in {iterations} iterations ({})", describe_change(*change))]
    NotConverged { iterations: usize, change: f64 },
}

fn describe_change(change: f64) -> String {
    if change.is_finite() {
        format!("last change {change:.3e} of the steady-state price")
    } else {
        "the set of grid points where storers hold stock kept changing".into()
    }
}

/// Arbitrage residual the grid refinement aims below (relative to the price).
pub const REFINE_TARGET: f64 = 1e-7;
/// Largest refined grid.
pub const REFINE_MAX_POINTS: usize = 5000;

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
    let mut m = StorageMarket::new(scenario, options.nodes)?;
    m.planting_floor = planting_floor(policy);
    m.payment_floor = payment_floor(policy);
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
    let (eq, with) = if band_of(policy)?.is_some() || payment_floor(policy) > 0.0 {
        let eq = solve(scenario, policy, &options)?;
        let initial = policy.stock.map_or(0.0, |s| s.initial);
        let with = run(&eq, initial);
        (eq, with)
    } else {
        (base, without)
    };
    let [mean_price, price_sd, mean_harvest, private, public, private_out, stockout, producer, payments] =
        with;
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
        mean_producer_price: producer,
        deficiency_payments_mean: payments,
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

/// One simulated path of `scenario` under `policy` with the solved rules, for `run`: the file's
/// `run.periods` periods, its seed and replication `replication`, starting with no private stock and
/// the policy's initial public stock. (To simulate many replications, solve once with
/// [`SolvedStorage::new`].)
pub fn storage_path(
    scenario: &Scenario,
    policy: &PolicySpec,
    replication: u64,
) -> Result<Vec<StoragePeriod>, StorageError> {
    Ok(SolvedStorage::new(scenario, policy)?.path(replication, scenario.run.periods))
}

/// [`storage_path`] as the period engine's records (run columns, fiscal and welfare parts), for `run`
/// and `compare` on a market with `[storers]`.
pub fn storage_records(
    scenario: &Scenario,
    policy: &PolicySpec,
    replication: u64,
) -> Result<Vec<crate::engine::PeriodRecord>, StorageError> {
    Ok(SolvedStorage::new(scenario, policy)?.records(replication, scenario.run.periods))
}

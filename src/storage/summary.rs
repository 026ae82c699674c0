//! What the `storage` verb prints: the solved rules on a grid, with accuracy and iterations.

use super::check::GridRow;
use super::simulate::Equilibrium;
use super::solve::SolveOptions;
use super::{check_options, solve, StorageError};
use crate::scenario::{PolicySpec, Scenario};

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
    let eq = solve(scenario, policy, options)?;
    let residual = eq.euler_residual_max();
    let extrapolated = super::extrapolated_share(&eq, scenario, super::initial_public(policy)?);
    let (market, policy) = (scenario.market.name.clone(), policy.name.clone());
    Ok(match eq {
        Equilibrium::Private(sol) => StorageSummary {
            market,
            policy,
            method: "endogenous grid method on private stock (Carroll 2006), monotone cubic interpolation (Fritsch-Carlson), expectations by Gauss-Legendre quadrature over the shock split at the breakpoints of next period's price, grid refined where the residual exceeds 1e-7 and extended as far as simulated paths carry stock".into(),
            euler_residual_max: residual,
            iterations: sol.iterations,
            stockout_price: sol.stockout_price(),
            extrapolated_share: extrapolated,
            grid_points: sol.stocks.len(),
            test_points: options.test_points,
            grid: sol.grid(rows),
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
            }
        }
    })
}

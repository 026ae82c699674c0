//! Long-run indicators of a solved storage equilibrium: means over one long path on the market
//! file's shocks ([`long_run`], [`LongRunMeans`]) and the storage indicators of a policy against the
//! market without it ([`storage_indicators`]).

use super::simulate::{self, StorageIndicators};
use super::StorageError;
use super::{
    band_of, indicator_path, payment_floor, solve, Equilibrium, SolveOptions, SolvedStorage,
};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;

/// Long-run means of one solved equilibrium: one path on the market file's shocks (its seed,
/// replication 0, [`simulate::BURN_IN`] periods dropped, [`simulate::INDICATOR_PERIODS`] averaged),
/// starting with no private stock and the policy's initial public stock.
/// (The solve simulates that path already; its means are kept with the solution and not simulated
/// again.)
pub fn long_run(solved: &SolvedStorage) -> LongRunMeans {
    solved.kept_long_run().unwrap_or_else(|| {
        long_run_of(
            &solved.equilibrium,
            solved.scenario(),
            solved.initial_public(),
        )
    })
}

fn long_run_of(eq: &Equilibrium, scenario: &Scenario, initial: f64) -> LongRunMeans {
    means_of(&indicator_path(eq, scenario, initial))
}

/// [`LongRunMeans`] of an indicator path (burn-in included: it is dropped here).
pub(crate) fn means_of(path: &[super::StoragePeriod]) -> LongRunMeans {
    let [mean_price, price_sd, mean_harvest, private_stock, public_stock, private_stockout_share, stockout_share, mean_producer_price, deficiency_payments] =
        simulate::moments(&path[simulate::BURN_IN..]);
    LongRunMeans {
        mean_price,
        price_sd,
        mean_harvest,
        private_stock,
        public_stock,
        private_stockout_share,
        stockout_share,
        mean_producer_price,
        deficiency_payments,
    }
}

/// Means over one long simulated path of a solved equilibrium ([`long_run`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LongRunMeans {
    /// Mean price.
    pub mean_price: f64,
    /// Standard deviation of the price.
    pub price_sd: f64,
    /// Mean harvest.
    pub mean_harvest: f64,
    /// Mean private stock carried out.
    pub private_stock: f64,
    /// Mean public stock carried out.
    pub public_stock: f64,
    /// Share of periods with no private stock carried out.
    pub private_stockout_share: f64,
    /// Share of periods with the price above the selling price and the agency's stock out.
    pub stockout_share: f64,
    /// Mean producer price (with deficiency payments).
    pub mean_producer_price: f64,
    /// Mean deficiency payments per period.
    pub deficiency_payments: f64,
}

impl LongRunMeans {
    /// Crowding-out of private stock by the public one, `self` being the path with the policy and
    /// `without` the same market without it: (mean private stock without − with) / mean public
    /// stock with; `None` when the agency holds (almost) nothing (below 1e-6 × `q_star`).
    pub fn crowding_out(&self, without: &LongRunMeans, q_star: f64) -> Option<f64> {
        (self.public_stock > 1e-6 * q_star)
            .then(|| (without.private_stock - self.private_stock) / self.public_stock)
    }
}

/// The storage indicators of `policy` on `scenario`: both equilibria (without and with the policy)
/// solved, then one long path each on the same shocks ([`long_run`]).
pub fn storage_indicators(
    scenario: &Scenario,
    policy: &PolicySpec,
) -> Result<StorageIndicators, StorageError> {
    let options = SolveOptions::default();
    let base = solve(scenario, &PolicySpec::none(), &options)?;
    let without = long_run_of(&base, scenario, 0.0);
    let (eq, with) = if band_of(policy)?.is_some() || payment_floor(policy) > 0.0 {
        let eq = solve(scenario, policy, &options)?;
        let initial = crate::policies::compile(policy).agency.initial;
        let with = long_run_of(&eq, scenario, initial);
        (eq, with)
    } else {
        (base, without)
    };
    Ok(StorageIndicators {
        mean_price: with.mean_price,
        price_sd: with.price_sd,
        price_cv: if with.mean_price > 0.0 {
            with.price_sd / with.mean_price
        } else {
            0.0
        },
        mean_harvest: with.mean_harvest,
        mean_producer_price: with.mean_producer_price,
        deficiency_payments_mean: with.deficiency_payments,
        private_stock_mean: with.private_stock,
        public_stock_mean: with.public_stock,
        private_stock_mean_without_policy: without.private_stock,
        crowding_out: with.crowding_out(&without, scenario.steady.quantity),
        private_stockout_share: with.private_stockout_share,
        stockout_share: with.stockout_share,
        euler_residual_max: eq.euler_residual_max(),
        iterations: eq.iterations(),
        periods: simulate::INDICATOR_PERIODS,
    })
}

//! A household group and its welfare formulas, and the measures of every group under a policy.

use serde::Serialize;

pub use crate::scenario::HouseholdGroup;
use crate::scenario::Scenario;
use crate::stochastic::{MonteCarlo, SeasonPrices};

/// One group under one column, every figure a share of the group's income (0.01 = 1 %).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct GroupOutcome {
    /// First-order welfare change (PV of the change ÷ PV of income; mean over replications).
    pub first_order: f64,
    /// Its Monte Carlo standard error (none below two replications or without a change).
    pub first_order_se: Option<f64>,
    /// Welfare change with the second-order supply and demand response.
    pub with_response: f64,
    /// Its standard error.
    pub with_response_se: Option<f64>,
    /// Change of the cost of price risk against the baseline (negative: the policy lowers it);
    /// none when it cannot be estimated (one replication under random weather).
    pub risk_cost: Option<f64>,
    /// `with_response` in money: the PV of the change per household.
    pub pv_per_household: f64,
}

impl GroupOutcome {
    /// No change at all (a column measured against itself).
    pub const NONE: GroupOutcome = GroupOutcome {
        first_order: 0.0,
        first_order_se: None,
        with_response: 0.0,
        with_response_se: None,
        risk_cost: Some(0.0),
        pv_per_household: 0.0,
    };
}

/// Every group under one column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HouseholdColumn {
    /// The column's (policy's) name.
    pub policy: String,
    /// One outcome per group, in the market file's order.
    pub outcomes: Vec<GroupOutcome>,
}

/// The household block of a comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HouseholdResult {
    /// The groups.
    pub groups: Vec<HouseholdGroup>,
    /// ε_s, the supply elasticity at the steady state.
    pub supply_elasticity: f64,
    /// ε_d, the demand elasticity at the steady state (negative).
    pub demand_elasticity: f64,
    /// R, `[run] risk_aversion`.
    pub risk_aversion: f64,
    /// Σ_t (1 + r)^−t over the seasons: PV of one crown a season.
    pub pv_factor: f64,
    /// The market left alone (zeros: measured against itself).
    pub baseline: HouseholdColumn,
    /// The given policies, in order.
    pub policies: Vec<HouseholdColumn>,
    /// The behaviour changes (an overriding rule alone against the market's rule).
    pub behaviour: Vec<HouseholdColumn>,
}

/// The season weights (1 + r)^−t / Σ_s (1 + r)^−s, t = 1..T, and Σ_s (1 + r)^−s.
fn weights(scenario: &Scenario, periods: usize) -> (Vec<f64>, f64) {
    let v = 1.0 / (1.0 + scenario.run.discount_rate);
    let raw: Vec<f64> = (1..=periods).map(|t| v.powi(t as i32)).collect();
    let total: f64 = raw.iter().sum();
    (raw.iter().map(|w| w / total).collect(), total)
}

/// Every group under the model `slot` against the model `base` of `mc` (the comparison's own
/// Monte Carlo), `pair` the index of (slot, base) among the pairs it was run with (none when
/// slot = base: nothing changes, every figure is exactly zero).
pub fn measure(
    scenario: &Scenario,
    mc: &MonteCarlo,
    pair: Option<usize>,
    slot: usize,
    base: usize,
) -> Vec<GroupOutcome> {
    let groups = &scenario.households;
    let Some(changes) = pair.and_then(|j| mc.paired.get(j)).filter(|_| slot != base) else {
        return vec![GroupOutcome::NONE; groups.len()];
    };
    let (eps_s, eps_d) = elasticities(scenario);
    let (w, pv_factor) = weights(scenario, mc.periods);
    let risk = |g: &HouseholdGroup| -> Option<f64> {
        if scenario.is_deterministic() {
            return Some(0.0); // every weather draw is the same path: no price risk
        }
        if mc.replications < 2 {
            return None;
        }
        let cost = |s: &SeasonPrices| -> f64 {
            w.iter()
                .enumerate()
                .map(|(t, wt)| {
                    let (means, var) = s.moments(t);
                    wt * g.risk_cost(scenario.run.risk_aversion, means, var)
                })
                .sum()
        };
        Some(cost(mc.season_prices.get(slot)?) - cost(mc.season_prices.get(base)?))
    };
    groups
        .iter()
        .map(|g| {
            // per replication: [Σw·δp, Σw·δc, Σw·δp², Σw·δc²]; the measures are linear in them,
            // with the coefficients read off the formulas themselves
            let first_order = [g.first_order(1.0, 0.0), g.first_order(0.0, 1.0), 0.0, 0.0];
            let mut full_order = first_order;
            full_order[2] = g.second_order(1.0, 0.0, eps_s, eps_d);
            full_order[3] = g.second_order(0.0, 1.0, eps_s, eps_d);
            let (first, first_se) = changes.combination(first_order);
            let (full, full_se) = changes.combination(full_order);
            GroupOutcome {
                first_order: first,
                first_order_se: first_se,
                with_response: full,
                with_response_se: full_se,
                risk_cost: risk(g),
                pv_per_household: full * g.income * pv_factor,
            }
        })
        .collect()
}

/// ε_s and ε_d at the steady state.
pub fn elasticities(scenario: &Scenario) -> (f64, f64) {
    let p = scenario.steady.price;
    (
        scenario.market.supply.elasticity_at(p),
        scenario.market.demand.elasticity_at(p),
    )
}

/// Σ_t (1 + r)^−t over `periods` seasons.
pub fn pv_factor(scenario: &Scenario, periods: usize) -> f64 {
    weights(scenario, periods).1
}

#[cfg(test)]
mod tests {
    use super::*;

    fn group(pr: f64, cr: f64) -> HouseholdGroup {
        HouseholdGroup {
            name: "g".into(),
            population_share: 1.0,
            income: 1000.0,
            production_share: pr,
            consumption_share: cr,
        }
    }

    #[test]
    fn a_net_seller_gains_nbr_times_the_price_rise() {
        // Deaton (1989): dw/y = NBR·dp/p; 0.10 × 0.10 = 0.01 (derived by hand)
        let g = group(0.30, 0.20);
        assert!((g.first_order(0.1, 0.1) - 0.01).abs() < 1e-15);
        assert!((g.net_benefit_ratio() - 0.1).abs() < 1e-15);
    }

    #[test]
    fn a_pure_consumer_bears_half_r_cr_squared_cv_squared() {
        // one price, pure consumer: ½·R·CR²·Var(p)/p̄² (Arrow–Pratt on income CR·y·p/p̄; by hand)
        let g = group(0.0, 0.4);
        let cost = g.risk_cost(2.0, [100.0, 100.0], [400.0, 400.0, 400.0]);
        assert!((cost - 0.5 * 2.0 * 0.16 * 0.04).abs() < 1e-15);
        // a group that sells what it eats bears none when both prices move together
        let h = group(0.3, 0.3);
        assert!(
            h.risk_cost(2.0, [100.0, 100.0], [400.0, 400.0, 400.0])
                .abs()
                < 1e-15
        );
    }
}

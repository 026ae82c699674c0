//! A household group as the market file describes it (`[[households]]`), with its welfare
//! formulas; the measures under each policy are `crate::households`.

use serde::Serialize;

/// One validated `[[households]]` group.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HouseholdGroup {
    /// Free-text name.
    pub name: String,
    /// Share of all households, in (0, 1]; the groups' shares sum to 1.
    pub population_share: f64,
    /// Income per household per season (money units).
    pub income: f64,
    /// PR: value of the crop the group produces / income, at the steady-state price.
    pub production_share: f64,
    /// CR: value of the crop the group consumes / income, at the steady-state price.
    pub consumption_share: f64,
}

impl HouseholdGroup {
    /// The net benefit ratio NBR = PR − CR (Deaton 1989): > 0 a net seller, < 0 a net buyer.
    pub fn net_benefit_ratio(&self) -> f64 {
        self.production_share - self.consumption_share
    }

    /// The first-order welfare change as a share of income (Deaton 1989): PR·δ_prod − CR·δ_cons,
    /// with δ the proportional change of the producer price and of the price consumers pay
    /// (NBR·δ when both prices move together).
    pub fn first_order(&self, producer_change: f64, consumer_change: f64) -> f64 {
        self.production_share * producer_change - self.consumption_share * consumer_change
    }

    /// The second-order term of the welfare change as a share of income (Minot and Goletti 2000):
    /// ½·(PR·ε_s·δ_prod² − CR·ε_d·δ_cons²), with the supply elasticity ε_s > 0 and the demand
    /// elasticity ε_d < 0 (signed), so supply response adds to a seller's gain from a rise and
    /// demand response softens a buyer's loss.
    pub fn second_order(
        &self,
        producer_change: f64,
        consumer_change: f64,
        supply_elasticity: f64,
        demand_elasticity: f64,
    ) -> f64 {
        0.5 * (self.production_share * supply_elasticity * producer_change * producer_change
            - self.consumption_share * demand_elasticity * consumer_change * consumer_change)
    }

    /// The cost of price risk in one season as a share of income: ½·R·Var(PR·p_prod/p̄_prod −
    /// CR·p_cons/p̄_cons), the Arrow–Pratt premium on the household's income change when the crop
    /// it sells and buys is valued at uncertain prices (the risk-aversion term of Turnovsky, Shalit
    /// and Schmitz 1980; responses are counted in the welfare change). `means` = mean producer
    /// and consumer price, `var` = their variances and covariance across weather draws.
    pub fn risk_cost(&self, risk_aversion: f64, means: [f64; 2], var: [f64; 3]) -> f64 {
        let a = if means[0] > 0.0 {
            self.production_share / means[0]
        } else {
            0.0
        };
        let b = if means[1] > 0.0 {
            self.consumption_share / means[1]
        } else {
            0.0
        };
        let variance = (a * a * var[0] + b * b * var[1] - 2.0 * a * b * var[2]).max(0.0);
        0.5 * risk_aversion * variance
    }
}

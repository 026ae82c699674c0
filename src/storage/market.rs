//! The pieces of the storage model that do not depend on the solution method: the curves, the
//! storers' carrying terms, and the quadrature over next period's harvest and demand shocks.

use crate::curves::Curve;
use crate::numeric::gauss_hermite;
use crate::scenario::Scenario;

use super::StorageError;

/// One quadrature node over next period's shocks: yield factor `y`, additive quantity shock `e`
/// (supply shock minus demand shock) and weight `w` (the weights sum to 1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Node {
    /// Multiplicative yield factor.
    pub y: f64,
    /// Additive shock to availability net of demand (supply shock − demand shock).
    pub e: f64,
    /// Probability weight.
    pub w: f64,
}

/// Curves, carrying terms and shock quadrature of a market with private storers.
#[derive(Debug, Clone)]
pub struct StorageMarket {
    /// Demand D(P).
    pub demand: Curve,
    /// Supply S(E[P']).
    pub supply: Curve,
    /// 1 − loss rate of private stock.
    pub keep: f64,
    /// (1 − loss)/(1 + r): what a unit stored today is worth tomorrow, in today's money.
    pub discount: f64,
    /// Physical storage cost per unit per period.
    pub cost: f64,
    /// Quadrature nodes over (yield, additive shock).
    pub nodes: Vec<Node>,
    /// Gauss–Hermite nodes over the yield factor alone (factor, weight); one node (1, 1) without
    /// yield risk.
    pub yield_nodes: Vec<(f64, f64)>,
    /// Steady-state price of the market without storage.
    pub p_star: f64,
    /// Steady-state quantity.
    pub q_star: f64,
    /// Standard deviation of the harvest at the steady state (with the net demand shock).
    pub harvest_sd: f64,
    /// σ of the log yield factor.
    pub yield_sigma: f64,
    /// Standard deviation of the additive (supply − demand) shock.
    pub additive_sd: f64,
    /// Producer price floor paid by deficiency payments (0: none): farmers plant on
    /// E[max(P', floor)], storers trade at the market price.
    pub planting_floor: f64,
    /// Price floor of deficiency payments, announced or not (0: none): the treasury pays
    /// (floor − P)·harvest when the price is below it.
    pub payment_floor: f64,
    /// Farmers plant on revenue (`[supply] plants_on = "revenue"`): on E[max(P', F)·Y] (E[Y] = 1,
    /// Wright and Williams 1991) instead of E[max(P', F)]; storers still trade on E[P']. False
    /// without yield risk, where the two are the same.
    pub revenue: bool,
}

impl StorageMarket {
    /// Builds the model from a validated scenario with `nodes` Gauss–Hermite points per shock.
    pub fn new(s: &Scenario, nodes: usize) -> Result<StorageMarket, StorageError> {
        let st = s.storers.ok_or_else(|| StorageError::NoStorers {
            file: s.source.clone(),
        })?;
        if s.shocks.demand_persistence != 0.0 && s.shocks.demand_sd > 0.0 {
            return Err(StorageError::PersistentDemand {
                file: s.source.clone(),
                value: s.shocks.demand_persistence,
            });
        }
        let keep = 1.0 - st.loss_rate;
        let discount = keep / (1.0 + st.interest_rate);
        if discount >= 1.0 {
            return Err(StorageError::NoCarryingCost {
                file: s.source.clone(),
            });
        }
        let sigma = (1.0 + s.shocks.yield_cv.powi(2)).ln().sqrt();
        let add_sd = (s.shocks.supply_sd.powi(2) + s.shocks.demand_sd.powi(2)).sqrt();
        let rule = gauss_hermite(nodes.max(2));
        let ys: Vec<(f64, f64)> = if sigma > 0.0 {
            rule.iter()
                .map(|&(z, w)| ((sigma * z - 0.5 * sigma * sigma).exp(), w))
                .collect()
        } else {
            vec![(1.0, 1.0)]
        };
        let es: Vec<(f64, f64)> = if add_sd > 0.0 {
            rule.iter().map(|&(z, w)| (add_sd * z, w)).collect()
        } else {
            vec![(0.0, 1.0)]
        };
        let mut all = Vec::with_capacity(ys.len() * es.len());
        for &(y, wy) in &ys {
            for &(e, we) in &es {
                all.push(Node { y, e, w: wy * we });
            }
        }
        let q = s.steady.quantity;
        let lowest = all
            .iter()
            .map(|n| q * n.y + n.e)
            .fold(f64::INFINITY, f64::min);
        if !s.market.demand.is_linear() && lowest < 0.05 * q {
            return Err(StorageError::HarvestNearZero {
                file: s.source.clone(),
                lowest: lowest.max(0.0),
            });
        }
        Ok(StorageMarket {
            demand: s.market.demand,
            supply: s.market.supply,
            keep,
            discount,
            cost: st.storage_cost,
            nodes: all,
            yield_nodes: ys,
            p_star: s.steady.price,
            q_star: q,
            harvest_sd: ((q * s.shocks.yield_cv).powi(2) + add_sd * add_sd).sqrt(),
            yield_sigma: sigma,
            additive_sd: add_sd,
            planting_floor: 0.0,
            payment_floor: 0.0,
            // without yield risk (Y = 1) revenue is the price: solved as such, bit for bit
            revenue: s.market.plants_on == crate::scenario::PlantsOn::Revenue && sigma > 0.0,
        })
    }

    /// True when farmers plant on the expected market price itself (no planting floor, not on
    /// revenue): then the planting expectation is the storers' E[P'].
    #[inline]
    pub fn plants_on_market_price(&self) -> bool {
        self.planting_floor <= 0.0 && !self.revenue
    }

    /// Inverse demand with free disposal: the price at which consumers take `c`, never below zero,
    /// and its derivative dP/dc (0 where the price is held at zero).
    #[inline]
    pub fn inverse_demand(&self, c: f64) -> (f64, f64) {
        let c = c.max(1e-9 * self.q_star);
        let p = self.demand.price_at(c);
        if p <= 0.0 {
            (0.0, 0.0)
        } else {
            (p, 1.0 / self.demand.slope_at_point(p, c))
        }
    }

    /// Planted quantity for an expected price.
    #[inline]
    pub fn supply_at(&self, expected: f64) -> (f64, f64) {
        let q = self.supply.quantity(expected);
        if q <= 0.0 {
            (0.0, 0.0)
        } else {
            (q, self.supply.slope_at(expected))
        }
    }

    /// Harvest at node `n` for planted `q` (never negative).
    #[inline]
    pub fn harvest(&self, q: f64, n: &Node) -> f64 {
        (q * n.y + n.e).max(0.0)
    }

    /// Lowest and highest harvest at ±3 standard deviations of each shock for planted `q`.
    pub fn harvest_range(&self, q: f64) -> (f64, f64) {
        let s = self.yield_sigma;
        let lo = q * (-3.0 * s - 0.5 * s * s).exp() - 3.0 * self.additive_sd;
        let hi = q * (3.0 * s - 0.5 * s * s).exp() + 3.0 * self.additive_sd;
        (lo.max(0.0), hi.max(0.0))
    }
}

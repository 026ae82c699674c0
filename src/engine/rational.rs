//! The rational expectation of the producer price (Muth 1961): P^e solves
//! P^e = E_{t−1}[producer price in t | P^e], the expectation taken over the period's shocks by
//! Gauss–Hermite quadrature, with the policy's rules and the agency's stock as it stands. The map
//! P^e ↦ E[producer price] − P^e is strictly decreasing (more planting, lower prices), so the fixed
//! point is unique and is found by bracketing and Brent's method.
//!
//! Farmers in groups with a rational group (`mixed`, `switching`): the group's forecast is the
//! expected price given every group's planting (`expected_price` at the planting-equivalent price,
//! solved in `expectations::Groups::season`).
//!
//! Farmers who plant on revenue (`[supply] plants_on = "revenue"`) plant on E[producer price · Y]/E[Y]
//! instead, Y the yield factor with E[Y] = 1 (Wright and Williams 1991): each node's price is
//! weighted by its yield factor. The map stays decreasing in P^e where the price falls with the
//! harvest (more planting lowers P at every node and leaves Y as it is).
//!
//! On a market that trades, every node clears on the kinked curve of private trade (the engine's
//! own clearing), and a varying world price is one more dimension of the quadrature: the log world
//! factor is AR(1), x_t = ρ x_{t−1} + s √(1 − ρ²) e_t, so given last period's x the period's factor
//! is exp(ρ x_{t−1} + s √(1 − ρ²) z − s²/2) at the node z (before the first period x is drawn from
//! its stationary law N(0, s²): the factor exp(s z − s²/2)).

use super::{harvest_of, Model, PeriodShock};
use crate::curves::{Form, Forms};
use crate::numeric::{gauss_hermite, root_decreasing};
use crate::policies::Asked;
use crate::scenario::ShockSpec;
use crate::trade::Trade;

/// Quadrature nodes over the period's independent standard-normal shocks.
#[derive(Debug, Clone)]
pub(crate) struct Nodes {
    /// (weight, yield factor, supply shock, demand innovation)
    points: Vec<(f64, f64, f64, f64)>,
    persistence: f64,
    /// The world price's standard-normal nodes and weights (empty: no world-price risk), s and ρ.
    world: Vec<(f64, f64)>,
    world_s: f64,
    world_rho: f64,
}

impl Nodes {
    pub fn new(spec: &ShockSpec, trade: Option<&Trade>) -> Nodes {
        let world_on = trade.is_some_and(|t| t.world_price_cv > 0.0);
        let active = [
            spec.yield_cv > 0.0,
            spec.supply_sd > 0.0,
            spec.demand_sd > 0.0,
        ];
        let count = active.iter().filter(|a| **a).count() + usize::from(world_on);
        let n = match count {
            0 => 1,
            1 => 15,
            2 => 9,
            _ => 7,
        };
        let rule = gauss_hermite(n);
        let single = [(0.0, 1.0)];
        let pick = |on: bool| -> &[(f64, f64)] {
            if on {
                &rule
            } else {
                &single
            }
        };
        let sigma = crate::numeric::lognormal_sigma(spec.yield_cv);
        let mut points = Vec::new();
        for &(zy, wy) in pick(active[0]) {
            for &(zs, ws) in pick(active[1]) {
                for &(zd, wd) in pick(active[2]) {
                    points.push((
                        wy * ws * wd,
                        (sigma * zy - 0.5 * sigma * sigma).exp(),
                        spec.supply_sd * zs,
                        spec.demand_sd * zd,
                    ));
                }
            }
        }
        let (world, world_s, world_rho) = match trade.filter(|_| world_on) {
            Some(t) => (
                rule.clone(),
                crate::numeric::lognormal_sigma(t.world_price_cv),
                t.world_price_persistence,
            ),
            None => (Vec::new(), 0.0, 0.0),
        };
        Nodes {
            points,
            persistence: spec.demand_persistence,
            world,
            world_s,
            world_rho,
        }
    }

    /// The mean and standard deviation of the coming period's log world factor given last period's
    /// (None before the first period): (ρ x, s √(1 − ρ²)), or the stationary (0, s).
    fn world_law(&self, last: Option<f64>) -> (f64, f64) {
        let s = self.world_s;
        match last {
            None => (0.0, s),
            Some(x) => (
                self.world_rho * x,
                s * (1.0 - self.world_rho * self.world_rho).sqrt(),
            ),
        }
    }

    /// The log world factor x of a period whose factor was `factor` (x − s²/2 = ln factor).
    pub fn log_world(&self, factor: f64) -> f64 {
        factor.ln() + 0.5 * self.world_s * self.world_s
    }
}

/// The expected producer price (or, planting on revenue, E[producer price · Y]) when farmers plant
/// on `planting`, given the carried stock, last period's demand shock and last period's log world
/// factor (integrated over the world price's nodes when it varies).
#[inline]
pub(crate) fn expected_price(
    model: &Model,
    carried: f64,
    last_demand_shock: f64,
    planting: f64,
    last_world: Option<f64>,
) -> f64 {
    let nodes = &model.nodes;
    let mean_demand = nodes.persistence * last_demand_shock;
    if nodes.world.is_empty() {
        if let (true, Forms::Elastic(demand)) = (model.trade.is_none(), model.demand.form()) {
            return at_once(model, &demand, carried, mean_demand, planting);
        }
        return at_each(model, 1.0, carried, mean_demand, planting);
    }
    let (world_mean, world_sd) = nodes.world_law(last_world);
    let half_s2 = 0.5 * nodes.world_s * nodes.world_s;
    nodes
        .world
        .iter()
        .map(|&(z, w)| {
            let factor = (world_mean + world_sd * z - half_s2).exp();
            w * at_each(model, factor, carried, mean_demand, planting)
        })
        .sum::<f64>()
}

/// The sum over the nodes of [`expected_price`] at the world factor `world_factor`, each node's
/// period cleared by [`Model::clear`].
fn at_each(model: &Model, world_factor: f64, carried: f64, mean_demand: f64, planting: f64) -> f64 {
    // the rules ask the demand at the same few prices at every node
    let mut asked = Asked::NONE;
    model
        .nodes
        .points
        .iter()
        .map(|&(w, y, s, d)| {
            let shock = PeriodShock {
                yield_factor: y,
                supply: s,
                demand: mean_demand + d,
                world_factor,
            };
            let paid = model
                .clear(planting, &shock, carried, &mut asked)
                .producer_price;
            node_term(model, w, y, paid)
        })
        .sum::<f64>()
}

/// A node's term of [`expected_price`]: its weight `w` times the producer price `paid`, on revenue
/// times the yield factor `y` too (E[P·Y], E[Y] = 1; without yield risk y = 1 and this is w·P
/// exactly).
#[inline(always)]
fn node_term(model: &Model, w: f64, y: f64, paid: f64) -> f64 {
    if model.revenue {
        w * (paid * y)
    } else {
        w * paid
    }
}

/// [`expected_price`] on a closed market with a constant-elasticity demand curve: every node's
/// price before trade worked out at once ([`Form::price_at_many`], the powers
/// together), then each node's period as [`Model::clear`] gives it
/// ([`Model::clear_closed_harvest_at`]), summed in the same order: [`at_each`]'s number.
fn at_once(
    model: &Model,
    demand: &crate::curves::Elastic,
    carried: f64,
    mean_demand: f64,
    planting: f64,
) -> f64 {
    let points = &model.nodes.points;
    // every node plants the same crop on the same price (`plant`'s quantity, asked once)
    let planted = model.supply.quantity(planting);
    let crops: Vec<(f64, f64)> = points
        .iter()
        .map(|&(_, y, s, _)| (planted, harvest_of(planted, y, s)))
        .collect();
    let mut prices: Vec<f64> = (crops.iter().zip(points))
        .map(|(&(_, harvest), &(_, _, _, d))| harvest - (mean_demand + d))
        .collect();
    demand.price_at_many(&mut prices);
    let mut asked = Asked::NONE;
    points
        .iter()
        .zip(crops)
        .zip(prices)
        .map(|((&(w, y, s, d), (planted, harvest)), untraded)| {
            let shock = PeriodShock {
                yield_factor: y,
                supply: s,
                demand: mean_demand + d,
                world_factor: 1.0,
            };
            let paid = model
                .clear_closed_harvest_at(planted, harvest, &shock, carried, untraded, &mut asked)
                .producer_price;
            node_term(model, w, y, paid)
        })
        .sum::<f64>()
}

/// The rational expected producer price given the carried stock and last period's demand shock.
pub(crate) fn solve(
    model: &Model,
    carried: f64,
    last_demand_shock: f64,
    floor: Option<f64>,
    guess: f64,
    last_world: Option<f64>,
) -> Option<f64> {
    let expected = |p: f64| -> f64 {
        let planting = floor.map_or(p, |f| p.max(f));
        expected_price(model, carried, last_demand_shock, planting, last_world)
    };
    let guess = if guess.is_finite() && guess > 0.0 {
        guess
    } else {
        1.0
    };
    let tol = 1e-11 * guess.max(1.0);
    let root = root_decreasing(|p| expected(p) - p, guess, tol)?;
    (root.is_finite() && root > 0.0).then_some(root)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::policies::file::policy_from_table;
    use crate::scenario::{market_from_str, parse_toml};

    #[test]
    fn the_nodes_priced_at_once_give_the_bits_of_each_node_cleared_alone() {
        // an identity (no outside source): on a closed constant-elasticity market, with and
        // without a rule that trades stock, planting on price and on revenue, on a linear and a
        // constant-elasticity supply curve, at planting prices across the band and beyond,
        // `at_once` is `at_each` to the bit
        let ways = ["", "plants_on = \"revenue\"\n"]
            .into_iter()
            .flat_map(|p| ["linear", "constant-elasticity"].map(|f| (p, f)));
        for (plants_on, supply) in ways {
            let s = market_from_str(
                "m.toml",
                &format!(
                    "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\n\
                     at_quantity = 480.0\nelasticity = -0.25\n[supply]\n{plants_on}\
                     form = \"{supply}\"\nat_price = 210.0\nat_quantity = 480.0\n\
                     elasticity = 0.2\n[expectations]\nrule = \"rational\"\n\
                     [shocks]\nyield_cv = 0.12\ndemand_sd = 5.0\ndemand_persistence = 0.3\n"
                ),
            )
            .unwrap();
            let band = policy_from_table(
                "p.toml",
                parse_toml(
                    "p.toml",
                    "[policy]\nname = \"B\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\n\
                     capacity = 60.0\ninitial = 20.0\n",
                )
                .unwrap(),
            )
            .unwrap();
            for policy in [crate::policies::PolicySpec::none(), band] {
                let model = Model::new(&s, &policy);
                let Forms::Elastic(demand) = model.demand.form() else {
                    panic!("a constant-elasticity demand");
                };
                for (i, planting) in [150.0, 195.5, 210.0, 229.0, 260.0, 400.0]
                    .iter()
                    .enumerate()
                {
                    let (carried, mean) = (10.0 * i as f64, 1.5 * i as f64 - 3.0);
                    let once = at_once(&model, &demand, carried, mean, *planting);
                    let each = at_each(&model, 1.0, carried, mean, *planting);
                    assert_eq!(
                        once.to_bits(),
                        each.to_bits(),
                        "{} at {planting}",
                        policy.name
                    );
                }
            }
        }
    }
}

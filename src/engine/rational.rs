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

use super::{Model, PeriodShock};
use crate::numeric::{gauss_hermite, root_decreasing};
use crate::scenario::ShockSpec;

/// Quadrature nodes over the period's independent standard-normal shocks.
#[derive(Debug, Clone)]
pub(crate) struct Nodes {
    /// (weight, yield factor, supply shock, demand innovation)
    points: Vec<(f64, f64, f64, f64)>,
    persistence: f64,
}

impl Nodes {
    pub fn new(spec: &ShockSpec) -> Nodes {
        let active = [
            spec.yield_cv > 0.0,
            spec.supply_sd > 0.0,
            spec.demand_sd > 0.0,
        ];
        let count = active.iter().filter(|a| **a).count();
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
        let sigma = (1.0 + spec.yield_cv * spec.yield_cv).ln().sqrt();
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
        Nodes {
            points,
            persistence: spec.demand_persistence,
        }
    }
}

/// The expected producer price (or, planting on revenue, E[producer price · Y]) when farmers plant
/// on `planting`, given the carried stock and last period's demand shock.
#[inline]
pub(crate) fn expected_price(
    model: &Model,
    carried: f64,
    last_demand_shock: f64,
    planting: f64,
) -> f64 {
    let nodes = &model.nodes;
    let mean_demand = nodes.persistence * last_demand_shock;
    let revenue = model.revenue;
    nodes
        .points
        .iter()
        .map(|&(w, y, s, d)| {
            let shock = PeriodShock {
                yield_factor: y,
                supply: s,
                demand: mean_demand + d,
            };
            let paid = model.clear(planting, &shock, carried).producer_price;
            // on revenue: E[P·Y] (E[Y] = 1); without yield risk y = 1 and this is w·P exactly
            if revenue {
                w * (paid * y)
            } else {
                w * paid
            }
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
) -> Option<f64> {
    let expected = |p: f64| -> f64 {
        let planting = floor.map_or(p, |f| p.max(f));
        expected_price(model, carried, last_demand_shock, planting)
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

//! Long deterministic runs at one grid value: the last N prices (bifurcation data) and the largest
//! Lyapunov exponent along the orbit.
//!
//! The prices come from the engine's own simulator without shocks. The Lyapunov exponent is
//! estimated by the tangent-map method with renormalisation of Benettin, Galgani, Giorgilli and
//! Strelcyn (1980): a tangent vector is carried along the orbit by the Jacobian of the map (central
//! differences of the engine's clearing with the rule's real `expect`), renormalised every period,
//! and the exponent is the mean log growth over the second half of the run (an even number of
//! periods, so a 2-cycle is averaged without bias; the error otherwise falls as 1/periods). For a one-dimensional
//! state (one lag, or the rule's own expectation) this is the mean of ln|f′(x_t)| along the orbit. The
//! tangent space is the rule's price/expectation state; the agency's stock is taken along the orbit
//! as given (it does not feed back on prices inside a regime). A season with a pinned price in the
//! first half (a floor that binds once in the transient) restarts the tangent vector; one in the
//! second half makes the exponent −∞ ("superstable", no number). A run that diverges is cut where
//! it does: its last prices and the exponent over the seasons before are still reported (orbit
//! `diverged`), so an unstable market shows its spread and a positive exponent.

use crate::engine::{Model, PeriodShock};
use crate::expectations::ExpectationInput;
use crate::policies::{Asked, PolicySpec};
use crate::scenario::Scenario;
use crate::stability::statespace::{numerical_jacobian, StateLayout};

/// What happened to the orbit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Orbit {
    /// The run finished.
    Ok,
    /// The run left the region where the model means anything.
    Diverged,
    /// The tangent vector vanished (a pinned price): the exponent is −∞, reported as none.
    Superstable,
    /// The rule settles at once (the model solves it, `ExpectationRule::settles_at_once`): the path
    /// is at rest and no exponent is estimated; the word is the rule's name (e.g. `rational`).
    Settled(&'static str),
}

impl Orbit {
    /// The word printed in the `orbit` column.
    pub fn as_str(&self) -> &'static str {
        match self {
            Orbit::Ok => "ok",
            Orbit::Diverged => "diverged",
            Orbit::Superstable => "superstable",
            Orbit::Settled(rule) => rule,
        }
    }
}

/// The long-run result at one grid value.
#[derive(Debug, Clone, PartialEq)]
pub struct LongRunOrbit {
    /// The last N market prices (before the divergence when the run diverged; empty when it
    /// diverged in its first period).
    pub prices: Vec<f64>,
    /// The period of `prices[0]`.
    pub first_period: usize,
    /// Largest Lyapunov exponent (per period), when it could be estimated.
    pub lyapunov: Option<f64>,
    /// What happened.
    pub orbit: Orbit,
}

/// The engine's one-period map on (rule state, stock).
struct EngineMap<'m> {
    model: &'m Model,
    layout: StateLayout,
    floor: Option<f64>,
}

impl EngineMap<'_> {
    fn dim(&self) -> usize {
        match &self.layout {
            StateLayout::Lags(w) => w.len(),
            StateLayout::Expectation(_) => 1,
            StateLayout::Groups(n) => *n,
        }
    }

    /// Advances the rule state `x` with stock `stock`; returns the new stock.
    fn step(&self, x: &[f64], stock: f64, out: &mut [f64]) -> f64 {
        let carried = self.model.policy.agency.carried(stock);
        let plant = |e: f64| self.model.planting_price(e);
        match self.layout {
            StateLayout::Lags(_) => {
                let k = x.len();
                let history = crate::stability::statespace::lags_as_history(x);
                let e = self.model.rule.expect(&ExpectationInput {
                    history: &history,
                    previous: None,
                    season: 0,
                });
                let c =
                    self.model
                        .clear(plant(e), &PeriodShock::NONE, carried, &mut Asked::default());
                out[0] = c.producer_price;
                out[1..k].copy_from_slice(&x[..k - 1]);
                c.stock
            }
            StateLayout::Expectation(_) => {
                let c = self.model.clear(
                    plant(x[0]),
                    &PeriodShock::NONE,
                    carried,
                    &mut Asked::default(),
                );
                let history = [c.producer_price, c.producer_price];
                out[0] = self.model.rule.expect(&ExpectationInput {
                    history: &history,
                    previous: Some(x[0]),
                    season: 0,
                });
                c.stock
            }
            StateLayout::Groups(_) => {
                // farmers in groups: the groups' own map (shares at rest), cleared by the engine
                let Some(g) = self.model.rule.groups() else {
                    return stock;
                };
                let price = |pl: f64| {
                    self.model
                        .clear(pl, &PeriodShock::NONE, carried, &mut Asked::default())
                        .producer_price
                };
                let pbar = g.apply(x, out, &self.model.supply, self.floor, &price);
                self.model
                    .clear(pbar, &PeriodShock::NONE, carried, &mut Asked::default())
                    .stock
            }
        }
    }
}

/// The rule state before period 1: the last prices (newest first), or the rule's own expectation
/// for period 1 (its expectation with no previous one).
fn initial_state(model: &Model, layout: &StateLayout, dim: usize) -> Vec<f64> {
    let h = &model.price_history;
    match layout {
        StateLayout::Expectation(_) => vec![model.rule.expect(&ExpectationInput {
            history: h,
            previous: None,
            season: 0,
        })],
        StateLayout::Lags(_) => (0..dim).map(|i| h[h.len() - 1 - i]).collect(),
        StateLayout::Groups(_) => model
            .rule
            .groups()
            .map_or_else(|| vec![h[h.len() - 1]; dim], |g| g.initial_state(h)),
    }
}

/// Largest Lyapunov exponent along the orbit from the model's initial state, over `periods`.
/// An orbit that leaves the model's region (a price ≤ 0 or above the divergence bound) ends there:
/// the exponent is then estimated over the seasons before, by the same rule (the second half of
/// them), and reported with [`Orbit::Diverged`]; none when fewer than two seasons were completed.
pub fn lyapunov(scenario: &Scenario, policy: &PolicySpec, periods: usize) -> (Option<f64>, Orbit) {
    let spec = policy.expectations.unwrap_or(scenario.expectations);
    let rule = spec.rule();
    if rule.settles_at_once().is_some() {
        return (None, Orbit::Settled(spec.rule_name()));
    }
    if rule
        .groups()
        .is_some_and(|g| matches!(g.shares, crate::expectations::ShareRule::Switching { .. }))
    {
        // the shares move with the squared errors, which the state map holds at rest
        return (None, Orbit::Ok);
    }
    if rule.time_varying().is_some() {
        // a gain that falls every season: no one map whose exponent could be estimated
        return (None, Orbit::Ok);
    }
    let model = Model::new(scenario, policy);
    let map = EngineMap {
        model: &model,
        layout: rule.layout(),
        floor: model.policy.planting_floor(),
    };
    let n = map.dim();
    let mut x = initial_state(&model, &map.layout, n);
    let mut stock = model.policy.agency.initial;
    let mut v = vec![1.0 / (n as f64).sqrt(); n];
    let mut next = vec![0.0; n];
    // ln of the tangent vector's growth each season (None: a pinned season, the vector restarts)
    let mut growth: Vec<Option<f64>> = Vec::with_capacity(periods);
    let mut diverged = false;
    for _ in 0..periods {
        let s = stock;
        let j = numerical_jacobian(
            |a, b| {
                map.step(a, s, b);
            },
            &x,
        );
        let w = &j * nalgebra::DVector::from_column_slice(&v);
        let norm = w.norm();
        if !norm.is_finite() {
            diverged = true;
            break;
        }
        if norm < 1e-300 {
            // a pinned season: start the tangent vector afresh
            growth.push(None);
            v.iter_mut().for_each(|x| *x = 1.0 / (n as f64).sqrt());
        } else {
            growth.push(Some(norm.ln()));
            for i in 0..n {
                v[i] = w[i] / norm;
            }
        }
        stock = map.step(&x, stock, &mut next);
        if !next
            .iter()
            .all(|p| p.is_finite() && *p > 0.0 && *p <= model.price_bound)
        {
            diverged = true;
            break;
        }
        x.copy_from_slice(&next);
    }
    // average over the second half, an even number of steps (no bias on a 2-cycle)
    let done = growth.len();
    let start = done / 2 + (done - done / 2) % 2;
    let tail = &growth[start.min(done)..];
    let orbit = if diverged { Orbit::Diverged } else { Orbit::Ok };
    if tail.is_empty() || (diverged && done < 2) {
        return (None, orbit);
    }
    if tail.iter().any(Option::is_none) {
        // a pinned price in the second half: the exponent is −∞
        return (None, if diverged { orbit } else { Orbit::Superstable });
    }
    let sum: f64 = tail.iter().flatten().sum();
    (Some(sum / tail.len() as f64), orbit)
}

/// Simulates `periods` periods without shocks and keeps the last `keep` market prices; estimates the
/// largest Lyapunov exponent along the same orbit. A run that diverges keeps the last `keep` prices
/// before it did, and the exponent over those seasons (an unstable market shows a positive one).
pub fn long_run(
    scenario: &Scenario,
    policy: &PolicySpec,
    periods: usize,
    keep: usize,
) -> LongRunOrbit {
    let model = Model::new(scenario, policy);
    let mut sim = model.simulator();
    let mut prices = std::collections::VecDeque::with_capacity(keep.min(periods));
    let mut completed = 0;
    let mut diverged = false;
    for _ in 1..=periods {
        match sim.step(&PeriodShock::NONE) {
            Ok(r) => {
                if keep > 0 {
                    if prices.len() == keep {
                        prices.pop_front();
                    }
                    prices.push_back(r.price);
                }
                completed += 1;
            }
            Err(_) => {
                diverged = true;
                break;
            }
        }
    }
    let (lyapunov, orbit) = lyapunov(scenario, policy, completed);
    let prices: Vec<f64> = prices.into();
    LongRunOrbit {
        first_period: completed + 1 - prices.len(),
        prices,
        lyapunov,
        orbit: if diverged { Orbit::Diverged } else { orbit },
    }
}

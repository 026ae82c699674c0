//! Each expectation rule's dynamics as a state-space map x_{t+1} = F(x_t), its fixed point, and its
//! Jacobian there: analytic (companion form of the rule's weights times the clearing slope
//! S'(P^e)/D'(P), closed form for linear and constant-elasticity curves alike); the numerical one
//! (central differences with Richardson extrapolation) serves the Lyapunov estimate along orbits and
//! the tests.
//!
//! The state is the rule's own (`ExpectationRule::layout`): the k last producer prices, newest first,
//! for a rule linear in them (`StateLayout::Lags`), or the rule's own expectation P^e_t for a rule
//! that updates it (`StateLayout::Expectation`). The map uses the real rule (`expectations::build`) and a regime's clearing
//! function (planting price → producer price), so it is the engine's dynamics inside that regime.

use nalgebra::DMatrix;

use crate::curves::Curve;
use crate::expectations::{self, ExpectationInput, ExpectationRule};
use crate::policies::PolicySpec;
use crate::policies::{Agency, RuleRef};
use crate::regime::RegimePrice;
use crate::scenario::{ExpectationSpec, Scenario};
use crate::trade::Trade;

/// What the linearisation needs of a market and a policy (cheap to clone and patch in a sweep: the
/// rules are shared).
#[derive(Debug, Clone)]
pub struct Setup {
    /// Demand curve.
    pub demand: Curve,
    /// Supply curve.
    pub supply: Curve,
    /// The expectation rule in force (the policy's override, else the market's).
    pub rule: ExpectationSpec,
    /// The policy's rules (each adds its regimes, `Rule::regimes`).
    pub rules: Vec<RuleRef>,
    /// The agency's parameters (from the rules).
    pub agency: Agency,
    /// The announced planting floor, if any (from the rules).
    planting_floor: Option<f64>,
    /// The border (`[trade]`), when the market trades (its world price taken at its mean).
    pub trade: Option<Trade>,
}

impl Setup {
    /// The setup of `scenario` under `policy`.
    pub fn new(scenario: &Scenario, policy: &PolicySpec) -> Setup {
        let mut s = Setup::with_rules(
            scenario.market.demand,
            scenario.market.supply,
            policy.expectations.unwrap_or(scenario.expectations),
            policy.rules.clone(),
        );
        s.trade = scenario.trade;
        s
    }

    /// A setup from its parts (a closed market: set `trade` for one that trades).
    pub fn with_rules(
        demand: Curve,
        supply: Curve,
        rule: ExpectationSpec,
        rules: Vec<RuleRef>,
    ) -> Setup {
        let mut s = Setup {
            demand,
            supply,
            rule,
            rules: Vec::new(),
            agency: Agency::default(),
            planting_floor: None,
            trade: None,
        };
        s.set_rules(rules);
        s
    }

    /// Replaces the policy's rules (and what follows from them).
    pub fn set_rules(&mut self, rules: Vec<RuleRef>) {
        let spec = PolicySpec {
            rules,
            ..PolicySpec::none()
        };
        let compiled = crate::policies::compile(&spec);
        self.agency = compiled.agency;
        self.planting_floor = compiled.planting_floor();
        self.rules = spec.rules;
    }

    /// The announced planting floor, if any.
    pub fn planting_floor(&self) -> Option<f64> {
        self.planting_floor
    }
}

impl RegimePrice {
    /// Producer price for a planting price.
    #[inline]
    pub fn producer_price(&self, setup: &Setup, planting: f64) -> f64 {
        match *self {
            RegimePrice::Free { offtake } => setup
                .demand
                .price_at(setup.supply.quantity(planting) - offtake),
            RegimePrice::Pinned(p) | RegimePrice::Paid(p) => p,
        }
    }

    /// d(producer price)/d(planting price), analytically: S'(P^e)/D'(P) in the free regime, 0 pinned.
    /// Both curves have closed-form derivatives (linear: the slope; constant elasticity: e·Q/P),
    /// taken at the cleared quantity itself (no round trip through the inverse curve).
    pub fn slope(&self, setup: &Setup, planting: f64) -> f64 {
        match *self {
            RegimePrice::Free { offtake } => {
                let q = setup.supply.quantity(planting);
                let p = setup.demand.price_at(q - offtake);
                setup.supply.slope_at_point(planting, q)
                    / setup.demand.slope_at_point(p, q - offtake)
            }
            RegimePrice::Pinned(_) | RegimePrice::Paid(_) => 0.0,
        }
    }
}

pub use crate::expectations::StateLayout;

/// The state layout of a rule, with the weights of the linear rules (the rule's own,
/// `ExpectationRule::layout`).
pub fn layout(rule: &ExpectationSpec) -> StateLayout {
    expectations::build(rule).layout()
}

/// The state-space map of one rule inside one regime.
#[derive(Debug)]
pub struct StateMap<'a> {
    setup: &'a Setup,
    rule: Box<dyn ExpectationRule>,
    layout: StateLayout,
    clearing: RegimePrice,
    floor: Option<f64>,
}

impl<'a> StateMap<'a> {
    /// The map of `setup`'s rule under `clearing` (farmers plant on an announced floor).
    pub fn new(setup: &'a Setup, clearing: RegimePrice) -> Self {
        Self::with_floor(setup, clearing, true)
    }

    /// As [`StateMap::new`]; `floor = false` ignores an announced floor (the market left alone).
    pub fn with_floor(setup: &'a Setup, clearing: RegimePrice, floor: bool) -> Self {
        StateMap {
            setup,
            rule: expectations::build(&setup.rule),
            layout: layout(&setup.rule),
            clearing,
            floor: setup.planting_floor().filter(|_| floor),
        }
    }

    /// Dimension of the state.
    pub fn dim(&self) -> usize {
        match &self.layout {
            StateLayout::Lags(w) => w.len(),
            StateLayout::Expectation(_) => 1,
            StateLayout::Groups(n) => *n,
        }
    }

    fn plant(&self, expectation: f64) -> f64 {
        match self.floor {
            Some(f) => expectation.max(f),
            None => expectation,
        }
    }

    /// The rule's expectation when every past price is `p` (and so was its last expectation).
    pub fn expectation_at_rest(&self, p: f64) -> f64 {
        let history = vec![p; self.dim().max(2)];
        self.rule.expect(&ExpectationInput {
            history: &history,
            previous: Some(p),
            season: 0,
        })
    }

    /// The planting price at rest when every past producer price is `p`.
    pub fn planting_at_rest(&self, p: f64) -> f64 {
        if let Some(g) = self.rule.groups() {
            return g.planting_at_rest(p, &self.setup.supply, self.floor);
        }
        self.plant(self.expectation_at_rest(p))
    }

    /// The steady producer price of this regime: p = h(planting(p)); `None` when none exists.
    pub fn fixed_point(&self, guess: f64) -> Option<f64> {
        if let RegimePrice::Pinned(p) | RegimePrice::Paid(p) = self.clearing {
            return Some(p);
        }
        let g = |p: f64| {
            let v = self
                .clearing
                .producer_price(self.setup, self.planting_at_rest(p))
                - p;
            if v.is_nan() {
                f64::NEG_INFINITY
            } else {
                v
            }
        };
        crate::numeric::root_decreasing(g, guess, 1e-13 * guess.max(1.0))
    }

    /// The state at rest at producer price `p`.
    pub fn rest_state(&self, p: f64) -> Vec<f64> {
        match self.layout {
            StateLayout::Lags(_) => vec![p; self.dim()],
            StateLayout::Expectation(_) => vec![self.expectation_at_rest(p)],
            StateLayout::Groups(_) => self
                .rule
                .groups()
                .map_or_else(|| vec![p], |g| g.rest_state(p)),
        }
    }

    /// x ↦ F(x), written into `out`.
    pub fn apply(&self, x: &[f64], out: &mut [f64]) {
        self.apply_with(x, out, |planting| {
            self.clearing.producer_price(self.setup, planting)
        });
    }

    /// x ↦ F(x) with the producer price given by `price` (planting price → producer price) in
    /// place of the regime's clearing: the map of a market whose clearing changes regime along the
    /// way (the kinked curve of private trade).
    pub fn apply_with(&self, x: &[f64], out: &mut [f64], price: impl Fn(f64) -> f64) {
        match self.layout {
            StateLayout::Lags(_) => {
                let k = x.len();
                let history = lags_as_history(x);
                let e = self.rule.expect(&ExpectationInput {
                    history: &history,
                    previous: None,
                    season: 0,
                });
                let p = price(self.plant(e));
                out[0] = p;
                out[1..k].copy_from_slice(&x[..k - 1]);
            }
            StateLayout::Expectation(_) => {
                let pe = x[0];
                let p = price(self.plant(pe));
                let history = [p, p];
                out[0] = self.rule.expect(&ExpectationInput {
                    history: &history,
                    previous: Some(pe),
                    season: 0,
                });
            }
            StateLayout::Groups(_) => {
                if let Some(g) = self.rule.groups() {
                    g.apply(x, out, &self.setup.supply, self.floor, &price);
                }
            }
        }
    }

    /// A producer price on the orbit through state `x`: the newest lag, or for a rule whose state
    /// is its own expectation the price `price` gives for planting on it.
    pub fn price_in(&self, x: &[f64], price: impl Fn(f64) -> f64) -> f64 {
        match self.layout {
            // farmers in groups keep the price lags first
            StateLayout::Lags(_) | StateLayout::Groups(_) => x[0],
            StateLayout::Expectation(_) => price(self.plant(x[0])),
        }
    }

    /// Numerical Jacobian of F at `x`.
    pub fn numerical_jacobian(&self, x: &[f64]) -> DMatrix<f64> {
        numerical_jacobian(|a, b| self.apply(a, b), x)
    }

    /// Analytic Jacobian of F at rest at producer price `p` (companion form of the linear rule):
    /// with c = dh/dP^e (0 where an announced floor pins planting), first row c·w for the lag rules,
    /// 1 − λ + λc for a rule whose state is its own expectation, updated with weight λ.
    pub fn analytic_jacobian(&self, p: f64) -> DMatrix<f64> {
        let e = self.expectation_at_rest(p);
        let planting = self.plant(e);
        let pinned_by_floor = self.floor.is_some_and(|f| e < f);
        let c = if pinned_by_floor {
            0.0
        } else {
            self.clearing.slope(self.setup, planting)
        };
        match &self.layout {
            StateLayout::Lags(w) => {
                let k = w.len();
                let mut m = DMatrix::<f64>::zeros(k, k);
                for (j, wj) in w.iter().enumerate() {
                    m[(0, j)] = c * wj;
                }
                for i in 1..k {
                    m[(i, i - 1)] = 1.0;
                }
                m
            }
            StateLayout::Expectation(l) => DMatrix::from_element(1, 1, 1.0 - l + l * c),
            // farmers in groups: the map's own Jacobian at rest, numerically
            StateLayout::Groups(_) => self.numerical_jacobian(&self.rest_state(p)),
        }
    }
}

/// Central-difference Jacobian with one Richardson step (error O(h⁴)); step 1e-4·max(|x_j|, 1).
pub fn numerical_jacobian(f: impl Fn(&[f64], &mut [f64]), x: &[f64]) -> DMatrix<f64> {
    let n = x.len();
    let mut m = DMatrix::<f64>::zeros(n, n);
    let mut xp = x.to_vec();
    let (mut fp, mut fm) = (vec![0.0; n], vec![0.0; n]);
    let mut diff = |j: usize, h: f64, out: &mut Vec<f64>| {
        xp[j] = x[j] + h;
        f(&xp, &mut fp);
        xp[j] = x[j] - h;
        f(&xp, &mut fm);
        xp[j] = x[j];
        for i in 0..n {
            out[i] = (fp[i] - fm[i]) / (2.0 * h);
        }
    };
    let (mut d1, mut d2) = (vec![0.0; n], vec![0.0; n]);
    for j in 0..n {
        let h = 1e-4 * x[j].abs().max(1.0);
        diff(j, h, &mut d1);
        diff(j, 0.5 * h, &mut d2);
        for i in 0..n {
            m[(i, j)] = (4.0 * d2[i] - d1[i]) / 3.0;
        }
    }
    m
}

/// A lag state (newest price first) as the price history the rules read (oldest first), padded to
/// the two prices every rule may look at by repeating the oldest.
pub(crate) fn lags_as_history(x: &[f64]) -> Vec<f64> {
    let mut history: Vec<f64> = x.iter().rev().copied().collect();
    if history.len() < 2 {
        history.insert(0, x[x.len() - 1]);
    }
    history
}

//! Farmers in groups, each forming its expectation by its own rule: the machinery `mixed` (fixed
//! shares) and `switching` (shares chosen by past forecast performance) share. Planting is summed
//! over the groups, Q = Σ n_i S(P^e_i); the engine and the stability map plant the
//! planting-equivalent price P̄ = S⁻¹(Σ n_i S(P^e_i)), which gives that planting exactly (for a
//! linear supply curve P̄ is the share-weighted mean of the groups' expectations). A rational group
//! forecasts the expected clearing price given every group's planting, its own included: a fixed
//! point in its own planting (Muth 1961, solved here by bracketing as the rational rule is).
//!
//! The groups are written in the `[expectations]` section as one text of short forms
//! (`groups = "rational, adaptive:0.6"`, the same forms as `sensitivity --rules`), with one number
//! per group in an array (`shares` for `mixed`, `cost` for `switching`).

use std::sync::{Mutex, OnceLock};

use super::{
    Adaptive, ExpectationInput, ExpectationRule, ExpectationSpec, Reader, StateLayout, Values,
};
use crate::curves::Curve;
use crate::input::InputError;

/// Most groups one section may name.
pub const MAX_GROUPS: usize = 8;

/// The groups of a `mixed` or `switching` section as read: each group's rule and its number (its
/// share, or the cost of its forecast). Interned (one copy per distinct set for the life of the
/// program) so that a validated section stays cheap to copy.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupSet {
    /// Each group's rule (never itself a set of groups).
    pub members: Vec<ExpectationSpec>,
    /// One number per group.
    pub numbers: Vec<f64>,
    /// The key the numbers were read from (`shares` or `cost`).
    pub key: &'static str,
}

impl GroupSet {
    /// The one stored copy of `set`.
    pub fn intern(set: GroupSet) -> &'static GroupSet {
        static SETS: OnceLock<Mutex<Vec<&'static GroupSet>>> = OnceLock::new();
        let sets = SETS.get_or_init(|| Mutex::new(Vec::new()));
        let mut sets = match sets.lock() {
            Ok(s) => s,
            Err(poisoned) => poisoned.into_inner(),
        };
        if let Some(found) = sets.iter().find(|s| ***s == set) {
            return found;
        }
        let stored: &'static GroupSet = Box::leak(Box::new(set));
        sets.push(stored);
        stored
    }

    /// The groups as the section writes them: short forms joined by ", ".
    pub fn text(&self) -> String {
        let forms: Vec<String> = self.members.iter().map(|m| m.short_form()).collect();
        forms.join(", ")
    }
}

/// Reads `groups` (short forms separated by commas) and the array `key` (one number per group,
/// each checked by `check_number`) into a set.
pub(crate) fn read_groups(
    r: &Reader,
    key: &'static str,
    check_number: impl Fn(f64) -> Result<(), String>,
) -> Result<&'static GroupSet, InputError> {
    let Some(text) = r.text("groups") else {
        return Err(r.missing(
            "groups",
            "the groups' rules in short form, e.g. groups = \"rational, naive\"",
        ));
    };
    let items: Vec<&str> = text.split(',').map(str::trim).collect();
    if items.len() < 2 || items.len() > MAX_GROUPS || items.iter().any(|i| i.is_empty()) {
        return Err(r.bad(
            "groups",
            &format!("\"{}\"", crate::input::ranges::escape(&text)),
            &format!(
                "2 to {MAX_GROUPS} rules in short form separated by commas, e.g. \"rational, naive\""
            ),
        ));
    }
    let mut members = Vec::with_capacity(items.len());
    for item in &items {
        let spec = ExpectationSpec::from_short(item, "groups").map_err(|e| {
            r.bad(
                "groups",
                &format!("\"{}\"", crate::input::ranges::escape(item)),
                &format!("a rule in short form ({e})"),
            )
        })?;
        if let Some(why) = spec.rule().time_varying() {
            return Err(r.bad(
                "groups",
                &format!("\"{}\"", crate::input::ranges::escape(item)),
                &format!("a rule with one map for every season ({why})"),
            ));
        }
        if spec.values().groups.is_some() {
            return Err(r.bad(
                "groups",
                &format!("\"{}\"", crate::input::ranges::escape(item)),
                "a single rule (a group may not itself be mixed or switching)",
            ));
        }
        members.push(spec);
    }
    if members.iter().filter(|m| m.is_rational()).count() > 1 {
        return Err(r.bad(
            "groups",
            &format!("\"{}\"", crate::input::ranges::escape(&text)),
            "at most one rational group (two would forecast the same)",
        ));
    }
    let Some(numbers) = r.numbers(key) else {
        return Err(r.missing(
            key,
            &format!("one number per group, e.g. {key} = [0.5, 0.5]"),
        ));
    };
    if numbers.len() != members.len() {
        return Err(r.bad(
            key,
            &format!("{} numbers", numbers.len()),
            &format!("one number per group ({} groups)", members.len()),
        ));
    }
    for (i, v) in numbers.iter().enumerate() {
        if let Err(expected) = check_number(*v) {
            return Err(r.bad(
                &format!("{key}[{i}]"),
                &crate::output::fmt_num(*v, 6),
                &expected,
            ));
        }
    }
    Ok(GroupSet::intern(GroupSet {
        members,
        numbers,
        key,
    }))
}

/// How the shares are set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ShareRule {
    /// Fixed shares (`mixed`).
    Fixed,
    /// Discrete choice on past performance (`switching`; Brock and Hommes 1997): n_i ∝ exp(β U_i),
    /// U_i = −(weighted past squared forecast errors) − cost_i.
    Switching {
        /// β ≥ 0.
        intensity: f64,
        /// Weight of the past in the squared errors, in [0, 1): E_i ← m·E_i + (1 − m)·error².
        memory: f64,
    },
}

/// Farmers in groups (`mixed`, `switching`): the built rule.
#[derive(Debug)]
pub struct Groups {
    /// The section's word.
    pub name: &'static str,
    /// Each group's rule.
    pub members: Vec<Box<dyn ExpectationRule>>,
    /// Its short form, for the descriptions.
    pub forms: Vec<String>,
    /// The shares (`mixed`) or the costs (`switching`).
    pub numbers: Vec<f64>,
    /// How the shares are set.
    pub shares: ShareRule,
    /// The rational group, if any.
    pub rational: Option<usize>,
    /// Groups whose rule keeps its own expectation (its state in the stability map).
    carriers: Vec<usize>,
    /// Price lags the stability map keeps (the most any group reads, at least one).
    lags: usize,
}

/// The groups' state along a run: each group's last forecast, its weighted squared error.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupState {
    /// Each group's forecast for the last season (`None` before period 1).
    pub previous: Vec<Option<f64>>,
    /// Each group's weighted past squared forecast error (0 before period 1).
    pub errors: Vec<f64>,
    /// This season's forecasts, by group.
    pub forecasts: Vec<f64>,
    /// This season's shares, by group.
    pub shares: Vec<f64>,
}

impl Groups {
    /// The groups of `set` with their share rule.
    pub fn new(name: &'static str, set: &GroupSet, shares: ShareRule) -> Groups {
        let members: Vec<Box<dyn ExpectationRule>> = set.members.iter().map(|m| m.rule()).collect();
        let rational = members.iter().position(|m| m.is_rational());
        let carriers = members
            .iter()
            .enumerate()
            .filter(|(_, m)| matches!(m.layout(), StateLayout::Expectation(_)))
            .map(|(i, _)| i)
            .collect();
        let lags = members
            .iter()
            .filter(|m| !m.is_rational())
            .map(|m| match m.layout() {
                StateLayout::Lags(w) => w.len(),
                _ => 1,
            })
            .max()
            .unwrap_or(1)
            .max(1);
        Groups {
            name,
            forms: set.members.iter().map(|m| m.short_form()).collect(),
            members,
            numbers: set.numbers.clone(),
            shares,
            rational,
            carriers,
            lags,
        }
    }

    /// The state before period 1.
    pub fn start(&self) -> GroupState {
        let k = self.members.len();
        GroupState {
            previous: vec![None; k],
            errors: vec![0.0; k],
            forecasts: vec![0.0; k],
            shares: vec![0.0; k],
        }
    }

    /// The shares given each group's weighted squared error: fixed, or the discrete choice
    /// n_i = exp(β U_i)/Σ_j exp(β U_j), U_i = −E_i − cost_i (Brock and Hommes 1997, eq. for the
    /// fractions; computed with the largest β U_j taken out, which leaves the ratios as they are).
    pub fn shares_at(&self, errors: &[f64], out: &mut [f64]) {
        match self.shares {
            ShareRule::Fixed => out.copy_from_slice(&self.numbers),
            ShareRule::Switching { intensity, .. } => {
                let mut top = f64::NEG_INFINITY;
                for (i, o) in out.iter_mut().enumerate() {
                    *o = intensity * (-errors[i] - self.numbers[i]);
                    top = top.max(*o);
                }
                let mut sum = 0.0;
                for o in out.iter_mut() {
                    *o = (*o - top).exp();
                    sum += *o;
                }
                for o in out.iter_mut() {
                    *o /= sum;
                }
            }
        }
    }

    /// Plants one season: each group forms its forecast (the rational group's by `expected`, the
    /// expected producer price given a planting-equivalent price), and the planting-equivalent
    /// price P̄ = S⁻¹(Σ n_i S(max(P^e_i, floor))) is returned. `None` when the rational group's
    /// fixed point could not be bracketed. Forecasts and shares are left in `state`.
    pub fn season(
        &self,
        state: &mut GroupState,
        history: &[f64],
        supply: &Curve,
        floor: Option<f64>,
        expected: impl Fn(f64) -> f64,
    ) -> Option<f64> {
        let GroupState {
            previous,
            errors,
            forecasts,
            shares,
        } = state;
        self.shares_at(errors, shares);
        let plant = |e: f64| floor.map_or(e, |f| e.max(f));
        let mut others = 0.0;
        for (i, member) in self.members.iter().enumerate() {
            if Some(i) == self.rational {
                continue;
            }
            let e = match member.as_adaptive() {
                Some(a) => a.next(previous[i], history[history.len() - 1]),
                None => member.expect(&ExpectationInput {
                    history,
                    previous: previous[i],
                    // a group's rule has one map (`read_groups` refuses a time-varying one)
                    season: 0,
                }),
            };
            forecasts[i] = e;
            others += shares[i] * supply.quantity(plant(e));
        }
        let Some(r) = self.rational else {
            return Some(supply.price_at(others));
        };
        let share = shares[r];
        let equivalent = |p: f64| supply.price_at(share * supply.quantity(plant(p)) + others);
        let guess = history[history.len() - 1];
        let tol = 1e-11 * guess.abs().max(1.0);
        let root = crate::numeric::root_decreasing(|p| expected(equivalent(p)) - p, guess, tol)?;
        if !(root.is_finite() && root > 0.0) {
            return None;
        }
        forecasts[r] = root;
        Some(equivalent(root))
    }

    /// Closes a season at producer price `price` (what the rules read): each group's forecast
    /// becomes its previous one and its squared error enters its weighted error.
    pub fn settle(&self, state: &mut GroupState, price: f64) {
        let memory = match self.shares {
            ShareRule::Fixed => 0.0,
            ShareRule::Switching { memory, .. } => memory,
        };
        for i in 0..self.members.len() {
            let e = state.forecasts[i];
            let err = (price - e) * (price - e);
            state.errors[i] = memory * state.errors[i] + (1.0 - memory) * err;
            state.previous[i] = Some(e);
        }
    }

    /// Dimension of the state of the stability map: the price lags (newest first), then the last
    /// forecast of each group whose rule keeps its own expectation.
    pub fn state_dim(&self) -> usize {
        self.lags + self.carriers.len()
    }

    /// The map's state at rest at producer price `p` (every group's errors zero).
    pub fn rest_state(&self, p: f64) -> Vec<f64> {
        let history = vec![p; self.lags.max(2)];
        let mut x = vec![p; self.lags];
        for &i in &self.carriers {
            x.push(self.members[i].expect(&ExpectationInput {
                history: &history,
                previous: Some(p),
                season: 0,
            }));
        }
        x
    }

    /// The map's state before period 1 from the price history (newest last).
    pub fn initial_state(&self, history: &[f64]) -> Vec<f64> {
        let mut x: Vec<f64> = (0..self.lags)
            .map(|i| history[history.len().saturating_sub(1 + i)])
            .collect();
        for &i in &self.carriers {
            x.push(self.members[i].expect(&ExpectationInput {
                history,
                previous: None,
                season: 0,
            }));
        }
        x
    }

    /// The state at rest (errors zero, so `switching` holds its shares at exp(−β cost_i)/Σ; the
    /// shares move with squared errors, which do not enter the linearisation at rest).
    fn rest_groups(&self, x: &[f64]) -> (Vec<f64>, GroupState) {
        let mut history: Vec<f64> = x[..self.lags].iter().rev().copied().collect();
        if history.len() < 2 {
            history.insert(0, history[0]);
        }
        let mut state = self.start();
        for (j, &i) in self.carriers.iter().enumerate() {
            state.previous[i] = Some(x[self.lags + j]);
        }
        (history, state)
    }

    /// The planting-equivalent price at rest when every past price is `p` (the rational group
    /// forecasts `p`, the steady state's price).
    pub fn planting_at_rest(&self, p: f64, supply: &Curve, floor: Option<f64>) -> f64 {
        let x = self.rest_state(p);
        let (history, mut state) = self.rest_groups(&x);
        self.season(&mut state, &history, supply, floor, |_| p)
            .unwrap_or(f64::NAN)
    }

    /// x ↦ F(x) for the stability map and the long runs: one season with the clearing `price`
    /// (planting-equivalent price → producer price), shares at rest. Returns the
    /// planting-equivalent price (NaN in `out` when the season cannot be planted).
    pub fn apply(
        &self,
        x: &[f64],
        out: &mut [f64],
        supply: &Curve,
        floor: Option<f64>,
        price: &dyn Fn(f64) -> f64,
    ) -> f64 {
        let (history, mut state) = self.rest_groups(x);
        let Some(pbar) = self.season(&mut state, &history, supply, floor, price) else {
            out.iter_mut().for_each(|o| *o = f64::NAN);
            return f64::NAN;
        };
        let p = price(pbar);
        out[0] = p;
        out[1..self.lags].copy_from_slice(&x[..self.lags - 1]);
        let after = [p, p];
        for (j, &i) in self.carriers.iter().enumerate() {
            // the group's expectation for the next season, from this season's price
            out[self.lags + j] = self.members[i].expect(&ExpectationInput {
                history: &after,
                previous: Some(state.forecasts[i]),
                season: 0,
            });
        }
        pbar
    }

    /// The groups in words, e.g. `50 % rational, 50 % naive` or `rational (cost 1), naive (cost 0)`.
    pub fn listing(&self) -> String {
        let parts: Vec<String> = self
            .forms
            .iter()
            .zip(&self.numbers)
            .map(|(form, n)| match self.shares {
                ShareRule::Fixed => format!("{} % {form}", super::g6(100.0 * n)),
                ShareRule::Switching { .. } => format!("{form} (cost {})", super::g(*n)),
            })
            .collect();
        parts.join(", ")
    }
}

impl ExpectationRule for Groups {
    fn lags(&self) -> usize {
        self.members.iter().map(|m| m.lags()).max().unwrap_or(1)
    }
    /// A single number only where one is asked of the rule outside the engine and the stability
    /// map (which plant Σ n_i S(P^e_i) through [`Groups::season`]): the shares' mean of the
    /// non-rational groups' forecasts at the shares of no errors, the rational group's taken as
    /// the last price.
    fn expect(&self, input: &ExpectationInput) -> f64 {
        let mut shares = vec![0.0; self.members.len()];
        self.shares_at(&vec![0.0; self.members.len()], &mut shares);
        self.members
            .iter()
            .zip(&shares)
            .map(|(m, n)| {
                let e = if m.is_rational() {
                    input.lag(1)
                } else {
                    m.expect(&ExpectationInput {
                        history: input.history,
                        previous: input.previous,
                        season: input.season,
                    })
                };
                n * e
            })
            .sum()
    }
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> StateLayout {
        StateLayout::Groups(self.state_dim())
    }
    fn rests_anywhere(&self) -> bool {
        self.members.iter().all(|m| m.rests_anywhere())
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    fn conditions(&self, slopes: &super::conditions::Slopes) -> Vec<super::PublishedCondition> {
        super::mixed::conditions(self, slopes)
    }
    /// In words, each group's rule described by itself: `mixed: 50 % rational, 50 % adaptive
    /// (weight 0.6)`; `switching between rational (cost 1) and naive (cost 0), intensity 2,
    /// memory 0.5`.
    fn describe(&self) -> String {
        let rules: Vec<String> = self.members.iter().map(|m| m.describe()).collect();
        match self.shares {
            ShareRule::Fixed => {
                let parts: Vec<String> = rules
                    .iter()
                    .zip(&self.numbers)
                    .map(|(rule, n)| format!("{} % {rule}", super::g6(100.0 * n)))
                    .collect();
                format!("{}: {}", self.name, parts.join(", "))
            }
            ShareRule::Switching { intensity, memory } => {
                let parts: Vec<String> = rules
                    .iter()
                    .zip(&self.numbers)
                    .map(|(rule, cost)| format!("{rule} (cost {})", super::g(*cost)))
                    .collect();
                let (last, first) = parts.split_last().map_or(("", &[][..]), |(l, f)| (l, f));
                format!(
                    "{} between {} and {last}, intensity {}, memory {}",
                    self.name,
                    first.join(", "),
                    super::g(intensity),
                    super::g(memory)
                )
            }
        }
    }
    fn setting(&self) -> Option<String> {
        Some(match self.shares {
            ShareRule::Fixed => self.listing(),
            ShareRule::Switching { intensity, memory } => format!(
                "intensity {}, memory {}; {}",
                super::g6(intensity),
                super::g6(memory),
                self.listing()
            ),
        })
    }
    fn groups(&self) -> Option<&Groups> {
        Some(self)
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

/// The values of a section with groups.
pub(crate) fn values_with(set: &'static GroupSet) -> Values {
    Values::new().with_groups(set)
}

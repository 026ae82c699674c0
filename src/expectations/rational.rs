//! `rule = "rational"`: farmers expect what the model itself predicts (Muth 1961). The engine solves
//! the expectation (`engine::rational`); everything else the program knows of the rule is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::InputError;

/// The registration of `rule = "rational"` (no keys of its own).
pub const RULE: Registration = Registration {
    name: "rational",
    keys: &[],
    read,
    build,
    starting: &[],
    main_key: None,
    short_form: "",
    examples: &["[expectations]\nrule = \"rational\"\n"],
};

fn read(_: &Reader) -> Result<Values, InputError> {
    Ok(Values::new())
}

fn build(_: &Values) -> Box<dyn ExpectationRule> {
    Box::new(Rational)
}

/// Rational expectations (Muth 1961): P^e_t = E_{t−1}[producer price in t] under the model itself.
/// The engine solves the fixed point; `expect` returns the naive value only as a starting guess.
#[derive(Debug, Clone, Copy)]
pub struct Rational;

impl ExpectationRule for Rational {
    fn lags(&self) -> usize {
        1
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    /// Linearised as the naive map's state (the model solves the expectation itself; the map
    /// serves the regimes' fixed points).
    fn layout(&self) -> StateLayout {
        StateLayout::Lags(vec![1.0])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        Some(
            "rational expectations: without shocks the perfect-foresight market sits at its steady \
             state from period 1, so every regime reports the eigenvalue 0",
        )
    }
    /// None: the market does not move away from its steady state.
    fn conditions(&self, _: &Slopes) -> Vec<PublishedCondition> {
        Vec::new()
    }
    fn describe(&self) -> String {
        "rational".into()
    }
    fn setting(&self) -> Option<String> {
        None
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        input.lag(1)
    }
    fn is_rational(&self) -> bool {
        true
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

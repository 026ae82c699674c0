//! Expectation rules: how farmers form the price they plant on.
//!
//! Each rule is one small type implementing [`ExpectationRule`]; [`build`] is the only registration
//! point. Rules read the producer-price history (newest last, padded with P_0 before period 1) and the
//! rule's own previous expectation. The rational rule is special: its value comes from the model itself,
//! so the engine solves it (see `engine::rational`); here it only declares itself.

mod adaptive;
mod extrapolative;
mod naive;
mod normal_price;
mod rational;
mod trailing_mean;

pub use adaptive::Adaptive;
pub use extrapolative::Extrapolative;
pub use naive::Naive;
pub use normal_price::NormalPriceRule;
pub use rational::Rational;
pub use trailing_mean::TrailingMean;

use crate::scenario::ExpectationSpec;

/// What a rule sees when it forms the expectation for period t.
#[derive(Debug, Clone, Copy)]
pub struct ExpectationInput<'a> {
    /// Producer prices up to P_{t−1}, newest last (at least [`ExpectationRule::lags`] entries).
    pub history: &'a [f64],
    /// The rule's own expectation for period t−1 (`None` in period 1).
    pub previous: Option<f64>,
}

impl ExpectationInput<'_> {
    /// P_{t−k} for k ≥ 1.
    #[inline]
    pub fn lag(&self, k: usize) -> f64 {
        self.history[self.history.len() - k]
    }
}

/// The shape of a rule's state in the stability analysis (`stability::statespace`).
#[derive(Debug, Clone, PartialEq)]
pub enum Layout {
    /// The k last producer prices (newest first); the expectation is Σ w_i P_{t−i} (+ a constant).
    Lags(Vec<f64>),
    /// The rule's own expectation (adaptive, weight λ).
    Expectation(f64),
}

/// One way of forming price expectations: everything the program needs of it. No method has a
/// default: a new rule states each one.
pub trait ExpectationRule: Send + Sync + std::fmt::Debug {
    /// How many past prices the rule reads (history is padded to at least this many).
    fn lags(&self) -> usize;
    /// The expected producer price for period t.
    fn expect(&self, input: &ExpectationInput) -> f64;
    /// True for the rational rule, whose value the engine solves from the model.
    fn is_rational(&self) -> bool;
    /// The rule as adaptive expectations, when it is that rule (lets the engine call it directly
    /// instead of through the trait object; the value is the same).
    fn as_adaptive(&self) -> Option<Adaptive>;
    /// Its state in the stability analysis, with the weights of the linear rules.
    fn layout(&self) -> Layout;
    /// True when a rule whose past prices all equal p expects p, for every p (then the free steady
    /// state is where the curves cross; otherwise stability solves the rule's own fixed point).
    fn rests_anywhere(&self) -> bool;
    /// The rule with its parameters, in words (e.g. `adaptive (weight 0.33)`).
    fn describe(&self) -> String;
}

/// A parameter as the descriptions print it.
pub(crate) fn g(x: f64) -> String {
    crate::output::fmt_num(x, 3)
}

/// Builds the rule a validated spec describes (the single registration point for rules).
pub fn build(spec: &ExpectationSpec) -> Box<dyn ExpectationRule> {
    match *spec {
        ExpectationSpec::Naive => Box::new(Naive),
        ExpectationSpec::Adaptive {
            weight,
            initial_expected_price,
        } => Box::new(Adaptive {
            weight,
            initial_expected_price,
        }),
        ExpectationSpec::NormalPrice { weight, normal } => {
            Box::new(NormalPriceRule { weight, normal })
        }
        ExpectationSpec::Extrapolative { weight } => Box::new(Extrapolative { weight }),
        ExpectationSpec::TrailingMean { window } => Box::new(TrailingMean { window }),
        ExpectationSpec::Rational => Box::new(Rational),
    }
}

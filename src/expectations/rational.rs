use super::{Adaptive, ExpectationInput, ExpectationRule, Layout};

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
    /// Linearised as the naive map's state (the model solves the expectation itself).
    fn layout(&self) -> Layout {
        Layout::Lags(vec![1.0])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn describe(&self) -> String {
        "rational".into()
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        input.lag(1)
    }
    fn is_rational(&self) -> bool {
        true
    }
}

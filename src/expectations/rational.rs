use super::{ExpectationInput, ExpectationRule};

/// Rational expectations (Muth 1961): P^e_t = E_{t−1}[producer price in t] under the model itself.
/// The engine solves the fixed point; `expect` returns the naive value only as a starting guess.
#[derive(Debug, Clone, Copy)]
pub struct Rational;

impl ExpectationRule for Rational {
    fn name(&self) -> &'static str {
        "rational"
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        input.lag(1)
    }
    fn is_rational(&self) -> bool {
        true
    }
}

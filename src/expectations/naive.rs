use super::{ExpectationInput, ExpectationRule};

/// Naive expectations: P^e_t = P_{t−1} (the classic cobweb).
#[derive(Debug, Clone, Copy)]
pub struct Naive;

impl ExpectationRule for Naive {
    fn name(&self) -> &'static str {
        "naive"
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        input.lag(1)
    }
}

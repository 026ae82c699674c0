use super::{ExpectationInput, ExpectationRule};

/// Adaptive expectations (Nerlove 1958): P^e_t = P^e_{t−1} + λ (P_{t−1} − P^e_{t−1}), with
/// P^e_1 = `initial_expected_price` (default P_0).
#[derive(Debug, Clone, Copy)]
pub struct Adaptive {
    /// λ in (0, 1].
    pub weight: f64,
    /// P^e_1; `None` means P_0.
    pub initial_expected_price: Option<f64>,
}

impl ExpectationRule for Adaptive {
    fn name(&self) -> &'static str {
        "adaptive"
    }
    #[inline]
    fn expect(&self, input: &ExpectationInput) -> f64 {
        match input.previous {
            None => self.initial_expected_price.unwrap_or(input.lag(1)),
            Some(prev) => prev + self.weight * (input.lag(1) - prev),
        }
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        Some(*self)
    }
}

use super::{g, ExpectationInput, ExpectationRule, Layout};

/// Adaptive expectations (Nerlove 1958): P^e_t = P^e_{t−1} + λ (P_{t−1} − P^e_{t−1}), with
/// P^e_1 = `initial_expected_price` (default P_0).
#[derive(Debug, Clone, Copy)]
pub struct Adaptive {
    /// λ in (0, 1].
    pub weight: f64,
    /// P^e_1; `None` means P_0.
    pub initial_expected_price: Option<f64>,
}

impl Adaptive {
    /// The expectation given the previous one (`None` in period 1) and the last price P_{t−1}.
    #[inline]
    pub fn next(&self, previous: Option<f64>, last: f64) -> f64 {
        match previous {
            None => self.initial_expected_price.unwrap_or(last),
            Some(prev) => prev + self.weight * (last - prev),
        }
    }
}

impl ExpectationRule for Adaptive {
    fn lags(&self) -> usize {
        1
    }
    fn is_rational(&self) -> bool {
        false
    }
    fn layout(&self) -> Layout {
        Layout::Expectation(self.weight)
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn describe(&self) -> String {
        match self.initial_expected_price {
            Some(p) => format!("adaptive (weight {}, initial {})", g(self.weight), g(p)),
            None => format!("adaptive (weight {})", g(self.weight)),
        }
    }
    #[inline]
    fn expect(&self, input: &ExpectationInput) -> f64 {
        self.next(input.previous, input.lag(1))
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        Some(*self)
    }
}

use super::{g, Adaptive, ExpectationInput, ExpectationRule, Layout};

/// Extrapolative expectations (Goodwin 1947): P^e_t = P_{t−1} + ρ (P_{t−1} − P_{t−2}).
#[derive(Debug, Clone, Copy)]
pub struct Extrapolative {
    /// ρ in (−1, 1).
    pub weight: f64,
}

impl ExpectationRule for Extrapolative {
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> Layout {
        Layout::Lags(vec![1.0 + self.weight, -self.weight])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn describe(&self) -> String {
        format!("extrapolative (weight {})", g(self.weight))
    }
    fn lags(&self) -> usize {
        2
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        let (p1, p2) = (input.lag(1), input.lag(2));
        p1 + self.weight * (p1 - p2)
    }
}

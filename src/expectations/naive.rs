use super::{Adaptive, ExpectationInput, ExpectationRule, Layout};

/// Naive expectations: P^e_t = P_{t−1} (the classic cobweb).
#[derive(Debug, Clone, Copy)]
pub struct Naive;

impl ExpectationRule for Naive {
    fn lags(&self) -> usize {
        1
    }
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> Layout {
        Layout::Lags(vec![1.0])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn describe(&self) -> String {
        "naive".into()
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        input.lag(1)
    }
}

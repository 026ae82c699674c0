use super::{Adaptive, ExpectationInput, ExpectationRule, Layout};

/// Trailing-mean expectations: P^e_t = mean(P_{t−1}, …, P_{t−k}).
#[derive(Debug, Clone, Copy)]
pub struct TrailingMean {
    /// k ≥ 1.
    pub window: usize,
}

/// Mean of the last `k` entries of `history` (which holds at least `k`).
pub(crate) fn mean_of_last(history: &[f64], k: usize) -> f64 {
    let tail = &history[history.len() - k..];
    tail.iter().sum::<f64>() / k as f64
}

impl ExpectationRule for TrailingMean {
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> Layout {
        Layout::Lags(vec![1.0 / self.window as f64; self.window])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn describe(&self) -> String {
        format!("trailing-mean (window {})", self.window)
    }
    fn lags(&self) -> usize {
        self.window
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        mean_of_last(input.history, self.window)
    }
}

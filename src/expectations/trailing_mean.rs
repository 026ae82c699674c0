use super::{ExpectationInput, ExpectationRule};

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
    fn name(&self) -> &'static str {
        "trailing-mean"
    }
    fn lags(&self) -> usize {
        self.window
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        mean_of_last(input.history, self.window)
    }
}

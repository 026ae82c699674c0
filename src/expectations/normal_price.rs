use super::{ExpectationInput, ExpectationRule};
use crate::scenario::NormalPrice;

/// Normal-price expectations: P^e_t = P_{t−1} + η (N_t − P_{t−1}), with N_t fixed or the mean of the
/// last `window` producer prices.
#[derive(Debug, Clone, Copy)]
pub struct NormalPriceRule {
    /// η in [0, 1].
    pub weight: f64,
    /// How N_t is formed.
    pub normal: NormalPrice,
}

impl ExpectationRule for NormalPriceRule {
    fn name(&self) -> &'static str {
        "normal-price"
    }
    fn lags(&self) -> usize {
        match self.normal {
            NormalPrice::Fixed(_) => 1,
            NormalPrice::Window(w) => w,
        }
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        let last = input.lag(1);
        let normal = match self.normal {
            NormalPrice::Fixed(n) => n,
            NormalPrice::Window(w) => super::trailing_mean::mean_of_last(input.history, w),
        };
        last + self.weight * (normal - last)
    }
}

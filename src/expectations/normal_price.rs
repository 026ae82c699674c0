use super::{g, Adaptive, ExpectationInput, ExpectationRule, Layout};
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
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> Layout {
        match self.normal {
            NormalPrice::Fixed(_) => Layout::Lags(vec![1.0 - self.weight]),
            NormalPrice::Window(k) => {
                let mut w = vec![self.weight / k as f64; k];
                w[0] += 1.0 - self.weight;
                Layout::Lags(w)
            }
        }
    }
    /// A fixed normal price pulls the expectation toward N: at rest at p it expects p only at N.
    fn rests_anywhere(&self) -> bool {
        matches!(self.normal, NormalPrice::Window(_))
    }
    fn describe(&self) -> String {
        match self.normal {
            NormalPrice::Fixed(n) => {
                format!("normal-price (weight {}, normal {})", g(self.weight), g(n))
            }
            NormalPrice::Window(w) => {
                format!("normal-price (weight {}, window {w})", g(self.weight))
            }
        }
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

use super::PolicyRule;

/// A support price paid as a deficiency payment: the market clears freely and the treasury pays
/// (F − P_t)·Q_t whenever P_t < F, so producers receive max(P_t, F).
#[derive(Debug, Clone, Copy)]
pub struct DeficiencyPayment {
    /// Floor price F.
    pub price: f64,
    /// Farmers plant on max(expectation, F).
    pub announced: bool,
}

impl PolicyRule for DeficiencyPayment {
    fn name(&self) -> &'static str {
        "deficiency-payment"
    }
    fn planting_floor(&self) -> Option<f64> {
        self.announced.then_some(self.price)
    }
    fn pays_producers(&self) -> bool {
        true
    }
    fn producer_price(&self, market_price: f64) -> f64 {
        market_price.max(self.price)
    }
    fn payment(&self, market_price: f64, harvest: f64) -> f64 {
        if market_price < self.price {
            (self.price - market_price) * harvest
        } else {
            0.0
        }
    }
}

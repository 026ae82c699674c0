use super::{flags, Clearing, PolicyRule};

/// A support price defended by public purchase: the agency buys everything offered at the floor
/// (within the store's capacity and the purchase budget), so the market price cannot fall below it.
#[derive(Debug, Clone, Copy)]
pub struct FloorPurchase {
    /// Floor price F.
    pub price: f64,
    /// Farmers plant on max(expectation, F).
    pub announced: bool,
}

impl PolicyRule for FloorPurchase {
    fn name(&self) -> &'static str {
        "floor-purchase"
    }
    fn planting_floor(&self) -> Option<f64> {
        self.announced.then_some(self.price)
    }
    fn trades_stock(&self) -> bool {
        true
    }
    fn trade(&self, market: &mut Clearing) {
        market.buy_to(self.price, flags::FLOOR_BUY);
    }
}

use super::{flags, BandStock, Clearing, PolicyRule};

/// A reserve with a target level: it defends the band first; in periods when the price is inside the
/// band it moves the stock toward `target` by `speed` × (target − carried stock), never pushing the
/// price outside the band.
#[derive(Debug, Clone, Copy)]
pub struct TargetStock {
    /// The band defended first.
    pub band: BandStock,
    /// Target stock S*.
    pub target: f64,
    /// Share of the gap closed per period, in (0, 1].
    pub speed: f64,
}

impl PolicyRule for TargetStock {
    fn name(&self) -> &'static str {
        "stock-target"
    }
    fn trades_stock(&self) -> bool {
        true
    }
    fn trade(&self, market: &mut Clearing) {
        if self.band.defend(market) {
            return;
        }
        let gap = self.speed * (self.target - market.carried);
        if gap > 0.0 {
            market.buy_at_most(gap, self.band.sell_above, flags::TARGET);
        } else if gap < 0.0 {
            market.sell_at_most(-gap, self.band.buy_below, flags::TARGET);
        }
    }
}

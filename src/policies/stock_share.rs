use super::{flags, BandStock, Clearing, PolicyRule};

/// A drawdown reserve (`release = "drawdown"`, formerly "share"): it defends the band first; unless
/// it had to buy, it releases `share` of the carried stock each period (counting band sales), never
/// pushing the price below `buy_below`. The stock runs down: this is not a rotation (see
/// `release = "rotate"`).
#[derive(Debug, Clone, Copy)]
pub struct ShareStock {
    /// The band defended first.
    pub band: BandStock,
    /// Share of the stock released per period, in (0, 1].
    pub share: f64,
}

impl PolicyRule for ShareStock {
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    pays_nothing!();
    fn trades_stock(&self) -> bool {
        true
    }
    #[inline(always)]
    fn trade(&self, market: &mut Clearing) {
        self.band.defend(market);
        if market.purchases > 0.0 {
            return;
        }
        let more = self.share * market.carried - market.releases;
        if more > 0.0 {
            market.sell_at_most(more, self.band.buy_below, flags::ROTATION);
        }
    }
    fn as_band(&self) -> Option<BandStock> {
        None
    }
}

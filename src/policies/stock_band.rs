use super::lanes::{LaneAct, LaneMarket, LaneTerms, LaneTrade};
use super::{flags, Clearing, PolicyRule};

/// A buffer stock on a price band: buys while the price would fall below `buy_below`, sells while it
/// would rise above `sell_above` (as far as capacity, budget and stock allow).
#[derive(Debug, Clone, Copy)]
pub struct BandStock {
    /// Lower edge of the band.
    pub buy_below: f64,
    /// Upper edge of the band.
    pub sell_above: f64,
}

impl BandStock {
    /// Defends the band; returns true when the price was outside it (the agency acted or tried to).
    #[inline(always)]
    pub fn defend(&self, market: &mut Clearing) -> bool {
        let p = market.price();
        if p < self.buy_below {
            market.buy_to(self.buy_below, flags::BAND_BUY);
            true
        } else if p > self.sell_above {
            market.sell_to(self.sell_above, flags::BAND_SELL);
            true
        } else {
            false
        }
    }

    /// [`BandStock::defend`] on one lane of [`super::lanes::LinearLanes`]: the same trades, without
    /// branches.
    #[inline(always)]
    pub fn defend_lane(&self, terms: &LaneTerms, market: &mut LaneMarket) -> bool {
        let p = market.price(terms);
        let below = p < self.buy_below;
        let above = !below & (p > self.sell_above);
        market.buy_to(terms, below, self.buy_below, flags::BAND_BUY);
        market.sell_to(terms, above, self.sell_above, flags::BAND_SELL);
        below | above
    }
}

impl LaneAct for BandStock {
    #[inline(always)]
    fn act(&self, terms: &LaneTerms, m: &mut LaneMarket) {
        self.defend_lane(terms, m);
    }
}

impl PolicyRule for BandStock {
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    pays_nothing!();
    fn trades_stock(&self) -> bool {
        true
    }
    #[inline(always)]
    fn trade(&self, market: &mut Clearing) {
        self.defend(market);
    }
    fn as_band(&self) -> Option<BandStock> {
        Some(*self)
    }
    fn lanes(&self) -> Option<&dyn LaneTrade> {
        Some(self)
    }
}

use super::lanes::{LaneAct, LaneMarket, LaneTerms, LaneTrade};
use super::{flags, BandStock, Clearing, PolicyRule};

/// A reserve with a target level. It defends the band first; in periods when the price is inside the
/// band it moves the stock toward `target` by `speed` × (target − carried stock). Rebuilding purchases
/// never lift the price above the middle of the band, and run-down sales never push it below the
/// middle, so the reserve restocks in cheap seasons and draws down in dear ones.
#[derive(Debug, Clone, Copy)]
pub struct TargetStock {
    /// The band defended first.
    pub band: BandStock,
    /// Target stock S*.
    pub target: f64,
    /// Share of the gap closed per period, in (0, 1].
    pub speed: f64,
}

impl TargetStock {
    /// The middle of the band (the upper edge alone is infinite when no `sell_above` is set).
    #[inline(always)]
    fn middle(&self) -> f64 {
        if self.band.sell_above.is_finite() {
            0.5 * (self.band.buy_below + self.band.sell_above)
        } else {
            f64::INFINITY
        }
    }
}

impl PolicyRule for TargetStock {
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    pays_nothing!();
    fn trades_stock(&self) -> bool {
        true
    }
    #[inline(always)]
    fn trade(&self, market: &mut Clearing) {
        if self.band.defend(market) {
            return;
        }
        let gap = self.speed * (self.target - market.carried);
        let middle = self.middle();
        if gap > 0.0 {
            market.buy_at_most(gap, middle, flags::TARGET);
        } else if gap < 0.0 {
            market.sell_at_most(-gap, middle.min(self.band.sell_above), flags::TARGET);
        }
    }
    fn as_band(&self) -> Option<BandStock> {
        None
    }
    fn lanes(&self) -> Option<&dyn LaneTrade> {
        Some(self)
    }
}

impl LaneAct for TargetStock {
    /// [`PolicyRule::trade`] on one lane, without branches.
    #[inline(always)]
    fn act(&self, terms: &LaneTerms, m: &mut LaneMarket) {
        let outside = self.band.defend_lane(terms, m);
        let gap = self.speed * (self.target - m.carried);
        let middle = self.middle();
        m.buy_at_most(terms, !outside & (gap > 0.0), gap, middle, flags::TARGET);
        let down = !outside & (gap < 0.0);
        let not_below = middle.min(self.band.sell_above);
        m.sell_at_most(terms, down, -gap, not_below, flags::TARGET);
    }
}

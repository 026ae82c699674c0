//! The closed market of many lanes at once, for the actions that have a lane form
//! ([`LaneTrade`]): a buffer-stock band, a floor by purchase, a reserve with a target.
//!
//! [`Clearing`](super::Clearing) is the definition of every trade; a lane here does the same
//! operations in the same order, written without branches (each step computed on every lane and
//! kept where the scalar market would have taken it), so that a loop over the lanes is straight
//! arithmetic the compiler keeps in vector registers. It covers what the scalar market does on a
//! closed market with a linear demand curve and no purchase budget; the engine uses it only then
//! (`engine::lanes`), and `tests/lanes.rs` holds every lane to the scalar step bit for bit.

// `!(x <= y)` on purpose: the scalar market returns early when `x <= y`, so a NaN goes on there,
// and it must go on here too
#![allow(clippy::neg_cmp_op_on_partial_ord)]

use super::clearing::accumulate;
use super::{flags, MarketColumns};
use crate::curves::{Form, Linear};
use crate::numeric::{simd_copies, Simd};

/// One lane's market while actions trade on it (the fields of [`super::Clearing`] a closed
/// market without a budget reads).
#[derive(Debug, Clone, Copy)]
pub struct LaneMarket {
    /// Harvest Q_t.
    pub harvest: f64,
    /// Additive demand shock.
    pub shift: f64,
    /// Stock carried in, after losses.
    pub carried: f64,
    /// The price before any trade, D⁻¹(Q − shift).
    pub untraded: f64,
    /// Purchases X_t so far.
    pub purchases: f64,
    /// Releases R_t so far.
    pub releases: f64,
    /// What acted (see [`flags`]).
    pub flags: u16,
}

/// The market every lane shares: its linear demand curve and the agency's capacity.
#[derive(Debug, Clone, Copy)]
pub struct LaneTerms {
    /// Demand curve.
    pub demand: Linear,
    /// Storage capacity.
    pub capacity: f64,
}

/// `bits` where `on` holds, else nothing (a flag set without a branch).
#[inline(always)]
fn bits_if(on: bool, bits: u16) -> u16 {
    (on as u16).wrapping_neg() & bits
}

impl LaneMarket {
    /// A lane's market before any trade.
    #[inline(always)]
    pub fn new(terms: &LaneTerms, harvest: f64, shift: f64, carried: f64) -> LaneMarket {
        LaneMarket {
            harvest,
            shift,
            carried,
            untraded: terms.demand.price_at(harvest - shift),
            purchases: 0.0,
            releases: 0.0,
            flags: 0,
        }
    }

    /// Q − X + R, each zero trade left out as [`super::Clearing::consumption`] leaves it.
    #[inline(always)]
    pub fn consumption(&self) -> f64 {
        let c = if self.purchases == 0.0 {
            self.harvest
        } else {
            self.harvest - self.purchases
        };
        if self.releases == 0.0 {
            c
        } else {
            c + self.releases
        }
    }

    /// The clearing price ([`super::Clearing::price`] on a closed market).
    #[inline(always)]
    pub fn price(&self, terms: &LaneTerms) -> f64 {
        let traded = terms.demand.price_at(self.consumption() - self.shift);
        // `&`, not `&&`: both tests on every lane, no branch
        if (self.purchases == 0.0) & (self.releases == 0.0) {
            self.untraded
        } else {
            traded
        }
    }

    /// End-of-period stock carried + X − R.
    #[inline(always)]
    pub fn stock(&self) -> f64 {
        self.carried + self.purchases - self.releases
    }

    /// What consumers take at `p` (the most left in the market with the price at least `p`, and
    /// the least with the price at most `p`, on a closed market).
    #[inline(always)]
    fn demanded_at(&self, terms: &LaneTerms, p: f64) -> f64 {
        terms.demand.unclamped(p) + self.shift
    }

    /// The smallest trade that counts ([`super::Clearing::buy_to`]'s).
    #[inline(always)]
    fn tolerance(&self) -> f64 {
        1e-12 * self.harvest.max(1.0)
    }

    /// [`super::Clearing::buy_to`] where `act` holds.
    #[inline(always)]
    pub fn buy_to(&mut self, terms: &LaneTerms, act: bool, target: f64, acted: u16) {
        let excess = self.consumption() - self.demanded_at(terms, target);
        let act = act & !(excess <= self.tolerance());
        self.buy(terms, act, excess, acted);
    }

    /// [`super::Clearing::buy_at_most`] where `act` holds.
    #[inline(always)]
    pub fn buy_at_most(
        &mut self,
        terms: &LaneTerms,
        act: bool,
        want: f64,
        not_above: f64,
        acted: u16,
    ) {
        let room = (self.consumption() - self.demanded_at(terms, not_above)).max(0.0);
        self.buy(terms, act, want.min(room), acted);
    }

    /// [`super::Clearing::buy`] without a budget, where `act` holds.
    #[inline(always)]
    fn buy(&mut self, terms: &LaneTerms, act: bool, want: f64, acted: u16) {
        let act = act & !(want <= 0.0);
        let room = (terms.capacity - self.stock()).max(0.0);
        let full = want > room;
        let amount = if full { room } else { want };
        self.flags |= bits_if(act & full, flags::CAPACITY_FULL);
        let unbounded = !amount.is_finite();
        self.flags |= bits_if(act & unbounded, flags::UNBOUNDED);
        let act = act & !unbounded & !(amount <= 0.0);
        let bought = accumulate(self.purchases, amount);
        self.purchases = if act { bought } else { self.purchases };
        self.flags |= bits_if(act, acted);
    }

    /// [`super::Clearing::sell_to`] where `act` holds.
    #[inline(always)]
    pub fn sell_to(&mut self, terms: &LaneTerms, act: bool, target: f64, acted: u16) {
        let shortfall = self.demanded_at(terms, target) - self.consumption();
        let act = act & !(shortfall <= self.tolerance());
        let sold = self.sell(act, shortfall, acted);
        self.flags |= bits_if(act & (sold < shortfall), flags::STOCK_OUT);
    }

    /// [`super::Clearing::sell_at_most`] where `act` holds.
    #[inline(always)]
    pub fn sell_at_most(
        &mut self,
        terms: &LaneTerms,
        act: bool,
        want: f64,
        not_below: f64,
        acted: u16,
    ) {
        let room = (self.demanded_at(terms, not_below) - self.consumption()).max(0.0);
        self.sell(act, want.min(room), acted);
    }

    /// [`super::Clearing::sell`] where `act` holds; the amount sold (0 where `act` does not hold
    /// or nothing is sold).
    #[inline(always)]
    fn sell(&mut self, act: bool, want: f64, acted: u16) -> f64 {
        let amount = want.min(self.stock().max(0.0));
        let act = act & !(amount <= 0.0);
        let sold = accumulate(self.releases, amount);
        self.releases = if act { sold } else { self.releases };
        self.flags |= bits_if(act, acted);
        if act {
            amount
        } else {
            0.0
        }
    }
}

/// The markets of a set of lanes on a linear demand curve, column by column, while actions trade
/// on them: `columns.price` holds each lane's price before any trade from
/// [`LinearLanes::start`] on, and its clearing price after [`LinearLanes::finish`].
#[derive(Debug)]
pub struct LinearLanes<'a> {
    /// The market every lane shares.
    pub terms: LaneTerms,
    /// The lanes' markets.
    pub columns: MarketColumns<'a>,
    /// The copy of the loops the lanes run (one the CPU runs: [`LinearLanes::new`]; the same
    /// operations in each, so the same bits).
    simd: Simd,
}

impl<'a> LinearLanes<'a> {
    /// The lanes `columns` on `terms`; the loops run the copy `simd` names, or the widest the CPU
    /// runs below it ([`Simd::at_most`]).
    pub fn new(terms: LaneTerms, columns: MarketColumns<'a>, simd: Simd) -> LinearLanes<'a> {
        LinearLanes {
            terms,
            columns,
            simd: simd.at_most(),
        }
    }

    /// The copy of the loops the lanes run.
    pub fn simd(&self) -> Simd {
        self.simd
    }
}

impl LinearLanes<'_> {
    /// Every lane's market before any trade (its price before any trade in `price`).
    pub fn start(&mut self) {
        self.pass(&Start);
    }

    /// `trade` on every lane's market, in one loop over the lanes.
    pub fn each<A: LaneAct>(&mut self, trade: &A) {
        self.pass(&Trade(trade));
    }

    /// Every lane's clearing price and end-of-period stock once the actions are done.
    pub fn finish(&mut self) {
        self.pass(&Finish);
    }

    /// [`LinearLanes::start`], `trade` on every lane's market and [`LinearLanes::finish`] in one
    /// loop over the lanes (each lane's market stays in registers between them; the same
    /// operations on the same values, so the same bits as the three loops).
    pub fn clear_with<A: LaneAct>(&mut self, trade: &A) {
        self.pass(&Whole(trade));
    }

    /// [`LinearLanes::start`] and [`LinearLanes::finish`] in one loop: every lane's market
    /// cleared without any trade.
    pub fn clear_untraded(&mut self) {
        self.pass(&Whole(&NoTrade));
    }

    /// One loop over the lanes doing `pass` on each, in the copy `simd` names. The columns go
    /// to the loop as arguments, cut to one length, so that the compiler knows them apart and
    /// indexes them without bounds checks.
    #[inline(always)]
    fn pass<P: Pass>(&mut self, pass: &P) {
        let m = &mut self.columns;
        let n = m.harvest.len();
        let (h, s, c) = (&m.harvest[..n], &m.shift[..n], &m.carried[..n]);
        let (p, x, r) = (
            &mut m.price[..n],
            &mut m.purchases[..n],
            &mut m.releases[..n],
        );
        let (k, f) = (&mut m.stock[..n], &mut m.flags[..n]);
        // `simd` names a copy the CPU runs (`LinearLanes::new`)
        pass_copies(self.simd, pass, &self.terms, h, s, c, p, x, r, k, f)
    }
}

/// What a loop over the lanes does with each lane's market: [`Start`], [`Trade`], [`Finish`].
trait Pass {
    /// Lane market `m` (as the columns hold it) after this pass, and the price and stock to
    /// write.
    fn lane(&self, terms: &LaneTerms, m: LaneMarket, stock: f64) -> (LaneMarket, f64, f64);
}

/// Every lane's market before any trade.
struct Start;

impl Pass for Start {
    #[inline(always)]
    fn lane(&self, terms: &LaneTerms, m: LaneMarket, stock: f64) -> (LaneMarket, f64, f64) {
        let m = LaneMarket::new(terms, m.harvest, m.shift, m.carried);
        (m, m.untraded, stock)
    }
}

/// An action's trade on every lane.
struct Trade<'t, A>(&'t A);

impl<A: LaneAct> Pass for Trade<'_, A> {
    #[inline(always)]
    fn lane(&self, terms: &LaneTerms, mut m: LaneMarket, stock: f64) -> (LaneMarket, f64, f64) {
        self.0.act(terms, &mut m);
        (m, m.untraded, stock)
    }
}

/// Every lane's clearing price and stock once the actions are done.
struct Finish;

impl Pass for Finish {
    #[inline(always)]
    fn lane(&self, terms: &LaneTerms, m: LaneMarket, _stock: f64) -> (LaneMarket, f64, f64) {
        (m, m.price(terms), m.stock())
    }
}

/// [`Start`], an action's trade and [`Finish`] on each lane's market, in that order.
struct Whole<'t, A>(&'t A);

impl<A: LaneAct> Pass for Whole<'_, A> {
    #[inline(always)]
    fn lane(&self, terms: &LaneTerms, m: LaneMarket, stock: f64) -> (LaneMarket, f64, f64) {
        let (mut m, _, stock) = Start.lane(terms, m, stock);
        self.0.act(terms, &mut m);
        Finish.lane(terms, m, stock)
    }
}

/// No trade at all.
struct NoTrade;

impl LaneAct for NoTrade {
    #[inline(always)]
    fn act(&self, _terms: &LaneTerms, _m: &mut LaneMarket) {}
}

simd_copies! {
    /// One loop over the lanes doing `pass` on each (every column as long as `harvest`), in the
    /// copy the first argument names (inlined in each caller, so the call goes straight to the
    /// copy).
    #[inline(always)]
    fn pass_copies[P: Pass](
        pass: &P,
        terms: &LaneTerms,
        harvest: &[f64],
        shift: &[f64],
        carried: &[f64],
        price: &mut [f64],
        purchases: &mut [f64],
        releases: &mut [f64],
        stock: &mut [f64],
        flags: &mut [u16],
    ) {
        let n = harvest.len();
        let (shift, carried, price) = (&shift[..n], &carried[..n], &mut price[..n]);
        let (purchases, releases) = (&mut purchases[..n], &mut releases[..n]);
        let (stock, flags) = (&mut stock[..n], &mut flags[..n]);
        for l in 0..n {
            let m = LaneMarket {
                harvest: harvest[l],
                shift: shift[l],
                carried: carried[l],
                untraded: price[l],
                purchases: purchases[l],
                releases: releases[l],
                flags: flags[l],
            };
            let (m, p, k) = pass.lane(terms, m, stock[l]);
            price[l] = p;
            purchases[l] = m.purchases;
            releases[l] = m.releases;
            stock[l] = k;
            flags[l] = m.flags;
        }
    }
}

/// An action's trade on one lane of [`LinearLanes`]: the same operations as its
/// [`PolicyRule::trade`](super::PolicyRule::trade), in the same order, without branches
/// (inlined into the loop over the lanes, so write it `#[inline(always)]`).
pub trait LaneAct {
    /// Trades on lane market `m`.
    fn act(&self, terms: &LaneTerms, m: &mut LaneMarket);
}

/// An action's trade over a set of lanes ([`LinearLanes`]); every [`LaneAct`] has it.
pub trait LaneTrade {
    /// Trades on every lane of `lanes`.
    fn trade_lanes(&self, lanes: &mut LinearLanes<'_>);

    /// Clears every lane of `lanes` with this action the only one that trades
    /// ([`LinearLanes::clear_with`]).
    fn clear_lanes(&self, lanes: &mut LinearLanes<'_>);
}

impl<A: LaneAct> LaneTrade for A {
    fn trade_lanes(&self, lanes: &mut LinearLanes<'_>) {
        lanes.each(self);
    }

    fn clear_lanes(&self, lanes: &mut LinearLanes<'_>) {
        lanes.clear_with(self);
    }
}

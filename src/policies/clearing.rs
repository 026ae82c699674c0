//! One period's market under agency trade: the harvest, the agency's stock, and the trades that
//! policy rules make on it. Every trade keeps consumption C = Q − X + R and the stock
//! S = carried + X − R exact by construction; all trades happen at the period's clearing price.
//!
//! On a market that trades ([`Clearing::with_border`]) the agency trades first on the kinked curve
//! of private trade ([`BorderTerms`]): a rule that buys to hold the price up counts what traders
//! export at export parity (an agency buying below export parity never buys: traders export
//! first), a rule that sells to hold the price down counts what they import at import parity; then
//! private trade clears what the agency leaves, C = Q − X + R + M − X_p.

use crate::curves::{Curve, Form};
use crate::trade::{BorderTerms, Traded};

/// Bit flags saying which rule acted and what went wrong in a period.
pub mod flags {
    /// The floor-by-purchase rule bought.
    pub const FLOOR_BUY: u16 = 1;
    /// A deficiency payment was made.
    pub const DEFICIENCY: u16 = 1 << 1;
    /// The stock rule bought on the band.
    pub const BAND_BUY: u16 = 1 << 2;
    /// The stock rule sold on the band.
    pub const BAND_SELL: u16 = 1 << 3;
    /// The target rule moved the stock toward its target.
    pub const TARGET: u16 = 1 << 4;
    /// The drawdown rule (`release = "drawdown"`, formerly "share") released stock.
    pub const ROTATION: u16 = 1 << 5;
    /// The rotation rule sold old grain and bought the same quantity of new grain.
    pub const ROTATE: u16 = 1 << 6;
    /// The ceiling rule sold from the stock.
    pub const CEILING_SELL: u16 = 1 << 7;
    /// Consumers were paid the excess of the price over the ceiling.
    pub const CONSUMER_SUBSIDY: u16 = 1 << 11;
    /// A buy was cut short because the store was full.
    pub const CAPACITY_FULL: u16 = 1 << 8;
    /// A buy was cut short by the purchase budget.
    pub const BUDGET_BOUND: u16 = 1 << 9;
    /// A sale was cut short because the stock ran out.
    pub const STOCK_OUT: u16 = 1 << 10;
    /// A purchase had no bound: the defended price is above import parity and neither capacity
    /// nor budget limits the agency (the engine reports the run as diverging).
    pub const UNBOUNDED: u16 = 1 << 12;
    /// The agency imported at the landed price into its stock and released it (state trading).
    pub const PUBLIC_IMPORT: u16 = 1 << 13;

    /// Names of the "acted" flags, in the order they are printed.
    pub const ACTED_NAMES: &[(u16, &str)] = &[
        (FLOOR_BUY, "floor-buy"),
        (DEFICIENCY, "deficiency"),
        (BAND_BUY, "stock-buy"),
        (BAND_SELL, "stock-sell"),
        (TARGET, "stock-target"),
        (ROTATION, "stock-drawdown"),
        (ROTATE, "stock-rotate"),
        (CEILING_SELL, "ceiling-sell"),
        (CONSUMER_SUBSIDY, "consumer-subsidy"),
        (PUBLIC_IMPORT, "public-import"),
    ];

    /// Names of the warning flags.
    pub const WARNING_NAMES: &[(u16, &str)] = &[
        (CAPACITY_FULL, "capacity-full"),
        (BUDGET_BOUND, "budget-bound"),
        (STOCK_OUT, "stock-out"),
    ];

    /// The "acted" column: rule names joined by `+`, or `none`.
    pub fn describe(bits: u16) -> String {
        let names: Vec<&str> = ACTED_NAMES
            .iter()
            .chain(WARNING_NAMES)
            .filter(|(b, _)| bits & b != 0)
            .map(|(_, n)| *n)
            .collect();
        if names.is_empty() {
            "none".into()
        } else {
            names.join("+")
        }
    }
}

/// The market of one period while the agency trades.
#[derive(Debug, Clone)]
pub struct Clearing<'a> {
    /// Demand curve.
    pub demand: &'a Curve,
    /// Additive demand shock this period (quantity units).
    pub demand_shift: f64,
    /// Harvest Q_t.
    pub harvest: f64,
    /// Agency stock carried in, after losses.
    pub carried: f64,
    /// Storage capacity.
    pub capacity: f64,
    /// Purchase spending allowed this period.
    pub budget: f64,
    /// Purchases X_t so far.
    pub purchases: f64,
    /// Releases R_t so far.
    pub releases: f64,
    /// Public imports Z_t so far: bought abroad at the landed price into the stock (and released
    /// with R_t in the same season; see [`Clearing::import_to`]).
    pub public_imports: f64,
    /// What acted (see [`flags`]).
    pub flags: u16,
    /// The price before any trade, D⁻¹(Q − shift), computed once (rules and the engine ask for it
    /// repeatedly while nothing has been traded).
    untraded_price: f64,
    /// The period's border ([`BorderTerms::CLOSED`] for a closed market) and whether trade can
    /// happen at all (false: every method takes the closed market's arithmetic exactly).
    border: BorderTerms,
    trades: bool,
    /// The quantities demanded at the prices the rules asked about ([`Asked`]).
    asked: Asked,
}

/// How many prices [`Asked`] keeps.
const ASKED: usize = 4;

/// The quantities a constant-elasticity demand curve gave at the last few prices asked about
/// ([`Clearing::buy_to`] and the other trades ask D(p) at the price they defend). A rule defends
/// the same few prices season after season and lane after lane, and each answer is a power;
/// [`ClearLanes`] hands the answers from one lane's market to the next. The same numbers as
/// asking the curve (a linear curve is always asked: its answer costs less than the lookup).
#[derive(Debug, Clone, Copy)]
pub struct Asked {
    /// The prices asked, the latest first.
    prices: [f64; ASKED],
    quantities: [f64; ASKED],
}

impl Default for Asked {
    fn default() -> Asked {
        Asked::NONE
    }
}

impl Asked {
    /// Nothing asked yet (a NaN price is never found).
    pub const NONE: Asked = Asked {
        prices: [f64::NAN; ASKED],
        quantities: [0.0; ASKED],
    };

    /// D(p) without the clamp ([`Curve::quantity_unclamped`]), from the prices asked before when
    /// `p` is one of them (the oldest answer dropped when it is not). Every place is a constant
    /// index, so that a market holding the answers can stay in registers.
    #[inline(always)]
    fn quantity(&mut self, demand: &Curve, p: f64) -> f64 {
        if demand.is_linear() {
            return demand.quantity_unclamped(p);
        }
        for i in 0..ASKED {
            if self.prices[i] == p {
                return self.quantities[i];
            }
        }
        let q = demand.quantity_unclamped(p);
        self.prices.copy_within(..ASKED - 1, 1);
        self.quantities.copy_within(..ASKED - 1, 1);
        self.prices[0] = p;
        self.quantities[0] = q;
        q
    }
}

impl<'a> Clearing<'a> {
    /// A period with no trade yet.
    pub fn new(
        demand: &'a Curve,
        demand_shift: f64,
        harvest: f64,
        carried: f64,
        capacity: f64,
        budget: f64,
    ) -> Self {
        let untraded = demand.price_at(harvest - demand_shift);
        Self::at_untraded_price(
            demand,
            demand_shift,
            harvest,
            carried,
            capacity,
            budget,
            untraded,
        )
    }

    /// [`Clearing::new`] with the price before any trade, D⁻¹(Q − shift), worked out by the
    /// caller (the same number: callers that work out many at once, `engine::rational`).
    pub fn at_untraded_price(
        demand: &'a Curve,
        demand_shift: f64,
        harvest: f64,
        carried: f64,
        capacity: f64,
        budget: f64,
        untraded_price: f64,
    ) -> Self {
        Clearing {
            demand,
            demand_shift,
            harvest,
            carried,
            capacity,
            budget,
            purchases: 0.0,
            releases: 0.0,
            public_imports: 0.0,
            flags: 0,
            untraded_price,
            border: BorderTerms::CLOSED,
            trades: false,
            asked: Asked::NONE,
        }
    }

    /// This market open to private trade on `border` (a closed border leaves it closed).
    #[inline]
    pub fn with_border(mut self, border: BorderTerms) -> Self {
        self.trades = !border.is_closed();
        self.border = border;
        self
    }

    /// This market with the answers `asked` of the demand curve at prices asked before (another
    /// market's on the same curve: [`Clearing::asked`]). A linear curve is always asked, so its
    /// market takes none (and hands on none): nothing to copy.
    #[inline(always)]
    pub fn with_asked(mut self, asked: Asked) -> Self {
        if !self.demand.is_linear() {
            self.asked = asked;
        }
        self
    }

    /// The demand curve's answers this market holds, with those it was asked for.
    #[inline(always)]
    pub fn asked(&self) -> Asked {
        self.asked
    }

    /// The period's border terms ([`BorderTerms::CLOSED`] for a closed market).
    #[inline]
    pub fn border(&self) -> &BorderTerms {
        &self.border
    }

    /// Private trade on what the agency leaves in the market: the clearing price, imports and
    /// exports (no trade and the closed market's price when the market is closed).
    #[inline]
    pub fn traded(&self) -> Traded {
        let supply = self.consumption();
        let untraded = self.price_before_trade(supply);
        if !self.trades {
            return Traded {
                price: untraded,
                imports: 0.0,
                exports: 0.0,
            };
        }
        self.border
            .clear_from(self.demand, self.demand_shift, supply, untraded)
    }

    /// The price at which `supply` (= self.consumption()) clears without private trade.
    #[inline]
    fn price_before_trade(&self, supply: f64) -> f64 {
        if untraded(self.purchases, self.releases) {
            self.untraded_price
        } else {
            self.price_if_consumption(supply)
        }
    }

    /// What the agency leaves in the market, Q − X + R (consumption in a closed market; private
    /// trade adds M − X_p to it in an open one, see [`Clearing::traded`]).
    ///
    /// A zero trade is left out of the sum rather than added: the result is the same number
    /// (Q − 0 = Q exactly, and (Q − X) + 0 = Q − X exactly when X > 0), one or two dependent
    /// additions sooner. Only a harvest of −0 with no trade differs, in the sign of a zero, which
    /// no caller can tell apart (the engine rejects a zero harvest; the trades compare it).
    #[inline]
    pub fn consumption(&self) -> f64 {
        match (self.purchases == 0.0, self.releases == 0.0) {
            (true, true) => self.harvest,
            (false, true) => self.harvest - self.purchases,
            (true, false) => self.harvest + self.releases,
            (false, false) => self.harvest - self.purchases + self.releases,
        }
    }

    /// Clearing price P = D⁻¹(C) of the shifted demand curve (after private trade in an open
    /// market).
    ///
    /// Inlined into every caller: a closed market's price is a comparison or one division, cheaper
    /// than the call; the open market's clearing stays out of line ([`Clearing::traded_price`]).
    #[inline(always)]
    pub fn price(&self) -> f64 {
        if self.trades {
            return self.traded_price();
        }
        if untraded(self.purchases, self.releases) {
            // the same value as below: consumption() is exactly the harvest when nothing is traded
            self.untraded_price
        } else {
            self.price_if_consumption(self.consumption())
        }
    }

    /// The price after private trade on an open market (out of line: [`Clearing::price`] inlines
    /// only the closed market's arithmetic).
    #[inline(never)]
    fn traded_price(&self) -> f64 {
        self.traded().price
    }

    #[inline]
    fn price_if_consumption(&self, c: f64) -> f64 {
        self.demand.price_at(c - self.demand_shift)
    }

    /// Quantity consumers take at price `p`.
    #[inline]
    fn demanded_at(&mut self, p: f64) -> f64 {
        self.asked.quantity(self.demand, p) + self.demand_shift
    }

    /// The most the agency may leave in the market with the price still at least `p`: what
    /// consumers take at `p`, plus exports when traders export at `p` (closed: D(p) + shift).
    #[inline]
    fn most_left_at_least(&mut self, p: f64) -> f64 {
        let demanded = self.demanded_at(p);
        if self.trades {
            self.border.most_supply_given(demanded, p)
        } else {
            demanded
        }
    }

    /// The least the agency must leave in the market for the price to be at most `p`: what
    /// consumers take at `p`, less imports when traders import at `p` (closed: D(p) + shift).
    #[inline]
    fn least_left_at_most(&mut self, p: f64) -> f64 {
        let demanded = self.demanded_at(p);
        if self.trades {
            self.border.least_supply_given(demanded, p)
        } else {
            demanded
        }
    }

    /// End-of-period stock S = carried + X + Z − R (Z the public imports, 0 but under state
    /// trading: the closed market's sum is carried + X − R as it always was).
    #[inline]
    pub fn stock(&self) -> f64 {
        if self.public_imports == 0.0 {
            self.carried + self.purchases - self.releases
        } else {
            self.carried + self.purchases + self.public_imports - self.releases
        }
    }

    /// State trading: while the price (after the agency's domestic trades and private trade)
    /// would be above `trigger`, the agency buys abroad at the landed price
    /// ([`BorderTerms::landed`], no duty) as much as brings the price down to `trigger` — at most
    /// `max`, the store's room and what the purchase budget has left at the landed price — puts it
    /// into its stock (Z) and releases it on the domestic market at once (R). Returns Z.
    ///
    /// On the kinked curve: with the trigger at or above import parity private traders already
    /// hold the price there and the agency never imports (the shortfall is −∞ or ≤ 0); a trigger
    /// below export parity counts as export parity (what the agency brought in below it, traders
    /// would export again).
    pub fn import_to(&mut self, trigger: f64, max: f64, acted: u16) -> f64 {
        if !self.trades {
            return 0.0;
        }
        // never below export parity: traders would export what the agency brings in
        let target = if self.border.export_quota > 0.0 {
            trigger.max(self.border.export_parity)
        } else {
            trigger
        };
        let shortfall = self.least_left_at_most(target) - self.consumption();
        // −∞ (traders import at the trigger) and NaN fail this too
        if shortfall.is_nan() || shortfall <= 1e-12 * self.harvest.max(1.0) {
            return 0.0;
        }
        let mut amount = shortfall.min(max);
        let room = (self.capacity - self.stock()).max(0.0);
        if amount > room {
            amount = room;
            self.flags |= flags::CAPACITY_FULL;
        }
        let landed = self.border.landed;
        if self.budget.is_finite() {
            let spent = if self.purchases > 0.0 {
                self.purchases * self.price()
            } else {
                0.0
            };
            let affordable = ((self.budget - spent) / landed).max(0.0);
            if amount > affordable {
                amount = affordable;
                self.flags |= flags::BUDGET_BOUND;
            }
        }
        if !(amount > 0.0 && amount.is_finite()) {
            return 0.0;
        }
        self.public_imports = accumulate(self.public_imports, amount);
        self.releases = accumulate(self.releases, amount);
        self.flags |= acted;
        amount
    }

    /// Buys until the price reaches `target`, within capacity and budget. Returns the amount bought.
    ///
    /// Inlined into every caller (the band's `defend` among them): out of line, the caller's
    /// market goes to memory and back around the call.
    #[inline(always)]
    pub fn buy_to(&mut self, target: f64, acted: u16) -> f64 {
        let excess = self.consumption() - self.most_left_at_least(target);
        if excess <= 1e-12 * self.harvest.max(1.0) {
            return 0.0;
        }
        self.buy(excess, acted)
    }

    /// Buys `want` more (as far as capacity and budget allow). Returns the amount bought.
    #[inline]
    pub fn buy(&mut self, want: f64, acted: u16) -> f64 {
        if want <= 0.0 {
            return 0.0;
        }
        let room = (self.capacity - self.stock()).max(0.0);
        let mut amount = want;
        if amount > room {
            amount = room;
            self.flags |= flags::CAPACITY_FULL;
        }
        if self.budget.is_finite() {
            amount = self.within_budget(amount);
        }
        if !amount.is_finite() {
            // no capacity and no budget bound a purchase that trade refills without end (a
            // defended price above import parity): leave the market as it is and let the engine
            // report it (see `Clearing::unbounded`)
            self.flags |= flags::UNBOUNDED;
            return 0.0;
        }
        if amount <= 0.0 {
            return 0.0;
        }
        self.purchases = accumulate(self.purchases, amount);
        self.flags |= acted;
        amount
    }

    /// `amount` cut so that the period's spending P(X)·X stays within the budget.
    #[inline]
    fn within_budget(&mut self, amount: f64) -> f64 {
        let (amount, bound) = if self.trades {
            budget_cut_open(
                self.demand,
                self.demand_shift,
                &self.border,
                self.harvest + self.releases,
                self.budget,
                self.purchases,
                amount,
            )
        } else {
            budget_cut(
                self.demand,
                self.demand_shift,
                self.harvest + self.releases,
                self.budget,
                self.purchases,
                amount,
            )
        };
        if bound {
            self.flags |= flags::BUDGET_BOUND;
        }
        amount
    }

    /// Sells until the price falls to `target`, as far as the stock allows. Returns the amount sold.
    /// Inlined into every caller, as [`Clearing::buy_to`].
    #[inline(always)]
    pub fn sell_to(&mut self, target: f64, acted: u16) -> f64 {
        let shortfall = self.least_left_at_most(target) - self.consumption();
        if shortfall <= 1e-12 * self.harvest.max(1.0) {
            return 0.0;
        }
        let sold = self.sell(shortfall, acted);
        if sold < shortfall {
            self.flags |= flags::STOCK_OUT;
        }
        sold
    }

    /// Sells `want` but never so much that the price falls below `not_below`. Returns the amount sold.
    pub fn sell_at_most(&mut self, want: f64, not_below: f64, acted: u16) -> f64 {
        let room = (self.most_left_at_least(not_below) - self.consumption()).max(0.0);
        self.sell(want.min(room), acted)
    }

    /// Buys `want` but never so much that the price rises above `not_above`. Returns the amount bought.
    pub fn buy_at_most(&mut self, want: f64, not_above: f64, acted: u16) -> f64 {
        let room = (self.consumption() - self.least_left_at_most(not_above)).max(0.0);
        self.buy(want.min(room), acted)
    }

    #[inline]
    fn sell(&mut self, want: f64, acted: u16) -> f64 {
        let amount = want.min(self.stock().max(0.0));
        if amount <= 0.0 {
            return 0.0;
        }
        self.releases = accumulate(self.releases, amount);
        self.flags |= acted;
        amount
    }
}

/// Whether a market with purchases X and releases R has traded nothing (its price is then the
/// price before any trade; [`Clearing::price`]).
#[inline(always)]
fn untraded(purchases: f64, releases: f64) -> bool {
    purchases == 0.0 && releases == 0.0
}

/// The columns of a set of lanes' closed markets: what each lane's market starts from, and where
/// the outcome of its trades is written (every slice as long as `harvest`). [`ClearLanes`] and
/// [`super::lanes::LinearLanes`] clear them.
#[derive(Debug)]
pub struct MarketColumns<'a> {
    /// Each lane's harvest.
    pub harvest: &'a [f64],
    /// Each lane's additive demand shock.
    pub shift: &'a [f64],
    /// Each lane's stock carried in, after losses.
    pub carried: &'a [f64],
    /// Each lane's clearing price ([`Clearing::price`]), written.
    pub price: &'a mut [f64],
    /// Each lane's purchases, written.
    pub purchases: &'a mut [f64],
    /// Each lane's releases, written.
    pub releases: &'a mut [f64],
    /// Each lane's end-of-period stock ([`Clearing::stock`]), written.
    pub stock: &'a mut [f64],
    /// What acted on each lane, written.
    pub flags: &'a mut [u16],
}

/// The closed markets of a set of lanes on one demand curve and one agency, each lane a
/// [`Clearing`].
#[derive(Debug)]
pub struct ClearLanes<'d, 'a> {
    /// Demand curve.
    pub demand: &'d Curve,
    /// Storage capacity.
    pub capacity: f64,
    /// Purchase spending allowed in a period.
    pub budget: f64,
    /// The lanes' markets.
    pub columns: MarketColumns<'a>,
    /// The demand curve's answers at the prices the rules asked about ([`Asked`]): each lane's
    /// market starts with them and hands them on.
    pub asked: &'a mut Asked,
}

impl<'d> ClearLanes<'d, '_> {
    /// Every lane's price before any trade, D⁻¹(Q − shift), written into `price`, worked out
    /// together ([`Form::price_at_many`]: a constant-elasticity curve's powers at once). Before
    /// [`ClearLanes::market`].
    pub fn start(&mut self) {
        let c = &mut self.columns;
        let n = c.harvest.len();
        let (harvest, shift, price) = (&c.harvest[..n], &c.shift[..n], &mut c.price[..n]);
        for l in 0..n {
            price[l] = harvest[l] - shift[l];
        }
        self.demand.price_at_many(price);
    }

    /// Lane `l`'s market before any trade (after [`ClearLanes::start`]).
    #[inline(always)]
    pub fn market(&self, l: usize) -> Clearing<'d> {
        let c = &self.columns;
        Clearing::at_untraded_price(
            self.demand,
            c.shift[l],
            c.harvest[l],
            c.carried[l],
            self.capacity,
            self.budget,
            c.price[l],
        )
        .with_asked(*self.asked)
    }

    /// Writes lane `l`'s outcome once the trades on `m` are done; where `m` traded, `price`
    /// holds the quantity C − shift until [`ClearLanes::finish`] prices it.
    #[inline(always)]
    pub fn put(&mut self, l: usize, m: &Clearing) {
        debug_assert!(!m.trades, "the lanes' markets are closed");
        let c = &mut self.columns;
        c.price[l] = if untraded(m.purchases, m.releases) {
            m.untraded_price
        } else {
            m.consumption() - m.demand_shift
        };
        c.purchases[l] = m.purchases;
        c.releases[l] = m.releases;
        c.stock[l] = m.stock();
        c.flags[l] = m.flags;
        *self.asked = m.asked;
    }

    /// Every lane's clearing price ([`Clearing::price`] on a closed market): the lanes that
    /// traded priced from the quantity [`ClearLanes::put`] left, together ([`Form::price_at_many`]).
    pub fn finish(&mut self) {
        const AT_ONCE: usize = 64;
        let c = &mut self.columns;
        let n = c.harvest.len();
        let (purchases, releases) = (&c.purchases[..n], &c.releases[..n]);
        let price = &mut c.price[..n];
        let (mut lanes, mut quantities) = ([0usize; AT_ONCE], [0.0; AT_ONCE]);
        for start in (0..n).step_by(AT_ONCE) {
            // the lanes that traded gathered without a branch: each lane written at the next
            // place, which moves on only past a lane that traded
            let mut k = 0;
            for l in start..(start + AT_ONCE).min(n) {
                lanes[k] = l;
                quantities[k] = price[l];
                k += usize::from(!untraded(purchases[l], releases[l]));
            }
            self.demand.price_at_many(&mut quantities[..k]);
            for (&l, &p) in lanes[..k].iter().zip(&quantities[..k]) {
                price[l] = p;
            }
        }
    }

    /// Each lane's market, `trade` on it, and its outcome written ([`ClearLanes::start`] before,
    /// [`ClearLanes::finish`] after): the market lives in registers from its start to its outcome
    /// when `trade` is inlined.
    #[inline(always)]
    pub fn each(&mut self, trade: impl Fn(&mut Clearing)) {
        self.start();
        for l in 0..self.columns.harvest.len() {
            let mut m = self.market(l);
            trade(&mut m);
            self.put(l, &m);
        }
        self.finish();
    }
}

/// [`budget_cut`] on an open market: the clearing price after private trade on `border`.
#[inline(never)]
fn budget_cut_open(
    demand: &Curve,
    shift: f64,
    border: &BorderTerms,
    supply_left: f64,
    budget: f64,
    before: f64,
    amount: f64,
) -> (f64, bool) {
    let total = before + amount;
    // spending P(X)·X at the price after private trade; non-decreasing in X
    let spend = |x: f64| x * border.clear(demand, shift, supply_left - x).price;
    if !total.is_finite() || spend(total) > budget {
        if spend(before) >= budget {
            return (0.0, true);
        }
        // with unlimited imports at parity the spending is at most X·import parity: bracket there
        let mut hi = if total.is_finite() {
            total
        } else {
            before.max(1.0)
        };
        while spend(hi) <= budget && hi.is_finite() {
            hi *= 2.0;
        }
        let solved = crate::numeric::brent(|x| spend(x) - budget, before, hi, 1e-12 * hi.max(1.0))
            .unwrap_or(before);
        return (solved - before, true);
    }
    (amount, false)
}

/// `total + amount` for a trade `amount` > 0; the first trade of the period is assigned, since
/// 0 + amount is amount exactly, which keeps the addition off the price's dependency chain.
#[inline(always)]
pub(super) fn accumulate(total: f64, amount: f64) -> f64 {
    if total == 0.0 {
        amount
    } else {
        total + amount
    }
}

/// The purchase `amount` (on top of `before`) cut so that the spending P(X)·X at the clearing price
/// stays within `budget`, and whether the budget bound. Kept out of line (most policies have no
/// budget) and away from the market value, so that the market does not escape into memory.
#[inline(never)]
fn budget_cut(
    demand: &Curve,
    shift: f64,
    supply_left: f64,
    budget: f64,
    before: f64,
    amount: f64,
) -> (f64, bool) {
    let total = before + amount;
    // spending P(X)·X at the clearing price; increasing in X
    let spend = |x: f64| x * demand.price_at(supply_left - x - shift);
    if spend(total) > budget {
        let solved = if spend(before) >= budget {
            before
        } else {
            crate::numeric::brent(|x| spend(x) - budget, before, total, 1e-12 * total.max(1.0))
                .unwrap_or(before)
        };
        return (solved - before, true);
    }
    (amount, false)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_answers_kept_are_the_curves_answers() {
        // an identity (no outside source): more prices than are kept, asked in turn and out of
        // turn, ±0, a negative price and NaN among them; every answer has the bits of asking the
        // curve, on both forms
        let curves = [
            Curve::ConstantElasticity {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity: std::hint::black_box(-0.25),
            },
            Curve::Linear {
                intercept: 600.0,
                slope: -0.6,
            },
        ];
        let prices = [
            195.0,
            230.0,
            210.0,
            0.0,
            -0.0,
            -3.0,
            f64::NAN,
            212.5,
            195.0,
            1e300,
        ];
        for demand in &curves {
            let mut asked = Asked::NONE;
            for round in 0..3 {
                for (i, &p) in prices.iter().enumerate() {
                    let p = if round == 2 {
                        prices[(7 * i) % prices.len()]
                    } else {
                        p
                    };
                    let got = asked.quantity(demand, p);
                    let want = demand.quantity_unclamped(p);
                    assert_eq!(got.to_bits(), want.to_bits(), "{demand:?} at {p}");
                }
            }
        }
    }

    #[test]
    fn lanes_cleared_together_are_each_market_cleared_alone() {
        // an identity: a band defended on many lanes through `ClearLanes` (the prices before
        // trade and after it worked out together, the curve's answers handed from lane to lane)
        // gives each lane the price, trades, stock and flags of its own `Clearing`
        let demand = Curve::ConstantElasticity {
            at_price: 210.0,
            at_quantity: 480.0,
            elasticity: std::hint::black_box(-0.3),
        };
        let band = crate::policies::BandStock {
            buy_below: 195.0,
            sell_above: 230.0,
        };
        let n = 150;
        let harvest: Vec<f64> = (0..n).map(|i| 400.0 + 1.3 * i as f64).collect();
        let shift: Vec<f64> = (0..n).map(|i| (i % 11) as f64 - 5.0).collect();
        let carried: Vec<f64> = (0..n).map(|i| (i % 5) as f64 * 12.0).collect();
        let (mut price, mut purchases, mut releases, mut stock) =
            (vec![0.0; n], vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        let mut flags = vec![0u16; n];
        let mut asked = Asked::NONE;
        let mut lanes = ClearLanes {
            demand: &demand,
            capacity: 60.0,
            budget: f64::INFINITY,
            columns: MarketColumns {
                harvest: &harvest,
                shift: &shift,
                carried: &carried,
                price: &mut price,
                purchases: &mut purchases,
                releases: &mut releases,
                stock: &mut stock,
                flags: &mut flags,
            },
            asked: &mut asked,
        };
        lanes.each(|m| {
            band.defend(m);
        });
        let mut traded = 0;
        for l in 0..n {
            let mut m = Clearing::new(
                &demand,
                shift[l],
                harvest[l],
                carried[l],
                60.0,
                f64::INFINITY,
            );
            band.defend(&mut m);
            assert_eq!(price[l].to_bits(), m.price().to_bits(), "lane {l}");
            assert_eq!(purchases[l].to_bits(), m.purchases.to_bits(), "lane {l}");
            assert_eq!(releases[l].to_bits(), m.releases.to_bits(), "lane {l}");
            assert_eq!(stock[l].to_bits(), m.stock().to_bits(), "lane {l}");
            assert_eq!(flags[l], m.flags, "lane {l}");
            traded += usize::from(m.purchases > 0.0 || m.releases > 0.0);
        }
        // the band bought on some lanes, sold on others and left the rest alone
        assert!(traded > 10 && traded < n - 10, "{traded} lanes traded");
    }
}

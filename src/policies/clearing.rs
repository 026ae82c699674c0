//! One period's market under agency trade: the harvest, the agency's stock, and the trades that
//! policy rules make on it. Every trade keeps consumption C = Q − X + R and the stock
//! S = carried + X − R exact by construction; all trades happen at the period's clearing price.

use crate::curves::Curve;

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
    /// What acted (see [`flags`]).
    pub flags: u16,
    /// The price before any trade, D⁻¹(Q − shift), computed once (rules and the engine ask for it
    /// repeatedly while nothing has been traded).
    untraded_price: f64,
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
        Clearing {
            demand,
            demand_shift,
            harvest,
            carried,
            capacity,
            budget,
            purchases: 0.0,
            releases: 0.0,
            flags: 0,
            untraded_price: demand.price_at(harvest - demand_shift),
        }
    }

    /// Consumption C = Q − X + R.
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

    /// Clearing price P = D⁻¹(C) of the shifted demand curve.
    #[inline]
    pub fn price(&self) -> f64 {
        if self.purchases == 0.0 && self.releases == 0.0 {
            // the same value as below: consumption() is exactly the harvest when nothing is traded
            self.untraded_price
        } else {
            self.price_if_consumption(self.consumption())
        }
    }

    #[inline]
    fn price_if_consumption(&self, c: f64) -> f64 {
        self.demand.price_at(c - self.demand_shift)
    }

    /// Quantity consumers take at price `p`.
    #[inline]
    fn demanded_at(&self, p: f64) -> f64 {
        self.demand.quantity_unclamped(p) + self.demand_shift
    }

    /// End-of-period stock S = carried + X − R.
    #[inline]
    pub fn stock(&self) -> f64 {
        self.carried + self.purchases - self.releases
    }

    /// Buys until the price reaches `target`, within capacity and budget. Returns the amount bought.
    #[inline]
    pub fn buy_to(&mut self, target: f64, acted: u16) -> f64 {
        let excess = self.consumption() - self.demanded_at(target);
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
        let (amount, bound) = budget_cut(
            self.demand,
            self.demand_shift,
            self.harvest + self.releases,
            self.budget,
            self.purchases,
            amount,
        );
        if bound {
            self.flags |= flags::BUDGET_BOUND;
        }
        amount
    }

    /// Sells until the price falls to `target`, as far as the stock allows. Returns the amount sold.
    #[inline]
    pub fn sell_to(&mut self, target: f64, acted: u16) -> f64 {
        let shortfall = self.demanded_at(target) - self.consumption();
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
        let room = (self.demanded_at(not_below) - self.consumption()).max(0.0);
        self.sell(want.min(room), acted)
    }

    /// Buys `want` but never so much that the price rises above `not_above`. Returns the amount bought.
    pub fn buy_at_most(&mut self, want: f64, not_above: f64, acted: u16) -> f64 {
        let room = (self.consumption() - self.demanded_at(not_above)).max(0.0);
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

/// `total + amount` for a trade `amount` > 0; the first trade of the period is assigned, since
/// 0 + amount is amount exactly, which keeps the addition off the price's dependency chain.
#[inline(always)]
fn accumulate(total: f64, amount: f64) -> f64 {
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

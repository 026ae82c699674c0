//! Policy rules: how the agency and the treasury act on each period's market.
//!
//! A policy file is a list of rules, one per section; each rule is one type in its own file
//! implementing [`Rule`] (everything the program needs of it) and registered once in
//! [`SECTIONS`]. [`compile`] turns a validated [`PolicySpec`] into the engine's period actions
//! ([`PolicyRule`]) in the documented acting order: (1) the floor bought by purchase, (2) the
//! buffer-stock rule, (3) sales defending a ceiling, then the market clears, and (4) payment rules
//! (to producers, then to consumers) settle on the cleared price.

/// The [`PolicyRule`] methods of an action that pays no one: the producer price is the market
/// price and nothing goes to producers or consumers. An action that pays nothing invokes it inside
/// its `impl PolicyRule` (the trait keeps no default bodies: each action still states it).
macro_rules! pays_nothing {
    () => {
        fn pays(&self) -> bool {
            false
        }
        fn producer_price(&self, market_price: f64) -> f64 {
            market_price
        }
        fn payment(&self, _market_price: f64, _harvest: f64) -> f64 {
            0.0
        }
        fn consumer_payment(&self, _market_price: f64, _consumption: f64) -> f64 {
            0.0
        }
    };
}

/// The [`PolicyRule`] methods of an action that does not trade: it neither buys into nor sells
/// from the agency's stock. Invoked inside its `impl PolicyRule`, as [`pays_nothing`].
macro_rules! trades_nothing {
    () => {
        fn trades_stock(&self) -> bool {
            false
        }
        fn trade(&self, _market: &mut Clearing) {}
    };
}

pub mod border;
pub mod ceiling;
pub mod clearing;
pub mod file;
mod fill;
pub mod floor;
pub mod in_storage;
pub mod lanes;
pub mod rule;
pub mod stock;
mod stock_band;
mod stock_share;
mod stock_target;

pub use clearing::{flags, Asked, ClearLanes, Clearing, MarketColumns};
pub use file::PolicySpec;
pub use fill::periods_to_fill;
pub use floor::{DeficiencyPayment, FloorPurchase};
pub use rule::{Build, Rule, RuleRef, RuleSection, Watched, SECTIONS};
pub use stock_band::BandStock;
pub use stock_share::ShareStock;
pub use stock_target::TargetStock;

/// One period action of a rule, as the engine calls it. Every method is required: an action states
/// what it does and what it leaves alone.
pub trait PolicyRule: Send + Sync + std::fmt::Debug {
    /// A price below which farmers know their producer price cannot fall (an announced floor).
    fn planting_floor(&self) -> Option<f64>;
    /// Agency trade on the period's market (before it clears).
    fn trade(&self, market: &mut Clearing);
    /// The producer price given the market price (after trade).
    fn producer_price(&self, market_price: f64) -> f64;
    /// Treasury payment to producers given the market price and the harvest.
    fn payment(&self, market_price: f64, harvest: f64) -> f64;
    /// Treasury payment to consumers given the market price and consumption.
    fn consumer_payment(&self, market_price: f64, consumption: f64) -> f64;
    /// True for actions that set the producer price or pay anyone (`producer_price`, `payment`,
    /// `consumer_payment`).
    fn pays(&self) -> bool;
    /// The action as a plain price band, when it is exactly one (lets the engine call it directly
    /// instead of through the trait object; the trade is the same).
    fn as_band(&self) -> Option<BandStock>;
    /// True for actions that buy into or sell from the agency's stock. An action that answers
    /// false must not trade (`trades_nothing!`): a policy none of whose actions trades is cleared
    /// without calling `trade` at all (`engine::Model::clear`).
    fn trades_stock(&self) -> bool;

    /// The policy's only trading action on each lane of a set: each lane's market
    /// ([`ClearLanes::market`]), this action's `trade` on it, its outcome written
    /// ([`ClearLanes::put`]). One call through the trait object for the set, with `trade` called
    /// directly and inlined, so each lane's market stays in registers. Never overridden.
    #[inline]
    fn clear_each(&self, lanes: &mut ClearLanes<'_, '_>) {
        lanes.each(|m| self.trade(m));
    }

    /// The action's trade over many lanes of a closed market on a linear demand curve without a
    /// purchase budget ([`lanes::LaneTrade`]), when it has one; `None` (the provided answer) for
    /// an action that trades only lane by lane. An action that answers must do on each lane what
    /// its `trade` does (`tests/lanes.rs` holds it to that bit for bit).
    fn lanes(&self) -> Option<&dyn lanes::LaneTrade> {
        None
    }

    /// [`PolicyRule::trade`] on each of `markets` in turn: one call through the trait object for
    /// a set of lanes (the engine's phased lanes, `engine::lanes`), with this action's own
    /// `trade` called directly, and inlined, in the loop. Never overridden: `trade` stays the one
    /// definition of what the action does.
    #[inline]
    fn trade_each(&self, markets: &mut [Clearing]) {
        for m in markets {
            self.trade(m);
        }
    }

    /// [`PolicyRule::producer_price`], [`PolicyRule::payment`] and
    /// [`PolicyRule::consumer_payment`] on each lane of a set, added to what the actions before
    /// this one left: lane `l` at market price `price[l]`, with harvest `harvest[l]` and
    /// consumption `consumption[l]`, takes its producer price from `producer_price[l]` and adds
    /// to `deficiency[l]` and `consumer[l]`. One call through the trait object for the set, as
    /// [`PolicyRule::trade_each`]; never overridden.
    #[inline]
    fn pay_each(&self, lanes: PayLanes<'_>) {
        let n = lanes.price.len();
        let (harvest, consumption) = (&lanes.harvest[..n], &lanes.consumption[..n]);
        let producer_price = &mut lanes.producer_price[..n];
        let deficiency = &mut lanes.deficiency[..n];
        let consumer = &mut lanes.consumer[..n];
        for (l, &price) in lanes.price.iter().enumerate() {
            producer_price[l] = self.producer_price(producer_price[l]);
            deficiency[l] += self.payment(price, harvest[l]);
            consumer[l] += self.consumer_payment(price, consumption[l]);
        }
    }
}

/// A set of lanes' prices and quantities as [`PolicyRule::pay_each`] reads them, and the payments
/// it adds to (every slice as long as `price`).
#[derive(Debug)]
pub struct PayLanes<'a> {
    /// Each lane's market price after trade.
    pub price: &'a [f64],
    /// Each lane's harvest.
    pub harvest: &'a [f64],
    /// Each lane's consumption.
    pub consumption: &'a [f64],
    /// Each lane's producer price so far (the market price before the first paying action).
    pub producer_price: &'a mut [f64],
    /// Each lane's payments to producers so far.
    pub deficiency: &'a mut [f64],
    /// Each lane's payments to consumers so far.
    pub consumer: &'a mut [f64],
}

/// The agency's standing parameters (from `[stock]`; a floor by purchase alone gets an unlimited,
/// costless store).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Agency {
    /// Storage capacity.
    pub capacity: f64,
    /// Stock held before period 1.
    pub initial: f64,
    /// Cost per unit of end-of-period stock.
    pub storage_cost: f64,
    /// Share of carried stock lost per period.
    pub loss_rate: f64,
    /// Purchase spending allowed per period.
    pub purchase_budget: f64,
    /// Interest on the market value of stock held.
    pub financing_rate: f64,
    /// Cost per unit bought or sold.
    pub handling_cost: f64,
    /// Share of the old stock rotated a period (`release = "rotate"`; 0 otherwise): sold and
    /// replaced by the same quantity of new grain at the same price, paying handling on both legs.
    pub rotation_share: f64,
}

impl Default for Agency {
    fn default() -> Self {
        Agency {
            capacity: f64::INFINITY,
            initial: 0.0,
            storage_cost: 0.0,
            loss_rate: 0.0,
            purchase_budget: f64::INFINITY,
            financing_rate: 0.0,
            handling_cost: 0.0,
            rotation_share: 0.0,
        }
    }
}

impl Agency {
    /// The stock carried into a period from `stock` at the end of the last: what losses leave.
    #[inline(always)]
    pub fn carried(&self, stock: f64) -> f64 {
        stock * (1.0 - self.loss_rate)
    }

    /// The quantity rotated in a period: `rotation_share` of the old grain still in store, the
    /// smaller of the carried stock (after losses) and the end-of-period stock.
    #[inline(always)]
    pub fn rotated(&self, carried: f64, stock: f64) -> f64 {
        self.rotation_share * carried.min(stock).max(0.0)
    }
}

/// A policy ready for the engine: ordered rules plus the agency's parameters.
#[derive(Debug)]
pub struct Policy {
    /// Display name.
    pub name: String,
    /// Rules in acting order.
    pub rules: Vec<Box<dyn PolicyRule>>,
    /// Agency parameters.
    pub agency: Agency,
    /// Price above which a stock-out counts (the band's `sell_above`), if any.
    pub sell_above: Option<f64>,
    /// Border measures (`[border]`; free trade without them). They act only on a market that
    /// trades.
    pub border: crate::trade::BorderMeasures,
}

impl Policy {
    /// The highest announced floor, if any rule announces one.
    pub fn planting_floor(&self) -> Option<f64> {
        self.rules
            .iter()
            .filter_map(|r| r.planting_floor())
            .reduce(f64::max)
    }

    /// True when the policy holds or may hold a stock.
    pub fn holds_stock(&self) -> bool {
        self.agency.initial > 0.0 || self.rules.iter().any(|r| r.trades_stock())
    }
}

/// Turns a validated policy file into period actions in acting order (each rule adds its own).
pub fn compile(spec: &PolicySpec) -> Policy {
    let mut build = Build::default();
    for rule in &spec.rules {
        rule.build(&mut build);
    }
    // stable: actions of one rank keep the file's order
    build.actions.sort_by_key(|(rank, _)| *rank);
    Policy {
        name: spec.name.clone(),
        rules: build.actions.into_iter().map(|(_, a)| a).collect(),
        agency: build.agency,
        sell_above: build.sell_above,
        border: build.border,
    }
}

/// What the Monte Carlo watches for `spec` (each rule adds its own).
pub fn watched(spec: &PolicySpec) -> Watched {
    let mut w = Watched::default();
    for rule in &spec.rules {
        rule.watch(&mut w);
    }
    w
}

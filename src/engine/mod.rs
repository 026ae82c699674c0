//! The period-by-period engine.
//!
//! Order within period t (INTERFACE.md): farmers plant on the expected producer price (after an
//! announced floor); carried agency stock loses `loss_rate`; the harvest Q_t = S(P^e_t)·yield + supply
//! shock arrives; policy rules trade in their documented order; consumption C_t = Q_t − X_t + R_t
//! clears at P_t = D⁻¹(C_t − demand shock); payment rules settle; the producer price enters the
//! history that expectation rules read.
//!
//! The engine knows nothing of files, TOML or the terminal: it takes a validated [`Scenario`] and
//! [`PolicySpec`] and a stream of [`PeriodShock`]s.

pub mod columns;
pub mod lanes;
mod path;
mod rational;
mod record;

pub use columns::{Columns, EachLane, LaneStepper, ShockColumns, LANES};
pub use lanes::ModelLanes;
pub use path::{each_lane, PathModel, Stepper};
pub use record::{floor_binding, PeriodRecord, Settled, TradeRecord};

use crate::curves::{Cost, Curve, Form, Surplus};
use crate::expectations::{self, ExpectationInput, ExpectationRule};
use crate::policies::PolicySpec;
use crate::policies::{self, Asked, Clearing, Policy};
use crate::scenario::{Scenario, ShockSpec};
use crate::trade::{BorderMeasures, Trade, Traded};

/// The shocks that hit one period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PeriodShock {
    /// Multiplicative yield factor (mean 1).
    pub yield_factor: f64,
    /// Additive harvest shock.
    pub supply: f64,
    /// Additive demand shock (already including its AR(1) part).
    pub demand: f64,
    /// Multiplicative world-price factor (mean 1; 1 for a closed market or a fixed world price).
    pub world_factor: f64,
}

impl PeriodShock {
    /// No shock at all.
    pub const NONE: PeriodShock = PeriodShock {
        yield_factor: 1.0,
        supply: 0.0,
        demand: 0.0,
        world_factor: 1.0,
    };
}

/// A path that left the region where the model means anything.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("diverging: period {period}: {reason}")]
pub struct Diverged {
    /// The period in which it happened.
    pub period: usize,
    /// What happened, in words.
    pub reason: String,
}

/// A market with its expectation rule and policy, ready to simulate.
#[derive(Debug)]
pub struct Model {
    /// Demand curve.
    pub demand: Curve,
    /// Supply curve.
    pub supply: Curve,
    /// The expectation rule in force (the policy's override, else the market's).
    pub rule: Box<dyn ExpectationRule>,
    /// The compiled policy.
    pub policy: Policy,
    /// Shock distribution (used by the rational rule's expectation).
    pub shocks: ShockSpec,
    /// Producer prices before period 1, oldest first, ending with P_0.
    pub price_history: Vec<f64>,
    /// Prices above this are treated as divergence.
    pub price_bound: f64,
    nodes: rational::Nodes,
    /// The consumer surplus on the demand curve, its constants worked out once (the booking's).
    surplus: Surplus,
    /// The production cost on the supply curve, its constants worked out once (the booking's).
    cost: Cost,
    /// `policy.planting_floor()` and `rule.is_rational()`, fixed for the model (looked up once, not
    /// every period).
    planting_floor: Option<f64>,
    is_rational: bool,
    /// Some rule sets the producer price or pays producers or consumers (looked up once).
    has_payments: bool,
    /// Some rule trades on the market (`PolicyRule::trades_stock`; the others' `trade` does
    /// nothing, so a policy without one clears the market as harvested; looked up once).
    trades_stock: bool,
    /// The policy's only rule when it is a plain band (called directly, not through the trait).
    band_only: Option<policies::BandStock>,
    /// A price above this with no stock left is a stock-out: `sell_above·(1 + 1e-12)`, or +∞ when
    /// the policy has no upper band edge (computed once).
    stockout_above: f64,
    /// The rule when it is adaptive expectations (called directly, not through the trait).
    adaptive: Option<expectations::Adaptive>,
    /// Farmers plant on revenue (`[supply] plants_on = "revenue"`): the rational rule solves
    /// P^e = E[producer price · Y] (E[Y] = 1) and backward-looking rules read the revenue-equivalent
    /// price P_t·Y_t instead of P_t (docs/storage.md, "Planting on revenue").
    revenue: bool,
    /// The market's border (`[trade]`; None: closed) and the policy's border measures.
    trade: Option<Trade>,
    measures: BorderMeasures,
}

impl Model {
    /// Builds the model of `scenario` under `policy`.
    pub fn new(scenario: &Scenario, policy: &PolicySpec) -> Model {
        let spec = policy.expectations.unwrap_or(scenario.expectations);
        let rule = expectations::build(&spec);
        let compiled = policies::compile(policy);
        let compiled_floor = compiled.planting_floor();
        let compiled_border = compiled.border;
        let has_payments = compiled.rules.iter().any(|r| r.pays());
        let trades_stock = compiled.rules.iter().any(|r| r.trades_stock());
        let is_rational = rule.is_rational();
        let adaptive = rule.as_adaptive();
        let band_only = match compiled.rules.as_slice() {
            [only] => only.as_band(),
            _ => None,
        };
        let stockout_above = compiled
            .sell_above
            .map_or(f64::INFINITY, |s| s * (1.0 + 1e-12));
        let mut reference = scenario.steady.price.max(scenario.run.initial_price);
        if let Some(t) = &scenario.trade {
            reference = reference.max(t.world_price + t.import_cost);
        }
        for p in &scenario.run.price_history {
            reference = reference.max(*p);
        }
        for r in &policy.rules {
            reference = reference.max(r.reference_price());
        }
        // pad the history to the rule's number of lags with its oldest value
        let mut history = scenario.run.price_history.clone();
        let need = rule.lags().max(2);
        if history.len() < need {
            let oldest = history[0];
            let mut padded = vec![oldest; need - history.len()];
            padded.extend(history);
            history = padded;
        }
        Model {
            surplus: Surplus::of(&scenario.market.demand),
            cost: Cost::of(&scenario.market.supply),
            demand: scenario.market.demand,
            supply: scenario.market.supply,
            rule,
            policy: compiled,
            shocks: scenario.shocks,
            price_history: history,
            price_bound: 1e3 * reference,
            nodes: rational::Nodes::new(&scenario.shocks, scenario.trade.as_ref()),
            planting_floor: compiled_floor,
            is_rational,
            has_payments,
            trades_stock,
            band_only,
            stockout_above,
            adaptive,
            revenue: scenario.market.plants_on == crate::scenario::PlantsOn::Revenue,
            trade: scenario.trade,
            measures: compiled_border,
        }
    }

    /// A fresh simulator at period 0.
    pub fn simulator(&self) -> Simulator<'_> {
        Simulator::new(self)
    }

    /// Simulates `periods` periods with the shock for period t given by `shock(t)` (1-based).
    pub fn run(
        &self,
        periods: usize,
        mut shock: impl FnMut(usize) -> PeriodShock,
    ) -> Result<Vec<PeriodRecord>, Diverged> {
        let mut sim = self.simulator();
        (1..=periods).map(|t| sim.step(&shock(t))).collect()
    }

    /// Clears one period: planting on `planting_price`, with agency stock `carried` (after losses);
    /// `asked`, the demand curve's answers at prices the rules asked about before ([`Asked`]),
    /// updated with this period's.
    #[inline(always)]
    pub(crate) fn clear(
        &self,
        planting_price: f64,
        shock: &PeriodShock,
        carried: f64,
        asked: &mut Asked,
    ) -> Cleared {
        let (planted, harvest) = plant(
            &self.supply,
            planting_price,
            shock.yield_factor,
            shock.supply,
        );
        self.clear_harvest(planted, harvest, shock, carried, asked)
    }

    /// [`Model::clear`] once the crop is in: `planted` and its `harvest`.
    #[inline(always)]
    pub(crate) fn clear_harvest(
        &self,
        planted: f64,
        harvest: f64,
        shock: &PeriodShock,
        carried: f64,
        asked: &mut Asked,
    ) -> Cleared {
        if let Some(trade) = &self.trade {
            return self.clear_open(trade, planted, harvest, shock, carried, asked);
        }
        self.pay(self.clear_closed(planted, harvest, shock, carried, asked))
    }

    /// A closed market's clearing before the payment rules ([`Model::pay`]): the rules' trades
    /// and the price.
    #[inline(always)]
    fn clear_closed(
        &self,
        planted: f64,
        harvest: f64,
        shock: &PeriodShock,
        carried: f64,
        asked: &mut Asked,
    ) -> Cleared {
        let untraded = self.untraded_price(harvest, shock);
        self.clear_closed_at(planted, harvest, shock, carried, untraded, asked)
    }

    /// The period's price before any trade: D⁻¹(harvest − shift) on the shocked demand curve.
    #[inline(always)]
    fn untraded_price(&self, harvest: f64, shock: &PeriodShock) -> f64 {
        self.demand.price_at(harvest - shock.demand)
    }

    /// [`Model::clear_closed`] with the price before any trade, D⁻¹(harvest − shift), given.
    #[inline(always)]
    fn clear_closed_at(
        &self,
        planted: f64,
        harvest: f64,
        shock: &PeriodShock,
        carried: f64,
        untraded: f64,
        asked: &mut Asked,
    ) -> Cleared {
        let market = || self.market_at(shock, harvest, carried, untraded);
        if !self.trades_stock {
            // no rule trades: the market as harvested, a value no trait object sees (the
            // optimiser folds its zero trades and keeps it in registers)
            let m = market();
            return self.unpaid(planted, harvest, &m, m.price());
        }
        if let Some(band) = &self.band_only {
            // its own market value, which no trait object sees, so the optimiser keeps it in
            // registers and folds the zero trades it starts with
            let mut m = market().with_asked(*asked);
            band.defend(&mut m);
            *asked = m.asked();
            return self.unpaid(planted, harvest, &m, m.price());
        }
        let mut m = market().with_asked(*asked);
        for rule in &self.policy.rules {
            rule.trade(&mut m);
        }
        *asked = m.asked();
        self.unpaid(planted, harvest, &m, m.price())
    }

    /// The period's market before any rule trades: the harvest and the carried stock on the shocked
    /// demand curve, with the agency's capacity and purchase budget (closed and open markets
    /// alike), its price before any trade, D⁻¹(harvest − shift), given.
    #[inline(always)]
    fn market_at(
        &self,
        shock: &PeriodShock,
        harvest: f64,
        carried: f64,
        untraded: f64,
    ) -> Clearing<'_> {
        let agency = &self.policy.agency;
        Clearing::at_untraded_price(
            &self.demand,
            shock.demand,
            harvest,
            carried,
            agency.capacity,
            agency.purchase_budget,
            untraded,
        )
    }

    /// [`Model::clear_harvest`] of a closed market, the price before any trade, D⁻¹(harvest −
    /// shift), worked out by the caller (`rational`: every quadrature node's at once): the same
    /// period, number for number.
    pub(crate) fn clear_closed_harvest_at(
        &self,
        planted: f64,
        harvest: f64,
        shock: &PeriodShock,
        carried: f64,
        untraded: f64,
        asked: &mut Asked,
    ) -> Cleared {
        debug_assert!(self.trade.is_none());
        self.pay(self.clear_closed_at(planted, harvest, shock, carried, untraded, asked))
    }

    /// [`Model::clear`] on a market that trades: the period's border terms at its world price, the
    /// rules trading on the kinked curve, then private trade.
    ///
    /// Inlined like the closed market's clearing: a period returned from a call goes through
    /// memory, and the step's one `Cleared` would then live in memory on every market, closed or
    /// open (the border's own arithmetic stays in `trade`'s functions).
    #[inline(always)]
    fn clear_open(
        &self,
        trade: &Trade,
        planted: f64,
        harvest: f64,
        shock: &PeriodShock,
        carried: f64,
        asked: &mut Asked,
    ) -> Cleared {
        let untraded = self.untraded_price(harvest, shock);
        self.clear_open_at(trade, planted, harvest, shock, carried, untraded, asked)
    }

    /// [`Model::clear_open`] with the price before any trade, D⁻¹(harvest − shift), given (the
    /// phased lanes work out every lane's at once).
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    fn clear_open_at(
        &self,
        trade: &Trade,
        planted: f64,
        harvest: f64,
        shock: &PeriodShock,
        carried: f64,
        untraded: f64,
        asked: &mut Asked,
    ) -> Cleared {
        let world = trade.world_price_at(shock.world_factor);
        let terms = trade.terms(world, &self.measures);
        let mut m = self
            .market_at(shock, harvest, carried, untraded)
            .with_border(terms)
            .with_asked(*asked);
        for rule in &self.policy.rules {
            rule.trade(&mut m);
        }
        *asked = m.asked();
        let traded = m.traded();
        let mut c = self.pay(self.unpaid(planted, harvest, &m, traded.price));
        c.trade = Some(TradeRecord {
            world_price: world,
            imports: traded.imports,
            exports: traded.exports,
            border_revenue: terms.receipts(&traded),
            quota_rent: terms.quota_rent(&traded),
            public_imports: m.public_imports,
            public_import_cost: if m.public_imports > 0.0 {
                terms.landed * m.public_imports
            } else {
                0.0
            },
        });
        c.traded = traded;
        c
    }

    /// The price farmers plant on: the rule's expectation, raised to an announced floor.
    #[inline(always)]
    pub(crate) fn planting_price(&self, rule_expectation: f64) -> f64 {
        match self.planting_floor {
            Some(f) => rule_expectation.max(f),
            None => rule_expectation,
        }
    }

    /// The expected price `planting` is one the model means anything at (one comparison; NaN
    /// fails it too). [`expected_price_failure`] says why not.
    #[inline(always)]
    fn expectation_ok(&self, planting: f64) -> bool {
        planting > 0.0 && planting <= self.price_bound
    }

    /// The producer-price history entry the backward-looking rules read after a period paying
    /// `producer_price` with yield factor `yield_factor`: planting on revenue, what a unit of
    /// expected harvest earned, P_t·Y_t/E[Y] (E[Y] = 1); otherwise the price itself.
    #[inline(always)]
    fn read_price(&self, producer_price: f64, yield_factor: f64) -> f64 {
        if self.revenue {
            producer_price * yield_factor
        } else {
            producer_price
        }
    }

    /// What period `t` settled before its books: the clearing `c` of a crop planted on `planting`,
    /// with `consumption`, the consumer payments, the stock `carried` in and the demand shock.
    #[inline(always)]
    #[allow(clippy::too_many_arguments)]
    fn settled(
        &self,
        t: usize,
        planting: f64,
        c: &Cleared,
        consumption: f64,
        consumer_payments: f64,
        carried: f64,
        demand_shock: f64,
    ) -> Settled {
        Settled {
            period: t,
            expected_price: planting,
            planted: c.planted,
            harvest: c.harvest,
            price: c.price,
            producer_price: c.producer_price,
            consumption,
            purchases: c.purchases,
            releases: c.releases,
            stock: c.stock,
            deficiency_payments: c.deficiency,
            consumer_payments,
            // a rotation sells old grain and buys as much new grain at P_t: only its handling
            // (both legs) reaches the books
            rotated: self.policy.agency.rotated(carried, c.stock),
            demand_shock,
            flags: c.flags,
            stockout: c.price > self.stockout_above && c.stock <= 1e-12,
        }
    }

    /// The treasury's payments to consumers at market price `price` and consumption `consumption`
    /// (0 without a paying rule, the rules not asked).
    #[inline(always)]
    fn consumer_payments(&self, price: f64, consumption: f64) -> f64 {
        if !self.has_payments {
            return 0.0;
        }
        let mut paid = 0.0;
        for rule in &self.policy.rules {
            paid += rule.consumer_payment(price, consumption);
        }
        paid
    }

    /// The cleared period once the rules have traded on `m`, at the period's clearing price
    /// `price`, before the payment rules: the producer price is the market price, nothing paid.
    #[inline(always)]
    fn unpaid(&self, planted: f64, harvest: f64, m: &Clearing, price: f64) -> Cleared {
        Cleared {
            planted,
            harvest,
            price,
            producer_price: price,
            purchases: m.purchases,
            releases: m.releases,
            stock: m.stock(),
            deficiency: 0.0,
            flags: m.flags,
            trade: None,
            traded: Traded {
                price,
                imports: 0.0,
                exports: 0.0,
            },
        }
    }

    /// The payment rules on a cleared period, in their order: each sets the producer price from
    /// the one before and adds its payment to producers (nothing without a paying rule).
    #[inline(always)]
    fn pay(&self, mut c: Cleared) -> Cleared {
        if self.has_payments {
            for rule in &self.policy.rules {
                c.producer_price = rule.producer_price(c.producer_price);
                c.deficiency += rule.payment(c.price, c.harvest);
            }
        }
        c
    }
}

/// Why the expected price is out of bounds (built only when it is).
#[cold]
fn expected_price_failure(planting: f64, bound: f64) -> String {
    if planting > bound {
        format!("the expected price {planting:.4e} exceeded the sanity bound {bound:.4e}")
    } else {
        format!(
            "the expected price fell to {} (≤ 0)",
            crate::output::fmt_num(planting, 4)
        )
    }
}

/// Why the clearing price is out of bounds (built only when it is; takes numbers rather than the
/// cleared period so that the hot path never stores that to memory).
#[cold]
fn price_failure(price: f64, consumption: f64, bound: f64) -> String {
    if price > bound {
        format!("the price {price:.4e} exceeded the sanity bound {bound:.4e}")
    } else {
        format!(
            "the market needs a price ≤ 0 to absorb consumption {} (demand is saturated)",
            crate::output::fmt_num(consumption, 4)
        )
    }
}

/// Why consumption below zero ends a run (built only when it happens): the agency bought more than
/// the harvest, which no market can deliver (a defended price above what demand absorbs).
#[cold]
fn negative_consumption(consumption: f64, purchases: f64) -> String {
    format!(
        "consumption fell to {} (< 0): the agency bought {}, more than the harvest; the defended \
         price is above what demand can absorb",
        crate::scenario::ranges::short_num(consumption),
        crate::scenario::ranges::short_num(purchases)
    )
}

/// The checks on a cleared period (the harvest, the price, consumption): true when all pass. One
/// combined test on the hot path (NaN fails the price's, as in [`cleared_failure`], which says
/// which check failed first); the scalar step and the lanes both call it.
// the negated comparisons let NaN pass the planting, harvest and consumption checks, as the
// step's checks always have (a NaN price fails the price's)
#[allow(clippy::neg_cmp_op_on_partial_ord)]
#[inline(always)]
fn cleared_ok(c: &Cleared, consumption: f64, bound: f64) -> bool {
    (c.flags & crate::policies::flags::UNBOUNDED == 0)
        & !(c.planted <= 0.0)
        & !(c.harvest <= 0.0)
        & (c.price > 0.0 && c.price <= bound)
        & !(consumption < 0.0)
}

/// Why [`cleared_ok`] failed: its checks in order, the first that fails (built only when one does).
#[cold]
#[inline(never)]
fn cleared_failure(c: &Cleared, planting: f64, consumption: f64, bound: f64) -> String {
    if c.flags & crate::policies::flags::UNBOUNDED != 0 {
        unbounded_purchase(c)
    } else if c.planted <= 0.0 {
        format!(
            "farmers plant nothing at the expected price {}",
            crate::output::fmt_num(planting, 4)
        )
    } else if c.harvest <= 0.0 {
        "the harvest fell to zero".into()
    } else if !(c.price > 0.0 && c.price <= bound) {
        price_failure(c.price, consumption, bound)
    } else {
        negative_consumption(consumption, c.purchases)
    }
}

/// The crop planted on `planting_price` and its harvest, Q = max(0, S(P^e)·yield + supply shock).
#[inline(always)]
pub(crate) fn plant<S: Form>(
    supply: &S,
    planting_price: f64,
    yield_factor: f64,
    supply_shock: f64,
) -> (f64, f64) {
    let planted = supply.quantity(planting_price);
    (planted, harvest_of(planted, yield_factor, supply_shock))
}

/// The harvest of a crop of `planted`: max(0, planted·yield + supply shock) ([`plant`]'s).
#[inline(always)]
pub(crate) fn harvest_of(planted: f64, yield_factor: f64, supply_shock: f64) -> f64 {
    (planted * yield_factor + supply_shock).max(0.0)
}

/// Why an unbounded purchase ends a run (built only when it happens).
#[cold]
fn unbounded_purchase(c: &Cleared) -> String {
    let world = c.trade.map_or(0.0, |t| t.world_price);
    format!(
        "the agency defends a price above import parity (world price {}) with neither \
         capacity nor purchase budget: it would buy every unit traders bring in (limit \
         stock.capacity or stock.purchase_budget, lower floor.price or stock.buy_below, or raise \
         trade.world_price or trade.import_cost)",
        crate::scenario::ranges::short_num(world)
    )
}

/// The outcome of clearing one period.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Cleared {
    pub planted: f64,
    pub harvest: f64,
    pub price: f64,
    pub producer_price: f64,
    pub purchases: f64,
    pub releases: f64,
    pub stock: f64,
    pub deficiency: f64,
    pub flags: u16,
    /// Private trade (None for a closed market).
    pub trade: Option<TradeRecord>,
    /// The price with private trade, imports and exports (no trade for a closed market).
    pub traded: Traded,
}

impl Cleared {
    /// Consumption C = Q − X + R (+ M − X_p on a market that trades).
    #[inline(always)]
    fn consumption(&self) -> f64 {
        let closed = consumption(self.harvest, self.purchases, self.releases);
        if self.trade.is_some() {
            closed + self.traded.imports - self.traded.exports
        } else {
            closed
        }
    }
}

/// A closed market's consumption C = Q − X + R: the harvest less the agency's purchases plus its
/// releases.
#[inline(always)]
fn consumption(harvest: f64, purchases: f64, releases: f64) -> f64 {
    harvest - purchases + releases
}

/// Steps a [`Model`] forward one period at a time.
#[derive(Debug, Clone)]
pub struct Simulator<'m> {
    model: &'m Model,
    /// The last `keep` producer prices, stored twice over (`ring[i] == ring[i + keep]`) so that the
    /// window `ring[head..head + keep]`, oldest first, is always one slice: stepping writes two
    /// entries and moves `head`, never shifting the history.
    ring: Vec<f64>,
    head: usize,
    keep: usize,
    /// The newest producer price (the window's last entry), kept apart for the rules that read only it.
    last_price: f64,
    previous: Option<f64>,
    stock: f64,
    last_demand_shock: f64,
    /// Last period's log world-price factor (None before the first period; kept only for the
    /// rational rule, alone or in a group, on a market that trades).
    last_world: Option<f64>,
    /// The demand curve's answers at the prices the rules asked about, kept from period to period
    /// ([`Asked`]: the rules ask about the same few).
    asked: Asked,
    period: usize,
    /// Farmers in groups (`mixed`, `switching`): each group's forecasts and errors.
    groups: Option<expectations::GroupState>,
}

impl<'m> Simulator<'m> {
    fn new(model: &'m Model) -> Self {
        let keep = model.price_history.len();
        let mut ring = Vec::with_capacity(2 * keep);
        ring.extend_from_slice(&model.price_history);
        ring.extend_from_slice(&model.price_history);
        Simulator {
            model,
            ring,
            head: 0,
            keep,
            last_price: model.price_history[keep - 1],
            previous: None,
            stock: model.policy.agency.initial,
            last_demand_shock: 0.0,
            last_world: None,
            asked: Asked::NONE,
            period: 0,
            groups: model.rule.groups().map(|g| g.start()),
        }
    }

    /// The producer-price history the rules read: the last `keep` prices, newest last.
    #[inline]
    fn history(&self) -> &[f64] {
        &self.ring[self.head..self.head + self.keep]
    }

    /// Appends the newest producer price (the oldest leaves the window).
    #[inline]
    fn push_price(&mut self, price: f64) {
        let (head, keep) = (self.head, self.keep);
        self.ring[head] = price;
        self.ring[head + keep] = price;
        self.head = if head + 1 == keep { 0 } else { head + 1 };
        self.last_price = price;
    }

    /// The agency stock at the end of the last period.
    pub fn stock(&self) -> f64 {
        self.stock
    }

    /// Advances one period under `shock`.
    pub fn step(&mut self, shock: &PeriodShock) -> Result<PeriodRecord, Diverged> {
        self.advance(shock)
    }

    /// [`Simulator::step`], inlined where a path is stepped through [`Stepper`] (the Monte Carlo's
    /// lockstep loop): the record's columns then go straight to the fold instead of through a
    /// record written to memory and read back.
    #[inline(always)]
    fn advance(&mut self, shock: &PeriodShock) -> Result<PeriodRecord, Diverged> {
        let model = self.model;
        let t = self.period + 1;
        let diverged = |reason: String| Diverged { period: t, reason };
        let carried = model.policy.agency.carried(self.stock);
        let floor = model.planting_floor;
        // the path's own group state first: the rule is asked for its groups (a call through the
        // trait object) only on a path that has them
        let grouped = match self.groups.as_mut() {
            Some(state) => model.rule.groups().map(|g| (g, state)),
            None => None,
        };
        let rule_expectation = if let Some((g, state)) = grouped {
            // farmers in groups plant Σ n_i S(P^e_i): the planting-equivalent price
            let history = &self.ring[self.head..self.head + self.keep];
            let last_shock = self.last_demand_shock;
            let last_world = self.last_world;
            g.season(state, history, &model.supply, floor, |p| {
                rational::expected_price(model, carried, last_shock, p, last_world)
            })
            .ok_or_else(|| {
                diverged(
                    "no rational expectation exists for the rational group (the fixed point \
                     could not be bracketed)"
                        .into(),
                )
            })?
        } else if model.is_rational {
            let guess = self.last_price;
            rational::solve(
                model,
                carried,
                self.last_demand_shock,
                floor,
                guess,
                self.last_world,
            )
            .ok_or_else(|| {
                diverged(
                    "no rational expectation exists (the fixed point could not be bracketed)"
                        .into(),
                )
            })?
        } else {
            match &model.adaptive {
                Some(adaptive) => adaptive.next(self.previous, self.last_price),
                None => model.rule.expect(&ExpectationInput {
                    history: self.history(),
                    previous: self.previous,
                    season: t,
                }),
            }
        };
        let planting = model.planting_price(rule_expectation);
        // one comparison on the hot path (NaN fails it too); the message is built only on failure
        if !model.expectation_ok(planting) {
            return Err(diverged(expected_price_failure(
                planting,
                model.price_bound,
            )));
        }
        let c = model.clear(planting, shock, carried, &mut self.asked);
        let consumption = c.consumption();
        if !cleared_ok(&c, consumption, model.price_bound) {
            return Err(diverged(cleared_failure(
                &c,
                planting,
                consumption,
                model.price_bound,
            )));
        }
        let consumer_payments = model.consumer_payments(c.price, consumption);
        let agency = &model.policy.agency;
        let record = PeriodRecord::book_with(
            &model.settled(
                t,
                planting,
                &c,
                consumption,
                consumer_payments,
                carried,
                shock.demand,
            ),
            agency,
            model.surplus.at(c.price, shock.demand),
            model.cost.at(c.planted),
        );
        let record = match c.trade {
            Some(trade) => record.with_trade(trade, agency.handling_cost),
            None => record,
        };
        // advance the state
        self.previous = Some(rule_expectation);
        self.stock = c.stock;
        self.last_demand_shock = shock.demand;
        // read only by the rational rule (alone or as a group's): its log was 6–7 % of an open
        // market's Monte Carlo with any other rule
        if c.trade.is_some() && (model.is_rational || self.groups.is_some()) {
            self.last_world = Some(model.nodes.log_world(shock.world_factor));
        }
        self.period = t;
        // planting on revenue: the rules read what a unit of expected harvest earned, P_t·Y_t/E[Y]
        // (E[Y] = 1), the price itself when there is no yield risk
        let read = model.read_price(c.producer_price, shock.yield_factor);
        self.push_price(read);
        if let Some(state) = self.groups.as_mut() {
            if let Some(g) = model.rule.groups() {
                g.settle(state, read);
            }
        }
        Ok(record)
    }
}

#[cfg(test)]
mod tests;

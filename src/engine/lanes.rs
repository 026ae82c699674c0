//! The period engine's own [`LaneStepper`]: every lane of a [`Model`] stepped one phase at a time.
//!
//! [`EachLane`] steps lane after lane, each a whole period through [`Simulator::step`]. The lanes
//! here keep the paths' state column by column (the previous expectation, the last price read,
//! the agency's stock: one `[f64; LANES]` each) and run each phase of the period as one loop over
//! the lanes — the expectation, the planting and the harvest, the clearing, the checks, the
//! booking, the state update — so that a phase's arithmetic is the same on every lane and the
//! compiler can keep it in vector registers, and no phase holds more values than registers.
//!
//! Every phase calls the code the scalar step calls ([`Simulator::step`], `Simulator::advance`):
//! the expectation rule's own method, the curves' arithmetic ([`Form`], with the form chosen once
//! per model outside the loops), `Model::clear_closed` and `Model::pay` with the policy's actions
//! reached once per set of lanes (`PolicyRule::clear_each`, `trade_each`, `pay_each`),
//! [`PeriodRecord::book_with`] and the small pieces the step is made of (`Model::planting_price`,
//! `Model::settled`, `cleared_ok` …). Only the order of the work differs, never an operation, so
//! the records are the same bits as [`EachLane<Simulator>`] (tests/lanes.rs). On a linear demand
//! curve without a purchase budget, when every trading action has a lane form, the markets clear
//! column by column instead ([`crate::policies::lanes`]: the same operations without branches).
//! On a constant-elasticity demand curve the powers that many lanes need — the prices before and
//! after trade, the consumer surplus — are worked out together ([`Form::price_at_many`],
//! [`Form::consumer_surplus_many`], `ClearLanes::start`/`finish`), and the demand at the prices
//! the rules defend is kept from lane to lane ([`Asked`]). A market that trades clears each lane
//! on its own border (`Model::clear_open_at`, its prices before trade worked out together); the
//! other phases are the closed market's.
//!
//! The arithmetic phases (planting, the column clearing, checks, books, state) have AVX2 and
//! AVX-512 copies, compiled from the same functions; the widest the CPU runs is chosen once per set
//! of lanes ([`crate::numeric::simd`]; no FMA, no reassociation: the same bits; tests/lanes.rs runs
//! every copy).
//!
//! A lane whose path ends in a period gets its columns of that period written all the same (with
//! values of no meaning, as [`Columns`] allows), where [`EachLane`] leaves them as they were.
//!
//! Models whose step is not the same arithmetic on every lane (farmers in groups, rational
//! expectations) are stepped lane by lane, [`ModelLanes::Each`].

// the phases index several columns by lane in one loop, on purpose
#![allow(clippy::needless_range_loop)]

use super::columns::{Columns, EachLane, LaneStepper, ShockColumns, LANES};
use super::{
    cleared_failure, cleared_ok, consumption, expected_price_failure, harvest_of, plant, Cleared,
    Diverged, Model, PeriodRecord, Simulator,
};
use crate::curves::{Form, Forms, Linear};
use crate::expectations::{Adaptive, ExpectationInput};
use crate::numeric::{simd, simd_copies, Simd};
use crate::policies::lanes::{LaneTerms, LinearLanes};
use crate::policies::{Asked, ClearLanes, Clearing, MarketColumns, PayLanes};
use crate::trade::Traded;

/// The lanes of a [`Model`]: phase by phase ([`ModelLanes::Phased`]) when the model allows it,
/// otherwise each lane its own [`Simulator`].
#[derive(Debug)]
pub enum ModelLanes<'m> {
    /// Every lane stepped one phase at a time.
    Phased(Box<Phased<'m>>),
    /// Each lane its own [`Simulator`] (a market that trades, farmers in groups, rational
    /// expectations).
    Each(EachLane<Simulator<'m>>),
}

impl<'m> ModelLanes<'m> {
    /// `n` (≤ [`LANES`]) fresh paths of `model` at period 0.
    pub fn new(model: &'m Model, n: usize) -> ModelLanes<'m> {
        debug_assert!(n <= LANES);
        if Phased::takes(model) {
            ModelLanes::Phased(Box::new(Phased::new(model)))
        } else {
            ModelLanes::Each(super::each_lane(model, n))
        }
    }

    /// These lanes with the vector phases in the copy `simd` names, or the widest the CPU runs
    /// below it ([`Simd::at_most`]); every copy gives the same bits (tests/lanes.rs runs each).
    pub fn with_simd(mut self, simd: Simd) -> Self {
        if let ModelLanes::Phased(p) = &mut self {
            p.simd = simd.at_most();
        }
        self
    }

    /// The copy of the vector phases the lanes run: [`Simd::Plain`] when they are stepped lane by
    /// lane.
    pub fn simd(&self) -> Simd {
        match self {
            ModelLanes::Phased(p) => p.simd,
            ModelLanes::Each(_) => Simd::Plain,
        }
    }

    /// True when the lanes' markets clear column by column ([`crate::policies::lanes`]).
    pub fn clears_in_columns(&self) -> bool {
        matches!(self, ModelLanes::Phased(p) if p.lane_form.is_some())
    }

    /// True when the lanes are stepped phase by phase.
    pub fn is_phased(&self) -> bool {
        matches!(self, ModelLanes::Phased(_))
    }

    /// Lanes stepped each on its own [`Simulator`], whatever the model (the reference the phased
    /// lanes are tested against).
    pub fn each(model: &'m Model, n: usize) -> ModelLanes<'m> {
        ModelLanes::Each(super::each_lane(model, n))
    }
}

impl LaneStepper for ModelLanes<'_> {
    #[inline]
    fn step(&mut self, shocks: &ShockColumns, out: &mut Columns, failed: &mut [Option<Diverged>]) {
        match self {
            ModelLanes::Phased(p) => p.step(shocks, out, failed),
            ModelLanes::Each(e) => e.step(shocks, out, failed),
        }
    }
}

/// The expectation rule as the lanes call it (chosen once per model).
#[derive(Debug, Clone, Copy)]
enum Expect {
    /// Adaptive expectations, called directly ([`Adaptive::next`]): reads only the previous
    /// expectation and the last price, so no history is kept.
    Adaptive(Adaptive),
    /// Any other backward-looking rule, through its trait object on each lane's history.
    Rule,
}

/// Up to [`LANES`] paths of one [`Model`], their state column by column.
#[derive(Debug)]
pub struct Phased<'m> {
    model: &'m Model,
    expect: Expect,
    /// Periods stepped (every lane still going is at the same period).
    period: usize,
    /// The rule's expectation last period (meaningless before period 1).
    previous: [f64; LANES],
    /// The newest producer price read by the rules.
    last_price: [f64; LANES],
    /// The agency's stock at the end of the last period.
    stock: [f64; LANES],
    /// Each lane's last `keep` producer prices stored twice (as `Simulator`'s), lane `l` at
    /// `ring[l * 2 * keep..]`, one `head` for all lanes; empty for adaptive expectations.
    ring: Vec<f64>,
    head: usize,
    keep: usize,
    /// The period's values, phase by phase (kept between periods: every phase writes a lane's
    /// value before it reads it).
    scratch: Scratch,
    /// The copy of the vector phases the lanes run (one the CPU runs; the same operations in
    /// each, so the same bits: no FMA, no reassociation).
    simd: Simd,
    /// Each lane's market while the policy's rules trade on it (kept between periods so that it
    /// is allocated once).
    markets: Vec<Clearing<'m>>,
    /// The demand curve when the lanes clear column by column ([`Phased::lane_form`]).
    lane_form: Option<Linear>,
    /// The demand curve's answers at the prices the rules asked about, kept from period to
    /// period (the rules ask about the same few).
    asked: Asked,
}

/// One period's values of every lane that its record does not hold, phase by phase (the rest
/// are written straight into the period's [`Columns`], which the booking then completes: no
/// value is copied from one to the other).
#[derive(Debug)]
struct Scratch {
    expectation: [f64; LANES],
    carried: [f64; LANES],
    /// The consumer surplus at the lane's price ([`Form::consumer_surplus_many`]).
    surplus: [f64; LANES],
    /// The cost of the lane's crop ([`Form::production_cost_many`]).
    cost: [f64; LANES],
    /// The price before any trade on a market that trades ([`clear_open_all`]).
    untraded: [f64; LANES],
    /// The lane is still going this period.
    live: [bool; LANES],
}

impl Scratch {
    fn new() -> Scratch {
        Scratch {
            expectation: [0.0; LANES],
            carried: [0.0; LANES],
            surplus: [0.0; LANES],
            cost: [0.0; LANES],
            untraded: [0.0; LANES],
            live: [false; LANES],
        }
    }
}

/// Writes lane `l`'s clearing before the payment rules into `out` ([`Model::pay`] and
/// [`Model::consumer_payments`] start from a producer price equal to the market price and no
/// payments).
#[inline(always)]
fn put_cleared(out: &mut Columns, l: usize, c: &Cleared) {
    out.planted[l] = c.planted;
    out.harvest[l] = c.harvest;
    out.price[l] = c.price;
    out.producer_price[l] = c.producer_price;
    out.purchases[l] = c.purchases;
    out.releases[l] = c.releases;
    out.stock[l] = c.stock;
    out.deficiency_payments[l] = c.deficiency;
    out.flags[l] = c.flags;
    out.consumption[l] = c.consumption();
    out.consumer_payments[l] = 0.0;
}

/// The first `n` lanes' markets as the clearing reads and writes them (in `out`), demand shifted
/// by `shift`.
#[inline(always)]
fn market_columns<'a>(
    out: &'a mut Columns,
    carried: &'a [f64; LANES],
    shift: &'a [f64; LANES],
    n: usize,
) -> MarketColumns<'a> {
    MarketColumns {
        harvest: &out.harvest[..n],
        shift: &shift[..n],
        carried: &carried[..n],
        price: &mut out.price[..n],
        purchases: &mut out.purchases[..n],
        releases: &mut out.releases[..n],
        stock: &mut out.stock[..n],
        flags: &mut out.flags[..n],
    }
}

/// Lane `l`'s clearing put back together from `out` (before the booking adds its flags).
#[inline(always)]
fn cleared(out: &Columns, l: usize) -> Cleared {
    let price = out.price[l];
    Cleared {
        planted: out.planted[l],
        harvest: out.harvest[l],
        price,
        producer_price: out.producer_price[l],
        purchases: out.purchases[l],
        releases: out.releases[l],
        stock: out.stock[l],
        deficiency: out.deficiency_payments[l],
        flags: out.flags[l],
        trade: None,
        traded: Traded {
            price,
            imports: 0.0,
            exports: 0.0,
        },
    }
}

impl<'m> Phased<'m> {
    /// True for the models whose every lane runs the same phases: one backward-looking
    /// expectation rule (not rational, no groups), on a closed market or one that trades.
    pub fn takes(model: &Model) -> bool {
        !model.is_rational && model.rule.groups().is_none() && !model.rule.is_rational()
    }

    /// The linear demand curve when every lane's market clears column by column
    /// ([`crate::policies::lanes`]): a closed market on a linear demand curve, no purchase budget,
    /// and every action that trades stock (if any) with a lane form
    /// ([`PolicyRule::lanes`](crate::policies::PolicyRule::lanes)).
    fn lane_form(model: &Model) -> Option<Linear> {
        let (None, Forms::Linear(demand)) = (&model.trade, model.demand.form()) else {
            return None;
        };
        let mut traders = model.policy.rules.iter().filter(|r| r.trades_stock());
        let formed = traders.all(|r| r.lanes().is_some());
        (formed && !model.policy.agency.purchase_budget.is_finite()).then_some(demand)
    }

    fn new(model: &'m Model) -> Phased<'m> {
        let keep = model.price_history.len();
        let last = model.price_history[keep - 1];
        let expect = match model.adaptive {
            Some(a) => Expect::Adaptive(a),
            None => Expect::Rule,
        };
        let ring = match expect {
            Expect::Adaptive(_) => Vec::new(),
            Expect::Rule => {
                let mut ring = Vec::with_capacity(LANES * 2 * keep);
                for _ in 0..LANES {
                    ring.extend_from_slice(&model.price_history);
                    ring.extend_from_slice(&model.price_history);
                }
                ring
            }
        };
        Phased {
            model,
            expect,
            period: 0,
            previous: [0.0; LANES],
            last_price: [last; LANES],
            stock: [model.policy.agency.initial; LANES],
            ring,
            head: 0,
            keep,
            scratch: Scratch::new(),
            simd: simd(),
            markets: Vec::with_capacity(LANES),
            lane_form: Phased::lane_form(model),
            asked: Asked::NONE,
        }
    }

    /// One period of every lane (see [`LaneStepper::step`]); the curves' forms chosen once.
    fn step(&mut self, shocks: &ShockColumns, out: &mut Columns, failed: &mut [Option<Diverged>]) {
        let model = self.model;
        match (model.demand.form(), model.supply.form()) {
            (Forms::Linear(d), Forms::Linear(s)) => self.step_in(&d, &s, shocks, out, failed),
            (Forms::Linear(d), Forms::Elastic(s)) => self.step_in(&d, &s, shocks, out, failed),
            (Forms::Elastic(d), Forms::Linear(s)) => self.step_in(&d, &s, shocks, out, failed),
            (Forms::Elastic(d), Forms::Elastic(s)) => self.step_in(&d, &s, shocks, out, failed),
        }
    }

    /// [`Phased::step`] on demand of form `D` and supply of form `S`. Each phase is a function of
    /// its own, taking the model and the columns it reads and writes as arguments (so that the
    /// compiler knows the columns apart from the model and vectorises the loops).
    #[inline(always)]
    fn step_in<D: Form, S: Form>(
        &mut self,
        demand: &D,
        supply: &S,
        shocks: &ShockColumns,
        out: &mut Columns,
        failed: &mut [Option<Diverged>],
    ) {
        let model = self.model;
        let n = failed.len().min(LANES);
        let failed = &mut failed[..n];
        let t = self.period + 1;
        let s = &mut self.scratch;
        let simd = self.simd;
        let mut all_live = live_all(simd, failed, &mut s.live);

        // the expectation, the planting price, the stock carried in, the crop and the harvest
        match self.expect {
            Expect::Adaptive(a) => expect_adaptive(
                &a,
                t,
                n,
                &self.previous,
                &self.last_price,
                &mut s.expectation,
            ),
            Expect::Rule => expect_rule(
                model,
                t,
                n,
                &self.previous,
                &self.ring[..],
                self.head,
                self.keep,
                &mut s.expectation,
            ),
        }
        if !plant_all(simd, model, supply, n, shocks, &self.stock, s, out) {
            for l in 0..n {
                let planting = out.expected_price[l];
                if s.live[l] && !model.expectation_ok(planting) {
                    s.live[l] = false;
                    failed[l] = Some(Diverged {
                        period: t,
                        reason: expected_price_failure(planting, model.price_bound),
                    });
                }
            }
            all_live = s.live[..n].iter().all(|&x| x);
        }

        // the clearing: the policy's rules, lane by lane
        clear_all(
            simd,
            model,
            self.lane_form,
            n,
            all_live,
            shocks,
            s,
            out,
            &mut self.markets,
            &mut self.asked,
        );

        // the checks: one combined test per lane, the messages only when one fails
        if !check_all(simd, model, n, s, out) {
            for l in 0..n {
                // the lane's trade too: a failure names its world price
                let c = Cleared {
                    trade: out.trade_record(l),
                    ..cleared(out, l)
                };
                if s.live[l] && !cleared_ok(&c, out.consumption[l], model.price_bound) {
                    s.live[l] = false;
                    failed[l] = Some(Diverged {
                        period: t,
                        reason: cleared_failure(
                            &c,
                            out.expected_price[l],
                            out.consumption[l],
                            model.price_bound,
                        ),
                    });
                }
            }
        }

        // the books: what the period's columns do not hold yet (a lane that failed writes values
        // of no meaning)
        book_all(simd, model, demand, supply, t, n, &shocks.demand, s, out);
        if out.trades {
            book_trade_all(model, n, out);
        }
        if s.live[..n].iter().any(|&x| x) {
            out.period = t;
        }

        // the state (a lane that failed is never read again)
        settle_all(
            simd,
            model,
            n,
            &shocks.yield_factor,
            s,
            out,
            &mut self.previous,
            &mut self.last_price,
            &mut self.stock,
        );
        if let Expect::Rule = self.expect {
            let (head, keep) = (self.head, self.keep);
            for l in 0..n {
                let ring = &mut self.ring[l * 2 * keep..(l + 1) * 2 * keep];
                ring[head] = self.last_price[l];
                ring[head + keep] = self.last_price[l];
            }
            self.head = if head + 1 == keep { 0 } else { head + 1 };
        }
        self.period = t;
    }
}

/// Adaptive expectations of every lane for period `t` ([`Adaptive::next`]; no previous
/// expectation before period 1, as `Simulator::advance`).
#[inline(never)]
fn expect_adaptive(
    a: &Adaptive,
    t: usize,
    n: usize,
    previous: &[f64; LANES],
    last_price: &[f64; LANES],
    into: &mut [f64; LANES],
) {
    let n = n.min(LANES);
    if t == 1 {
        for l in 0..n {
            into[l] = a.next(None, last_price[l]);
        }
    } else {
        for l in 0..n {
            into[l] = a.next(Some(previous[l]), last_price[l]);
        }
    }
}

/// Any other backward-looking rule's expectation of every lane, through its trait object on the
/// lane's history window.
#[inline(never)]
#[allow(clippy::too_many_arguments)]
fn expect_rule(
    model: &Model,
    t: usize,
    n: usize,
    previous: &[f64; LANES],
    ring: &[f64],
    head: usize,
    keep: usize,
    into: &mut [f64; LANES],
) {
    for (l, into) in into[..n.min(LANES)].iter_mut().enumerate() {
        let ring = &ring[l * 2 * keep..(l + 1) * 2 * keep];
        *into = model.rule.expect(&ExpectationInput {
            history: &ring[head..head + keep],
            previous: (t > 1).then_some(previous[l]),
            season: t,
        });
    }
}

simd_copies! {
    /// Whether each lane's path is still going; whether all are.
    #[inline(never)]
    fn live_all[](failed: &[Option<Diverged>], live: &mut [bool; LANES]) -> bool {
        let mut all = true;
        for (live, failed) in live.iter_mut().zip(failed) {
            *live = failed.is_none();
            all &= *live;
        }
        all
    }
}

simd_copies! {
    /// The planting price, the stock carried in, the crop and the harvest of every lane; false when
    /// some lane still going has an expected price out of bounds. On a supply curve that works out
    /// its quantities together ([`Form::TOGETHER`]) the crops are worked out at once
    /// ([`Form::quantity_many`]) between the prices and the harvests.
    #[inline(never)]
    fn plant_all[S: Form](
        model: &Model,
        supply: &S,
        n: usize,
        shocks: &ShockColumns,
        stock: &[f64; LANES],
        s: &mut Scratch,
        out: &mut Columns,
    ) -> bool {
        let n = n.min(LANES);
        let mut all_ok = true;
        if S::TOGETHER {
            for l in 0..n {
                all_ok &= planting_of(model, l, stock, s, out);
            }
            supply.quantity_many(&out.expected_price[..n], &mut out.planted[..n]);
            for l in 0..n {
                out.harvest[l] = harvest_of(out.planted[l], shocks.yield_factor[l], shocks.supply[l]);
            }
            return all_ok;
        }
        for l in 0..n {
            all_ok &= planting_of(model, l, stock, s, out);
            let planting = out.expected_price[l];
            let (planted, harvest) = plant(supply, planting, shocks.yield_factor[l], shocks.supply[l]);
            out.planted[l] = planted;
            out.harvest[l] = harvest;
        }
        all_ok
    }
}

/// Lane `l`'s planting price and the stock it carries in, written into `out` and `s`; whether the
/// price is one the model means anything at, or the lane's path has ended.
#[inline(always)]
fn planting_of(
    model: &Model,
    l: usize,
    stock: &[f64; LANES],
    s: &mut Scratch,
    out: &mut Columns,
) -> bool {
    let planting = model.planting_price(s.expectation[l]);
    out.expected_price[l] = planting;
    s.carried[l] = model.policy.agency.carried(stock[l]);
    model.expectation_ok(planting) | !s.live[l]
}

/// The clearing of every lane still going ([`Model::clear_harvest`]): the policy's trades, then
/// its payments, each through the trait object once for the whole set of lanes when the lanes
/// are all still going (a policy with one trading action:
/// [`PolicyRule::clear_each`](crate::policies::PolicyRule::clear_each); with several, each in
/// turn on every lane's market: [`PolicyRule::trade_each`](crate::policies::PolicyRule::trade_each);
/// the payments: [`PolicyRule::pay_each`](crate::policies::PolicyRule::pay_each)), otherwise lane
/// by lane. The same operations on every lane as the scalar step, in the same order (a lane's
/// actions act one after the other on its market either way; an action that does not trade
/// stock leaves the market alone). `all_live`: whether each of the first `n` lanes is still going.
#[inline(never)]
#[allow(clippy::too_many_arguments)]
fn clear_all<'m>(
    simd: Simd,
    model: &'m Model,
    linear: Option<Linear>,
    n: usize,
    all_live: bool,
    shocks: &ShockColumns,
    s: &mut Scratch,
    out: &mut Columns,
    markets: &mut Vec<Clearing<'m>>,
    asked: &mut Asked,
) {
    let n = n.min(LANES);
    if let Some(trade) = &model.trade {
        return clear_open_all(model, trade, n, shocks, s, out, asked);
    }
    if let (true, Some(demand)) = (all_live, linear) {
        let terms = LaneTerms {
            demand,
            capacity: model.policy.agency.capacity,
        };
        let columns = market_columns(out, &s.carried, &shocks.demand, n);
        let mut lanes = LinearLanes::new(terms, columns, simd);
        let mut forms = (model.policy.rules.iter())
            .filter(|r| r.trades_stock())
            .filter_map(|r| r.lanes());
        // no trade or one: the whole clearing in one loop; more: each in its own loop, in turn
        match (forms.next(), forms.next()) {
            (None, _) => lanes.clear_untraded(),
            (Some(only), None) => only.clear_lanes(&mut lanes),
            (Some(first), Some(second)) => {
                lanes.start();
                for form in [first, second].into_iter().chain(forms) {
                    form.trade_lanes(&mut lanes);
                }
                lanes.finish();
            }
        }
        unpaid_all(simd, n, out);
    } else if all_live {
        let agency = &model.policy.agency;
        let mut lanes = ClearLanes {
            demand: &model.demand,
            capacity: agency.capacity,
            budget: agency.purchase_budget,
            columns: market_columns(out, &s.carried, &shocks.demand, n),
            asked,
        };
        let mut trading = model.policy.rules.iter().filter(|r| r.trades_stock());
        match (trading.next(), trading.next()) {
            (None, _) => lanes.each(|_| {}),
            (Some(only), None) => only.clear_each(&mut lanes),
            _ => {
                lanes.start();
                markets.clear();
                markets.extend((0..n).map(|l| lanes.market(l)));
                for rule in &model.policy.rules {
                    rule.trade_each(markets);
                }
                for (l, m) in markets.iter().enumerate() {
                    lanes.put(l, m);
                }
                lanes.finish();
            }
        }
        unpaid_all(simd, n, out);
    } else {
        for l in 0..n {
            if s.live[l] {
                let shock = shocks.get(l);
                let (planted, harvest) = (out.planted[l], out.harvest[l]);
                let c = model.clear_closed(planted, harvest, &shock, s.carried[l], asked);
                put_cleared(out, l, &c);
            }
        }
    }
    if model.has_payments {
        // a lane that failed is paid too, on values of no meaning, as its books are written
        for rule in &model.policy.rules {
            rule.pay_each(PayLanes {
                price: &out.price[..n],
                harvest: &out.harvest[..n],
                consumption: &out.consumption[..n],
                producer_price: &mut out.producer_price[..n],
                deficiency: &mut out.deficiency_payments[..n],
                consumer: &mut out.consumer_payments[..n],
            });
        }
    }
}

/// [`clear_all`] on a market that trades: every lane's price before any trade together, then
/// each lane still going cleared on its own border ([`Model::clear_open_at`]: the rules, private
/// trade, the payments) and its consumer payments, as [`Simulator::step`](super::Simulator::step)
/// clears and pays it.
#[inline(never)]
fn clear_open_all(
    model: &Model,
    trade: &crate::trade::Trade,
    n: usize,
    shocks: &ShockColumns,
    s: &mut Scratch,
    out: &mut Columns,
    asked: &mut Asked,
) {
    let n = n.min(LANES);
    let untraded = &mut s.untraded[..n];
    for l in 0..n {
        untraded[l] = out.harvest[l] - shocks.demand[l];
    }
    model.demand.price_at_many(untraded);
    for l in 0..n {
        if s.live[l] {
            let shock = shocks.get(l);
            let (planted, harvest) = (out.planted[l], out.harvest[l]);
            let c = model.clear_open_at(
                trade,
                planted,
                harvest,
                &shock,
                s.carried[l],
                s.untraded[l],
                asked,
            );
            put_cleared(out, l, &c);
            if let Some(t) = &c.trade {
                out.set_trade(l, t);
            }
            out.consumer_payments[l] = model.consumer_payments(c.price, out.consumption[l]);
        }
    }
}

simd_copies! {
    /// Every lane before the payments, as [`Model::unpaid`]: the producer price the market price,
    /// consumption, nothing paid.
    #[inline(always)]
    fn unpaid_all[](n: usize, out: &mut Columns) {
        for l in 0..n.min(LANES) {
            out.producer_price[l] = out.price[l];
            out.deficiency_payments[l] = 0.0;
            out.consumption[l] = consumption(out.harvest[l], out.purchases[l], out.releases[l]);
            out.consumer_payments[l] = 0.0;
        }
    }
}

simd_copies! {
    /// [`cleared_ok`] of every lane still going.
    #[inline(never)]
    fn check_all[](model: &Model, n: usize, s: &Scratch, out: &Columns) -> bool {
        let n = n.min(LANES);
        let mut all_ok = true;
        for l in 0..n {
            let ok = cleared_ok(&cleared(out, l), out.consumption[l], model.price_bound);
            all_ok &= ok | !s.live[l];
        }
        all_ok
    }
}

simd_copies! {
    /// The books of every lane ([`PeriodRecord::book_with`]) written into `out`, which holds the
    /// rest of each record already: on curves that work them out together ([`Form::TOGETHER`])
    /// the consumer surplus at every lane's price and the cost of every lane's crop first
    /// ([`Form::consumer_surplus_many`], [`Form::production_cost_many`]), then the numbers in one
    /// loop, the flags and stock-outs in another (each loop keeps of the booking what it writes).
    #[inline(never)]
    fn book_all[D: Form, S: Form](
        model: &Model,
        demand: &D,
        supply: &S,
        t: usize,
        n: usize,
        shift: &[f64; LANES],
        s: &mut Scratch,
        out: &mut Columns,
    ) {
        let n = n.min(LANES);
        if D::TOGETHER {
            demand.consumer_surplus_many(&out.price[..n], &shift[..n], &mut s.surplus[..n]);
        }
        if S::TOGETHER {
            supply.production_cost_many(&out.planted[..n], &mut s.cost[..n]);
        }
        for l in 0..n {
            let r = book(model, demand, supply, t, shift[l], s, out, l);
            put_booked(out, l, &r);
        }
        for l in 0..n {
            let r = book(model, demand, supply, t, shift[l], s, out, l);
            out.flags[l] = r.flags;
            out.stockout[l] = r.stockout;
        }
    }
}

/// Lane `l`'s books ([`Model::settled`], [`PeriodRecord::book_with`]) from the period's values in
/// `out` (before the booking writes its own); its consumer surplus and its crop's cost from `s`
/// where the curve's form works them out together ([`Form::TOGETHER`]: `book_all` did), else
/// worked out here.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn book<D: Form, S: Form>(
    model: &Model,
    demand: &D,
    supply: &S,
    t: usize,
    shift: f64,
    s: &Scratch,
    out: &Columns,
    l: usize,
) -> PeriodRecord {
    let surplus = if D::TOGETHER {
        s.surplus[l]
    } else {
        demand.consumer_surplus(out.price[l], shift)
    };
    let cost = if S::TOGETHER {
        s.cost[l]
    } else {
        supply.production_cost(out.planted[l])
    };
    PeriodRecord::book_with(
        &model.settled(
            t,
            out.expected_price[l],
            &cleared(out, l),
            out.consumption[l],
            out.consumer_payments[l],
            s.carried[l],
            shift,
        ),
        &model.policy.agency,
        surplus,
        cost,
    )
}

/// What each lane's private trade adds to its books ([`TradeRecord::booked`], as
/// [`PeriodRecord::with_trade`] adds it to the scalar step's record), once `book_all` has written
/// them (a lane that failed writes values of no meaning).
#[inline(never)]
fn book_trade_all(model: &Model, n: usize, out: &mut Columns) {
    let handling = model.policy.agency.handling_cost;
    for l in 0..n.min(LANES) {
        if let Some(t) = out.trade_record(l) {
            (out.fiscal_cost[l], out.handling_cost[l]) =
                t.booked(out.fiscal_cost[l], out.handling_cost[l], handling);
        }
    }
}

simd_copies! {
    /// The state every lane carries into the next period: the expectation, the stock, the price the
    /// rules read ([`Model::read_price`]).
    #[inline(never)]
    fn settle_all[](
        model: &Model,
        n: usize,
        yield_factor: &[f64; LANES],
        s: &Scratch,
        out: &Columns,
        previous: &mut [f64; LANES],
        last_price: &mut [f64; LANES],
        stock: &mut [f64; LANES],
    ) {
        let n = n.min(LANES);
        for l in 0..n {
            previous[l] = s.expectation[l];
            stock[l] = out.stock[l];
            last_price[l] = model.read_price(out.producer_price[l], yield_factor[l]);
        }
    }
}

/// Writes the numbers of lane `l`'s record `r` that the booking works out into `out` (the
/// period's other numbers are there already: the record copies them from `out`).
#[inline(always)]
fn put_booked(out: &mut Columns, l: usize, r: &PeriodRecord) {
    out.fiscal_cost[l] = r.fiscal_cost;
    out.consumer_surplus[l] = r.consumer_surplus;
    out.producer_surplus[l] = r.producer_surplus;
    out.purchase_cost[l] = r.purchase_cost;
    out.sales_revenue[l] = r.sales_revenue;
    out.storage_cost[l] = r.storage_cost;
    out.financing_cost[l] = r.financing_cost;
    out.handling_cost[l] = r.handling_cost;
    out.rotated[l] = r.rotated;
}

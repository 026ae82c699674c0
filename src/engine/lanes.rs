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
//! per model outside the loops), [`Model::clear_harvest`] and the policy rules behind it,
//! [`PeriodRecord::book_in`] and the small pieces the step is made of (`Model::planting_price`,
//! `Model::settled`, `cleared_ok` …). Only the order of the work differs, never an operation, so
//! the records are the same bits as [`EachLane<Simulator>`] (tests/lanes.rs).
//!
//! Models whose step is not the same arithmetic on every lane (a market that trades, farmers in
//! groups, rational expectations) are stepped lane by lane, [`ModelLanes::Each`].

// the phases index several columns by lane in one loop, on purpose
#![allow(clippy::needless_range_loop)]

use super::columns::{Columns, EachLane, LaneStepper, LANES};
use super::{
    cleared_failure, cleared_ok, expected_price_failure, plant, Cleared, Diverged, Model,
    PeriodRecord, PeriodShock, Simulator,
};
use crate::curves::{Curve, Elastic, Form, Linear};
use crate::expectations::{Adaptive, ExpectationInput};
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
    fn step(&mut self, shocks: &[PeriodShock], out: &mut Columns, failed: &mut [Option<Diverged>]) {
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
}

/// One period's values of every lane, phase by phase.
struct Scratch {
    expectation: [f64; LANES],
    planting: [f64; LANES],
    carried: [f64; LANES],
    planted: [f64; LANES],
    harvest: [f64; LANES],
    price: [f64; LANES],
    producer_price: [f64; LANES],
    purchases: [f64; LANES],
    releases: [f64; LANES],
    stock: [f64; LANES],
    deficiency: [f64; LANES],
    consumption: [f64; LANES],
    consumer_payments: [f64; LANES],
    flags: [u16; LANES],
    /// The lane is still going this period.
    live: [bool; LANES],
}

impl Scratch {
    fn new() -> Scratch {
        const Z: [f64; LANES] = [0.0; LANES];
        Scratch {
            expectation: Z,
            planting: Z,
            carried: Z,
            planted: Z,
            harvest: Z,
            price: Z,
            producer_price: Z,
            purchases: Z,
            releases: Z,
            stock: Z,
            deficiency: Z,
            consumption: Z,
            consumer_payments: Z,
            flags: [0; LANES],
            live: [false; LANES],
        }
    }

    /// Lane `l`'s clearing put back together.
    #[inline(always)]
    fn cleared(&self, l: usize) -> Cleared {
        let price = self.price[l];
        Cleared {
            planted: self.planted[l],
            harvest: self.harvest[l],
            price,
            producer_price: self.producer_price[l],
            purchases: self.purchases[l],
            releases: self.releases[l],
            stock: self.stock[l],
            deficiency: self.deficiency[l],
            flags: self.flags[l],
            trade: None,
            traded: Traded {
                price,
                imports: 0.0,
                exports: 0.0,
            },
        }
    }
}

impl<'m> Phased<'m> {
    /// True for the models whose every lane runs the same phases: a closed market, one
    /// backward-looking expectation rule (not rational, no groups).
    pub fn takes(model: &Model) -> bool {
        model.trade.is_none()
            && !model.is_rational
            && model.rule.groups().is_none()
            && !model.rule.is_rational()
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
        }
    }

    /// One period of every lane (see [`LaneStepper::step`]); the curves' forms chosen once.
    fn step(&mut self, shocks: &[PeriodShock], out: &mut Columns, failed: &mut [Option<Diverged>]) {
        let model = self.model;
        match (model.demand, model.supply) {
            (
                Curve::Linear { intercept, slope },
                Curve::Linear {
                    intercept: c,
                    slope: d,
                },
            ) => self.step_in(
                &Linear { intercept, slope },
                &Linear {
                    intercept: c,
                    slope: d,
                },
                shocks,
                out,
                failed,
            ),
            (Curve::Linear { intercept, slope }, s) => self.step_in(
                &Linear { intercept, slope },
                &elastic(s),
                shocks,
                out,
                failed,
            ),
            (d, Curve::Linear { intercept, slope }) => self.step_in(
                &elastic(d),
                &Linear { intercept, slope },
                shocks,
                out,
                failed,
            ),
            (d, s) => self.step_in(&elastic(d), &elastic(s), shocks, out, failed),
        }
    }

    /// [`Phased::step`] on demand of form `D` and supply of form `S`.
    #[inline(always)]
    fn step_in<D: Form, S: Form>(
        &mut self,
        demand: &D,
        supply: &S,
        shocks: &[PeriodShock],
        out: &mut Columns,
        failed: &mut [Option<Diverged>],
    ) {
        let model = self.model;
        let n = shocks.len().min(failed.len()).min(LANES);
        let shocks = &shocks[..n];
        let t = self.period + 1;
        let mut s = Scratch::new();
        for (live, failed) in s.live[..n].iter_mut().zip(failed.iter()) {
            *live = failed.is_none();
        }

        // the expectation, the planting price and the stock carried in
        self.expect(t, n, &mut s.expectation);
        let agency = &model.policy.agency;
        for l in 0..n {
            s.planting[l] = model.planting_price(s.expectation[l]);
            s.carried[l] = agency.carried(self.stock[l]);
        }
        let mut all_ok = true;
        for l in 0..n {
            all_ok &= model.expectation_ok(s.planting[l]) | !s.live[l];
        }
        if !all_ok {
            for l in 0..n {
                if s.live[l] && !model.expectation_ok(s.planting[l]) {
                    s.live[l] = false;
                    failed[l] = Some(Diverged {
                        period: t,
                        reason: expected_price_failure(s.planting[l], model.price_bound),
                    });
                }
            }
        }

        // the crop and the harvest
        for (l, shock) in shocks.iter().enumerate() {
            let (planted, harvest) = plant(supply, s.planting[l], shock.yield_factor, shock.supply);
            s.planted[l] = planted;
            s.harvest[l] = harvest;
        }

        // the clearing: the policy's rules, lane by lane (a lane that failed is not cleared)
        for (l, shock) in shocks.iter().enumerate() {
            if !s.live[l] {
                continue;
            }
            let c = model.clear_harvest(s.planted[l], s.harvest[l], shock, s.carried[l]);
            let consumption = c.consumption();
            s.price[l] = c.price;
            s.producer_price[l] = c.producer_price;
            s.purchases[l] = c.purchases;
            s.releases[l] = c.releases;
            s.stock[l] = c.stock;
            s.deficiency[l] = c.deficiency;
            s.flags[l] = c.flags;
            s.consumption[l] = consumption;
            s.consumer_payments[l] = if model.has_payments {
                model.consumer_payments(c.price, consumption)
            } else {
                0.0
            };
        }

        // the checks: one combined test per lane, the messages only when one fails
        let mut all_ok = true;
        for l in 0..n {
            all_ok &= cleared_ok(&s.cleared(l), s.consumption[l], model.price_bound) | !s.live[l];
        }
        if !all_ok {
            for l in 0..n {
                let c = s.cleared(l);
                if s.live[l] && !cleared_ok(&c, s.consumption[l], model.price_bound) {
                    s.live[l] = false;
                    failed[l] = Some(Diverged {
                        period: t,
                        reason: cleared_failure(
                            &c,
                            s.planting[l],
                            s.consumption[l],
                            model.price_bound,
                        ),
                    });
                }
            }
        }

        // the books, straight into the columns (a lane that failed writes values of no meaning)
        for (l, shock) in shocks.iter().enumerate() {
            let r = PeriodRecord::book_in(
                &model.settled(
                    t,
                    s.planting[l],
                    &s.cleared(l),
                    s.consumption[l],
                    s.consumer_payments[l],
                    s.carried[l],
                    shock.demand,
                ),
                agency,
                demand,
                supply,
            );
            put(out, l, &r);
        }
        if s.live[..n].iter().any(|&x| x) {
            out.period = t;
        }

        // the state (a lane that failed is never read again)
        for (l, shock) in shocks.iter().enumerate() {
            self.previous[l] = s.expectation[l];
            self.stock[l] = s.stock[l];
            self.last_price[l] = model.read_price(s.producer_price[l], shock.yield_factor);
        }
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

    /// The rule's expectation of every lane for period `t` (`Simulator::advance`'s: the previous
    /// expectation is none before period 1).
    #[inline(always)]
    fn expect(&self, t: usize, n: usize, into: &mut [f64; LANES]) {
        match self.expect {
            Expect::Adaptive(a) => {
                if t == 1 {
                    for l in 0..n {
                        into[l] = a.next(None, self.last_price[l]);
                    }
                } else {
                    for l in 0..n {
                        into[l] = a.next(Some(self.previous[l]), self.last_price[l]);
                    }
                }
            }
            Expect::Rule => {
                let (head, keep) = (self.head, self.keep);
                for (l, into) in into[..n].iter_mut().enumerate() {
                    let ring = &self.ring[l * 2 * keep..(l + 1) * 2 * keep];
                    *into = self.model.rule.expect(&ExpectationInput {
                        history: &ring[head..head + keep],
                        previous: (t > 1).then_some(self.previous[l]),
                        season: t,
                    });
                }
            }
        }
    }
}

/// A constant-elasticity curve's form (called only on one).
#[inline]
fn elastic(c: Curve) -> Elastic {
    match c {
        Curve::ConstantElasticity {
            at_price,
            at_quantity,
            elasticity,
        } => Elastic {
            at_price,
            at_quantity,
            elasticity,
        },
        Curve::Linear { .. } => unreachable!("matched as linear before"),
    }
}

/// Writes the fields of a closed market's record `r` into lane `l` of `out` ([`Columns::set`]
/// without the period and the trade, which the lanes set once).
#[inline(always)]
fn put(out: &mut Columns, l: usize, r: &PeriodRecord) {
    out.expected_price[l] = r.expected_price;
    out.planted[l] = r.planted;
    out.harvest[l] = r.harvest;
    out.price[l] = r.price;
    out.producer_price[l] = r.producer_price;
    out.consumption[l] = r.consumption;
    out.purchases[l] = r.purchases;
    out.releases[l] = r.releases;
    out.stock[l] = r.stock;
    out.fiscal_cost[l] = r.fiscal_cost;
    out.consumer_surplus[l] = r.consumer_surplus;
    out.producer_surplus[l] = r.producer_surplus;
    out.purchase_cost[l] = r.purchase_cost;
    out.sales_revenue[l] = r.sales_revenue;
    out.storage_cost[l] = r.storage_cost;
    out.financing_cost[l] = r.financing_cost;
    out.handling_cost[l] = r.handling_cost;
    out.deficiency_payments[l] = r.deficiency_payments;
    out.consumer_payments[l] = r.consumer_payments;
    out.rotated[l] = r.rotated;
    out.flags[l] = r.flags;
    out.stockout[l] = r.stockout;
}

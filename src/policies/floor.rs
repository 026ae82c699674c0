//! `[floor]`: a guaranteed producer price, defended by public purchase or paid as a deficiency
//! payment. Everything the program knows of it is here.

use serde::Deserialize;

use super::in_storage::StoragePlan;
use super::lanes::{LaneAct, LaneMarket, LaneTerms, LaneTrade};
use super::rule::{rank, rule_ref, Build, Cell, Row, Rule, RuleRef, RuleSection, Watched};
use super::{flags, Agency, Clearing, PolicyRule};
use crate::input::ranges::{noted, r, short_num, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;
use crate::input::{deserialize_section, Check};
use crate::regime::RegimePrice;
use crate::regime::Regimes;
use crate::regime::StabilityError;
use crate::scenario::Scenario;

/// The registration of `[floor]`.
pub const SECTION: RuleSection = RuleSection {
    name: "floor",
    keys: &[
        Key {
            name: "price",
            kind: ValueType::Number,
            range: Some(noted(
                r("floor.price", 0.0, BIG, true, false),
                "purchase: below linear demand's choke price",
            )),
        },
        Key {
            name: "instrument",
            kind: ValueType::Text,
            range: None,
        },
        Key {
            name: "announced",
            kind: ValueType::Bool,
            range: None,
        },
    ],
    read,
    absent: &[
        ("price floor ({price})", "none"),
        ("floor instrument", "—"),
        ("floor announced", "—"),
    ],
    examples: &[
        "[floor]\nprice = 200.0\ninstrument = \"purchase\"\n",
        "[floor]\nprice = 200.0\ninstrument = \"deficiency-payment\"\nannounced = false\n",
    ],
};

/// How the floor is defended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FloorInstrument {
    /// The agency buys everything offered at the floor.
    Purchase,
    /// The market clears freely; the treasury pays the gap on the harvest.
    DeficiencyPayment,
}

/// A validated `[floor]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Floor {
    /// Guaranteed producer price F.
    pub price: f64,
    /// How it is defended.
    pub instrument: FloorInstrument,
    /// Whether farmers plant on max(expectation, F).
    pub announced: bool,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
struct Raw {
    price: Option<f64>,
    instrument: Option<String>,
    announced: Option<bool>,
}

fn read(c: &Check, table: &toml::Table) -> Result<RuleRef, InputError> {
    let f: Raw = deserialize_section(c, table)?;
    let price = f
        .price
        .ok_or_else(|| c.missing("floor.price", "a floor needs price > 0"))?;
    let price = c.within_keys(SECTION.keys, "floor.price", price)?;
    let instrument = match f.instrument.as_deref().unwrap_or("purchase") {
        "purchase" => FloorInstrument::Purchase,
        "deficiency-payment" => FloorInstrument::DeficiencyPayment,
        other => {
            return Err(c.bad(
                "floor.instrument",
                format!("\"{}\"", crate::input::ranges::escape(other)),
                "allowed instruments: \"purchase\", \"deficiency-payment\"",
            ))
        }
    };
    Ok(rule_ref(Floor {
        price,
        instrument,
        announced: f.announced.unwrap_or(true),
    }))
}

impl Rule for Floor {
    fn section(&self) -> &'static str {
        "floor"
    }

    fn build(&self, build: &mut Build) {
        match self.instrument {
            FloorInstrument::Purchase => build.actions.push((
                rank::FLOOR_PURCHASE,
                Box::new(FloorPurchase {
                    price: self.price,
                    announced: self.announced,
                }),
            )),
            FloorInstrument::DeficiencyPayment => build.actions.push((
                rank::PRODUCER_PAYMENT,
                Box::new(DeficiencyPayment {
                    price: self.price,
                    announced: self.announced,
                }),
            )),
        }
    }

    fn storage(&self, plan: &mut StoragePlan) -> Result<(), String> {
        match self.instrument {
            // a band that buys at the floor and never sells (within [stock], if any)
            FloorInstrument::Purchase => plan.purchase_floor = Some(self.price),
            // planting on E[max(P', F)] when announced; the market clears freely
            FloorInstrument::DeficiencyPayment => {
                plan.payment_floor = self.price;
                if self.announced {
                    plan.planting_floor = self.price;
                }
            }
        }
        Ok(())
    }

    fn regimes(&self, r: &mut Regimes) -> Result<(), StabilityError> {
        let f = self.price;
        match self.instrument {
            FloorInstrument::Purchase => {
                let name = "floor binding (purchase)";
                if Regimes::below(r.free_price, f) {
                    r.holding = r.purchase_holds(name, f)?;
                } else {
                    r.secondary.push(Regimes::case(
                        name,
                        RegimePrice::Pinned(f),
                        Some(format!(
                            "after a shock that drives the price below {f:.4}: price pinned, the agency buys"
                        )),
                    ));
                }
            }
            FloorInstrument::DeficiencyPayment => {
                let name = "deficiency payment binding";
                let paid = RegimePrice::Paid(f);
                if Regimes::below(r.free_price, f) {
                    let market = r.market_price_at_rest(paid, f);
                    let mut c = Regimes::case(
                        name,
                        paid,
                        Some(format!(
                            "producer price pinned at {f:.4} (expectations anchored); the market clears \
                             at {market:.4} and the treasury pays the gap on the harvest"
                        )),
                    );
                    c.holds = true;
                    r.holding.push(c);
                } else {
                    r.secondary.push(Regimes::case(
                        name,
                        paid,
                        Some(format!(
                            "after a shock that drives the price below {f:.4}: producers get the floor"
                        )),
                    ));
                }
            }
        }
        Ok(())
    }

    fn check_market(&self, c: &Check, scenario: &Scenario) -> Result<(), InputError> {
        if self.instrument == FloorInstrument::Purchase {
            c.absorbs(
                scenario,
                "floor.price",
                self.price,
                "a floor defended by purchase",
            )?;
        }
        Ok(())
    }

    fn reference_price(&self) -> f64 {
        self.price
    }

    fn describe(&self) -> String {
        format!(
            "floor {} by {}{}",
            short_num(self.price),
            match self.instrument {
                FloorInstrument::Purchase => "purchase",
                FloorInstrument::DeficiencyPayment => "deficiency payment",
            },
            if self.announced { ", announced" } else { "" }
        )
    }

    fn price_lines(&self) -> Vec<(&'static str, f64)> {
        vec![("floor", self.price)]
    }

    fn rows(&self) -> Vec<Row> {
        vec![
            Row {
                label: "price floor ({price})",
                value: Cell::Price(self.price),
            },
            Row {
                label: "floor instrument",
                value: Cell::Text(
                    match self.instrument {
                        FloorInstrument::Purchase => "public purchase",
                        FloorInstrument::DeficiencyPayment => "deficiency payment",
                    }
                    .into(),
                ),
            },
            Row {
                label: "floor announced",
                value: Cell::Text(if self.announced { "yes" } else { "no" }.into()),
            },
        ]
    }

    fn warning(&self, scenario: &Scenario, agency: &Agency) -> Option<String> {
        let unit = &scenario.market.quantity_unit;
        let ss = scenario.steady;
        let (demand, supply) = (&scenario.market.demand, &scenario.market.supply);
        let f = self;
        if f.price <= ss.price {
            return None;
        }
        let growth = supply.quantity(f.price) - demand.quantity(f.price);
        Some(match f.instrument {
            FloorInstrument::Purchase => {
                let mut s = format!(
                    "the floor {} is above the free-market steady state {:.3}: it cannot be defended for ever; at the floor the agency must take S(F) − D(F) = {:.3} {unit} a period",
                    f.price, ss.price, growth
                );
                if agency.capacity.is_finite() {
                    let losses = if agency.loss_rate > 0.0 {
                        " (losses included)"
                    } else {
                        ""
                    };
                    match super::periods_to_fill(
                        agency.initial,
                        agency.capacity,
                        growth,
                        agency.loss_rate,
                    ) {
                        Some(t) => s.push_str(&format!(
                            "; a capacity of {} {unit} fills in about {:.1} periods{losses}",
                            agency.capacity, t
                        )),
                        None => s.push_str(&format!(
                            "; with losses of {} a period the stock levels off at {:.3} {unit}, below the capacity of {} {unit}",
                            agency.loss_rate,
                            growth / agency.loss_rate,
                            agency.capacity
                        )),
                    }
                }
                if agency.purchase_budget.is_finite() && agency.purchase_budget < f.price * growth {
                    s.push_str(&format!(
                        "; the purchase budget {} covers only {:.3} of the {:.3} {unit} needed each period",
                        agency.purchase_budget,
                        agency.purchase_budget / f.price,
                        growth
                    ));
                }
                s
            }
            FloorInstrument::DeficiencyPayment => format!(
                "the floor {} is above the free-market steady state {:.3}: the payment is permanent, about (F − D⁻¹(S(F)))·S(F) = {:.3} a period once planting settles on the floor",
                f.price,
                ss.price,
                (f.price - demand.price_at(supply.quantity(f.price))).max(0.0)
                    * supply.quantity(f.price)
            ),
        })
    }

    fn watch(&self, w: &mut Watched) {
        if self.instrument == FloorInstrument::Purchase {
            w.purchase_floor = Some(self.price);
        }
    }
}

/// A support price defended by public purchase: the agency buys everything offered at the floor
/// (within the store's capacity and the purchase budget), so the market price cannot fall below it.
#[derive(Debug, Clone, Copy)]
pub struct FloorPurchase {
    /// Floor price F.
    pub price: f64,
    /// Farmers plant on max(expectation, F).
    pub announced: bool,
}

impl PolicyRule for FloorPurchase {
    fn planting_floor(&self) -> Option<f64> {
        self.announced.then_some(self.price)
    }
    fn trades_stock(&self) -> bool {
        true
    }
    #[inline(always)]
    fn trade(&self, market: &mut Clearing) {
        market.buy_to(self.price, flags::FLOOR_BUY);
    }
    pays_nothing!();
    fn as_band(&self) -> Option<super::BandStock> {
        None
    }
    fn lanes(&self) -> Option<&dyn LaneTrade> {
        Some(self)
    }
}

impl LaneAct for FloorPurchase {
    /// [`PolicyRule::trade`] on one lane, without branches.
    #[inline(always)]
    fn act(&self, terms: &LaneTerms, m: &mut LaneMarket) {
        m.buy_to(terms, true, self.price, flags::FLOOR_BUY);
    }
}

/// A support price paid as a deficiency payment: the market clears freely and the treasury pays
/// (F − P_t)·Q_t whenever P_t < F, so producers receive max(P_t, F).
#[derive(Debug, Clone, Copy)]
pub struct DeficiencyPayment {
    /// Floor price F.
    pub price: f64,
    /// Farmers plant on max(expectation, F).
    pub announced: bool,
}

impl PolicyRule for DeficiencyPayment {
    fn planting_floor(&self) -> Option<f64> {
        self.announced.then_some(self.price)
    }
    trades_nothing!();
    fn pays(&self) -> bool {
        true
    }
    fn producer_price(&self, market_price: f64) -> f64 {
        market_price.max(self.price)
    }
    fn payment(&self, market_price: f64, harvest: f64) -> f64 {
        if market_price < self.price {
            (self.price - market_price) * harvest
        } else {
            0.0
        }
    }
    fn consumer_payment(&self, _market_price: f64, _consumption: f64) -> f64 {
        0.0
    }
    fn as_band(&self) -> Option<super::BandStock> {
        None
    }
}

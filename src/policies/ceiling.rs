//! `[ceiling]`: a consumer price ceiling, defended by releases from the agency's stock or paid as
//! a subsidy to consumers. Everything the program knows of it is here.
//!
//! - `instrument = "release"`: after the floor and the stock rule have traded, the agency sells
//!   from its stock while the price would be above the ceiling (as far as its stock allows), so the
//!   price does not exceed the ceiling while stock lasts.
//! - `instrument = "consumer-subsidy"`: the market clears freely; when P_t > c the treasury pays
//!   consumers (P_t − c) per unit consumed, so they pay c. Welfare convention: consumption is
//!   C_t = D(P_t) (the payment is settled on what was bought at the market price and does not change
//!   the quantity), and consumer surplus is measured at the price consumers pay,
//!   CS_t = ∫_{P_t}^{choke} D(p) dp + (P_t − c)·C_t — the market's surplus plus the payment — so the
//!   payment is a transfer: with λ = 1 it leaves net welfare unchanged, and only its cost of public
//!   funds (λ − 1) counts.

use serde::Deserialize;

use super::in_storage::StoragePlan;
use super::rule::{rank, rule_ref, Build, Cell, Row, Rule, RuleRef, RuleSection, Watched};
use super::{flags, Agency, BandStock, Clearing, PolicyRule};
use crate::input::ranges::{escape, noted, r, short_num, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;
use crate::input::{deserialize_section, Check};
use crate::regime::RegimePrice;
use crate::regime::Regimes;
use crate::regime::StabilityError;
use crate::scenario::Scenario;

/// The registration of `[ceiling]`.
pub const SECTION: RuleSection = RuleSection {
    name: "ceiling",
    keys: &[
        Key {
            name: "price",
            kind: ValueType::Number,
            range: Some(noted(
                r("ceiling.price", 0.0, BIG, true, false),
                "release: above the floor's and the stock's buying prices",
            )),
        },
        Key {
            name: "instrument",
            kind: ValueType::Text,
            range: None,
        },
    ],
    read,
    absent: &[
        ("price ceiling ({price})", "none"),
        ("ceiling instrument", "—"),
    ],
    examples: &[
        "[ceiling]\nprice = 240.0\ninstrument = \"release\"\n",
        "[ceiling]\nprice = 240.0\ninstrument = \"consumer-subsidy\"\n",
    ],
};

/// How the ceiling is kept.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CeilingInstrument {
    /// The agency sells from its stock down to the ceiling.
    Release,
    /// The treasury pays consumers the excess of the price over the ceiling.
    ConsumerSubsidy,
}

/// A validated `[ceiling]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ceiling {
    /// Ceiling price c.
    pub price: f64,
    /// How it is kept.
    pub instrument: CeilingInstrument,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
struct Raw {
    price: Option<f64>,
    instrument: Option<String>,
}

fn read(c: &Check, table: &toml::Table) -> Result<RuleRef, InputError> {
    let raw: Raw = deserialize_section(c, table)?;
    let price = raw
        .price
        .ok_or_else(|| c.missing("ceiling.price", "a ceiling needs price > 0"))?;
    let price = c.within_keys(SECTION.keys, "ceiling.price", price)?;
    let instrument = match raw.instrument.as_deref() {
        Some("release") => CeilingInstrument::Release,
        Some("consumer-subsidy") => CeilingInstrument::ConsumerSubsidy,
        Some(other) => {
            return Err(c.bad(
                "ceiling.instrument",
                format!("\"{}\"", escape(other)),
                "allowed instruments: \"release\", \"consumer-subsidy\"",
            ))
        }
        None => {
            return Err(c.missing(
                "ceiling.instrument",
                "a ceiling needs instrument = \"release\" (sales from the agency's stock) or \
                 \"consumer-subsidy\" (the treasury pays consumers the excess over the ceiling)",
            ))
        }
    };
    Ok(rule_ref(Ceiling { price, instrument }))
}

impl Rule for Ceiling {
    fn section(&self) -> &'static str {
        "ceiling"
    }

    fn build(&self, build: &mut Build) {
        match self.instrument {
            CeilingInstrument::Release => build.actions.push((
                rank::CEILING_RELEASE,
                Box::new(CeilingRelease { price: self.price }),
            )),
            CeilingInstrument::ConsumerSubsidy => build.actions.push((
                rank::CONSUMER_PAYMENT,
                Box::new(ConsumerSubsidy { price: self.price }),
            )),
        }
    }

    fn storage(&self, plan: &mut StoragePlan) -> Result<(), String> {
        match self.instrument {
            CeilingInstrument::Release => plan.ceiling = Some(self.price),
            // the payment changes no one's decision: the equilibrium is the free one; the records
            // book the payment
            CeilingInstrument::ConsumerSubsidy => plan.consumer_ceiling = Some(self.price),
        }
        Ok(())
    }

    fn regimes(&self, r: &mut Regimes) -> Result<(), StabilityError> {
        let c = self.price;
        let above = r.free_price > c * (1.0 + 1e-12);
        match self.instrument {
            CeilingInstrument::Release => {
                if above && r.holding.is_empty() {
                    let mut case = Regimes::case(
                        "ceiling stock empty (free market)",
                        RegimePrice::Free { offtake: 0.0 },
                        Some(format!(
                            "the free market's steady state lies above the ceiling {c:.4}: the agency \
                             sells until its stock runs out, then the market is free"
                        )),
                    );
                    case.holds = true;
                    r.holding.push(case);
                }
                r.secondary.push(Regimes::case(
                    "ceiling defended by release",
                    RegimePrice::Pinned(c),
                    Some(format!(
                        "price pinned at {c:.4} while the agency's stock lasts"
                    )),
                ));
            }
            CeilingInstrument::ConsumerSubsidy => {
                // consumers' payments do not feed back on planting: the dynamics are the free market's
                let name = "consumer subsidy paid (free market)";
                let free = RegimePrice::Free { offtake: 0.0 };
                if above && r.holding.is_empty() {
                    let mut case = Regimes::case(
                        name,
                        free,
                        Some(format!(
                            "the free market's steady state lies above the ceiling {c:.4}: the market \
                             clears freely and the treasury pays consumers the excess every period"
                        )),
                    );
                    case.holds = true;
                    r.holding.push(case);
                } else {
                    r.secondary.push(Regimes::case(
                        name,
                        free,
                        Some(format!(
                            "after a shock that lifts the price above {c:.4}: consumers are paid the \
                             excess; the market clears freely"
                        )),
                    ));
                }
            }
        }
        Ok(())
    }

    fn check_market(&self, _check: &Check, _scenario: &Scenario) -> Result<(), InputError> {
        // selling down to a price, or paying above it, asks nothing of demand
        Ok(())
    }

    fn reference_price(&self) -> f64 {
        self.price
    }

    fn describe(&self) -> String {
        format!(
            "ceiling {} by {}",
            short_num(self.price),
            match self.instrument {
                CeilingInstrument::Release => "release from stock",
                CeilingInstrument::ConsumerSubsidy => "consumer subsidy",
            }
        )
    }

    fn price_lines(&self) -> Vec<(&'static str, f64)> {
        vec![("ceiling", self.price)]
    }

    fn rows(&self) -> Vec<Row> {
        vec![
            Row {
                label: "price ceiling ({price})",
                value: Cell::Price(self.price),
            },
            Row {
                label: "ceiling instrument",
                value: Cell::Text(
                    match self.instrument {
                        CeilingInstrument::Release => "release from stock",
                        CeilingInstrument::ConsumerSubsidy => "consumer subsidy",
                    }
                    .into(),
                ),
            },
        ]
    }

    fn warning(&self, scenario: &Scenario, _agency: &Agency) -> Option<String> {
        let ss = scenario.steady;
        let c = self.price;
        if c >= ss.price {
            return None;
        }
        let unit = &scenario.market.quantity_unit;
        let (demand, supply) = (&scenario.market.demand, &scenario.market.supply);
        Some(match self.instrument {
            CeilingInstrument::Release => format!(
                "the ceiling {c} is below the free-market steady state {:.3}: it cannot be defended for \
                 ever; at the ceiling the agency must supply D(c) − S(c) = {:.3} {unit} a period from \
                 its stock",
                ss.price,
                demand.quantity(c) - supply.quantity(c)
            ),
            CeilingInstrument::ConsumerSubsidy => format!(
                "the ceiling {c} is below the free-market steady state {:.3}: the payment is \
                 permanent, about (P* − c)·Q* = {:.3} a period",
                ss.price,
                (ss.price - c) * ss.quantity
            ),
        })
    }

    fn watch(&self, _watched: &mut Watched) {
        // neither a purchase floor nor a band: nothing of the floor or band failure shares
    }
}

/// A ceiling defended by release: the agency sells from its stock while the price would be above
/// the ceiling (as far as its stock allows).
#[derive(Debug, Clone, Copy)]
pub struct CeilingRelease {
    /// Ceiling price c.
    pub price: f64,
}

impl PolicyRule for CeilingRelease {
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    fn trades_stock(&self) -> bool {
        true
    }
    #[inline(always)]
    fn trade(&self, market: &mut Clearing) {
        if market.price() > self.price {
            market.sell_to(self.price, flags::CEILING_SELL);
        }
    }
    pays_nothing!();
    fn as_band(&self) -> Option<BandStock> {
        None
    }
}

/// A ceiling paid as a consumer subsidy: (P_t − c)·C_t when P_t > c.
#[derive(Debug, Clone, Copy)]
pub struct ConsumerSubsidy {
    /// Ceiling price c.
    pub price: f64,
}

impl PolicyRule for ConsumerSubsidy {
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    trades_nothing!();
    fn pays(&self) -> bool {
        true
    }
    fn producer_price(&self, market_price: f64) -> f64 {
        market_price
    }
    fn payment(&self, _market_price: f64, _harvest: f64) -> f64 {
        0.0
    }
    fn consumer_payment(&self, market_price: f64, consumption: f64) -> f64 {
        if market_price > self.price {
            (market_price - self.price) * consumption
        } else {
            0.0
        }
    }
    fn as_band(&self) -> Option<BandStock> {
        None
    }
}

//! Policy rules: how the agency and the treasury act on each period's market.
//!
//! Each rule is one small type implementing [`PolicyRule`]; [`compile`] is the single registration
//! point that turns a validated [`PolicySpec`] into an ordered list of rules. Within a period the rules
//! act in this documented order: (1) the floor bought by purchase, (2) the buffer-stock rule, then the
//! market clears, and (3) payment rules (deficiency payment) settle on the cleared price.

pub mod clearing;
mod deficiency;
mod diagnose;
mod floor_purchase;
mod stock_band;
mod stock_share;
mod stock_target;

pub use clearing::{flags, Clearing};
pub use deficiency::DeficiencyPayment;
pub use diagnose::{
    diagnose, diagnose_tally, floor_warning, periods_to_fill, summarise, PathTally,
};
pub use floor_purchase::FloorPurchase;
pub use stock_band::BandStock;
pub use stock_share::ShareStock;
pub use stock_target::TargetStock;

use crate::scenario::{FloorInstrument, PolicySpec, ReleaseSpec};

/// One intervention rule.
pub trait PolicyRule: Send + Sync + std::fmt::Debug {
    /// Short name (appears in diagnostics).
    fn name(&self) -> &'static str;
    /// A price below which farmers know their producer price cannot fall (an announced floor).
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    /// Agency trade on the period's market (before it clears).
    fn trade(&self, _market: &mut Clearing) {}
    /// The producer price given the market price (after trade).
    fn producer_price(&self, market_price: f64) -> f64 {
        market_price
    }
    /// Treasury payment to producers given the market price and the harvest.
    fn payment(&self, _market_price: f64, _harvest: f64) -> f64 {
        0.0
    }
    /// True for rules that set the producer price or pay producers (`producer_price`, `payment`).
    fn pays_producers(&self) -> bool {
        false
    }
    /// The rule as a plain price band, when it is exactly one (lets the engine call it directly
    /// instead of through the trait object; the trade is the same).
    fn as_band(&self) -> Option<BandStock> {
        None
    }
    /// True for rules that buy into or sell from the agency's stock.
    fn trades_stock(&self) -> bool {
        false
    }
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

/// Turns a validated policy file into rules in acting order (the registration point for rules).
pub fn compile(spec: &PolicySpec) -> Policy {
    let mut rules: Vec<Box<dyn PolicyRule>> = Vec::new();
    let mut agency = Agency::default();
    if let Some(s) = &spec.stock {
        agency = Agency {
            capacity: s.capacity,
            initial: s.initial,
            storage_cost: s.storage_cost,
            loss_rate: s.loss_rate,
            purchase_budget: s.purchase_budget,
            financing_rate: s.financing_rate,
            handling_cost: s.handling_cost,
            rotation_share: match s.release {
                ReleaseSpec::Rotate { share } => share,
                _ => 0.0,
            },
        };
    }
    if let Some(f) = &spec.floor {
        if f.instrument == FloorInstrument::Purchase {
            rules.push(Box::new(FloorPurchase {
                price: f.price,
                announced: f.announced,
            }));
        }
    }
    if let Some(s) = &spec.stock {
        let band = BandStock {
            buy_below: s.buy_below,
            sell_above: s.sell_above,
        };
        match s.release {
            ReleaseSpec::Band => rules.push(Box::new(band)),
            ReleaseSpec::Target { target, speed } => rules.push(Box::new(TargetStock {
                band,
                target,
                speed,
            })),
            ReleaseSpec::Share { share } => rules.push(Box::new(ShareStock { band, share })),
            // the rotation itself nets out in the market: the rule trades as the band, and the
            // engine books the rotated quantity's handling (`Agency::rotated`)
            ReleaseSpec::Rotate { .. } => rules.push(Box::new(band)),
        }
    }
    if let Some(f) = &spec.floor {
        if f.instrument == FloorInstrument::DeficiencyPayment {
            rules.push(Box::new(DeficiencyPayment {
                price: f.price,
                announced: f.announced,
            }));
        }
    }
    Policy {
        name: spec.name.clone(),
        rules,
        agency,
        sell_above: spec.stock.map(|s| s.sell_above).filter(|p| p.is_finite()),
    }
}

//! What a policy rule tells the storage equilibrium (`storage`): the plan each rule fills
//! (`Rule::storage`), the agency's band, and what the model needs of a release rule. The storage
//! model reads these; the rules write them, so they live with the rules (the storage model imports
//! the policies, never the reverse).

use super::stock::Release;

/// The policy as the storage model sees it, filled in by each rule (`policies::Rule::storage`).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct StoragePlan {
    /// A floor defended by purchase.
    pub purchase_floor: Option<f64>,
    /// The buffer stock (its band, store and release rule, before a floor or a ceiling sets its edges).
    pub stock: Option<Band>,
    /// A ceiling defended by release from the stock.
    pub ceiling: Option<f64>,
    /// A ceiling kept by paying consumers (changes no decision; the records book the payment).
    pub consumer_ceiling: Option<f64>,
    /// The producer price floor farmers plant on (an announced deficiency payment), else 0.
    pub planting_floor: f64,
    /// The producer price floor paid by deficiency payments, else 0.
    pub payment_floor: f64,
    /// Border measures (free trade unless `[border]` sets them; they act on a trading market).
    pub border: crate::trade::BorderMeasures,
}

impl StoragePlan {
    /// The treasury's payment to consumers at price `price` and consumption `consumption`.
    pub fn consumer_payment(&self, price: f64, consumption: f64) -> f64 {
        match self.consumer_ceiling {
            Some(c) if price > c => (price - c) * consumption,
            _ => 0.0,
        }
    }
}

/// What the storage model needs of the stock's release rule, implemented in the rule's own file
/// (`policies::stock`): nothing in `storage` names a release rule or matches on which one it is.
pub trait ReleaseInStorage: Copy {
    /// The release that only defends the band (a purchase floor's store without a `[stock]`).
    fn band_only() -> Self;
    /// The rule's decision when it carries in `g`, given the price (and dP/dz) `pg(G)` at
    /// end-of-period public stock G, before the purchase budget's cut (`storage::agency::decide`): the price,
    /// dP/dz, the regime and the decision.
    fn decide<F: Fn(f64) -> (f64, f64)>(
        &self,
        band: &Band,
        g: f64,
        pg: &F,
    ) -> (f64, f64, AgencyMode, Decision);
    /// The end-of-period public stock the rule trades to inside the band when it carries in `g`,
    /// besides g, the capacity and 0 (a point where next season's price may bend), if any.
    fn inner_stock(&self, g: f64, capacity: f64) -> Option<f64>;
    /// The price inside the band (finite `sell_above`) where the rule changes what it does (a
    /// breakpoint of next season's price), if any.
    fn inner_price(&self, band: &Band) -> Option<f64>;
    /// The carried-in public stock where the rule's decision bends as a function of it (the solver
    /// puts it on the public-stock grid twice), if any; `keep` is 1 − the loss rate.
    fn bend(&self, keep: f64) -> Option<f64>;
    /// Whether its kinks lie on curves across the public-stock levels, so that the two-state solve
    /// refines its grids where the residual exceeds the 2-D target.
    fn refines_levels(&self) -> bool;
    /// Whether it trades inside the band (a ceiling below `sell_above` is then not covered).
    fn trades_inside_band(&self) -> bool;
}

/// The agency's rule as the storage model sees it: a price band, a store and a release rule (what
/// `[stock]` contributes to [`StoragePlan`], and what `storage::agency::band_of` makes of the whole plan).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    /// Buys while the price would fall below this.
    pub buy_below: f64,
    /// Sells while the price would rise above this (∞: never sells).
    pub sell_above: f64,
    /// Store capacity (∞: unlimited, solved on a bounded grid, see `storage::solve`).
    pub capacity: f64,
    /// 1 − the agency's loss rate.
    pub keep: f64,
    /// What the agency does inside the band.
    pub release: Release,
    /// Purchase spending allowed per period, price × quantity bought (∞: unlimited).
    pub budget: f64,
}

/// AgencyMode of the market in a period.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AgencyMode {
    /// The agency does not trade.
    Inside,
    /// The agency buys at the lower band price.
    Buying,
    /// The store is full; the price is below the band.
    Full,
    /// The agency sells at the upper band price.
    Selling,
    /// The agency's stock is out; the price is above the band.
    Empty,
    /// Target rule trading inside the band.
    Steering,
    /// Share rule releasing inside the band.
    Rotating,
    /// The agency spends its whole purchase budget and the price stays below what its rule aims at.
    BudgetBound,
}

/// How the end-of-period public stock is fixed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Decision {
    /// G is this value.
    Stock(f64),
    /// The price is held at `price`; G is the root of pg(G) = price in [lo, hi].
    AtPrice { price: f64, lo: f64, hi: f64 },
}

use serde::Serialize;

use crate::curves::{Curve, Form};
use crate::policies::{flags, Agency};

/// Everything recorded for one period (the `run` table's columns and the fiscal parts).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PeriodRecord {
    /// Period t (1-based).
    pub period: usize,
    /// The price farmers planted on (after an announced floor).
    pub expected_price: f64,
    /// Planted quantity S(P^e_t) before yield and harvest shocks.
    pub planted: f64,
    /// Harvest Q_t.
    pub harvest: f64,
    /// Market price P_t.
    pub price: f64,
    /// Price producers received (market price, or the floor under a deficiency payment).
    pub producer_price: f64,
    /// Consumption C_t = Q_t − X_t + R_t.
    pub consumption: f64,
    /// Agency purchases X_t.
    pub purchases: f64,
    /// Agency releases R_t.
    pub releases: f64,
    /// Agency stock S_t at the end of the period.
    pub stock: f64,
    /// Fiscal cost: purchases − sales + storage + financing + handling + deficiency payments +
    /// consumer payments.
    pub fiscal_cost: f64,
    /// Consumer surplus at the price consumers pay: ∫_{P_t} D(p) dp, plus the consumer payments.
    pub consumer_surplus: f64,
    /// Producer surplus: producer price × harvest − cost of the planted quantity.
    pub producer_surplus: f64,
    /// P_t · X_t.
    pub purchase_cost: f64,
    /// P_t · R_t.
    pub sales_revenue: f64,
    /// storage_cost · S_t.
    pub storage_cost: f64,
    /// financing_rate · P_t · S_t.
    pub financing_cost: f64,
    /// handling_cost · (X_t + R_t + 2·rotated_t).
    pub handling_cost: f64,
    /// Deficiency payments (F − P_t)·Q_t when P_t < F.
    pub deficiency_payments: f64,
    /// Payments to consumers (P_t − c)·C_t when P_t is above a ceiling c kept by consumer subsidy
    /// (included in `fiscal_cost` and, as a transfer, in `consumer_surplus`).
    pub consumer_payments: f64,
    /// Quantity rotated (`release = "rotate"`): old grain sold and the same quantity of new grain
    /// bought at P_t in the same period; it nets out of X_t, R_t, consumption and the stock.
    #[serde(skip)]
    pub rotated: f64,
    /// Which rules acted (bit flags; see `policies::flags`).
    #[serde(skip)]
    pub flags: u16,
    /// The price was above `sell_above` while the agency had no stock.
    #[serde(skip)]
    pub stockout: bool,
    /// Private trade across the border (None for a closed market, whose record and output carry
    /// no trade columns at all).
    #[serde(flatten, skip_serializing_if = "Option::is_none")]
    pub trade: Option<TradeRecord>,
}

/// One period of private trade across the border.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TradeRecord {
    /// The period's world price W_t.
    pub world_price: f64,
    /// Private imports M_t.
    pub imports: f64,
    /// Private exports X_t (never both imports and exports).
    pub exports: f64,
    /// Treasury receipts from the border: import duties and levies on M_t plus export taxes on
    /// X_t (a receipt: it lowers the fiscal cost).
    pub border_revenue: f64,
    /// Quota rents to the traders holding licences, (P_t − import parity)·M_t or (export parity −
    /// P_t)·X_t when a quota binds (domestic traders' income, counted in net welfare).
    pub quota_rent: f64,
    /// Public imports Z_t (state trading): bought abroad at the landed price into the agency's
    /// stock and released in the same season (inside `releases`).
    pub public_imports: f64,
    /// What the public imports cost the treasury: the landed price W_t + import_cost times Z_t (no
    /// duty; their handling is in `handling_cost`, their sale in `sales_revenue`).
    pub public_import_cost: f64,
}

impl TradeRecord {
    /// A period's fiscal cost and handling cost once this trade is booked
    /// ([`PeriodRecord::with_trade`]): the border receipts off the fiscal cost, public imports'
    /// landed cost and entry handling (`handling` a unit) on it.
    #[inline(always)]
    pub fn booked(&self, fiscal_cost: f64, handling_cost: f64, handling: f64) -> (f64, f64) {
        let mut fiscal_cost = fiscal_cost - self.border_revenue;
        let mut handling_cost = handling_cost;
        if self.public_imports > 0.0 {
            let entry = handling * self.public_imports;
            handling_cost += entry;
            fiscal_cost += self.public_import_cost + entry;
        }
        (fiscal_cost, handling_cost)
    }
}

impl PeriodRecord {
    /// Private imports (0 in a closed market).
    #[inline]
    pub fn imports(&self) -> f64 {
        self.trade.map_or(0.0, |t| t.imports)
    }

    /// Private exports (0 in a closed market).
    #[inline]
    pub fn exports(&self) -> f64 {
        self.trade.map_or(0.0, |t| t.exports)
    }

    /// Border receipts: duties, levies and export taxes (0 in a closed market).
    #[inline]
    pub fn border_revenue(&self) -> f64 {
        self.trade.map_or(0.0, |t| t.border_revenue)
    }

    /// Quota rents to traders (0 in a closed market).
    #[inline]
    pub fn quota_rent(&self) -> f64 {
        self.trade.map_or(0.0, |t| t.quota_rent)
    }

    /// This record with the period's private trade: the trade columns, and the border receipts
    /// taken off the fiscal cost (a treasury receipt on its own line, `border_revenue`). Public
    /// imports add their cost (`public_import_cost`) and the handling of their entry into the
    /// stock, `handling` per unit (their release is handled, and sold, with the other releases).
    #[inline]
    pub fn with_trade(mut self, trade: TradeRecord, handling: f64) -> PeriodRecord {
        (self.fiscal_cost, self.handling_cost) =
            trade.booked(self.fiscal_cost, self.handling_cost, handling);
        self.trade = Some(trade);
        self
    }

    /// Public imports (state trading; 0 without it or in a closed market).
    #[inline]
    pub fn public_imports(&self) -> f64 {
        self.trade.map_or(0.0, |t| t.public_imports)
    }

    /// What the public imports cost at the landed price (0 without them).
    #[inline]
    pub fn public_import_cost(&self) -> f64 {
        self.trade.map_or(0.0, |t| t.public_import_cost)
    }

    /// The agency bought or a deficiency payment was made.
    pub fn floor_binding(&self) -> bool {
        floor_binding(self.purchases, self.deficiency_payments)
    }

    /// The "acted" column.
    pub fn acted(&self) -> String {
        flags::describe(self.flags)
    }
}

/// What one period decided before its books are made up: the quantities and prices of the
/// clearing, the payments the rules settled, and which rules acted. The period engine and the
/// storage equilibrium both fill it and turn it into a [`PeriodRecord`] with [`PeriodRecord::book`],
/// so the fiscal cost and the surpluses are written once.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Settled {
    /// Period t (1-based).
    pub period: usize,
    /// The price farmers planted on.
    pub expected_price: f64,
    /// Planted quantity.
    pub planted: f64,
    /// Harvest Q_t.
    pub harvest: f64,
    /// Market price P_t.
    pub price: f64,
    /// Price producers received.
    pub producer_price: f64,
    /// Consumption C_t.
    pub consumption: f64,
    /// Agency purchases X_t.
    pub purchases: f64,
    /// Agency releases R_t.
    pub releases: f64,
    /// Agency stock S_t at the end of the period.
    pub stock: f64,
    /// Deficiency payments to producers.
    pub deficiency_payments: f64,
    /// Payments to consumers (≤ 0 means none).
    pub consumer_payments: f64,
    /// Quantity rotated (both legs pay handling).
    pub rotated: f64,
    /// The period's additive demand shock (consumer surplus is measured on the shifted curve).
    pub demand_shock: f64,
    /// Which rules acted in the clearing (the booking adds deficiency, consumer subsidy, rotation).
    pub flags: u16,
    /// The price was above `sell_above` while the agency had no stock.
    pub stockout: bool,
}

impl PeriodRecord {
    /// The books of one settled period (INTERFACE.md, "Welfare"): fiscal cost = P·X − P·R +
    /// storage + financing + handling (X + R + 2·rotated) + deficiency payments + consumer
    /// payments; consumer surplus ∫_P D(p) dp on the shocked demand curve plus the consumer payments
    /// (a transfer); producer surplus = producer price × harvest − cost of the planted quantity.
    /// The one place these sums are written; the period engine and the storage records call it.
    #[inline(always)]
    pub fn book(s: &Settled, agency: &Agency, demand: &Curve, supply: &Curve) -> PeriodRecord {
        Self::book_in(s, agency, demand, supply)
    }

    /// [`PeriodRecord::book`] on curves of known forms (the engine's lanes choose the forms once,
    /// outside their loops; a [`Curve`] chooses on every call). The same sums: `book` is this on
    /// two [`Curve`]s.
    #[inline(always)]
    pub fn book_in<D: Form, S: Form>(
        s: &Settled,
        agency: &Agency,
        demand: &D,
        supply: &S,
    ) -> PeriodRecord {
        let market_surplus = demand.consumer_surplus(s.price, s.demand_shock);
        Self::book_with(s, agency, market_surplus, supply.production_cost(s.planted))
    }

    /// [`PeriodRecord::book_in`] given the consumer surplus at the period's price on the shocked
    /// demand curve, `market_surplus`, and the cost of producing the planted quantity,
    /// `production_cost` (callers that work out many at once: [`Form::consumer_surplus_many`],
    /// [`Form::production_cost_many`]).
    #[inline(always)]
    pub fn book_with(
        s: &Settled,
        agency: &Agency,
        market_surplus: f64,
        production_cost: f64,
    ) -> PeriodRecord {
        let purchase_cost = s.price * s.purchases;
        let sales_revenue = s.price * s.releases;
        let storage_cost = agency.storage_cost * s.stock;
        let financing_cost = agency.financing_rate * s.price * s.stock;
        // with no rotation `rotated` is +0 and the sum is X + R exactly
        let handling_cost = agency.handling_cost * (s.purchases + s.releases + 2.0 * s.rotated);
        let mut fiscal_cost = purchase_cost - sales_revenue
            + storage_cost
            + financing_cost
            + handling_cost
            + s.deficiency_payments;
        let mut consumer_surplus = market_surplus;
        let mut bits = s.flags;
        if s.deficiency_payments > 0.0 {
            bits |= flags::DEFICIENCY;
        }
        if s.consumer_payments > 0.0 {
            // consumers pay the ceiling: their surplus is the market's plus the payment
            fiscal_cost += s.consumer_payments;
            consumer_surplus += s.consumer_payments;
            bits |= flags::CONSUMER_SUBSIDY;
        }
        if s.rotated > 0.0 {
            bits |= flags::ROTATE;
        }
        PeriodRecord {
            period: s.period,
            expected_price: s.expected_price,
            planted: s.planted,
            harvest: s.harvest,
            price: s.price,
            producer_price: s.producer_price,
            consumption: s.consumption,
            purchases: s.purchases,
            releases: s.releases,
            stock: s.stock,
            fiscal_cost,
            consumer_surplus,
            producer_surplus: s.producer_price * s.harvest - production_cost,
            purchase_cost,
            sales_revenue,
            storage_cost,
            financing_cost,
            handling_cost,
            deficiency_payments: s.deficiency_payments,
            consumer_payments: s.consumer_payments,
            rotated: s.rotated,
            flags: bits,
            stockout: s.stockout,
            trade: None,
        }
    }
}

/// [`PeriodRecord::floor_binding`] from a record's purchases and deficiency payments (the one rule;
/// the Monte Carlo's fold reads it off the columns).
#[inline(always)]
pub fn floor_binding(purchases: f64, deficiency_payments: f64) -> bool {
    purchases > 0.0 || deficiency_payments > 0.0
}

use serde::Serialize;

use crate::policies::flags;

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
}

impl PeriodRecord {
    /// The agency bought or a deficiency payment was made.
    pub fn floor_binding(&self) -> bool {
        self.purchases > 0.0 || self.deficiency_payments > 0.0
    }

    /// The "acted" column.
    pub fn acted(&self) -> String {
        flags::describe(self.flags)
    }
}

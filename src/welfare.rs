//! Welfare accounting of one simulated path: present values of consumer surplus, producer surplus,
//! fiscal cost and its parts, the value of the stock the agency is left with, and producer revenue
//! risk.
//!
//! Definitions (INTERFACE.md): consumer surplus ∫_{P_t}^{choke} D(p) dp; producer surplus = producer
//! price × harvest − cost of the planted quantity; fiscal cost = P_t X_t − P_t R_t + storage +
//! financing + handling + deficiency payments. Present value Σ_{t=1..T} x_t (1 + r)^−t. The agency's
//! stock at T is valued per `terminal_stock` (at P_T or at zero) and counted as a treasury receipt in
//! period T, so the net welfare change of a policy against the market left alone is
//! ΔCS + ΔPS − Δfiscal + terminal stock value.
//!
//! The module knows nothing of files or the terminal; it folds [`PeriodRecord`]s.

use serde::Serialize;

use crate::engine::PeriodRecord;
use crate::scenario::TerminalStock;

/// Discount factors (1 + r)^−t for t = 1..T, computed once per run.
#[derive(Debug, Clone, PartialEq)]
pub struct Discount {
    factors: Vec<f64>,
}

impl Discount {
    /// Factors for `periods` periods at rate `rate`.
    pub fn new(rate: f64, periods: usize) -> Discount {
        let step = 1.0 / (1.0 + rate);
        let mut f = 1.0;
        let factors = (0..periods)
            .map(|_| {
                f *= step;
                f
            })
            .collect();
        Discount { factors }
    }

    /// (1 + r)^−t for period `t` (1-based); 0 outside 1..=T.
    #[inline]
    pub fn factor(&self, t: usize) -> f64 {
        t.checked_sub(1)
            .and_then(|i| self.factors.get(i))
            .copied()
            .unwrap_or(0.0)
    }

    /// Number of periods covered.
    pub fn periods(&self) -> usize {
        self.factors.len()
    }
}

/// Present values of one path's welfare items (all in price units × quantity units).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct WelfarePv {
    /// Consumer surplus.
    pub consumer_surplus: f64,
    /// Producer surplus.
    pub producer_surplus: f64,
    /// Fiscal cost (all parts).
    pub fiscal_cost: f64,
    /// P_t · X_t.
    pub purchase_cost: f64,
    /// P_t · R_t (a receipt; enters the fiscal cost with a minus sign).
    pub sales_revenue: f64,
    /// Physical storage cost.
    pub storage_cost: f64,
    /// Interest on the value of stock held.
    pub financing_cost: f64,
    /// Handling cost of purchases and sales.
    pub handling_cost: f64,
    /// Deficiency payments.
    pub deficiency_payments: f64,
    /// Value of the agency stock left at T, discounted from T.
    pub terminal_stock_value: f64,
}

impl WelfarePv {
    /// Consumer + producer surplus − fiscal cost + terminal stock value (the level whose difference
    /// against the market left alone is the net welfare change).
    pub fn net(&self) -> f64 {
        self.consumer_surplus + self.producer_surplus - self.fiscal_cost + self.terminal_stock_value
    }

    /// Item-by-item difference `self − base`.
    pub fn minus(&self, base: &WelfarePv) -> WelfarePv {
        WelfarePv {
            consumer_surplus: self.consumer_surplus - base.consumer_surplus,
            producer_surplus: self.producer_surplus - base.producer_surplus,
            fiscal_cost: self.fiscal_cost - base.fiscal_cost,
            purchase_cost: self.purchase_cost - base.purchase_cost,
            sales_revenue: self.sales_revenue - base.sales_revenue,
            storage_cost: self.storage_cost - base.storage_cost,
            financing_cost: self.financing_cost - base.financing_cost,
            handling_cost: self.handling_cost - base.handling_cost,
            deficiency_payments: self.deficiency_payments - base.deficiency_payments,
            terminal_stock_value: self.terminal_stock_value - base.terminal_stock_value,
        }
    }
}

/// Folds the periods of one path into present values.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WelfareFold {
    pv: WelfarePv,
    last_price: f64,
    last_stock: f64,
    last_period: usize,
}

impl WelfareFold {
    /// An empty fold.
    pub fn new() -> WelfareFold {
        WelfareFold::default()
    }

    /// Adds one period.
    #[inline]
    pub fn add(&mut self, r: &PeriodRecord, discount: &Discount) {
        let f = discount.factor(r.period);
        let pv = &mut self.pv;
        pv.consumer_surplus += f * r.consumer_surplus;
        pv.producer_surplus += f * r.producer_surplus;
        pv.fiscal_cost += f * r.fiscal_cost;
        pv.purchase_cost += f * r.purchase_cost;
        pv.sales_revenue += f * r.sales_revenue;
        pv.storage_cost += f * r.storage_cost;
        pv.financing_cost += f * r.financing_cost;
        pv.handling_cost += f * r.handling_cost;
        pv.deficiency_payments += f * r.deficiency_payments;
        self.last_price = r.price;
        self.last_stock = r.stock;
        self.last_period = r.period;
    }

    /// The present values, with the terminal stock valued per `terminal`.
    pub fn finish(&self, terminal: TerminalStock, discount: &Discount) -> WelfarePv {
        let mut pv = self.pv;
        pv.terminal_stock_value = match terminal {
            TerminalStock::Market => {
                self.last_stock * self.last_price * discount.factor(self.last_period)
            }
            TerminalStock::Zero => 0.0,
        };
        pv
    }
}

/// Present values of a whole path.
pub fn path_pv(records: &[PeriodRecord], rate: f64, terminal: TerminalStock) -> WelfarePv {
    let discount = Discount::new(rate, records.len());
    let mut fold = WelfareFold::new();
    for r in records {
        fold.add(r, &discount);
    }
    fold.finish(terminal, &discount)
}

/// Producer revenue in a period: what farmers were paid for the harvest (producer price × harvest;
/// a deficiency payment is included because the producer price is then the floor).
#[inline]
pub fn producer_revenue(r: &PeriodRecord) -> f64 {
    r.producer_price * r.harvest
}

/// Risk premium of a risky revenue for a producer with constant relative risk aversion `r`:
/// the second-order approximation RP ≈ ½ · R · CV² · E[Y] (Newbery and Stiglitz 1981, ch. 6, the
/// Arrow–Pratt approximation applied to revenue; from memory). `mean` and `sd` are those of revenue.
/// Returns 0 for a non-positive mean.
pub fn risk_premium(mean: f64, sd: f64, relative_risk_aversion: f64) -> f64 {
    if mean <= 0.0 || !mean.is_finite() || !sd.is_finite() {
        return 0.0;
    }
    let cv = sd / mean;
    0.5 * relative_risk_aversion * cv * cv * mean
}

/// The exact certainty equivalent E[Y^{1−R}]^{1/(1−R)} (log utility at R = 1: exp E[ln Y]) of a sample
/// of positive revenues, for checking the approximation (Pratt 1964). Returns `None` for an empty or
/// non-positive sample.
pub fn crra_certainty_equivalent(revenues: &[f64], relative_risk_aversion: f64) -> Option<f64> {
    if revenues.is_empty() || revenues.iter().any(|y| y.is_nan() || *y <= 0.0) {
        return None;
    }
    let n = revenues.len() as f64;
    let r = relative_risk_aversion;
    if (r - 1.0).abs() < 1e-12 {
        Some((revenues.iter().map(|y| y.ln()).sum::<f64>() / n).exp())
    } else {
        let m = revenues.iter().map(|y| y.powf(1.0 - r)).sum::<f64>() / n;
        Some(m.powf(1.0 / (1.0 - r)))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn discount_factors_are_powers() {
        let d = Discount::new(0.05, 3);
        // (1 + r)^−t by definition
        assert!((d.factor(1) - 1.0 / 1.05).abs() < 1e-15);
        assert!((d.factor(3) - 1.05f64.powi(-3)).abs() < 1e-15);
        assert_eq!(d.factor(0), 0.0);
        assert_eq!(d.factor(4), 0.0);
    }

    #[test]
    fn approximation_is_second_order_close_to_the_exact_premium() {
        // Two-point revenue 100 ± 10 with R = 2: exact CE is the harmonic mean (Pratt 1964)
        let ys = [90.0, 110.0];
        let ce = crra_certainty_equivalent(&ys, 2.0).unwrap();
        assert!((ce - 2.0 / (1.0 / 90.0 + 1.0 / 110.0)).abs() < 1e-9);
        let exact = 100.0 - ce; // = 1.0
        let approx = risk_premium(100.0, 10.0, 2.0); // ½·2·0.01·100 = 1.0
        assert!((exact - approx).abs() < 0.02, "{exact} vs {approx}");
    }
}

//! Welfare accounting of one simulated path: present values of consumer surplus, producer surplus,
//! fiscal cost and its parts, the opening stock's cost, the value of the stock the agency is left
//! with, and producer revenue risk.
//!
//! Definitions (INTERFACE.md): consumer surplus ∫_{P_t}^{choke} D(p) dp; producer surplus = producer
//! price × harvest − cost of the planted quantity; fiscal cost = P_t X_t − P_t R_t + storage +
//! financing + handling + deficiency payments. Present value Σ_{t=1..T} x_t (1 + r)^−t.
//!
//! The accounting conventions ([`Books`]):
//! - opening stock (`[run] opening_stock`): "charged" buys the policy's `[stock] initial` at P_0 at
//!   t = 0, an undiscounted outlay; "free" does not;
//! - terminal stock (`[run] terminal_stock`): "disposal" sells S_T after T at the price its sale
//!   would cause, S_T·D⁻¹(Q* + S_T), discounted from T + 1; "market" values it at P_T discounted from
//!   T; "zero" at nothing. It is a treasury receipt;
//! - financing: discounting at r already prices the capital tied up in stock, so present values
//!   count interest only as the spread (financing_rate − r)·value of stock when positive; the
//!   per-season cash outlay (the record) shows the interest paid in full;
//! - net welfare = CS + PS − λ·(fiscal − terminal), fiscal including the opening purchase,
//!   λ = `[run] public_funds_cost` (the marginal cost of public funds, Alston and Hurd 1990).
//!
//! The module knows nothing of files or the terminal; it folds [`PeriodRecord`]s.

use serde::Serialize;

use crate::curves::Curve;
use crate::engine::PeriodRecord;
use crate::policies::Agency;
use crate::scenario::{OpeningStock, Scenario, TerminalStock};

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

/// The accounting conventions applied to one policy's paths (see the module notes).
#[derive(Debug, Clone, PartialEq)]
pub struct Books {
    /// Discount factors for t = 1..T.
    pub discount: Discount,
    /// The discount rate r.
    pub rate: f64,
    /// Valuation of the stock left at T.
    pub terminal: TerminalStock,
    /// The opening stock's cost at t = 0 (P_0 · initial when charged, else 0).
    pub opening_stock_cost: f64,
    /// Share of the interest paid that present values count: max(0, f − r)/f (0 when f = 0).
    pub financing_kept: f64,
    /// Demand curve (for the disposal value).
    pub demand: Curve,
    /// Steady-state harvest Q* (the disposal sale comes on top of it).
    pub steady_quantity: f64,
    /// λ, the marginal cost of public funds.
    pub public_funds_cost: f64,
}

impl Books {
    /// The books of a policy with agency parameters `agency` under `scenario`'s conventions.
    pub fn new(scenario: &Scenario, agency: &Agency) -> Books {
        let run = &scenario.run;
        let rate = run.discount_rate;
        Books {
            discount: Discount::new(rate, run.periods),
            rate,
            terminal: run.terminal_stock,
            opening_stock_cost: match run.opening_stock {
                OpeningStock::Charged => run.initial_price * agency.initial,
                OpeningStock::Free => 0.0,
            },
            financing_kept: financing_kept(agency.financing_rate, rate),
            demand: scenario.market.demand,
            steady_quantity: scenario.steady.quantity,
            public_funds_cost: run.public_funds_cost,
        }
    }

    /// The value of `stock` left at the end of period `last` (price `last_price`), discounted.
    pub fn terminal_value(&self, stock: f64, last_price: f64, last: usize) -> f64 {
        if stock <= 0.0 {
            return 0.0;
        }
        match self.terminal {
            TerminalStock::Disposal => {
                let price = self.demand.price_at(self.steady_quantity + stock).max(0.0);
                let price = if price.is_finite() { price } else { 0.0 };
                stock * price * self.discount.factor(last) / (1.0 + self.rate)
            }
            TerminalStock::Market => stock * last_price * self.discount.factor(last),
            TerminalStock::Zero => 0.0,
        }
    }
}

/// Share of interest paid at `financing_rate` that present values at `discount_rate` count: the
/// spread max(0, f − r) over f (0 when nothing is paid).
pub fn financing_kept(financing_rate: f64, discount_rate: f64) -> f64 {
    if financing_rate > 0.0 {
        (financing_rate - discount_rate).max(0.0) / financing_rate
    } else {
        0.0
    }
}

/// Present values of one path's welfare items (all in price units × quantity units).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct WelfarePv {
    /// Consumer surplus.
    pub consumer_surplus: f64,
    /// Producer surplus.
    pub producer_surplus: f64,
    /// Fiscal cost (all parts, the opening stock's purchase included; interest only as its spread
    /// over the discount rate).
    pub fiscal_cost: f64,
    /// P_t · X_t.
    pub purchase_cost: f64,
    /// P_t · R_t (a receipt; enters the fiscal cost with a minus sign).
    pub sales_revenue: f64,
    /// Physical storage cost.
    pub storage_cost: f64,
    /// Interest on the value of stock held, counted as the spread over the discount rate.
    pub financing_cost: f64,
    /// Handling cost of purchases, sales and rotations.
    pub handling_cost: f64,
    /// Deficiency payments.
    pub deficiency_payments: f64,
    /// The opening stock bought at P_0 at t = 0 (undiscounted; 0 when free).
    pub opening_stock_cost: f64,
    /// Value of the agency stock left at T, discounted (per `terminal_stock`).
    pub terminal_stock_value: f64,
    /// Border receipts (import duties and levies, export taxes; a receipt, already taken off
    /// `fiscal_cost`). 0 for a closed market.
    #[serde(skip)]
    pub border_revenue: f64,
    /// Quota rents to domestic traders (counted in [`WelfarePv::net`]). 0 for a closed market.
    #[serde(skip)]
    pub quota_rent: f64,
}

impl WelfarePv {
    /// The treasury's net burden: fiscal cost (opening stock included) − terminal stock value.
    pub fn net_fiscal(&self) -> f64 {
        self.fiscal_cost - self.terminal_stock_value
    }

    /// Consumer + producer surplus − λ·(fiscal cost − terminal stock value), the
    /// level whose difference against the market left alone is the net welfare change; λ is the
    /// marginal cost of public funds (1 = none). On a market that trades, the quota rents go to
    /// domestic traders and count too (the fiscal cost already has the border receipts off).
    pub fn net(&self, public_funds_cost: f64) -> f64 {
        let net =
            self.consumer_surplus + self.producer_surplus - public_funds_cost * self.net_fiscal();
        if self.quota_rent != 0.0 {
            net + self.quota_rent
        } else {
            net
        }
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
            opening_stock_cost: self.opening_stock_cost - base.opening_stock_cost,
            terminal_stock_value: self.terminal_stock_value - base.terminal_stock_value,
            border_revenue: self.border_revenue - base.border_revenue,
            quota_rent: self.quota_rent - base.quota_rent,
        }
    }
}

/// The welfare items of one period that present values sum (the record's fields of the same
/// names): one definition of a period's discounted additions, for one path ([`WelfareFold`]) and
/// for many paths stepped together (the Monte Carlo's lanes).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct PeriodItems {
    /// [`PeriodRecord::consumer_surplus`].
    pub consumer_surplus: f64,
    /// [`PeriodRecord::producer_surplus`].
    pub producer_surplus: f64,
    /// [`PeriodRecord::fiscal_cost`] (interest in full).
    pub fiscal_cost: f64,
    /// [`PeriodRecord::financing_cost`].
    pub financing_cost: f64,
    /// [`PeriodRecord::purchase_cost`].
    pub purchase_cost: f64,
    /// [`PeriodRecord::sales_revenue`].
    pub sales_revenue: f64,
    /// [`PeriodRecord::storage_cost`].
    pub storage_cost: f64,
    /// [`PeriodRecord::handling_cost`].
    pub handling_cost: f64,
    /// [`PeriodRecord::deficiency_payments`].
    pub deficiency_payments: f64,
}

/// How many present values [`PeriodItems::discounted`] adds to (in [`WelfarePv`] order:
/// consumer surplus, producer surplus, fiscal cost, purchases, sales, storage, financing, handling,
/// deficiency payments).
pub const PERIOD_ITEMS: usize = 9;

impl PeriodItems {
    /// The items of record `r`.
    #[inline(always)]
    pub fn of(r: &PeriodRecord) -> PeriodItems {
        PeriodItems {
            consumer_surplus: r.consumer_surplus,
            producer_surplus: r.producer_surplus,
            fiscal_cost: r.fiscal_cost,
            financing_cost: r.financing_cost,
            purchase_cost: r.purchase_cost,
            sales_revenue: r.sales_revenue,
            storage_cost: r.storage_cost,
            handling_cost: r.handling_cost,
            deficiency_payments: r.deficiency_payments,
        }
    }

    /// What the period adds to each present value at discount factor `f` (in the order of
    /// [`PERIOD_ITEMS`]); interest counts only as its share `financing_kept` ([`Books`]).
    #[inline(always)]
    pub fn discounted(&self, f: f64, financing_kept: f64) -> [f64; PERIOD_ITEMS] {
        let financing = financing_kept * self.financing_cost;
        [
            f * self.consumer_surplus,
            f * self.producer_surplus,
            f * (self.fiscal_cost - self.financing_cost + financing),
            f * self.purchase_cost,
            f * self.sales_revenue,
            f * self.storage_cost,
            f * financing,
            f * self.handling_cost,
            f * self.deficiency_payments,
        ]
    }
}

/// What a period of a market that trades adds to the present values of border receipts and quota
/// rents at discount factor `f`.
#[inline(always)]
pub fn discounted_trade(f: f64, border_revenue: f64, quota_rent: f64) -> [f64; 2] {
    [f * border_revenue, f * quota_rent]
}

/// The present values of a path from its sums of discounted period items ([`PeriodItems`] order)
/// and of discounted trade items, with the opening and terminal stock per `books`; the path ended at
/// period `last` with price `last_price` and agency stock `last_stock`.
pub fn finish_pv(
    items: [f64; PERIOD_ITEMS],
    trade: [f64; 2],
    (last_stock, last_price, last): (f64, f64, usize),
    books: &Books,
) -> WelfarePv {
    let [cs, ps, fiscal, purchase, sales, storage, financing, handling, deficiency] = items;
    WelfarePv {
        consumer_surplus: cs,
        producer_surplus: ps,
        fiscal_cost: fiscal + books.opening_stock_cost,
        purchase_cost: purchase,
        sales_revenue: sales,
        storage_cost: storage,
        financing_cost: financing,
        handling_cost: handling,
        deficiency_payments: deficiency,
        opening_stock_cost: books.opening_stock_cost,
        terminal_stock_value: books.terminal_value(last_stock, last_price, last),
        border_revenue: trade[0],
        quota_rent: trade[1],
    }
}

/// Folds the periods of one path into present values.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct WelfareFold {
    items: [f64; PERIOD_ITEMS],
    trade: [f64; 2],
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
    pub fn add(&mut self, r: &PeriodRecord, books: &Books) {
        let f = books.discount.factor(r.period);
        let d = PeriodItems::of(r).discounted(f, books.financing_kept);
        for (a, x) in self.items.iter_mut().zip(d) {
            *a += x;
        }
        if let Some(t) = &r.trade {
            let d = discounted_trade(f, t.border_revenue, t.quota_rent);
            for (a, x) in self.trade.iter_mut().zip(d) {
                *a += x;
            }
        }
        self.last_price = r.price;
        self.last_stock = r.stock;
        self.last_period = r.period;
    }

    /// The present values, with the opening and terminal stock per `books`.
    pub fn finish(&self, books: &Books) -> WelfarePv {
        finish_pv(
            self.items,
            self.trade,
            (self.last_stock, self.last_price, self.last_period),
            books,
        )
    }
}

/// Present values of a whole path under `books`.
pub fn path_pv(records: &[PeriodRecord], books: &Books) -> WelfarePv {
    let mut fold = WelfareFold::new();
    for r in records {
        fold.add(r, books);
    }
    fold.finish(books)
}

/// Producer revenue in a period: what farmers were paid for the harvest (producer price × harvest;
/// a deficiency payment is included because the producer price is then the floor).
#[inline]
pub fn producer_revenue(r: &PeriodRecord) -> f64 {
    revenue_of(r.producer_price, r.harvest)
}

/// [`producer_revenue`] of a producer price and a harvest.
#[inline(always)]
pub fn revenue_of(producer_price: f64, harvest: f64) -> f64 {
    producer_price * harvest
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

/// Producers' income when the crop is a share α of it: revenue plus other income held fixed at
/// (1 − α)/α times the steady-state crop revenue `reference_revenue`.
#[inline]
pub fn income(revenue: f64, crop_income_share: f64, reference_revenue: f64) -> f64 {
    revenue + other_income(crop_income_share, reference_revenue)
}

/// The other income held fixed in [`income`]: (1 − α)/α times `reference_revenue` (a constant of
/// the run; the Monte Carlo computes it once).
#[inline]
pub fn other_income(crop_income_share: f64, reference_revenue: f64) -> f64 {
    (1.0 - crop_income_share) / crop_income_share * reference_revenue
}

/// The CRRA transform of income `y` scaled by `scale` (kept near 1 so powers neither overflow nor
/// underflow): (y/scale)^{1−R}, or ln(y/scale) at R = 1. Its mean gives the certainty equivalent
/// through [`crra_certainty_equivalent_of`].
#[inline]
pub fn crra_transform(y: f64, scale: f64, relative_risk_aversion: f64) -> f64 {
    Crra::new(relative_risk_aversion).of(y, scale)
}

/// The form [`crra_transform`] takes at one relative risk aversion R, chosen once (the Monte Carlo
/// chooses it once per run and applies it to every period of every path).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Crra {
    /// R = 0: x itself.
    Linear,
    /// R = 2: 1/x.
    Reciprocal,
    /// R = 1: ln x.
    Log,
    /// Any other R: x^e with e = 1 − R.
    Power(f64),
}

impl Crra {
    /// The form at relative risk aversion `relative_risk_aversion`.
    pub fn new(relative_risk_aversion: f64) -> Crra {
        // the common cases without a power (x¹ and x⁻¹ exactly; the Monte Carlo calls this every period)
        if relative_risk_aversion == 0.0 {
            Crra::Linear
        } else if relative_risk_aversion == 2.0 {
            Crra::Reciprocal
        } else if (relative_risk_aversion - 1.0).abs() < 1e-12 {
            Crra::Log
        } else {
            Crra::Power(1.0 - relative_risk_aversion)
        }
    }

    /// The transform of income `y` scaled by `scale` (see [`crra_transform`]).
    #[inline(always)]
    pub fn of(self, y: f64, scale: f64) -> f64 {
        let x = (y / scale).max(f64::MIN_POSITIVE);
        match self {
            Crra::Linear => x,
            Crra::Reciprocal => 1.0 / x,
            Crra::Log => x.ln(),
            Crra::Power(e) => x.powf(e),
        }
    }
}

/// The certainty equivalent from the mean `m` of [`crra_transform`] values.
pub fn crra_certainty_equivalent_of(m: f64, scale: f64, relative_risk_aversion: f64) -> f64 {
    if (relative_risk_aversion - 1.0).abs() < 1e-12 {
        scale * m.exp()
    } else {
        scale * m.powf(1.0 / (1.0 - relative_risk_aversion))
    }
}

/// The exact CRRA risk premium E[Y] − CE from the mean income and the mean CRRA transform
/// (Pratt 1964); 0 without risk aversion; never negative beyond rounding (Jensen).
pub fn crra_premium(
    mean: f64,
    mean_transform: f64,
    scale: f64,
    relative_risk_aversion: f64,
) -> f64 {
    if relative_risk_aversion <= 0.0 || mean.is_nan() || mean <= 0.0 {
        return 0.0;
    }
    let ce = crra_certainty_equivalent_of(mean_transform, scale, relative_risk_aversion);
    if ce.is_finite() {
        mean - ce
    } else {
        0.0
    }
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

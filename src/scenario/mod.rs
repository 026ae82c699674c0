//! Reading market and policy files into validated, trusted values.
//!
//! Input is read in two stages: [`raw`] mirrors the TOML key for key; [`validate`] checks every key once
//! and builds a [`Scenario`] (market file) or a [`PolicySpec`] (policy file). Everything downstream —
//! engine, stability, Monte Carlo — trusts these values and never re-checks them.

mod households;
pub mod ranges;
pub mod raw;
pub mod schema;
pub mod validate;

use serde::Serialize;

use crate::curves::{Curve, SteadyState};

pub use crate::input::keys::{self, apply_override, parse_toml};
pub use crate::input::InputError;
pub use crate::trade::Trade;
pub use households::HouseholdGroup;
pub use validate::{load_market, market_from_str, market_from_str_with, market_from_table};

/// What the market is: curves and units.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Market {
    /// Free-text name.
    pub name: String,
    /// Unit of quantities, e.g. "kt".
    pub quantity_unit: String,
    /// Unit of prices, e.g. "per t".
    pub price_unit: String,
    /// Demand Q = D(P).
    pub demand: Curve,
    /// Supply Q = S(P^e).
    pub supply: Curve,
    /// What farmers plant on (`[supply] plants_on`; left out of serialised output when it is the
    /// default, so existing outputs keep their bytes).
    #[serde(skip_serializing_if = "PlantsOn::is_price")]
    pub plants_on: PlantsOn,
}

/// What farmers plant on (`[supply] plants_on`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PlantsOn {
    /// The expected producer price (the default).
    #[default]
    Price,
    /// The expected revenue per unit of expected harvest, E[P·Y]/E[Y] with Y the yield factor
    /// (mean 1): Wright and Williams (1991). Backward-looking rules forecast the revenue-equivalent
    /// price P_t·Y_t; without yield risk (Y = 1) it is the price, bit for bit.
    Revenue,
}

impl PlantsOn {
    /// The file's word for it.
    pub fn as_str(&self) -> &'static str {
        match self {
            PlantsOn::Price => "price",
            PlantsOn::Revenue => "revenue",
        }
    }

    /// True for the default, `"price"`.
    pub fn is_price(&self) -> bool {
        *self == PlantsOn::Price
    }
}

/// A validated `[expectations]` section (the expectation rule with its parameters; defined with
/// the rules, `expectations::ExpectationSpec`).
pub use crate::expectations::ExpectationSpec;

/// How agency stock left at the last period is valued.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum TerminalStock {
    /// Sold into the market after T at the price its sale would cause: S_T·D⁻¹(Q* + S_T),
    /// discounted from T + 1 (the default).
    Disposal,
    /// At the last period's market price.
    Market,
    /// At zero.
    Zero,
}

impl TerminalStock {
    /// The file's word for it.
    pub fn as_str(&self) -> &'static str {
        match self {
            TerminalStock::Disposal => "disposal",
            TerminalStock::Market => "market",
            TerminalStock::Zero => "zero",
        }
    }
}

/// How the agency's opening stock (`[stock] initial`) is accounted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum OpeningStock {
    /// Bought at P_0 at t = 0: an undiscounted outlay in fiscal cost and net welfare (the default).
    Charged,
    /// Free (a stock that is truly sunk).
    Free,
}

impl OpeningStock {
    /// The file's word for it.
    pub fn as_str(&self) -> &'static str {
        match self {
            OpeningStock::Charged => "charged",
            OpeningStock::Free => "free",
        }
    }
}

/// At most this many alert prices (`[run] alert_price`).
pub const MAX_ALERTS: usize = 8;

/// The `[run]` section.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunSettings {
    /// Number of periods T.
    pub periods: usize,
    /// P_0, the price seen before the first planting.
    pub initial_price: f64,
    /// Producer prices before period 1, oldest first, ending with P_0 (filled with P_0 when not given).
    pub price_history: Vec<f64>,
    /// Monte Carlo replications (1 = one path).
    pub replications: usize,
    /// Seed of the random number generator.
    pub seed: u64,
    /// Discount rate r for present values.
    pub discount_rate: f64,
    /// Valuation of the agency stock left at T.
    pub terminal_stock: TerminalStock,
    /// Coefficient of relative risk aversion of producers (for the revenue risk premium).
    pub risk_aversion: f64,
    /// Accounting of the opening public stock.
    pub opening_stock: OpeningStock,
    /// λ, the marginal cost of public funds: net welfare counts λ·Δfiscal (1 = none).
    pub public_funds_cost: f64,
    /// α, the crop's share of producers' income (for the exact risk premium), in (0, 1].
    pub crop_income_share: f64,
    /// Alert prices (`[run] alert_price`), at most [`MAX_ALERTS`], ascending as given.
    pub alert_prices: Vec<f64>,
}

/// The `[shocks]` section.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct ShockSpec {
    /// Coefficient of variation of the multiplicative lognormal yield factor (mean 1).
    pub yield_cv: f64,
    /// Standard deviation of the additive harvest shock.
    pub supply_sd: f64,
    /// Standard deviation of the additive demand shock innovation.
    pub demand_sd: f64,
    /// AR(1) coefficient of the demand shock.
    pub demand_persistence: f64,
}

impl ShockSpec {
    /// True when every shock is zero (a deterministic run).
    pub fn is_deterministic(&self) -> bool {
        self.yield_cv == 0.0 && self.supply_sd == 0.0 && self.demand_sd == 0.0
    }
}

/// The `[storers]` section: competitive private stockholders.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Storers {
    /// Physical storage cost per unit per period.
    pub storage_cost: f64,
    /// Interest rate per period.
    pub interest_rate: f64,
    /// Share of private stock lost per period.
    pub loss_rate: f64,
}

/// A validated market file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Scenario {
    /// The file it came from.
    pub source: String,
    /// Curves and units.
    pub market: Market,
    /// The expectation rule.
    pub expectations: ExpectationSpec,
    /// Run settings.
    pub run: RunSettings,
    /// Weather and demand shocks.
    pub shocks: ShockSpec,
    /// Private storers, when present.
    pub storers: Option<Storers>,
    /// The border (`[trade]`), when the market trades; a market without it is closed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub trade: Option<Trade>,
    /// The steady state of the free market (exists: checked when the file was read).
    pub steady: SteadyState,
    /// Household groups (`[[households]]`; empty when the file has none).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub households: Vec<HouseholdGroup>,
}

impl Scenario {
    /// True when nothing random happens: no weather or demand shock and no varying world price
    /// (a market whose only randomness is the world price is stochastic).
    pub fn is_deterministic(&self) -> bool {
        self.shocks.is_deterministic() && self.trade.is_none_or(|t| t.world_price_cv == 0.0)
    }
}

//! Stage one of reading input: serde structs that mirror the TOML files key for key. Nothing here is
//! checked beyond TOML types; `validate` turns these into the trusted [`super::Scenario`] and
//! [`super::PolicySpec`].

use serde::Deserialize;

/// A market file as written.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawMarketFile {
    pub market: RawMarket,
    pub demand: Option<RawCurve>,
    pub supply: Option<RawCurve>,
    pub run: RawRun,
    pub shocks: RawShocks,
    pub storers: Option<RawStorers>,
    pub trade: Option<RawTrade>,
    /// `[[households]]`: an array of tables, one per household group.
    pub households: Option<Vec<RawHousehold>>,
}

/// One `[[households]]` table as written.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawHousehold {
    pub name: Option<String>,
    pub population_share: Option<f64>,
    pub income: Option<f64>,
    pub production_share: Option<f64>,
    pub consumption_share: Option<f64>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawMarket {
    pub name: Option<String>,
    pub quantity_unit: Option<String>,
    pub price_unit: Option<String>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawCurve {
    pub form: Option<String>,
    pub intercept: Option<f64>,
    pub slope: Option<f64>,
    pub at_price: Option<f64>,
    pub at_quantity: Option<f64>,
    pub elasticity: Option<f64>,
    /// `[supply] plants_on` only (the schema refuses it under `[demand]`).
    pub plants_on: Option<String>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawRun {
    pub periods: Option<i64>,
    pub initial_price: Option<f64>,
    pub price_history: Option<Vec<f64>>,
    pub replications: Option<i64>,
    pub seed: Option<i64>,
    pub discount_rate: Option<f64>,
    pub terminal_stock: Option<String>,
    pub risk_aversion: Option<f64>,
    pub opening_stock: Option<String>,
    pub public_funds_cost: Option<f64>,
    pub crop_income_share: Option<f64>,
    /// A number or an array of numbers (checked in `validate`).
    pub alert_price: Option<toml::Value>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawShocks {
    pub yield_cv: Option<f64>,
    pub supply_sd: Option<f64>,
    pub demand_sd: Option<f64>,
    pub demand_persistence: Option<f64>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawStorers {
    pub storage_cost: Option<f64>,
    pub interest_rate: Option<f64>,
    pub loss_rate: Option<f64>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawTrade {
    pub world_price: Option<f64>,
    pub world_price_cv: Option<f64>,
    pub world_price_persistence: Option<f64>,
    pub import_cost: Option<f64>,
    pub export_cost: Option<f64>,
}

pub use crate::input::ValueType;
use ValueType::*;

/// The keys each section of the market file allows and their types, for the unknown-key check
/// (with nearest-key suggestions) and the type check: the sections before `[expectations]` (whose
/// keys the expectation rules declare, `expectations::section_keys`) and those after it.
pub const MARKET_SCHEMA_BEFORE: &[(&str, &[(&str, ValueType)])] = &[
    (
        "market",
        &[
            ("name", Text),
            ("quantity_unit", Text),
            ("price_unit", Text),
        ],
    ),
    ("demand", CURVE_KEYS),
    ("supply", SUPPLY_KEYS),
];

/// The market file's sections after `[expectations]`.
pub const MARKET_SCHEMA_AFTER: &[(&str, &[(&str, ValueType)])] = &[
    (
        "run",
        &[
            ("periods", Integer),
            ("initial_price", Number),
            ("price_history", Numbers),
            ("replications", Integer),
            ("seed", Integer),
            ("discount_rate", Number),
            ("terminal_stock", Text),
            ("risk_aversion", Number),
            ("opening_stock", Text),
            ("public_funds_cost", Number),
            ("crop_income_share", Number),
            ("alert_price", NumberOrNumbers),
        ],
    ),
    (
        "shocks",
        &[
            ("yield_cv", Number),
            ("supply_sd", Number),
            ("demand_sd", Number),
            ("demand_persistence", Number),
        ],
    ),
    (
        "storers",
        &[
            ("storage_cost", Number),
            ("interest_rate", Number),
            ("loss_rate", Number),
        ],
    ),
    (
        "trade",
        &[
            ("world_price", Number),
            ("world_price_cv", Number),
            ("world_price_persistence", Number),
            ("import_cost", Number),
            ("export_cost", Number),
        ],
    ),
    (
        "households",
        &[
            ("name", Text),
            ("population_share", Number),
            ("income", Number),
            ("production_share", Number),
            ("consumption_share", Number),
        ],
    ),
];

const CURVE_KEYS: &[(&str, ValueType)] = &[
    ("form", Text),
    ("intercept", Number),
    ("slope", Number),
    ("at_price", Number),
    ("at_quantity", Number),
    ("elasticity", Number),
];

/// `[supply]`: a curve's keys and what farmers plant on (`"price"` | `"revenue"`).
const SUPPLY_KEYS: &[(&str, ValueType)] = &[
    ("form", Text),
    ("intercept", Number),
    ("slope", Number),
    ("at_price", Number),
    ("at_quantity", Number),
    ("elasticity", Number),
    ("plants_on", Text),
];

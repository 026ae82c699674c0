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
    pub expectations: Option<RawExpectations>,
    pub run: RawRun,
    pub shocks: RawShocks,
    pub storers: Option<RawStorers>,
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
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawExpectations {
    pub rule: Option<String>,
    pub weight: Option<f64>,
    pub window: Option<i64>,
    pub normal_price: Option<f64>,
    pub initial_expected_price: Option<f64>,
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

/// A policy file as written.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawPolicyFile {
    pub policy: RawPolicy,
    pub floor: Option<RawFloor>,
    pub stock: Option<RawStock>,
    pub expectations: Option<RawExpectations>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawPolicy {
    pub name: Option<String>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawFloor {
    pub price: Option<f64>,
    pub instrument: Option<String>,
    pub announced: Option<bool>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawStock {
    pub buy_below: Option<f64>,
    pub sell_above: Option<f64>,
    pub capacity: Option<f64>,
    pub initial: Option<f64>,
    pub storage_cost: Option<f64>,
    pub loss_rate: Option<f64>,
    pub purchase_budget: Option<f64>,
    pub financing_rate: Option<f64>,
    pub handling_cost: Option<f64>,
    pub release: Option<String>,
    pub target: Option<f64>,
    pub speed: Option<f64>,
    pub share: Option<f64>,
}

/// The keys each section allows, for the unknown-key check (with nearest-key suggestions).
pub const MARKET_SCHEMA: &[(&str, &[&str])] = &[
    ("market", &["name", "quantity_unit", "price_unit"]),
    ("demand", CURVE_KEYS),
    ("supply", CURVE_KEYS),
    ("expectations", EXPECTATION_KEYS),
    (
        "run",
        &[
            "periods",
            "initial_price",
            "price_history",
            "replications",
            "seed",
            "discount_rate",
            "terminal_stock",
            "risk_aversion",
        ],
    ),
    (
        "shocks",
        &["yield_cv", "supply_sd", "demand_sd", "demand_persistence"],
    ),
    ("storers", &["storage_cost", "interest_rate", "loss_rate"]),
];

/// The keys a policy file allows.
pub const POLICY_SCHEMA: &[(&str, &[&str])] = &[
    ("policy", &["name"]),
    ("floor", &["price", "instrument", "announced"]),
    (
        "stock",
        &[
            "buy_below",
            "sell_above",
            "capacity",
            "initial",
            "storage_cost",
            "loss_rate",
            "purchase_budget",
            "financing_rate",
            "handling_cost",
            "release",
            "target",
            "speed",
            "share",
        ],
    ),
    ("expectations", EXPECTATION_KEYS),
];

const CURVE_KEYS: &[&str] = &[
    "form",
    "intercept",
    "slope",
    "at_price",
    "at_quantity",
    "elasticity",
];
const EXPECTATION_KEYS: &[&str] = &[
    "rule",
    "weight",
    "window",
    "normal_price",
    "initial_expected_price",
];

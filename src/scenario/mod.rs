//! Reading market and policy files into validated, trusted values.
//!
//! Input is read in two stages: [`raw`] mirrors the TOML key for key; [`validate`] checks every key once
//! and builds a [`Scenario`] (market file) or a [`PolicySpec`] (policy file). Everything downstream —
//! engine, stability, Monte Carlo — trusts these values and never re-checks them.

pub mod keys;
pub mod ranges;
pub mod raw;
pub mod schema;
pub mod validate;

use serde::Serialize;

use crate::curves::{Curve, SteadyState};

pub use keys::{apply_override, parse_toml};
pub use validate::{
    load_market, load_policy, market_from_str, market_from_str_with, market_from_table,
    policy_for_market, policy_from_str, policy_from_table,
};

/// An input problem, always naming the file and, where there is one, the key and the value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum InputError {
    /// The file could not be read.
    #[error("{file}: cannot read: {reason}")]
    Unreadable { file: String, reason: String },
    /// TOML syntax or type error, with line and column where the parser gave them.
    #[error("{file}: {message}")]
    Syntax { file: String, message: String },
    /// A key that no section allows.
    #[error("{file}: {key}: unknown key{suggestion}")]
    UnknownKey {
        file: String,
        key: String,
        suggestion: String,
    },
    /// A key whose value is out of range or inconsistent with others.
    #[error("{file}: {key} = {value}: {expected}")]
    BadValue {
        file: String,
        key: String,
        value: String,
        expected: String,
    },
    /// A required key is missing.
    #[error("{file}: {key}: missing; {expected}")]
    Missing {
        file: String,
        key: String,
        expected: String,
    },
}

impl InputError {
    /// The dotted key the error is about, when it is about one.
    pub fn key(&self) -> Option<&str> {
        match self {
            InputError::UnknownKey { key, .. }
            | InputError::BadValue { key, .. }
            | InputError::Missing { key, .. } => Some(key),
            _ => None,
        }
    }
}

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
    /// The steady state of the free market (exists: checked when the file was read).
    pub steady: SteadyState,
    /// Household groups (`[[households]]`; empty when the file has none).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub households: Vec<crate::households::HouseholdGroup>,
}

/// A validated policy file: its rules, each read from its own section through the registry
/// (`policies::SECTIONS`), in acting order.
#[derive(Debug, Clone, Serialize)]
pub struct PolicySpec {
    /// The file it came from (empty for the built-in "no intervention").
    pub source: String,
    /// Display name.
    pub name: String,
    /// The rules, in acting order (empty: the market left alone).
    pub rules: Vec<crate::policies::RuleRef>,
    /// Expectation rule that overrides the market file's.
    pub expectations: Option<ExpectationSpec>,
    /// Money per season the treasury set aside (`[policy] annual_budget`), if any.
    pub annual_budget: Option<f64>,
}

impl PartialEq for PolicySpec {
    fn eq(&self, other: &Self) -> bool {
        self.source == other.source
            && self.name == other.name
            && self.expectations == other.expectations
            && self.annual_budget == other.annual_budget
            && self.rules.len() == other.rules.len()
            && self
                .rules
                .iter()
                .zip(&other.rules)
                .all(|(a, b)| a.section() == b.section() && a.describe() == b.describe())
    }
}

impl PolicySpec {
    /// The market left alone.
    pub fn none() -> PolicySpec {
        PolicySpec {
            source: String::new(),
            name: "No intervention".into(),
            rules: Vec::new(),
            expectations: None,
            annual_budget: None,
        }
    }

    /// True when the policy does nothing (no rule, no override).
    pub fn is_none(&self) -> bool {
        self.rules.is_empty() && self.expectations.is_none()
    }

    /// True when some rule trades or pays; a policy without rules may still override the
    /// farmers' expectation rule, which is a change in behaviour, not a policy.
    pub fn intervenes(&self) -> bool {
        !self.rules.is_empty()
    }

    /// The rule read from `section`, if the file has it.
    pub fn rule(&self, section: &str) -> Option<&crate::policies::RuleRef> {
        self.rules.iter().find(|r| r.section() == section)
    }
}

/// Reads a file and tells whether it is a policy file (it has a `[policy]` section).
pub fn is_policy_text(text: &str) -> bool {
    match text.parse::<toml::Table>() {
        Ok(t) => t.contains_key("policy"),
        Err(_) => text.lines().any(|l| l.trim() == "[policy]"),
    }
}

/// What a file is, decided by the sections it has.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum FileKind {
    /// A market file: it has sections only a market file takes (`[demand]`, `[supply]`, `[run]` …).
    Market,
    /// A policy file: it has sections only a policy file takes (`[policy]`, `[floor]`, `[stock]`).
    Policy,
}

/// Decides whether `text` is a market or a policy file by the sections present (`[expectations]`
/// belongs to both), and says which sections decided it. A file with sections of both kinds, or
/// with none that decides, is an error naming the file; a file that does not parse gives the
/// parser's error.
pub fn file_kind(file: &str, text: &str) -> Result<(FileKind, Vec<String>), InputError> {
    let table = parse_toml(file, text)?;
    let only_in = |a: &schema::Schema, b: &schema::Schema| {
        table
            .keys()
            .filter(|k| a.iter().any(|(s, _)| s == k) && !b.iter().any(|(s, _)| s == k))
            .map(|k| format!("[{k}]"))
            .collect::<Vec<_>>()
    };
    let (market_schema, policy_schema) = (schema::market(), schema::policy());
    let market = only_in(&market_schema, &policy_schema);
    let policy = only_in(&policy_schema, &market_schema);
    match (market.is_empty(), policy.is_empty()) {
        (false, true) => Ok((FileKind::Market, market)),
        (true, false) => Ok((FileKind::Policy, policy)),
        (false, false) => Err(InputError::Syntax {
            file: file.into(),
            message: format!(
                "mixes market sections ({}) and policy sections ({}): a market and a policy go in \
                 separate files",
                market.join(", "),
                policy.join(", ")
            ),
        }),
        (true, true) => {
            let what = if text.trim().is_empty() {
                "the file is empty".to_string()
            } else if table.is_empty() {
                "the file has no sections (only comments, or cut short)".to_string()
            } else {
                let found: Vec<String> = table
                    .keys()
                    .map(|k| format!("[{}]", ranges::escape(k)))
                    .collect();
                format!("it has only {}", found.join(", "))
            };
            Err(InputError::Missing {
                file: file.into(),
                key: "[demand] or [policy]".into(),
                expected: format!(
                    "neither a market file (needs [demand] and [supply]) nor a policy file (needs \
                     [policy]): {what}"
                ),
            })
        }
    }
}

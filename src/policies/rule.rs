//! The one trait every policy rule implements, and the registry of rule sections.
//!
//! A policy file is a list of rules, one per section (`[floor]`, `[stock]`, `[ceiling]`). Each rule is
//! written once, in its own file, as a type implementing [`Rule`]: how it reads its keys, how it acts
//! in a period, how it decides inside the storage equilibrium, which regimes it creates for
//! stability, and how it describes itself. [`SECTIONS`] is the only registration point: the schema
//! of policy files, the unknown-key check, `--vary` routing, validation and every consumer reach the
//! rules through it and through the trait, never by naming a rule.

use std::sync::Arc;

use serde::Serialize;

use super::in_storage::StoragePlan;
use super::{Agency, PolicyRule};
use crate::input::Check;
use crate::input::InputError;
use crate::input::Key;
use crate::regime::Regimes;
use crate::regime::StabilityError;
use crate::scenario::Scenario;

/// A rule as the period engine needs it: its period actions (each at its rank in the acting order)
/// and its share of the agency's standing parameters.
#[derive(Debug, Default)]
pub struct Build {
    /// Period actions with their rank (smaller acts first; stable within a rank).
    pub actions: Vec<(u8, Box<dyn PolicyRule>)>,
    /// The agency's parameters.
    pub agency: Agency,
    /// Price above which a stock-out counts, if any.
    pub sell_above: Option<f64>,
    /// Border measures (free trade unless `[border]` sets them).
    pub border: crate::trade::BorderMeasures,
}

/// Acting order within a period (the documented order): purchases defending a floor, the stock
/// rule, sales defending a ceiling, public imports; the market clears; then payments on the
/// cleared price.
pub mod rank {
    /// A floor defended by purchase.
    pub const FLOOR_PURCHASE: u8 = 0;
    /// The buffer-stock rule.
    pub const STOCK: u8 = 1;
    /// A ceiling defended by release.
    pub const CEILING_RELEASE: u8 = 2;
    /// Public imports (state trading, `[border] public_import_above`): what the agency's domestic
    /// trades leave above the trigger price.
    pub const PUBLIC_IMPORT: u8 = 3;
    /// Payments to producers.
    pub const PRODUCER_PAYMENT: u8 = 4;
    /// Payments to consumers.
    pub const CONSUMER_PAYMENT: u8 = 5;
}

/// What the Monte Carlo watches for a policy (its failure shares).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Watched {
    /// A floor defended by purchase.
    pub purchase_floor: Option<f64>,
    /// The band [buy_below, sell_above] of a buffer stock.
    pub band: Option<(f64, f64)>,
}

/// One row of the policy assumptions table: the label (with `{price}` / `{quantity}` standing for
/// the market's units) and the value, formatted by the caller's number format.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    /// Label, e.g. `price floor ({price})`.
    pub label: &'static str,
    /// The value.
    pub value: Cell,
}

/// A value in the assumptions table.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// A price (∞ shows as "unlimited").
    Price(f64),
    /// A quantity (∞ shows as "unlimited").
    Quantity(f64),
    /// A plain number with this many decimals.
    Number(f64, usize),
    /// Words.
    Text(String),
}

/// Everything the program needs from one policy rule. No method has a default: a new rule states
/// each behaviour, and `tests/rules.rs` checks every registered rule answers each.
pub trait Rule: Send + Sync + std::fmt::Debug {
    /// The file section it was read from.
    fn section(&self) -> &'static str;
    /// Period engine: adds its period actions and its agency parameters to `build`.
    fn build(&self, build: &mut Build);
    /// Storage equilibrium: adds what it does to the agency's plan; `Err(reason)` when the storage
    /// model does not cover this rule as configured.
    fn storage(&self, plan: &mut StoragePlan) -> Result<(), String>;
    /// Stability: adds the regimes it creates (and the one holding the steady state, if it holds it).
    fn regimes(&self, regimes: &mut Regimes) -> Result<(), StabilityError>;
    /// What it asks of the market it runs on (`crate::policies::file::policy_for_market`).
    fn check_market(&self, check: &Check, scenario: &Scenario) -> Result<(), InputError>;
    /// The highest price it defends or pays up to (the engine's divergence bound is 1000 times the
    /// largest reference price); 0 when it defends none.
    fn reference_price(&self) -> f64;
    /// One line for `check`, e.g. `floor 95 by purchase, announced`.
    fn describe(&self) -> String;
    /// The prices it defends, to draw on a price chart: (words before the price, price), finite only.
    fn price_lines(&self) -> Vec<(&'static str, f64)>;
    /// Its rows of the policy assumptions table (see [`RuleSection::absent`] for a policy without it).
    fn rows(&self) -> Vec<Row>;
    /// A warning in words when the rule cannot be kept up at the free market's steady state.
    fn warning(&self, scenario: &Scenario, agency: &Agency) -> Option<String>;
    /// Adds what the Monte Carlo watches for it.
    fn watch(&self, watched: &mut Watched);
}

/// A validated rule, shared (a policy is cloned per grid point and per thread).
#[derive(Debug, Clone)]
pub struct RuleRef(pub Arc<dyn Rule>);

impl std::ops::Deref for RuleRef {
    type Target = dyn Rule + 'static;
    fn deref(&self) -> &(dyn Rule + 'static) {
        &*self.0
    }
}

impl Serialize for RuleRef {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut m = s.serialize_map(Some(2))?;
        m.serialize_entry("section", self.section())?;
        m.serialize_entry("rule", &self.describe())?;
        m.end()
    }
}

/// A registered rule section: its keys (one schema: types, ranges, documentation) and how it is
/// read.
#[derive(Debug, Clone, Copy)]
pub struct RuleSection {
    /// The section name, e.g. `ceiling`.
    pub name: &'static str,
    /// Its keys with types and ranges.
    pub keys: &'static [Key],
    /// Reads and validates the section (its table as written; keys and types already checked).
    pub read: fn(&Check, &toml::Table) -> Result<RuleRef, InputError>,
    /// The assumptions-table rows of a policy without this section (label, value).
    pub absent: &'static [(&'static str, &'static str)],
    /// One example of the section per variant (TOML, section header included), for the
    /// documentation and for `tests/rules.rs`, which runs every behaviour of every variant.
    pub examples: &'static [&'static str],
}

/// Every rule section, in file order (the only registration point for policy rules).
pub const SECTIONS: &[RuleSection] = &[
    super::floor::SECTION,
    super::stock::SECTION,
    super::ceiling::SECTION,
    super::border::SECTION,
];

/// The registered section called `name`.
pub fn section(name: &str) -> Option<&'static RuleSection> {
    SECTIONS.iter().find(|s| s.name == name)
}

/// Wraps a rule.
pub fn rule_ref<R: Rule + 'static>(r: R) -> RuleRef {
    RuleRef(Arc::new(r))
}

//! Side-by-side evaluation of policies against the market left alone.
//!
//! [`compare`] runs the Monte Carlo once for the market without intervention (the baseline, always
//! simulated) and each distinct policy, all on the same shocks, and turns the outcome into an ordered
//! list of [`Indicator`]s per policy (see `indicators.rs` for the definitions) plus per-period fan data
//! for plots. A policy that does nothing ([`PolicySpec::is_none`]) reuses the baseline's figures
//! exactly, so its welfare changes are exactly zero. [`render`] turns a result into tables or JSON.

mod indicators;
pub mod render;

use rayon::prelude::*;
use serde::Serialize;

pub use indicators::indicator_keys;

use crate::scenario::{PolicySpec, Scenario};
use crate::stochastic::{
    run_monte_carlo_sources, sources, PathSource, Progress, ReplicationFailed, Series, Summary,
};
use crate::storage::LongRun;

/// The value of one indicator.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// A number (non-finite numbers are written as null / an empty cell).
    Number(f64),
    /// A word, e.g. a verdict.
    Text(String),
    /// Not available (e.g. no stability analysis).
    Missing,
}

impl Serialize for Value {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self {
            Value::Number(x) if x.is_finite() => s.serialize_f64(*x),
            Value::Text(t) => s.serialize_str(t),
            _ => s.serialize_none(),
        }
    }
}

/// How an indicator is measured, for choosing decimals and the unit shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// A price (price units).
    Price,
    /// A quantity (quantity units).
    Quantity,
    /// A share or ratio (no unit).
    Share,
    /// Money (price units × quantity units), usually a present value.
    Money,
    /// A pure number (spectral radius).
    Number,
    /// A word.
    Text,
}

/// One row of the comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Indicator {
    /// Machine key (JSON key, CSV row name), e.g. `net_welfare_change_pv`.
    pub key: &'static str,
    /// Human label for tables.
    pub label: &'static str,
    /// What it measures.
    pub kind: Kind,
    /// The value.
    pub value: Value,
}

/// Per-period data for fan charts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Fan {
    /// Market price per period: mean and 5/50/95 % quantiles across replications.
    pub price: Vec<Summary>,
    /// Agency stock per period.
    pub stock: Vec<Summary>,
    /// Mean fiscal cost per period.
    pub mean_fiscal_cost: Vec<f64>,
}

/// One policy's column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PolicyComparison {
    /// Display name (`[policy] name`).
    pub name: String,
    /// The file it came from (empty for the built-in market left alone).
    pub file: String,
    /// True for the market left alone (the baseline's own figures).
    pub is_baseline: bool,
    /// Indicators in display order.
    pub indicators: Vec<Indicator>,
    /// Fan-chart data.
    pub fan: Fan,
}

impl PolicyComparison {
    /// The value of indicator `key`, if there is one.
    pub fn get(&self, key: &str) -> Option<&Value> {
        self.indicators
            .iter()
            .find(|i| i.key == key)
            .map(|i| &i.value)
    }

    /// The numeric value of indicator `key`, if it is a number.
    pub fn number(&self, key: &str) -> Option<f64> {
        match self.get(key) {
            Some(Value::Number(x)) => Some(*x),
            _ => None,
        }
    }
}

/// The outcome of [`compare`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareResult {
    /// Market name.
    pub market: String,
    /// Price unit (e.g. "crowns per t").
    pub price_unit: String,
    /// Quantity unit (e.g. "kt").
    pub quantity_unit: String,
    /// Replications run.
    pub replications: usize,
    /// Periods per replication.
    pub periods: usize,
    /// Seed used.
    pub seed: u64,
    /// Discount rate of the present values.
    pub discount_rate: f64,
    /// Producers' relative risk aversion used for the risk premium.
    pub risk_aversion: f64,
    /// The market left alone (the baseline every change is measured against).
    pub baseline: PolicyComparison,
    /// The policies given, in order.
    pub policies: Vec<PolicyComparison>,
}

/// Why a comparison could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CompareError {
    /// No policy was given.
    #[error("no policy file given: compare needs at least one")]
    NoPolicies,
    /// A replication diverged.
    #[error(transparent)]
    Failed(#[from] ReplicationFailed),
    /// The storage equilibrium of a market with private storers could not be solved.
    #[error(transparent)]
    Storage(#[from] crate::storage::StorageError),
}

/// Compares `policies` (in order) with the market left alone under `scenario`'s shocks,
/// replications, seed and periods.
pub fn compare(
    scenario: &Scenario,
    policies: &[PolicySpec],
    progress: &dyn Progress,
) -> Result<CompareResult, CompareError> {
    if policies.is_empty() {
        return Err(CompareError::NoPolicies);
    }
    // index 0 is the baseline; a do-nothing policy maps onto it
    let mut specs = vec![PolicySpec::none()];
    let slots: Vec<usize> = policies
        .iter()
        .map(|p| {
            if p.is_none() {
                0
            } else {
                specs.push(p.clone());
                specs.len() - 1
            }
        })
        .collect();
    let paths = sources(scenario, &specs)?;
    let mc = run_monte_carlo_sources(scenario, &paths, &[Series::Price, Series::Stock], progress)?;
    // long-run stocks of each solved storage equilibrium, simulated once per policy
    let long: Vec<Option<LongRun>> = paths
        .par_iter()
        .map(|p| match p {
            PathSource::Storage(s) => Some(crate::storage::long_run(s)),
            PathSource::Engine(_) => None,
        })
        .collect();
    let base = &mc.policies[0];
    let column = |spec: &PolicySpec, slot: usize| {
        let runs = &mc.policies[slot];
        PolicyComparison {
            name: spec.name.clone(),
            file: spec.source.clone(),
            is_baseline: slot == 0,
            indicators: indicators::build(
                scenario,
                spec,
                runs,
                base,
                long[slot].as_ref().zip(long[0].as_ref()),
            ),
            fan: Fan {
                price: runs.series[0].periods.clone(),
                stock: runs.series[1].periods.clone(),
                mean_fiscal_cost: runs.mean_fiscal_cost.clone(),
            },
        }
    };
    Ok(CompareResult {
        market: scenario.market.name.clone(),
        price_unit: scenario.market.price_unit.clone(),
        quantity_unit: scenario.market.quantity_unit.clone(),
        replications: mc.replications,
        periods: mc.periods,
        seed: scenario.run.seed,
        discount_rate: scenario.run.discount_rate,
        risk_aversion: scenario.run.risk_aversion,
        baseline: column(&specs[0], 0),
        policies: policies
            .iter()
            .zip(&slots)
            .map(|(p, &slot)| column(p, slot))
            .collect(),
    })
}

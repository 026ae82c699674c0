//! How much a comparison's answer depends on its assumptions.
//!
//! [`sensitivity`] runs three things on the same shocks (common random numbers):
//! - the **assumption panel**: every policy under each expectation rule, against the market left
//!   alone under the *same* rule — each row is exactly `compare` with that rule written into the
//!   market file (and the policy's own `[expectations]` override dropped); cells are the chosen
//!   indicators with their `_se`; sign changes across rules are flagged and each policy gets
//!   "net welfare gain under k of n assumptions" (a gain counts beyond two standard errors);
//! - the **forecast-error decomposition**: for each rule, the market left alone under rational
//!   expectations against the market left alone under the rule (what better forecasts alone would
//!   be worth), beside each policy's effect;
//! - the **tornado** (`tornado.rs`): one file key at a time at its low and high value (or, in a
//!   market file `fit` wrote, its value ± two recorded standard errors: `fit_range.rs`), the others
//!   at base (keys routed to the market or policy file as `sweep --vary` routes them), the
//!   indicator at each end and the swing, sorted by swing.
//!
//! Rules are named by their short form (`ExpectationSpec::from_short`: `adaptive:0.6`); nothing
//! here names an expectation rule (the rational one is found by asking `is_rational`).

pub mod annex;
pub mod fit_range;
mod render;
mod tornado;

use serde::Serialize;

pub use fit_range::read_range;
pub use render::{figures, render};
pub use tornado::{parse_range, Range, TornadoBar};

use crate::compare::{compare_indicators, CompareError, Indicator, Kind, PolicyComparison, Value};
use crate::policies::file::{policy_for_market, policy_from_table};
use crate::policies::PolicySpec;
use crate::scenario::{market_from_table, ExpectationSpec, InputError, Scenario};
use crate::stochastic::Progress;

/// The indicators a panel shows when none is asked for.
pub const DEFAULT_INDICATORS: &[&str] = &["net_welfare_change_pv", "fiscal_cost_pv", "price_cv"];

/// The indicator the gain count and the forecast decomposition use.
pub const NET_WELFARE: &str = "net_welfare_change_pv";

/// Why a sensitivity analysis could not be made.
#[derive(Debug, thiserror::Error)]
pub enum SensitivityError {
    /// A malformed option (`--rules`, `--range`, `--indicator`).
    #[error("{0}")]
    Usage(String),
    /// An option's value, or the files with it applied, do not validate (the message names the
    /// option, then the file, key, value and allowed range).
    #[error("{what}: {error}")]
    Input {
        /// The option and value that led to it (e.g. `--rules naive`).
        what: String,
        /// The validation error (in the message, not the chain: it is bad input, exit 2).
        error: InputError,
    },
    /// A comparison failed (a storage solve); the cause follows in the error chain.
    #[error("{what}")]
    Compare {
        /// The assumption it ran under.
        what: String,
        /// The comparison's error.
        #[source]
        source: CompareError,
    },
}

/// One expectation rule of the panel: as the user wrote it and as validated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Assumption {
    /// The validated rule.
    pub spec: ExpectationSpec,
}

impl Assumption {
    /// The rule with its parameters in words (`adaptive (weight 0.6)`).
    pub fn describe(&self) -> String {
        self.spec.rule().describe()
    }
}

/// Reads `--rules`: a comma-separated list of rules in their short form
/// (`naive,adaptive:0.6,trailing-mean:3`); empty gives every registered rule's short form.
pub fn parse_rules(list: &str) -> Result<Vec<Assumption>, SensitivityError> {
    let items: Vec<&str> = list
        .split(',')
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .collect();
    if items.is_empty() {
        return Ok(ExpectationSpec::short_forms()
            .into_iter()
            .map(|spec| Assumption { spec })
            .collect());
    }
    let mut out: Vec<Assumption> = Vec::new();
    for item in items {
        let what = format!("--rules {item}");
        let spec = ExpectationSpec::from_short(item, &what)
            .map_err(|error| SensitivityError::Usage(error.to_string()))?;
        if out.iter().any(|a| a.spec == spec) {
            return Err(SensitivityError::Usage(format!(
                "--rules {item}: the same rule is listed twice"
            )));
        }
        out.push(Assumption { spec });
    }
    Ok(out)
}

/// The files a sensitivity analysis starts from, as parsed (the command line's `--seed`,
/// `--replications`, `--periods` already written into the market file).
#[derive(Debug, Clone)]
pub struct Inputs {
    /// Market file name (for messages).
    pub market_file: String,
    /// Market file as parsed.
    pub market: toml::Table,
    /// Policy files (name, parsed), in order.
    pub policies: Vec<(String, toml::Table)>,
}

/// What to run.
#[derive(Debug, Clone)]
pub struct Request {
    /// The panel's rows.
    pub rules: Vec<Assumption>,
    /// The tornado's keys (none: no tornado).
    pub ranges: Vec<Range>,
    /// The panel's indicators (each shown with its `_se` where it has one); the first is the
    /// tornado's.
    pub indicators: Vec<String>,
}

/// One cell of the panel: a policy under a rule.
#[derive(Debug, Clone, PartialEq)]
pub struct Cell {
    /// The rule in words.
    pub rule: String,
    /// The rule as a file section.
    pub expectations: ExpectationSpec,
    /// The policy's name.
    pub policy: String,
    /// The policy's file.
    pub file: String,
    /// The chosen indicators and their standard errors, in order (empty when the run diverged).
    pub indicators: Vec<Indicator>,
    /// Why the comparison under this rule failed (a replication diverged), if it did.
    pub diverged: Option<String>,
}

impl Serialize for Cell {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        struct Map<'a>(&'a [Indicator]);
        impl Serialize for Map<'_> {
            fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
                let mut m = s.serialize_map(Some(self.0.len()))?;
                for i in self.0 {
                    m.serialize_entry(&i.key, &i.value)?;
                }
                m.end()
            }
        }
        let mut m = s.serialize_map(None)?;
        m.serialize_entry("rule", &self.rule)?;
        m.serialize_entry("expectations", &self.expectations)?;
        m.serialize_entry("policy", &self.policy)?;
        m.serialize_entry("file", &self.file)?;
        m.serialize_entry("indicators", &Map(&self.indicators))?;
        if let Some(why) = &self.diverged {
            m.serialize_entry("diverged", why)?;
        }
        m.end()
    }
}

impl Cell {
    /// The number of indicator `key`, if it is one.
    pub fn number(&self, key: &str) -> Option<f64> {
        crate::compare::finite_number(&self.indicators, key)
    }
}

/// What the market left alone gains when farmers forecast rationally instead of by a rule.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ForecastGain {
    /// The rule in words.
    pub rule: String,
    /// Net welfare change PV of the market left alone: rational expectations minus the rule
    /// (0 for the rational rule itself; none when either run diverged).
    pub net_welfare_change_pv: Option<f64>,
    /// Its Monte Carlo standard error (paired; none with one replication).
    pub net_welfare_change_pv_se: Option<f64>,
}

/// How one policy's answer holds up across the panel's rules.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Robustness {
    /// The policy's name.
    pub policy: String,
    /// Rules under which net welfare rises by more than two standard errors.
    pub gains: usize,
    /// Rules under which it falls by more than two standard errors.
    pub losses: usize,
    /// Rules in the panel.
    pub assumptions: usize,
    /// Rules under which the comparison diverged (neither gain nor loss).
    pub diverged: usize,
    /// The chosen indicators whose sign differs between rules.
    pub sign_changes: Vec<String>,
}

/// The whole analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sensitivity {
    /// Market name.
    pub market: String,
    /// Price unit.
    pub price_unit: String,
    /// Quantity unit.
    pub quantity_unit: String,
    /// Replications per run.
    pub replications: usize,
    /// Periods per replication.
    pub periods: usize,
    /// Seed of every run.
    pub seed: u64,
    /// The panel's indicators (without their `_se`).
    pub indicators: Vec<String>,
    /// The panel's rules in words, in order.
    pub rules: Vec<String>,
    /// The policies' names, in order.
    pub policies: Vec<String>,
    /// One cell per rule and policy, rule by rule.
    pub panel: Vec<Cell>,
    /// One per rule: what rational forecasts alone would be worth (empty when no registered rule
    /// is rational).
    pub forecasts: Vec<ForecastGain>,
    /// One per policy.
    pub robustness: Vec<Robustness>,
    /// The tornado: per policy, one bar per key, widest swing first.
    pub tornado: Vec<TornadoBar>,
}

/// The market file with `[expectations]` replaced by `spec`, validated.
fn market_under(inputs: &Inputs, spec: &ExpectationSpec) -> Result<Scenario, InputError> {
    let mut table = inputs.market.clone();
    table.insert("expectations".into(), toml::Value::Table(spec.to_table()));
    market_from_table(&inputs.market_file, table)
}

/// The policy files without their own `[expectations]` (the panel sets the rule for all),
/// validated and checked against `scenario`.
fn policies_under(inputs: &Inputs, scenario: &Scenario) -> Result<Vec<PolicySpec>, InputError> {
    inputs
        .policies
        .iter()
        .map(|(file, table)| {
            let mut t = table.clone();
            t.remove("expectations");
            let p = policy_from_table(file, t)?;
            policy_for_market(scenario, &p)?;
            Ok(p)
        })
        .collect()
}

/// The value of `key` and of `key_se` in a column, as indicators (missing ones as `Missing`).
fn chosen(column: &PolicyComparison, keys: &[String]) -> Vec<Indicator> {
    let mut out = Vec::new();
    for key in keys {
        for k in [key.clone(), format!("{key}_se")] {
            if let Some(i) = column.indicators.iter().find(|i| i.key == k) {
                out.push(i.clone());
            }
        }
    }
    out
}

/// Checks that every chosen indicator is one a comparison gives, and is a number.
fn check_indicators(keys: &[String], column: &PolicyComparison) -> Result<(), SensitivityError> {
    for key in keys {
        match column.indicators.iter().find(|i| &i.key == key) {
            None => {
                let known: Vec<&str> = column
                    .indicators
                    .iter()
                    .filter(|i| i.kind != Kind::Text)
                    .map(|i| i.key.as_str())
                    .collect();
                return Err(SensitivityError::Usage(format!(
                    "--indicator {key}: not an indicator of this comparison; allowed: {}",
                    known.join(", ")
                )));
            }
            Some(i) if i.kind == Kind::Text => {
                return Err(SensitivityError::Usage(format!(
                    "--indicator {key}: a word, not a number; choose a numeric indicator"
                )));
            }
            _ => {}
        }
    }
    Ok(())
}

/// A mean and its Monte Carlo standard error (none with one replication).
type Estimate = (f64, Option<f64>);

/// A comparison's result, its divergence as a note (`Err`), or any other failure as the error.
pub(crate) fn diverged_or<T>(
    result: Result<T, CompareError>,
    what: &str,
) -> Result<Result<T, String>, SensitivityError> {
    match result {
        Ok(r) => Ok(Ok(r)),
        Err(CompareError::Failed(f)) => {
            let mut why = f.to_string();
            let mut cause = std::error::Error::source(&f);
            while let Some(c) = cause {
                let part = c.to_string();
                if !why.contains(&part) {
                    why = format!("{why}: {part}");
                }
                cause = c.source();
            }
            Ok(Err(why))
        }
        Err(source) => Err(SensitivityError::Compare {
            what: what.to_string(),
            source,
        }),
    }
}

/// Runs the panel, the forecast decomposition and the tornado. A rule under which a replication
/// diverges gives a row marked diverged (with the reason), not a failure: that the market cannot
/// settle under a rule is itself an answer.
pub fn sensitivity(
    inputs: &Inputs,
    request: &Request,
    progress: &dyn Progress,
) -> Result<Sensitivity, SensitivityError> {
    if inputs.policies.is_empty() {
        return Err(SensitivityError::Usage(
            "no policy file given: sensitivity needs at least one".into(),
        ));
    }
    if request.rules.is_empty() {
        return Err(SensitivityError::Usage("--rules: no rule given".into()));
    }
    let indicators: Vec<String> = if request.indicators.is_empty() {
        DEFAULT_INDICATORS.iter().map(|s| s.to_string()).collect()
    } else {
        request.indicators.clone()
    };
    let rational = ExpectationSpec::short_forms()
        .into_iter()
        .find(|s| s.is_rational());
    let mut panel = Vec::new();
    let mut net: Vec<Vec<Option<Estimate>>> = vec![Vec::new(); inputs.policies.len()];
    let mut forecasts = Vec::new();
    let mut head: Option<(Scenario, Vec<String>)> = None;
    let mut checked = false;
    for rule in &request.rules {
        let what = format!("--rules: {}", rule.describe());
        let input = |error| SensitivityError::Input {
            what: what.clone(),
            error,
        };
        let scenario = market_under(inputs, &rule.spec).map_err(input)?;
        let policies = policies_under(inputs, &scenario).map_err(input)?;
        if head.is_none() {
            let names = policies.iter().map(|p| p.name.clone()).collect();
            head = Some((scenario.clone(), names));
        }
        let result = diverged_or(compare_indicators(&scenario, &policies, progress), &what)?;
        if let Ok(result) = &result {
            if !checked {
                check_indicators(&indicators, &result.policies[0])?;
                checked = true;
            }
        }
        for (k, ((file, _), spec)) in inputs.policies.iter().zip(&policies).enumerate() {
            let (cell, diverged) = match &result {
                Ok(r) => (chosen(&r.policies[k], &indicators), None),
                Err(why) => (Vec::new(), Some(format!("{what}: {why}"))),
            };
            let number = |key: &str| match &result {
                Ok(r) => r.policies[k].number(key),
                Err(_) => None,
            };
            net[k].push(number(NET_WELFARE).map(|x| (x, number(&format!("{NET_WELFARE}_se")))));
            panel.push(Cell {
                rule: rule.describe(),
                expectations: rule.spec,
                policy: spec.name.clone(),
                file: file.clone(),
                indicators: cell,
                diverged,
            });
        }
        if let Some(rational) = rational {
            let gain = if rule.spec == rational {
                Some((0.0, Some(0.0)))
            } else {
                let mut alone = PolicySpec::none();
                alone.expectations = Some(rational);
                match diverged_or(compare_indicators(&scenario, &[alone], progress), &what)? {
                    Ok(r) => Some(match r.behaviour.first() {
                        Some(c) => (
                            c.number(NET_WELFARE).unwrap_or(0.0),
                            c.number(&format!("{NET_WELFARE}_se")),
                        ),
                        None => (0.0, Some(0.0)),
                    }),
                    Err(_) => None,
                }
            };
            forecasts.push(ForecastGain {
                rule: rule.describe(),
                net_welfare_change_pv: gain.map(|g| g.0),
                net_welfare_change_pv_se: gain.and_then(|g| g.1),
            });
        }
    }
    let Some((first, names)) = head else {
        return Err(SensitivityError::Usage("--rules: no rule given".into()));
    };
    let robustness = names
        .iter()
        .enumerate()
        .map(|(k, name)| {
            let beyond = |sign: f64| {
                net[k]
                    .iter()
                    .flatten()
                    .filter(|(x, se)| sign * x > 2.0 * se.unwrap_or(0.0))
                    .count()
            };
            let sign_changes = indicators
                .iter()
                .filter(|key| {
                    let xs: Vec<f64> = panel
                        .iter()
                        .skip(k)
                        .step_by(names.len())
                        .filter_map(|c| c.number(key))
                        .collect();
                    xs.iter().any(|x| *x > 0.0) && xs.iter().any(|x| *x < 0.0)
                })
                .cloned()
                .collect();
            Robustness {
                policy: name.clone(),
                gains: beyond(1.0),
                losses: beyond(-1.0),
                assumptions: request.rules.len(),
                diverged: net[k].iter().filter(|x| x.is_none()).count(),
                sign_changes,
            }
        })
        .collect();
    let tornado = tornado::tornado(inputs, &request.ranges, &indicators[0], progress)?;
    Ok(Sensitivity {
        market: first.market.name.clone(),
        price_unit: first.market.price_unit.clone(),
        quantity_unit: first.market.quantity_unit.clone(),
        replications: first.run.replications,
        periods: first.run.periods,
        seed: first.run.seed,
        indicators,
        rules: request.rules.iter().map(|r| r.describe()).collect(),
        policies: names,
        panel,
        forecasts,
        robustness,
        tornado,
    })
}

//! A policy file: reading and validating it into a [`PolicySpec`] (a name, the list of rules each
//! read by its own rule file through [`SECTIONS`], an expectation override and a budget), its
//! schema, the ranges of its keys, and the check of what it asks of the market it runs on. The
//! market file's reader (`scenario`) knows nothing of policies; this file sits above it.

use serde::{Deserialize, Serialize};

use super::{RuleRef, SECTIONS};
use crate::expectations::ExpectationSpec;
use crate::input::check::deserialize;
use crate::input::keys::{check_keys, parse_toml};
use crate::input::ranges::{escape, r, KeyRange, MONEY};
use crate::input::{Check, InputError, Schema, ValueType};
use crate::scenario::ranges::{CURVE_RANGES, RANGES};
use crate::scenario::Scenario;

/// The range of `[policy] annual_budget`.
const ANNUAL_BUDGET: KeyRange = r("policy.annual_budget", 0.0, MONEY, true, false);

/// A validated policy file: its rules, each read from its own section through the registry
/// ([`SECTIONS`]), in acting order.
#[derive(Debug, Clone, Serialize)]
pub struct PolicySpec {
    /// The file it came from (empty for the built-in "no intervention").
    pub source: String,
    /// Display name.
    pub name: String,
    /// The rules, in acting order (empty: the market left alone).
    pub rules: Vec<RuleRef>,
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
    pub fn rule(&self, section: &str) -> Option<&RuleRef> {
        self.rules.iter().find(|r| r.section() == section)
    }
}

/// The `[policy]` section as written (rule sections are read by their rule files).
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct RawPolicy {
    pub name: Option<String>,
    pub annual_budget: Option<f64>,
}

/// The keys of a policy file's `[policy]` section; the rule sections after it come from the
/// registry and `[expectations]` last from the expectation rules ([`schema`]).
pub const POLICY_SCHEMA: &[(&str, &[(&str, ValueType)])] = &[(
    "policy",
    &[
        ("name", ValueType::Text),
        ("annual_budget", ValueType::Number),
    ],
)];

/// Reads and validates a policy file from disk.
pub fn load_policy(path: &str) -> Result<PolicySpec, InputError> {
    policy_from_str(path, &crate::input::read_file(path)?)
}

/// Validates policy-file text; `file` names it in errors.
pub fn policy_from_str(file: &str, text: &str) -> Result<PolicySpec, InputError> {
    let table = parse_toml(file, text)?;
    if !table.contains_key("policy") {
        let blank = text.trim().is_empty();
        let comments = text
            .lines()
            .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'));
        let what = if blank {
            "the file is empty"
        } else if comments {
            "the file holds only comments"
        } else {
            ""
        };
        if !what.is_empty() {
            return Err(missing_policy_section(file, what));
        }
    }
    policy_from_table(file, table)
}

/// The error for a policy file without `[policy]`: such a file is never read as "no intervention".
fn missing_policy_section(file: &str, what: &str) -> InputError {
    InputError::Missing {
        file: file.into(),
        key: "[policy]".into(),
        expected: format!(
            "a policy file starts with a [policy] section (name = \"...\"; a file with only [policy] is \
             the market left alone); {what}"
        ),
    }
}

/// Validates a parsed policy file: `[policy]`, each registered rule section (read by its rule,
/// [`SECTIONS`]), and an `[expectations]` override.
pub fn policy_from_table(file: &str, table: toml::Table) -> Result<PolicySpec, InputError> {
    check_keys(file, &table, &schema())?;
    if !table.contains_key("policy") {
        let what = if table.is_empty() {
            "the file has no sections (empty, only comments, or cut short)".to_string()
        } else {
            let found: Vec<String> = table.keys().map(|k| format!("[{}]", escape(k))).collect();
            format!("this file has {} but no [policy]", found.join(", "))
        };
        return Err(missing_policy_section(file, &what));
    }
    // a section header with nothing under it is a file cut short (or a slip), never a silent
    // default: refused here for a rule section its registration would read with every key
    // defaulted and for [expectations] (a rule with required keys says so itself, in its read)
    let empty = |name: &str| {
        table
            .get(name)
            .and_then(|v| v.as_table())
            .is_some_and(|t| t.is_empty())
    };
    let nothing = toml::Table::new();
    let silent = SECTIONS
        .iter()
        .filter(|s| empty(s.name) && (s.read)(&Check { file }, &nothing).is_ok())
        .map(|s| s.name)
        .chain(["expectations"].into_iter().filter(|&n| empty(n)))
        .next();
    if let Some(section) = silent {
        return Err(InputError::Missing {
            file: file.into(),
            key: format!("[{section}]"),
            expected: format!(
                "the [{section}] section is empty (a cut-short file?): give its keys or remove it"
            ),
        });
    }
    let c = Check { file };
    let mut rules = Vec::new();
    for section in SECTIONS {
        if let Some(t) = table.get(section.name).and_then(|v| v.as_table()) {
            rules.push((section.read)(&c, t)?);
        }
    }
    let policy: RawPolicy = match table.get("policy").and_then(|v| v.as_table()) {
        Some(t) => deserialize(file, t.clone())?,
        None => RawPolicy::default(),
    };
    let expectations = match table.get("expectations").and_then(|v| v.as_table()) {
        Some(t) => Some(crate::expectations::read(&c, t)?),
        None => None,
    };
    Ok(PolicySpec {
        source: file.to_string(),
        name: policy.name.clone().unwrap_or_else(|| {
            std::path::Path::new(file)
                .file_stem()
                .map(|s| s.to_string_lossy().to_string())
                .unwrap_or_else(|| "policy".into())
        }),
        rules,
        expectations,
        annual_budget: policy
            .annual_budget
            .map(|b| c.in_range(&ANNUAL_BUDGET, b))
            .transpose()?,
    })
}

/// Checks what a policy file asks of the market it is run on (one check for every verb; each rule
/// checks its own, e.g. a price defended by purchase must leave demand something to take).
pub fn policy_for_market(scenario: &Scenario, policy: &PolicySpec) -> Result<(), InputError> {
    let c = Check {
        file: &policy.source,
    };
    if let (Some(_), Some(e)) = (&scenario.storers, policy.expectations) {
        // the storage equilibrium needs forward-looking farmers (a market file's own rule is
        // checked with its [storers]; a policy's override is checked here, for every verb alike)
        if !e.is_rational() {
            return Err(c.bad(
                "expectations.rule",
                format!("\"{}\"", e.rule_name()),
                "the market has [storers]: the storage model needs rule = \"rational\" (farmers and storers look ahead)",
            ));
        }
    }
    for rule in &policy.rules {
        rule.check_market(&c, scenario)?;
    }
    super::border::check_open_market(&c, scenario, policy)?;
    Ok(())
}

/// The ranges the registered policy rules declare for their keys.
fn rule_ranges() -> impl Iterator<Item = &'static KeyRange> {
    SECTIONS
        .iter()
        .flat_map(|s| s.keys)
        .filter_map(|k| k.range.as_ref())
}

/// Every numeric key's range in README order: the market file's curves, the `[expectations]` keys
/// (over the rules that read each, `expectations::key_ranges`), the rest of the market file's, the
/// rule sections' (registry order), then `[policy]`'s.
pub fn all_ranges() -> Vec<&'static KeyRange> {
    CURVE_RANGES
        .iter()
        .chain(crate::expectations::key_ranges())
        .chain(RANGES)
        .chain(rule_ranges())
        .chain([&ANNUAL_BUDGET])
        .collect()
}

/// The range of `key` in either file (a dotted key; an indexed key takes its array's range): the
/// market file's and `[expectations]`'s (`scenario::ranges::range_of`), then the rule sections'
/// and `[policy]`'s.
pub fn range_of(key: &str) -> Option<&'static KeyRange> {
    let base = key.split('[').next().unwrap_or(key);
    crate::scenario::ranges::range_of(key).or_else(|| {
        rule_ranges()
            .chain([&ANNUAL_BUDGET])
            .find(|k| k.key == base)
    })
}

/// The policy file's schema: `[policy]`, every registered rule section, `[expectations]`.
pub fn schema() -> Schema {
    let mut out: Schema = POLICY_SCHEMA
        .iter()
        .map(|(s, keys)| (*s, keys.to_vec()))
        .collect();
    for section in SECTIONS {
        out.push((
            section.name,
            section.keys.iter().map(|k| (k.name, k.kind)).collect(),
        ));
    }
    out.push(("expectations", crate::expectations::section_keys()));
    out
}

/// True when `section` is a section only policy files have (`--vary` sends its keys to the policy).
pub fn is_policy_section(section: &str) -> bool {
    let policy = schema();
    let market = crate::scenario::schema::market();
    policy.iter().any(|(s, _)| *s == section) && !market.iter().any(|(s, _)| *s == section)
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
    let only_in = |a: &Schema, b: &Schema| {
        table
            .keys()
            .filter(|k| a.iter().any(|(s, _)| s == k) && !b.iter().any(|(s, _)| s == k))
            .map(|k| {
                if crate::input::ARRAY_SECTIONS.contains(&k.as_str()) {
                    format!("[[{k}]]")
                } else {
                    format!("[{k}]")
                }
            })
            .collect::<Vec<_>>()
    };
    let (market_schema, policy_schema) = (crate::scenario::schema::market(), schema());
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
                let found: Vec<String> = table.keys().map(|k| format!("[{}]", escape(k))).collect();
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_range_is_finite_and_ordered() {
        for k in all_ranges() {
            assert!(
                k.lo.is_finite() && k.hi.is_finite() && k.lo < k.hi,
                "{}",
                k.key
            );
        }
    }
}

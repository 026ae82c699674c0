//! The tornado: one file key at a time at its low and its high value, every other key at its base
//! value, and the indicator at each end. Keys are routed as `sweep --vary` routes them
//! (`sweep::Base`): a key of a policy section changes each policy file that has that section, any
//! other key the market file.

use serde::Serialize;

use super::{SensitivityError, Value};
use crate::compare::compare_indicators;
use crate::policies::file::{policy_for_market, policy_from_table};
use crate::policies::PolicySpec;
use crate::scenario::{market_from_table, InputError, Scenario};
use crate::stochastic::Progress;
use crate::sweep::{Base, Target};

/// One `--range KEY=LOW:HIGH`.
#[derive(Debug, Clone, PartialEq)]
pub struct Range {
    /// The dotted file key.
    pub key: String,
    /// Its low value.
    pub low: f64,
    /// Its high value.
    pub high: f64,
}

/// Reads `KEY=LOW:HIGH` (LOW < HIGH, both finite).
pub fn parse_range(text: &str) -> Result<Range, SensitivityError> {
    let bad = |why: &str| SensitivityError::Usage(format!("--range {text}: {why}"));
    let Some((key, ends)) = text.split_once('=') else {
        return Err(bad("write KEY=LOW:HIGH, e.g. demand.elasticity=-0.4:-0.15"));
    };
    let Some((low, high)) = ends.split_once(':') else {
        return Err(bad("write KEY=LOW:HIGH, e.g. demand.elasticity=-0.4:-0.15"));
    };
    let number = |s: &str| s.trim().parse::<f64>().ok().filter(|x| x.is_finite());
    let (Some(low), Some(high)) = (number(low), number(high)) else {
        return Err(bad("LOW and HIGH must be finite numbers"));
    };
    if low >= high {
        return Err(bad("LOW must be below HIGH"));
    }
    let key = key.trim();
    if !key.contains('.') {
        return Err(bad("a key is written section.key, e.g. supply.elasticity"));
    }
    Ok(Range {
        key: key.to_string(),
        low,
        high,
    })
}

/// One bar of the tornado: a policy's indicator with one key at each end.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TornadoBar {
    /// The policy's name.
    pub policy: String,
    /// The policy's file.
    pub file: String,
    /// The indicator.
    pub indicator: String,
    /// The varied key.
    pub key: String,
    /// Its low value.
    pub low: f64,
    /// Its high value.
    pub high: f64,
    /// The indicator with every key at base.
    pub base: Option<f64>,
    /// The indicator with the key at its low value.
    pub at_low: Option<f64>,
    /// The indicator with the key at its high value.
    pub at_high: Option<f64>,
    /// |at_high − at_low|.
    pub swing: Option<f64>,
    /// Why an end has no value (a replication diverged there).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub diverged: Option<String>,
}

/// The files with `key` = `value`, validated (None: the files as given).
pub fn files_at(
    inputs: &super::Inputs,
    set: Option<(&str, f64)>,
) -> Result<(Scenario, Vec<PolicySpec>), InputError> {
    let given = |scenario: &Scenario| -> Result<Vec<PolicySpec>, InputError> {
        inputs
            .policies
            .iter()
            .map(|(file, table)| {
                let p = policy_from_table(file, table.clone())?;
                policy_for_market(scenario, &p)?;
                Ok(p)
            })
            .collect()
    };
    let market = Base::new(&inputs.market_file, inputs.market.clone(), None);
    let Some((key, value)) = set else {
        let scenario = market_from_table(&inputs.market_file, inputs.market.clone())?;
        let policies = given(&scenario)?;
        return Ok((scenario, policies));
    };
    match market.target(key) {
        Target::Market => {
            let (scenario, _) = market.validate(&[(key, value)])?;
            let policies = given(&scenario)?;
            Ok((scenario, policies))
        }
        Target::Policy => {
            let section = key.split('.').next().unwrap_or("");
            let scenario = market_from_table(&inputs.market_file, inputs.market.clone())?;
            let mut policies = Vec::new();
            for (file, table) in &inputs.policies {
                if table.contains_key(section) {
                    let base = Base::new(
                        &inputs.market_file,
                        inputs.market.clone(),
                        Some((file.as_str(), table.clone())),
                    );
                    policies.push(base.validate(&[(key, value)])?.1);
                } else {
                    let p = policy_from_table(file, table.clone())?;
                    policy_for_market(&scenario, &p)?;
                    policies.push(p);
                }
            }
            Ok((scenario, policies))
        }
    }
}

/// A policy's name, its indicator, and why it has none (diverged).
type At = (String, Option<f64>, Option<String>);

/// The indicator of every policy when the files are `set`.
fn run_at(
    inputs: &super::Inputs,
    set: Option<(&str, f64)>,
    indicator: &str,
    progress: &dyn Progress,
) -> Result<Vec<At>, SensitivityError> {
    let what = match set {
        Some((key, v)) => format!("--range {key}={}", crate::output::fmt_full(v)),
        None => "--range (the files as given)".to_string(),
    };
    let (scenario, policies) = files_at(inputs, set).map_err(|error| SensitivityError::Input {
        what: what.clone(),
        error,
    })?;
    let names: Vec<String> = policies.iter().map(|p| p.name.clone()).collect();
    let result =
        match super::diverged_or(compare_indicators(&scenario, &policies, progress), &what)? {
            Ok(r) => r,
            Err(why) => {
                let note = Some(format!("{what}: {why}"));
                return Ok(names.into_iter().map(|n| (n, None, note.clone())).collect());
            }
        };
    Ok(result
        .policies
        .iter()
        .map(|c| {
            let value = match c.get(indicator) {
                Some(Value::Number(x)) if x.is_finite() => Some(*x),
                _ => None,
            };
            (c.name.clone(), value, None)
        })
        .collect())
}

/// The tornado of `indicator` over `ranges` (none: no runs), per policy widest swing first.
pub fn tornado(
    inputs: &super::Inputs,
    ranges: &[Range],
    indicator: &str,
    progress: &dyn Progress,
) -> Result<Vec<TornadoBar>, SensitivityError> {
    if ranges.is_empty() {
        return Ok(Vec::new());
    }
    for r in ranges {
        let market = Base::new(&inputs.market_file, inputs.market.clone(), None);
        let section = r.key.split('.').next().unwrap_or("");
        if market.target(&r.key) == Target::Policy
            && !inputs.policies.iter().any(|(_, t)| t.contains_key(section))
        {
            return Err(SensitivityError::Usage(format!(
                "--range {}: no policy file given has a [{section}] section",
                r.key
            )));
        }
    }
    let base = run_at(inputs, None, indicator, progress)?;
    let mut per_policy: Vec<Vec<TornadoBar>> = vec![Vec::new(); inputs.policies.len()];
    for r in ranges {
        let low = run_at(inputs, Some((&r.key, r.low)), indicator, progress)?;
        let high = run_at(inputs, Some((&r.key, r.high)), indicator, progress)?;
        for (k, (file, _)) in inputs.policies.iter().enumerate() {
            let (at_low, at_high) = (low[k].1, high[k].1);
            let diverged = [&base[k].2, &low[k].2, &high[k].2]
                .into_iter()
                .flatten()
                .next()
                .cloned();
            per_policy[k].push(TornadoBar {
                policy: base[k].0.clone(),
                file: file.clone(),
                indicator: indicator.to_string(),
                key: r.key.clone(),
                low: r.low,
                high: r.high,
                base: base[k].1,
                at_low,
                at_high,
                swing: at_low.zip(at_high).map(|(a, b)| (b - a).abs()),
                diverged,
            });
        }
    }
    let mut out = Vec::new();
    for mut bars in per_policy {
        // widest first; bars without a swing last, in --range order
        bars.sort_by(|a, b| match (a.swing, b.swing) {
            (Some(x), Some(y)) => y.total_cmp(&x),
            (Some(_), None) => std::cmp::Ordering::Less,
            (None, Some(_)) => std::cmp::Ordering::Greater,
            (None, None) => std::cmp::Ordering::Equal,
        });
        out.extend(bars);
    }
    Ok(out)
}

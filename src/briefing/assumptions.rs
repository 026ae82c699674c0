//! The assumption table: every key the analyst wrote (with the file it came from), the settings
//! that took a default or a command-line override, and the derived steady state; plus the
//! side-by-side table of policies and the provenance rows.

use sha2::{Digest, Sha256};

use super::{BriefingError, Overrides};
use crate::output::{fmt_num, TextTable};
use crate::policies::PolicySpec;
use crate::scenario::{parse_toml, ExpectationSpec, Scenario};
use crate::units::{group, Measure};

fn value_text(v: &toml::Value) -> String {
    match v {
        toml::Value::String(s) => s.clone(),
        toml::Value::Float(f) => trim(fmt_num(*f, 6)),
        toml::Value::Integer(i) => i.to_string(),
        toml::Value::Boolean(b) => b.to_string(),
        toml::Value::Array(a) => a.iter().map(value_text).collect::<Vec<_>>().join(", "),
        toml::Value::Datetime(d) => d.to_string(),
        toml::Value::Table(_) => String::new(),
    }
}

fn flatten(prefix: &str, t: &toml::Table, out: &mut Vec<(String, String)>) {
    for (k, v) in t {
        let key = if prefix.is_empty() {
            k.clone()
        } else {
            format!("{prefix}.{k}")
        };
        match v {
            toml::Value::Table(inner) => flatten(&key, inner, out),
            other => out.push((key, value_text(other))),
        }
    }
}

/// A number without trailing zeros ("210", "-0.25").
fn trim(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The keys written in `path`, flattened to dotted names (sorted by section and key).
pub fn file_keys(path: &str) -> Result<Vec<(String, String)>, BriefingError> {
    let text = std::fs::read_to_string(path).map_err(|source| BriefingError::Read {
        path: path.to_string(),
        source,
    })?;
    let table = parse_toml(path, &text)?;
    let mut out = Vec::new();
    flatten("", &table, &mut out);
    Ok(out)
}

/// The SHA-256 of a file, in hex.
pub fn sha256_file(path: &str) -> Result<String, BriefingError> {
    let bytes = std::fs::read(path).map_err(|source| BriefingError::Read {
        path: path.to_string(),
        source,
    })?;
    let digest = Sha256::digest(&bytes);
    Ok(digest.iter().map(|b| format!("{b:02x}")).collect())
}

/// Every assumption: rows (setting, value, where it came from).
pub fn assumption_table(
    scenario: &Scenario,
    market_path: &str,
    policies: &[(String, PolicySpec)],
    common: &Overrides,
) -> Result<TextTable, BriefingError> {
    let mut t = TextTable::new(&["setting", "value", "source"]);
    let written = file_keys(market_path)?;
    let has = |k: &str| written.iter().any(|(w, _)| w == k);
    for (k, v) in &written {
        let overridden = match k.as_str() {
            "run.seed" => common.seed,
            "run.replications" => common.replications,
            "run.periods" => common.periods,
            _ => false,
        };
        let src = if overridden {
            format!("{market_path} (overridden on the command line)")
        } else {
            market_path.to_string()
        };
        t.push(vec![k.clone(), v.clone(), src]);
    }
    let r = &scenario.run;
    let s = &scenario.shocks;
    let effective: Vec<(&str, String, bool)> = vec![
        ("run.periods", r.periods.to_string(), common.periods),
        (
            "run.replications",
            r.replications.to_string(),
            common.replications,
        ),
        ("run.seed", r.seed.to_string(), common.seed),
        (
            "run.discount_rate",
            trim(fmt_num(r.discount_rate, 6)),
            false,
        ),
        (
            "run.risk_aversion",
            trim(fmt_num(r.risk_aversion, 6)),
            false,
        ),
        // the accounting conventions in force, named whether or not the file sets them
        ("run.opening_stock", r.opening_stock.as_str().into(), false),
        (
            "run.terminal_stock",
            r.terminal_stock.as_str().into(),
            false,
        ),
        (
            "run.public_funds_cost",
            trim(fmt_num(r.public_funds_cost, 6)),
            false,
        ),
        (
            "run.crop_income_share",
            trim(fmt_num(r.crop_income_share, 6)),
            false,
        ),
        (
            "run.alert_price",
            if r.alert_prices.is_empty() {
                "none".into()
            } else {
                r.alert_prices
                    .iter()
                    .map(|p| trim(fmt_num(*p, 6)))
                    .collect::<Vec<_>>()
                    .join(", ")
            },
            false,
        ),
        ("shocks.yield_cv", trim(fmt_num(s.yield_cv, 6)), false),
        ("shocks.supply_sd", trim(fmt_num(s.supply_sd, 6)), false),
        ("shocks.demand_sd", trim(fmt_num(s.demand_sd, 6)), false),
        (
            "shocks.demand_persistence",
            trim(fmt_num(s.demand_persistence, 6)),
            false,
        ),
    ];
    for (k, v, cli) in effective {
        if cli {
            t.push(vec![k.to_string(), v, "command line".into()]);
        } else if !has(k) {
            t.push(vec![
                k.to_string(),
                v,
                "furrow default (not in the file)".into(),
            ]);
        }
    }
    t.push(vec![
        "interest in present values".into(),
        "only the spread of financing_rate above run.discount_rate (cash outlays show it in full)"
            .into(),
        "furrow convention".into(),
    ]);
    t.push(vec![
        "baselines".into(),
        "the market left alone under each policy's own expectation rule".into(),
        "furrow convention".into(),
    ]);
    t.push(vec![
        "steady state price".into(),
        group(scenario.steady.price, 3),
        "derived: D(P) = S(P)".into(),
    ]);
    t.push(vec![
        "steady state quantity".into(),
        group(scenario.steady.quantity, 3),
        "derived: D(P) = S(P)".into(),
    ]);
    for (path, _) in policies.iter().filter(|(p, _)| !p.is_empty()) {
        for (k, v) in file_keys(path)? {
            t.push(vec![k, v, path.clone()]);
        }
    }
    Ok(t)
}

fn level(x: f64, m: Measure) -> String {
    if x.is_finite() {
        group(x, crate::units::decimals(m))
    } else {
        "unlimited".into()
    }
}

fn cell(c: &crate::policies::rule::Cell) -> String {
    use crate::policies::rule::Cell;
    match c {
        Cell::Price(x) => level(*x, Measure::Price),
        Cell::Quantity(x) => level(*x, Measure::Quantity),
        Cell::Number(x, decimals) => fmt_num(*x, *decimals),
        Cell::Text(t) => t.clone(),
    }
}

/// Policies side by side: one column per policy, one row per design choice.
pub fn policy_table(
    policies: &[(String, PolicySpec)],
    price_unit: &str,
    quantity_unit: &str,
) -> TextTable {
    let mut headers = vec!["design".to_string()];
    headers.extend(policies.iter().map(|(_, p)| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let row = |label: &str, f: &dyn Fn(&PolicySpec) -> String| {
        let mut r = vec![label.to_string()];
        r.extend(policies.iter().map(|(_, p)| f(p)));
        r
    };
    t.push({
        let mut r = vec!["file".to_string()];
        r.extend(policies.iter().map(|(f, _)| {
            if f.is_empty() {
                "(built in)".into()
            } else {
                f.clone()
            }
        }));
        r
    });
    // each registered rule section gives its rows (`Rule::rows`), or its "absent" values
    for section in crate::policies::SECTIONS {
        for (i, (label, absent)) in section.absent.iter().enumerate() {
            let label = label
                .replace("{price}", price_unit)
                .replace("{quantity}", quantity_unit);
            t.push(row(&label, &|p| {
                p.rule(section.name)
                    .and_then(|r| r.rows().into_iter().nth(i))
                    .map_or_else(|| (*absent).to_string(), |r| cell(&r.value))
            }));
        }
    }
    t.push(row("expectations", &|p| {
        p.expectations
            .as_ref()
            .map_or("as in the market file".into(), expectation_text)
    }));
    t
}

/// A short description of an expectation rule and its parameters: its name and its main setting
/// (`ExpectationRule::setting`), e.g. `adaptive, weight 0.4`.
pub fn expectation_text(e: &ExpectationSpec) -> String {
    match e.rule().setting() {
        Some(setting) => format!("{}, {setting}", e.rule_name()),
        None => e.rule_name().to_string(),
    }
}

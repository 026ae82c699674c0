//! The assumption table: every key the analyst wrote (with the file it came from), the settings
//! that took a default or a command-line override, and the derived steady state; plus the
//! side-by-side table of policies and the provenance rows.

use anyhow::Context;
use furrow::output::{fmt_num, TextTable};
use furrow::scenario::{
    parse_toml, ExpectationSpec, FloorInstrument, PolicySpec, ReleaseSpec, Scenario,
};
use sha2::{Digest, Sha256};

use super::super::common::CommonArgs;

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
pub fn file_keys(path: &str) -> anyhow::Result<Vec<(String, String)>> {
    let text = std::fs::read_to_string(path).with_context(|| format!("cannot read {path}"))?;
    let table = parse_toml(path, &text)?;
    let mut out = Vec::new();
    flatten("", &table, &mut out);
    Ok(out)
}

/// The SHA-256 of a file, in hex.
pub fn sha256_file(path: &str) -> anyhow::Result<String> {
    let bytes = std::fs::read(path).with_context(|| format!("cannot read {path}"))?;
    let digest = Sha256::digest(&bytes);
    Ok(digest.iter().map(|b| format!("{b:02x}")).collect())
}

/// Every assumption: rows (setting, value, where it came from).
pub fn assumption_table(
    scenario: &Scenario,
    market_path: &str,
    policies: &[(String, PolicySpec)],
    common: &CommonArgs,
) -> anyhow::Result<TextTable> {
    let mut t = TextTable::new(&["setting", "value", "source"]);
    let written = file_keys(market_path)?;
    let has = |k: &str| written.iter().any(|(w, _)| w == k);
    for (k, v) in &written {
        let overridden = match k.as_str() {
            "run.seed" => common.seed.is_some(),
            "run.replications" => common.replications.is_some(),
            "run.periods" => common.periods.is_some(),
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
    let effective: Vec<(&str, String, Option<bool>)> = vec![
        (
            "run.periods",
            r.periods.to_string(),
            common.periods.map(|_| true),
        ),
        (
            "run.replications",
            r.replications.to_string(),
            common.replications.map(|_| true),
        ),
        ("run.seed", r.seed.to_string(), common.seed.map(|_| true)),
        ("run.discount_rate", trim(fmt_num(r.discount_rate, 6)), None),
        ("run.risk_aversion", trim(fmt_num(r.risk_aversion, 6)), None),
        // the accounting conventions in force, named whether or not the file sets them
        ("run.opening_stock", r.opening_stock.as_str().into(), None),
        ("run.terminal_stock", r.terminal_stock.as_str().into(), None),
        (
            "run.public_funds_cost",
            trim(fmt_num(r.public_funds_cost, 6)),
            None,
        ),
        (
            "run.crop_income_share",
            trim(fmt_num(r.crop_income_share, 6)),
            None,
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
            None,
        ),
        ("shocks.yield_cv", trim(fmt_num(s.yield_cv, 6)), None),
        ("shocks.supply_sd", trim(fmt_num(s.supply_sd, 6)), None),
        ("shocks.demand_sd", trim(fmt_num(s.demand_sd, 6)), None),
        (
            "shocks.demand_persistence",
            trim(fmt_num(s.demand_persistence, 6)),
            None,
        ),
    ];
    for (k, v, cli) in effective {
        if cli.is_some() {
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
        fmt_num(scenario.steady.price, 3),
        "derived: D(P) = S(P)".into(),
    ]);
    t.push(vec![
        "steady state quantity".into(),
        fmt_num(scenario.steady.quantity, 3),
        "derived: D(P) = S(P)".into(),
    ]);
    for (path, _) in policies.iter().filter(|(p, _)| !p.is_empty()) {
        for (k, v) in file_keys(path)? {
            t.push(vec![k, v, path.clone()]);
        }
    }
    Ok(t)
}

fn money(x: f64) -> String {
    if x.is_finite() {
        fmt_num(x, 2)
    } else {
        "unlimited".into()
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
    t.push(row(&format!("price floor ({price_unit})"), &|p| {
        p.floor.map_or("none".into(), |f| fmt_num(f.price, 2))
    }));
    t.push(row("floor instrument", &|p| {
        p.floor.map_or("—".into(), |f| match f.instrument {
            FloorInstrument::Purchase => "public purchase".into(),
            FloorInstrument::DeficiencyPayment => "deficiency payment".into(),
        })
    }));
    t.push(row("floor announced", &|p| {
        p.floor.map_or("—".into(), |f| {
            if f.announced {
                "yes".into()
            } else {
                "no".into()
            }
        })
    }));
    t.push(row(&format!("stock buys below ({price_unit})"), &|p| {
        p.stock.map_or("no stock".into(), |s| money(s.buy_below))
    }));
    t.push(row(&format!("stock sells above ({price_unit})"), &|p| {
        p.stock.map_or("—".into(), |s| money(s.sell_above))
    }));
    t.push(row(&format!("capacity ({quantity_unit})"), &|p| {
        p.stock.map_or("—".into(), |s| money(s.capacity))
    }));
    t.push(row(&format!("initial stock ({quantity_unit})"), &|p| {
        p.stock.map_or("—".into(), |s| money(s.initial))
    }));
    t.push(row("release rule", &|p| {
        p.stock.map_or("—".into(), |s| match s.release {
            ReleaseSpec::Band => "band".into(),
            ReleaseSpec::Target { target, speed } => format!(
                "target {} at speed {}",
                fmt_num(target, 2),
                fmt_num(speed, 2)
            ),
            ReleaseSpec::Share { share } => format!("drawdown, share {}", fmt_num(share, 2)),
            ReleaseSpec::Rotate { share } => format!(
                "rotate {} of the stock a season (stock unchanged)",
                fmt_num(share, 2)
            ),
        })
    }));
    t.push(row(
        &format!("storage cost ({price_unit} per season)"),
        &|p| p.stock.map_or("—".into(), |s| money(s.storage_cost)),
    ));
    t.push(row("loss rate per season", &|p| {
        p.stock.map_or("—".into(), |s| fmt_num(s.loss_rate, 3))
    }));
    t.push(row("expectations", &|p| {
        p.expectations
            .as_ref()
            .map_or("as in the market file".into(), expectation_text)
    }));
    t
}

/// A short description of an expectation rule and its parameters.
pub fn expectation_text(e: &ExpectationSpec) -> String {
    match e {
        ExpectationSpec::Adaptive { weight, .. }
        | ExpectationSpec::NormalPrice { weight, .. }
        | ExpectationSpec::Extrapolative { weight } => {
            format!("{}, weight {}", e.rule_name(), trim(fmt_num(*weight, 6)))
        }
        ExpectationSpec::TrailingMean { window } => format!("{}, window {window}", e.rule_name()),
        _ => e.rule_name().to_string(),
    }
}

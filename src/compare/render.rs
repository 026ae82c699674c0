//! Rendering a [`CompareResult`]: indicators as rows, policies as columns.
//!
//! - table / markdown: a caption, one row per indicator with its unit, `value ± standard error`
//!   where the indicator has one; the present values that have quantiles get a second row with the
//!   5–95 % range across replications; the market left alone is shown as the first column when no
//!   given policy is it, and each behaviour change (a policy file's expectation rule alone) as a
//!   last column. Missing values print as `n/a`.
//! - csv: `indicator` then one column per given policy, every key (quantiles and standard errors as
//!   their own rows), full precision; missing values are empty cells.
//! - json: `{"market", "replications", "periods", "seed", "discount_rate", "risk_aversion",
//!   "public_funds_cost", "policies": [{"name", "file", "baseline", "expectations", "indicators":
//!   {key: value}}], "baseline": {...}, "behaviour_changes": [...]}`; missing values are null.

use super::{CompareResult, Kind, PolicyComparison, Value};
use crate::output::{fmt_full, fmt_num, Format, TextTable};

/// Renders `result` in `format`.
pub fn render(result: &CompareResult, format: Format) -> String {
    match format {
        Format::Json => json(result),
        Format::Csv => csv(result).render(Format::Csv),
        Format::Table => format!(
            "{}\n{}Caution: {}\n",
            caption(result),
            briefing(result).render(Format::Table),
            crate::CAUTION
        ),
        Format::Markdown => format!(
            "{}\n\n{}\n{}\n",
            caption(result),
            briefing(result).render(Format::Markdown),
            footnote(result)
        ),
    }
}

/// The JSON document.
pub fn json(result: &CompareResult) -> String {
    let column = |p: &PolicyComparison| {
        let indicators: serde_json::Map<String, serde_json::Value> = p
            .indicators
            .iter()
            .map(|i| {
                (
                    i.key.to_string(),
                    serde_json::to_value(&i.value).unwrap_or_default(),
                )
            })
            .collect();
        serde_json::json!({
            "name": p.name,
            "file": p.file,
            "baseline": p.baseline,
            "expectations": p.expectations,
            "indicators": indicators,
        })
    };
    let doc = serde_json::json!({
        "market": result.market,
        "replications": result.replications,
        "periods": result.periods,
        "seed": result.seed,
        "discount_rate": result.discount_rate,
        "risk_aversion": result.risk_aversion,
        "public_funds_cost": result.public_funds_cost,
        "caution": crate::CAUTION,
        "policies": result.policies.iter().map(column).collect::<Vec<_>>(),
        "baseline": column(&result.baseline),
        "behaviour_changes": result.behaviour.iter().map(column).collect::<Vec<_>>(),
    });
    serde_json::to_string_pretty(&doc).unwrap_or_default() + "\n"
}

/// One row per key, one column per given policy, full precision.
pub fn csv(result: &CompareResult) -> TextTable {
    let mut headers = vec!["indicator".to_string()];
    headers.extend(result.policies.iter().map(|p| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let Some(first) = result.policies.first() else {
        return t;
    };
    for (row, ind) in first.indicators.iter().enumerate() {
        let mut cells = vec![ind.key.clone()];
        cells.extend(
            result
                .policies
                .iter()
                .map(|p| match &p.indicators[row].value {
                    Value::Number(x) => fmt_full(*x),
                    Value::Text(s) => s.clone(),
                    Value::Missing => String::new(),
                }),
        );
        t.push(cells);
    }
    t
}

/// The table an analyst pastes into a briefing.
pub fn briefing(result: &CompareResult) -> TextTable {
    let mut columns: Vec<&PolicyComparison> = Vec::new();
    if !result.policies.iter().any(|p| p.is_baseline) {
        columns.push(&result.baseline);
    }
    columns.extend(result.policies.iter());
    columns.extend(result.behaviour.iter());
    let mut headers = vec!["Indicator".to_string(), "Unit".to_string()];
    headers.extend(columns.iter().map(|p| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let Some(first) = columns.first() else {
        return t;
    };
    let money = format!("{} × {}", result.price_unit, result.quantity_unit);
    for (row, ind) in first.indicators.iter().enumerate() {
        // quantile rows of an indicator shown above, and standard errors, go into its cells
        let stem = ind.key.rsplit_once('_').map_or("", |(stem, _)| stem);
        if (is_quantile(&ind.key) || ind.key.ends_with("_se")) && first.get(stem).is_some() {
            continue;
        }
        let unit = match ind.kind {
            Kind::Price => result.price_unit.clone(),
            Kind::Quantity => result.quantity_unit.clone(),
            Kind::Money => money.clone(),
            Kind::Share => "share".into(),
            Kind::Number | Kind::Text => String::new(),
        };
        let mut cells = vec![ind.label.clone(), unit];
        let se_key = format!("{}_se", ind.key);
        cells.extend(columns.iter().map(|p| {
            let value = cell(&p.indicators[row].value, ind.kind);
            match p.get(&se_key) {
                Some(Value::Number(se)) if se.is_finite() && *se > 0.0 => {
                    format!("{value} ± {}", cell(&Value::Number(*se), ind.kind))
                }
                _ => value,
            }
        }));
        t.push(cells);
        let (lo, hi) = (format!("{}_p05", ind.key), format!("{}_p95", ind.key));
        if first.get(&lo).is_some() {
            let mut cells = vec!["  5–95 % range".to_string(), String::new()];
            cells.extend(columns.iter().map(|p| {
                let c = |k: &str| p.get(k).map_or("n/a".into(), |v| cell(v, ind.kind));
                format!("{} … {}", c(&lo), c(&hi))
            }));
            t.push(cells);
        }
    }
    t
}

/// The stderr warnings of a comparison: pairs of policies whose net welfare changes differ by less
/// than two standard errors of their (paired) difference.
pub fn close_call_warnings(result: &CompareResult) -> Vec<String> {
    result
        .close_calls
        .iter()
        .map(|c| {
            format!(
                "\"{}\" and \"{}\": net welfare changes differ by {} ± {} (one standard error of the \
                 paired difference over {} replications): not distinguishable; run more replications",
                c.first,
                c.second,
                fmt_num(c.difference, 0),
                fmt_num(c.se, 0),
                result.replications
            )
        })
        .collect()
}

fn is_quantile(key: &str) -> bool {
    key.ends_with("_p05") || key.ends_with("_p50") || key.ends_with("_p95")
}

fn cell(v: &Value, kind: Kind) -> String {
    match v {
        Value::Number(x) if x.is_finite() => {
            let digits = match kind {
                Kind::Price | Kind::Quantity => 2,
                Kind::Share | Kind::Number => 3,
                Kind::Money => 0,
                Kind::Text => 0,
            };
            fmt_num(*x, digits)
        }
        Value::Text(s) => s.clone(),
        _ => "n/a".into(),
    }
}

fn caption(r: &CompareResult) -> String {
    format!(
        "{}: {} replications × {} periods (seed {}); present values at {} % a period; changes against \
         the market without intervention under the same expectation rule and the same shocks; \
         ± one Monte Carlo standard error.",
        r.market,
        r.replications,
        r.periods,
        r.seed,
        fmt_num(100.0 * r.discount_rate, 2),
    )
}

fn footnote(r: &CompareResult) -> String {
    format!(
        "Ranges: 5 % and 95 % quantiles across replications (Hyndman–Fan type 7); ± one Monte Carlo \
         standard error (paired over replications for changes). Net welfare change = Δ consumer surplus \
         + Δ producer surplus − λ·Δ(fiscal cost, opening stock included, − value of the stock left at the end), \
         λ = {} (Alston and Hurd 1990); interest counts in present values only above the discount rate. \
         Risk premium: exact CRRA certainty equivalent with R = {}, beside ½·R·CV²·mean income \
         (Newbery and Stiglitz 1981).\n\nCaution: {}",
        fmt_num(r.public_funds_cost, 2),
        fmt_num(r.risk_aversion, 2),
        crate::CAUTION
    )
}

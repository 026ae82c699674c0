//! Rendering a [`CompareResult`]: indicators as rows, policies as columns.
//!
//! - table / markdown: a caption, one row per indicator with its unit; the present values that have
//!   quantiles get a second row with the 5–95 % range across replications; the market left alone is
//!   shown as the first column when no given policy is it. Missing values print as `n/a`.
//! - csv: `indicator` then one column per given policy, every key (quantiles as their own rows),
//!   full precision; missing values are empty cells.
//! - json: `{"market", "replications", "periods", "seed", "discount_rate", "risk_aversion",
//!   "policies": [{"name", "file", "indicators": {key: value}}], "baseline": {...}}`; missing values are
//!   null.

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
        serde_json::json!({"name": p.name, "file": p.file, "indicators": indicators})
    };
    let doc = serde_json::json!({
        "market": result.market,
        "replications": result.replications,
        "periods": result.periods,
        "seed": result.seed,
        "discount_rate": result.discount_rate,
        "risk_aversion": result.risk_aversion,
        "caution": crate::CAUTION,
        "policies": result.policies.iter().map(column).collect::<Vec<_>>(),
        "baseline": column(&result.baseline),
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
        let mut cells = vec![ind.key.to_string()];
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
    let mut headers = vec!["Indicator".to_string(), "Unit".to_string()];
    headers.extend(columns.iter().map(|p| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let Some(first) = columns.first() else {
        return t;
    };
    let money = format!("{} × {}", result.price_unit, result.quantity_unit);
    for (row, ind) in first.indicators.iter().enumerate() {
        if is_quantile(ind.key) {
            continue;
        }
        let unit = match ind.kind {
            Kind::Price => result.price_unit.clone(),
            Kind::Quantity => result.quantity_unit.clone(),
            Kind::Money => money.clone(),
            Kind::Share => "share".into(),
            Kind::Number | Kind::Text => String::new(),
        };
        let mut cells = vec![ind.label.to_string(), unit];
        cells.extend(
            columns
                .iter()
                .map(|p| cell(&p.indicators[row].value, ind.kind)),
        );
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
         the market without intervention under the same shocks.",
        r.market,
        r.replications,
        r.periods,
        r.seed,
        fmt_num(100.0 * r.discount_rate, 2),
        )
}

fn footnote(r: &CompareResult) -> String {
    format!(
        "Ranges: 5 % and 95 % quantiles across replications (Hyndman–Fan type 7). Net welfare change = \
         Δ consumer surplus + Δ producer surplus − Δ fiscal cost + value of the stock left at the end. \
         Risk premium ≈ ½·R·CV²·mean revenue with R = {} (Newbery and Stiglitz 1981).\n\nCaution: {}",
        fmt_num(r.risk_aversion, 2),
        crate::CAUTION
    )
}

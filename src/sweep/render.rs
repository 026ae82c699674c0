//! The sweep as text: a table of grid points in any text format, or JSON.

use super::{LongRunSpec, Point};
use crate::output::{fmt_full, fmt_num, Format, TextTable};

/// The sweep's points as text in `format` (JSON through [`render_json`]): one row per grid point,
/// the varied keys first.
pub fn render(
    points: &[Point],
    keys: &[String],
    long: Option<LongRunSpec>,
    format: Format,
) -> String {
    if format == Format::Json {
        return render_json(points, keys, long);
    }
    let full = format == Format::Csv || format == Format::Json;
    let num = |x: f64| if full { fmt_full(x) } else { fmt_num(x, 6) };
    let mut headers: Vec<String> = keys.to_vec();
    headers.push("spectral_radius".into());
    headers.push("verdict".into());
    if long.is_some() {
        for h in ["lyapunov", "orbit", "period", "price"] {
            headers.push(h.into());
        }
    }
    let mut t = TextTable::new(&headers);
    for p in points {
        let mut row: Vec<String> = p.values.iter().map(|v| num(*v)).collect();
        match &p.outcome {
            Ok((rho, v)) => {
                row.push(num(*rho));
                row.push(v.as_str().into());
            }
            Err(_) => {
                row.push(String::new());
                row.push("invalid".into());
            }
        }
        if long.is_none() {
            t.push(row);
            continue;
        }
        match &p.long_run {
            Some(lr) if !lr.prices.is_empty() => {
                let first = lr.first_period;
                for (i, price) in lr.prices.iter().enumerate() {
                    let mut r = row.clone();
                    r.push(lr.lyapunov.map(num).unwrap_or_default());
                    r.push(lr.orbit.as_str().into());
                    r.push((first + i).to_string());
                    r.push(num(*price));
                    t.push(r);
                }
            }
            Some(lr) => {
                row.push(String::new());
                row.push(lr.orbit.as_str().into());
                row.push(String::new());
                row.push(String::new());
                t.push(row);
            }
            None => {
                for _ in 0..4 {
                    row.push(String::new());
                }
                t.push(row);
            }
        }
    }
    t.render(format)
}

/// JSON: `{"keys": [...], "points": [{"values": {KEY: v}, "spectral_radius", "verdict", "message",
/// "long_run": {"lyapunov", "orbit", "first_period", "prices"}}]}`.
fn render_json(points: &[Point], keys: &[String], long: Option<LongRunSpec>) -> String {
    use serde_json::{json, Map, Value};
    let pts: Vec<Value> = points
        .iter()
        .map(|p| {
            let mut values = Map::new();
            for (k, v) in keys.iter().zip(&p.values) {
                values.insert(k.clone(), json!(v));
            }
            let (rho, verdict, message) = match &p.outcome {
                Ok((r, v)) => (json!(r), json!(v.as_str()), Value::Null),
                Err(m) => (Value::Null, json!("invalid"), json!(m)),
            };
            let long_run = match (&p.long_run, long) {
                (Some(lr), Some(_)) => json!({
                    "lyapunov": lr.lyapunov,
                    "orbit": lr.orbit.as_str(),
                    "first_period": (!lr.prices.is_empty()).then_some(lr.first_period),
                    "prices": lr.prices,
                }),
                _ => Value::Null,
            };
            json!({
                "values": values,
                "spectral_radius": rho,
                "verdict": verdict,
                "message": message,
                "long_run": long_run,
            })
        })
        .collect();
    serde_json::to_string_pretty(&json!({ "keys": keys, "points": pts })).unwrap_or_default() + "\n"
}

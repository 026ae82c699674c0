//! A design search as text: the chosen design (and the frontier) in any text format, or JSON
//! `{"key", "value", "met", "indicators": {...}, ...}`.

use super::Design;
use crate::compare::Value;
use crate::output::{fmt_full, fmt_num, Format, TextTable};
use crate::sweep::outcomes::{indicator_map, Outcome};

/// The design in `format`. Text formats: one row per design — the chosen one (`design` = `chosen`),
/// then with `--frontier` each frontier design (`frontier`) — the keys, `met`, then the indicators
/// with their `_se`. JSON: `{"key", "value", "met", "within_noise", "indicators", "requirements",
/// "objective", "bracket", "evaluations", "notes", "frontier": [{"key", "value", "met",
/// "indicators"}]}`; with one key `key` is the key and `value` a number, with two both are lists;
/// `value` is null when nothing was chosen.
pub fn render(d: &Design, format: Format) -> String {
    if format == Format::Json {
        return render_json(d);
    }
    let full = format == Format::Csv;
    let num = |x: f64| if full { fmt_full(x) } else { fmt_num(x, 6) };
    let missing = if full { "" } else { "n/a" };
    let mut headers = vec!["design".to_string()];
    headers.extend(d.keys.iter().cloned());
    headers.push("met".into());
    headers.extend(d.columns.iter().cloned());
    let mut t = TextTable::new(&headers);
    let mut row = |what: &str, o: &Outcome| {
        let mut r = vec![what.to_string()];
        r.extend(shown(d, o, &num));
        r.push(if d.meets(o) { "yes" } else { "no" }.into());
        for c in &d.columns {
            r.push(
                match o
                    .indicators
                    .as_ref()
                    .ok()
                    .and_then(|l| l.iter().find(|i| &i.key == c))
                {
                    Some(i) => match &i.value {
                        Value::Number(x) if x.is_finite() => num(*x),
                        Value::Text(s) => s.clone(),
                        _ => missing.into(),
                    },
                    None => missing.into(),
                },
            );
        }
        t.push(r);
    };
    if let Some(c) = &d.chosen {
        row("chosen", c);
    }
    for &i in &d.frontier {
        row("frontier", &d.grid[i]);
    }
    let table = t.render(format);
    if full {
        return table;
    }
    let mut out = String::new();
    out.push_str(&headline(d));
    out.push_str("\n\n");
    if d.chosen.is_some() || !d.frontier.is_empty() {
        out.push_str(&table);
    }
    for n in &d.notes {
        out.push_str(&format!("\nNote: {n}"));
    }
    if !d.notes.is_empty() {
        out.push('\n');
    }
    out
}

/// One sentence: what was chosen and whether it meets every requirement.
fn headline(d: &Design) -> String {
    let Some(c) = &d.chosen else {
        return if d.spec.frontier.is_some() && !d.frontier.is_empty() {
            format!(
                "Design: {} frontier designs (no other grid design is better on both).",
                d.frontier.len()
            )
        } else if d.grid.iter().any(|o| d.meets(o)) {
            "Design: no single value chosen (see the note).".into()
        } else {
            "Design: no value meets every requirement.".into()
        };
    };
    let at: Vec<String> = d
        .keys
        .iter()
        .zip(shown(d, c, &|v| fmt_num(v, 6)))
        .map(|(k, v)| format!("{k} = {v}"))
        .collect();
    let met = if d.met {
        "every requirement met"
    } else {
        "not every requirement met"
    };
    let noise = if d.within_noise {
        "; within Monte Carlo noise of the boundary"
    } else {
        ""
    };
    format!("Design: {} ({met}{noise}).", at.join(", "))
}

/// A design's settings as shown: the key values, or the policy's name for a list of policy files.
pub fn shown(d: &Design, o: &Outcome, num: &dyn Fn(f64) -> String) -> Vec<String> {
    match label(d, o) {
        Some(l) => vec![l.to_string()],
        None => o.values.iter().map(|v| num(*v)).collect(),
    }
}

fn label<'a>(d: &'a Design, o: &Outcome) -> Option<&'a str> {
    let i = *o.values.first()? as usize;
    d.labels.get(i.checked_sub(1)?).map(String::as_str)
}

fn key_value(d: &Design, o: Option<&Outcome>) -> (serde_json::Value, serde_json::Value) {
    use serde_json::json;
    if !d.labels.is_empty() {
        (
            json!("policy"),
            o.and_then(|o| label(d, o))
                .map_or(serde_json::Value::Null, |l| json!(l)),
        )
    } else if d.keys.len() == 1 {
        (
            json!(d.keys[0]),
            o.map_or(serde_json::Value::Null, |o| json!(o.values[0])),
        )
    } else {
        (
            json!(d.keys),
            o.map_or(serde_json::Value::Null, |o| json!(o.values)),
        )
    }
}

fn render_json(d: &Design) -> String {
    use serde_json::json;
    let inds = |o: Option<&Outcome>| match o.map(|o| &o.indicators) {
        Some(Ok(list)) => indicator_map(list, &d.columns),
        _ => json!({}),
    };
    let (key, value) = key_value(d, d.chosen.as_ref());
    let mut v = json!({
        "key": key,
        "value": value,
        "met": d.met,
        "within_noise": d.within_noise,
        "indicators": inds(d.chosen.as_ref()),
        "requirements": d.spec.requirements.iter().map(|r| r.describe()).collect::<Vec<_>>(),
        "objective": d.spec.objective.as_ref().map(|o| o.describe()),
        "bracket": d.bracket.map(|(a, b)| json!([a, b])),
        "evaluations": d.grid.len() + d.tried.len(),
        "notes": d.notes,
    });
    if d.spec.frontier.is_some() {
        let front: Vec<serde_json::Value> = d
            .frontier
            .iter()
            .map(|&i| {
                let o = &d.grid[i];
                let (key, value) = key_value(d, Some(o));
                json!({"key": key, "value": value, "met": d.meets(o), "indicators": inds(Some(o))})
            })
            .collect();
        v["frontier"] = json!(front);
    }
    serde_json::to_string_pretty(&v).unwrap_or_default() + "\n"
}

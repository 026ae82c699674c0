//! The sensitivity analysis in every format: JSON as it serialises; CSV one value per row
//! (`part, policy, assumption, indicator, value`); tables and Markdown as a panel per indicator
//! (rows = rules, columns = policies, "value ± se"), the forecast-error table, the robustness
//! lines and the tornado.

use super::{Cell, Sensitivity, NET_WELFARE};
use crate::compare::{Kind, Value};
use crate::output::{fmt_full, Format, TextTable};
use crate::units::{group, MoneyScale, Units};

/// The analysis in `format`.
pub fn render(s: &Sensitivity, format: Format) -> String {
    match format {
        Format::Json => {
            let mut out = serde_json::to_string_pretty(s).unwrap_or_default();
            out.push('\n');
            out
        }
        Format::Csv => csv(s).render(Format::Csv),
        Format::Table | Format::Markdown => text(s, format),
    }
}

fn number(x: Option<f64>) -> String {
    x.filter(|x| x.is_finite())
        .map(fmt_full)
        .unwrap_or_default()
}

/// One value per row.
pub fn csv(s: &Sensitivity) -> TextTable {
    let mut t = TextTable::new(&["part", "policy", "assumption", "indicator", "value"]);
    for c in &s.panel {
        for i in &c.indicators {
            let v = match &i.value {
                Value::Number(x) => number(Some(*x)),
                Value::Text(w) => w.clone(),
                Value::Missing => String::new(),
            };
            t.push(vec![
                "panel".into(),
                c.policy.clone(),
                c.rule.clone(),
                i.key.clone(),
                v,
            ]);
        }
    }
    for f in &s.forecasts {
        for (key, v) in [
            (NET_WELFARE.to_string(), f.net_welfare_change_pv),
            (format!("{NET_WELFARE}_se"), f.net_welfare_change_pv_se),
        ] {
            t.push(vec![
                "forecasts".into(),
                "No intervention: rational instead of this rule".into(),
                f.rule.clone(),
                key,
                number(v),
            ]);
        }
    }
    for b in &s.tornado {
        let rows = [
            ("base".to_string(), b.base),
            (format!("{}={}", b.key, fmt_full(b.low)), b.at_low),
            (format!("{}={}", b.key, fmt_full(b.high)), b.at_high),
            (format!("{} swing", b.key), b.swing),
        ];
        for (what, v) in rows {
            t.push(vec![
                "tornado".into(),
                b.policy.clone(),
                what,
                b.indicator.clone(),
                number(v),
            ]);
        }
    }
    t
}

/// The kind of indicator `key` in the panel.
pub(super) fn kind_of(s: &Sensitivity, key: &str) -> Kind {
    s.panel
        .iter()
        .flat_map(|c| c.indicators.iter())
        .find(|i| i.key == key)
        .map(|i| i.kind)
        .unwrap_or(Kind::Number)
}

pub(super) fn show(units: &Units, kind: Kind, x: Option<f64>, scale: &MoneyScale) -> String {
    match (x.filter(|x| x.is_finite()), kind.measure()) {
        (Some(x), Some(m)) => units.show(x, m, scale),
        _ => "n/a".into(),
    }
}

pub(super) fn label_of(s: &Sensitivity, key: &str) -> String {
    s.panel
        .iter()
        .flat_map(|c| c.indicators.iter())
        .find(|i| i.key == key)
        .map(|i| i.label.clone())
        .unwrap_or_else(|| key.to_string())
}

fn text(s: &Sensitivity, format: Format) -> String {
    let units = Units::new(&s.price_unit, &s.quantity_unit);
    let n = s.policies.len().max(1);
    let mut out = format!(
        "Assumption panel — {}: {} replications × {} periods (seed {}); each policy against the market \
         left alone under the same expectation rule and the same shocks; ± one Monte Carlo standard \
         error.\n\n",
        s.market, s.replications, s.periods, s.seed
    );
    for key in &s.indicators {
        let kind = kind_of(s, key);
        let se_key = format!("{key}_se");
        let values = s.panel.iter().filter_map(|c| c.number(key));
        let scale = units.money_scale(values);
        let unit = kind
            .measure()
            .map(|m| units.unit(m, &scale))
            .unwrap_or_default();
        let title = if unit.is_empty() {
            label_of(s, key)
        } else {
            format!("{} ({unit})", label_of(s, key))
        };
        out.push_str(&format!("{title}\n\n"));
        let mut headers = vec!["Farmers' expectations".to_string()];
        headers.extend(s.policies.iter().cloned());
        let mut t = TextTable::new(&headers);
        for (r, rule) in s.rules.iter().enumerate() {
            let mut row = vec![rule.clone()];
            for c in s.panel.iter().skip(r * n).take(n) {
                row.push(with_se(&units, kind, c, key, &se_key, &scale));
            }
            t.push(row);
        }
        out.push_str(&t.render(format));
        let flagged: Vec<&str> = s
            .robustness
            .iter()
            .filter(|r| r.sign_changes.contains(key))
            .map(|r| r.policy.as_str())
            .collect();
        if !flagged.is_empty() {
            out.push_str(&format!(
                "Sign changes across the rules: {}.\n",
                flagged.join("; ")
            ));
        }
        out.push('\n');
    }
    let mut notes: Vec<&str> = Vec::new();
    for c in &s.panel {
        if let Some(why) = &c.diverged {
            if !notes.contains(&why.as_str()) {
                notes.push(why);
            }
        }
    }
    for b in &s.tornado {
        if let Some(why) = &b.diverged {
            if !notes.contains(&why.as_str()) {
                notes.push(why);
            }
        }
    }
    for why in notes {
        out.push_str(&format!("Diverged: {why}\n"));
    }
    if !s.forecasts.is_empty() {
        out.push_str(&forecast_table(s, &units, format));
    }
    for (k, r) in s.robustness.iter().enumerate() {
        // of the policy's gain under each rule, what better forecasts alone would be worth
        let shares: Vec<String> = s
            .forecasts
            .iter()
            .enumerate()
            .filter_map(|(i, f)| {
                let c = s.panel.get(i * n + k)?;
                let gain = c.number(NET_WELFARE)?;
                let se = c.number(&format!("{NET_WELFARE}_se")).unwrap_or(0.0);
                let alone = f.net_welfare_change_pv?;
                (gain > 2.0 * se && alone > 0.0)
                    .then(|| format!("{} % under {}", group(100.0 * alone / gain, 0), f.rule))
            })
            .collect();
        if !shares.is_empty() {
            out.push_str(&format!(
                "{}: better forecasts alone would be worth, as a share of its net welfare gain, {}.\n",
                r.policy,
                shares.join(", ")
            ));
        }
        out.push_str(&robustness_line(r));
        out.push('\n');
    }
    if !s.tornado.is_empty() {
        out.push('\n');
        out.push_str(&tornado_table(s, &units, format));
    }
    out
}

pub(super) fn with_se(
    units: &Units,
    kind: Kind,
    c: &Cell,
    key: &str,
    se_key: &str,
    scale: &MoneyScale,
) -> String {
    if c.diverged.is_some() {
        return "diverged".into();
    }
    let v = show(units, kind, c.number(key), scale);
    match c.number(se_key) {
        Some(se) => format!("{v} ± {}", show(units, kind, Some(se), scale)),
        None => v,
    }
}

/// Rows = rules: what rational forecasts alone are worth to the market left alone, beside each
/// policy's net welfare change under that rule.
fn forecast_table(s: &Sensitivity, units: &Units, format: Format) -> String {
    let n = s.policies.len().max(1);
    let values = s
        .forecasts
        .iter()
        .filter_map(|f| f.net_welfare_change_pv)
        .chain(s.panel.iter().filter_map(|c| c.number(NET_WELFARE)));
    let scale = units.money_scale(values);
    let mut headers = vec![
        "Farmers' expectations".to_string(),
        "Better forecasts alone".to_string(),
    ];
    headers.extend(s.policies.iter().cloned());
    let mut t = TextTable::new(&headers);
    for (r, f) in s.forecasts.iter().enumerate() {
        let mut row = vec![f.rule.clone()];
        let gain = match f.net_welfare_change_pv {
            Some(x) => show(units, Kind::Money, Some(x), &scale),
            None => "diverged".into(),
        };
        row.push(match f.net_welfare_change_pv_se {
            Some(se) => format!("{gain} ± {}", show(units, Kind::Money, Some(se), &scale)),
            None => gain,
        });
        for c in s.panel.iter().skip(r * n).take(n) {
            row.push(with_se(
                units,
                Kind::Money,
                c,
                NET_WELFARE,
                &format!("{NET_WELFARE}_se"),
                &scale,
            ));
        }
        t.push(row);
    }
    format!(
        "Forecast errors: net welfare change, present value ({}); \"better forecasts alone\" is the market \
         left alone under rational expectations against the market left alone under the rule.\n\n{}\n",
        scale.label,
        t.render(format)
    )
}

fn tornado_table(s: &Sensitivity, units: &Units, format: Format) -> String {
    let key = &s.tornado[0].indicator;
    let kind = kind_of(s, key);
    let values = s
        .tornado
        .iter()
        .flat_map(|b| [b.base, b.at_low, b.at_high, b.swing])
        .flatten();
    let scale = units.money_scale(values);
    let mut t = TextTable::new(&[
        "Policy", "Key", "Low", "High", "At low", "At high", "Swing", "Base",
    ]);
    for b in &s.tornado {
        t.push(vec![
            b.policy.clone(),
            b.key.clone(),
            group(b.low, 3),
            group(b.high, 3),
            show(units, kind, b.at_low, &scale),
            show(units, kind, b.at_high, &scale),
            show(units, kind, b.swing, &scale),
            show(units, kind, b.base, &scale),
        ]);
    }
    let unit = kind
        .measure()
        .map(|m| units.unit(m, &scale))
        .unwrap_or_default();
    format!(
        "Tornado: {} ({unit}), one key at a time at its low and high value, the others at base; widest \
         swing first.\n\n{}",
        label_of(s, key),
        t.render(format)
    )
}

/// The tornado figures, one per policy (stem `tornado_POLICY`), values in the tables' units.
pub fn figures(s: &Sensitivity) -> Vec<crate::briefing::Figure> {
    let Some(first) = s.tornado.first() else {
        return Vec::new();
    };
    let units = Units::new(&s.price_unit, &s.quantity_unit);
    let key = &first.indicator;
    let kind = kind_of(s, key);
    let mut out = Vec::new();
    let mut seen: Vec<&str> = Vec::new();
    for (k, b0) in s.tornado.iter().enumerate() {
        if seen.contains(&b0.file.as_str()) {
            continue;
        }
        seen.push(&b0.file);
        let bars: Vec<_> = s.tornado[k..]
            .iter()
            .filter(|b| b.file == b0.file)
            .collect();
        let scale = units.money_scale(
            bars.iter()
                .flat_map(|b| [b.base, b.at_low, b.at_high])
                .flatten(),
        );
        let factor = match kind.measure() {
            Some(crate::units::Measure::Money) => 1.0 / scale.divisor,
            Some(crate::units::Measure::Share) => 100.0,
            _ => 1.0,
        };
        let unit = kind
            .measure()
            .map(|m| units.unit(m, &scale))
            .unwrap_or_default();
        let rows = bars
            .iter()
            .map(|b| crate::plots::TornadoRow {
                label: format!(
                    "{} {} … {}",
                    b.key,
                    crate::plots::style::tick(b.low),
                    crate::plots::style::tick(b.high)
                ),
                at_low: b.at_low.map(|x| x * factor),
                at_high: b.at_high.map(|x| x * factor),
            })
            .collect();
        let x_label = if unit.is_empty() {
            label_of(s, key)
        } else {
            format!("{} ({unit})", label_of(s, key))
        };
        let stem = format!(
            "tornado_{}",
            crate::briefing::figures::slug(&format!("{} {}", seen.len(), b0.policy))
        );
        out.push(crate::briefing::Figure {
            stem,
            caption: format!(
                "{}: {} with one key at a time at its low and high value",
                b0.policy,
                label_of(s, key)
            ),
            plot: crate::plots::tornado(&b0.policy, &x_label, b0.base.map(|x| x * factor), rows),
        });
    }
    out
}

/// A policy's robustness in one sentence: under how many of the assumptions its net welfare
/// gains or loses beyond two standard errors, how many diverged, and whether the sign moves.
pub(super) fn robustness_line(r: &super::Robustness) -> String {
    format!(
        "{}: a net welfare gain under {} of {} assumptions, a loss under {} (beyond two standard \
         errors){}{}.",
        r.policy,
        r.gains,
        r.assumptions,
        r.losses,
        if r.diverged > 0 {
            format!("; diverged under {}", r.diverged)
        } else {
            String::new()
        },
        if r.sign_changes.iter().any(|k| k == NET_WELFARE) {
            "; the sign depends on how farmers forecast"
        } else {
            ""
        }
    )
}

//! The briefing's assumption annex (`report … --sensitivity`): the assumption panel per indicator,
//! what better forecasts alone are worth, how many assumptions give each policy a gain, and the
//! tornado with its figures — the numbers of `sensitivity` itself (the same analysis, shown in the
//! page's units), never recomputed.

use super::render::{kind_of, label_of, robustness_line, show, with_se};
use super::{Sensitivity, NET_WELFARE};
use crate::briefing::{Figure, Section};
use crate::compare::Kind;
use crate::output::TextTable;
use crate::units::{group, Units};

/// Heading of the annex.
pub const HEADING: &str = "Annex I: how far the answer depends on the assumptions";

/// The annex and its figures (one tornado per policy when ranges were given).
pub fn annex(s: &Sensitivity) -> (Section, Vec<Figure>) {
    let units = Units::new(&s.price_unit, &s.quantity_unit);
    let n = s.policies.len().max(1);
    let mut sec = Section::new(HEADING);
    sec.paragraph(format!(
        "Each policy is run again under each assumption on how farmers forecast, against the market \
         left alone under the same assumption and with the same shocks ({} replications × {} \
         seasons, seed {}); ± one Monte Carlo standard error. Model results, not forecasts: check \
         them against official analysis and local law.",
        s.replications, s.periods, s.seed
    ));
    for key in &s.indicators {
        let kind = kind_of(s, key);
        let se_key = format!("{key}_se");
        let scale = units.money_scale(s.panel.iter().filter_map(|c| c.number(key)));
        let unit = kind
            .measure()
            .map(|m| units.unit(m, &scale))
            .unwrap_or_default();
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
        let title = if unit.is_empty() {
            format!("{} ({key})", label_of(s, key))
        } else {
            format!("{} ({key}), {unit}", label_of(s, key))
        };
        sec.table(title, t);
        let flagged: Vec<&str> = s
            .robustness
            .iter()
            .filter(|r| r.sign_changes.contains(key))
            .map(|r| r.policy.as_str())
            .collect();
        if !flagged.is_empty() {
            sec.note(format!(
                "The sign of {key} changes across the assumptions for: {}.",
                flagged.join("; ")
            ));
        }
    }
    if !s.forecasts.is_empty() {
        let scale = units.money_scale(
            s.forecasts
                .iter()
                .filter_map(|f| f.net_welfare_change_pv)
                .chain(s.panel.iter().filter_map(|c| c.number(NET_WELFARE))),
        );
        let mut headers = vec![
            "Farmers' expectations".to_string(),
            "Better forecasts alone".to_string(),
        ];
        headers.extend(s.policies.iter().cloned());
        let mut t = TextTable::new(&headers);
        let se_key = format!("{NET_WELFARE}_se");
        for (r, f) in s.forecasts.iter().enumerate() {
            let gain = match f.net_welfare_change_pv {
                Some(x) => show(&units, Kind::Money, Some(x), &scale),
                None => "diverged".into(),
            };
            let mut row = vec![
                f.rule.clone(),
                match f.net_welfare_change_pv_se {
                    Some(se) => format!("{gain} ± {}", show(&units, Kind::Money, Some(se), &scale)),
                    None => gain,
                },
            ];
            for c in s.panel.iter().skip(r * n).take(n) {
                row.push(with_se(
                    &units,
                    Kind::Money,
                    c,
                    NET_WELFARE,
                    &se_key,
                    &scale,
                ));
            }
            t.push(row);
        }
        sec.table(
            format!(
                "Net welfare change, present value ({}): better forecasts alone (the market left \
                 alone under rational expectations against it under the rule) beside each policy",
                scale.label
            ),
            t,
        );
    }
    for r in &s.robustness {
        sec.paragraph(robustness_line(r));
    }
    let mut figures = Vec::new();
    if let Some(first) = s.tornado.first() {
        let key = &first.indicator;
        let kind = kind_of(s, key);
        let scale = units.money_scale(
            s.tornado
                .iter()
                .flat_map(|b| [b.base, b.at_low, b.at_high, b.swing])
                .flatten(),
        );
        let mut t = TextTable::new(&[
            "Policy", "Key", "Low", "High", "At low", "At high", "Swing", "Base",
        ]);
        for b in &s.tornado {
            t.push(vec![
                b.policy.clone(),
                b.key.clone(),
                group(b.low, 3),
                group(b.high, 3),
                show(&units, kind, b.at_low, &scale),
                show(&units, kind, b.at_high, &scale),
                show(&units, kind, b.swing, &scale),
                show(&units, kind, b.base, &scale),
            ]);
        }
        let unit = kind
            .measure()
            .map(|m| units.unit(m, &scale))
            .unwrap_or_default();
        sec.table(
            format!(
                "Tornado: {} ({key}), {unit}; one key at a time at its low and high value, the \
                 others at base; widest swing first",
                label_of(s, key)
            ),
            t,
        );
        figures = super::figures(s);
        for f in &figures {
            match f.plot.svg_string() {
                Ok(svg) => {
                    sec.figure(f.caption.clone(), svg);
                }
                Err(_) => {
                    sec.note(format!("(figure “{}” could not be drawn)", f.caption));
                }
            }
        }
    }
    (sec, figures)
}

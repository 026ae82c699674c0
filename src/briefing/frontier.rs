//! The briefing's cost–risk annex (`report … --frontier RISK,COST`): the policies compared as designs,
//! each a point by two of the comparison's indicators (both smaller is better), the non-dominated ones
//! named (`design::frontier::pareto`), with the frontier figure.

use super::figures::Figure;
use super::Section;
use crate::compare::{finite_number, CompareResult};
use crate::design::frontier::pareto;
use crate::output::TextTable;
use crate::plots::{frontier, FrontierPoint};
use crate::units::{group, Units};

/// Heading of the annex.
pub const HEADING: &str = "Annex H: the designs by risk and cost";

/// The indicator `key` of every compared policy that is not the market left alone, in order.
fn values(r: &CompareResult, key: &str) -> Vec<f64> {
    r.policies
        .iter()
        .filter(|p| !p.is_baseline)
        .map(|p| finite_number(&p.indicators, key).unwrap_or(f64::NAN))
        .collect()
}

/// The annex and its figure. `risk` and `cost` are indicator names of the comparison (checked by
/// the caller against its list).
pub fn section(r: &CompareResult, risk: &str, cost: &str) -> (Section, Vec<Figure>) {
    let names: Vec<String> = r
        .policies
        .iter()
        .filter(|p| !p.is_baseline)
        .map(|p| p.name.clone())
        .collect();
    let points: Vec<(f64, f64)> = values(r, risk).into_iter().zip(values(r, cost)).collect();
    let front = pareto(&points);
    let mut sec = Section::new(HEADING);
    sec.paragraph(format!(
        "Each policy compared is a design, placed by {risk} (across) and {cost} (up); smaller is \
         better on both. A design is on the frontier when no other design is at least as low on both \
         and lower on one: choosing among frontier designs trades one for the other, and a design off \
         the frontier is beaten on both by some design on it. Figures are the comparison's own (the \
         same shocks for every design)."
    ));
    // the two columns in the page's units and money scale, as the other tables print them
    let units = Units::new(&r.price_unit, &r.quantity_unit);
    let scale = super::tables::money_scale(r);
    let kind = |key: &str| {
        r.policies
            .iter()
            .flat_map(|p| p.indicators.iter())
            .find(|i| i.key == key)
            .map(|i| (i.label.clone(), i.kind.measure()))
    };
    let header = |key: &str| match kind(key) {
        Some((label, Some(m))) => format!("{label} ({key}), {}", units.unit(m, &scale)),
        Some((label, None)) => format!("{label} ({key})"),
        None => key.to_string(),
    };
    let shown = |key: &str, v: f64| match (v.is_finite(), kind(key).and_then(|(_, m)| m)) {
        (false, _) => "n/a".to_string(),
        (true, Some(m)) => units.show(v, m, &scale),
        (true, None) => group(v, 3),
    };
    let (risk_header, cost_header) = (header(risk), header(cost));
    let mut table = TextTable::new(&["policy", &risk_header, &cost_header, "on the frontier"]);
    for (i, (name, (x, y))) in names.iter().zip(&points).enumerate() {
        table.push(vec![
            name.clone(),
            shown(risk, *x),
            shown(cost, *y),
            if front.contains(&i) { "yes" } else { "no" }.to_string(),
        ]);
    }
    sec.table(format!("The designs by {risk} and {cost}"), table);
    let plot = frontier(
        risk,
        cost,
        names
            .iter()
            .zip(&points)
            .enumerate()
            .map(|(i, (name, (x, y)))| FrontierPoint {
                risk: *x,
                cost: *y,
                chosen: front.contains(&i),
                label: name.clone(),
            })
            .collect(),
    );
    let figure = Figure {
        stem: "frontier".into(),
        caption: format!("The designs by {risk} and {cost}; the frontier filled and joined."),
        plot,
    };
    match figure.plot.svg_string() {
        Ok(svg) => {
            sec.figure(figure.caption.clone(), svg);
        }
        Err(_) => {
            sec.note(format!(
                "(figure “{}” could not be drawn: no design has finite {risk} and {cost})",
                figure.caption
            ));
        }
    }
    (sec, vec![figure])
}

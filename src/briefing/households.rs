//! The briefing's "who gains" annex: the household groups, their welfare change under each policy
//! (a table and a bar chart per group), and what the figures mean.

use super::figures::{slug, Figure};
use super::Section;
use crate::compare::CompareResult;
use crate::households::{render, HouseholdColumn, HouseholdResult};
use crate::output::TextTable;
use crate::plots::{group_bars, GroupBar};
use crate::units::group;

/// Heading of the annex.
pub const HEADING: &str = "Annex G: who gains — household groups";

/// The annex and its figures (one bar chart per group). The columns are the comparison's
/// policies that are not the market left alone (that is the reference, zero for every group);
/// colours follow the policies' order in the briefing (the market left alone is colour 0).
pub fn section(r: &CompareResult, h: &HouseholdResult) -> (Section, Vec<Figure>) {
    let shown: Vec<(usize, String, &HouseholdColumn)> = r
        .policies
        .iter()
        .zip(&h.policies)
        .filter(|(p, _)| !p.is_baseline)
        .enumerate()
        .map(|(k, (p, c))| (k + 1, p.name.clone(), c))
        .collect();
    let mut sec = Section::new(HEADING);
    sec.paragraph(
        "Aggregate consumer and producer surplus hide who pays. For each household group of the market \
         file: the change in its welfare under each policy, as a share of the group's income, against \
         the market left alone under the same weather. A group that buys more of the crop than it \
         sells (a negative net benefit ratio, NBR) loses when the price rises.",
    );
    let mut groups = TextTable::new(&[
        "group",
        "share of households",
        "income per household and season",
        "production share PR",
        "consumption share CR",
        "NBR = PR − CR",
    ]);
    for g in &h.groups {
        groups.push(vec![
            g.name.clone(),
            format!("{} %", group(100.0 * g.population_share, 1)),
            group(g.income, 1),
            group(g.production_share, 3),
            group(g.consumption_share, 3),
            group(g.net_benefit_ratio(), 3),
        ]);
    }
    sec.table("Household groups (from the market file)", groups);
    let columns: Vec<(String, &HouseholdColumn)> = shown
        .iter()
        .map(|(_, name, c)| (name.clone(), *c))
        .collect();
    if columns.is_empty() {
        sec.note("No policy intervenes: every group's change is zero.");
        return (sec, Vec::new());
    }
    sec.table(
        "Welfare change by group, % of income (± one standard error)",
        render::table(h, &columns),
    );
    sec.note(render::note(h));
    let mut figures = Vec::new();
    for (i, g) in h.groups.iter().enumerate() {
        let bars = shown
            .iter()
            .filter_map(|(k, name, c)| {
                let o = c.outcomes.get(i)?;
                Some(GroupBar {
                    name: name.clone(),
                    code: format!("P{k}"),
                    value: 100.0 * o.with_response,
                    tick: Some(100.0 * o.first_order),
                    colour: *k,
                })
            })
            .collect();
        let plot = group_bars(
            &format!("Who gains: {}", g.name),
            &format!(
                "welfare change against the market left alone, % of income; {} % of households, NBR {}",
                group(100.0 * g.population_share, 1),
                group(g.net_benefit_ratio(), 2)
            ),
            "% of income",
            "first order (NBR·Δp/p)",
            bars,
        );
        figures.push(Figure {
            stem: format!("who_gains_{}_{}", i + 1, slug(&g.name)),
            caption: format!(
                "Who gains: {} — welfare change as % of income under each policy (bars: with supply \
                 and demand response; black tick: first order).",
                g.name
            ),
            plot,
        });
    }
    for f in &figures {
        match f.plot.svg_string() {
            Ok(svg) => {
                sec.figure(f.caption.clone(), svg);
            }
            Err(_) => {
                sec.note(format!(
                    "(figure “{}” could not be drawn: no finite data)",
                    f.caption
                ));
            }
        }
    }
    (sec, figures)
}

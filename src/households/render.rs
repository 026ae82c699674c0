//! The household block `compare --households` adds, in every format: rows = group × measure,
//! columns = policies; every figure a share of the group's income (tables in per cent).

use super::{GroupOutcome, HouseholdColumn, HouseholdResult};
use crate::output::{fmt_full, Format, TextTable};
use crate::units::group;

/// The measures, in row order: (JSON key, label).
pub const MEASURES: [(&str, &str); 3] = [
    (
        "welfare_change_share_first_order",
        "welfare change, first order (NBR·Δp/p)",
    ),
    (
        "welfare_change_share",
        "welfare change with supply and demand response",
    ),
    ("price_risk_cost_share", "change in the cost of price risk"),
];

/// The value of measure `key` and its standard error.
fn value(o: &GroupOutcome, key: &str) -> (Option<f64>, Option<f64>) {
    match key {
        "welfare_change_share_first_order" => (Some(o.first_order), o.first_order_se),
        "welfare_change_share" => (Some(o.with_response), o.with_response_se),
        _ => (o.risk_cost, None),
    }
}

fn finite(x: Option<f64>) -> serde_json::Value {
    match x {
        Some(v) if v.is_finite() => serde_json::json!(v),
        _ => serde_json::Value::Null,
    }
}

/// The JSON rows: one per (given policy, group), policies in order, groups in file order.
pub fn json(h: &HouseholdResult) -> serde_json::Value {
    let mut rows = Vec::new();
    for column in &h.policies {
        for (g, o) in h.groups.iter().zip(&column.outcomes) {
            rows.push(serde_json::json!({
                "name": g.name,
                "policy": column.policy,
                "population_share": g.population_share,
                "net_benefit_ratio": g.net_benefit_ratio(),
                "welfare_change_share_first_order": finite(Some(o.first_order)),
                "welfare_change_share_first_order_se": finite(o.first_order_se),
                "welfare_change_share": finite(Some(o.with_response)),
                "welfare_change_share_se": finite(o.with_response_se),
                "price_risk_cost_share": finite(o.risk_cost),
                "welfare_change_pv_per_household": finite(Some(o.pv_per_household)),
            }));
        }
    }
    serde_json::Value::Array(rows)
}

/// The settings the block was computed with (JSON).
pub fn settings_json(h: &HouseholdResult) -> serde_json::Value {
    serde_json::json!({
        "supply_elasticity": finite(Some(h.supply_elasticity)),
        "demand_elasticity": finite(Some(h.demand_elasticity)),
        "risk_aversion": h.risk_aversion,
        "pv_factor": finite(Some(h.pv_factor)),
    })
}

/// CSV rows in the comparison's layout (first cell the row key, then one cell per given policy):
/// `household:GROUP:MEASURE`, and `…_se` rows where there is a standard error; full precision,
/// empty cells where a figure is not available.
pub fn csv_rows(h: &HouseholdResult) -> Vec<Vec<String>> {
    let mut rows = Vec::new();
    for (i, g) in h.groups.iter().enumerate() {
        for (key, _) in MEASURES {
            let mut with_se = vec![format!("household:{}:{key}", g.name)];
            let mut se_row = vec![format!("household:{}:{key}_se", g.name)];
            for column in &h.policies {
                let (v, se) = column
                    .outcomes
                    .get(i)
                    .map_or((None, None), |o| value(o, key));
                with_se.push(v.filter(|x| x.is_finite()).map_or(String::new(), fmt_full));
                se_row.push(se.filter(|x| x.is_finite()).map_or(String::new(), fmt_full));
            }
            rows.push(with_se);
            if key != "price_risk_cost_share" {
                rows.push(se_row);
            }
        }
    }
    rows
}

/// Short row labels of the measures in tables.
const SHORT: [&str; 3] = ["first order", "with response", "price-risk cost Δ"];

/// The block as a table: columns are `(header, column)` in display order; cells in per cent of
/// income with two decimals and "± one standard error". The group column carries, one line per
/// measure row, the group's name, its share of households and its net benefit ratio.
pub fn table(h: &HouseholdResult, columns: &[(String, &HouseholdColumn)]) -> TextTable {
    let mut headers = vec!["Group".to_string(), "% of income".to_string()];
    headers.extend(columns.iter().map(|(name, _)| name.clone()));
    let mut t = TextTable::new(&headers);
    for (i, g) in h.groups.iter().enumerate() {
        let name: String = if g.name.chars().count() > 30 {
            g.name.chars().take(29).chain(['…']).collect()
        } else {
            g.name.clone()
        };
        let about = [
            name,
            format!("{} % of households", group(100.0 * g.population_share, 1)),
            format!("NBR {}", signed(g.net_benefit_ratio())),
        ];
        for (m, (key, _)) in MEASURES.iter().enumerate() {
            let mut cells = vec![about[m].clone(), SHORT[m].to_string()];
            cells.extend(columns.iter().map(|(_, c)| {
                let (v, se) = c.outcomes.get(i).map_or((None, None), |o| value(o, key));
                let shown = v.map_or("n/a".to_string(), |x| group(100.0 * x, 2));
                match se {
                    Some(se) if se.is_finite() && se > 0.0 => {
                        format!("{shown} ± {}", group(100.0 * se, 2))
                    }
                    _ => shown,
                }
            }));
            t.push(cells);
        }
    }
    t
}

fn signed(x: f64) -> String {
    if x > 0.0 {
        format!("+{}", group(x, 2))
    } else {
        group(x, 2)
    }
}

/// What the block's figures are, in one paragraph (under the table).
pub fn note(h: &HouseholdResult) -> String {
    format!(
        "Household groups (welfare as % of each group's income; NBR = PR − CR, the net benefit \
         ratio: > 0 a net seller, < 0 a net buyer): change against the market left alone under the same shocks, as a \
         share of the group's income (present value of the change ÷ present value of income, i.e. \
         the discount-weighted average season; mean over replications ± one standard error). First \
         order: PR·Δp_prod/p − CR·Δp_cons/p season by season, = NBR·Δp/p when producers and \
         consumers face one price (Deaton 1989); with response: + ½·(PR·ε_s·(Δp_prod/p)² − \
         CR·ε_d·(Δp_cons/p)²), ε_s = {} and ε_d = {} at the steady state (Minot and Goletti 2000). \
         Cost of price risk: ½·R·Var(PR·p_prod/p̄ − CR·p_cons/p̄) across weather draws, R = {}, \
         policy minus market left alone (price-risk cost Δ; negative: the policy lowers it; after \
         Turnovsky, Shalit and Schmitz 1980).",
        group(h.supply_elasticity, 3),
        group(h.demand_elasticity, 3),
        group(h.risk_aversion, 2),
    )
}

/// The block in `format` (table or Markdown: the table and the note; CSV and JSON are merged
/// into the comparison's own document by `compare::render`).
pub fn block(
    h: &HouseholdResult,
    columns: &[(String, &HouseholdColumn)],
    format: Format,
) -> String {
    let t = table(h, columns);
    match format {
        Format::Markdown => format!(
            "### Who gains: household groups\n\n{}\n{}\n",
            t.render(Format::Markdown),
            note(h)
        ),
        _ => format!(
            "Who gains: household groups\n{}{}\n",
            t.render(Format::Table),
            note(h)
        ),
    }
}

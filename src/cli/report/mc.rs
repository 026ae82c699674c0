//! The Monte Carlo side of the briefing and of `compare --plots`: fan charts, the risk and welfare
//! tables and the headline figures, from `furrow::compare`'s result.

use furrow::compare::{CompareResult, Kind, PolicyComparison, Value};
use furrow::output::{fmt_num, TextTable};
use furrow::plots::{self, FanBand, Series};

use super::brief::Headline;
use super::figures::{money_unit, Figure};

/// The columns shown: the market left alone first (once), then the policies given.
pub fn columns(r: &CompareResult) -> Vec<&PolicyComparison> {
    let mut cols = vec![&r.baseline];
    cols.extend(r.policies.iter().filter(|p| !p.is_baseline));
    cols
}

/// Fan charts of the price and, for policies that hold stock, of the agency stock; and the mean
/// fiscal cost per period.
pub fn figures(r: &CompareResult) -> Vec<Figure> {
    let cols = columns(r);
    let band = |i: usize, p: &PolicyComparison, stock: bool| {
        let s = if stock { &p.fan.stock } else { &p.fan.price };
        FanBand {
            name: p.name.clone(),
            p05: s.iter().map(|x| x.p05).collect(),
            p50: s.iter().map(|x| x.p50).collect(),
            p95: s.iter().map(|x| x.p95).collect(),
            mean: Some(s.iter().map(|x| x.mean).collect()),
            colour: Some(i),
        }
    };
    let mut figs = vec![Figure {
        stem: "price_fan".into(),
        caption: format!(
            "Market price across {} simulated weather paths: 5–95 % band, median and mean per policy.",
            r.replications
        ),
        plot: plots::fan(
            &format!("{}: price risk by policy", r.market),
            "period (season)",
            &format!("market price ({})", r.price_unit),
            r.replications,
            cols.iter().enumerate().map(|(i, p)| band(i, p, false)).collect(),
        ),
    }];
    let stocked: Vec<FanBand> = cols
        .iter()
        .enumerate()
        .filter(|(_, p)| p.fan.stock.iter().any(|s| s.p95 > 0.0))
        .map(|(i, p)| band(i, p, true))
        .collect();
    if !stocked.is_empty() {
        let mut plot = plots::fan(
            &format!("{}: public stock by policy", r.market),
            "period (season)",
            &format!("agency stock ({})", r.quantity_unit),
            r.replications,
            stocked,
        );
        if let plots::Plot::Fan(f) = &mut plot {
            f.reference_first = false;
        }
        figs.push(Figure {
            stem: "stock_fan".into(),
            caption: "Public stock held at the end of each season: 5–95 % band, median and mean."
                .into(),
            plot,
        });
    }
    figs.push(Figure {
        stem: "fiscal_cost_mean".into(),
        caption: format!(
            "Mean fiscal cost per season over {} simulated weather paths.",
            r.replications
        ),
        plot: plots::fiscal(
            &format!("{}: mean fiscal cost by period", r.market),
            "period (season)",
            &format!(
                "mean fiscal cost ({})",
                money_unit(&r.price_unit, &r.quantity_unit)
            ),
            cols.iter()
                .map(|p| Series::periods(p.name.clone(), &p.fan.mean_fiscal_cost))
                .collect(),
        ),
    });
    let cumulative: Vec<Series> = cols
        .iter()
        .map(|p| {
            let mut acc = 0.0;
            let v: Vec<f64> = p
                .fan
                .mean_fiscal_cost
                .iter()
                .map(|x| {
                    acc += x;
                    acc
                })
                .collect();
            Series::periods(p.name.clone(), &v)
        })
        .collect();
    let mut cum = plots::paths(
        &format!("{}: cumulative mean fiscal cost", r.market),
        "period (season)",
        &format!(
            "cumulative fiscal cost ({})",
            money_unit(&r.price_unit, &r.quantity_unit)
        ),
        cumulative,
    );
    if let plots::Plot::Lines(l) = &mut cum {
        l.titles.subtitle = format!(
            "running total of the mean over {} paths, undiscounted; stock still held is not yet credited",
            r.replications
        );
        l.include_zero = true;
    }
    figs.push(Figure {
        stem: "fiscal_cumulative_mean".into(),
        caption: "Cumulative mean fiscal cost: what each policy has cost the treasury so far, on average."
            .into(),
        plot: cum,
    });
    figs
}

fn unit(kind: Kind, r: &CompareResult) -> String {
    match kind {
        Kind::Price => r.price_unit.clone(),
        Kind::Quantity => r.quantity_unit.clone(),
        Kind::Money => money_unit(&r.price_unit, &r.quantity_unit),
        Kind::Share => "share".into(),
        Kind::Number | Kind::Text => String::new(),
    }
}

fn cell(v: Option<&Value>, kind: Kind) -> String {
    match v {
        Some(Value::Number(x)) if x.is_finite() => {
            let d = match kind {
                Kind::Price => 2,
                Kind::Quantity => 1,
                Kind::Share | Kind::Number => 3,
                Kind::Money => 0,
                Kind::Text => 3,
            };
            fmt_num(*x, d)
        }
        Some(Value::Text(t)) => t.clone(),
        _ => "n/a".into(),
    }
}

/// A table of the indicators whose keys pass `pick`, one column per policy.
pub fn table(r: &CompareResult, pick: &dyn Fn(&str) -> bool) -> TextTable {
    let cols = columns(r);
    let mut headers = vec!["indicator".to_string(), "unit".to_string()];
    headers.extend(cols.iter().map(|p| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let Some(first) = cols.first() else { return t };
    for ind in first.indicators.iter().filter(|i| pick(&i.key)) {
        let mut row = vec![ind.label.trim().to_string(), unit(ind.kind, r)];
        if ind.label.starts_with("  ") {
            row[0] = format!("… {}", ind.label.trim());
        }
        row.extend(cols.iter().map(|p| cell(p.get(&ind.key), ind.kind)));
        t.push(row);
    }
    t
}

/// Keys of the risk table: spreads, shares and risk premia (no present values, no quantiles).
pub fn is_risk(key: &str) -> bool {
    !key.ends_with("_pv") && !is_quantile(key) && key != "final_stock" && !is_stability(key)
}

fn is_quantile(key: &str) -> bool {
    key.ends_with("_p05") || key.ends_with("_p50") || key.ends_with("_p95")
}

fn is_stability(key: &str) -> bool {
    key == "spectral_radius" || key == "verdict"
}

/// Keys of the welfare and fiscal table: present values and the final stock.
pub fn is_welfare(key: &str) -> bool {
    key.ends_with("_pv") || key == "final_stock"
}

/// Adds "5–95 % range" rows for the present values that have quantiles (fiscal cost, welfare
/// changes) to a table made by [`table`].
pub fn with_ranges(r: &CompareResult, mut t: TextTable) -> TextTable {
    let cols = columns(r);
    let Some(first) = cols.first() else { return t };
    let mut rows = Vec::new();
    for ind in first.indicators.iter().filter(|i| is_welfare(&i.key)) {
        let label = ind.label.trim().to_string();
        let (lo, hi) = (format!("{}_p05", ind.key), format!("{}_p95", ind.key));
        let mut out_row = None;
        if first.get(&lo).is_some() {
            let mut cells = vec![format!("{label}: 5–95 % range"), unit(ind.kind, r)];
            cells.extend(cols.iter().map(|p| {
                format!(
                    "{} … {}",
                    cell(p.get(&lo), ind.kind),
                    cell(p.get(&hi), ind.kind)
                )
            }));
            out_row = Some(cells);
        }
        rows.push((label, out_row));
    }
    let mut merged = Vec::new();
    for row in t.rows.drain(..) {
        let name = row
            .first()
            .map(|c| c.trim_start_matches("… ").to_string())
            .unwrap_or_default();
        merged.push(row);
        if let Some((_, Some(extra))) = rows.iter().find(|(l, _)| *l == name) {
            merged.push(extra.clone());
        }
    }
    t.rows = merged;
    t
}

/// Headline figures per column, from the Monte Carlo.
pub fn headlines(r: &CompareResult) -> Vec<Headline> {
    columns(r)
        .iter()
        .map(|p| Headline {
            name: p.name.clone(),
            price_sd: p.number("price_sd").unwrap_or(f64::NAN),
            fiscal_pv: p.number("fiscal_cost_pv").unwrap_or(f64::NAN),
            net_pv: p.number("net_welfare_change_pv").unwrap_or(f64::NAN),
        })
        .collect()
}

/// The figures of `run --plots` with replications > 1: a fan per summarised series (market price,
/// harvest, and the agency stock when there is one) and the mean fiscal cost per period.
pub fn run_figures(
    scenario: &furrow::scenario::Scenario,
    runs: &furrow::stochastic::PolicyRuns,
    replications: usize,
) -> Vec<Figure> {
    use furrow::stochastic::Series as S;
    let m = &scenario.market;
    let mut figs = Vec::new();
    for s in &runs.series {
        let (stem, what, unit) = match s.series {
            S::Price => ("price_fan", "market price", &m.price_unit),
            S::Harvest => ("harvest_fan", "harvest", &m.quantity_unit),
            S::Stock => ("stock_fan", "agency stock", &m.quantity_unit),
            _ => continue,
        };
        if matches!(s.series, S::Stock) && !s.periods.iter().any(|x| x.p95 > 0.0) {
            continue;
        }
        let band = FanBand {
            name: runs.name.clone(),
            p05: s.periods.iter().map(|x| x.p05).collect(),
            p50: s.periods.iter().map(|x| x.p50).collect(),
            p95: s.periods.iter().map(|x| x.p95).collect(),
            mean: Some(s.periods.iter().map(|x| x.mean).collect()),
            colour: None,
        };
        figs.push(Figure {
            stem: stem.into(),
            caption: format!("Spread of the {what} across {replications} simulated weather paths."),
            plot: plots::fan(
                &format!("{}: {what} under {}", m.name, runs.name),
                "period (season)",
                &format!("{what} ({unit})"),
                replications,
                vec![band],
            ),
        });
    }
    figs.push(Figure {
        stem: "fiscal_cost_mean".into(),
        caption: format!(
            "Mean fiscal cost per season over {replications} simulated weather paths."
        ),
        plot: plots::fiscal(
            &format!("{}: mean fiscal cost by period", m.name),
            "period (season)",
            &format!(
                "mean fiscal cost ({})",
                money_unit(&m.price_unit, &m.quantity_unit)
            ),
            vec![Series::periods(runs.name.clone(), &runs.mean_fiscal_cost)],
        ),
    });
    figs
}

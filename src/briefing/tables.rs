//! The Monte Carlo side of the briefing and of `compare --plots`: fan charts and the risk and
//! welfare tables, from [`crate::compare`]'s result, in the units of [`crate::units`].

use super::figures::Figure;
use super::path::COLUMNS;
use crate::compare::{render, CompareResult, Kind, PolicyComparison, Value};
use crate::output::TextTable;
use crate::plots::{self, FanBand, Series};
use crate::units::{MoneyScale, Units};

/// A per-period series thinned for a figure: blocks of `stride` periods (so at most
/// [`COLUMNS`] of them), each reduced by `pick`.
fn thin(v: &[f64], stride: usize, pick: fn(&[f64]) -> f64) -> Vec<f64> {
    if stride <= 1 {
        return v.to_vec();
    }
    v.chunks(stride).map(pick).collect()
}

fn lowest(b: &[f64]) -> f64 {
    b.iter().copied().fold(f64::INFINITY, f64::min)
}

fn highest(b: &[f64]) -> f64 {
    b.iter().copied().fold(f64::NEG_INFINITY, f64::max)
}

fn average(b: &[f64]) -> f64 {
    b.iter().sum::<f64>() / b.len().max(1) as f64
}

/// Periods per block for fan charts of `n` periods.
fn fan_stride(n: usize) -> usize {
    if n <= 2 * COLUMNS {
        1
    } else {
        n.div_ceil(COLUMNS)
    }
}

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
    let units = Units::new(&r.price_unit, &r.quantity_unit);
    let stride = fan_stride(r.periods);
    let band = |i: usize, p: &PolicyComparison, stock: bool| {
        let s = if stock { &p.fan.stock } else { &p.fan.price };
        let col = |f: fn(&crate::stochastic::Summary) -> f64| s.iter().map(f).collect::<Vec<_>>();
        FanBand {
            name: p.name.clone(),
            p05: thin(&col(|x| x.p05), stride, lowest),
            p50: thin(&col(|x| x.p50), stride, average),
            p95: thin(&col(|x| x.p95), stride, highest),
            mean: Some(thin(&col(|x| x.mean), stride, average)),
            colour: Some(i),
            stride,
        }
    };
    let period_axis = if stride > 1 {
        format!("period (season; blocks of {stride}: lowest 5 %, highest 95 %, average median and mean)")
    } else {
        "period (season)".to_string()
    };
    let mut figs = vec![Figure {
        stem: "price_fan".into(),
        caption: format!(
            "Market price across {} simulated weather paths: 5–95 % band, median and mean per policy.",
            r.replications
        ),
        plot: plots::fan(
            &format!("{}: price risk by policy", r.market),
            &period_axis,
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
            &period_axis,
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
    let spends = |p: &PolicyComparison| p.fan.mean_fiscal_cost.iter().any(|x| *x != 0.0);
    let spenders: Vec<&&PolicyComparison> = cols.iter().filter(|p| spends(p)).collect();
    let palette: Vec<usize> = (0..cols.len()).filter(|&i| spends(cols[i])).collect();
    if spenders.is_empty() {
        return figs;
    }
    let thin_points = |v: &[f64]| -> Vec<(f64, f64)> {
        let mut t = super::path::Thinned::new(v.len());
        for (i, x) in v.iter().enumerate() {
            t.push(i + 1, *x);
        }
        t.finish()
    };
    let mut per_season: Vec<Series> = spenders
        .iter()
        .map(|p| Series {
            name: p.name.clone(),
            points: thin_points(&p.fan.mean_fiscal_cost),
        })
        .collect();
    let scale = units.money_scale(per_season.iter().flat_map(|s| s.points.iter().map(|p| p.1)));
    for s in &mut per_season {
        s.points.iter_mut().for_each(|p| p.1 /= scale.divisor);
    }
    let mut plot = plots::fiscal(
        &format!("{}: mean fiscal cost by period", r.market),
        "period (season)",
        &format!("mean fiscal cost ({})", scale.label),
        per_season,
    );
    if let plots::Plot::Lines(l) = &mut plot {
        l.palette = palette.clone();
    }
    figs.push(Figure {
        stem: "fiscal_cost_mean".into(),
        caption: format!(
            "Mean fiscal cost per season over {} simulated weather paths (policies that spend nothing are left out).",
            r.replications
        ),
        plot,
    });
    let mut cumulative: Vec<Series> = spenders
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
            Series {
                name: p.name.clone(),
                points: thin_points(&v),
            }
        })
        .collect();
    let scale = units.money_scale(cumulative.iter().flat_map(|s| s.points.iter().map(|p| p.1)));
    for s in &mut cumulative {
        s.points.iter_mut().for_each(|p| p.1 /= scale.divisor);
    }
    let mut cum = plots::paths(
        &format!("{}: cumulative mean fiscal cost", r.market),
        "period (season)",
        &format!("cumulative fiscal cost ({})", scale.label),
        cumulative,
    );
    if let plots::Plot::Lines(l) = &mut cum {
        l.titles.subtitle = format!(
            "running total of the mean over {} paths, undiscounted; stock still held is not yet credited",
            r.replications
        );
        l.include_zero = true;
        l.reference_first = false;
        l.palette = palette;
    }
    figs.push(Figure {
        stem: "fiscal_cumulative_mean".into(),
        caption: "Cumulative mean fiscal cost: what each policy has cost the treasury so far, on average."
            .into(),
        plot: cum,
    });
    figs
}

fn unit(kind: Kind, units: &Units, scale: &MoneyScale) -> String {
    kind.measure()
        .map_or(String::new(), |m| units.unit(m, scale))
}

/// One cell, as the comparison's own tables show it (`compare::render::cell`); a missing value is
/// "n/a".
fn cell(v: Option<&Value>, kind: Kind, units: &Units, scale: &MoneyScale) -> String {
    render::cell(v.unwrap_or(&Value::Missing), kind, units, scale)
}

/// The money scale of a whole comparison: one unit for every money figure of the page, the same
/// as the comparison's own tables (`compare::render::money_scale`).
pub fn money_scale(r: &CompareResult) -> MoneyScale {
    render::money_scale(r)
}

/// A table of the indicators whose keys pass `pick`, one column per policy.
pub fn table(r: &CompareResult, pick: &dyn Fn(&str) -> bool, scale: &MoneyScale) -> TextTable {
    table_of(r, columns(r), pick, scale)
}

/// The behaviour changes (expectation overrides alone) as a table like [`table`]'s.
pub fn behaviour_table(
    r: &CompareResult,
    pick: &dyn Fn(&str) -> bool,
    scale: &MoneyScale,
) -> TextTable {
    table_of(r, r.behaviour.iter().collect(), pick, scale)
}

fn table_of(
    r: &CompareResult,
    cols: Vec<&PolicyComparison>,
    pick: &dyn Fn(&str) -> bool,
    scale: &MoneyScale,
) -> TextTable {
    let units = Units::new(&r.price_unit, &r.quantity_unit);
    let mut headers = vec!["indicator".to_string(), "unit".to_string()];
    headers.extend(cols.iter().map(|p| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let Some(first) = cols.first() else { return t };
    for ind in first.indicators.iter().filter(|i| pick(&i.key)) {
        let mut row = vec![ind.label.trim().to_string(), unit(ind.kind, &units, scale)];
        if ind.label.starts_with("  ") {
            row[0] = format!("… {}", ind.label.trim());
        }
        row.extend(
            cols.iter()
                .map(|p| cell(p.get(&ind.key), ind.kind, &units, scale)),
        );
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
pub fn with_ranges(r: &CompareResult, mut t: TextTable, scale: &MoneyScale) -> TextTable {
    let cols = columns(r);
    let units = Units::new(&r.price_unit, &r.quantity_unit);
    let Some(first) = cols.first() else { return t };
    let mut rows = Vec::new();
    for ind in first.indicators.iter().filter(|i| is_welfare(&i.key)) {
        let label = ind.label.trim().to_string();
        let (lo, hi) = (format!("{}_p05", ind.key), format!("{}_p95", ind.key));
        let mut out_row = None;
        if first.get(&lo).is_some() {
            let mut cells = vec![
                format!("{label}: 5–95 % range"),
                unit(ind.kind, &units, scale),
            ];
            cells.extend(cols.iter().map(|p| {
                format!(
                    "{} … {}",
                    cell(p.get(&lo), ind.kind, &units, scale),
                    cell(p.get(&hi), ind.kind, &units, scale)
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

/// The figures of `run --plots` with replications > 1: a fan per summarised series (market price,
/// harvest, and the agency stock when there is one) and the mean fiscal cost per period.
pub fn run_figures(
    scenario: &crate::scenario::Scenario,
    runs: &crate::stochastic::PolicyRuns,
    replications: usize,
) -> Vec<Figure> {
    use crate::stochastic::PathVariable as S;
    let m = &scenario.market;
    let units = Units::new(&m.price_unit, &m.quantity_unit);
    let stride = fan_stride(scenario.run.periods);
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
        let col =
            |f: fn(&crate::stochastic::Summary) -> f64| s.periods.iter().map(f).collect::<Vec<_>>();
        let band = FanBand {
            name: runs.name.clone(),
            p05: thin(&col(|x| x.p05), stride, lowest),
            p50: thin(&col(|x| x.p50), stride, average),
            p95: thin(&col(|x| x.p95), stride, highest),
            mean: Some(thin(&col(|x| x.mean), stride, average)),
            colour: None,
            stride,
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
    if runs.mean_fiscal_cost.iter().all(|x| *x == 0.0) {
        return figs; // no empty chart for a policy that never spends
    }
    let mut t = super::path::Thinned::new(runs.mean_fiscal_cost.len());
    for (i, x) in runs.mean_fiscal_cost.iter().enumerate() {
        t.push(i + 1, *x);
    }
    let mut points = t.finish();
    let scale = units.money_scale(points.iter().map(|p| p.1));
    points.iter_mut().for_each(|p| p.1 /= scale.divisor);
    figs.push(Figure {
        stem: "fiscal_cost_mean".into(),
        caption: format!(
            "Mean fiscal cost per season over {replications} simulated weather paths."
        ),
        plot: plots::fiscal(
            &format!("{}: mean fiscal cost by period", m.name),
            "period (season)",
            &format!("mean fiscal cost ({})", scale.label),
            vec![Series {
                name: runs.name.clone(),
                points,
            }],
        ),
    });
    figs
}

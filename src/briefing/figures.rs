//! From results to figures: which plots the briefing and each verb's `--plots` draw, their file
//! stems, captions, axis labels and units (from the market file, money through [`crate::units`]).
//! Drawing itself is [`crate::plots`]; long series arrive thinned ([`super::path`]).

use super::path::{PathDigest, COBWEB_SEASONS};
use crate::engine::{Model, PeriodRecord};
use crate::plots::{self, CobwebStep, EigenPoint, Plot, Series};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;
use crate::stability::StabilityAnalysis;
use crate::units::Units;

/// A figure with its file stem and the caption the report shows.
pub struct Figure {
    /// File stem (`stem.png`, `stem.svg`).
    pub stem: String,
    /// Caption for the briefing.
    pub caption: String,
    /// The plot.
    pub plot: Plot,
}

/// A file-name-safe stem fragment.
pub fn slug(s: &str) -> String {
    let mut out = String::new();
    for c in s.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.ends_with('_') && !out.is_empty() {
            out.push('_');
        }
    }
    let out = out.trim_end_matches('_').to_string();
    if out.is_empty() {
        "policy".into()
    } else {
        out.chars().take(40).collect()
    }
}

/// The price lines a policy defends, to draw on its price chart (each rule's, when finite: the floor,
/// the stock's purchase and sale prices, the ceiling).
pub fn policy_lines(policy: &PolicySpec) -> Vec<plots::Reference> {
    let mut out = Vec::new();
    let g = |x: f64| crate::units::group(x, crate::units::decimals(crate::units::Measure::Price));
    // each rule names the prices it defends (`Rule::price_lines`)
    for rule in &policy.rules {
        for (words, value) in rule.price_lines() {
            out.push(plots::Reference {
                label: format!("{words} {}", g(value)),
                value,
            });
        }
    }
    out
}

/// Money series scaled to one unit chosen by their magnitude; returns the unit's name.
fn scale_money(units: &Units, series: &mut [Series]) -> String {
    let scale = units.money_scale(series.iter().flat_map(|s| s.points.iter().map(|p| p.1)));
    for s in series.iter_mut() {
        for p in &mut s.points {
            p.1 /= scale.divisor;
        }
    }
    scale.label
}

/// Price, harvest and fiscal-cost paths of one simulated path per policy (the market left alone
/// first): overlaid up to four lines, one panel per policy beyond (the market left alone in grey in
/// each). Price charts carry each policy's floor and band lines. Fiscal charts leave out policies
/// that never spend and are not drawn at all when none does.
pub fn path_figures(
    scenario: &Scenario,
    policies: &[&PolicySpec],
    runs: &[PathDigest],
) -> Vec<Figure> {
    let m = &scenario.market;
    let units = Units::new(&m.price_unit, &m.quantity_unit);
    let series = |f: fn(&PathDigest) -> &Vec<(f64, f64)>| -> Vec<Series> {
        runs.iter()
            .map(|d| Series {
                name: d.name.clone(),
                points: f(d).clone(),
            })
            .collect()
    };
    let periods = runs.first().map_or(0, |d| d.periods);
    let stride = runs.first().map_or(1, |d| d.stride);
    let thinned = if stride > 1 {
        format!(
            "; {} seasons drawn as the lowest and highest value of every {stride}",
            crate::units::group(periods as f64, 0)
        )
    } else {
        String::new()
    };
    let shocks = if scenario.is_deterministic() {
        "no shocks".to_string()
    } else {
        format!("one simulated weather path (seed {})", scenario.run.seed)
    };
    let mut price = plots::paths(
        &format!("{}: market price by policy", m.name),
        "period (season)",
        &format!("market price ({})", m.price_unit),
        series(|d| &d.price),
    );
    if let Plot::Lines(l) = &mut price {
        let lines = policies.iter().any(|p| !policy_lines(p).is_empty());
        l.titles.subtitle = format!(
            "{shocks}; dashed: the steady state{}{thinned}",
            if lines {
                " (grey) and each policy's floor and band (its colour)"
            } else {
                ""
            }
        );
        l.references.push(plots::Reference {
            label: "steady state".into(),
            value: scenario.steady.price,
        });
        for (i, p) in policies.iter().enumerate() {
            for r in policy_lines(p) {
                l.series_references.push((i, r));
            }
        }
    }
    let mut harvest = plots::paths(
        &format!("{}: harvest by policy", m.name),
        "period (season)",
        &format!("harvest ({})", m.quantity_unit),
        series(|d| &d.harvest),
    );
    if let Plot::Lines(l) = &mut harvest {
        l.titles.subtitle = format!("{shocks}; dashed: the steady-state quantity{thinned}");
        l.references.push(plots::Reference {
            label: "steady state".into(),
            value: scenario.steady.quantity,
        });
    }
    let mut figs = vec![
        Figure {
            stem: "price_paths".into(),
            caption: format!("Market price per season under each policy ({shocks})."),
            plot: price,
        },
        Figure {
            stem: "harvest_paths".into(),
            caption: format!("Harvest per season under each policy ({shocks})."),
            plot: harvest,
        },
    ];
    // fiscal charts: only policies that spend or receive something
    let spenders: Vec<&PathDigest> = runs.iter().filter(|d| !d.no_fiscal).collect();
    let palette: Vec<usize> = runs
        .iter()
        .enumerate()
        .filter(|(_, d)| !d.no_fiscal)
        .map(|(i, _)| i)
        .collect();
    if spenders.is_empty() {
        return figs;
    }
    let mut per_season: Vec<Series> = spenders
        .iter()
        .map(|d| Series {
            name: d.name.clone(),
            points: d.fiscal.clone(),
        })
        .collect();
    let money = scale_money(&units, &mut per_season);
    let mut fiscal = plots::fiscal(
        &format!("{}: fiscal cost by period", m.name),
        "period (season)",
        &format!("fiscal cost ({money})"),
        per_season,
    );
    if let Plot::Lines(l) = &mut fiscal {
        l.palette = palette.clone();
    }
    let mut cumulative: Vec<Series> = spenders
        .iter()
        .map(|d| Series {
            name: d.name.clone(),
            points: d.cumulative_fiscal.clone(),
        })
        .collect();
    let money = scale_money(&units, &mut cumulative);
    let mut cum = plots::paths(
        &format!("{}: cumulative fiscal cost", m.name),
        "period (season)",
        &format!("cumulative fiscal cost ({money})"),
        cumulative,
    );
    if let Plot::Lines(l) = &mut cum {
        l.titles.subtitle =
            "running total, undiscounted; stock still held is not yet credited".into();
        l.include_zero = true;
        l.reference_first = false;
        l.palette = palette;
    }
    figs.push(Figure {
        stem: "fiscal_cost".into(),
        caption:
            "Fiscal cost per season: purchases, storage, financing and payments, less sales (policies that spend nothing are left out)."
                .into(),
        plot: fiscal,
    });
    figs.push(Figure {
        stem: "fiscal_cumulative".into(),
        caption: "Cumulative fiscal cost: what each policy has cost the treasury so far.".into(),
        plot: cum,
    });
    figs
}

/// The cobweb diagram of one path.
pub fn cobweb_figure(
    scenario: &Scenario,
    policy: &PolicySpec,
    records: &[PeriodRecord],
    stem: &str,
) -> Figure {
    let model = Model::new(scenario, policy);
    let shown = records.len().min(COBWEB_SEASONS);
    let steps = records[..shown]
        .iter()
        .map(|r| CobwebStep {
            quantity: r.harvest,
            expected: r.expected_price,
            price: r.price,
        })
        .collect();
    let plot = plots::cobweb(
        &format!("Cobweb: {}", policy.name),
        &model.demand,
        &model.supply,
        steps,
        Some((scenario.steady.quantity, scenario.steady.price)),
        &scenario.market.quantity_unit,
        &scenario.market.price_unit,
    );
    Figure {
        stem: stem.into(),
        caption: format!(
            "Cobweb diagram under “{}”: demand and supply with the simulated path as the staircase between them{}.",
            policy.name,
            if shown < scenario.run.periods {
                format!(" (the first {shown} of {} seasons)", scenario.run.periods)
            } else {
                String::new()
            }
        ),
        plot,
    }
}

/// Eigenvalues of every regime of every report, in the complex plane.
pub fn eigen_figure(reports: &[(String, StabilityAnalysis)]) -> Option<Figure> {
    // One policy: a colour per regime. Several: a colour per policy, its steady-state regime
    // filled and the other regimes as rings (a legend entry per regime would crowd out the chart).
    let many = reports.len() > 1;
    let points: Vec<EigenPoint> = reports
        .iter()
        .flat_map(|(name, r)| {
            r.regimes.iter().enumerate().flat_map(move |(k, g)| {
                let group = if many { name.clone() } else { g.name.clone() };
                g.eigenvalues.iter().map(move |e| EigenPoint {
                    re: e.re,
                    im: e.im,
                    group: group.clone(),
                    primary: !many || k == 0,
                })
            })
        })
        .collect();
    if points.is_empty() {
        return None;
    }
    Some(Figure {
        stem: "eigenvalues".into(),
        caption: "Eigenvalues of the linearised model for each regime, with the unit circle."
            .into(),
        plot: plots::eigenvalues("Eigenvalues of the linearised model", points),
    })
}

/// The figures of `run --plots`: paths, the cobweb and the fiscal cost of one path.
pub fn run_figures(
    scenario: &Scenario,
    policy: &PolicySpec,
    records: &[PeriodRecord],
) -> Vec<Figure> {
    let digest = super::path::digest_records(&policy.name, records);
    let mut figs = path_figures(scenario, &[policy], &[digest]);
    figs.insert(1, cobweb_figure(scenario, policy, records, "cobweb"));
    figs
}

/// One grid point of a sweep in plain numbers: the key values, the spectral radius (NaN when the
/// point has none) and the long-run prices (empty when not simulated).
pub struct SweepPoint {
    /// Values of the varied keys, in `keys` order.
    pub values: Vec<f64>,
    /// Spectral radius, NaN when invalid.
    pub radius: f64,
    /// Long-run prices.
    pub prices: Vec<f64>,
}

fn sorted_unique(v: impl Iterator<Item = f64>) -> Vec<f64> {
    let mut u: Vec<f64> = v.filter(|x| x.is_finite()).collect();
    u.sort_by(f64::total_cmp);
    u.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * a.abs().max(1.0));
    u
}

fn index_of(grid: &[f64], x: f64) -> Option<usize> {
    grid.iter()
        .position(|g| (g - x).abs() <= 1e-12 * g.abs().max(1.0))
}

/// The figures of a sweep: with two keys the stability map; with one key the spectral radius
/// against the key and, when long runs were simulated, the bifurcation diagram.
pub fn sweep_figures(keys: &[String], points: &[SweepPoint], price_unit: &str) -> Vec<Figure> {
    let mut figs = Vec::new();
    match keys {
        [x_key, y_key] => {
            let xs = sorted_unique(points.iter().filter_map(|p| p.values.first().copied()));
            let ys = sorted_unique(points.iter().filter_map(|p| p.values.get(1).copied()));
            let mut grid = vec![vec![f64::NAN; xs.len()]; ys.len()];
            for p in points {
                if let (Some(i), Some(j)) = (
                    p.values.first().and_then(|&x| index_of(&xs, x)),
                    p.values.get(1).and_then(|&y| index_of(&ys, y)),
                ) {
                    grid[j][i] = p.radius;
                }
            }
            figs.push(Figure {
                stem: "stability_map".into(),
                caption: format!("Spectral radius over the grid of {x_key} and {y_key}; the black line is the stability boundary ρ = 1."),
                plot: plots::heatmap(x_key, y_key, xs, ys, grid),
            });
        }
        [key] => {
            let rho: Vec<(f64, f64)> = points
                .iter()
                .filter_map(|p| p.values.first().map(|&x| (x, p.radius)))
                .collect();
            let mut line = plots::paths(
                &format!("Spectral radius as {key} varies"),
                key,
                "spectral radius ρ",
                vec![Series {
                    name: "spectral radius of the linearised model".into(),
                    points: rho,
                }],
            );
            if let Plot::Lines(l) = &mut line {
                l.titles.subtitle =
                    "below the dashed line ρ = 1 a disturbance dies out; above it grows".into();
                l.references.push(plots::Reference {
                    label: "ρ = 1".into(),
                    value: 1.0,
                });
            }
            figs.push(Figure {
                stem: "spectral_radius".into(),
                caption: format!("Spectral radius against {key}."),
                plot: line,
            });
            if points.iter().any(|p| !p.prices.is_empty()) {
                let values = points
                    .iter()
                    .filter_map(|p| p.values.first().copied())
                    .collect();
                let prices = points.iter().map(|p| p.prices.clone()).collect();
                figs.push(Figure {
                    stem: "bifurcation".into(),
                    caption: format!("Long-run prices against {key} (bifurcation diagram)."),
                    plot: plots::bifurcation(key, price_unit, values, prices, None),
                });
            }
        }
        _ => {}
    }
    figs
}

//! From engine results to figures: which plots each verb draws, their file stems, captions, axis
//! labels and units (taken from the market file). Drawing itself is `furrow::plots`.

use anyhow::Context;
use furrow::engine::{Model, PeriodRecord};
use furrow::plots::{self, CobwebStep, EigenPoint, Plot, Series};
use furrow::scenario::{PolicySpec, Scenario};
use furrow::stability::StabilityReport;

use super::super::common::{say, PlotDir};

/// A figure with its file stem and the caption the report shows.
pub struct Figure {
    /// File stem (`stem.png`, `stem.svg`).
    pub stem: String,
    /// Caption for the briefing.
    pub caption: String,
    /// The plot.
    pub plot: Plot,
}

/// The unit of money: price unit × quantity unit, with "X per t × kt" read as "thousand X".
pub fn money_unit(price_unit: &str, quantity_unit: &str) -> String {
    if let Some(cur) = price_unit.strip_suffix(" per t") {
        match quantity_unit {
            "t" => return cur.to_string(),
            "kt" => return format!("thousand {cur}"),
            "Mt" => return format!("million {cur}"),
            _ => {}
        }
    }
    format!("{price_unit} × {quantity_unit}")
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

/// Price, harvest and fiscal-cost paths of one simulated path per policy, overlaid.
pub fn path_figures(scenario: &Scenario, runs: &[(String, Vec<PeriodRecord>)]) -> Vec<Figure> {
    let m = &scenario.market;
    let series = |f: fn(&PeriodRecord) -> f64| -> Vec<Series> {
        runs.iter()
            .map(|(name, recs)| {
                Series::periods(name.clone(), &recs.iter().map(f).collect::<Vec<_>>())
            })
            .collect()
    };
    let shocks = if scenario.shocks.is_deterministic() {
        "no shocks".to_string()
    } else {
        format!("one simulated weather path (seed {})", scenario.run.seed)
    };
    let mut price = plots::paths(
        &format!("{}: market price by policy", m.name),
        "period (season)",
        &format!("market price ({})", m.price_unit),
        series(|r| r.price),
    );
    if let Plot::Lines(l) = &mut price {
        l.titles.subtitle =
            format!("{shocks}; dashed: the steady-state price without intervention");
        l.references.push(plots::Reference {
            label: "steady state".into(),
            value: scenario.steady.price,
        });
    }
    let mut harvest = plots::paths(
        &format!("{}: harvest by policy", m.name),
        "period (season)",
        &format!("harvest ({})", m.quantity_unit),
        series(|r| r.harvest),
    );
    if let Plot::Lines(l) = &mut harvest {
        l.titles.subtitle = format!("{shocks}; dashed: the steady-state quantity");
        l.references.push(plots::Reference {
            label: "steady state".into(),
            value: scenario.steady.quantity,
        });
    }
    let fiscal = plots::fiscal(
        &format!("{}: fiscal cost by period", m.name),
        "period (season)",
        &format!(
            "fiscal cost ({})",
            money_unit(&m.price_unit, &m.quantity_unit)
        ),
        series(|r| r.fiscal_cost),
    );
    let cumulative: Vec<Series> = series(|r| r.fiscal_cost)
        .into_iter()
        .map(|mut s| {
            let mut acc = 0.0;
            for p in &mut s.points {
                acc += p.1;
                p.1 = acc;
            }
            s
        })
        .collect();
    let mut cum = plots::paths(
        &format!("{}: cumulative fiscal cost", m.name),
        "period (season)",
        &format!(
            "cumulative fiscal cost ({})",
            money_unit(&m.price_unit, &m.quantity_unit)
        ),
        cumulative,
    );
    if let Plot::Lines(l) = &mut cum {
        l.titles.subtitle =
            "running total, undiscounted; stock still held is not yet credited".into();
        l.include_zero = true;
    }
    vec![
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
        Figure {
            stem: "fiscal_cost".into(),
            caption:
                "Fiscal cost per season: purchases, storage, financing and payments, less sales."
                    .into(),
            plot: fiscal,
        },
        Figure {
            stem: "fiscal_cumulative".into(),
            caption: "Cumulative fiscal cost: what each policy has cost the treasury so far."
                .into(),
            plot: cum,
        },
    ]
}

/// The cobweb diagram of one path.
pub fn cobweb_figure(
    scenario: &Scenario,
    policy: &PolicySpec,
    records: &[PeriodRecord],
    stem: &str,
) -> Figure {
    let model = Model::new(scenario, policy);
    let steps = records
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
            "Cobweb diagram under “{}”: demand and supply with the simulated path as the staircase between them.",
            policy.name
        ),
        plot,
    }
}

/// Eigenvalues of every regime of every report, in the complex plane.
pub fn eigen_figure(reports: &[(String, StabilityReport)]) -> Option<Figure> {
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

/// Writes every figure into `dir` (PNG and SVG, each whole or not at all), records them in the
/// folder's manifest, and says where; figures an earlier run wrote there and this one did not are
/// removed with `--clean`, otherwise named on stderr.
pub fn write_all(dir: &PlotDir, figures: &[Figure]) -> anyhow::Result<()> {
    let mut written = Vec::new();
    for f in figures {
        match f.plot.write(&dir.path, &f.stem) {
            Ok(paths) => written.extend(
                paths
                    .iter()
                    .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().to_string())),
            ),
            Err(furrow::plots::PlotError::Empty(_)) => say(&format!(
                "plot `{}` skipped: no finite values to draw",
                f.stem
            )),
            Err(e) => {
                return Err(e).with_context(|| {
                    format!(
                        "cannot draw the plot `{}` into {}",
                        f.stem,
                        dir.path.display()
                    )
                })
            }
        }
    }
    if written.is_empty() {
        std::fs::create_dir_all(&dir.path)
            .with_context(|| format!("cannot create {}", dir.path.display()))?;
    }
    let update = plots::update_manifest(&dir.path, &written, dir.clean)
        .with_context(|| format!("cannot update the plot list in {}", dir.path.display()))?;
    say(&format!(
        "wrote {} plots (PNG and SVG) into {}",
        written.len() / 2,
        dir.path.display()
    ));
    if !update.removed.is_empty() {
        say(&format!(
            "--clean: removed {} files an earlier run wrote there: {}",
            update.removed.len(),
            update.removed.join(", ")
        ));
    }
    if !update.stale.is_empty() {
        say(&format!(
            "{} stale plot files from an earlier run are present in {} ({}); pass --clean to remove them",
            update.stale.len(),
            dir.path.display(),
            update.stale.join(", ")
        ));
    }
    Ok(())
}

/// The figures of `run --plots`: paths, the cobweb and the fiscal cost of one path.
pub fn run_figures(
    scenario: &Scenario,
    policy: &PolicySpec,
    records: &[PeriodRecord],
) -> Vec<Figure> {
    let mut figs = path_figures(scenario, &[(policy.name.clone(), records.to_vec())]);
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

//! The `--plots` glue of the verbs: which figures each verb writes (built by `furrow::briefing`)
//! and writing them into the `--plots` folder with its manifest.

use anyhow::Context;
use furrow::briefing::{self, figures, Figure};
use furrow::engine::PeriodRecord;
use furrow::policies::PolicySpec;
use furrow::scenario::Scenario;
use furrow::stability::StabilityAnalysis;

use super::common::{columns, say, PlotDir};

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
    let update = furrow::plots::update_manifest(&dir.path, &written, dir.clean)
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

/// Writes the plots of `compare` into `dir`: one path per policy, cobwebs (no shocks), the
/// eigenvalues, and the Monte Carlo fans and mean fiscal cost.
pub fn plot_compare(
    dir: &PlotDir,
    scenario: &Scenario,
    files: &[String],
    result: &furrow::compare::CompareResult,
) -> anyhow::Result<()> {
    let cols = columns(files, scenario)?;
    let stability = briefing::stability_of(scenario, &cols);
    let figs = briefing::comparison_figures(scenario, &cols, result, &stability)?;
    write_all(dir, &figs)
}

/// Writes the plots of one path into `dir`: price and harvest paths, the cobweb, the fiscal cost.
pub fn plot_run(
    dir: &PlotDir,
    scenario: &Scenario,
    policy: &PolicySpec,
    records: &[PeriodRecord],
) -> anyhow::Result<()> {
    write_all(dir, &figures::run_figures(scenario, policy, records))
}

/// Writes the eigenvalue plot of one stability report into `dir`.
pub fn plot_stability(
    dir: &PlotDir,
    policy_name: &str,
    report: &StabilityAnalysis,
) -> anyhow::Result<()> {
    let figs: Vec<Figure> = figures::eigen_figure(&[(policy_name.to_string(), report.clone())])
        .into_iter()
        .collect();
    write_all(dir, &figs)
}

/// Writes the plots of a sweep into `dir`: the stability map (two keys) or the spectral radius and
/// the bifurcation diagram (one key).
pub fn plot_sweep(
    dir: &PlotDir,
    keys: &[String],
    points: &[figures::SweepPoint],
    price_unit: &str,
) -> anyhow::Result<()> {
    let figs = figures::sweep_figures(keys, points, price_unit);
    if figs.is_empty() {
        say("sweep: nothing to plot");
        return Ok(());
    }
    write_all(dir, &figs)
}

/// The sweep's grid points as plain numbers for [`plot_sweep`].
pub fn sweep_points(points: &[furrow::sweep::Point]) -> Vec<figures::SweepPoint> {
    points
        .iter()
        .map(|p| figures::SweepPoint {
            values: p.values.clone(),
            radius: p.outcome.as_ref().map_or(f64::NAN, |(rho, _)| *rho),
            prices: p
                .long_run
                .as_ref()
                .map(|l| l.prices.clone())
                .unwrap_or_default(),
        })
        .collect()
}

/// Writes the plots of `run` with replications > 1 into `dir`: fan charts and the mean fiscal cost.
pub fn plot_mc_run(
    dir: &PlotDir,
    scenario: &Scenario,
    runs: &furrow::stochastic::PolicyRuns,
    replications: usize,
) -> anyhow::Result<()> {
    write_all(
        dir,
        &briefing::tables::run_figures(scenario, runs, replications),
    )
}

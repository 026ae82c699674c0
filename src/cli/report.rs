//! `furrow report MARKET POLICY... --out FILE.html` and the `--plots` glue of the other verbs.

mod assumptions;
mod brief;
mod figures;
mod mc;

use anyhow::Context;
use clap::Args;
use furrow::engine::PeriodRecord;
use furrow::scenario::{PolicySpec, Scenario};
use furrow::stability::StabilityReport;

use super::common::{load_policy, say, CommonArgs, PlotDir};
pub use figures::Figure;

/// Arguments of `report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The market file.
    pub market: String,
    /// One or more policy files (each compared with the market left alone).
    #[arg(required = true, num_args = 1..)]
    pub policies: Vec<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// The policies of a report or comparison as (file, spec), the market left alone first (the
/// built-in one unless a given file is a do-nothing policy).
fn columns(files: &[String], market: &Scenario) -> anyhow::Result<Vec<(String, PolicySpec)>> {
    let mut cols = Vec::new();
    for f in files {
        cols.push((f.clone(), load_policy(Some(f), market)?));
    }
    if let Some(i) = cols.iter().position(|(_, p)| p.is_none()) {
        let base = cols.remove(i);
        cols.insert(0, base);
    } else {
        cols.insert(0, (String::new(), PolicySpec::none()));
    }
    Ok(cols)
}

/// Runs `report`.
pub fn execute(args: &ReportArgs) -> anyhow::Result<()> {
    let out = match &args.common.out {
        Some(p) if p.as_os_str() != "-" => p.clone(),
        _ => anyhow::bail!("report needs --out FILE.html (the briefing is one HTML file)"),
    };
    let scenario = args.common.load_market(&args.market)?;
    let cols = columns(&args.policies, &scenario)?;
    let mut runs = Vec::new();
    for (_, p) in &cols {
        let recs = super::run::one_path(&scenario, p)
            .with_context(|| format!("the path under “{}” failed", p.name))?;
        runs.push((p.name.clone(), recs));
    }
    let stability = stability_of(&scenario, &cols);
    let result = run_compare(&scenario, &cols)?;
    let mut figs = report_figures(&scenario, &cols, &runs, &stability);
    if scenario.run.replications > 1 {
        figs.extend(mc::figures(&result));
    }
    let headlines = mc::headlines(&result);
    let welfare = mc::with_ranges(&result, mc::table(&result, &mc::is_welfare));
    let basis = if scenario.run.replications > 1 {
        format!(
            "Monte Carlo, {} replications of {} seasons, seed {}",
            result.replications, result.periods, result.seed
        )
    } else if scenario.shocks.is_deterministic() {
        "one deterministic path".to_string()
    } else {
        format!("one simulated weather path, seed {}", scenario.run.seed)
    };
    let risk = mc::table(&result, &mc::is_risk);
    let mut provenance = vec![
        (
            "furrow version".to_string(),
            env!("CARGO_PKG_VERSION").to_string(),
        ),
        (
            "command".into(),
            std::env::args().collect::<Vec<_>>().join(" "),
        ),
        ("seed".into(), scenario.run.seed.to_string()),
        ("replications".into(), scenario.run.replications.to_string()),
        ("periods".into(), scenario.run.periods.to_string()),
        ("results basis".into(), basis.clone()),
    ];
    let mut inputs = vec![args.market.clone()];
    inputs.extend(args.policies.iter().cloned());
    for f in &inputs {
        provenance.push((format!("SHA-256 of {f}"), assumptions::sha256_file(f)?));
    }
    if let Some(dir) = args.common.plot_dir() {
        figures::write_all(&dir, &figs)?;
    }
    let page = brief::build(brief::Inputs {
        scenario: &scenario,
        market_path: &args.market,
        policies: &cols,
        assumptions: assumptions::assumption_table(&scenario, &args.market, &cols, &args.common)?,
        headlines,
        basis,
        welfare,
        risk,
        stability,
        figures: figs,
        provenance,
        subtitle: format!(
            "{} policy file{} against the market left alone — furrow {}",
            args.policies.len(),
            if args.policies.len() == 1 { "" } else { "s" },
            env!("CARGO_PKG_VERSION")
        ),
    });
    furrow::output::write_whole(&out, page.to_html().as_bytes())
        .with_context(|| format!("cannot write {}", out.display()))?;
    say(&format!("wrote the briefing to {}", out.display()));
    Ok(())
}

/// Stability of each column; a failed analysis keeps its message.
fn stability_of(
    scenario: &Scenario,
    cols: &[(String, PolicySpec)],
) -> Vec<(String, Result<StabilityReport, String>)> {
    cols.iter()
        .map(|(_, p)| {
            (
                p.name.clone(),
                furrow::stability::analyse(scenario, p).map_err(|e| e.to_string()),
            )
        })
        .collect()
}

/// The Monte Carlo comparison of the columns after the first (the market left alone).
fn run_compare(
    scenario: &Scenario,
    cols: &[(String, PolicySpec)],
) -> anyhow::Result<furrow::compare::CompareResult> {
    let mut specs: Vec<PolicySpec> = cols.iter().skip(1).map(|(_, p)| p.clone()).collect();
    if specs.is_empty() {
        specs.push(cols[0].1.clone());
    }
    // compare keeps two per-period series (price and stock) for its fan charts
    super::common::check_memory("report", scenario, specs.len() + 1, 2)?;
    let bar = super::compare::progress_for(scenario, specs.len() + 1);
    let result = furrow::compare::compare(scenario, &specs, bar.observer());
    bar.finish();
    Ok(result?)
}

/// Paths, a cobweb per column and the eigenvalues (when the analysis worked).
fn report_figures(
    scenario: &Scenario,
    cols: &[(String, PolicySpec)],
    runs: &[(String, Vec<PeriodRecord>)],
    stability: &[(String, Result<StabilityReport, String>)],
) -> Vec<Figure> {
    let mut figs = figures::path_figures(scenario, runs);
    for (i, ((_, p), (_, recs))) in cols.iter().zip(runs).enumerate() {
        figs.push(figures::cobweb_figure(
            scenario,
            p,
            recs,
            &format!("cobweb_{}_{}", i, figures::slug(&p.name)),
        ));
    }
    let ok: Vec<(String, StabilityReport)> = stability
        .iter()
        .filter_map(|(n, r)| r.as_ref().ok().map(|r| (n.clone(), r.clone())))
        .collect();
    figs.extend(figures::eigen_figure(&ok));
    figs
}

/// Writes the plots of `compare` into `dir`: one path per policy (price, harvest, cobwebs, fiscal
/// cost), the Monte Carlo fans and mean fiscal cost, and the eigenvalues.
pub fn plot_compare(
    dir: &PlotDir,
    scenario: &Scenario,
    files: &[String],
    result: &furrow::compare::CompareResult,
) -> anyhow::Result<()> {
    let cols = columns(files, scenario)?;
    let mut runs = Vec::new();
    for (_, p) in &cols {
        let recs = super::run::one_path(scenario, p)
            .with_context(|| format!("the path under “{}” failed", p.name))?;
        runs.push((p.name.clone(), recs));
    }
    let stability = stability_of(scenario, &cols);
    let mut figs = report_figures(scenario, &cols, &runs, &stability);
    if result.replications > 1 {
        figs.extend(mc::figures(result));
    }
    figures::write_all(dir, &figs)
}

/// Writes the plots of one path into `dir`: price and harvest paths, the cobweb, the fiscal cost.
pub fn plot_run(
    dir: &PlotDir,
    scenario: &Scenario,
    policy: &PolicySpec,
    records: &[PeriodRecord],
) -> anyhow::Result<()> {
    figures::write_all(dir, &figures::run_figures(scenario, policy, records))
}

/// Writes the eigenvalue plot of one stability report into `dir`.
pub fn plot_stability(
    dir: &PlotDir,
    policy_name: &str,
    report: &StabilityReport,
) -> anyhow::Result<()> {
    let figs: Vec<Figure> = figures::eigen_figure(&[(policy_name.to_string(), report.clone())])
        .into_iter()
        .collect();
    figures::write_all(dir, &figs)
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
    figures::write_all(dir, &figs)
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
    figures::write_all(dir, &mc::run_figures(scenario, runs, replications))
}

//! `furrow sweep MARKET [--policy P] --vary KEY=FROM:TO:STEPS [--vary ...] [--long-run N]`.

use clap::Args;
use furrow::sweep::{self, Base, LongRunSpec, Point};

use super::common::{read_table, replications_of, say, with_run_flags, CommonArgs, GridBar};

/// Arguments of `sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// The market file.
    pub market: String,
    /// A policy file (default: no intervention; policy keys then start from an empty policy).
    #[arg(long)]
    pub policy: Option<String>,
    /// A dotted file key and its grid, KEY=FROM:TO:STEPS (both ends included); once or twice.
    #[arg(long, value_name = "KEY=FROM:TO:STEPS", required = true)]
    pub vary: Vec<String>,
    /// With one key: also simulate each grid value and print its last N prices and the largest
    /// Lyapunov exponent (runs 1000 + N periods, or --periods).
    #[arg(long, value_name = "N")]
    pub long_run: Option<usize>,
    /// Instead of stability: at each grid point the Monte Carlo of the policy against the market
    /// left alone (as `compare` runs it, the same shocks at every point); LIST is indicator names
    /// separated by commas (each with its `_se`), or `all`.
    #[arg(long, value_name = "LIST", conflicts_with = "long_run")]
    pub indicators: Option<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `sweep`.
pub fn execute(args: &SweepArgs) -> anyhow::Result<()> {
    let axes = args
        .vary
        .iter()
        .map(|v| sweep::parse_vary(v))
        .collect::<Result<Vec<_>, _>>()?;
    if let Some(p) = args.common.periods {
        if !(1..=1_000_000).contains(&p) {
            anyhow::bail!("--periods {p}: must be a whole number from 1 to 1000000");
        }
    }
    let long_run = match args.long_run {
        None => None,
        Some(n) => {
            if !(1..=100_000).contains(&n) {
                anyhow::bail!("--long-run {n}: must be a whole number from 1 to 100000");
            }
            let periods = args.common.periods.unwrap_or(1000 + n);
            if periods < n {
                anyhow::bail!("--periods {periods} is shorter than --long-run {n}: simulate at least N periods");
            }
            Some(LongRunSpec { keep: n, periods })
        }
    };
    let market = read_table(&args.market)?;
    let policy = match &args.policy {
        Some(p) => Some((p.as_str(), read_table(p)?)),
        None => None,
    };
    if let Some(list) = &args.indicators {
        return execute_outcomes(args, &axes, list, market, policy);
    }
    let base = Base::new(&args.market, market, policy);
    let points = sweep::sweep(&base, &axes, long_run)?;
    let invalid: Vec<&Point> = points.iter().filter(|p| p.outcome.is_err()).collect();
    for p in invalid.iter().take(5) {
        if let Err(msg) = &p.outcome {
            say(&format!("invalid grid point: {msg}"));
        }
    }
    if invalid.len() > 5 {
        say(&format!("… {} invalid grid points in all", invalid.len()));
    }
    let diverged = points
        .iter()
        .filter(|p| {
            p.long_run
                .as_ref()
                .is_some_and(|l| l.orbit == sweep::Orbit::Diverged)
        })
        .count();
    if diverged > 0 {
        say(&format!(
            "{diverged} long runs diverged (marked `diverged`)"
        ));
    }
    let keys: Vec<String> = axes.iter().map(|a| a.key.clone()).collect();
    if let Some(dir) = args.common.plot_dir() {
        let price_unit = base
            .market
            .get("market")
            .and_then(|m| m.get("price_unit"))
            .and_then(|u| u.as_str())
            .unwrap_or("price units")
            .to_string();
        super::figures::plot_sweep(
            &dir,
            &keys,
            &super::figures::sweep_points(&points),
            &price_unit,
        )?;
    }
    args.common
        .emit(&sweep::render(&points, &keys, long_run, args.common.format))
}

/// `sweep --indicators`: the Monte Carlo outcomes at each grid point.
fn execute_outcomes(
    args: &SweepArgs,
    axes: &[sweep::Axis],
    list: &str,
    market: toml::Table,
    policy: Option<(&str, toml::Table)>,
) -> anyhow::Result<()> {
    use furrow::sweep::outcomes;
    let selection = outcomes::Selection::parse(list)?;
    let market = with_run_flags(market, &args.common)?;
    let base = Base::new(&args.market, market, policy);
    outcomes::check_axes(axes, outcomes::MAX_MC_POINTS)?;
    let (scenario, reps) = replications_of(&base)?;
    // indicators only (compare without the fans)
    let series = furrow::compare::Fans::Skip.series().len();
    let columns = furrow::sweep::outcomes::columns_at_once(&scenario);
    super::common::check_memory("sweep", &scenario, columns, series)?;
    let total: usize = axes.iter().map(|a| a.values.len()).product();
    let bar = GridBar::new((reps * total) as u64);
    let points = outcomes::outcomes(&base, axes, &bar, &|first| {
        selection.columns(first).map(|_| ())
    });
    bar.finish();
    let points = points?;
    let Some(first) = outcomes::first_valid(&points) else {
        let msg = points
            .iter()
            .find_map(|p| p.indicators.as_ref().err().cloned())
            .unwrap_or_default();
        anyhow::bail!("no grid point could be run: {msg}");
    };
    let columns = selection.columns(first)?;
    let invalid: Vec<&outcomes::Outcome> =
        points.iter().filter(|p| p.indicators.is_err()).collect();
    for p in invalid.iter().take(5) {
        if let Err(msg) = &p.indicators {
            say(&format!("invalid grid point: {msg}"));
        }
    }
    if invalid.len() > 5 {
        say(&format!("… {} invalid grid points in all", invalid.len()));
    }
    let keys: Vec<String> = axes.iter().map(|a| a.key.clone()).collect();
    if let Some(dir) = args.common.plot_dir() {
        plot_outcomes(&dir, &keys, &columns, &points)?;
    }
    let text = outcomes::render(&points, &keys, &columns, args.common.format);
    args.common.emit_with_caution(&text)
}

/// One line chart per indicator (standard errors left out) against the first key; with two keys one
/// line per value of the second.
fn plot_outcomes(
    dir: &super::common::PlotDir,
    keys: &[String],
    columns: &[String],
    points: &[furrow::sweep::outcomes::Outcome],
) -> anyhow::Result<()> {
    use furrow::briefing::{figures::slug, Figure};
    use furrow::plots::{paths, Series};
    let mut seconds: Vec<Option<f64>> = Vec::new();
    for p in points {
        let y = p.values.get(1).copied();
        if !seconds.contains(&y) {
            seconds.push(y);
        }
    }
    let mut figs = Vec::new();
    for c in columns.iter().filter(|c| !c.ends_with("_se")) {
        let series: Vec<Series> = seconds
            .iter()
            .map(|y| Series {
                name: match y {
                    Some(y) => format!("{} = {}", keys[1], furrow::plots::style::tick(*y)),
                    None => c.clone(),
                },
                points: points
                    .iter()
                    .filter(|p| p.values.get(1).copied() == *y)
                    .filter_map(|p| p.number(c).map(|v| (p.values[0], v)))
                    .collect(),
            })
            .collect();
        if series.iter().all(|s| s.points.is_empty()) {
            continue;
        }
        figs.push(Figure {
            stem: format!("sweep_{}", slug(c)),
            caption: format!(
                "{c} against {} (Monte Carlo, the same shocks at every point).",
                keys[0]
            ),
            plot: {
                let mut plot = paths(&format!("{c} as {} varies", keys[0]), &keys[0], c, series);
                if let furrow::plots::Plot::Lines(l) = &mut plot {
                    l.titles.subtitle =
                        "Monte Carlo against the market left alone; the same shocks at every point"
                            .into();
                }
                plot
            },
        });
    }
    if figs.is_empty() {
        say("sweep: nothing to plot (no numeric indicator)");
        return Ok(());
    }
    super::figures::write_all(dir, &figs)
}

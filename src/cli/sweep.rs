//! `furrow sweep MARKET [--policy P] --vary KEY=FROM:TO:STEPS [--vary ...] [--long-run N]`.

use clap::Args;
use furrow::scenario::parse_toml;
use furrow::sweep::{self, Base, LongRunSpec, Point};

use super::common::{say, CommonArgs};

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
    #[command(flatten)]
    pub common: CommonArgs,
}

fn read_table(path: &str) -> anyhow::Result<toml::Table> {
    let text =
        std::fs::read_to_string(path).map_err(|e| anyhow::anyhow!("{path}: cannot read: {e}"))?;
    Ok(parse_toml(path, &text)?)
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

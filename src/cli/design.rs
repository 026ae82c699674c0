//! `furrow design MARKET --policy P --vary KEY=FROM:TO[:STEPS] [--vary …] --require "IND<=V" …
//! [--minimise IND | --maximise IND] [--frontier RISK,COST]`.

use clap::Args;
use furrow::design::{self, Objective, Requirement, Spec};
use furrow::sweep::Base;

use super::common::{read_table, replications_of, say, with_run_flags, CommonArgs, GridBar};

/// Arguments of `design`.
#[derive(Debug, Args)]
pub struct DesignArgs {
    /// The market file.
    pub market: String,
    /// The policy file whose key is searched (default: no intervention; policy keys then start
    /// from an empty policy). Given several times without --vary: each file is a design.
    #[arg(long)]
    pub policy: Vec<String>,
    /// A dotted file key and its grid, KEY=FROM:TO (11 values) or KEY=FROM:TO:STEPS; once or twice.
    #[arg(long, value_name = "KEY=FROM:TO[:STEPS]")]
    pub vary: Vec<String>,
    /// A requirement every design must meet, "INDICATOR<=VALUE" (or >=, <, >); repeatable.
    #[arg(long, value_name = "INDICATOR<=VALUE")]
    pub require: Vec<String>,
    /// Among the designs that meet every requirement, the one with the smallest value of this
    /// indicator (or of a varied key).
    #[arg(long, value_name = "NAME", conflicts_with = "maximise")]
    pub minimise: Option<String>,
    /// … or the largest.
    #[arg(long, value_name = "NAME")]
    pub maximise: Option<String>,
    /// The designs no other beats on both indicators (both smaller is better), RISK,COST.
    #[arg(long, value_name = "RISK,COST")]
    pub frontier: Option<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `design`.
pub fn execute(args: &DesignArgs) -> anyhow::Result<()> {
    let axes = args
        .vary
        .iter()
        .map(|v| design::parse_vary(v))
        .collect::<Result<Vec<_>, _>>()?;
    let requirements = args
        .require
        .iter()
        .map(|r| Requirement::parse(r))
        .collect::<Result<Vec<_>, _>>()?;
    let objective = match (&args.minimise, &args.maximise) {
        (Some(n), _) => Some(Objective::Minimise(n.trim().to_string())),
        (_, Some(n)) => Some(Objective::Maximise(n.trim().to_string())),
        _ => None,
    };
    let frontier = match &args.frontier {
        None => None,
        Some(f) => match f.split_once(',') {
            Some((r, c)) if !r.trim().is_empty() && !c.trim().is_empty() && !c.contains(',') => {
                Some((r.trim().to_string(), c.trim().to_string()))
            }
            _ => anyhow::bail!(
                "--frontier {f}: expected two indicator names RISK,COST, e.g. stockout_any_share,fiscal_cost_pv"
            ),
        },
    };
    let spec = Spec {
        requirements,
        objective,
        frontier,
    };
    let found = if args.policy.len() > 1 {
        if !axes.is_empty() {
            anyhow::bail!("--vary with several --policy files: vary a key of one policy, or compare whole files without --vary");
        }
        let scenario = args.common.load_market(&args.market)?;
        let policies = args
            .policy
            .iter()
            .map(|p| super::common::load_policy(Some(p), &scenario))
            .collect::<anyhow::Result<Vec<_>>>()?;
        // the search reads indicators only (compare without the fans)
        let series = furrow::compare::Fans::Skip.series().len();
        super::common::check_memory("design", &scenario, policies.len() + 1, series)?;
        let bar = GridBar::new(scenario.run.replications as u64);
        let found = design::search_policies(&scenario, &policies, &spec, &bar);
        bar.finish();
        found?
    } else {
        if axes.is_empty() {
            anyhow::bail!(
                "design needs --vary KEY=FROM:TO (once or twice), or several --policy files"
            );
        }
        let market = with_run_flags(read_table(&args.market)?, &args.common)?;
        let policy = match args.policy.first() {
            Some(p) => Some((p.as_str(), read_table(p)?)),
            None => None,
        };
        let base = Base::new(&args.market, market, policy);
        let (scenario, reps) = replications_of(&base)?;
        let series = furrow::compare::Fans::Skip.series().len();
        let columns = furrow::sweep::outcomes::columns_at_once(&scenario);
        super::common::check_memory("design", &scenario, columns, series)?;
        let total: usize = axes.iter().map(|a| a.values.len()).product();
        let bar = GridBar::new((reps * total) as u64);
        let found = design::search(&base, &axes, &spec, &bar);
        bar.finish();
        found?
    };
    for p in found.grid.iter().filter(|p| p.indicators.is_err()).take(5) {
        if let Err(msg) = &p.indicators {
            say(&format!("invalid grid point: {msg}"));
        }
    }
    if args.common.format == furrow::output::Format::Csv {
        // the table and JSON carry the notes themselves; CSV stays pure data
        for n in &found.notes {
            say(n);
        }
    }
    if let (Some(dir), Some((risk, cost))) = (args.common.plot_dir(), &spec.frontier) {
        plot_frontier(&dir, &found, risk, cost)?;
    }
    args.common
        .emit_with_caution(&design::render(&found, args.common.format))
}

/// The frontier figure: every grid design, the frontier's labelled with their settings.
fn plot_frontier(
    dir: &super::common::PlotDir,
    found: &design::Design,
    risk: &str,
    cost: &str,
) -> anyhow::Result<()> {
    use furrow::plots::{frontier, FrontierPoint};
    let points = found
        .grid
        .iter()
        .enumerate()
        .filter(|(_, o)| o.indicators.is_ok())
        .map(|(i, o)| FrontierPoint {
            risk: o.number(risk).unwrap_or(f64::NAN),
            cost: o.number(cost).unwrap_or(f64::NAN),
            chosen: found.frontier.contains(&i),
            label: if found.labels.is_empty() {
                found
                    .keys
                    .iter()
                    .zip(&o.values)
                    .map(|(k, v)| {
                        let short = k.split('.').next_back().unwrap_or(k);
                        format!("{short} {}", furrow::plots::style::tick(*v))
                    })
                    .collect::<Vec<_>>()
                    .join(", ")
            } else {
                design::render::shown(found, o, &|v| v.to_string()).join(", ")
            },
        })
        .collect();
    super::figures::write_all(
        dir,
        &[furrow::briefing::Figure {
            stem: "frontier".into(),
            caption: format!("The designs by {risk} and {cost}; the frontier joined."),
            plot: frontier(risk, cost, points),
        }],
    )
}

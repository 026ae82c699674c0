//! `furrow run MARKET [--policy POLICY]`: one path, or a Monte Carlo summary.

use anyhow::Context;
use clap::Args;
use furrow::output::{write_streamed, Format};
use furrow::path::{self, diagnose, diagnose_tally, summarise, Divergence, PathStream, RunError};

use super::common::{check_memory, lift, load_policy, progress_for, say, CommonArgs};
use super::figures;

/// Arguments of `run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// The market file.
    pub market: String,
    /// A policy file (default: no intervention).
    #[arg(long)]
    pub policy: Option<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `run`.
pub fn execute(args: &RunArgs) -> anyhow::Result<()> {
    let scenario = args.common.load_market(&args.market)?;
    let policy = load_policy(args.policy.as_deref(), &scenario)?;
    let common = &args.common;
    if scenario.run.replications > 1 {
        let kept = if scenario.trade.is_some() {
            path::SUMMARY_VARIABLES_TRADE.len()
        } else {
            path::SUMMARY_VARIABLES.len()
        };
        check_memory("run", &scenario, 1, kept)?;
        let bar = progress_for(&scenario, 1);
        let mc = path::run_summary(&scenario, &policy, bar.observer());
        bar.finish();
        let mc = mc.map_err(lift)?;
        for line in summarise(&scenario, &policy, &mc.policies[0]) {
            say(&format!("warning: {line}"));
        }
        say(&format!(
            "{} replications × {} periods (seed {}): mean and 5/50/95 % quantiles across replications (type 7)",
            mc.replications, mc.periods, scenario.run.seed
        ));
        if let Some(dir) = common.plot_dir() {
            figures::plot_mc_run(&dir, &scenario, &mc.policies[0], mc.replications)?;
        }
        return common.emit_with_caution(&path::render_summary(&mc, common.format));
    }
    // the boxed table needs every row to size its columns and plots need the whole path;
    // everything else is streamed period by period
    if common.plots.is_some() || common.format == Format::Table {
        let records = path::one_path(&scenario, &policy).map_err(lift)?;
        for line in diagnose(&scenario, &policy, &records) {
            say(&line);
        }
        if let Some(dir) = common.plot_dir() {
            figures::plot_run(&dir, &scenario, &policy, &records)?;
        }
        return common.emit_with_caution(&path::render_path(&records, common.format));
    }
    let out = common
        .out
        .clone()
        .unwrap_or_else(|| std::path::PathBuf::from("-"));
    // a diverging path must print nothing to the terminal: the library walks it once first; a file
    // is written whole or not at all (a divergence removes the temporary file)
    let divergence = if out.as_os_str() == "-" {
        Divergence::CheckFirst
    } else {
        Divergence::AsItComes
    };
    let mut failure: Option<anyhow::Error> = None;
    let mut tally = None;
    let written = write_streamed(&out, |w| {
        // the header goes out with the first row (after the library's first walk), or at the end
        let mut table = PathStream::new(common.format).trading(scenario.trade.is_some());
        let mut started = false;
        let walked = path::stream_path(&scenario, &policy, divergence, |r| {
            if !started {
                started = true;
                w.write_all(table.header().as_bytes())?;
            }
            w.write_all(table.row(r).as_bytes())
        });
        match walked {
            Ok(t) => tally = Some(t),
            Err(RunError::Write(e)) => return Err(e),
            Err(e) => {
                failure = Some(lift(e));
                return Err(std::io::Error::other("the run failed"));
            }
        }
        if !started {
            w.write_all(table.header().as_bytes())?;
        }
        w.write_all(table.footer().as_bytes())
    });
    if let Some(e) = failure {
        return Err(e);
    }
    written.with_context(|| format!("cannot write {}", out.display()))?;
    for line in diagnose_tally(&scenario, &policy, &tally.unwrap_or_default()) {
        say(&line);
    }
    Ok(())
}

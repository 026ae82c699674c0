//! `furrow stability MARKET [--policy POLICY]`: eigenvalues and verdict for each regime.

use clap::Args;
use furrow::stability;

use super::common::{load_policy, say, CommonArgs};

/// Arguments of `stability`.
#[derive(Debug, Args)]
pub struct StabilityArgs {
    /// The market file.
    pub market: String,
    /// A policy file (default: no intervention).
    #[arg(long)]
    pub policy: Option<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `stability`.
pub fn execute(args: &StabilityArgs) -> anyhow::Result<()> {
    let scenario = args.common.load_market(&args.market)?;
    let policy = load_policy(args.policy.as_deref(), &scenario)?;
    let report = stability::analyse(&scenario, &policy)
        .map_err(|e| anyhow::anyhow!("{}: {e}", e.blame(&scenario, &policy)))?;
    if let Some(dir) = args.common.plot_dir() {
        super::figures::plot_stability(&dir, &policy.name, &report)?;
    }
    if !report.steady_state_exists {
        say("no steady state with finite stock exists under this policy (see notes)");
    }
    args.common
        .emit(&stability::render(&report, args.common.format))
}

//! `run` with replications > 1: per-period Monte Carlo summary (built with the stochastic module).

use furrow::scenario::{PolicySpec, Scenario};

use super::run::RunArgs;

/// Runs the Monte Carlo summary of `run`.
pub fn execute(_args: &RunArgs, _scenario: &Scenario, _policy: &PolicySpec) -> anyhow::Result<()> {
    anyhow::bail!("run with replications > 1 is not built yet")
}

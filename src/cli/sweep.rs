//! `furrow sweep` (being built).

use clap::Args;

/// Arguments of `sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Input files.
    pub files: Vec<String>,
}

/// Runs `sweep`.
pub fn execute(_args: &SweepArgs) -> anyhow::Result<()> {
    anyhow::bail!("the sweep verb is not built yet")
}

//! `furrow stability` (being built).

use clap::Args;

/// Arguments of `stability`.
#[derive(Debug, Args)]
pub struct StabilityArgs {
    /// Input files.
    pub files: Vec<String>,
}

/// Runs `stability`.
pub fn execute(_args: &StabilityArgs) -> anyhow::Result<()> {
    anyhow::bail!("the stability verb is not built yet")
}

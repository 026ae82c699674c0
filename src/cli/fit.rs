//! `furrow fit` (being built).

use clap::Args;

/// Arguments of `fit`.
#[derive(Debug, Args)]
pub struct FitArgs {
    /// Input files.
    pub files: Vec<String>,
}

/// Runs `fit`.
pub fn execute(_args: &FitArgs) -> anyhow::Result<()> {
    anyhow::bail!("the fit verb is not built yet")
}

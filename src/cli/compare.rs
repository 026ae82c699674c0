//! `furrow compare` (being built).

use clap::Args;

/// Arguments of `compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// Input files.
    pub files: Vec<String>,
}

/// Runs `compare`.
pub fn execute(_args: &CompareArgs) -> anyhow::Result<()> {
    anyhow::bail!("the compare verb is not built yet")
}

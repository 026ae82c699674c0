//! `furrow storage` (being built).

use clap::Args;

/// Arguments of `storage`.
#[derive(Debug, Args)]
pub struct StorageArgs {
    /// Input files.
    pub files: Vec<String>,
}

/// Runs `storage`.
pub fn execute(_args: &StorageArgs) -> anyhow::Result<()> {
    anyhow::bail!("the storage verb is not built yet")
}

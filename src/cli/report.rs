//! `furrow report` and the `--plots` glue (being built).

use std::path::Path;

use clap::Args;
use furrow::engine::PeriodRecord;
use furrow::scenario::{PolicySpec, Scenario};

/// Arguments of `report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// Input files.
    pub files: Vec<String>,
}

/// Runs `report`.
pub fn execute(_args: &ReportArgs) -> anyhow::Result<()> {
    anyhow::bail!("the report verb is not built yet")
}

/// Writes the plots of one path into `dir`.
pub fn plot_run(
    _dir: &Path,
    _scenario: &Scenario,
    _policy: &PolicySpec,
    _records: &[PeriodRecord],
) -> anyhow::Result<()> {
    anyhow::bail!("plots are not built yet")
}

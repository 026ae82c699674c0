//! Options every verb shares, loading with overrides, output and exit codes.

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use furrow::output::{write_whole, Format};
use furrow::scenario::{self, PolicySpec, Scenario};

/// Options common to the verbs that read a market.
#[derive(Debug, Clone, Args)]
pub struct CommonArgs {
    /// Output format: table, markdown, csv or json.
    #[arg(long, default_value = "table", value_parser = parse_format)]
    pub format: Format,
    /// Write the output here instead of stdout (`-` is stdout); written whole or not at all.
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Write plots (PNG and SVG) into this folder.
    #[arg(long, value_name = "DIR")]
    pub plots: Option<PathBuf>,
    /// Seed of the random number generator (overrides the file).
    #[arg(long)]
    pub seed: Option<u64>,
    /// Monte Carlo replications (overrides the file).
    #[arg(long)]
    pub replications: Option<usize>,
    /// Number of periods (overrides the file).
    #[arg(long)]
    pub periods: Option<usize>,
}

fn parse_format(s: &str) -> Result<Format, String> {
    s.parse()
}

/// Exit code of a failed verb: 1 when a run failed (a diverging path), 2 for bad input or usage.
pub fn exit_code(err: &anyhow::Error) -> u8 {
    if err.chain().any(|e| {
        e.downcast_ref::<furrow::engine::Diverged>().is_some()
            || e.downcast_ref::<RunFailed>().is_some()
            || furrow::storage::run_failure(e)
    }) {
        1
    } else {
        2
    }
}

/// A run that failed for a reason other than bad input (exit code 1).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct RunFailed(pub String);

impl CommonArgs {
    /// Loads and validates a market file, applying the command-line overrides.
    pub fn load_market(&self, path: &str) -> anyhow::Result<Scenario> {
        let mut s = scenario::load_market(path)?;
        self.apply(&mut s)?;
        Ok(s)
    }

    /// Applies `--seed`, `--replications`, `--periods` to a scenario.
    pub fn apply(&self, s: &mut Scenario) -> anyhow::Result<()> {
        if let Some(seed) = self.seed {
            s.run.seed = seed;
        }
        if let Some(r) = self.replications {
            if !(1..=10_000_000).contains(&r) {
                anyhow::bail!("--replications {r}: must be a whole number from 1 to 10000000");
            }
            s.run.replications = r;
        }
        if let Some(p) = self.periods {
            if !(1..=1_000_000).contains(&p) {
                anyhow::bail!("--periods {p}: must be a whole number from 1 to 1000000");
            }
            s.run.periods = p;
        }
        Ok(())
    }

    /// Writes a human-readable table with furrow's caution below it (CSV and JSON stay pure data).
    pub fn emit_with_caution(&self, text: &str) -> anyhow::Result<()> {
        match self.format {
            Format::Table | Format::Markdown => {
                self.emit(&format!("{text}\nCaution: {}\n", furrow::CAUTION))
            }
            Format::Csv | Format::Json => self.emit(text),
        }
    }

    /// Writes the verb's output to `--out` or stdout.
    pub fn emit(&self, text: &str) -> anyhow::Result<()> {
        let path = self.out.clone().unwrap_or_else(|| PathBuf::from("-"));
        write_whole(&path, text.as_bytes())
            .with_context(|| format!("cannot write {}", path.display()))
    }
}

/// Loads a policy file, or the market left alone when `path` is `None`.
pub fn load_policy(path: Option<&str>) -> anyhow::Result<PolicySpec> {
    Ok(match path {
        Some(p) => scenario::load_policy(p)?,
        None => PolicySpec::none(),
    })
}

/// Prints a note to stderr (talk, never data).
pub fn say(msg: &str) {
    eprintln!("furrow: {msg}");
}

//! Options every verb shares, loading with overrides, output, the progress bar and exit codes.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use anyhow::Context;
use clap::Args;
use furrow::output::{write_whole, Format};
use furrow::path::RunError;
use furrow::policies::PolicySpec;
use furrow::scenario::{self, Scenario};
use furrow::stochastic::{NoProgress, Progress};
use furrow::storage::{self, ProgressEvent, SolveProgress, Stage};
use indicatif::{ProgressBar, ProgressStyle};

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
    /// With --plots: remove figure files an earlier run wrote into DIR that this run does not write.
    #[arg(long, requires = "plots")]
    pub clean: bool,
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

/// Exit code of a failed verb: 1 when a run failed (a diverging path), 2 for bad input or usage
/// (`furrow::error::exit_code` on the error chain).
pub fn exit_code(err: &anyhow::Error) -> u8 {
    furrow::error::exit_code(err.as_ref())
}

impl CommonArgs {
    /// Loads and validates a market file, applying the command-line overrides.
    pub fn load_market(&self, path: &str) -> anyhow::Result<Scenario> {
        let text = furrow::input::read_file(path)?;
        self.market_from_text(path, &text)
    }

    /// Validates market-file text with `--seed`, `--replications`, `--periods` written into the
    /// parsed file first: the values are checked once, by the same validation as the file's own.
    pub fn market_from_text(&self, path: &str, text: &str) -> anyhow::Result<Scenario> {
        let flags = self.run_flags();
        let mut overrides = Vec::new();
        for (flag, key, value) in flags {
            let Some(v) = value else { continue };
            let Ok(v) = i64::try_from(v) else {
                let range = scenario::ranges::range_of(key).map(|r| r.describe());
                anyhow::bail!("{flag} {v}: must be {}", range.unwrap_or_default());
            };
            overrides.push((key, toml::Value::Integer(v)));
        }
        scenario::market_from_str_with(path, text, &overrides).map_err(|e| {
            // name the option, not the file, when the refused value came from the command line
            match (
                &e,
                flags
                    .iter()
                    .find(|(_, k, v)| v.is_some() && e.key() == Some(*k)),
            ) {
                (
                    scenario::InputError::BadValue {
                        value, expected, ..
                    },
                    Some((flag, _, _)),
                ) => {
                    anyhow::anyhow!("{flag} {value}: {expected}")
                }
                _ => e.into(),
            }
        })
    }

    /// The run settings the command line sets: (option, market-file key, value if given).
    fn run_flags(&self) -> [(&'static str, &'static str, Option<u128>); 3] {
        [
            ("--seed", "run.seed", self.seed.map(|v| v as u128)),
            (
                "--replications",
                "run.replications",
                self.replications.map(|v| v as u128),
            ),
            ("--periods", "run.periods", self.periods.map(|v| v as u128)),
        ]
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

    /// The `--plots` folder, if given.
    pub fn plot_dir(&self) -> Option<PlotDir> {
        self.plots.as_ref().map(|p| PlotDir {
            path: p.clone(),
            clean: self.clean,
        })
    }

    /// Writes the verb's output to `--out` or stdout.
    pub fn emit(&self, text: &str) -> anyhow::Result<()> {
        let path = self.out.clone().unwrap_or_else(|| PathBuf::from("-"));
        write_whole(&path, text.as_bytes())
            .with_context(|| format!("cannot write {}", path.display()))
    }
}

/// Refuses, before it starts, a Monte Carlo run of `scenario` over `columns` columns (the baseline
/// and each policy) keeping `series` per-period series that would need more memory than the machine
/// has available (the estimate is `furrow::stochastic::memory`).
pub fn check_memory(
    verb: &str,
    scenario: &Scenario,
    columns: usize,
    series: usize,
) -> anyhow::Result<()> {
    if scenario.run.replications <= 1 {
        return Ok(());
    }
    furrow::stochastic::memory::check(
        scenario.run.replications,
        scenario.run.periods,
        columns,
        series,
    )
    .map(|_| ())
    .map_err(|e| anyhow::anyhow!("{verb}: {e}"))
}

/// The `--plots` folder and whether to `--clean` it.
#[derive(Debug, Clone)]
pub struct PlotDir {
    /// The folder.
    pub path: PathBuf,
    /// Remove figure files an earlier run wrote there and this one does not.
    pub clean: bool,
}

/// Loads a policy file, or the market left alone when `path` is `None`, and checks it against the
/// market it will run on (`furrow::policies::file::policy_for_market`: the same check for every verb).
pub fn load_policy(path: Option<&str>, market: &Scenario) -> anyhow::Result<PolicySpec> {
    let policy = match path {
        Some(p) => furrow::policies::file::load_policy(p)?,
        None => PolicySpec::none(),
    };
    furrow::policies::file::policy_for_market(market, &policy)?;
    Ok(policy)
}

/// The policies of a report or comparison as (file, spec), the market left alone first (the
/// built-in one unless a given file is a do-nothing policy).
pub fn columns(files: &[String], market: &Scenario) -> anyhow::Result<Vec<(String, PolicySpec)>> {
    let mut cols = Vec::new();
    for f in files {
        cols.push((f.clone(), load_policy(Some(f), market)?));
    }
    if let Some(i) = cols.iter().position(|(_, p)| p.is_none()) {
        let base = cols.remove(i);
        cols.insert(0, base);
    } else {
        cols.insert(0, (String::new(), PolicySpec::none()));
    }
    Ok(cols)
}

/// Prints a note to stderr (talk, never data).
pub fn say(msg: &str) {
    eprintln!("furrow: {msg}");
}

/// The library's error of a path or a Monte Carlo run as the error itself (so that the exit code and
/// the message are those of the divergence, the failed replication or the failed solve).
pub fn lift(e: RunError) -> anyhow::Error {
    match e {
        RunError::Diverged(d) => d.into(),
        RunError::Failed(f) => f.into(),
        RunError::Storage(s) => s.into(),
        RunError::Write(w) => w.into(),
    }
}

/// A progress bar on stderr for long Monte Carlo runs when stderr is a terminal; silent otherwise.
pub struct Bar(Option<ProgressBar>);

impl Progress for Bar {
    fn advance(&self, replications: u64) {
        if let Some(b) = &self.0 {
            b.inc(replications);
        }
    }
}

impl Bar {
    /// The observer to hand to the library.
    pub fn observer(&self) -> &dyn Progress {
        if self.0.is_some() {
            self
        } else {
            &NoProgress
        }
    }

    /// Clears the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}

/// Period-steps above which a run counts as long enough for a bar.
const LONG_RUN_STEPS: usize = 20_000_000;

/// A bar for `models` models of `scenario`'s replications and periods.
pub fn progress_for(scenario: &Scenario, models: usize) -> Bar {
    let reps = scenario.run.replications;
    let steps = reps
        .saturating_mul(scenario.run.periods)
        .saturating_mul(models);
    if steps < LONG_RUN_STEPS || !std::io::stderr().is_terminal() {
        return Bar(None);
    }
    let b = ProgressBar::new(reps as u64);
    if let Ok(style) =
        ProgressStyle::with_template("furrow: {bar:40} {pos}/{len} replications, {eta} left")
    {
        b.set_style(style);
    }
    Bar(Some(b))
}

/// How long storage solves run before the bar appears.
const BAR_AFTER: Duration = Duration::from_secs(1);

/// Draws the progress of storage solves on stderr (when it is a terminal) once they have run
/// [`BAR_AFTER`]: how far the current iteration is from the tolerance (on a log scale, as the
/// change falls about geometrically), the iteration and the stage. Solves that overlap (`compare`
/// solves its policies in parallel) share the bar, which clears when the last one ends.
struct SolveBar(Mutex<BarState>);

#[derive(Default)]
struct BarState {
    since: Option<Instant>,
    running: usize,
    bar: Option<ProgressBar>,
}

impl SolveProgress for SolveBar {
    fn event(&self, event: ProgressEvent) {
        let Ok(mut st) = self.0.lock() else {
            return;
        };
        match event {
            ProgressEvent::Started { .. } => {
                st.running += 1;
                st.since.get_or_insert_with(Instant::now);
            }
            ProgressEvent::Finished => {
                st.running = st.running.saturating_sub(1);
                if st.running == 0 {
                    if let Some(b) = st.bar.take() {
                        b.finish_and_clear();
                    }
                    st.since = None;
                }
            }
            ProgressEvent::Iteration {
                iteration,
                change,
                tolerance,
                points,
            } => {
                let done = if change.is_finite() && change > 0.0 {
                    (change.ln() / tolerance.ln()).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                if let Some(b) = st.bar() {
                    b.set_position((100.0 * done) as u64);
                    b.set_message(format!(
                        "iteration {iteration}: change {change:.1e}, tolerance {tolerance:.0e} ({points} grid points)"
                    ));
                }
            }
            ProgressEvent::Stage(stage) => {
                let what = match stage {
                    Stage::Refining => "refining the grid where the residual is too large",
                    Stage::Covering => "extending the grid over the simulated path",
                    Stage::Checking => "checking the Euler residual over the simulated path",
                };
                if let Some(b) = st.bar() {
                    b.set_message(what);
                }
            }
        }
    }
}

impl BarState {
    /// The bar, drawn once the solves have run long enough.
    fn bar(&mut self) -> Option<&ProgressBar> {
        let since = self.since?;
        if self.bar.is_none() && since.elapsed() >= BAR_AFTER {
            let b = ProgressBar::new(100);
            if let Ok(style) =
                ProgressStyle::with_template("furrow: storage equilibrium {bar:30} {msg}")
            {
                b.set_style(style);
            }
            self.bar = Some(b);
        }
        self.bar.as_ref()
    }
}

/// Installs the storage solves' progress bar for this process when stderr is a terminal (any
/// command that solves storage equilibria may call it; nothing is drawn for solves under a
/// second).
pub fn install_progress() {
    if std::io::stderr().is_terminal() {
        storage::set_progress(Some(Arc::new(SolveBar(Mutex::new(BarState::default())))));
    }
}

/// Writes `--seed`, `--replications` and `--periods` into the parsed market file (validated with it
/// at every grid point, so a bad value is named by the file's own check).
pub fn with_run_flags(mut market: toml::Table, common: &CommonArgs) -> anyhow::Result<toml::Table> {
    for (flag, key, value) in common.run_flags() {
        let Some(v) = value else { continue };
        let v = i64::try_from(v).map_err(|_| anyhow::anyhow!("{flag} {v}: too large"))?;
        furrow::scenario::apply_override(&mut market, key, toml::Value::Integer(v))
            .map_err(|e| anyhow::anyhow!("{flag} {v}: {e}"))?;
    }
    Ok(market)
}

/// A progress bar on stderr over `total` replications (all grid points), drawn only when stderr is
/// a terminal.
pub struct GridBar(Option<indicatif::ProgressBar>);

impl furrow::stochastic::Progress for GridBar {
    fn advance(&self, replications: u64) {
        if let Some(b) = &self.0 {
            b.inc(replications);
        }
    }
}

impl GridBar {
    /// A bar for `total` replications.
    pub fn new(total: u64) -> GridBar {
        use std::io::IsTerminal;
        if !std::io::stderr().is_terminal() {
            return GridBar(None);
        }
        let b = indicatif::ProgressBar::new(total);
        if let Ok(style) = indicatif::ProgressStyle::with_template(
            "furrow: {bar:40} {pos}/{len} replications over the grid, {eta} left",
        ) {
            b.set_style(style);
        }
        GridBar(Some(b))
    }

    /// Clears the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}

/// The replications of one point of `base` (after the command-line flags).
pub fn replications_of(
    base: &furrow::sweep::Base,
) -> anyhow::Result<(furrow::scenario::Scenario, usize)> {
    let (s, _) = base.validate(&[])?;
    let r = s.run.replications;
    Ok((s, r))
}

/// A TOML file parsed (not validated), for the verbs that patch keys before validating.
pub fn read_table(path: &str) -> anyhow::Result<toml::Table> {
    let text = furrow::input::read_file(path)?;
    Ok(furrow::scenario::parse_toml(path, &text)?)
}

//! Running paths of a market whatever its model: the single-path runner (`run`), the Monte Carlo
//! summary of one policy (`run` with replications), and [`with_models`], the one place that chooses
//! the model — the solved storage equilibrium ([`crate::storage::SolvedStorage`]) for a market with
//! `[storers]`, the period engine ([`crate::engine::Model`]) otherwise. Both are
//! [`PathModel`]s (`engine::path`); code handed the models is generic over them and never asks
//! which model it has. [`render`] turns a path into the `run` table.

mod diagnose;
pub mod render;
mod summary;

pub use diagnose::{diagnose, diagnose_tally, floor_warning, summarise, PathTally};
pub use render::{render_path, PathStream, RUN_COLUMNS, RUN_COLUMNS_TRADE};
pub use summary::{render_summary, run_summary, SUMMARY_VARIABLES, SUMMARY_VARIABLES_TRADE};

use crate::engine::{Diverged, Model, PathModel, PeriodRecord, PeriodShock, Stepper};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;
use crate::stochastic::{ReplicationFailed, ShockStream};
use crate::storage::{LongRunMeans, SolvedStorage, StorageError};

/// A [`PathModel`] with what `compare` reads off the model itself beyond its paths.
pub trait LongRunModel: PathModel {
    /// Long-run indicators of the model (one long path after a burn-in) where the model has them
    /// (the storage equilibrium's stocks and crowding-out, [`crate::storage::long_run`]); `None`
    /// for the period engine.
    fn long_run(&self) -> Option<LongRunMeans>;
}

impl LongRunModel for Model {
    fn long_run(&self) -> Option<LongRunMeans> {
        None
    }
}

impl LongRunModel for SolvedStorage {
    fn long_run(&self) -> Option<LongRunMeans> {
        Some(crate::storage::long_run(self))
    }
}

/// Code that runs on a market's models whatever they are (see [`with_models`]).
pub trait WithModels {
    /// What it gives back.
    type Output;
    /// Runs on `models`, one per policy, in the order the policies were given.
    fn with<M: LongRunModel>(self, models: &[M]) -> Self::Output;
}

/// Builds the models of `policies` on `scenario` and hands them to `user`: the storage equilibrium
/// (solved once per policy, in parallel, collected in policy order) for a market with private
/// storers, the period engine otherwise. The only place that chooses the model.
pub fn with_models<W: WithModels>(
    scenario: &Scenario,
    policies: &[PolicySpec],
    user: W,
) -> Result<W::Output, StorageError> {
    use rayon::prelude::*;
    if scenario.storers.is_some() {
        let solved = policies
            .par_iter()
            .map(|p| SolvedStorage::new(scenario, p))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(user.with(&solved))
    } else {
        let models: Vec<Model> = policies.iter().map(|p| Model::new(scenario, p)).collect();
        Ok(user.with(&models))
    }
}

/// Why a path or a Monte Carlo run stopped.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The single path diverged.
    #[error("{0}")]
    Diverged(Diverged),
    /// A replication of the Monte Carlo diverged.
    #[error("{0}")]
    Failed(ReplicationFailed),
    /// The storage equilibrium could not be solved.
    #[error("{0}")]
    Storage(StorageError),
    /// The row sink failed (writing the output).
    #[error("{0}")]
    Write(std::io::Error),
}

/// How a streamed single path treats divergence.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Divergence {
    /// Walk the path once without output first, so that a diverging path hands out no row (for a
    /// sink that cannot be taken back, such as the terminal).
    CheckFirst,
    /// Hand out rows as the periods go (for a sink discarded on failure, such as a temporary file).
    AsItComes,
}

/// The single path of `scenario` under `policy` (replication 0's shocks, or none for a market
/// without shocks), whole.
pub fn one_path(scenario: &Scenario, policy: &PolicySpec) -> Result<Vec<PeriodRecord>, RunError> {
    let mut records = Vec::with_capacity(scenario.run.periods.min(1 << 20));
    stream_path(scenario, policy, Divergence::AsItComes, |r| {
        records.push(*r);
        Ok(())
    })?;
    Ok(records)
}

/// Streams the single path of `scenario` under `policy` period by period into `row`, holding no
/// more than one period (the shocks are drawn as the periods go); returns the tally the path's
/// diagnostics need (`diagnose_tally`).
pub fn stream_path(
    scenario: &Scenario,
    policy: &PolicySpec,
    divergence: Divergence,
    row: impl FnMut(&PeriodRecord) -> std::io::Result<()>,
) -> Result<PathTally, RunError> {
    struct OnePath<'s, F> {
        scenario: &'s Scenario,
        divergence: Divergence,
        row: F,
    }
    impl<F: FnMut(&PeriodRecord) -> std::io::Result<()>> WithModels for OnePath<'_, F> {
        type Output = Result<PathTally, RunError>;
        fn with<M: LongRunModel>(mut self, models: &[M]) -> Self::Output {
            let model = &models[0];
            if self.divergence == Divergence::CheckFirst {
                walk(model, self.scenario, |_| Ok(()))?;
            }
            walk(model, self.scenario, &mut self.row)
        }
    }
    let user = OnePath {
        scenario,
        divergence,
        row,
    };
    with_models(scenario, std::slice::from_ref(policy), user).map_err(RunError::Storage)?
}

/// Walks one path of `model` on the single-path shocks (replication 0's stream, drawn as the
/// periods go, or none), handing each record to `row`.
pub fn walk<M: PathModel>(
    model: &M,
    scenario: &Scenario,
    mut row: impl FnMut(&PeriodRecord) -> std::io::Result<()>,
) -> Result<PathTally, RunError> {
    let mut stream = (!scenario.is_deterministic()).then(|| ShockStream::for_scenario(scenario, 0));
    let mut stepper = model.start();
    let mut tally = PathTally::default();
    for _ in 0..scenario.run.periods {
        let shock = stream
            .as_mut()
            .map_or(PeriodShock::NONE, |s| s.next_shock());
        let r = stepper.step(&shock).map_err(RunError::Diverged)?;
        tally.add(&r);
        row(&r).map_err(RunError::Write)?;
    }
    Ok(tally)
}

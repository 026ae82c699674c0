//! Monte Carlo over replications, several policies under the same shocks (common random numbers).
//!
//! Replication i draws its shocks from its own stream ([`ShockStream`] with stream i), once, and every
//! policy is simulated on that same draw. Replications are split into chunks of a fixed size
//! ([`CHUNK`]) that run in parallel (rayon); each chunk folds its periods in order into
//! per-replication summaries and sums, the chunks are collected in order and reduced sequentially, so
//! every figure is bit-identical whatever the number of threads. Nothing per period is kept except the
//! series asked for (period values across replications, needed for fan-chart quantiles), and those only
//! for the first replications that fit in [`SERIES_BUDGET_BYTES`]: per-period quantiles of very large runs
//! come from that leading subset, per-period means and every other figure from all replications.

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;
use serde::Serialize;

use super::stats::{ShiftedSums, Summary};
use super::ShockStream;
use crate::engine::{Diverged, Model, PeriodRecord, PeriodShock};
use crate::scenario::{PolicySpec, Scenario};
use crate::storage::{SolvedStorage, StorageError};
use crate::welfare::{producer_revenue, Discount, WelfareFold, WelfarePv};

/// Replications per parallel work item (fixed, so the order of float sums never depends on threads).
pub const CHUNK: usize = 64;

/// Memory allowed for the per-period values kept for quantiles (all policies and series together).
pub const SERIES_BUDGET_BYTES: usize = 128 << 20;

/// A per-period series that can be kept for quantiles.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Series {
    /// Market price P_t.
    Price,
    /// Producer price.
    ProducerPrice,
    /// Harvest Q_t.
    Harvest,
    /// Agency stock S_t.
    Stock,
}

impl Series {
    /// The column stem (`price`, `producer_price`, `harvest`, `stock`).
    pub fn name(&self) -> &'static str {
        match self {
            Series::Price => "price",
            Series::ProducerPrice => "producer_price",
            Series::Harvest => "harvest",
            Series::Stock => "stock",
        }
    }

    #[inline]
    fn of(&self, r: &PeriodRecord) -> f64 {
        match self {
            Series::Price => r.price,
            Series::ProducerPrice => r.producer_price,
            Series::Harvest => r.harvest,
            Series::Stock => r.stock,
        }
    }
}

/// Told how many replications are done (a progress bar plugs in here; the default does nothing).
pub trait Progress: Sync {
    /// `replications` more replications finished (all policies).
    fn advance(&self, _replications: u64) {}
}

/// A progress observer that ignores everything.
#[derive(Debug, Clone, Copy, Default)]
pub struct NoProgress;

impl Progress for NoProgress {}

/// What one replication of one policy leaves behind.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct ReplicationSummary {
    /// Present values of the welfare items.
    pub welfare: WelfarePv,
    /// Periods in which the agency bought or a deficiency payment was made.
    pub floor_binding_periods: u32,
    /// Periods with the price above `sell_above` and no stock.
    pub stockout_periods: u32,
    /// Agency stock S_T.
    pub final_stock: f64,
}

/// Pooled moments over all periods and replications of one policy.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Pooled {
    /// Market price.
    pub price: ShiftedSums,
    /// Producer price.
    pub producer_price: ShiftedSums,
    /// Harvest.
    pub harvest: ShiftedSums,
    /// Producer revenue (producer price × harvest).
    pub revenue: ShiftedSums,
}

impl Pooled {
    fn new(price_ref: f64, quantity_ref: f64) -> Pooled {
        Pooled {
            price: ShiftedSums::new(price_ref),
            producer_price: ShiftedSums::new(price_ref),
            harvest: ShiftedSums::new(quantity_ref),
            revenue: ShiftedSums::new(price_ref * quantity_ref),
        }
    }

    #[inline]
    fn push(&mut self, r: &PeriodRecord) {
        self.price.push(r.price);
        self.producer_price.push(r.producer_price);
        self.harvest.push(r.harvest);
        self.revenue.push(producer_revenue(r));
    }

    fn merge(&mut self, o: &Pooled) {
        self.price.merge(&o.price);
        self.producer_price.merge(&o.producer_price);
        self.harvest.merge(&o.harvest);
        self.revenue.merge(&o.revenue);
    }
}

/// A kept series summarised period by period.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SeriesSummary {
    /// Which series.
    pub series: Series,
    /// Replications the quantiles come from (the first ones; all of them unless the run is very large).
    /// Means always use every replication.
    pub quantile_replications: usize,
    /// Period t = 1..T at index t − 1.
    pub periods: Vec<Summary>,
}

/// The Monte Carlo outcome of one policy.
#[derive(Debug, Clone, PartialEq)]
pub struct PolicyRuns {
    /// The policy's display name.
    pub name: String,
    /// One entry per replication, in replication order.
    pub replications: Vec<ReplicationSummary>,
    /// Moments pooled over periods and replications.
    pub pooled: Pooled,
    /// Mean fiscal cost in each period (index t − 1).
    pub mean_fiscal_cost: Vec<f64>,
    /// The series asked for, summarised per period.
    pub series: Vec<SeriesSummary>,
}

/// Everything a Monte Carlo run produced, policies in the order given.
#[derive(Debug, Clone, PartialEq)]
pub struct MonteCarlo {
    /// Number of replications.
    pub replications: usize,
    /// Periods per replication.
    pub periods: usize,
    /// One entry per policy.
    pub policies: Vec<PolicyRuns>,
}

/// A replication that failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("policy \"{policy}\": replication {replication} (0-based stream number, seed {seed})")]
pub struct ReplicationFailed {
    /// The policy's display name.
    pub policy: String,
    /// Index of the policy in the list given.
    pub policy_index: usize,
    /// The replication (0-based stream number).
    pub replication: usize,
    /// The run's seed.
    pub seed: u64,
    /// What the engine reported (period and reason).
    #[source]
    pub source: Diverged,
}

/// What a chunk of replications hands back, per policy.
struct ChunkPolicy {
    reps: Vec<ReplicationSummary>,
    pooled: Pooled,
    fiscal: Vec<f64>,
    /// kept series, each period-major: [t][rep in chunk], so a period's values are contiguous
    /// (empty when this chunk lies beyond the series budget)
    series: Vec<Vec<f64>>,
    /// per-period sums of each kept series over the chunk's replications: [series][t]
    series_sums: Vec<Vec<f64>>,
}

type ChunkOutcome = Result<Vec<ChunkPolicy>, ReplicationFailed>;

/// Simulates every policy in `policies` over `scenario.run.replications` replications of
/// `scenario.run.periods` periods under the same shocks, keeping the per-period `series` for quantiles.
/// The first failing replication (lowest replication, then lowest policy index) fails the whole run.
/// This runs the period engine; for a market with private storers build the sources with
/// [`sources`] and call [`run_monte_carlo_sources`].
pub fn run_monte_carlo(
    scenario: &Scenario,
    policies: &[PolicySpec],
    series: &[Series],
    progress: &dyn Progress,
) -> Result<MonteCarlo, ReplicationFailed> {
    let models: Vec<PathSource> = policies
        .iter()
        .map(|p| PathSource::Engine(Box::new(Model::new(scenario, p))))
        .collect();
    run_with_budget(scenario, &models, series, progress, SERIES_BUDGET_BYTES)
}

/// [`run_monte_carlo`] over given path sources (one per policy, in order).
pub fn run_monte_carlo_sources(
    scenario: &Scenario,
    sources: &[PathSource],
    series: &[Series],
    progress: &dyn Progress,
) -> Result<MonteCarlo, ReplicationFailed> {
    run_with_budget(scenario, sources, series, progress, SERIES_BUDGET_BYTES)
}

/// Where a policy's simulated periods come from.
#[derive(Debug)]
pub enum PathSource {
    /// The period engine (every market without private storers).
    Engine(Box<Model>),
    /// The solved competitive storage equilibrium (a market with `[storers]`): each replication is
    /// simulated with the solved rules on the same random stream as everywhere else.
    Storage(Box<SolvedStorage>),
}

impl PathSource {
    /// The policy's display name.
    pub fn name(&self) -> &str {
        match self {
            PathSource::Engine(m) => &m.policy.name,
            PathSource::Storage(s) => &s.policy().name,
        }
    }
}

/// The path sources for `policies` on `scenario`: the storage equilibrium (solved once per policy)
/// when the market has private storers, the period engine otherwise.
pub fn sources(
    scenario: &Scenario,
    policies: &[PolicySpec],
) -> Result<Vec<PathSource>, StorageError> {
    // the storage solves are independent: in parallel, collected in policy order
    policies
        .par_iter()
        .map(|p| {
            Ok(if scenario.storers.is_some() {
                PathSource::Storage(Box::new(SolvedStorage::new(scenario, p)?))
            } else {
                PathSource::Engine(Box::new(Model::new(scenario, p)))
            })
        })
        .collect()
}

fn run_with_budget(
    scenario: &Scenario,
    models: &[PathSource],
    series: &[Series],
    progress: &dyn Progress,
    budget: usize,
) -> Result<MonteCarlo, ReplicationFailed> {
    let reps = scenario.run.replications.max(1);
    let periods = scenario.run.periods;
    let discount = Discount::new(scenario.run.discount_rate, periods);
    let chunks = reps.div_ceil(CHUNK);
    let first_failure = AtomicUsize::new(usize::MAX);
    let per_replication = (periods * series.len() * models.len() * 8).max(1);
    // at least one chunk, so quantiles always exist
    let series_reps = (budget / per_replication).max(1).div_ceil(CHUNK) * CHUNK;
    let ctx = Context {
        series_reps,
        scenario,
        models,
        discount: &discount,
        series,
        first_failure: &first_failure,
        progress,
    };
    let outcomes: Vec<Option<ChunkOutcome>> = (0..chunks)
        .into_par_iter()
        .map(|c| {
            if first_failure.load(Ordering::Relaxed) < c {
                return None; // an earlier chunk failed: this one cannot be the first failure
            }
            let out = ctx.chunk(c * CHUNK, ((c + 1) * CHUNK).min(reps));
            if out.is_err() {
                first_failure.fetch_min(c, Ordering::Relaxed);
            }
            Some(out)
        })
        .collect();
    let mut chunk_results = Vec::with_capacity(chunks);
    for o in outcomes {
        match o {
            Some(Ok(v)) => chunk_results.push(v),
            Some(Err(e)) => return Err(e),
            None => unreachable!("a chunk is skipped only after an earlier chunk failed"),
        }
    }
    let policies = (0..models.len())
        .map(|k| assemble(models[k].name(), k, &chunk_results, series, periods, reps))
        .collect();
    Ok(MonteCarlo {
        replications: reps,
        periods,
        policies,
    })
}

struct Context<'a> {
    scenario: &'a Scenario,
    models: &'a [PathSource],
    discount: &'a Discount,
    series: &'a [Series],
    series_reps: usize,
    first_failure: &'a AtomicUsize,
    progress: &'a dyn Progress,
}

impl Context<'_> {
    fn chunk(&self, from: usize, to: usize) -> ChunkOutcome {
        let s = self.scenario;
        let periods = s.run.periods;
        let n = to - from;
        let mut out: Vec<ChunkPolicy> = self
            .models
            .iter()
            .map(|_| ChunkPolicy {
                reps: Vec::with_capacity(n),
                pooled: Pooled::new(s.steady.price, s.steady.quantity),
                fiscal: vec![0.0; periods],
                series: self
                    .series
                    .iter()
                    .map(|_| {
                        if from < self.series_reps {
                            vec![0.0; n * periods]
                        } else {
                            Vec::new()
                        }
                    })
                    .collect(),
                series_sums: self.series.iter().map(|_| vec![0.0; periods]).collect(),
            })
            .collect();
        let mut shocks = vec![PeriodShock::NONE; periods];
        let deterministic = s.shocks.is_deterministic();
        for rep in from..to {
            if !deterministic {
                let mut stream = ShockStream::new(&s.shocks, s.run.seed, rep as u64);
                for x in shocks.iter_mut() {
                    *x = stream.next_shock();
                }
            }
            for (k, model) in self.models.iter().enumerate() {
                let summary = self
                    .replicate(model, &shocks, rep, rep - from, n, &mut out[k])
                    .map_err(|source| ReplicationFailed {
                        policy: model.name().to_string(),
                        policy_index: k,
                        replication: rep,
                        seed: s.run.seed,
                        source,
                    })?;
                out[k].reps.push(summary);
            }
            if self.first_failure.load(Ordering::Relaxed) < from / CHUNK {
                break; // an earlier chunk failed; this chunk's figures will not be used
            }
        }
        self.progress.advance(n as u64);
        Ok(out)
    }

    /// One replication (number `slot` of the chunk's `n`) of one model, folded into `acc`; returns
    /// the replication's summary.
    fn replicate(
        &self,
        source: &PathSource,
        shocks: &[PeriodShock],
        rep: usize,
        slot: usize,
        n: usize,
        acc: &mut ChunkPolicy,
    ) -> Result<ReplicationSummary, Diverged> {
        match source {
            PathSource::Engine(model) => {
                let mut sim = model.simulator();
                self.fold(shocks.iter().map(|s| sim.step(s)), slot, n, acc)
            }
            PathSource::Storage(solved) => {
                let records = solved.records(rep as u64, shocks.len());
                self.fold(records.into_iter().map(Ok), slot, n, acc)
            }
        }
    }

    /// Folds one replication's periods into `acc`.
    fn fold(
        &self,
        periods: impl Iterator<Item = Result<PeriodRecord, Diverged>>,
        slot: usize,
        n: usize,
        acc: &mut ChunkPolicy,
    ) -> Result<ReplicationSummary, Diverged> {
        let mut fold = WelfareFold::new();
        let mut pooled = Pooled::new(acc.pooled.price.reference, acc.pooled.harvest.reference);
        let (mut binding, mut stockout, mut last_stock) = (0u32, 0u32, 0.0);
        for (t, r) in periods.enumerate() {
            let r = r?;
            fold.add(&r, self.discount);
            pooled.push(&r);
            acc.fiscal[t] += r.fiscal_cost;
            binding += u32::from(r.floor_binding());
            stockout += u32::from(r.stockout);
            last_stock = r.stock;
            for (j, which) in self.series.iter().enumerate() {
                let x = which.of(&r);
                acc.series_sums[j][t] += x;
                if let Some(cell) = acc.series[j].get_mut(t * n + slot) {
                    *cell = x;
                }
            }
        }
        acc.pooled.merge(&pooled);
        Ok(ReplicationSummary {
            welfare: fold.finish(self.scenario.run.terminal_stock, self.discount),
            floor_binding_periods: binding,
            stockout_periods: stockout,
            final_stock: last_stock,
        })
    }
}

/// Reduces policy `k` over the chunks, in chunk order.
fn assemble(
    name: &str,
    k: usize,
    chunks: &[Vec<ChunkPolicy>],
    series: &[Series],
    periods: usize,
    reps: usize,
) -> PolicyRuns {
    let mut replications = Vec::with_capacity(reps);
    let mut pooled: Option<Pooled> = None;
    let mut fiscal = vec![0.0; periods];
    for c in chunks {
        let p = &c[k];
        replications.extend_from_slice(&p.reps);
        match &mut pooled {
            None => pooled = Some(p.pooled),
            Some(acc) => acc.merge(&p.pooled),
        }
        for (a, b) in fiscal.iter_mut().zip(&p.fiscal) {
            *a += b;
        }
    }
    for f in fiscal.iter_mut() {
        *f /= reps as f64;
    }
    let summaries = series
        .iter()
        .enumerate()
        .map(|(j, which)| {
            let mut sums = vec![0.0; periods];
            let mut kept = 0;
            for c in chunks {
                for (a, b) in sums.iter_mut().zip(&c[k].series_sums[j]) {
                    *a += b;
                }
                kept += c[k].series[j].len() / periods.max(1);
            }
            let summaries = (0..periods)
                .into_par_iter()
                .map_init(
                    || Vec::with_capacity(kept),
                    |column, t| {
                        column.clear();
                        for c in chunks {
                            let block = &c[k].series[j];
                            let n = block.len() / periods.max(1);
                            column.extend_from_slice(&block[t * n..(t + 1) * n]);
                        }
                        Summary {
                            mean: sums[t] / reps as f64,
                            ..Summary::of(column)
                        }
                    },
                )
                .collect();
            SeriesSummary {
                series: *which,
                quantile_replications: kept,
                periods: summaries,
            }
        })
        .collect();
    PolicyRuns {
        name: name.to_string(),
        replications,
        pooled: pooled.unwrap_or_default(),
        mean_fiscal_cost: fiscal,
        series: summaries,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::{market_from_table, parse_toml};

    fn scenario(reps: usize) -> Scenario {
        let text = format!(
            "[market]\nname = \"T\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
             [demand]\nintercept = 200.0\nslope = -2.0\n[supply]\nintercept = -40.0\nslope = 1.0\n\
             [expectations]\nrule = \"naive\"\n[run]\nperiods = 10\ninitial_price = 85.0\n\
             replications = {reps}\nseed = 9\n[shocks]\nsupply_sd = 2.0\n"
        );
        market_from_table("t.toml", parse_toml("t.toml", &text).unwrap()).unwrap()
    }

    #[test]
    fn over_budget_quantiles_come_from_the_leading_replications_and_means_from_all() {
        let none = [PolicySpec::none()];
        let series = [Series::Price];
        // a budget of one replication rounds up to one chunk of CHUNK replications
        let sources = super::sources(&scenario(200), &none).unwrap();
        let capped = run_with_budget(&scenario(200), &sources, &series, &NoProgress, 1).unwrap();
        let full = run_monte_carlo(&scenario(200), &none, &series, &NoProgress).unwrap();
        let leading = run_monte_carlo(&scenario(CHUNK), &none, &series, &NoProgress).unwrap();
        let (c, f, l) = (
            &capped.policies[0].series[0],
            &full.policies[0].series[0],
            &leading.policies[0].series[0],
        );
        assert_eq!(c.quantile_replications, CHUNK);
        assert_eq!(f.quantile_replications, 200);
        for t in 0..10 {
            assert_eq!(c.periods[t].mean, f.periods[t].mean);
            assert_eq!(c.periods[t].p05, l.periods[t].p05);
            assert_eq!(c.periods[t].p95, l.periods[t].p95);
        }
        assert_eq!(capped.policies[0].pooled, full.policies[0].pooled);
    }
}

//! Weather and demand shocks, and the Monte Carlo machinery.
//!
//! Every replication i draws from its own stream of a ChaCha8 generator seeded with the run's seed
//! (`seed_from_u64(seed)` then `set_stream(i)`), so replication i sees the same shocks under every
//! policy (common random numbers) and whatever the number of threads.

mod lanes;
pub mod memory;
pub mod montecarlo;
pub mod normals;
mod shocks;
pub mod stats;

pub use montecarlo::{
    consumer_price, run_models, run_models_paired, run_monte_carlo, MonteCarlo, NoProgress,
    PairedChanges, Pairing, PathVariable, PolicyRuns, Pooled, Progress, ReplicationFailed,
    ReplicationSummary, SeasonPrices, SeriesSummary, Watch,
};
pub use shocks::{draw_shock_columns, draw_shocks, single_path_shocks, ShockStream};
pub use stats::{quantiles, ShiftedSums, Summary};

//! How much memory a Monte Carlo run needs, estimated before it starts, and how much the machine has.
//!
//! What a run keeps (see `montecarlo.rs`): for every replication and every column (the baseline and
//! each policy) its summary value by value (`montecarlo::Replications`): per chunk of [`CHUNK`] replications,
//! a value with the same bits in the whole chunk is held once, any other once per replication —
//! at most [`REALS`] `f64` and [`COUNTS`] `u32` a replication, plus one block header per value per
//! chunk (the estimate takes this worst case; a policy that never buys, pays or stocks holds far
//! less); one `f64` of scratch while the quantiles of a present value are selected; the per-period
//! sums of the fiscal cost, income, its CRRA transform and each kept series only for the chunks of
//! two waves in flight ([`WAVE`] chunks each: a wave is merged in chunk order while the next runs); the
//! per-period values kept for fan-chart quantiles, capped at [`SERIES_BUDGET_BYTES`] in all; the
//! season outlays kept for pooled quantiles, capped at [`SEASON_BUDGET_BYTES`] in all (outlays of
//! exactly 0 are counted, not kept, so the cap is the worst case); and the program itself
//! ([`BASE_BYTES`]). The measured peaks are in docs/montecarlo.md.

use std::mem::size_of;

use super::montecarlo::{CHUNK, COUNTS, REALS, SEASON_BUDGET_BYTES, SERIES_BUDGET_BYTES, WAVE};

/// The program, its tables and thread stacks, before any replication (measured about 10 MB; rounded
/// up).
pub const BASE_BYTES: u64 = 16 << 20;

/// Assumed available memory when `/proc/meminfo` cannot be read (not Linux, or no `/proc`): 2 GiB.
pub const FALLBACK_AVAILABLE_BYTES: u64 = 2 << 30;

/// Share of the available memory a run may plan to use (the rest is for the system and other programs).
pub const USABLE_SHARE: f64 = 0.9;

/// A Monte Carlo run's memory, estimated up front.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MemoryEstimate {
    /// Replications.
    pub replications: usize,
    /// Periods per replication.
    pub periods: usize,
    /// Columns simulated: the baseline and each policy.
    pub columns: usize,
    /// Bytes per replication per column.
    pub per_replication_per_column: u64,
    /// Bytes of per-period values kept for fan-chart quantiles and of season outlays kept for pooled
    /// quantiles (both capped).
    pub series_bytes: u64,
    /// Total bytes at the peak.
    pub total: u64,
}

/// Bytes per replication per column, at most: every value of the summary held per replication,
/// the block headers (one per value per chunk, amortised), the quantile scratch and, in a market
/// with a border, the column's leakage sums (two values).
pub fn bytes_per_replication_per_column() -> u64 {
    let values = (REALS * size_of::<f64>() + COUNTS * size_of::<u32>()) as u64;
    let headers = ((REALS + COUNTS) as u64 * BLOCK_HEADER_BYTES).div_ceil(CHUNK as u64);
    let quantile_scratch = size_of::<f64>() as u64;
    let leakage = 2 * size_of::<f64>() as u64;
    values + headers + quantile_scratch + leakage
}

/// A chunk's block of one value: its header (an enum around a boxed slice).
const BLOCK_HEADER_BYTES: u64 = 24;

/// Bytes of the per-period sums of the two waves in flight: per chunk and column, the fiscal cost,
/// income, its CRRA transform and each kept series.
pub fn wave_bytes(periods: usize, columns: usize, series: usize) -> u64 {
    let per_chunk = 8 * periods as u64 * (3 + series as u64);
    per_chunk * 2 * WAVE as u64 * columns as u64
}

/// The estimate for `replications` × `periods` with `columns` columns and `series` kept series.
pub fn estimate(
    replications: usize,
    periods: usize,
    columns: usize,
    series: usize,
) -> MemoryEstimate {
    let per = bytes_per_replication_per_column();
    let reps = replications as u64;
    let cols = columns as u64;
    // the kept series: whole chunks of replications up to the budget, at least one chunk
    let per_rep_series = (periods as u64 * series as u64 * cols * 8).max(1);
    let kept_reps = ((SERIES_BUDGET_BYTES as u64 / per_rep_series).max(1))
        .div_ceil(CHUNK as u64)
        .saturating_mul(CHUNK as u64)
        .min(reps.div_ceil(CHUNK as u64) * CHUNK as u64);
    // the season outlays likewise, within their own budget
    let per_rep_season = (periods as u64 * cols * 8).max(1);
    let season_reps = ((SEASON_BUDGET_BYTES as u64 / per_rep_season).max(1))
        .div_ceil(CHUNK as u64)
        .saturating_mul(CHUNK as u64)
        .min(reps);
    let series_bytes = kept_reps
        .saturating_mul(per_rep_series)
        .saturating_add(season_reps.saturating_mul(per_rep_season));
    let total = per
        .saturating_mul(reps)
        .saturating_mul(cols)
        .saturating_add(series_bytes)
        .saturating_add(wave_bytes(periods, columns, series))
        .saturating_add(BASE_BYTES);
    MemoryEstimate {
        replications,
        periods,
        columns,
        per_replication_per_column: per,
        series_bytes,
        total,
    }
}

/// Where the available-memory figure came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AvailableSource {
    /// `MemAvailable` in `/proc/meminfo`.
    Meminfo,
    /// [`FALLBACK_AVAILABLE_BYTES`].
    Fallback,
}

/// The memory available to a new run: `MemAvailable` from `/proc/meminfo`, or the fallback.
pub fn available() -> (u64, AvailableSource) {
    std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|t| parse_mem_available(&t))
        .map_or((FALLBACK_AVAILABLE_BYTES, AvailableSource::Fallback), |b| {
            (b, AvailableSource::Meminfo)
        })
}

/// `MemAvailable` (in bytes) from the text of `/proc/meminfo` (`MemAvailable:  123456 kB`).
pub fn parse_mem_available(meminfo: &str) -> Option<u64> {
    meminfo.lines().find_map(|l| {
        let rest = l.strip_prefix("MemAvailable:")?;
        let mut parts = rest.split_whitespace();
        let n: u64 = parts.next()?.parse().ok()?;
        match parts.next() {
            Some("kB") | None => n.checked_mul(1024),
            _ => None,
        }
    })
}

/// A run that would need more memory than the machine has.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
#[error(
    "{} replications × {} periods × {} columns (the baseline and each policy) would need about {} \
     ({} bytes per replication per column, {} for fan-chart quantiles), but {} is available{}; \
     use at most about {} replications (--replications)",
    estimate.replications,
    estimate.periods,
    estimate.columns,
    human(estimate.total),
    estimate.per_replication_per_column,
    human(estimate.series_bytes),
    human(*available),
    if *from_meminfo { " (MemAvailable in /proc/meminfo)" } else { " (assumed: /proc/meminfo unreadable)" },
    max_replications
)]
pub struct TooMuchMemory {
    /// The estimate.
    pub estimate: MemoryEstimate,
    /// Bytes available.
    pub available: u64,
    /// Whether `available` was read from `/proc/meminfo`.
    pub from_meminfo: bool,
    /// The largest replication count that fits.
    pub max_replications: usize,
}

/// Bytes in a short human form (`4.2 GB`, decimal units).
pub fn human(bytes: u64) -> String {
    let b = bytes as f64;
    if b >= 1e9 {
        format!("{:.1} GB", b / 1e9)
    } else if b >= 1e6 {
        format!("{:.0} MB", b / 1e6)
    } else {
        format!("{:.0} kB", b / 1e3)
    }
}

/// Checks a run against `available` bytes (of which [`USABLE_SHARE`] may be planned for).
pub fn check_against(
    replications: usize,
    periods: usize,
    columns: usize,
    series: usize,
    available: u64,
    from_meminfo: bool,
) -> Result<MemoryEstimate, TooMuchMemory> {
    let e = estimate(replications, periods, columns, series);
    let usable = (available as f64 * USABLE_SHARE) as u64;
    if e.total <= usable {
        return Ok(e);
    }
    let fixed = e.series_bytes + wave_bytes(periods, columns, series) + BASE_BYTES;
    let per = e.per_replication_per_column * columns.max(1) as u64;
    let max_replications = (usable.saturating_sub(fixed) / per.max(1)) as usize;
    Err(TooMuchMemory {
        estimate: e,
        available,
        from_meminfo,
        max_replications,
    })
}

/// Checks a run against this machine's available memory ([`available`]).
pub fn check(
    replications: usize,
    periods: usize,
    columns: usize,
    series: usize,
) -> Result<MemoryEstimate, TooMuchMemory> {
    let (bytes, source) = available();
    check_against(
        replications,
        periods,
        columns,
        series,
        bytes,
        source == AvailableSource::Meminfo,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_mem_available() {
        let text =
            "MemTotal:       16303428 kB\nMemFree:         1234 kB\nMemAvailable:    8000000 kB\n";
        assert_eq!(parse_mem_available(text), Some(8_000_000 * 1024));
        assert_eq!(parse_mem_available("MemTotal: 5 kB\n"), None);
    }

    #[test]
    fn estimate_grows_linearly_in_replications_and_columns() {
        // beyond the series cap, doubling replications or columns doubles the per-replication part
        let a = estimate(1_000_000, 40, 2, 2);
        let b = estimate(2_000_000, 40, 2, 2);
        let c = estimate(1_000_000, 40, 4, 2);
        assert_eq!(a.series_bytes, b.series_bytes);
        let var = |e: &MemoryEstimate| {
            e.total - e.series_bytes - BASE_BYTES - wave_bytes(e.periods, e.columns, 2)
        };
        assert_eq!(var(&b), 2 * var(&a));
        assert_eq!(var(&c), 2 * var(&a));
        assert!(
            a.series_bytes
                <= (SERIES_BUDGET_BYTES + SEASON_BUDGET_BYTES) as u64
                    + 40 * 3 * 2 * 8 * CHUNK as u64
        );
    }

    #[test]
    fn refuses_with_the_estimate_and_a_count_that_fits() {
        let err = check_against(10_000_000, 40, 2, 2, 1 << 30, true).unwrap_err();
        let msg = err.to_string();
        assert!(
            msg.contains("10000000 replications") && msg.contains("MemAvailable"),
            "{msg}"
        );
        assert!(err.max_replications > 0 && err.max_replications < 10_000_000);
        // the suggested count fits
        assert!(check_against(err.max_replications, 40, 2, 2, 1 << 30, true).is_ok());
        assert!(check_against(2000, 40, 2, 2, 1 << 30, true).is_ok());
    }

    #[test]
    fn the_estimate_bounds_what_a_run_holds() {
        // a small run's summaries, value by value, hold no more than the worst case estimated
        use crate::policies::PolicySpec;
        use crate::scenario::{market_from_table, parse_toml};
        let text = "[market]\nname = \"T\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
             [demand]\nintercept = 200.0\nslope = -2.0\n[supply]\nintercept = -40.0\nslope = 1.0\n\
             [expectations]\nrule = \"naive\"\n[run]\nperiods = 10\ninitial_price = 85.0\n\
             replications = 300\nseed = 9\n[shocks]\nsupply_sd = 2.0\n";
        let s = market_from_table("t.toml", parse_toml("t.toml", text).unwrap()).unwrap();
        let mc = crate::stochastic::run_monte_carlo(
            &s,
            &[PolicySpec::none()],
            &[],
            &crate::stochastic::NoProgress,
        )
        .unwrap();
        let reps: &crate::stochastic::montecarlo::Replications = &mc.policies[0].replications;
        assert_eq!(reps.len(), 300);
        let bound = bytes_per_replication_per_column() * 300;
        assert!((reps.value_bytes() as u64) <= bound);
        // the market left alone never pays: its fiscal values are held once per chunk
        assert!(
            (reps.value_bytes() as u64) < bound / 2,
            "{}",
            reps.value_bytes()
        );
    }
}

//! One simulated path per policy, kept only as the figures need it: long series thinned to the
//! minimum and maximum of each pixel column, and the first seasons whole for the cobweb. A path of a
//! million seasons therefore costs a few kilobytes here, whatever `periods` is; the full data stay
//! in `run`'s CSV and JSON.

use crate::engine::{Diverged, PeriodRecord};
use crate::path::{Divergence, RunError};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;

/// Pixel columns a thinned series keeps (two points each at most): the figures are 960 px wide.
pub const COLUMNS: usize = 900;

/// Seasons kept whole for the cobweb diagram (a longer staircase is unreadable).
pub const COBWEB_SEASONS: usize = 40;

/// A series over periods 1..=n thinned to the lowest and highest value of each of at most
/// [`COLUMNS`] consecutive blocks of periods (both kept, in period order), so that every swing a
/// pixel column could show is still drawn. Up to 2 × [`COLUMNS`] periods are kept whole.
#[derive(Debug, Clone, PartialEq)]
pub struct Thinned {
    /// Periods per block (1: not thinned).
    pub stride: usize,
    /// (period, value) points.
    pub points: Vec<(f64, f64)>,
    block: Vec<(usize, f64)>,
}

impl Thinned {
    /// An empty series for `periods` periods.
    pub fn new(periods: usize) -> Thinned {
        let stride = if periods <= 2 * COLUMNS {
            1
        } else {
            periods.div_ceil(COLUMNS)
        };
        Thinned {
            stride,
            points: Vec::with_capacity(2 * COLUMNS.min(periods.max(1))),
            block: Vec::new(),
        }
    }

    /// Adds the value of period `t` (1-based, in order).
    pub fn push(&mut self, t: usize, v: f64) {
        if self.stride == 1 {
            self.points.push((t as f64, v));
            return;
        }
        // keep the block's lowest and highest (first of ties) as they come
        match self.block.len() {
            0 => self.block.extend([(t, v), (t, v)]),
            _ => {
                if v < self.block[0].1 {
                    self.block[0] = (t, v);
                }
                if v > self.block[1].1 {
                    self.block[1] = (t, v);
                }
            }
        }
        if t.is_multiple_of(self.stride) {
            self.flush();
        }
    }

    fn flush(&mut self) {
        if self.block.is_empty() {
            return;
        }
        let (a, b) = (self.block[0], self.block[1]);
        let (first, second) = if a.0 <= b.0 { (a, b) } else { (b, a) };
        self.points.push((first.0 as f64, first.1));
        if second.0 != first.0 {
            self.points.push((second.0 as f64, second.1));
        }
        self.block.clear();
    }

    /// The points, the last block included.
    pub fn finish(mut self) -> Vec<(f64, f64)> {
        self.flush();
        self.points
    }
}

/// What the briefing keeps of one policy's path.
#[derive(Debug, Clone, PartialEq)]
pub struct PathDigest {
    /// Policy name.
    pub name: String,
    /// Seasons simulated.
    pub periods: usize,
    /// Periods per thinned block (1: every period kept).
    pub stride: usize,
    /// Market price, thinned.
    pub price: Vec<(f64, f64)>,
    /// Harvest, thinned.
    pub harvest: Vec<(f64, f64)>,
    /// Fiscal cost per season, thinned.
    pub fiscal: Vec<(f64, f64)>,
    /// Running total of the fiscal cost, thinned.
    pub cumulative_fiscal: Vec<(f64, f64)>,
    /// True when the policy never spent or received anything.
    pub no_fiscal: bool,
    /// The first [`COBWEB_SEASONS`] records whole.
    pub first: Vec<PeriodRecord>,
}

struct Digester {
    price: Thinned,
    harvest: Thinned,
    fiscal: Thinned,
    cumulative: Thinned,
    acc: f64,
    no_fiscal: bool,
    first: Vec<PeriodRecord>,
}

impl Digester {
    fn new(periods: usize) -> Digester {
        Digester {
            price: Thinned::new(periods),
            harvest: Thinned::new(periods),
            fiscal: Thinned::new(periods),
            cumulative: Thinned::new(periods),
            acc: 0.0,
            no_fiscal: true,
            first: Vec::with_capacity(COBWEB_SEASONS),
        }
    }

    fn push(&mut self, r: &PeriodRecord) {
        let t = r.period;
        self.price.push(t, r.price);
        self.harvest.push(t, r.harvest);
        self.fiscal.push(t, r.fiscal_cost);
        self.acc += r.fiscal_cost;
        self.cumulative.push(t, self.acc);
        if r.fiscal_cost != 0.0 {
            self.no_fiscal = false;
        }
        if self.first.len() < COBWEB_SEASONS {
            self.first.push(*r);
        }
    }

    fn finish(self, name: &str, periods: usize) -> PathDigest {
        PathDigest {
            name: name.to_string(),
            periods,
            stride: self.price.stride,
            price: self.price.finish(),
            harvest: self.harvest.finish(),
            fiscal: self.fiscal.finish(),
            cumulative_fiscal: self.cumulative.finish(),
            no_fiscal: self.no_fiscal,
            first: self.first,
        }
    }
}

/// A path already held whole (e.g. `run`'s), digested the same way.
pub fn digest_records(name: &str, records: &[PeriodRecord]) -> PathDigest {
    let mut d = Digester::new(records.len());
    for r in records {
        d.push(r);
    }
    d.finish(name, records.len())
}

/// Why a path could not be simulated.
#[derive(Debug, thiserror::Error)]
pub enum PathError {
    /// The period engine diverged.
    #[error("the path under “{policy}” failed: {source}")]
    Diverged {
        /// Policy name.
        policy: String,
        /// The divergence.
        source: Diverged,
    },
    /// The path could not be run for another reason (writing; not expected of a digest).
    #[error("the path under “{policy}” failed: {source}")]
    Run {
        /// Policy name.
        policy: String,
        /// The runner's error.
        source: RunError,
    },
    /// The storage equilibrium could not be solved.
    #[error("the path under “{policy}” failed: {source}")]
    Storage {
        /// Policy name.
        policy: String,
        /// The solver's error.
        source: crate::storage::StorageError,
    },
}

/// The single path of `policy` (the weather of replication 0, as `run` draws it), digested as it is
/// simulated: the records are never all held, except that a market with private storers hands its
/// solved path back whole.
pub fn digest(scenario: &Scenario, policy: &PolicySpec) -> Result<PathDigest, PathError> {
    let mut d = Digester::new(scenario.run.periods);
    let mut periods = 0;
    crate::path::stream_path(scenario, policy, Divergence::AsItComes, |r| {
        d.push(r);
        periods += 1;
        Ok(())
    })
    .map_err(|e| {
        let policy = policy.name.clone();
        match e {
            RunError::Diverged(source) => PathError::Diverged { policy, source },
            RunError::Storage(source) => PathError::Storage { policy, source },
            other => PathError::Run {
                policy,
                source: other,
            },
        }
    })?;
    Ok(d.finish(&policy.name, periods))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Min/max decimation keeps every block's extremes, so the envelope of the thinned series is
    /// the envelope of the data (common practice in plotting long signals, no source).
    #[test]
    fn thinning_keeps_the_extremes_of_each_block() {
        let n = 100_000;
        let mut t = Thinned::new(n);
        let f = |i: usize| ((i as f64) * 0.37).sin() * (1.0 + (i % 977) as f64);
        for i in 1..=n {
            t.push(i, f(i));
        }
        let stride = t.stride;
        let pts = t.finish();
        assert!(pts.len() <= 2 * COLUMNS + 2);
        let max = (1..=n).map(f).fold(f64::MIN, f64::max);
        let min = (1..=n).map(f).fold(f64::MAX, f64::min);
        assert!(pts.iter().any(|p| p.1 == max) && pts.iter().any(|p| p.1 == min));
        // each block's own extremes are present
        for b in 0..n.div_ceil(stride) {
            let lo = b * stride + 1;
            let hi = ((b + 1) * stride).min(n);
            let bmax = (lo..=hi).map(f).fold(f64::MIN, f64::max);
            assert!(pts
                .iter()
                .any(|p| p.1 == bmax && p.0 >= lo as f64 && p.0 <= hi as f64));
        }
        assert!(pts.windows(2).all(|w| w[0].0 < w[1].0), "in period order");
        let mut short = Thinned::new(10);
        for i in 1..=10 {
            short.push(i, i as f64);
        }
        assert_eq!(short.finish().len(), 10, "short series kept whole");
    }
}

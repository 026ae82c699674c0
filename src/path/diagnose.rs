//! Diagnostics in words: what a path tells an analyst about a scheme's defensibility, and the same
//! warnings summarised as shares over a Monte Carlo run.

use crate::engine::PeriodRecord;
use crate::policies::PolicySpec;
use crate::policies::{compile, flags};
use crate::scenario::Scenario;
use crate::stochastic::montecarlo::Count;
use crate::stochastic::PolicyRuns;

/// The rules that cannot be kept up at the free market's steady state, in words (an indefensible
/// floor or ceiling, a permanent payment; each rule words its own). `None` when there is none.
pub fn floor_warning(scenario: &Scenario, policy: &PolicySpec) -> Option<String> {
    let agency = compile(policy).agency;
    let warnings: Vec<String> = policy
        .rules
        .iter()
        .filter_map(|r| r.warning(scenario, &agency))
        .collect();
    (!warnings.is_empty()).then(|| warnings.join("; "))
}

/// The single-path warnings of [`diagnose`] summarised over a Monte Carlo run of `policy`: the
/// indefensible floor, then the shares of seasons (and of replications) with a full store, a
/// binding budget, a stock-out or a failed floor.
pub fn summarise(scenario: &Scenario, policy: &PolicySpec, runs: &PolicyRuns) -> Vec<String> {
    let mut out: Vec<String> = floor_warning(scenario, policy).into_iter().collect();
    let reps = runs.replications.len().max(1) as f64;
    let seasons = reps * scenario.run.periods.max(1) as f64;
    let pct = |x: f64| crate::output::fmt_num(100.0 * x, 1);
    let checks: [(&str, Count); 4] = [
        ("the store was full", Count::CapacityFull),
        ("the purchase budget bound", Count::BudgetBound),
        (
            "stock-out (reserve empty, price above the ceiling)",
            Count::Stockout,
        ),
        (
            "the producer price fell below the purchase floor",
            Count::FloorFailed,
        ),
    ];
    for (what, count) in checks {
        let counts = || runs.replications.counts(count);
        let total: u64 = counts().map(u64::from).sum();
        let any = counts().filter(|n| *n > 0).count();
        if total > 0 {
            out.push(format!(
                "{what} in {} % of seasons ({} % of replications)",
                pct(total as f64 / seasons),
                pct(any as f64 / reps)
            ));
        }
    }
    out
}

/// What [`diagnose`] needs from a path, gathered period by period (so a long path can be streamed
/// without keeping its records): for each event, its first period and how many periods had it.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PathTally {
    /// The store was full (first period, periods).
    pub capacity_full: Option<(usize, usize)>,
    /// The purchase budget bound.
    pub budget_bound: Option<(usize, usize)>,
    /// The price was above the ceiling with no stock.
    pub stockout: Option<(usize, usize)>,
}

impl PathTally {
    /// Adds one period.
    pub fn add(&mut self, r: &PeriodRecord) {
        let bump = |slot: &mut Option<(usize, usize)>, hit: bool| {
            if hit {
                let e = slot.get_or_insert((r.period, 0));
                e.1 += 1;
            }
        };
        bump(&mut self.capacity_full, r.flags & flags::CAPACITY_FULL != 0);
        bump(&mut self.budget_bound, r.flags & flags::BUDGET_BOUND != 0);
        bump(&mut self.stockout, r.stockout);
    }
}

/// Sentences about the scheme on this path: an indefensible floor (with the stock growth per period
/// and when capacity or budget runs out), stock-outs, and floors lost to a full store.
pub fn diagnose(scenario: &Scenario, policy: &PolicySpec, records: &[PeriodRecord]) -> Vec<String> {
    let mut tally = PathTally::default();
    records.iter().for_each(|r| tally.add(r));
    diagnose_tally(scenario, policy, &tally)
}

/// [`diagnose`] from a [`PathTally`].
pub fn diagnose_tally(scenario: &Scenario, policy: &PolicySpec, tally: &PathTally) -> Vec<String> {
    let mut out: Vec<String> = floor_warning(scenario, policy).into_iter().collect();
    if let Some((t, n)) = tally.capacity_full {
        out.push(format!(
            "the store was full from period {t} ({n} periods in all): the agency could not buy all it should, and the price fell below its floor or band"
        ));
    }
    if let Some((t, n)) = tally.budget_bound {
        out.push(format!(
            "the purchase budget ran out in period {t} ({n} periods in all): purchases were cut to the budget"
        ));
    }
    if let Some((t, n)) = tally.stockout {
        out.push(format!(
            "stock-out: the reserve was empty while the price was above the ceiling, first in period {t} ({n} periods in all); the ceiling was lost"
        ));
    }
    out
}

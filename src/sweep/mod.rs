//! Stability over a grid of one or two file keys, and for one key the long-run prices (bifurcation
//! data) with the largest Lyapunov exponent.
//!
//! Grid points are computed in parallel (rayon) and collected in grid order, so the output does not
//! depend on the number of threads. A grid point whose files do not validate (a value out of range,
//! curves that no longer cross) is kept as an *invalid* point with the validation message; an
//! unknown key, a key that cannot take a number, or a key none of whose values validates fails the
//! whole sweep.

pub mod apply;
pub mod grid;
pub mod longrun;
pub mod outcomes;
mod render;

use rayon::prelude::*;

use crate::scenario::InputError;
use crate::stability::{self, Verdict};

pub use apply::{Base, Target};
pub use grid::{parse_vary, Axis};
pub use longrun::{LongRunOrbit, Orbit};
pub use render::render;

/// Why a sweep could not be run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SweepError {
    /// A malformed `--vary`.
    #[error("--vary {spec}: {reason}")]
    BadVary {
        /// The argument as given.
        spec: String,
        /// What is wrong.
        reason: String,
    },
    /// Wrong number of axes, or `--long-run` with two.
    #[error("{0}")]
    Usage(String),
    /// The files themselves do not validate.
    #[error("{0}")]
    Input(InputError),
    /// The key itself is wrong (unknown, or the file does not take a number there).
    #[error("--vary {key}: {problem}")]
    Key {
        /// The varied key.
        key: String,
        /// The validation error.
        problem: InputError,
    },
}

/// The result at one grid point.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// The value of each varied key, in `--vary` order.
    pub values: Vec<f64>,
    /// Spectral radius and verdict, or why the point is invalid.
    pub outcome: Result<(f64, Verdict), String>,
    /// The long run (one key with `--long-run` only).
    pub long_run: Option<LongRunOrbit>,
}

/// Long-run settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LongRunSpec {
    /// Prices kept at the end of each run.
    pub keep: usize,
    /// Total periods simulated (≥ keep).
    pub periods: usize,
}

/// Most grid points in one sweep.
pub const MAX_POINTS: usize = 4_000_000;

/// Most long-run rows (kept prices × grid values) in one sweep.
pub const MAX_LONG_RUN_ROWS: usize = 10_000_000;

/// Relative displacement of the starting price from the steady state P* for a long run that would
/// otherwise start at rest — the market file gives no `initial_price`/`price_history`, or gives
/// P* itself (within 1e-9 relative): such a run starts from P*·(1 + 1e-3), since a run at rest
/// would stay there and show an unstable market as settled.
pub const REST_PERTURBATION: f64 = 1e-3;

/// True when every starting price (and every value that sets the rule's state before period 1, e.g.
/// an initial expected price) is the steady-state price `p_star` within 1e-9 relative.
fn starts_at_rest(s: &crate::scenario::Scenario, policy: &crate::policies::PolicySpec) -> bool {
    let p_star = s.steady.price;
    let at = |p: f64| (p - p_star).abs() <= 1e-9 * p_star;
    let rule = policy.expectations.unwrap_or(s.expectations);
    s.run.price_history.iter().all(|p| at(*p)) && rule.starting_values().all(at)
}

fn is_key_error(e: &InputError) -> bool {
    matches!(e, InputError::UnknownKey { .. } | InputError::Syntax { .. })
}

/// Runs the sweep over `axes` (one or two) from `base`.
pub fn sweep(
    base: &Base,
    axes: &[Axis],
    long_run: Option<LongRunSpec>,
) -> Result<Vec<Point>, SweepError> {
    if axes.is_empty() || axes.len() > 2 {
        return Err(SweepError::Usage(format!(
            "sweep takes one or two --vary keys, got {}",
            axes.len()
        )));
    }
    if long_run.is_some() && axes.len() != 1 {
        return Err(SweepError::Usage(
            "--long-run needs exactly one --vary key (bifurcation data are along one parameter)"
                .into(),
        ));
    }
    let total: usize = axes.iter().map(|a| a.values.len()).product();
    if total > MAX_POINTS {
        return Err(SweepError::Usage(format!(
            "the grid has {total} points; at most {MAX_POINTS} (use fewer STEPS)"
        )));
    }
    if let Some(lr) = long_run {
        if lr.keep.saturating_mul(total) > MAX_LONG_RUN_ROWS {
            return Err(SweepError::Usage(format!(
                "--long-run {} over {total} values would write {} rows; at most {MAX_LONG_RUN_ROWS}",
                lr.keep,
                lr.keep.saturating_mul(total)
            )));
        }
    }
    if axes.len() == 2 && axes[0].key == axes[1].key {
        return Err(SweepError::Usage(format!(
            "--vary {} given twice",
            axes[0].key
        )));
    }
    // the base files must be valid themselves
    let (s0, p0) = base.validate(&[]).map_err(SweepError::Input)?;

    let base_parts = apply::Parts::new(&s0, &p0);
    // every value of every axis validated once
    let mut per_axis = Vec::with_capacity(axes.len());
    for axis in axes {
        let validated: Vec<_> = axis
            .values
            .par_iter()
            .map(|v| base.validate(&[(axis.key.as_str(), *v)]))
            .collect();
        let all_bad = validated.iter().all(|r| r.is_err());
        if let Some(Err(e)) = validated
            .iter()
            .find(|r| all_bad || matches!(r, Err(e) if is_key_error(e)))
        {
            return Err(SweepError::Key {
                key: axis.key.clone(),
                problem: e.clone(),
            });
        }
        per_axis.push(validated);
    }
    let same_section = axes.len() == 2 && {
        let sec = |k: &str| {
            (
                base.target(k),
                k.split('.').next().unwrap_or("").to_string(),
            )
        };
        sec(&axes[0].key) == sec(&axes[1].key)
    };
    let analyse =
        |setup: &stability::Setup| stability::radius_and_verdict(setup).map_err(|e| e.to_string());
    if axes.len() == 1 {
        let axis = &axes[0];
        let points = axis
            .values
            .par_iter()
            .zip(per_axis[0].par_iter())
            .map(|(v, validated)| match validated {
                Err(e) => Point {
                    values: vec![*v],
                    outcome: Err(e.to_string()),
                    long_run: None,
                },
                Ok((s, p)) => {
                    let outcome = analyse(&stability::Setup::new(s, p));
                    let long_run = long_run.map(|lr| {
                        let mut s = s.clone();
                        if !base.has_initial_price() || starts_at_rest(&s, p) {
                            let p0 = s.steady.price * (1.0 + REST_PERTURBATION);
                            s.run.initial_price = p0;
                            s.run.price_history = vec![p0];
                            s.expectations = s.expectations.restarted();
                        }
                        longrun::long_run(&s, p, lr.periods, lr.keep)
                    });
                    Point {
                        values: vec![*v],
                        outcome,
                        long_run,
                    }
                }
            })
            .collect();
        return Ok(points);
    }
    let (a, b) = (&axes[0], &axes[1]);
    let cells: Vec<(usize, usize)> = (0..a.values.len())
        .flat_map(|i| (0..b.values.len()).map(move |j| (i, j)))
        .collect();
    let points = cells
        .par_iter()
        .map(|&(i, j)| {
            let values = vec![a.values[i], b.values[j]];
            let outcome = if same_section {
                base.validate(&[(a.key.as_str(), a.values[i]), (b.key.as_str(), b.values[j])])
                    .map_err(|e| e.to_string())
                    .and_then(|(s, p)| analyse(&stability::Setup::new(&s, &p)))
            } else {
                match (&per_axis[0][i], &per_axis[1][j]) {
                    (Err(e), _) | (_, Err(e)) => Err(e.to_string()),
                    (Ok((sa, pa)), Ok((sb, pb))) => {
                        let mut parts = base_parts.clone();
                        parts.patch(&apply::component(base, &a.key, sa, pa));
                        parts.patch(&apply::component(base, &b.key, sb, pb));
                        let setup = parts.resolved();
                        if let Err(e) = apply::policy_fits_market(&s0, &p0, &setup) {
                            Err(e.to_string())
                        } else if crate::curves::steady_state(&setup.demand, &setup.supply).is_none() {
                            Err(format!(
                                "{}: supply and demand do not cross at a positive price and quantity at {} = {}, {} = {}",
                                base.market_file, a.key, a.values[i], b.key, b.values[j]
                            ))
                        } else {
                            analyse(&setup)
                        }
                    }
                }
            };
            Point {
                values,
                outcome,
                long_run: None,
            }
        })
        .collect();
    Ok(points)
}

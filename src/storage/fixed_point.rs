//! The one fixed-point driver of the storage solves: the one-state iteration (`solve::iterate`) and
//! the two-state one (`public_solve::iterate`) each write only their step — the next price rules from
//! the current ones and the largest change between them, relative to P\* — and share here the
//! stopping rule (change below the tolerance), the iteration count (per solve, and summed over the
//! solves a refinement or grid extension chains), the progress report of every iteration, and the
//! final check of the Euler residual against the limit that applies. Nothing here knows what a rule
//! is.

use super::progress::{report, ProgressEvent};
use super::solve::SolveOptions;
use super::StorageError;

/// Where a converged iteration stopped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Converged {
    /// Iterations taken (the first is 1).
    pub iterations: usize,
    /// The last change, below the tolerance.
    pub change: f64,
}

/// Runs `step` — one iteration, given its number (from 1): it computes the next rules from the
/// current ones and returns the largest change between them relative to P\* — until the change is
/// below `o.tolerance`, reporting every iteration (`points`: the size of the grid). After
/// `o.max_iterations` iterations without that, [`StorageError::NotConverged`] with the last change.
/// The stopping rule never accepts an iterate whose change is NaN or infinite (a set of grid points
/// where storers hold stock that keeps changing).
pub fn iterate<F: FnMut(usize) -> f64>(
    o: &SolveOptions,
    points: usize,
    mut step: F,
) -> Result<Converged, StorageError> {
    let mut change = f64::INFINITY;
    for it in 1..=o.max_iterations {
        change = step(it);
        report(ProgressEvent::Iteration {
            iteration: it,
            change,
            tolerance: o.tolerance,
            points,
        });
        if change < o.tolerance {
            return Ok(Converged {
                iterations: it,
                change,
            });
        }
    }
    Err(StorageError::NotConverged {
        iterations: o.max_iterations,
        change,
    })
}

/// A solution that counts the iterations it took.
pub trait Iterated {
    /// Its iteration count.
    fn iterations_mut(&mut self) -> &mut usize;
}

/// `sol`, solved after `earlier` iterations of the solves it continues (a refinement round or a
/// grid extension starts from the rules they ended with): its count becomes the total.
pub fn after<T: Iterated>(earlier: usize, mut sol: T) -> T {
    *sol.iterations_mut() += earlier;
    sol
}

/// The check every solve ends with: the largest Euler residual measured over the states the
/// indicator path reaches must be at most `limit` (a NaN residual fails too); otherwise
/// [`StorageError::Inaccurate`] with the residual and the iterations taken.
pub fn accept(residual: f64, limit: f64, iterations: usize) -> Result<(), StorageError> {
    if residual.is_nan() || residual > limit {
        return Err(StorageError::Inaccurate {
            residual,
            iterations,
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn options(max_iterations: usize) -> SolveOptions {
        SolveOptions {
            max_iterations,
            tolerance: 1e-3,
            ..SolveOptions::default()
        }
    }

    #[test]
    fn stops_at_the_first_change_below_the_tolerance() {
        // a contraction with factor ½ from change 1: 2^−k < 1e−3 first at k = 10 (derived)
        let out = iterate(&options(100), 1, |it| 0.5_f64.powi(it as i32 - 1)).unwrap();
        assert_eq!(out.iterations, 11);
        assert_eq!(out.change, 0.5_f64.powi(10));
    }

    #[test]
    fn never_accepts_an_unconverged_iterate() {
        for bad in [f64::NAN, f64::INFINITY, 1e-3] {
            let err = iterate(&options(5), 1, |_| bad).unwrap_err();
            assert!(
                matches!(err, StorageError::NotConverged { iterations: 5, .. }),
                "{err}"
            );
        }
    }

    #[test]
    fn counts_iterations_over_chained_solves_and_checks_the_residual() {
        struct S(usize);
        impl Iterated for S {
            fn iterations_mut(&mut self) -> &mut usize {
                &mut self.0
            }
        }
        assert_eq!(after(30, S(12)).0, 42);
        assert!(accept(1e-7, 1e-6, 3).is_ok());
        assert!(accept(1e-6, 1e-6, 3).is_ok());
        for r in [2e-6, f64::NAN] {
            let err = accept(r, 1e-6, 3).unwrap_err();
            assert!(
                matches!(err, StorageError::Inaccurate { iterations: 3, .. }),
                "{err}"
            );
        }
    }
}

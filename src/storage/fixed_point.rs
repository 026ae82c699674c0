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

/// Anderson mixing of a fixed-point iteration u ↦ F(u) (Anderson 1965; Walker and Ni 2011,
/// "Anderson acceleration for fixed-point iterations", SIAM J. Numer. Anal. 49, Algorithm AA with
/// mixing 1): the next iterate is F(u_k) − ΔG·γ, with γ the least-squares solution of
/// ΔF·γ ≈ f_k over the last `depth` differences of the residuals f_i = F(u_i) − u_i (ΔF) and of the
/// images F(u_i) (ΔG). It only proposes where to evaluate the map next: whether an iterate is
/// accepted is still decided by the plain change |F(u_k) − u_k| ([`iterate`]). Entries that are
/// NaN (points where nobody stores) are passed through unmixed; when they change place, or the
/// residual grows, the history is dropped and the plain step taken (restart).
#[derive(Debug, Clone, Default)]
pub struct Anderson {
    depth: usize,
    /// Last residual f and image F(u).
    last: Option<(Vec<f64>, Vec<f64>)>,
    /// Columns (Δf, ΔG), oldest first.
    history: Vec<(Vec<f64>, Vec<f64>)>,
}

impl Anderson {
    /// Mixing over the last `depth` steps (0: the plain iteration).
    pub fn new(depth: usize) -> Anderson {
        Anderson {
            depth,
            ..Anderson::default()
        }
    }

    /// The next iterate after `u`, whose image under the map is `image`.
    pub fn next(&mut self, u: &[f64], image: &[f64]) -> Vec<f64> {
        let f: Vec<f64> = image.iter().zip(u).map(|(g, u)| g - u).collect();
        let norm = |v: &[f64]| {
            v.iter()
                .filter(|x| x.is_finite())
                .fold(0.0_f64, |a, x| a.max(x.abs()))
        };
        if self.depth == 0 {
            return image.to_vec();
        }
        let mut restart = true;
        if let Some((f0, g0)) = self.last.take() {
            let same = f0.len() == f.len()
                && f0
                    .iter()
                    .zip(&f)
                    .all(|(a, b)| a.is_finite() == b.is_finite());
            if same && norm(&f) <= norm(&f0) {
                restart = false;
                let df: Vec<f64> = f.iter().zip(&f0).map(|(a, b)| a - b).collect();
                let dg: Vec<f64> = image.iter().zip(&g0).map(|(a, b)| a - b).collect();
                self.history.push((df, dg));
                if self.history.len() > self.depth {
                    self.history.remove(0);
                }
            }
        }
        if restart {
            self.history.clear();
        }
        self.last = Some((f.clone(), image.to_vec()));
        if self.history.is_empty() {
            return image.to_vec();
        }
        // least squares over the finite entries (SVD: the columns may be nearly dependent)
        let rows: Vec<usize> = (0..f.len()).filter(|&i| f[i].is_finite()).collect();
        let k = self.history.len();
        let a = nalgebra::DMatrix::from_fn(rows.len(), k, |r, c| self.history[c].0[rows[r]]);
        let b = nalgebra::DVector::from_fn(rows.len(), |r, _| f[rows[r]]);
        let svd = a.svd(true, true);
        let eps = 1e-12 * svd.singular_values.max();
        let Ok(gamma) = svd.solve(&b, eps) else {
            self.history.clear();
            return image.to_vec();
        };
        let mut out = image.to_vec();
        for (c, (_, dg)) in self.history.iter().enumerate() {
            for &i in &rows {
                out[i] -= gamma[c] * dg[i];
            }
        }
        if out.iter().any(|x| x.is_infinite()) {
            self.history.clear();
            return image.to_vec();
        }
        out
    }
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
    fn anderson_mixing_solves_a_linear_fixed_point_in_few_steps() {
        // u ↦ A·u + b with A = diag(0.9, 0.5, −0.3) rotated: fixed point u* = (I − A)⁻¹ b. On a
        // linear map Anderson mixing without truncation is essentially GMRES (Walker and Ni 2011,
        // section 2, from memory), which ends in at most n = 3 steps in exact arithmetic; the plain
        // iteration needs ln(1e-10)/ln(0.9) ≈ 219 steps for 1e-10
        let (c, s) = (0.6_f64, 0.8_f64);
        let q = [[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]];
        let d = [0.9, 0.5, -0.3];
        // A = Q·D·Qᵀ
        let a = |i: usize, j: usize| (0..3).map(|k| q[i][k] * d[k] * q[j][k]).sum::<f64>();
        let b = [1.0, -2.0, 0.5];
        let map = |u: &[f64]| -> Vec<f64> {
            (0..3)
                .map(|i| (0..3).map(|j| a(i, j) * u[j]).sum::<f64>() + b[i])
                .collect()
        };
        // u* in the eigenbasis: (Qᵀb)_k / (1 − d_k)
        let qb: Vec<f64> = (0..3)
            .map(|k| (0..3).map(|i| q[i][k] * b[i]).sum::<f64>() / (1.0 - d[k]))
            .collect();
        let star: Vec<f64> = (0..3)
            .map(|i| (0..3).map(|k| q[i][k] * qb[k]).sum())
            .collect();
        let mut mixer = Anderson::new(3);
        let mut u = vec![0.0; 3];
        for _ in 0..6 {
            let image = map(&u);
            u = mixer.next(&u, &image);
        }
        let err = u
            .iter()
            .zip(&star)
            .map(|(x, y)| (x - y).abs())
            .fold(0.0, f64::max);
        assert!(err < 1e-10, "{u:?} vs {star:?}");
        // depth 0 is the plain iteration
        let mut plain = Anderson::new(0);
        let u0 = vec![0.0; 3];
        assert_eq!(plain.next(&u0, &map(&u0)), map(&u0));
    }

    #[test]
    fn anderson_mixing_passes_cut_points_through_and_restarts_when_they_move() {
        let mut mixer = Anderson::new(2);
        let nan = f64::NAN;
        let _ = mixer.next(&[1.0, 2.0, nan], &[1.5, 2.5, nan]);
        let out = mixer.next(&[1.5, 2.5, nan], &[1.7, 2.6, nan]);
        assert!(out[2].is_nan() && out[0].is_finite() && out[1].is_finite());
        // a point cut off where it was not: history dropped, the plain image returned
        let image = [1.8, nan, nan];
        let out = mixer.next(&[1.7, 2.6, nan], &image);
        assert!(out[0] == 1.8 && out[1].is_nan() && out[2].is_nan());
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

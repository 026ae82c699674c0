//! Eigenvalues of small real matrices, complex ones included, and the numbers read off them
//! (spectral radius, verdict, oscillation, period, half-life).
//!
//! nalgebra's plain `complex_eigenvalues()` iterates without limit and can hang (it did on a zero
//! 3 × 3 matrix), so the real Schur form is computed with `Schur::try_new` and an iteration cap. A
//! triangular matrix (the zero matrix, the nilpotent shift of a pinned price) is answered directly
//! from its diagonal; when the Schur iteration does not
//! converge, the roots of the characteristic polynomial (Faddeev–LeVerrier coefficients,
//! Durand–Kerner iteration) are used instead.

use nalgebra::{DMatrix, Schur};

use super::{Eigenvalue, Verdict};

pub use crate::regime::NEUTRAL_TOLERANCE;

/// Iteration cap of the Schur decomposition.
const SCHUR_MAX_ITER: usize = 10_000;

impl Eigenvalue {
    /// |λ|.
    pub fn modulus(&self) -> f64 {
        self.re.hypot(self.im)
    }
    /// arg λ in (−π, π].
    pub fn arg(&self) -> f64 {
        self.im.atan2(self.re)
    }
}

/// All eigenvalues of the square matrix `m`, largest modulus first (ties: larger imaginary part first).
pub fn eigenvalues(m: &DMatrix<f64>) -> Vec<Eigenvalue> {
    let n = m.nrows();
    let mut out: Vec<Eigenvalue> = if n == 0 {
        Vec::new()
    } else if n == 1 {
        vec![Eigenvalue {
            re: m[(0, 0)],
            im: 0.0,
        }]
    } else if triangular(m) {
        // exact: the diagonal (covers the zero matrix and the nilpotent shift of a pinned price,
        // where an iterative method would return round-off instead of zeros)
        (0..n)
            .map(|i| Eigenvalue {
                re: m[(i, i)],
                im: 0.0,
            })
            .collect()
    } else {
        match Schur::try_new(m.clone(), f64::EPSILON, SCHUR_MAX_ITER) {
            Some(s) => s
                .complex_eigenvalues()
                .iter()
                .map(|z| Eigenvalue { re: z.re, im: z.im })
                .collect(),
            None => polynomial_roots(&characteristic_polynomial(m)),
        }
    };
    for e in &mut out {
        // clean signed zeros and round-off imaginary parts of real eigenvalues
        if e.im.abs() <= 1e-14 * e.modulus().max(1e-300) {
            e.im = 0.0;
        }
        if e.re == 0.0 {
            e.re = 0.0;
        }
    }
    out.sort_by(|a, b| {
        b.modulus()
            .total_cmp(&a.modulus())
            .then(b.im.total_cmp(&a.im))
    });
    out
}

/// True when every entry above, or every entry below, the diagonal is zero.
fn triangular(m: &DMatrix<f64>) -> bool {
    let n = m.nrows();
    let upper_zero = (0..n).all(|i| (i + 1..n).all(|j| m[(i, j)] == 0.0));
    let lower_zero = (0..n).all(|i| (0..i).all(|j| m[(i, j)] == 0.0));
    upper_zero || lower_zero
}

/// Coefficients c_0..c_n (c_n = 1) of det(zI − M) = Σ c_k z^k by the Faddeev–LeVerrier recursion.
pub fn characteristic_polynomial(m: &DMatrix<f64>) -> Vec<f64> {
    let n = m.nrows();
    let mut c = vec![0.0; n + 1];
    c[n] = 1.0;
    let mut mk = DMatrix::<f64>::zeros(n, n);
    let id = DMatrix::<f64>::identity(n, n);
    for k in 1..=n {
        mk = m * &mk + &id * c[n + 1 - k];
        let amk = m * &mk;
        c[n - k] = -amk.trace() / k as f64;
    }
    c
}

/// Complex roots of Σ c_k z^k (c_n ≠ 0) by the Durand–Kerner (Weierstrass) iteration.
pub fn polynomial_roots(c: &[f64]) -> Vec<Eigenvalue> {
    let n = c.len().saturating_sub(1);
    if n == 0 {
        return Vec::new();
    }
    let lead = c[n];
    let a: Vec<f64> = c.iter().map(|x| x / lead).collect();
    let eval = |z: (f64, f64)| -> (f64, f64) {
        let mut acc = (0.0, 0.0);
        for k in (0..=n).rev() {
            acc = (acc.0 * z.0 - acc.1 * z.1 + a[k], acc.0 * z.1 + acc.1 * z.0);
        }
        acc
    };
    let bound = 1.0 + a[..n].iter().fold(0.0_f64, |m, x| m.max(x.abs()));
    let seed = (0.4, 0.9);
    let mut z: Vec<(f64, f64)> = (0..n)
        .map(|k| {
            // powers of a non-real seed, scaled to the root bound
            let (mut r, mut i) = (1.0, 0.0);
            for _ in 0..k {
                (r, i) = (r * seed.0 - i * seed.1, r * seed.1 + i * seed.0);
            }
            (r * bound, i * bound)
        })
        .collect();
    for _ in 0..2000 {
        let mut change = 0.0_f64;
        for i in 0..n {
            let mut den = (1.0, 0.0);
            for j in 0..n {
                if i != j {
                    let d = (z[i].0 - z[j].0, z[i].1 - z[j].1);
                    den = (den.0 * d.0 - den.1 * d.1, den.0 * d.1 + den.1 * d.0);
                }
            }
            let num = eval(z[i]);
            let norm = den.0 * den.0 + den.1 * den.1;
            if norm == 0.0 {
                continue;
            }
            let q = (
                (num.0 * den.0 + num.1 * den.1) / norm,
                (num.1 * den.0 - num.0 * den.1) / norm,
            );
            z[i] = (z[i].0 - q.0, z[i].1 - q.1);
            change = change.max(q.0.hypot(q.1));
        }
        if change < 1e-15 * bound {
            break;
        }
    }
    z.into_iter()
        .map(|(re, im)| Eigenvalue { re, im })
        .collect()
}

/// The largest modulus (0 for no eigenvalues).
pub fn spectral_radius(ev: &[Eigenvalue]) -> f64 {
    ev.iter().map(Eigenvalue::modulus).fold(0.0, f64::max)
}

/// Verdict from a spectral radius with [`NEUTRAL_TOLERANCE`].
pub fn verdict(rho: f64) -> Verdict {
    verdict_within(rho, NEUTRAL_TOLERANCE)
}

/// Verdict from a spectral radius with the neutral band |ρ − 1| ≤ `tolerance`.
pub fn verdict_within(rho: f64, tolerance: f64) -> Verdict {
    if rho < 1.0 - tolerance {
        Verdict::Stable
    } else if rho <= 1.0 + tolerance {
        Verdict::Neutral
    } else {
        Verdict::Unstable
    }
}

/// The neutral band for eigenvalues of a Jacobian known to within `error` (entrywise, absolute):
/// [`NEUTRAL_TOLERANCE`], widened to 1000 × the error bound on ρ when that is larger (an eigenvalue
/// moves by at most ‖ΔJ‖ for a normal matrix; the factor covers the non-normal companion forms).
pub fn tolerance_for(jacobian: &DMatrix<f64>, error: f64) -> f64 {
    let n = jacobian.nrows().max(1) as f64;
    NEUTRAL_TOLERANCE.max(1e3 * n * error)
}

/// The rounding error of an analytic Jacobian: a few ulps of its largest entry (each entry is a
/// product or quotient of closed-form derivatives, a handful of roundings).
pub fn analytic_error(jacobian: &DMatrix<f64>) -> f64 {
    let largest = jacobian.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
    16.0 * f64::EPSILON * largest.max(1.0)
}

/// The dominant eigenvalue: largest modulus; among eigenvalues of (relatively) equal modulus the one
/// with the largest |arg| (so a pair ±r counts as oscillating with period 2).
pub fn dominant(ev: &[Eigenvalue]) -> Option<Eigenvalue> {
    let rho = spectral_radius(ev);
    ev.iter()
        .filter(|e| e.modulus() >= rho * (1.0 - 1e-9))
        .max_by(|a, b| {
            a.arg()
                .abs()
                .total_cmp(&b.arg().abs())
                .then(a.im.total_cmp(&b.im))
        })
        .copied()
}

/// What the dominant eigenvalue says: (oscillating, period, half-life).
/// Period 2π/|arg λ| (2 for a negative real λ, none for a positive real one or ρ = 0); half-life
/// ln 0.5 / ln ρ for ρ < 1 − [`NEUTRAL_TOLERANCE`] (0 when ρ = 0: the deviation vanishes at once),
/// none when ρ is 1 within the neutral band or above.
pub fn read_off(ev: &[Eigenvalue]) -> (bool, Option<f64>, Option<f64>) {
    read_off_within(ev, NEUTRAL_TOLERANCE)
}

/// [`read_off`] with the neutral band |ρ − 1| ≤ `tolerance`.
pub fn read_off_within(ev: &[Eigenvalue], tolerance: f64) -> (bool, Option<f64>, Option<f64>) {
    let rho = spectral_radius(ev);
    let half_life = if rho == 0.0 {
        Some(0.0)
    } else if rho < 1.0 - tolerance {
        Some(0.5_f64.ln() / rho.ln())
    } else {
        None
    };
    let Some(d) = dominant(ev) else {
        return (false, None, half_life);
    };
    if rho == 0.0 {
        return (false, None, half_life);
    }
    let arg = d.arg().abs();
    if d.im == 0.0 && d.re > 0.0 {
        (false, None, half_life)
    } else {
        (true, Some(2.0 * std::f64::consts::PI / arg), half_life)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn zero_matrix_does_not_hang() {
        // the nilpotent case that hangs nalgebra's unlimited iteration (see NOTES.md)
        let m = DMatrix::<f64>::zeros(3, 3);
        let ev = eigenvalues(&m);
        assert_eq!(ev.len(), 3);
        assert!(ev.iter().all(|e| e.modulus() == 0.0));
    }

    #[test]
    fn nilpotent_shift_has_exact_zero_eigenvalues() {
        // a strictly lower-triangular matrix is nilpotent: every eigenvalue is 0 (linear algebra)
        let mut m = DMatrix::<f64>::zeros(4, 4);
        for i in 1..4 {
            m[(i, i - 1)] = 1.0;
        }
        let ev = eigenvalues(&m);
        assert!(ev.iter().all(|e| e.re == 0.0 && e.im == 0.0), "{ev:?}");
        assert_eq!(read_off(&ev), (false, None, Some(0.0)));
    }

    #[test]
    fn rotation_has_complex_pair() {
        // rotation by θ scaled by r has eigenvalues r·e^{±iθ} (linear algebra, any textbook)
        let (r, th) = (0.9_f64, 0.7_f64);
        let m = DMatrix::from_row_slice(
            2,
            2,
            &[r * th.cos(), -r * th.sin(), r * th.sin(), r * th.cos()],
        );
        let ev = eigenvalues(&m);
        assert_relative_eq!(ev[0].modulus(), r, max_relative = 1e-12);
        assert_relative_eq!(ev[0].arg().abs(), th, max_relative = 1e-12);
        let (osc, period, half) = read_off(&ev);
        assert!(osc);
        assert_relative_eq!(
            period.unwrap(),
            2.0 * std::f64::consts::PI / th,
            max_relative = 1e-12
        );
        assert_relative_eq!(half.unwrap(), 0.5_f64.ln() / r.ln(), max_relative = 1e-12);
    }

    #[test]
    fn fallback_roots_match_known_polynomial() {
        // (z − 0.5)(z + 0.25)(z² + 1) expanded by hand: z⁴ − 0.25 z³ + 0.875 z² − 0.25 z − 0.125
        let c = [-0.125, -0.25, 0.875, -0.25, 1.0];
        let roots = polynomial_roots(&c);
        assert_eq!(roots.len(), 4);
        let want = [(-0.25, 0.0), (0.0, -1.0), (0.0, 1.0), (0.5, 0.0)];
        for w in want {
            assert!(
                roots
                    .iter()
                    .any(|r| (r.re - w.0).abs() < 1e-10 && (r.im - w.1).abs() < 1e-10),
                "{w:?} not among {roots:?}"
            );
        }
    }

    #[test]
    fn faddeev_leverrier_matches_trace_and_determinant() {
        // for 2 × 2: det(zI − M) = z² − tr(M) z + det(M) (Cayley–Hamilton)
        let m = DMatrix::from_row_slice(2, 2, &[1.5, -0.3, 0.7, 0.2]);
        let c = characteristic_polynomial(&m);
        assert_relative_eq!(c[1], -(1.5 + 0.2), max_relative = 1e-14);
        assert_relative_eq!(c[0], 1.5 * 0.2 + 0.3 * 0.7, max_relative = 1e-14);
    }

    #[test]
    fn verdict_tolerance_edges() {
        assert_eq!(verdict(1.0 - 2.0 * NEUTRAL_TOLERANCE), Verdict::Stable);
        assert_eq!(verdict(1.0 + 0.5 * NEUTRAL_TOLERANCE), Verdict::Neutral);
        assert_eq!(verdict(1.0 + 2.0 * NEUTRAL_TOLERANCE), Verdict::Unstable);
    }

    #[test]
    fn no_half_life_inside_the_neutral_band() {
        // ρ = 1 − 2e-16 is a unit root within rounding: ln 0.5 / ln ρ would be 3e15 seasons
        let ev = [Eigenvalue {
            re: -(1.0 - 2e-16),
            im: 0.0,
        }];
        assert_eq!(read_off(&ev).2, None);
        let ev = [Eigenvalue { re: 0.5, im: 0.0 }];
        assert_relative_eq!(read_off(&ev).2.unwrap(), 1.0, max_relative = 1e-15);
    }
}

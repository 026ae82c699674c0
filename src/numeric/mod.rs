//! Small numerical helpers shared by the engine and the storage model: a bracketed root finder
//! (Brent's method from the `roots` crate) with automatic bracket expansion, Gauss–Hermite
//! quadrature nodes, monotone cubic interpolation ([`interp`]), and the CPU check the vector
//! copies of the Monte Carlo's loops choose by ([`simd`]).

pub mod exp;
pub mod interp;
pub mod pow;

use nalgebra::{DMatrix, SymmetricEigen};

/// The widest copy of the Monte Carlo's vector loops the CPU runs. Every copy is compiled from the
/// same function (the same operations in the same order, no FMA, no reassociation), so every copy
/// gives the same bits; the wider ones take more lanes an instruction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Simd {
    /// The baseline target (SSE2 on x86-64; any other target).
    Plain,
    /// AVX2: four lanes of `f64` a register.
    Avx2,
    /// AVX-512 (F, BW, DQ, VL): eight lanes of `f64` a register.
    Avx512,
}

impl Simd {
    /// The widest copy this CPU runs, no wider than `self` (a test or a benchmark asks for a
    /// narrower copy this way).
    pub fn at_most(self) -> Simd {
        self.min(simd())
    }
}

/// The widest copy of the vector loops this CPU runs (std caches the feature checks).
pub fn simd() -> Simd {
    #[cfg(target_arch = "x86_64")]
    {
        use std::arch::is_x86_feature_detected as has;
        if has!("avx512f") && has!("avx512bw") && has!("avx512dq") && has!("avx512vl") {
            Simd::Avx512
        } else if has!("avx2") {
            Simd::Avx2
        } else {
            Simd::Plain
        }
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        Simd::Plain
    }
}

/// Defines a function whose body is compiled three times — for the baseline target, for AVX2 and for
/// AVX-512 — and run in the copy a [`Simd`] names: the function takes that `Simd` (one the CPU runs:
/// [`simd`], [`Simd::at_most`]) before the arguments written. One body, so the same operations in
/// the same order in every copy, and so the same bits. Generic parameters go in brackets.
///
/// ```text
/// simd_copies! {
///     /// Docs of the function.
///     #[inline(never)]
///     fn check_all[](model: &Model, n: usize, s: &Scratch) -> bool {
///         /* the loop over the lanes */
///     }
/// }
/// ```
macro_rules! simd_copies {
    (
        $(#[$meta:meta])*
        $vis:vis fn $name:ident [$($gen:tt)*] ($($arg:ident : $ty:ty),* $(,)?) $(-> $ret:ty)?
            $body:block
    ) => {
        $(#[$meta])*
        #[allow(clippy::too_many_arguments)]
        $vis fn $name<$($gen)*>(simd: $crate::numeric::Simd, $($arg: $ty),*) $(-> $ret)? {
            #[inline(always)]
            #[allow(clippy::too_many_arguments)]
            fn body<$($gen)*>($($arg: $ty),*) $(-> $ret)? $body
            #[cfg(target_arch = "x86_64")]
            #[target_feature(enable = "avx2")]
            #[allow(clippy::too_many_arguments)]
            unsafe fn avx2<$($gen)*>($($arg: $ty),*) $(-> $ret)? {
                body($($arg),*)
            }
            #[cfg(target_arch = "x86_64")]
            #[target_feature(enable = "avx512f,avx512bw,avx512dq,avx512vl")]
            #[allow(clippy::too_many_arguments)]
            unsafe fn avx512<$($gen)*>($($arg: $ty),*) $(-> $ret)? {
                body($($arg),*)
            }
            // SAFETY: `simd` names a copy the CPU runs (`numeric::simd`, `Simd::at_most`)
            #[cfg(target_arch = "x86_64")]
            match simd {
                $crate::numeric::Simd::Avx512 => return unsafe { avx512($($arg),*) },
                $crate::numeric::Simd::Avx2 => return unsafe { avx2($($arg),*) },
                $crate::numeric::Simd::Plain => {}
            }
            let _ = simd;
            body($($arg),*)
        }
    };
}
pub(crate) use simd_copies;

/// Finds a root of `f` between `lo` and `hi` (which must bracket a sign change) to absolute tolerance
/// `tol` in x. Returns `None` when the interval does not bracket a root or the search fails.
pub fn brent<F: FnMut(f64) -> f64>(f: F, lo: f64, hi: f64, tol: f64) -> Option<f64> {
    let mut conv = roots::SimpleConvergency {
        eps: tol,
        max_iter: 200,
    };
    roots::find_root_brent(lo, hi, f, &mut conv)
        .ok()
        .filter(|x| x.is_finite())
}

/// Root of a function that is strictly decreasing in `x > 0`, searched outward from `guess > 0` by
/// doubling and halving until the sign changes, then refined by Brent's method.
pub fn root_decreasing<F: FnMut(f64) -> f64>(mut f: F, guess: f64, tol: f64) -> Option<f64> {
    let guess = if guess.is_finite() && guess > 0.0 {
        guess
    } else {
        1.0
    };
    let (mut lo, mut hi) = (guess, guess);
    let mut f_lo = f(lo);
    if f_lo == 0.0 {
        return Some(lo);
    }
    if f_lo > 0.0 {
        // root lies above: expand hi
        let mut f_hi = f_lo;
        for _ in 0..200 {
            hi *= 2.0;
            f_hi = f(hi);
            if f_hi.is_nan() || f_hi <= 0.0 {
                break;
            }
            lo = hi;
        }
        if f_hi > 0.0 || f_hi.is_nan() {
            return None;
        }
    } else {
        for _ in 0..200 {
            lo *= 0.5;
            f_lo = f(lo);
            if f_lo >= 0.0 {
                break;
            }
            hi = lo;
        }
        if f_lo < 0.0 || f_lo.is_nan() {
            return None;
        }
    }
    brent(f, lo, hi, tol)
}

/// The standard deviation σ of ln X for a lognormal X with mean 1 and coefficient of variation
/// `cv`: σ² = ln(1 + cv²) (Aitchison and Brown 1957). Every lognormal factor of the model (yields,
/// the world price) is exp(σ z − σ²/2) with z standard normal.
#[inline]
pub fn lognormal_sigma(cv: f64) -> f64 {
    (1.0 + cv * cv).ln().sqrt()
}

/// Gauss–Hermite rule for the standard normal (probabilists' weight): nodes `z_i` and weights `w_i`
/// with Σ w_i g(z_i) ≈ E[g(Z)], Z ~ N(0, 1). Computed by the Golub–Welsch method (Golub and Welsch
/// 1969): the nodes are the eigenvalues of the symmetric tridiagonal Jacobi matrix with off-diagonal
/// √k, and the weights are the squared first components of its normalised eigenvectors.
pub fn gauss_hermite(n: usize) -> Vec<(f64, f64)> {
    let n = n.max(1);
    if n == 1 {
        return vec![(0.0, 1.0)];
    }
    let mut out = jacobi_rule(n, |k| (k as f64).sqrt());
    // symmetrise to remove rounding asymmetry
    let total: f64 = out.iter().map(|p| p.1).sum();
    for p in &mut out {
        p.1 /= total;
    }
    out
}

/// The Golub–Welsch step shared by the Gaussian rules (Golub and Welsch 1969): the eigenvalues of the
/// symmetric tridiagonal Jacobi matrix of size `n` with zero diagonal and off-diagonal entries
/// `off(k)` (k = 1..n−1), ascending, each with the squared first component of its normalised
/// eigenvector (the weight for a weight function of total mass 1).
pub fn jacobi_rule(n: usize, off: impl Fn(usize) -> f64) -> Vec<(f64, f64)> {
    let mut j = DMatrix::<f64>::zeros(n, n);
    for k in 1..n {
        let o = off(k);
        j[(k - 1, k)] = o;
        j[(k, k - 1)] = o;
    }
    let eig = SymmetricEigen::new(j);
    let mut out: Vec<(f64, f64)> = (0..n)
        .map(|i| {
            let v0 = eig.eigenvectors[(0, i)];
            (eig.eigenvalues[i], v0 * v0)
        })
        .collect();
    out.sort_by(|a, b| a.0.total_cmp(&b.0));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gauss_hermite_integrates_normal_moments() {
        // E[Z^2] = 1, E[Z^4] = 3, E[Z^6] = 15 (moments of the standard normal); an n-point rule is exact
        // for polynomials of degree up to 2n - 1 (Golub and Welsch 1969).
        let rule = gauss_hermite(5);
        let m = |k: i32| rule.iter().map(|(z, w)| w * z.powi(k)).sum::<f64>();
        assert!((m(0) - 1.0).abs() < 1e-14);
        assert!(m(1).abs() < 1e-14);
        assert!((m(2) - 1.0).abs() < 1e-13);
        assert!((m(4) - 3.0).abs() < 1e-12);
        assert!((m(6) - 15.0).abs() < 1e-11);
        // E[exp(Z)] = e^{1/2}
        let rule = gauss_hermite(12);
        let e: f64 = rule.iter().map(|(z, w)| w * z.exp()).sum();
        assert!((e - 0.5f64.exp()).abs() < 1e-10);
    }

    #[test]
    fn root_decreasing_finds_root_on_both_sides_of_guess() {
        let f = |x: f64| 10.0 - x * x; // decreasing for x > 0, root sqrt(10)
        for guess in [0.01, 1.0, 3.0, 100.0] {
            let r = root_decreasing(f, guess, 1e-13).unwrap();
            assert!((r - 10f64.sqrt()).abs() < 1e-10, "guess {guess}: {r}");
        }
    }
}

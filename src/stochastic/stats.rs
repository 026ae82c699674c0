//! Streaming moments and sample quantiles for Monte Carlo summaries.
//!
//! Quantiles are Hyndman and Fan's (1996) type 7 (linear interpolation between order statistics:
//! h = (n − 1)·p, Q(p) = x₍⌊h⌋₎ + (h − ⌊h⌋)(x₍⌊h⌋+1₎ − x₍⌊h⌋₎), the default of R and NumPy). They are
//! found by selection (O(n) per quantile), not by sorting.

use serde::Serialize;

/// Running sums of x − k and (x − k)² around a fixed reference k (close to the mean, so the
/// textbook one-pass variance loses no precision). Sums are added in a fixed order, so results do
/// not depend on the number of threads.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ShiftedSums {
    /// Reference value k.
    pub reference: f64,
    /// Number of values.
    pub count: u64,
    /// Σ (x − k).
    pub sum: f64,
    /// Σ (x − k)².
    pub sum_sq: f64,
}

impl ShiftedSums {
    /// Empty sums around `reference`.
    pub fn new(reference: f64) -> ShiftedSums {
        ShiftedSums {
            reference,
            ..Default::default()
        }
    }

    /// Adds a value.
    #[inline]
    pub fn push(&mut self, x: f64) {
        let d = x - self.reference;
        self.count += 1;
        self.sum += d;
        self.sum_sq += d * d;
    }

    /// Adds the sums of another run with the same reference.
    #[inline]
    pub fn merge(&mut self, other: &ShiftedSums) {
        self.count += other.count;
        self.sum += other.sum;
        self.sum_sq += other.sum_sq;
    }

    /// The mean (0 when empty).
    pub fn mean(&self) -> f64 {
        if self.count == 0 {
            0.0
        } else {
            self.reference + self.sum / self.count as f64
        }
    }

    /// The sample standard deviation (divisor n − 1; 0 with fewer than two values).
    pub fn sd(&self) -> f64 {
        if self.count < 2 {
            return 0.0;
        }
        let n = self.count as f64;
        ((self.sum_sq - self.sum * self.sum / n) / (n - 1.0))
            .max(0.0)
            .sqrt()
    }
}

/// Mean and the 5 %, 50 % and 95 % quantiles of a sample.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Summary {
    /// Arithmetic mean.
    pub mean: f64,
    /// 5 % quantile (type 7).
    pub p05: f64,
    /// Median (type 7).
    pub p50: f64,
    /// 95 % quantile (type 7).
    pub p95: f64,
}

impl Summary {
    /// Summarises `values` (reordered in place). The mean is summed in the given order first.
    /// An empty sample gives zeros.
    pub fn of(values: &mut [f64]) -> Summary {
        if values.is_empty() {
            return Summary::default();
        }
        let mean = values.iter().sum::<f64>() / values.len() as f64;
        let q = quantiles(values, &[0.05, 0.5, 0.95]);
        Summary {
            mean,
            p05: q[0],
            p50: q[1],
            p95: q[2],
        }
    }
}

/// Where the type 7 quantile at probability `p` of `n` values lies (Hyndman and Fan 1996,
/// definition 7): the index k of the lower order statistic and the weight of the next one.
#[inline]
pub(crate) fn type7_position(n: usize, p: f64) -> (usize, f64) {
    let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
    let k = (h.floor() as usize).min(n - 1);
    (k, h - k as f64)
}

/// Type 7 quantiles at probabilities `probs` (ascending, in [0, 1]); `values` is reordered in place.
/// NaN values sort last (they never arise from the engine, which rejects non-finite prices).
pub fn quantiles(values: &mut [f64], probs: &[f64]) -> Vec<f64> {
    let n = values.len();
    if n == 0 {
        return vec![0.0; probs.len()];
    }
    let mut start = 0;
    probs
        .iter()
        .map(|&p| {
            let (k, frac) = type7_position(n, p);
            let k = k.max(start);
            let (_, kth, right) = values[start..].select_nth_unstable_by(k - start, f64::total_cmp);
            let low = *kth;
            let value = if frac > 0.0 && !right.is_empty() {
                let high = right.iter().copied().fold(f64::INFINITY, f64::min);
                low + frac * (high - low)
            } else {
                low
            };
            start = k;
            value
        })
        .collect()
}

/// [`quantiles`] of a sample given as `values` (any order; reordered in place) plus `zeros` values
/// equal to +0 that are not in the slice: the same bits as [`quantiles`] of the whole sample, since
/// a type 7 quantile depends only on the order statistics (under `f64::total_cmp`, where −0 lies
/// below +0).
pub fn quantiles_with_zeros(values: &mut [f64], zeros: usize, probs: &[f64]) -> Vec<f64> {
    if zeros == 0 {
        return quantiles(values, probs);
    }
    // the values below +0 to the front
    let mut below = 0;
    for i in 0..values.len() {
        if values[i].total_cmp(&0.0).is_lt() {
            values.swap(i, below);
            below += 1;
        }
    }
    let n = values.len() + zeros;
    let (lo, hi) = values.split_at_mut(below);
    let mut kth = |k: usize| -> f64 {
        if k < lo.len() {
            *lo.select_nth_unstable_by(k, f64::total_cmp).1
        } else if k < lo.len() + zeros {
            0.0
        } else {
            *hi.select_nth_unstable_by(k - lo.len() - zeros, f64::total_cmp)
                .1
        }
    };
    probs
        .iter()
        .map(|&p| {
            let (k, frac) = type7_position(n, p);
            let low = kth(k);
            if frac > 0.0 && k + 1 < n {
                let high = kth(k + 1);
                low + frac * (high - low)
            } else {
                low
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn type7_matches_hand_values() {
        // R: quantile(c(1,2,3,4,5,6,7,8,9,10), c(.05,.5,.95), type = 7) = 1.45, 5.5, 9.55
        // (Hyndman and Fan 1996, definition 7; values worked by hand)
        let mut v: Vec<f64> = (1..=10).rev().map(f64::from).collect();
        let q = quantiles(&mut v, &[0.05, 0.5, 0.95]);
        assert!((q[0] - 1.45).abs() < 1e-12, "{q:?}");
        assert!((q[1] - 5.5).abs() < 1e-12);
        assert!((q[2] - 9.55).abs() < 1e-12);
    }

    #[test]
    fn selection_agrees_with_sorting() {
        let mut x = 0.123_f64;
        let mut v: Vec<f64> = (0..997)
            .map(|_| {
                x = (x * 3.9 * (1.0 - x)).clamp(1e-6, 1.0 - 1e-6);
                x
            })
            .collect();
        let mut sorted = v.clone();
        sorted.sort_by(f64::total_cmp);
        let probs = [0.0, 0.05, 0.25, 0.5, 0.95, 1.0];
        let q = quantiles(&mut v, &probs);
        for (p, got) in probs.iter().zip(q) {
            let h = 996.0 * p;
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(996);
            let want = sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]);
            assert!((got - want).abs() < 1e-15, "p={p}: {got} vs {want}");
        }
    }

    #[test]
    fn shifted_sums_give_sample_moments() {
        let mut s = ShiftedSums::new(100.0);
        for x in [98.0, 100.0, 102.0, 104.0] {
            s.push(x);
        }
        // mean 101, sample variance ((9 + 1 + 1 + 9) / 3)
        assert!((s.mean() - 101.0).abs() < 1e-12);
        assert!((s.sd() - (20.0f64 / 3.0).sqrt()).abs() < 1e-12);
    }
    #[test]
    fn zeros_held_apart_give_the_quantiles_of_the_whole_sample() {
        // type 7 (Hyndman and Fan 1996, definition 7) of a sample depends only on its order
        // statistics; here the whole sample, with its +0 values written out, is the reference
        let mut x = 0.377_f64;
        let mut whole: Vec<f64> = (0..1501)
            .map(|i| {
                x = (x * 3.7 * (1.0 - x)).clamp(1e-6, 1.0 - 1e-6);
                match i % 5 {
                    0 | 1 => 0.0,
                    2 => -0.0,
                    3 => x - 0.4,
                    _ => x,
                }
            })
            .collect();
        let mut rest: Vec<f64> = whole.iter().copied().filter(|v| v.to_bits() != 0).collect();
        let zeros = whole.len() - rest.len();
        assert!(zeros > 500);
        let probs = [0.0, 0.05, 0.3, 0.5, 0.95, 0.99, 1.0];
        let want = quantiles(&mut whole, &probs);
        let got = quantiles_with_zeros(&mut rest, zeros, &probs);
        for (a, b) in want.iter().zip(&got) {
            assert_eq!(a.to_bits(), b.to_bits(), "{want:?} vs {got:?}");
        }
        // only zeros, and a single value among zeros
        assert_eq!(quantiles_with_zeros(&mut [], 4, &[0.5]), vec![0.0]);
        let mut one = [3.0];
        let mut whole = [0.0, 0.0, 3.0];
        assert_eq!(
            quantiles_with_zeros(&mut one, 2, &[0.5, 0.95]),
            quantiles(&mut whole, &[0.5, 0.95])
        );
    }
}

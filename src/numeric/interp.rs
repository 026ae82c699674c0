//! Shape-preserving piecewise cubic Hermite interpolation (Fritsch and Carlson 1980).
//!
//! Tangents start from the three-point (parabolic) derivative estimate, which is second-order accurate
//! on an uneven grid, and are then limited so that the interpolant is monotone wherever the data are:
//! zero at a local extremum of the data, and (α² + β² ≤ 9) on every interval (Fritsch and Carlson
//! 1980, section 4). Outside the knots the interpolant extends linearly with the end tangent.

/// A monotone cubic interpolant through strictly increasing knots.
#[derive(Debug, Clone, PartialEq)]
pub struct Monotone {
    xs: Vec<f64>,
    ys: Vec<f64>,
    ms: Vec<f64>,
    /// Index lookup: `start[b]` is the last knot at or before the start of the b-th of equal bins
    /// over [x_0, x_{n−1}], so that finding an interval is a short forward scan.
    start: Vec<u32>,
    /// Bins per unit of x.
    per_unit: f64,
}

impl Monotone {
    /// Builds the interpolant. `xs` must be strictly increasing and as long as `ys` (at least 2).
    pub fn new(xs: Vec<f64>, ys: Vec<f64>) -> Monotone {
        let n = xs.len();
        debug_assert!(n >= 2 && ys.len() == n);
        let h: Vec<f64> = (0..n - 1).map(|k| xs[k + 1] - xs[k]).collect();
        let d: Vec<f64> = (0..n - 1).map(|k| (ys[k + 1] - ys[k]) / h[k]).collect();
        let mut ms = vec![0.0; n];
        if n == 2 {
            ms[0] = d[0];
            ms[1] = d[0];
        } else {
            for k in 1..n - 1 {
                ms[k] = if d[k - 1] * d[k] <= 0.0 {
                    0.0
                } else {
                    (h[k] * d[k - 1] + h[k - 1] * d[k]) / (h[k - 1] + h[k])
                };
            }
            ms[0] = end_tangent(h[0], h[1], d[0], d[1]);
            ms[n - 1] = end_tangent(h[n - 2], h[n - 3], d[n - 2], d[n - 3]);
        }
        for k in 0..n - 1 {
            if d[k] == 0.0 {
                ms[k] = 0.0;
                ms[k + 1] = 0.0;
                continue;
            }
            let a = ms[k] / d[k];
            let b = ms[k + 1] / d[k];
            let s = a * a + b * b;
            if s > 9.0 {
                let t = 3.0 / s.sqrt();
                ms[k] = t * a * d[k];
                ms[k + 1] = t * b * d[k];
            }
        }
        Monotone::hermite(xs, ys, ms)
    }

    /// The piecewise cubic Hermite interpolant with the given values and first derivatives at
    /// strictly increasing knots (at least 2), as given (no limiting).
    pub fn hermite(xs: Vec<f64>, ys: Vec<f64>, ms: Vec<f64>) -> Monotone {
        let n = xs.len();
        debug_assert!(n >= 2 && ys.len() == n && ms.len() == n);
        let bins = 2 * n;
        let per_unit = bins as f64 / (xs[n - 1] - xs[0]);
        let start = (0..bins)
            .map(|b| {
                let at = xs[0] + b as f64 / per_unit;
                (xs.partition_point(|&v| v <= at).clamp(1, n - 1) - 1) as u32
            })
            .collect();
        Monotone {
            xs,
            ys,
            ms,
            start,
            per_unit,
        }
    }

    /// The first derivatives at the knots.
    pub fn tangents(&self) -> &[f64] {
        &self.ms
    }

    /// The interval k with x_k ≤ x < x_{k+1}, for x_0 < x < x_{n−1}.
    #[inline]
    fn interval(&self, x: f64) -> usize {
        let b = (((x - self.xs[0]) * self.per_unit) as usize).min(self.start.len() - 1);
        let mut k = self.start[b] as usize;
        // the bin may start past x by rounding: step back, then forward
        while k > 0 && self.xs[k] > x {
            k -= 1;
        }
        while self.xs[k + 1] <= x {
            k += 1;
        }
        k
    }

    /// The knots.
    pub fn knots(&self) -> &[f64] {
        &self.xs
    }

    /// The values at the knots.
    pub fn values(&self) -> &[f64] {
        &self.ys
    }

    /// Value and first derivative at `x`.
    #[inline]
    pub fn eval(&self, x: f64) -> (f64, f64) {
        let n = self.xs.len();
        if x <= self.xs[0] {
            return (self.ys[0] + self.ms[0] * (x - self.xs[0]), self.ms[0]);
        }
        if x >= self.xs[n - 1] {
            return (
                self.ys[n - 1] + self.ms[n - 1] * (x - self.xs[n - 1]),
                self.ms[n - 1],
            );
        }
        let k = self.interval(x);
        let h = self.xs[k + 1] - self.xs[k];
        let t = (x - self.xs[k]) / h;
        let (y0, y1, m0, m1) = (
            self.ys[k],
            self.ys[k + 1],
            self.ms[k] * h,
            self.ms[k + 1] * h,
        );
        let t2 = t * t;
        let t3 = t2 * t;
        let value = (2.0 * t3 - 3.0 * t2 + 1.0) * y0
            + (t3 - 2.0 * t2 + t) * m0
            + (-2.0 * t3 + 3.0 * t2) * y1
            + (t3 - t2) * m1;
        let deriv = ((6.0 * t2 - 6.0 * t) * y0
            + (3.0 * t2 - 4.0 * t + 1.0) * m0
            + (-6.0 * t2 + 6.0 * t) * y1
            + (3.0 * t2 - 2.0 * t) * m1)
            / h;
        (value, deriv)
    }

    /// Value at `x`.
    #[inline]
    pub fn value(&self, x: f64) -> f64 {
        self.eval(x).0
    }
}

/// One-sided three-point tangent at an end, kept shape-preserving (Fritsch and Carlson 1980; the
/// limiting follows common practice, no source).
fn end_tangent(h0: f64, h1: f64, d0: f64, d1: f64) -> f64 {
    let m = ((2.0 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
    if m * d0 <= 0.0 {
        0.0
    } else if d0 * d1 <= 0.0 && m.abs() > 3.0 * d0.abs() {
        3.0 * d0
    } else {
        m
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn max_error(f: &dyn Fn(f64) -> f64, n: usize) -> f64 {
        let xs: Vec<f64> = (0..n).map(|i| i as f64 / (n - 1) as f64 * 1.9).collect();
        let ys = xs.iter().map(|&x| f(x)).collect();
        let m = Monotone::new(xs, ys);
        (0..1000)
            .map(|i| {
                let x = i as f64 / 999.0 * 1.9;
                (m.value(x) - f(x)).abs()
            })
            .fold(0.0, f64::max)
    }

    #[test]
    fn exact_on_monotone_quadratics_and_third_order_on_smooth_data() {
        // The three-point tangent is the derivative of the interpolating parabola, so a monotone
        // quadratic is reproduced exactly; on smooth data cubic Hermite interpolation with
        // second-order tangents has error O(h^3) (de Boor 1978, ch. IV).
        let quad = |x: f64| 3.0 + 2.0 * x - 0.5 * x * x;
        assert!(max_error(&quad, 20) < 1e-12);
        let (e1, e2) = (max_error(&f64::exp, 20), max_error(&f64::exp, 40));
        assert!(e1 < 1e-3, "{e1}");
        assert!(e2 < e1 / 6.0, "{e1} {e2}");
    }

    #[test]
    fn stays_monotone_on_a_step() {
        // data with a flat part and a jump: the Fritsch–Carlson interpolant must not overshoot
        let xs = vec![0.0, 1.0, 2.0, 3.0, 4.0, 5.0];
        let ys = vec![5.0, 5.0, 5.0, 1.0, 0.9, 0.8];
        let m = Monotone::new(xs, ys);
        let mut prev = f64::INFINITY;
        for i in 0..=500 {
            let v = m.value(i as f64 / 100.0);
            assert!(v <= prev + 1e-12 && (0.8 - 1e-12..=5.0 + 1e-12).contains(&v));
            prev = v;
        }
    }

    #[test]
    fn derivative_matches_finite_difference() {
        let xs: Vec<f64> = (0..30).map(|i| (i as f64 * 0.1).powi(2)).collect();
        let ys: Vec<f64> = xs.iter().map(|x| (-x).exp()).collect();
        let m = Monotone::new(xs, ys);
        for x in [0.05, 0.7, 2.2, 5.0] {
            let h = 1e-6;
            let fd = (m.value(x + h) - m.value(x - h)) / (2.0 * h);
            assert!((m.eval(x).1 - fd).abs() < 1e-6);
        }
    }

    #[test]
    fn interval_lookup_agrees_with_a_binary_search() {
        // uneven knots (quadratic spacing, as the solver's grids), many query points
        let xs: Vec<f64> = (0..57)
            .map(|j| 3.0 + (j as f64 / 56.0).powi(2) * 90.0)
            .collect();
        let ys: Vec<f64> = xs.iter().map(|x| -x.ln()).collect();
        let f = Monotone::new(xs.clone(), ys);
        for i in 1..20_000 {
            let x = 3.0 + 90.0 * i as f64 / 20_000.0;
            let want = xs.partition_point(|&v| v <= x) - 1;
            assert_eq!(f.interval(x), want, "x = {x}");
        }
        for &x in &xs[1..xs.len() - 1] {
            assert_eq!(f.interval(x), xs.partition_point(|&v| v <= x) - 1);
        }
    }
}

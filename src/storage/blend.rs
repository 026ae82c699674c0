//! Interpolation of the two-state price rules across the public-stock grid.
//!
//! Each row m of the solved grid is a price rule of y (what is left to consumers and private storers)
//! at end-of-period public stock G_m. Between rows the price is the cubic Lagrange interpolant in G
//! through four neighbouring rows (three or two on grids that short), with the rows aligned at their
//! stockout points: the blended stockout price p0(G) is the interpolant of the rows' stockout prices,
//! the blended kink is y0(G) = D(p0(G)), inverse demand holds below it and above it the rows are
//! compared at the same distance y − y0 from their own kinks (so the kink moves smoothly with G
//! instead of being smeared over four places). Error O(h⁴) in the public-stock spacing h for
//! smooth rules, against O(h²) for the linear blend used before (measured in docs/storage.md).

use super::market::StorageMarket;
use super::solve::PriceRule;

/// The rows and weights that interpolate at public stock `g` (clamped to the grid): (first row,
/// weights, number of rows used). A level that appears twice on the grid is a barrier: the
/// interpolation uses only the rows on the same side of it as `g` (where the rules bend in G, a
/// stencil across the bend would spread its error over the neighbouring intervals).
#[inline]
pub(crate) fn weights(publics: &[f64], g: f64) -> (usize, [f64; 4], usize) {
    let n = publics.len();
    let g = g.clamp(publics[0], publics[n - 1]);
    let k = publics.partition_point(|&v| v <= g).clamp(1, n - 1) - 1;
    if g == publics[k] {
        return (k, [1.0, 0.0, 0.0, 0.0], 1);
    }
    // the segment between barriers that holds the interval [k, k + 1]
    let mut lo = k;
    while lo > 0 && publics[lo - 1] < publics[lo] && lo + 2 > k {
        lo -= 1;
    }
    let mut hi = k + 1;
    while hi + 1 < n && publics[hi + 1] > publics[hi] && hi < k + 3 {
        hi += 1;
    }
    let cnt = (hi - lo + 1).min(4);
    let start = if cnt == 4 {
        k.saturating_sub(1).clamp(lo, hi - 3)
    } else {
        lo
    };
    let mut w = [0.0; 4];
    for (i, wi) in w.iter_mut().enumerate().take(cnt) {
        let mut l = 1.0;
        for j in 0..cnt {
            if j != i {
                l *= (g - publics[start + j]) / (publics[start + i] - publics[start + j]);
            }
        }
        *wi = l;
    }
    (start, w, cnt)
}

/// The stockout price of the rows interpolated at `g` (None when one of them never stores).
pub(crate) fn stockout_price(publics: &[f64], rows: &[PriceRule], g: f64) -> Option<f64> {
    let (s, w, cnt) = weights(publics, g);
    let mut p0 = 0.0;
    for i in 0..cnt {
        p0 += w[i] * rows[s + i].spline.as_ref()?.values()[0];
    }
    Some(p0)
}

/// Stockout points (in y) of the rows interpolated at `g`, as [`row_price`] builds them (∞ where
/// there is none).
pub(crate) fn row_kinks(
    m: &StorageMarket,
    publics: &[f64],
    rows: &[PriceRule],
    g: f64,
) -> [f64; 4] {
    let mut out = [f64::INFINITY; 4];
    match stockout_price(publics, rows, g) {
        Some(p0) => out[0] = m.demand.quantity(p0),
        None => {
            let (s, _, cnt) = weights(publics, g);
            for i in 0..cnt {
                out[i] = rows[s + i].kink;
            }
        }
    }
    out
}

/// The interpolation at one public stock, prepared once: rows, weights and the blended kink.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Blend {
    start: usize,
    w: [f64; 4],
    cnt: usize,
    /// Blended stockout point in y (NaN when a row never stores: then the rows are blended at the
    /// same y).
    kink: f64,
}

impl Blend {
    /// Prepares the interpolation at public stock `g`.
    #[inline]
    pub(crate) fn at(m: &StorageMarket, publics: &[f64], rows: &[PriceRule], g: f64) -> Blend {
        let (start, w, cnt) = weights(publics, g);
        let kink = if cnt == 1 {
            f64::NAN
        } else {
            match stockout_price(publics, rows, g) {
                Some(p0) => m.demand.quantity(p0),
                None => f64::NAN,
            }
        };
        Blend {
            start,
            w,
            cnt,
            kink,
        }
    }

    /// The price and dP/dy at `y` (see [`row_price`]).
    #[inline]
    pub(crate) fn price(&self, m: &StorageMarket, rows: &[PriceRule], y: f64) -> (f64, f64) {
        let s = self.start;
        if self.cnt == 1 {
            return rows[s].eval(m, y);
        }
        let (mut p, mut d) = (0.0, 0.0);
        if self.kink.is_nan() {
            for i in 0..self.cnt {
                let (pi, di) = rows[s + i].eval(m, y);
                p += self.w[i] * pi;
                d += self.w[i] * di;
            }
        } else {
            if y <= self.kink {
                return m.inverse_demand(y);
            }
            let off = y - self.kink;
            for i in 0..self.cnt {
                let r = &rows[s + i];
                let (pi, di) = r.eval(m, r.kink + off);
                p += self.w[i] * pi;
                d += self.w[i] * di;
            }
        }
        (p.max(0.0), d)
    }
}

/// The price and dP/dy when `y` is left to consumers and private storers and `g` is the
/// end-of-period public stock (see the module notes).
#[inline]
pub(crate) fn row_price(
    m: &StorageMarket,
    publics: &[f64],
    rows: &[PriceRule],
    y: f64,
    g: f64,
) -> (f64, f64) {
    Blend::at(m, publics, rows, g).price(m, rows, y)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lagrange_weights_reproduce_cubics() {
        // four-point Lagrange interpolation is exact for cubics (any textbook, e.g. Burden and
        // Faires, ch. 3)
        let publics: Vec<f64> = (0..7).map(|i| (i as f64).powf(1.3) * 10.0).collect();
        let f = |g: f64| 2.0 - 0.3 * g + 0.01 * g * g - 1e-4 * g * g * g;
        for g in [0.0, 3.3, 17.0, 40.0, 55.5, publics[6]] {
            let (s, w, cnt) = weights(&publics, g);
            let v: f64 = (0..cnt).map(|i| w[i] * f(publics[s + i])).sum();
            assert!((v - f(g)).abs() < 1e-12, "{g}: {v} {}", f(g));
        }
    }

    #[test]
    fn a_doubled_level_is_a_barrier_of_the_interpolation() {
        // a function that is cubic on each side of 30 with a kink there is reproduced exactly when 30
        // is doubled on the grid (each side interpolated by its own cubic; exactness as above)
        let publics = vec![0.0, 10.0, 20.0, 30.0, 30.0, 40.0, 50.0, 60.0];
        let f = |g: f64| {
            if g <= 30.0 {
                1.0 + 0.2 * g - 1e-3 * g * g * g / 30.0
            } else {
                1.0 + 0.2 * 30.0 - 0.9 - 0.5 * (g - 30.0) + 2e-4 * (g - 30.0).powi(3)
            }
        };
        for g in [3.0, 17.0, 25.0, 29.9, 30.1, 33.0, 47.0, 59.0] {
            let (s, w, cnt) = weights(&publics, g);
            assert!((s..s + cnt).all(|i| (publics[i] <= 30.0) == (g <= 30.0) || publics[i] == 30.0));
            let v: f64 = (0..cnt).map(|i| w[i] * f(publics[s + i])).sum();
            assert!((v - f(g)).abs() < 1e-12, "{g}: {v} {}", f(g));
        }
    }
}

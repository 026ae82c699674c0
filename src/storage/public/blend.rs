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
use crate::numeric::interp::Monotone;

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
    let (start, cnt) = stencil(publics, k);
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

/// The first row and the number of rows of the stencil that interpolates between `publics[k]`
/// and `publics[k + 1]` (at most four, not across a doubled level).
#[inline]
fn stencil(publics: &[f64], k: usize) -> (usize, usize) {
    let n = publics.len();
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
    (start, cnt)
}

/// The stencil of one interval of the public-stock grid, [`publics[k]`, `publics[k + 1]`), with
/// the reciprocal spacings 1/(G_i − G_j) of its levels that the slopes of the Lagrange weights
/// need: what does not change while G stays inside the interval.
#[derive(Debug, Clone, Copy)]
struct Stencil {
    k: usize,
    start: usize,
    cnt: usize,
    inv: [[f64; 4]; 4],
}

impl Stencil {
    /// The stencil of interval `k` of `publics` (at least two levels).
    fn of(publics: &[f64], k: usize) -> Stencil {
        let (start, cnt) = stencil(publics, k);
        let mut inv = [[0.0; 4]; 4];
        for (i, row) in inv.iter_mut().enumerate().take(cnt) {
            for (j, v) in row.iter_mut().enumerate().take(cnt) {
                if j != i {
                    *v = 1.0 / (publics[start + i] - publics[start + j]);
                }
            }
        }
        Stencil { k, start, cnt, inv }
    }

    /// Whether `g` (inside the grid) lies in this stencil's interval, as the search in
    /// [`row_price_dg`] would find it (the last interval holds the top level).
    #[inline]
    fn holds(&self, publics: &[f64], g: f64) -> bool {
        publics[self.k] <= g && (g < publics[self.k + 1] || self.k + 2 == publics.len())
    }

    /// The Lagrange weights at `g` and their derivatives in g.
    #[inline]
    fn weights_and_slopes(&self, publics: &[f64], g: f64) -> ([f64; 4], [f64; 4]) {
        // (unrolled for each stencil size)
        let (s, c) = (self.start, self.cnt);
        match c {
            4 => weights_and_slopes_n::<4>(&publics[s..s + 4], &self.inv, g),
            3 => weights_and_slopes_n::<3>(&publics[s..s + 3], &self.inv, g),
            2 => weights_and_slopes_n::<2>(&publics[s..s + 2], &self.inv, g),
            _ => weights_and_slopes_n::<1>(&publics[s..s + 1], &self.inv, g),
        }
    }
}

/// The stencil last used by [`row_price_dg`], kept by a caller that evaluates it at several
/// public stocks for one state (the budget-bound root's Newton steps mostly stay in one interval).
#[derive(Debug, Default)]
pub(crate) struct StencilCache(std::cell::Cell<Option<Stencil>>);

/// The Lagrange weights at `g` of the `N` levels `at` of one stencil and their derivatives in g,
/// with `inv[i][j]` = 1/(at_i − at_j). Each factor q_ij = (g − at_j)/(at_i − at_j) of the weight
/// l_i = ∏_{j≠i} q_ij is divided once and shared by the weight and its slope
/// dl_i/dg = Σ_{k≠i} 1/(at_i − at_k)·∏_{j≠i,k} q_ij; each product is taken in the order of j (the
/// same operations, in the same order, as the weights written out factor by factor: the same bits).
#[inline]
#[allow(clippy::needless_range_loop)] // (indices as in the formula: q_ij, 1/(at_i − at_k))
fn weights_and_slopes_n<const N: usize>(
    at: &[f64],
    inv: &[[f64; 4]; 4],
    g: f64,
) -> ([f64; 4], [f64; 4]) {
    let at: &[f64; N] = at.try_into().expect("a stencil of N levels");
    let (mut w, mut dw) = ([0.0; 4], [0.0; 4]);
    let mut q = [[0.0; N]; N];
    for i in 0..N {
        for j in 0..N {
            if j != i {
                q[i][j] = (g - at[j]) / (at[i] - at[j]);
            }
        }
    }
    for i in 0..N {
        let mut l = 1.0;
        for j in 0..N {
            if j != i {
                l *= q[i][j];
            }
        }
        w[i] = l;
        // d/dg of the product: one factor differentiated at a time
        let mut dl = 0.0;
        for k in 0..N {
            if k != i {
                let mut t = inv[i][k];
                for j in 0..N {
                    if j != i && j != k {
                        t *= q[i][j];
                    }
                }
                dl += t;
            }
        }
        dw[i] = dl;
    }
    (w, dw)
}

/// The price, dP/dy and dP/dg (at fixed y) when `y` is left to consumers and private storers and
/// `g` is the end-of-period public stock: [`row_price`] with its slope in g, from the derivatives
/// of the Lagrange weights and of the blended kink, D'(p0)·p0'(g). At a level of the grid the
/// slope is the one of the interval above it (the last interval's at the top); beyond the grid,
/// where the rows are clamped, it is 0. The price agrees with [`row_price`] up to rounding.
///
/// `cache` keeps the stencil of the last call: reused while `g` stays in its interval (the same
/// bits as a fresh one; a caller without one passes `&StencilCache::default()`).
pub(crate) fn row_price_dg(
    m: &StorageMarket,
    publics: &[f64],
    rows: &[PriceRule],
    y: f64,
    g: f64,
    cache: &StencilCache,
) -> (f64, f64, f64) {
    let n = publics.len();
    if n < 2 {
        let (p, d) = row_price(m, publics, rows, y, g);
        return (p, d, 0.0);
    }
    let gc = g.clamp(publics[0], publics[n - 1]);
    let st = match cache.0.get() {
        Some(st) if st.holds(publics, gc) => st,
        _ => {
            let k = publics.partition_point(|&v| v <= gc).clamp(1, n - 1) - 1;
            let st = Stencil::of(publics, k);
            cache.0.set(Some(st));
            st
        }
    };
    let (start, cnt) = (st.start, st.cnt);
    let (w, mut dw) = st.weights_and_slopes(publics, gc);
    if gc != g {
        dw = [0.0; 4];
    }
    let rows = &rows[start..start + cnt];
    // the blended stockout price and its slope in g (NaN when a row never stores)
    let (mut p0, mut dp0) = (0.0, 0.0);
    for (i, r) in rows.iter().enumerate() {
        match r.spline.as_ref() {
            Some(s) => {
                p0 += w[i] * s.values()[0];
                dp0 += dw[i] * s.values()[0];
            }
            None => p0 = f64::NAN,
        }
    }
    let (mut p, mut d, mut dg) = (0.0, 0.0, 0.0);
    if p0.is_nan() {
        for (i, r) in rows.iter().enumerate() {
            let (pi, di) = r.eval(m, y);
            p += w[i] * pi;
            d += w[i] * di;
            dg += dw[i] * pi;
        }
    } else {
        let kink = m.demand.quantity(p0);
        if y <= kink {
            let (p, d) = m.inverse_demand(y);
            return (p, d, 0.0);
        }
        let off = y - kink;
        for (i, r) in rows.iter().enumerate() {
            let (pi, di) = r.eval(m, r.kink + off);
            p += w[i] * pi;
            d += w[i] * di;
            dg += dw[i] * pi;
        }
        // the kink moves by D'(p0)·p0'(g), and the rows are read that much further left
        dg -= d * m.demand.slope_at_point(p0, kink) * dp0;
    }
    if m.floor > 0.0 && p <= m.floor * (1.0 + 1e-12) {
        return (m.floor, 0.0, 0.0);
    }
    if p >= m.ceiling * (1.0 - 1e-12) {
        return (m.ceiling, 0.0, 0.0);
    }
    (p.max(0.0), d, dg)
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
            // the blended stockout price, as [`stockout_price`] computes it (same weights)
            let mut p0 = 0.0;
            let mut all = true;
            for i in 0..cnt {
                match rows[start + i].spline.as_ref() {
                    Some(s) => p0 += w[i] * s.values()[0],
                    None => all = false,
                }
            }
            if all {
                m.demand.quantity(p0)
            } else {
                f64::NAN
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
        // exports at export parity, imports at import parity (the rows' weights sum to one only
        // up to rounding)
        if m.floor > 0.0 && p <= m.floor * (1.0 + 1e-12) {
            return (m.floor, 0.0);
        }
        if p >= m.ceiling * (1.0 - 1e-12) {
            return (m.ceiling, 0.0);
        }
        (p.max(0.0), d)
    }
}

/// A [`Blend`] whose rows are summed once, with their weights, into one piecewise cubic of the
/// distance from the blended kink: every row is a cubic between its knots (linear beyond them), so
/// the weighted sum is a cubic between the union of their knots and the Hermite interpolant through
/// its values and slopes there reproduces it (up to rounding). One spline evaluation then replaces
/// one per row; the two-state solve evaluates each blend some ten thousand times per public-stock
/// level and iteration. Only for blends with a kink whose rows are positive and non-increasing;
/// past `reach` (where a row's linear extension reaches zero price) the rows are evaluated again.
#[derive(Debug, Clone)]
pub(crate) struct Merged {
    blend: Blend,
    sum: Monotone,
    reach: f64,
}

impl Merged {
    /// The merged form of `blend` over `rows`, when it applies (see the type notes).
    pub(crate) fn new(rows: &[PriceRule], blend: Blend, floor: f64) -> Option<Merged> {
        if blend.cnt < 2 || !blend.kink.is_finite() {
            return None;
        }
        let s = blend.start;
        let mut offs = vec![0.0];
        let mut reach = f64::INFINITY;
        for r in &rows[s..s + blend.cnt] {
            let sp = r.spline.as_ref()?;
            let (xs, ys, ms) = (sp.knots(), sp.values(), sp.tangents());
            if !r.kink.is_finite() || ys.iter().any(|&v| v <= floor) || ms.iter().any(|&d| d > 0.0)
            {
                return None;
            }
            let n = xs.len();
            if ms[n - 1] < 0.0 {
                // (where it reaches the floor: zero, or export parity)
                reach = reach.min(xs[n - 1] + (ys[n - 1] - floor) / -ms[n - 1] - r.kink);
            }
            offs.extend(xs.iter().map(|&x| x - r.kink).filter(|&u| u > 0.0));
        }
        offs.sort_by(f64::total_cmp);
        offs.dedup();
        if offs.len() < 2 {
            return None;
        }
        let (mut vs, mut ds) = (
            Vec::with_capacity(offs.len()),
            Vec::with_capacity(offs.len()),
        );
        for &u in &offs {
            let (mut p, mut d) = (0.0, 0.0);
            for i in 0..blend.cnt {
                // the spline's own piece from the kink on (at the kink itself the row's eval
                // would give inverse demand's slope)
                let r = &rows[s + i];
                let (pi, di) = r.spline.as_ref()?.eval(r.kink + u);
                p += blend.w[i] * pi;
                d += blend.w[i] * di;
            }
            vs.push(p);
            ds.push(d);
        }
        Some(Merged {
            blend,
            sum: Monotone::hermite(offs, vs, ds),
            reach,
        })
    }

    /// The price and dP/dy at `y`, as [`Blend::price`] gives it.
    #[inline]
    pub(crate) fn price(&self, m: &StorageMarket, rows: &[PriceRule], y: f64) -> (f64, f64) {
        let b = &self.blend;
        if y <= b.kink {
            return m.inverse_demand(y);
        }
        let off = y - b.kink;
        if off >= self.reach {
            return b.price(m, rows, y);
        }
        let (p, d) = self.sum.eval(off);
        if m.floor > 0.0 && p <= m.floor {
            return (m.floor, 0.0);
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

    fn market() -> StorageMarket {
        crate::storage::split::test_market(0.0, 0.0)
    }

    /// Five decreasing price rows (public-stock levels i = 0..5): row i has its kink at `kink(i)`,
    /// `points(i)` knots spread over 300 above it with exponent `power`, and the quadratic price
    /// 230 − `step`·i − 0.3(x − kink) + 2e-4(x − kink)².
    fn test_rows(
        kink: impl Fn(usize) -> f64,
        points: impl Fn(usize) -> usize,
        power: f64,
        step: f64,
    ) -> Vec<PriceRule> {
        (0..5)
            .map(|i| {
                let kink = kink(i);
                let n = points(i);
                let xs: Vec<f64> = (0..n)
                    .map(|j| kink + 300.0 * (j as f64 / (n - 1) as f64).powf(power))
                    .collect();
                let ys: Vec<f64> = xs
                    .iter()
                    .map(|&x| {
                        230.0 - step * i as f64 - 0.3 * (x - kink) + 2e-4 * (x - kink).powi(2)
                    })
                    .collect();
                PriceRule {
                    kink,
                    spline: Some(Monotone::new(xs, ys)),
                }
            })
            .collect()
    }

    #[test]
    fn merged_blend_reproduces_the_row_by_row_blend() {
        // a weighted sum of piecewise cubics is a cubic between the union of their knots, so the
        // Hermite interpolant through its values and slopes there is the same function (any
        // text on piecewise polynomials, e.g. de Boor 1978, ch. IX): the merged blend must agree
        // with the row-by-row blend to rounding, also past the knots and where a row's linear
        // extension would reach zero (it falls back there)
        let m = market();
        let rows = test_rows(|i| 440.0 + 6.0 * i as f64, |i| 9 + 3 * i, 1.7, 2.0);
        let publics = [0.0, 15.0, 30.0, 45.0, 60.0];
        for g in [3.0, 21.7, 44.0, 58.0] {
            let b = Blend::at(&m, &publics, &rows, g);
            let mg = Merged::new(&rows, b, 0.0).expect("rows that store and decrease");
            // (y up to 2000: past every row's knots and past where their extensions reach zero)
            for k in 0..3400 {
                let y = 300.0 + 0.5 * k as f64;
                let (p0, d0) = b.price(&m, &rows, y);
                let (p1, d1) = mg.price(&m, &rows, y);
                assert!(
                    (p0 - p1).abs() <= 1e-11 * p0.abs().max(1.0),
                    "{g} {y}: {p0} {p1}"
                );
                assert!((d0 - d1).abs() <= 1e-10, "{g} {y}: {d0} {d1}");
            }
        }
        // a row that never stores: no merged form
        let mut never = rows.clone();
        never[2] = PriceRule::no_storage();
        assert!(Merged::new(&never, Blend::at(&m, &publics, &never, 25.0), 0.0).is_none());
    }

    #[test]
    fn slope_in_the_public_stock_matches_central_differences() {
        // row_price_dg's dP/dg against central differences of row_price at fixed y (the
        // definition of the derivative; step 1e-5, error O(h²)), away from the levels where the
        // stencil switches; and the price itself as row_price gives it
        let m = market();
        let rows = test_rows(
            |i| 440.0 + 6.0 * i as f64 + 0.5 * (i * i) as f64,
            |_| 12,
            1.5,
            2.5,
        );
        let publics = [0.0, 15.0, 30.0, 45.0, 60.0];
        for g in [3.0, 21.7, 37.0, 52.5] {
            for y in [300.0, 450.0, 470.0, 520.0, 700.0] {
                let (p, d, dg) = row_price_dg(&m, &publics, &rows, y, g, &StencilCache::default());
                let (p0, d0) = row_price(&m, &publics, &rows, y, g);
                assert!((p - p0).abs() <= 1e-11 * p0, "{g} {y}: {p} {p0}");
                assert!((d - d0).abs() <= 1e-11, "{g} {y}: {d} {d0}");
                let h = 1e-5;
                let fd = (row_price(&m, &publics, &rows, y, g + h).0
                    - row_price(&m, &publics, &rows, y, g - h).0)
                    / (2.0 * h);
                assert!(
                    (dg - fd).abs() <= 1e-6 * fd.abs().max(1.0),
                    "{g} {y}: {dg} {fd}"
                );
            }
        }
    }

    #[test]
    fn a_kept_stencil_gives_the_same_bits_as_a_fresh_one() {
        // the stencil kept between calls must not change a result: price, dP/dy and dP/dg bit
        // for bit as with a fresh search, on a grid with a doubled level, at levels, between
        // them, at the top and beyond the grid, in an order that moves between intervals
        let m = market();
        let rows = test_rows(|i| 440.0 + 6.0 * i as f64, |i| 9 + 3 * i, 1.7, 2.0);
        let publics = [0.0, 15.0, 30.0, 30.0, 60.0];
        let kept = StencilCache::default();
        let gs = [
            3.0, 4.0, 15.0, 14.9, 29.99, 30.0, 30.01, 45.0, 60.0, 59.0, 61.0, -1.0, 0.0, 22.0, 60.0,
        ];
        for (n, &g) in gs.iter().enumerate() {
            let y = 450.0 + 7.0 * n as f64;
            let a = row_price_dg(&m, &publics, &rows, y, g, &kept);
            let b = row_price_dg(&m, &publics, &rows, y, g, &StencilCache::default());
            assert_eq!(
                (a.0.to_bits(), a.1.to_bits(), a.2.to_bits()),
                (b.0.to_bits(), b.1.to_bits(), b.2.to_bits()),
                "{g}"
            );
        }
    }

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

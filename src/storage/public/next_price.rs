//! Next period's price in the two-state model as a function of next availability z' at a fixed
//! carried-in public stock g': where it is not smooth, and its expectation by the
//! breakpoint-splitting quadrature of [`super::split`].
//!
//! z' ↦ P'(z', g') is smooth except where the agency's regime changes (the price reaches
//! `buy_below`, `sell_above` or the band's middle at one of the end-of-period public stocks the rule
//! can fix: g', the capacity, 0, the target or rotation stock) and at the stockout kink of the row
//! rule at each of those stocks (private stocks start), plus, for linear demand, where the price
//! reaches zero, and, for planting under a deficiency-payment floor F, where P' = F. All these
//! points are found once per g': the kinks analytically, the others as roots of a decreasing
//! function of z' (safeguarded Newton).

use super::agency::{decide_knowing, Band, ReleaseInStorage};
use super::blend::{row_kinks, row_price_dg, Blend, Merged};
use super::market::StorageMarket;
use super::solve::PriceRule;
use super::split::{next_nodes, next_nodes_yield};

/// Next period's price at carried-in public stock `gn` under the rows `rows` on `publics`.
pub struct NextPrice<'a> {
    m: &'a StorageMarket,
    band: &'a Band,
    publics: &'a [f64],
    rows: &'a [PriceRule],
    gn: f64,
    /// The interpolation prepared at each public stock the rule can fix.
    fixed: Vec<(f64, Blend)>,
    /// Its merged form where one applies ([`Self::prepared`]; empty otherwise).
    merged: Vec<Option<Merged>>,
}

/// The end-of-period public stocks the agency's rule can fix when it carries in `g` (computed as
/// [`super::agency::decide`] computes them).
fn stocks(band: &Band, g: f64) -> Vec<f64> {
    let cap = band.capacity;
    let mut v = vec![g, cap, 0.0];
    if let Some(gg) = band.release.inner_stock(g, cap) {
        v.push(gg);
    }
    if band.budget.is_finite() && band.buy_below > 0.0 {
        // where the budget runs out while the price is held at buy_below
        let most = g + band.budget / band.buy_below;
        if most < cap {
            v.push(most);
        }
    }
    v
}

/// Root of the decreasing function f on [lo, hi] (f(lo) > 0 ≥ f(hi)): the boundary of {f > 0}, to
/// `tol`. Bisection until the bracket is narrower than `near`, then Newton steps kept inside the
/// bracket (bisection where a step would leave it), so that a far start in a steep, convex region
/// (constant-elasticity demand near zero consumption) cannot stall the search.
pub(crate) fn boundary<F: Fn(f64) -> (f64, f64)>(
    f: F,
    mut lo: f64,
    mut hi: f64,
    tol: f64,
    near: f64,
) -> f64 {
    let mut x = 0.5 * (lo + hi);
    for _ in 0..300 {
        let (v, d) = f(x);
        if v > 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        if hi - lo <= tol {
            break;
        }
        let newton = if hi - lo < near && d < 0.0 && v != 0.0 {
            x - v / d
        } else {
            f64::NAN
        };
        if newton > lo && newton < hi {
            if (newton - x).abs() <= 0.25 * tol {
                return newton;
            }
            x = newton;
        } else {
            x = 0.5 * (lo + hi);
        }
    }
    0.5 * (lo + hi)
}

impl<'a> NextPrice<'a> {
    /// Next period's price at carried-in public stock `gn`.
    pub fn new(
        m: &'a StorageMarket,
        band: &'a Band,
        publics: &'a [f64],
        rows: &'a [PriceRule],
        gn: f64,
    ) -> NextPrice<'a> {
        let fixed = stocks(band, gn)
            .into_iter()
            .map(|gg| (gg, Blend::at(m, publics, rows, gg)))
            .collect();
        NextPrice {
            m,
            band,
            publics,
            rows,
            gn,
            fixed,
            merged: Vec::new(),
        }
    }

    /// [`Self::new`] with every prepared interpolation also summed into one spline
    /// ([`Merged`]): the same prices up to rounding, several times cheaper to evaluate, worth it
    /// when one next-price function serves many expectations (a row of the solve).
    pub fn prepared(
        m: &'a StorageMarket,
        band: &'a Band,
        publics: &'a [f64],
        rows: &'a [PriceRule],
        gn: f64,
    ) -> NextPrice<'a> {
        let mut np = NextPrice::new(m, band, publics, rows, gn);
        np.merged = np
            .fixed
            .iter()
            .map(|&(_, b)| Merged::new(rows, b, m.floor))
            .collect();
        np
    }

    /// The price and dP/dy at `y` of the `i`-th prepared interpolation.
    #[inline]
    fn fixed_price(&self, i: usize, y: f64) -> (f64, f64) {
        match self.merged.get(i) {
            Some(Some(mg)) => mg.price(self.m, self.rows, y),
            _ => self.fixed[i].1.price(self.m, self.rows, y),
        }
    }

    /// The price and dP/dy at `y` when the public stock `gg` is carried out.
    #[inline]
    fn price_at(&self, gg: f64, y: f64) -> (f64, f64) {
        for (i, &(g, _)) in self.fixed.iter().enumerate() {
            if g == gg {
                return self.fixed_price(i, y);
            }
        }
        Blend::at(self.m, self.publics, self.rows, gg).price(self.m, self.rows, y)
    }

    /// Price and dP'/dz' at next availability `z` under the agency's rule.
    #[inline]
    pub fn price(&self, z: f64) -> (f64, f64) {
        let w = z + self.gn;
        let pg = |gg: f64| self.price_at(gg, w - gg);
        // (only a purchase budget needs the slope in G, at stocks of its own)
        let pgd = |gg: f64| {
            let (p, p_y, p_g) = row_price_dg(self.m, self.publics, self.rows, w - gg, gg);
            (p, p_y, p_g - p_y)
        };
        let (p, d, _, _) = decide_knowing(self.band, self.gn, &pg, &pgd);
        (p, d)
    }

    /// The ascending availabilities in (0, `hi`] where P'(·, g') may be non-smooth (see the module
    /// notes).
    pub fn breaks(&self, hi: f64) -> Vec<f64> {
        let m = self.m;
        let b = self.band;
        let lo = 1e-6 * m.q_star;
        let tol = 1e-12 * m.q_star.max(1.0);
        let near = 1e-3 * m.q_star.max(1.0);
        // (the floor: zero, free disposal, or export parity, where exports start)
        let mut levels = vec![b.buy_below, m.floor];
        if b.sell_above.is_finite() {
            levels.push(b.sell_above);
            if let Some(level) = b.release.inner_price(b) {
                levels.push(level);
            }
        }
        if b.budget.is_finite() {
            // a purchase to a fixed stock G costs (G − g')·P: the budget binds where P reaches
            // B / (G − g') (store filling up; target restocking)
            for &(gg, _) in &self.fixed {
                if gg > self.gn {
                    levels.push(b.budget / (gg - self.gn));
                }
            }
        }
        let mut out = Vec::with_capacity(24);
        for (i, &(gg, _)) in self.fixed.iter().enumerate() {
            // the row at gg as a function of z': y = z' + g' − gg
            let shift = self.gn - gg;
            for k in row_kinks(m, self.publics, self.rows, gg) {
                let z = k - shift;
                if z.is_finite() && z > lo && z < hi {
                    out.push(z);
                }
            }
            if m.ceiling.is_finite() {
                // imports start where consumers alone would pay import parity
                let z = m.demand.quantity(m.ceiling) - shift;
                if z > lo && z < hi {
                    out.push(z);
                }
            }
            for &level in &levels {
                let f = |z: f64| {
                    let (p, d) = self.fixed_price(i, z + shift);
                    (p - level, d)
                };
                if f(lo).0 > 0.0 && f(hi).0 <= 0.0 {
                    out.push(boundary(f, lo, hi, tol, near));
                }
            }
        }
        if m.planting_floor > 0.0 {
            let f = |z: f64| {
                let (p, d) = self.price(z);
                (p - m.planting_floor, d)
            };
            if f(lo).0 > 0.0 && f(hi).0 <= 0.0 {
                out.push(boundary(f, lo, hi, tol, near));
            }
        }
        out.sort_by(f64::total_cmp);
        out.dedup_by(|a, b| (*a - *b).abs() <= tol);
        out
    }

    /// (E[max(P', F)], its derivative in q, E[P']) when `carried` private units arrive and `q` is
    /// planted, with F the planting floor (none: the first and last agree), by the
    /// breakpoint-splitting quadrature at the points `breaks` (from [`Self::breaks`]).
    pub fn expect(&self, carried: f64, q: f64, breaks: &[f64]) -> (f64, f64, f64) {
        let floor = self.m.planting_floor;
        let (mut ep, mut de, mut e) = (0.0, 0.0, 0.0);
        if self.m.revenue {
            // on revenue: E[max(P', F)·Y] (E[Y] = 1) and its derivative
            next_nodes_yield(self.m, carried, q, breaks, |z, dz, y, w| {
                let (p, dp) = self.price(z);
                e += w * p;
                let wy = w * y;
                if p > floor {
                    ep += wy * p;
                    de += wy * dp * dz;
                } else {
                    ep += wy * floor;
                }
            });
            return (ep, de, e);
        }
        next_nodes(self.m, carried, q, breaks, |z, dz, w| {
            let (p, dp) = self.price(z);
            e += w * p;
            if p > floor {
                ep += w * p;
                de += w * dp * dz;
            } else {
                ep += w * floor;
            }
        });
        (ep, de, e)
    }
}

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

use super::agency::{decide_knowing, AgencyMode, Band, Decision, ReleaseInStorage};
use super::blend::{row_kinks, row_price_dg, Blend, Merged, StencilCache};
use super::market::StorageMarket;
use super::solve::PriceRule;
use super::split::{next_nodes, next_nodes_yield};

/// What the agency's rule does on one piece of next availability between two neighbouring
/// breakpoints ([`Breaks`]): every regime boundary is a breakpoint, so inside a piece the rule
/// either fixes one of the prepared public stocks, holds the price, or (a purchase budget that
/// binds, a piece where the decision was seen to change) is decided at every point.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Piece {
    /// The price of the `i`-th prepared public stock.
    Fixed(usize),
    /// The price held at a limit (slope 0).
    Held(f64),
    /// The rule decided at each point.
    General,
}

/// The breakpoints of next season's price in availability (ascending, see [`NextPrice::breaks`]),
/// and, when prepared ([`NextPrice::pieces`]), the rule's regime on each piece between them.
#[derive(Debug, Clone, Default)]
pub struct Breaks {
    /// The breakpoints.
    pub points: Vec<f64>,
    /// The range the breakpoints were searched over (outside it nothing is known).
    lo: f64,
    hi: f64,
    /// The regime on each piece (`points.len() + 1` of them: below the first point, between
    /// neighbours, above the last), or empty: decided at every point.
    pieces: Vec<Piece>,
}

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
        let (p, d, _, _) = self.decide(z);
        (p, d)
    }

    /// The agency's decision at next availability `z`: price, dP'/dz', regime and decision
    /// ([`decide_knowing`] on the rows at the stock it carries in).
    #[inline]
    fn decide(&self, z: f64) -> (f64, f64, AgencyMode, Decision) {
        let w = z + self.gn;
        let pg = |gg: f64| self.price_at(gg, w - gg);
        // (only a purchase budget needs the slope in G, at stocks of its own)
        let cache = StencilCache::default();
        let pgd = |gg: f64| {
            let (p, p_y, p_g) = row_price_dg(self.m, self.publics, self.rows, w - gg, gg, &cache);
            (p, p_y, p_g - p_y)
        };
        decide_knowing(self.band, self.gn, &pg, &pgd)
    }

    /// The ascending availabilities in (0, `hi`] where P'(·, g') may be non-smooth (see the module
    /// notes), without the regimes between them (each point is decided by the rule).
    pub fn breaks(&self, hi: f64) -> Breaks {
        Breaks {
            points: self.break_points(hi),
            lo: 1e-6 * self.m.q_star,
            hi,
            pieces: Vec::new(),
        }
    }

    /// [`Self::breaks`] with the rule's regime on every piece between them decided once: a row of
    /// the solve integrates next season's price some ten thousand times, and inside a piece the
    /// decision does not change (every regime boundary is a breakpoint), so each point then
    /// evaluates only the price of the stock the rule fixes, or none where it holds the price. The
    /// prices are those of [`Self::price`], bit for bit. A piece is decided at its middle and
    /// checked at 1e-3 of its width from either end; where the three disagree (or a purchase budget
    /// binds) the rule decides at every point as before.
    pub fn pieces(&self, hi: f64) -> Breaks {
        let mut b = self.breaks(hi);
        let n = b.points.len();
        b.pieces = (0..=n)
            .map(|k| {
                let a = if k == 0 { b.lo } else { b.points[k - 1] };
                let c = if k == n { b.hi } else { b.points[k] };
                if c.partial_cmp(&a) != Some(std::cmp::Ordering::Greater) {
                    return Piece::General;
                }
                let at = |f: f64| self.piece_at(a + f * (c - a));
                let mid = at(0.5);
                if mid != Piece::General && at(1e-3) == mid && at(1.0 - 1e-3) == mid {
                    mid
                } else {
                    Piece::General
                }
            })
            .collect();
        b
    }

    /// The rule's regime at next availability `z`, as a [`Piece`].
    fn piece_at(&self, z: f64) -> Piece {
        let (_, _, mode, decision) = self.decide(z);
        if mode == AgencyMode::BudgetBound {
            return Piece::General;
        }
        match decision {
            // (the first prepared stock equal to it, as `price_at` finds it)
            Decision::Stock(gg) => self
                .fixed
                .iter()
                .position(|&(g, _)| g == gg)
                .map_or(Piece::General, Piece::Fixed),
            Decision::AtPrice { price, .. } => Piece::Held(price),
        }
    }

    /// The price and dP'/dz' at `z`, on piece `k` of `b` when its regime is known.
    #[inline]
    fn price_on(&self, b: &Breaks, k: usize, z: f64) -> (f64, f64) {
        match b.pieces.get(k) {
            Some(&Piece::Fixed(i)) => {
                let w = z + self.gn;
                self.fixed_price(i, w - self.fixed[i].0)
            }
            Some(&Piece::Held(p)) => (p, 0.0),
            _ => self.price(z),
        }
    }

    /// The piece of `b` that holds `z`, moving on from `k` (the nodes of an expectation come in
    /// ascending order, restarting for each yield node under an additive shock): `usize::MAX`
    /// when `z` is outside the searched range or on a breakpoint.
    #[inline]
    fn piece_of(b: &Breaks, k: &mut usize, z: f64) -> usize {
        if b.pieces.is_empty() || !(z > b.lo && z < b.hi) {
            return usize::MAX;
        }
        let pts = &b.points;
        if *k > 0 && z < pts[*k - 1] {
            *k = pts.partition_point(|&v| v <= z);
        }
        while *k < pts.len() && pts[*k] <= z {
            *k += 1;
        }
        if *k > 0 && z == pts[*k - 1] {
            return usize::MAX;
        }
        *k
    }

    /// The ascending breakpoints (see [`Self::breaks`]).
    fn break_points(&self, hi: f64) -> Vec<f64> {
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
    pub fn expect(&self, carried: f64, q: f64, b: &Breaks) -> (f64, f64, f64) {
        let floor = self.m.planting_floor;
        let (mut ep, mut de, mut e) = (0.0, 0.0, 0.0);
        let breaks = &b.points[..];
        let mut k = 0;
        if self.m.revenue {
            // on revenue: E[max(P', F)·Y] (E[Y] = 1) and its derivative
            next_nodes_yield(self.m, carried, q, breaks, |z, dz, y, w| {
                let (p, dp) = self.price_on(b, Self::piece_of(b, &mut k, z), z);
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
            let (p, dp) = self.price_on(b, Self::piece_of(b, &mut k, z), z);
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::interp::Monotone;
    use crate::policies::stock::Release;

    /// Price rules on five public-stock levels: inverse demand below a kink that moves with the
    /// level, a flatter decreasing cubic above it (stocks held).
    fn rows(m: &StorageMarket) -> (Vec<f64>, Vec<PriceRule>) {
        let publics = vec![0.0, 20.0, 40.0, 60.0, 80.0];
        let rows = publics
            .iter()
            .map(|&g| {
                let kink = 462.0 - 0.05 * g;
                let p0 = m.inverse_demand(kink).0;
                let xs: Vec<f64> = (0..40)
                    .map(|j| kink + 400.0 * (j as f64 / 39.0).powi(2))
                    .collect();
                let ys: Vec<f64> = xs
                    .iter()
                    .map(|&y| p0 - 0.45 * (y - kink) + 3e-4 * (y - kink).powi(2))
                    .collect();
                PriceRule {
                    kink,
                    spline: Some(Monotone::new(xs, ys)),
                }
            })
            .collect();
        (publics, rows)
    }

    #[test]
    fn regimes_decided_once_per_piece_give_the_same_expectations_bit_for_bit() {
        // The rule's decision changes only where the price at one of the stocks it can fix
        // crosses a limit, and each such point is a breakpoint: deciding it once per piece
        // (`pieces`) must give exactly what deciding at every node gives (`breaks`), for every
        // release rule, with a purchase budget (whose binding pieces stay decided per node), and
        // with yield risk alone or an additive shock as well.
        for (sigma, sd) in [(0.12, 0.0), (0.1, 12.0)] {
            let m = crate::storage::split::test_market(sigma, sd);
            let (publics, rows) = rows(&m);
            let releases = [
                Release::Band,
                Release::Target {
                    target: 40.0,
                    speed: 0.5,
                },
                Release::Share { share: 0.25 },
            ];
            for release in releases {
                for budget in [f64::INFINITY, 3000.0] {
                    let band = Band {
                        buy_below: 195.0,
                        sell_above: 235.0,
                        capacity: 80.0,
                        keep: 0.98,
                        release,
                        budget,
                    };
                    let mut decided = [0usize; 3];
                    for gn in [0.0, 12.5, 39.2, 58.8, 78.4] {
                        let np = NextPrice::prepared(&m, &band, &publics, &rows, gn);
                        let hi = 3000.0;
                        let (plain, each) = (np.breaks(hi), np.pieces(hi));
                        assert_eq!(plain.points, each.points);
                        assert_eq!(each.pieces.len(), each.points.len() + 1);
                        for p in &each.pieces {
                            decided[match p {
                                Piece::Fixed(_) => 0,
                                Piece::Held(_) => 1,
                                Piece::General => 2,
                            }] += 1;
                        }
                        for carried in [0.0, 15.0, 60.0, 140.0] {
                            for q in [430.0, 480.0, 520.0] {
                                let a = np.expect(carried, q, &plain);
                                let b = np.expect(carried, q, &each);
                                assert_eq!(
                                    (a.0.to_bits(), a.1.to_bits(), a.2.to_bits()),
                                    (b.0.to_bits(), b.1.to_bits(), b.2.to_bits()),
                                    "{release:?} budget {budget} g' {gn} carried {carried} q {q}"
                                );
                            }
                        }
                    }
                    // (the check is not empty: pieces with a fixed stock and with a held price)
                    assert!(decided[0] > 0 && decided[1] > 0, "{release:?}: {decided:?}");
                }
            }
        }
    }
}

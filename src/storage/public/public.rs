//! The storage equilibrium with a public buffer stock run on a price band, which private storers
//! know. Two state variables: availability z (private stock carried in plus harvest, net of the demand
//! shock) and the public stock carried in g (after losses).
//!
//! Within a period the agency buys at `buy_below` while the price would fall below it (up to the
//! capacity) and sells at `sell_above` while it would rise above it (until its stock runs out); private
//! storers arbitrage as in the one-state model. End-of-period quantities satisfy
//! z + g = D(P) + x + G.
//!
//! Method: endogenous grid on end-of-period private stock x_j for each end-of-period public stock G_m
//! of a grid on [0, capacity]. For fixed G the pairs (x_j + D(π_jm), π_jm), with
//! π_jm = (1 − loss)/(1 + r)·E[P'(keep·x_j + h', keep_g·G_m)] − k, give the price as a function of
//! what is left to consumers and private storers, y = z + g − G (one monotone cubic rule per G_m,
//! cubic Lagrange in G between them, [`super::blend`]). The price at any state then needs no root
//! finding: the no-trade price P(y = z, G = g), and when it falls outside the band only the band price
//! or, if the capacity (or the stock) runs out, P(z + g − cap, cap) (or P(z + g, 0)). Expectations
//! over next period's shocks use the breakpoint-splitting quadrature of [`super::split`] at the
//! breakpoints of [`super::next_price`].

use rayon::prelude::*;

use super::agency::decide_knowing;
pub use super::agency::{AgencyMode, Band, Decision};
use super::market::StorageMarket;
use super::next_price::{Breaks, NextPrice};
use super::solve::{plant_accepting, plant_with, PriceRule};

/// Highest next availability the breakpoints are searched up to: the largest private stock of the
/// grid carried in plus three times the steady-state planting at the highest yield and additive
/// shock the quadrature reaches.
pub fn reach(m: &StorageMarket, stocks: &[f64]) -> f64 {
    let t = super::split::TAIL;
    let x = stocks.last().copied().unwrap_or(0.0).max(m.q_star);
    m.keep * x + 3.0 * m.q_star * (m.yield_sigma * t).exp() + t * m.additive_sd
}

/// The period's outcome at a state.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cleared {
    /// Market price.
    pub price: f64,
    /// dP/dz at fixed g.
    pub slope: f64,
    /// Public stock carried out.
    pub public_stock: f64,
    /// Private stock carried out.
    pub private_stock: f64,
    /// AgencyMode.
    pub mode: AgencyMode,
    /// Whether the rule fixed the public stock carried out (not a stock found by holding the
    /// price at a limit or by spending the purchase budget).
    pub fixed: bool,
}

/// The solved two-state equilibrium.
#[derive(Debug, Clone)]
pub struct PublicSolution {
    /// The model.
    pub market: StorageMarket,
    /// The agency's rule.
    pub band: Band,
    /// End-of-period public stock grid G_m.
    pub publics: Vec<f64>,
    /// Price rule of y for each G_m.
    pub rows: Vec<PriceRule>,
    /// End-of-period private stock grid x_j.
    pub stocks: Vec<f64>,
    /// Planted q_jm, row-major by m.
    pub planted: Vec<Vec<f64>>,
    /// Iterations to convergence.
    pub iterations: usize,
    /// Last change of the rules (relative to P*).
    pub change: f64,
    /// Largest Euler residual over the checked range, once measured (NaN before).
    pub residual: f64,
    /// The box of states (availability low, high; public stock carried in low, high) the indicator
    /// path reaches, once simulated: the range the residual is checked on.
    pub reach: Option<[f64; 4]>,
}

pub(crate) use super::blend::row_price;

/// Longest planting step (× Q\*) the refinement's scan of the grids takes without evaluating the
/// expectation again ([`plant_accepting`]): from the bilinear guess on the solved grid Newton's
/// second step is about this short, so a point takes two expectations instead of three. E[P'] at
/// the planting it stops at is then off by the step times what dE/dq leaves out (the jumps of
/// next season's price under the target rule): on the target demo the largest residual it reports
/// moves by 3 % (8.73e-7 to 8.48e-7 when the final check used it too), so only the scan, which
/// only chooses the intervals to halve, uses it; the residual a solve is accepted on
/// ([`PublicSolution::euler_residual_max`]) solves planting in full. (On the demo the scan halves
/// the same intervals with it.)
pub const MEASURE_ACCEPT: f64 = 1e-7;

/// Planting and E[P'] for the refinement's scan (see [`MEASURE_ACCEPT`]).
#[inline]
fn plant_measuring<E: Fn(f64) -> (f64, f64, f64)>(
    m: &StorageMarket,
    guess: f64,
    expect: &E,
) -> (f64, f64) {
    plant_accepting(m, guess, expect, MEASURE_ACCEPT)
}

/// Price, slope and regime at state (z, g) under the rows, with the agency's decision (no root
/// finding; see the module notes and [`super::agency`]).
#[inline]
pub(crate) fn state_decision(
    m: &StorageMarket,
    band: &Band,
    publics: &[f64],
    rows: &[PriceRule],
    z: f64,
    g: f64,
) -> (f64, f64, AgencyMode, Decision) {
    let w = z + g;
    let cache = super::blend::StencilCache::default();
    let pgd = |gg: f64| {
        let (p, p_y, p_g) = super::blend::row_price_dg(m, publics, rows, w - gg, gg, &cache);
        (p, p_y, p_g - p_y)
    };
    decide_knowing(
        band,
        g,
        &|gg: f64| row_price(m, publics, rows, w - gg, gg),
        &pgd,
    )
}

/// Private stock carried out when `y` is left to consumers, private storers and exports with the
/// public stock `gg` carried out and the price at export parity (the market's floor): storers hold
/// what they hold where the row rule at `gg` reaches the floor (the rest is exported), or nothing
/// when it is there already without stock.
pub(crate) fn floor_stock(
    m: &StorageMarket,
    publics: &[f64],
    rows: &[PriceRule],
    y: f64,
    gg: f64,
) -> f64 {
    let dq = m.demand.quantity(m.floor);
    let f = |v: f64| {
        let (p, d) = row_price(m, publics, rows, v, gg);
        (p - m.floor, d)
    };
    if y <= dq || f(dq).0 <= 0.0 {
        return 0.0;
    }
    if f(y).0 > 0.0 {
        return y - dq;
    }
    let tol = 1e-12 * m.q_star.max(1.0);
    let near = 1e-3 * m.q_star.max(1.0);
    (super::next_price::boundary(f, dq, y, tol, near) - dq).max(0.0)
}

impl PublicSolution {
    /// The period's outcome at availability `z` with public stock `g` carried in.
    pub fn clear(&self, z: f64, g: f64) -> Cleared {
        let m = &self.market;
        let (price, slope, mode, decision) =
            state_decision(m, &self.band, &self.publics, &self.rows, z, g);
        let w = z + g;
        let fixed = matches!(decision, Decision::Stock(_)) && mode != AgencyMode::BudgetBound;
        let public_stock = match decision {
            Decision::Stock(gg) => gg,
            Decision::AtPrice { price, lo, hi } => {
                let f = |gg: f64| row_price(m, &self.publics, &self.rows, w - gg, gg).0 - price;
                crate::numeric::brent(f, lo, hi, 1e-12 * m.q_star.max(1.0))
                    .unwrap_or(0.5 * (lo + hi))
            }
        };
        let private_stock = if price <= m.floor && m.floor > 0.0 {
            floor_stock(m, &self.publics, &self.rows, w - public_stock, public_stock)
        } else {
            (w - public_stock - m.demand.quantity(price)).max(0.0)
        };
        Cleared {
            price,
            slope,
            public_stock,
            private_stock,
            mode,
            fixed,
        }
    }

    /// Next period's price when `public` public units are carried out (see [`NextPrice`]).
    pub fn next_price(&self, public: f64) -> NextPrice<'_> {
        NextPrice::new(
            &self.market,
            &self.band,
            &self.publics,
            &self.rows,
            self.band.keep * public,
        )
    }

    /// Planting and E[P'] when `x` private and `public` public units are carried out of the period
    /// (expectations by the breakpoint-splitting quadrature, [`super::split`]).
    pub fn plant_and_expect(&self, x: f64, public: f64) -> (f64, f64) {
        let m = &self.market;
        let np = self.next_price(public);
        let breaks = np.breaks(reach(m, &self.stocks));
        plant_with(m, self.planted_guess(x, public), &|q| {
            np.expect(m.keep * x, q, &breaks)
        })
    }

    /// Planted quantity when `x` private and `public` public units are carried out of the period.
    pub fn planted_at(&self, x: f64, public: f64) -> f64 {
        self.plant_and_expect(x, public).0
    }

    /// Planting interpolated bilinearly on the solved grid at (`x`, `public`): Newton's starting
    /// guess.
    pub fn planted_guess(&self, x: f64, public: f64) -> f64 {
        let cell = |v: &[f64], at: f64| {
            let k = v.partition_point(|&u| u <= at).clamp(1, v.len() - 1) - 1;
            let t = if v.len() > 1 {
                ((at - v[k]) / (v[k + 1] - v[k])).clamp(0.0, 1.0)
            } else {
                0.0
            };
            (k, t)
        };
        if self.publics.len() < 2 || self.stocks.len() < 2 {
            return self.planted[0][0];
        }
        let (mi, tg) = cell(&self.publics, public);
        let (j, tx) = cell(&self.stocks, x);
        let row = |r: &[f64]| (1.0 - tx) * r[j] + tx * r[j + 1];
        (1.0 - tg) * row(&self.planted[mi]) + tg * row(&self.planted[mi + 1])
    }

    /// Planting and the expected producer price farmers plant on, E[max(P', F)], when `x` private
    /// and `public` public units are carried out (one breakpoint search for both).
    pub fn plant_and_expect_producer(&self, x: f64, public: f64) -> (f64, f64) {
        let m = &self.market;
        let np = self.next_price(public);
        let breaks = np.breaks(reach(m, &self.stocks));
        let (q, psi) = plant_with(m, self.planted_guess(x, public), &|q| {
            np.expect(m.keep * x, q, &breaks)
        });
        if !m.plants_on_market_price() {
            (q, np.expect(m.keep * x, q, &breaks).0)
        } else {
            (q, psi)
        }
    }

    /// Expected next price when `x` private and `public` public units are carried out, with planting
    /// `q`.
    pub fn expected_next(&self, x: f64, public: f64, q: f64) -> f64 {
        let m = &self.market;
        let np = self.next_price(public);
        let breaks = np.breaks(reach(m, &self.stocks));
        np.expect(m.keep * x, q, &breaks).2
    }

    /// Expected producer price farmers plant on, E[max(P', F)] with F the planting floor.
    pub fn expected_producer(&self, x: f64, public: f64, q: f64) -> f64 {
        let m = &self.market;
        let np = self.next_price(public);
        let breaks = np.breaks(reach(m, &self.stocks));
        np.expect(m.keep * x, q, &breaks).0
    }

    /// The stockout price (above it private storers hold nothing) when the agency holds `public`
    /// (0 where nobody stores).
    pub fn stockout_price(&self, public: f64) -> f64 {
        super::blend::stockout_price(&self.publics, &self.rows, public).unwrap_or(0.0)
    }

    /// The arbitrage residual at state (z, g), relative to the price (as in the one-state model).
    pub fn euler_residual(&self, z: f64, g: f64) -> f64 {
        self.euler_residual_with(z, g, &mut Vec::new())
    }

    /// [`Self::euler_residual`], keeping in `prepared` next season's price and its breakpoints
    /// at each public stock carried out that the rule fixes (no trade, store full or empty, a
    /// target or rotation stock): the states of one level of the residual check share them, and
    /// each is prepared once instead of once per state. The residual is the same, bit for bit.
    fn euler_residual_with<'s>(
        &'s self,
        z: f64,
        g: f64,
        prepared: &mut Vec<(f64, NextPrice<'s>, Breaks)>,
    ) -> f64 {
        let m = &self.market;
        let c = self.clear(z, g);
        if c.price <= 0.0 {
            return 0.0;
        }
        let (x, public) = (c.private_stock, c.public_stock);
        let psi = if c.fixed {
            let i = match prepared.iter().position(|e| e.0 == public) {
                Some(i) => i,
                None => {
                    let np = self.next_price(public);
                    let b = np.pieces(reach(m, &self.stocks));
                    prepared.push((public, np, b));
                    prepared.len() - 1
                }
            };
            let (_, np, b) = &prepared[i];
            plant_with(m, self.planted_guess(x, public), &|q| {
                np.expect(m.keep * x, q, b)
            })
            .1
        } else {
            self.plant_and_expect(x, public).1
        };
        let r = (m.discount * psi - m.cost) / c.price - 1.0;
        if c.private_stock > 1e-9 * m.q_star {
            r.abs()
        } else {
            r.max(0.0)
        }
    }
}

impl PublicSolution {
    /// The availability range reported and checked: the harvest at ±3 sd of the shocks around the
    /// steady state, widened above by a quarter for carried stock.
    pub fn range(&self) -> (f64, f64) {
        if let Some(r) = self.reach {
            return (r[0], r[1]);
        }
        let m = &self.market;
        let (lo, hi) = m.harvest_range(m.q_star);
        if hi - lo < 0.05 * m.q_star {
            return (0.9 * m.q_star, 1.2 * m.q_star);
        }
        (lo, hi + 0.25 * (hi - lo))
    }

    /// The arbitrage residual at end-of-period public stock `public` when `y` is left to consumers and
    /// private storers (the row rule's own residual, used to refine the grids).
    pub fn end_residual(&self, y: f64, public: f64) -> f64 {
        let m = &self.market;
        let (price, _) = row_price(m, &self.publics, &self.rows, y, public);
        if price <= m.floor {
            return 0.0;
        }
        let x = (y - m.demand.quantity(price)).max(0.0);
        let (_, psi) = self.plant_and_expect(x, public);
        let r = (m.discount * psi - m.cost) / price - 1.0;
        if x > 1e-9 * m.q_star {
            r.abs()
        } else {
            r.max(0.0)
        }
    }

    /// [`Self::end_residual`] at every `y` of `ys` at the same end-of-period public stock `public`:
    /// next season's price function, its breakpoints and the blend at `public` are prepared once
    /// (the refinement's scan evaluates hundreds of points per level).
    pub fn end_residuals(&self, ys: &[f64], public: f64) -> Vec<f64> {
        let m = &self.market;
        let np = NextPrice::prepared(
            m,
            &self.band,
            &self.publics,
            &self.rows,
            self.band.keep * public,
        );
        let breaks = np.pieces(reach(m, &self.stocks));
        let blend = super::blend::Blend::at(m, &self.publics, &self.rows, public);
        ys.iter()
            .map(|&y| {
                let (price, _) = blend.price(m, &self.rows, y);
                if price <= m.floor {
                    // (at zero or export parity storers hold what they hold where the price
                    // reaches it, checked from below)
                    return 0.0;
                }
                let x = (y - m.demand.quantity(price)).max(0.0);
                let (_, psi) = plant_measuring(m, self.planted_guess(x, public), &|q| {
                    np.expect(m.keep * x, q, &breaks)
                });
                let r = (m.discount * psi - m.cost) / price - 1.0;
                if x > 1e-9 * m.q_star {
                    r.abs()
                } else {
                    r.max(0.0)
                }
            })
            .collect()
    }

    /// Largest arbitrage residual on `nz` availabilities × `ng` public stocks carried in.
    pub fn euler_residual_max(&self, nz: usize, ng: usize) -> f64 {
        let (lo, hi) = self.range();
        let (nz, ng) = (nz.max(2), ng.max(2));
        // levels in parallel; the maximum does not depend on the order
        (0..ng)
            .into_par_iter()
            .map(|l| {
                let (g_lo, g_hi) = match self.reach {
                    Some(r) => (r[2], r[3]),
                    None => (0.0, self.band.keep * self.band.capacity),
                };
                let g = g_lo + (g_hi - g_lo) * l as f64 / (ng - 1) as f64;
                let mut prepared = Vec::new();
                (0..nz)
                    .map(|i| {
                        let z = lo + (hi - lo) * i as f64 / (nz - 1) as f64;
                        self.euler_residual_with(z, g, &mut prepared)
                    })
                    .fold(0.0_f64, f64::max)
            })
            .collect::<Vec<f64>>()
            .into_iter()
            .fold(0.0_f64, f64::max)
    }
}

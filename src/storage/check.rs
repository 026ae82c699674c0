//! Accuracy of a solved private-storage equilibrium: the arbitrage (Euler-equation) residual on a
//! dense grid of availability, and the grid the `storage` verb prints.
//!
//! The residual at availability z with price P = P(z) and private stock x(z) is the relative error of
//! the storers' complementarity condition under the solved rule itself (Judd 1992's "bounded
//! rationality" measure): r = ((1 − loss)/(1 + r)·E[P'] − k)/P − 1 where x > 0, and the violation
//! max(0, r) where x = 0 (storing nothing is optimal only if carrying does not pay).

use super::solve::{expected_next, PrivateSolution};

/// One row of the printed equilibrium.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct GridRow {
    /// Availability: private stock carried in plus harvest (net of the demand shock).
    pub availability: f64,
    /// Market price.
    pub price: f64,
    /// Private stock carried out.
    pub private_stock: f64,
    /// Planted for next period.
    pub planted: f64,
    /// Public stock carried in (after losses), in a market with a public stock.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub public_stock: Option<f64>,
    /// The price farmers planted this harvest on, beside farmers on adaptive expectations or
    /// learning (their memory, the equilibrium's second state).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub expected_price: Option<f64>,
    /// Last season's price, beside farmers on a two-lag rule (extrapolative, trailing mean over
    /// two seasons: their memory, the equilibrium's second state).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub last_price: Option<f64>,
}

impl PrivateSolution {
    /// The availability range the equilibrium is reported and checked on: the availabilities the
    /// indicator path reaches (set by [`super::solve`], [`PrivateSolution::reach`]); before that
    /// (a bare solve) from the harvest at −3 sd of the shocks (with nothing carried in) up to the
    /// availability reached by a run of +3 sd harvests with storers carrying what the rule says,
    /// but not past the solved grid. Always at least 5 % of Q* wide and past the kink, so that the
    /// check reaches where storers hold stock.
    pub fn range(&self) -> (f64, f64) {
        let m = &self.market;
        let (mut lo, mut hi) = match self.reach {
            Some(r) => r,
            None => {
                let q0 = self.planted[0];
                let (lo, hi0) = m.harvest_range(q0);
                let mut hi = hi0;
                for _ in 0..200 {
                    let x = self.rule.stock(m, hi);
                    let q = self.planted_after(self.rule.price(m, hi), x);
                    let next = m.keep * x + m.harvest_range(q).1;
                    if (next - hi).abs() <= 1e-9 * m.q_star {
                        hi = next;
                        break;
                    }
                    hi = next;
                }
                if let Some(s) = &self.rule.spline {
                    hi = hi.min(*s.knots().last().unwrap_or(&hi));
                }
                (lo, hi)
            }
        };
        if hi - lo < 0.05 * m.q_star {
            lo = lo.min(0.9 * m.q_star);
            hi = hi.max(1.1 * m.q_star);
        }
        if self.rule.kink.is_finite() && hi < self.rule.kink {
            hi = self.rule.kink + 0.25 * (self.rule.kink - lo);
        }
        (lo, hi)
    }

    /// Price, private stock and planting at availability `z`.
    pub fn row(&self, z: f64) -> GridRow {
        let m = &self.market;
        let price = self.rule.price(m, z);
        let x = self.rule.stock(m, z);
        GridRow {
            availability: z,
            price,
            private_stock: x,
            planted: self.planted_after(price, x),
            public_stock: None,
            expected_price: None,
            last_price: None,
        }
    }

    /// Price, private stock and planting at availability `z` and farmers' memory `mem` (a
    /// two-state solution; [`Self::row`] otherwise).
    pub fn row_with(&self, z: f64, mem: f64) -> GridRow {
        let m = &self.market;
        let (Some(f), Some(memory)) = (m.farmers, m.farmers.and_then(|f| f.memory)) else {
            return self.row(z);
        };
        let price = self.price_at(z, mem);
        let keeps_expectation = memory.keeps == super::market::Keeps::Expectation;
        GridRow {
            availability: z,
            price,
            private_stock: self.stock_at(z, mem),
            planted: m.supply_at(f.expect_with(price, mem)).0,
            public_stock: None,
            expected_price: keeps_expectation.then_some(mem),
            last_price: (!keeps_expectation).then_some(mem),
        }
    }

    /// The farmers' memories a two-state solution is reported and checked on: those the indicator
    /// path reaches (before that, the memory grid), at least 10 % of P\* wide.
    pub fn memory_range(&self) -> Option<(f64, f64)> {
        let r = self.memory.as_ref()?;
        let (mut lo, mut hi) = r
            .reach
            .unwrap_or((r.levels[0], r.levels[r.levels.len() - 1]));
        let p = self.market.p_star;
        if hi - lo < 0.1 * p {
            let mid = 0.5 * (lo + hi);
            (lo, hi) = (mid - 0.05 * p, mid + 0.05 * p);
        }
        Some((lo, hi))
    }

    /// Memory levels of the printed grid and of the residual check: `count` evenly over
    /// [`Self::memory_range`].
    fn memory_points(&self, count: usize) -> Vec<f64> {
        match self.memory_range() {
            Some((lo, hi)) => (0..count)
                .map(|i| lo + (hi - lo) * i as f64 / (count - 1).max(1) as f64)
                .collect(),
            None => vec![f64::NAN],
        }
    }

    /// The availability range of a two-state check: [`Self::range`], past the stockout kink at
    /// every memory of `mems`.
    fn range_with(&self, mems: &[f64]) -> (f64, f64) {
        let (lo, mut hi) = self.range();
        if let Some(r) = &self.memory {
            for &mem in mems {
                let kink = r.kink(&self.market, mem);
                if kink.is_finite() && hi < kink {
                    hi = kink + 0.25 * (kink - lo);
                }
            }
        }
        (lo, hi)
    }

    /// Points of the residual test grid for `points` requested: `points` availabilities (one
    /// state), `points`/10 + 1 availabilities × 9 memories (two states).
    pub fn test_points(&self, points: usize) -> usize {
        if self.memory.is_some() {
            (points / 10 + 1) * 9
        } else {
            points
        }
    }

    /// `rows` evenly spaced rows over [`range`](Self::range) (two states: for each of 5 memories
    /// over [`Self::memory_range`]).
    pub fn grid(&self, rows: usize) -> Vec<GridRow> {
        let rows = rows.max(2);
        if self.memory.is_some() {
            let mems = self.memory_points(5);
            let (lo, hi) = self.range_with(&mems);
            return mems
                .iter()
                .flat_map(|&mem| {
                    (0..rows).map(move |i| {
                        self.row_with(lo + (hi - lo) * i as f64 / (rows - 1) as f64, mem)
                    })
                })
                .collect();
        }
        let (lo, hi) = self.range();
        (0..rows)
            .map(|i| self.row(lo + (hi - lo) * i as f64 / (rows - 1) as f64))
            .collect()
    }

    /// The arbitrage residual at availability `z` (see the module notes).
    pub fn euler_residual(&self, z: f64) -> f64 {
        let m = &self.market;
        let price = self.rule.price(m, z);
        let x = self.rule.stock(m, z);
        let q = self.planted_after(price, x);
        let (psi, _) = expected_next(m, m.keep * x, q, &self.rule, &self.breaks);
        if price <= 0.0 {
            return 0.0;
        }
        let r = (m.discount * psi - m.cost) / price - 1.0;
        if x > 0.0 {
            r.abs()
        } else {
            r.max(0.0)
        }
    }

    /// Largest arbitrage residual over `points` evenly spaced availabilities of the range (two
    /// states: `points`/10 + 1 availabilities × 9 memories over the ranges the path reaches).
    pub fn euler_residual_max(&self, points: usize) -> f64 {
        if self.memory.is_some() {
            use rayon::prelude::*;
            let mems = self.memory_points(9);
            let (lo, hi) = self.range_with(&mems);
            let nz = (points / 10 + 1).max(2);
            // memories in parallel, collected in order (a maximum: the same at any thread count)
            return mems
                .par_iter()
                .map(|&mem| {
                    (0..nz)
                        .map(|i| {
                            let z = lo + (hi - lo) * i as f64 / (nz - 1) as f64;
                            self.euler_residual_with(z, mem)
                        })
                        .fold(0.0, f64::max)
                })
                .collect::<Vec<f64>>()
                .into_iter()
                .fold(0.0, f64::max);
        }
        use rayon::prelude::*;
        let (lo, hi) = self.range();
        let points = points.max(2);
        // the points in parallel (each residual is its own), then the maximum taken in their
        // order, as one by one: the same bits at any thread count
        let residuals: Vec<f64> = (0..points)
            .into_par_iter()
            .map(|i| self.euler_residual(lo + (hi - lo) * i as f64 / (points - 1) as f64))
            .collect();
        residuals.into_iter().fold(0.0, f64::max)
    }
}

//! The private-storage equilibrium without public stock: one state variable, solved by the
//! endogenous grid method (Carroll 2006) on end-of-period private stock.
//!
//! For each stock x_j on a fixed grid, farmers' planting q_j solves q = S(E[P(keep·x_j + q·y + e)])
//! (a one-dimensional fixed point, Newton's method with a bracket), storers' arbitrage gives today's
//! price p_j = (1 − loss)/(1 + r)·E[P'] − k, and the availability that makes x_j optimal is
//! z_j = x_j + D(p_j). The pairs (z_j, p_j) are the new price rule above the stockout point z_0; below
//! it nobody stores and P = D⁻¹(z). Iterate to a fixed point of the price rule.

use super::market::StorageMarket;
use super::split::{next_nodes, next_nodes_yield};
use super::StorageError;
use crate::numeric::interp::Monotone;
use rayon::prelude::*;

/// The equilibrium price as a function of availability (net of the demand shock).
#[derive(Debug, Clone)]
pub struct PriceRule {
    /// Availability at which private stocks start (∞: nobody ever stores).
    pub kink: f64,
    /// The price above the kink (knots at the endogenous grid).
    pub spline: Option<Monotone>,
}

impl PriceRule {
    /// The rule of a market where nobody stores.
    pub fn no_storage() -> PriceRule {
        PriceRule {
            kink: f64::INFINITY,
            spline: None,
        }
    }

    /// Price and dP/dz at availability `z`.
    #[inline]
    pub fn eval(&self, m: &StorageMarket, z: f64) -> (f64, f64) {
        match &self.spline {
            Some(s) if z > self.kink => {
                let (p, d) = s.eval(z);
                if p <= m.floor {
                    (m.floor, 0.0)
                } else {
                    (p, d)
                }
            }
            _ => m.inverse_demand(z),
        }
    }

    /// The price at availability `z`.
    #[inline]
    pub fn price(&self, m: &StorageMarket, z: f64) -> f64 {
        self.eval(m, z).0
    }

    /// Private stock carried out of a period with availability `z`: z − D(P(z)), zero below the kink.
    /// Where the price has fallen to the market's floor (zero with linear demand, free disposal;
    /// export parity in a market that exports) storers hold what they hold where it reaches the
    /// floor, [`Self::zero_price_point`] − D(floor): carrying more would not pay, and the rest is
    /// disposed of or exported.
    pub fn stock(&self, m: &StorageMarket, z: f64) -> f64 {
        if z <= self.kink {
            return 0.0;
        }
        let (p, _) = self.eval(m, z);
        if p <= m.floor {
            if let Some(z0) = self.zero_price_point(m.floor) {
                return (z0.min(z) - m.demand.quantity(m.floor)).max(0.0);
            }
        }
        (z - m.demand.quantity(p)).max(0.0)
    }

    /// The availability at which the rule's price reaches `floor` (zero, or export parity; the
    /// last knot's value continued with its end tangent, as [`Monotone::eval`] extends it), if it
    /// does.
    pub fn zero_price_point(&self, floor: f64) -> Option<f64> {
        let s = self.spline.as_ref()?;
        let (z, p) = (*s.knots().last()?, *s.values().last()?);
        if p <= floor {
            // the last knot is the point where exports start
            return Some(z);
        }
        let (_, d) = s.eval(z);
        (d < 0.0).then(|| z - (p - floor) / d)
    }
}

/// The ascending availabilities in (0, `hi`) where the rule z ↦ P(z) (or the producer price
/// max(P, F) with F the planting floor) is not smooth: the stockout kink, where the price reaches
/// zero (linear demand, free disposal) and where it crosses the planting floor. Found once per rule;
/// the expectations integrate the continuous shock exactly between them ([`super::split`]), as the
/// two-state solve does.
pub fn rule_breaks(m: &StorageMarket, rule: &PriceRule, hi: f64) -> Vec<f64> {
    let lo = 1e-6 * m.q_star;
    let tol = 1e-12 * m.q_star.max(1.0);
    let mut out = Vec::with_capacity(3);
    if rule.kink.is_finite() && rule.kink > lo && rule.kink < hi {
        out.push(rule.kink);
    }
    level_breaks(m, |z| rule.eval(m, z), hi, &mut out);
    out.sort_by(f64::total_cmp);
    out.dedup_by(|a, b| (*a - *b).abs() <= tol);
    out
}

/// Pushes onto `out` the availabilities in (0, `hi`) where a price rule `eval` (price and dP/dz,
/// decreasing) meets the market's levels: where imports start (consumers alone would pay import
/// parity), where the price reaches the floor (zero with free disposal, export parity) and where
/// it crosses the planting floor.
pub(crate) fn level_breaks<F: Fn(f64) -> (f64, f64)>(
    m: &StorageMarket,
    eval: F,
    hi: f64,
    out: &mut Vec<f64>,
) {
    let lo = 1e-6 * m.q_star;
    let tol = 1e-12 * m.q_star.max(1.0);
    let near = 1e-3 * m.q_star.max(1.0);
    if m.ceiling.is_finite() {
        // imports start where consumers alone would pay import parity
        let zc = m.demand.quantity(m.ceiling);
        if zc > lo && zc < hi {
            out.push(zc);
        }
    }
    // where the price reaches zero (free disposal) or export parity (exports start)
    let mut levels = vec![m.floor];
    if m.planting_floor > 0.0 {
        levels.push(m.planting_floor);
    }
    for level in levels {
        let f = |z: f64| {
            let (p, d) = eval(z);
            (p - level, d)
        };
        if f(lo).0 > 0.0 && f(hi).0 <= 0.0 {
            out.push(super::next_price::boundary(f, lo, hi, tol, near));
        }
    }
}

/// Highest next availability the one-state breakpoints are searched up to (as
/// [`super::public::reach`] for the two-state solve).
pub fn reach(m: &StorageMarket, stocks: &[f64]) -> f64 {
    super::public::reach(m, stocks)
}

/// Expected next price E[P'] and its derivative in planted `q`, when `carried` units of private stock
/// arrive next period and `rule` gives next period's price, by the breakpoint-splitting quadrature
/// over the continuous shock ([`super::split::next_nodes`]) at the rule's breakpoints `breaks`
/// ([`rule_breaks`]).
#[inline]
pub fn expected_next(
    m: &StorageMarket,
    carried: f64,
    q: f64,
    rule: &PriceRule,
    breaks: &[f64],
) -> (f64, f64) {
    let (mut e, mut d) = (0.0, 0.0);
    next_nodes(m, carried, q, breaks, |z, dz, w| {
        let (p, dp) = rule.eval(m, z);
        e += w * p;
        d += w * dp * dz;
    });
    (e, d)
}

/// Expected next producer price E[max(P', floor)] and its derivative in `q`, with the expected market
/// price E[P'] (the same when there is no deficiency-payment floor), by the breakpoint-splitting
/// quadrature as [`expected_next`]. Farmers who plant on revenue get E[max(P', floor)·Y] instead
/// (E[Y] = 1; Wright and Williams 1991).
#[inline]
pub fn expected_producer(
    m: &StorageMarket,
    carried: f64,
    q: f64,
    rule: &PriceRule,
    breaks: &[f64],
) -> (f64, f64, f64) {
    let floor = m.planting_floor;
    let (mut ep, mut d, mut e) = (0.0, 0.0, 0.0);
    if m.revenue {
        // on revenue: E[max(P', F)·Y] (E[Y] = 1) and its derivative
        next_nodes_yield(m, carried, q, breaks, |z, dz, y, w| {
            let (p, dp) = rule.eval(m, z);
            e += w * p;
            let wy = w * y;
            if p > floor {
                ep += wy * p;
                d += wy * dp * dz;
            } else {
                ep += wy * floor;
            }
        });
        return (ep, d, e);
    }
    next_nodes(m, carried, q, breaks, |z, dz, w| {
        let (p, dp) = rule.eval(m, z);
        e += w * p;
        if p > floor {
            ep += w * p;
            d += w * dp * dz;
        } else {
            ep += w * floor;
        }
    });
    (ep, d, e)
}

/// Rational planting: the q with q = S(E[producer price' | q]), starting from `guess`. Returns
/// (q, E[P']) with P' the market price.
///
/// g(q) = q − S(E[P'(q)]) is increasing with slope ≥ 1 (more planted, lower expected price), g(0) ≤ 0,
/// so the root is unique; Newton steps are kept inside the bracket, with bisection as a fallback.
pub fn plant(
    m: &StorageMarket,
    carried: f64,
    guess: f64,
    rule: &PriceRule,
    breaks: &[f64],
) -> (f64, f64) {
    plant_with(m, guess, &|q| {
        expected_producer(m, carried, q, rule, breaks)
    })
}

/// [`plant`] with the expectation given as a function of planted q: `expect(q)` returns
/// (E[producer price'], its derivative in q, E[P']).
pub fn plant_with<E: Fn(f64) -> (f64, f64, f64)>(
    m: &StorageMarket,
    guess: f64,
    expect: &E,
) -> (f64, f64) {
    plant_accepting(m, guess, expect, 0.0)
}

/// Longest planting step (× Q\*) taken without evaluating the expectation again in the iterations
/// of both solves ([`plant_accepting`]): the step is about S'·ΔE[P'], so points take one evaluation
/// once the rules change by less than about 1e-4 (the last two thirds of the iterations), and the
/// errors this leaves vanish with the change (common practice, no source).
pub const PLANT_ACCEPT: f64 = 1e-4;

/// [`plant_with`] that also stops after a Newton step shorter than `accept` × Q\* from the guess,
/// without evaluating the expectation again: E[P'] at the new q is then the first-order
/// value E + (dE/dq)·Δq. Inside an iteration warm-started from the last planting the step shrinks
/// with the change of the rules, and at the fixed point (q no longer moves) q − S(E) = 0 and E[P']
/// is the integrated one, so the errors vanish with the change: of order Δq² where dE/dq is exact,
/// of order Δq where next season's price jumps (the target rule: dE/dq misses the jumps; on the
/// demo the rules then agree with the full solve to 5e-12, with one more iteration). Most points
/// take one evaluation instead of two. Only when the producer price is the market price at every
/// node (no planting floor binding): otherwise the full solve.
pub fn plant_accepting<E: Fn(f64) -> (f64, f64, f64)>(
    m: &StorageMarket,
    guess: f64,
    expect: &E,
    accept: f64,
) -> (f64, f64) {
    let scale = m.q_star.max(1e-12);
    let (mut lo, mut hi) = (0.0_f64, f64::INFINITY);
    let mut q = if guess.is_finite() && guess > 0.0 {
        guess
    } else {
        m.q_star
    };
    let mut psi = 0.0;
    for _ in 0..200 {
        let (ep, de, e) = expect(q);
        psi = e;
        let (s, ds) = m.supply_at(ep);
        let g = q - s;
        if g.abs() <= 1e-14 * scale {
            return (q, psi);
        }
        if g < 0.0 {
            lo = q;
        } else {
            hi = q;
        }
        let slope = 1.0 - ds * de;
        let mut next_q = q - g / slope.max(1.0);
        if !(next_q > lo && next_q < hi) {
            next_q = if hi.is_finite() {
                0.5 * (lo + hi)
            } else {
                2.0 * q + scale
            };
        } else if (next_q - q).abs() <= accept * scale && ep == e {
            return (next_q, e + de * (next_q - q));
        }
        if (next_q - q).abs() <= 1e-15 * scale {
            return (next_q, psi);
        }
        q = next_q;
        if hi - lo <= 1e-15 * scale {
            break;
        }
    }
    (q, psi)
}

/// Numerical settings of the solvers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolveOptions {
    /// Points of the stock grid (per dimension for the private stock).
    pub grid: usize,
    /// Gauss–Hermite nodes per shock.
    pub nodes: usize,
    /// Convergence: largest change of the price rule between iterations, relative to P*.
    pub tolerance: f64,
    /// Iteration cap.
    pub max_iterations: usize,
    /// Points of the dense grid on which the Euler residual is measured.
    pub test_points: usize,
    /// Points of the private-stock grid of the two-state (public stock) solve.
    pub grid_2d: usize,
    /// Points of the public-stock grid of the two-state solve.
    pub public_grid: usize,
    /// Largest private stock of the first grid (None: [`first_stock_bound`]).
    pub stock_bound: Option<f64>,
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            grid: 200,
            nodes: 10,
            tolerance: 1e-9,
            max_iterations: 1000,
            test_points: 2001,
            grid_2d: 150,
            public_grid: 16,
            stock_bound: None,
        }
    }
}

/// The solved one-state equilibrium.
#[derive(Debug, Clone)]
pub struct PrivateSolution {
    /// The model.
    pub market: StorageMarket,
    /// P(z).
    pub rule: PriceRule,
    /// The stock grid x_j.
    pub stocks: Vec<f64>,
    /// Planted q_j at each x_j.
    pub planted: Vec<f64>,
    /// Iterations to convergence.
    pub iterations: usize,
    /// Last change of the price rule (relative to P*).
    pub change: f64,
    /// The rule's breakpoints ([`rule_breaks`]) the expectations are split at.
    pub breaks: Vec<f64>,
    /// Largest Euler residual over the checked range, once measured (NaN before).
    pub residual: f64,
    /// The availabilities (net of the demand shock) the indicator path reaches, lowest and highest,
    /// once simulated: the range the residual is checked on ([`Self::range`]).
    pub reach: Option<(f64, f64)>,
    /// The price rules over the farmers' memory, when farmers plant on a rule with one more state
    /// than the last price (adaptive, learning, two-lag rules): the equilibrium then has two states
    /// and `rule` is the row nearest P\* ([`super::farmers`]).
    pub memory: Option<super::farmers::MemoryRules>,
}

impl PrivateSolution {
    /// Planted quantity when `x` units of private stock are carried out of the period.
    pub fn planted_at(&self, x: f64) -> f64 {
        let k = self
            .stocks
            .partition_point(|&v| v <= x)
            .clamp(1, self.stocks.len())
            - 1;
        let guess = self.planted[k];
        let m = &self.market;
        plant(m, m.keep * x, guess, &self.rule, &self.breaks).0
    }

    /// Planted quantity after a period that cleared at `price` with `x` units carried out: farmers
    /// on a backward-looking rule plant on their rule of the price; rational farmers as
    /// [`Self::planted_at`].
    pub fn planted_after(&self, price: f64, x: f64) -> f64 {
        match self.market.farmers {
            Some(f) => self.market.supply_at(f.expect(price)).0,
            None => self.planted_at(x),
        }
    }

    /// The stockout price: storers hold stock only when the price is below it (0 when nobody ever
    /// stores). With farmers' memory: at the memory P\* (the steady state's).
    pub fn stockout_price(&self) -> f64 {
        if let Some(r) = &self.memory {
            return r.stockout_price(self.market.p_star);
        }
        match &self.rule.spline {
            Some(s) => s.values()[0],
            None => 0.0,
        }
    }
}

/// The largest private stock of the first grid: ten harvest standard deviations, at most Q*, and at
/// least 0.1·Q* (with tiny risk the rule must still reach past the stockout point the paths and the
/// residual check visit; the grid is extended later where long paths go further, [`extend`]).
pub fn first_stock_bound(m: &StorageMarket) -> f64 {
    (10.0 * m.harvest_sd).min(m.q_star).max(0.1 * m.q_star)
}

/// `stocks` continued past its end up to `x_max` with the spacing of its last interval; `planted`
/// continued with its last value (Newton's starting guesses).
pub fn continue_grid(stocks: &[f64], planted: &[f64], x_max: f64) -> (Vec<f64>, Vec<f64>) {
    let n = stocks.len();
    let last = stocks[n - 1];
    let h = (last - stocks[n - 2]).max(1e-9 * x_max.abs().max(1.0));
    let extra = ((x_max - last) / h).ceil().max(0.0) as usize;
    let step = if extra > 0 {
        (x_max - last) / extra as f64
    } else {
        h
    };
    let mut s = stocks.to_vec();
    let mut q = planted.to_vec();
    for i in 1..=extra {
        s.push(last + step * i as f64);
        q.push(planted[n - 1]);
    }
    (s, q)
}

/// Extends the stock grid of a solution up to `x_max` (long paths carry more than the grid held)
/// and solves again from the current rule.
pub fn extend(
    sol: PrivateSolution,
    x_max: f64,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    if sol.memory.is_some() {
        return super::farmers::extend(sol, x_max, o);
    }
    let (stocks, planted) = continue_grid(&sol.stocks, &sol.planted, x_max);
    let total = sol.iterations;
    let out = iterate(sol.market, stocks, planted, sol.rule, o)?;
    Ok(super::fixed_point::after(total, out))
}

/// Solves the private-storage equilibrium by the endogenous grid method on `o.grid` points of private
/// stock, spaced quadratically (dense near zero stock, where the price rule bends most).
pub fn solve_private(m: StorageMarket, o: &SolveOptions) -> Result<PrivateSolution, StorageError> {
    let n = o.grid.max(8);
    let x_max = first_stock_bound(&m);
    let stocks: Vec<f64> = (0..n)
        .map(|j| x_max * (j as f64 / (n - 1) as f64).powi(2))
        .collect();
    let planted = vec![m.q_star; n];
    iterate(m, stocks, planted, PriceRule::no_storage(), o)
}

/// Refines a solution where its arbitrage residual exceeds `target`: every grid interval whose
/// residual at its quarter points is too large is halved, and the equilibrium is solved again from the
/// current rule, until no interval is too coarse or the grid reaches `max_points`.
///
/// Why: with a finite quadrature rule the expected price E[P'] has a kink wherever one node's next
/// availability crosses the stockout point, and the price rule inherits these kinks (and their echoes,
/// each smaller by about one node weight). A smooth interpolant on a fixed grid misses them by
/// O(h · slope jump); halving the intervals around them removes that error at little cost.
pub fn refine(
    mut sol: PrivateSolution,
    o: &SolveOptions,
    target: f64,
    max_points: usize,
) -> Result<PrivateSolution, StorageError> {
    let mut total = sol.iterations;
    for _ in 0..40 {
        let Some(spline) = sol.rule.spline.as_ref() else {
            break;
        };
        let zs = spline.knots().to_vec();
        let mut insert = Vec::new();
        for j in 0..zs.len() - 1 {
            let worst = [0.25, 0.5, 0.75]
                .iter()
                .map(|f| sol.euler_residual(zs[j] + f * (zs[j + 1] - zs[j])))
                .fold(0.0, f64::max);
            if worst > target {
                insert.push(j);
            }
        }
        if insert.is_empty() || sol.stocks.len() + insert.len() > max_points {
            break;
        }
        let mut stocks = Vec::with_capacity(sol.stocks.len() + insert.len());
        let mut planted = Vec::with_capacity(stocks.capacity());
        let mut next = insert.iter().peekable();
        for j in 0..sol.stocks.len() {
            stocks.push(sol.stocks[j]);
            planted.push(sol.planted[j]);
            if next.peek() == Some(&&j) {
                next.next();
                stocks.push(0.5 * (sol.stocks[j] + sol.stocks[j + 1]));
                planted.push(0.5 * (sol.planted[j] + sol.planted[j + 1]));
            }
        }
        let rule = sol.rule.clone();
        sol = super::fixed_point::after(total, iterate(sol.market, stocks, planted, rule, o)?);
        total = sol.iterations;
    }
    Ok(sol)
}

/// Endogenous-grid iteration from `rule` on the stock grid `stocks` to the tolerance (the stopping
/// rule and the count are the shared driver's, [`super::fixed_point::iterate`]).
fn iterate(
    m: StorageMarket,
    stocks: Vec<f64>,
    mut planted: Vec<f64>,
    mut rule: PriceRule,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    let n = stocks.len();
    let mut old: Vec<f64> = Vec::new();
    let (mut zs, mut ps) = (Vec::with_capacity(n), Vec::with_capacity(n));
    let mut solved: Vec<(f64, f64)> = Vec::with_capacity(n);
    let hi = reach(&m, &stocks);
    let mut breaks = rule_breaks(&m, &rule, hi);
    let done = super::fixed_point::iterate(o, n, |it| {
        zs.clear();
        ps.clear();
        // each grid stock's planting depends only on the previous rule and its own previous
        // planting, so the points are solved in parallel (the same bits as one by one); the scan
        // below takes them in order and stops where the loop one by one stopped (one parallel
        // call per iteration: in blocks, each call's wake-up cost more than it saved)
        let point = |j: usize, guess: f64| {
            let carried = m.keep * stocks[j];
            match m.farmers {
                None => plant_accepting(
                    &m,
                    guess,
                    &|q| expected_producer(&m, carried, q, &rule, &breaks),
                    PLANT_ACCEPT,
                ),
                // farmers plant on their rule of today's price, which the arbitrage condition
                // sets at every grid stock: P = β·E[P'(q)] − k, q = S(F(P))
                Some(f) => plant_with(&m, guess, &|q| {
                    let (_, de, e) = expected_producer(&m, carried, q, &rule, &breaks);
                    (
                        f.expect(m.discount * e - m.cost),
                        f.weight * m.discount * de,
                        e,
                    )
                }),
            }
        };
        (0..n)
            .into_par_iter()
            .zip(planted.par_iter())
            .map(|(j, &guess)| point(j, guess))
            .collect_into_vec(&mut solved);
        for (j, &(q, psi)) in solved.iter().enumerate() {
            let x = stocks[j];
            planted[j] = q;
            let p = m.discount * psi - m.cost;
            if p <= m.floor || ps.last().is_some_and(|&last| p > last) {
                if p <= m.floor && m.floor > 0.0 && m.farmers.is_none() && j > 0 && ps.len() == j {
                    // exports start: the stock where arbitrage gives export parity, between the
                    // last two grid stocks, is the rule's last knot (beyond it the price stays at
                    // export parity and the surplus goes abroad)
                    let at = |x: f64| {
                        let carried = m.keep * x;
                        let (_, psi) = plant_with(&m, planted[j], &|q| {
                            expected_producer(&m, carried, q, &rule, &breaks)
                        });
                        m.discount * psi - m.cost - m.floor
                    };
                    let tol = 1e-13 * m.q_star.max(1.0);
                    if let Some(xf) = crate::numeric::brent(at, stocks[j - 1], x, tol) {
                        if xf > stocks[j - 1] {
                            zs.push(xf + m.demand.quantity(m.floor));
                            ps.push(m.floor);
                        }
                    }
                }
                break;
            }
            zs.push(x + m.demand.quantity(p));
            ps.push(p);
        }
        let mut change = if ps.len() == old.len() {
            ps.iter()
                .zip(&old)
                .map(|(a, b)| (a - b).abs())
                .fold(0.0, f64::max)
                / m.p_star
        } else {
            f64::INFINITY
        };
        if ps.is_empty() && old.is_empty() && it > 1 {
            change = 0.0;
        }
        old.clone_from(&ps);
        rule = if ps.len() >= 2 {
            PriceRule {
                kink: zs[0],
                spline: Some(Monotone::new(zs.clone(), ps.clone())),
            }
        } else {
            PriceRule::no_storage()
        };
        breaks = rule_breaks(&m, &rule, hi);
        change
    })?;
    Ok(PrivateSolution {
        market: m,
        rule,
        stocks,
        planted,
        iterations: done.iterations,
        change: done.change,
        breaks,
        residual: f64::NAN,
        reach: None,
        memory: None,
    })
}

impl super::fixed_point::Iterated for PrivateSolution {
    fn iterations_mut(&mut self) -> &mut usize {
        &mut self.iterations
    }
}

//! Private storers beside farmers with a memory: farmers plant on a backward-looking rule with one
//! state besides the last price (adaptive expectations and constant-gain learning remember their own
//! last expectation; extrapolative and other two-lag rules the price before the last). The
//! equilibrium state is then (availability z, the farmers' memory m), and the price is a function
//! P(z, m).
//!
//! Method (docs/storage.md, "Farmers who look back"): for each memory m_l of a grid (levels) and
//! each end-of-period private stock x_j, today's price P solves the storers' arbitrage condition
//!
//! ```text
//! P + k = β·E[P'(keep·x_j + S(P^e')·Y + ε, m')],   P^e' = F(P, m_l),   m' = M(P, P^e'),
//! ```
//!
//! with F the farmers' rule (its weights asked of the rule, [`Farmers`]) and M what it remembers.
//! Given P, next season's planting and memory are known, so the expectation is the one-dimensional
//! integral over the continuous shock the whole module uses (breakpoint splitting,
//! [`super::split`]), at the breakpoints of z' ↦ P'(z', m'). The root in P is found by secant steps
//! inside a bracket (h(P) = P + k − β·E[P'] rises with P). The availability that makes x_j optimal is
//! z_j = x_j + D(P), so each level's row is an endogenous-grid price rule (Carroll 2006) as in the
//! one-state solve; between levels the rows are interpolated by cubic Lagrange polynomials in m,
//! aligned at their stockout points, exactly as the public-stock dimension is ([`super::blend`]).

use rayon::prelude::*;

use super::blend::{self, Blend};
use super::market::{Farmers, StorageMarket};
use super::solve::{first_stock_bound, reach, PriceRule, PrivateSolution, SolveOptions};
use super::split::next_nodes;
use super::StorageError;
use crate::numeric::interp::Monotone;

/// Levels of the farmers' memory of the first grid.
pub const MEMORY_LEVELS: usize = 16;
/// Largest memory grid the refinement builds.
pub const MEMORY_LEVELS_MAX: usize = 64;

/// The price rules over the farmers' memory: one endogenous-grid rule of availability per level.
#[derive(Debug, Clone)]
pub struct MemoryRules {
    /// The memory levels m_l (ascending).
    pub levels: Vec<f64>,
    /// P(z) at each level.
    pub rows: Vec<PriceRule>,
    /// Today's price at each (level, stock) (NaN where nobody stores): the rows' values, kept as
    /// the root's starting guesses.
    pub prices: Vec<Vec<f64>>,
    /// The memories the indicator path reaches, lowest and highest, once simulated.
    pub reach: Option<(f64, f64)>,
}

impl MemoryRules {
    /// Rules where nobody stores, on `levels` with `stocks` stocks.
    pub fn no_storage(levels: Vec<f64>, stocks: usize) -> MemoryRules {
        let n = levels.len();
        MemoryRules {
            levels,
            rows: vec![PriceRule::no_storage(); n],
            prices: vec![vec![f64::NAN; stocks]; n],
            reach: None,
        }
    }

    /// The interpolation across levels at memory `mem`.
    #[inline]
    pub(crate) fn blend(&self, m: &StorageMarket, mem: f64) -> Blend {
        Blend::at(m, &self.levels, &self.rows, mem)
    }

    /// Price and dP/dz at availability `z` and memory `mem`.
    #[inline]
    pub fn eval(&self, m: &StorageMarket, z: f64, mem: f64) -> (f64, f64) {
        self.blend(m, mem).price(m, &self.rows, z)
    }

    /// The availability where private stocks start at memory `mem` (∞: nobody stores there).
    pub fn kink(&self, m: &StorageMarket, mem: f64) -> f64 {
        blend::row_kinks(m, &self.levels, &self.rows, mem)
            .into_iter()
            .fold(f64::INFINITY, f64::min)
    }

    /// The stockout price at memory `mem` (0 when nobody ever stores there).
    pub fn stockout_price(&self, mem: f64) -> f64 {
        blend::stockout_price(&self.levels, &self.rows, mem).unwrap_or(0.0)
    }

    /// Private stock carried out at availability `z` and memory `mem`: z − D(P), zero below the
    /// kink.
    pub fn stock(&self, m: &StorageMarket, z: f64, mem: f64) -> f64 {
        if z <= self.kink(m, mem) {
            return 0.0;
        }
        let (p, _) = self.eval(m, z, mem);
        (z - m.demand.quantity(p)).max(0.0)
    }

    /// The availabilities in (0, `hi`) where z ↦ P(z, `mem`) is not smooth: the rows' (aligned)
    /// stockout kink and where the price reaches the market's floor (zero with linear demand).
    pub(crate) fn breaks(&self, m: &StorageMarket, mem: f64, blend: &Blend, hi: f64) -> Vec<f64> {
        let lo = 1e-6 * m.q_star;
        let mut out = Vec::with_capacity(4);
        for k in blend::row_kinks(m, &self.levels, &self.rows, mem) {
            if k.is_finite() && k > lo && k < hi {
                out.push(k);
            }
        }
        super::solve::level_breaks(m, |z| blend.price(m, &self.rows, z), hi, &mut out);
        out.sort_by(f64::total_cmp);
        out.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * m.q_star.max(1.0));
        out
    }

    /// E[P'] when `carried` private stock arrives next season and today's price is `price` at
    /// memory `mem` (farmers plant S(F(price, mem)) and remember M), and dE[P']/dP through the
    /// planting alone (the root's first slope).
    pub fn expected_next(
        &self,
        m: &StorageMarket,
        f: &Farmers,
        carried: f64,
        price: f64,
        mem: f64,
        hi: f64,
    ) -> (f64, f64) {
        let expected = f.expect_with(price, mem);
        let mem1 = f.next_memory(price, expected);
        let (q, dq) = m.supply_at(expected);
        let blend = self.blend(m, mem1);
        let breaks = self.breaks(m, mem1, &blend, hi);
        let (mut e, mut d) = (0.0, 0.0);
        next_nodes(m, carried, q, &breaks, |z, dz, w| {
            let (p, dp) = blend.price(m, &self.rows, z);
            e += w * p;
            d += w * dp * dz;
        });
        (e, d * dq * f.weight)
    }
}

/// Today's price at end-of-period stock `x` (carried: keep·x) and memory `mem` under `rules` for
/// next season: the root of h(P) = P + k − β·E[P' | P], starting from `guess`. `None` when the root
/// lies at or below the market's floor (storers would not carry x at any price the market can
/// reach).
fn arbitrage_price(
    m: &StorageMarket,
    f: &Farmers,
    rules: &MemoryRules,
    carried: f64,
    mem: f64,
    hi: f64,
    guess: f64,
) -> Option<f64> {
    let (beta, k, scale) = (m.discount, m.cost, m.p_star.max(1e-12));
    let eval = |p: f64| {
        let (psi, d) = rules.expected_next(m, f, carried, p, mem, hi);
        (p + k - beta * psi, beta * psi - k, 1.0 - beta * d)
    };
    let (mut lo, mut up) = (m.floor, f64::INFINITY);
    let mut lo_checked = false;
    let mut p = if guess.is_finite() && guess > m.floor {
        guess
    } else {
        m.p_star
    };
    let mut prev: Option<(f64, f64)> = None;
    let mut out = f64::NAN;
    for _ in 0..200 {
        let (h, price, slope0) = eval(p);
        out = price;
        if h.abs() <= 1e-13 * scale {
            break;
        }
        if h < 0.0 {
            lo = p;
            lo_checked = true;
        } else {
            up = p;
        }
        let secant = prev
            .filter(|&(pp, _)| pp != p)
            .map(|(pp, hp)| (h - hp) / (p - pp))
            .filter(|s| s.is_finite() && *s > 0.0);
        prev = Some((p, h));
        let slope = secant.unwrap_or(slope0.max(1e-3));
        let mut next = p - h / slope;
        if !(next > lo && next < up) {
            if !lo_checked && next <= lo {
                // is there a root above the floor at all?
                let at = lo.max(1e-9 * scale);
                let (hf, _, _) = eval(at);
                if hf >= 0.0 {
                    return None;
                }
                lo = at;
                lo_checked = true;
            }
            next = if up.is_finite() {
                0.5 * (lo + up)
            } else {
                2.0 * p + scale
            };
        }
        if (next - p).abs() <= 1e-14 * scale || up - lo <= 1e-14 * scale {
            break;
        }
        p = next;
    }
    Some(out)
}

/// One level's new row and starting guesses from `rules`.
fn level_row(
    m: &StorageMarket,
    f: &Farmers,
    rules: &MemoryRules,
    stocks: &[f64],
    l: usize,
    hi: f64,
) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mem = rules.levels[l];
    let n = stocks.len();
    let (mut zs, mut ps) = (Vec::with_capacity(n), Vec::with_capacity(n));
    let mut guesses = vec![f64::NAN; n];
    let mut last_found = f64::NAN;
    for (j, &x) in stocks.iter().enumerate() {
        let guess = if rules.prices[l][j].is_finite() {
            rules.prices[l][j]
        } else {
            last_found
        };
        let Some(p) = arbitrage_price(m, f, rules, m.keep * x, mem, hi, guess) else {
            break;
        };
        guesses[j] = p;
        if p <= m.floor || ps.last().is_some_and(|&last| p > last) {
            break;
        }
        last_found = p;
        zs.push(x + m.demand.quantity(p));
        ps.push(p);
    }
    (zs, ps, guesses)
}

/// The row of a level from its knots.
fn row_of(zs: Vec<f64>, ps: Vec<f64>) -> PriceRule {
    if ps.len() >= 2 {
        PriceRule {
            kink: zs[0],
            spline: Some(Monotone::new(zs, ps)),
        }
    } else {
        PriceRule::no_storage()
    }
}

/// Iterates the two-state rules from `rules` on the stock grid `stocks` to the tolerance (the
/// shared driver's stopping rule and count, [`super::fixed_point::iterate`]); levels in parallel,
/// collected in order, so the result does not depend on the number of threads.
fn iterate(
    m: StorageMarket,
    stocks: Vec<f64>,
    mut rules: MemoryRules,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    let Some(f) = m.farmers else {
        return Err(StorageError::BadOption {
            name: "expectations.rule".into(),
            value: "rational".into(),
            expected: "a backward-looking rule with a memory".into(),
        });
    };
    let hi = reach(&m, &stocks);
    let levels = rules.levels.len();
    let done = super::fixed_point::iterate(o, stocks.len() * levels, |_| {
        let next: Vec<(Vec<f64>, Vec<f64>, Vec<f64>)> = (0..levels)
            .into_par_iter()
            .map(|l| level_row(&m, &f, &rules, &stocks, l, hi))
            .collect();
        let mut change = 0.0_f64;
        let mut rows = Vec::with_capacity(levels);
        let mut prices = Vec::with_capacity(levels);
        for (l, (zs, ps, guesses)) in next.into_iter().enumerate() {
            let old = rules.rows[l]
                .spline
                .as_ref()
                .map_or(&[][..], |s| s.values());
            change = if old.len() == ps.len() {
                ps.iter()
                    .zip(old)
                    .map(|(a, b)| (a - b).abs() / m.p_star)
                    .fold(change, f64::max)
            } else if old.len() < 2 && ps.len() < 2 {
                change
            } else {
                f64::INFINITY
            };
            rows.push(row_of(zs, ps));
            prices.push(guesses);
        }
        rules.rows = rows;
        rules.prices = prices;
        change
    })?;
    let mid = nearest_level(&rules.levels, m.p_star);
    Ok(PrivateSolution {
        rule: rules.rows[mid].clone(),
        planted: vec![m.q_star; stocks.len()],
        breaks: Vec::new(),
        market: m,
        stocks,
        iterations: done.iterations,
        change: done.change,
        residual: f64::NAN,
        reach: None,
        memory: Some(rules),
    })
}

fn nearest_level(levels: &[f64], at: f64) -> usize {
    (0..levels.len())
        .min_by(|&a, &b| (levels[a] - at).abs().total_cmp(&(levels[b] - at).abs()))
        .unwrap_or(0)
}

/// `count` evenly spaced memory levels over [lo, hi].
pub fn even_levels(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    let count = count.max(4);
    (0..count)
        .map(|i| lo + (hi - lo) * i as f64 / (count - 1) as f64)
        .collect()
}

/// The memory levels of the first solve: from 0.7 to 1.6 × P\* (the indicator path then sets
/// them, [`cover_memory`]).
pub fn first_levels(m: &StorageMarket) -> Vec<f64> {
    even_levels(0.7 * m.p_star, 1.6 * m.p_star, MEMORY_LEVELS)
}

/// Solves the equilibrium of storers beside farmers with a memory on `levels`, from nobody
/// storing.
pub fn solve_memory(
    m: StorageMarket,
    levels: Vec<f64>,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    let n = o.grid_2d.max(8);
    let x_max = first_stock_bound(&m);
    let stocks: Vec<f64> = (0..n)
        .map(|j| x_max * (j as f64 / (n - 1) as f64).powi(2))
        .collect();
    let rules = MemoryRules::no_storage(levels, n);
    iterate(m, stocks, rules, o)
}

/// The solution `sol` solved again on new `levels` and `stocks` (longer or finer grids), starting
/// from its rules: each new level's first row interpolates the old rows' prices at every grid stock
/// (cubic Lagrange in the memory, as the blend), new stocks take the nearest old stock's price.
pub fn resolve(
    sol: PrivateSolution,
    levels: Vec<f64>,
    stocks: Vec<f64>,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    let Some(old) = sol.memory.as_ref() else {
        return Ok(sol);
    };
    let m = sol.market.clone();
    let old_at = |j_new: usize| -> usize {
        let x = stocks[j_new];
        let k = sol
            .stocks
            .partition_point(|&v| v <= x)
            .clamp(1, sol.stocks.len());
        if k < sol.stocks.len() && (sol.stocks[k] - x).abs() < (x - sol.stocks[k - 1]).abs() {
            k
        } else {
            k - 1
        }
    };
    let mut rows = Vec::with_capacity(levels.len());
    let mut prices = Vec::with_capacity(levels.len());
    for &mem in &levels {
        let (s, w, cnt) = blend::weights(&old.levels, mem);
        let mut guesses = vec![f64::NAN; stocks.len()];
        let (mut zs, mut ps) = (Vec::new(), Vec::new());
        for (j, g) in guesses.iter_mut().enumerate() {
            let jo = old_at(j);
            let p: f64 = (0..cnt).map(|i| w[i] * old.prices[s + i][jo]).sum();
            if !p.is_finite() {
                break;
            }
            *g = p;
            // a first row only where the old grid had the same stock (new stocks: guesses only)
            if (sol.stocks[jo] - stocks[j]).abs() <= 1e-12 * m.q_star
                && p > m.floor
                && ps.last().is_none_or(|&last| p < last)
            {
                zs.push(stocks[j] + m.demand.quantity(p));
                ps.push(p);
            }
        }
        rows.push(row_of(zs, ps));
        prices.push(guesses);
    }
    let rules = MemoryRules {
        levels,
        rows,
        prices,
        reach: old.reach,
    };
    let total = sol.iterations;
    let out = iterate(m, stocks, rules, o)?;
    Ok(super::fixed_point::after(total, out))
}

/// Extends the stock grid of a two-state solution up to `x_max` and solves again from its rules.
pub fn extend(
    sol: PrivateSolution,
    x_max: f64,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    let (stocks, _) = super::solve::continue_grid(&sol.stocks, &sol.planted, x_max);
    let levels = sol
        .memory
        .as_ref()
        .map(|r| r.levels.clone())
        .unwrap_or_default();
    resolve(sol, levels, stocks, o)
}

impl PrivateSolution {
    /// The rules over the farmers' memory (two-state solutions only).
    pub fn memory_rules(&self) -> Option<&MemoryRules> {
        self.memory.as_ref()
    }

    /// The price at availability `z` and farmers' memory `mem` (the memory is ignored by a
    /// one-state solution).
    pub fn price_at(&self, z: f64, mem: f64) -> f64 {
        match &self.memory {
            Some(r) => r.eval(&self.market, z, mem).0,
            None => self.rule.price(&self.market, z),
        }
    }

    /// Private stock carried out at availability `z` and memory `mem`.
    pub fn stock_at(&self, z: f64, mem: f64) -> f64 {
        match &self.memory {
            Some(r) => r.stock(&self.market, z, mem),
            None => self.rule.stock(&self.market, z),
        }
    }

    /// The arbitrage residual at availability `z` and memory `mem` of a two-state solution (see
    /// `check.rs`).
    pub fn euler_residual_with(&self, z: f64, mem: f64) -> f64 {
        let Some(r) = &self.memory else {
            return self.euler_residual(z);
        };
        let m = &self.market;
        let Some(f) = m.farmers else {
            return f64::NAN;
        };
        let (price, _) = r.eval(m, z, mem);
        let x = r.stock(m, z, mem);
        if price <= 0.0 {
            return 0.0;
        }
        let hi = reach(m, &self.stocks);
        let (psi, _) = r.expected_next(m, &f, m.keep * x, price, mem, hi);
        let res = (m.discount * psi - m.cost) / price - 1.0;
        if x > 0.0 {
            res.abs()
        } else {
            res.max(0.0)
        }
    }
}

/// Rounds of re-gridding the memory to the range the indicator path reaches.
const COVER_ROUNDS: usize = 4;

/// Solves the equilibrium beside farmers with a memory and fits the memory grid to the memories the
/// indicator path reaches: solved first on [`first_levels`], then on the path's range widened by a
/// tenth of its width on each side (at least 20 % of P\* wide), from the current rules, until the
/// path stays inside the grid; then, while the Euler residual over the path's states exceeds
/// [`super::RESIDUAL_LIMIT`], the stock and memory intervals whose residual exceeds
/// [`super::REFINE_TARGET`] are halved ([`refined_grids`]) and the rules solved again from the
/// current ones. (The residual check of [`super::solve`] then accepts or refuses the result.)
pub fn solve_covered(
    m: StorageMarket,
    scenario: &crate::scenario::Scenario,
    o: &SolveOptions,
) -> Result<PrivateSolution, StorageError> {
    let p = m.p_star;
    let mut sol = solve_memory(m.clone(), first_levels(&m), o)?;
    let path_range = |sol: &PrivateSolution| {
        let eq = super::Equilibrium::Private(sol.clone());
        super::memory_reach(&super::indicator_path(&eq, scenario, 0.0))
    };
    for round in 0..COVER_ROUNDS {
        let Some((lo, hi)) = path_range(&sol) else {
            break;
        };
        let levels = &sol.memory.as_ref().map_or(&[][..], |r| &r.levels[..]);
        let inside = lo >= levels[0] && hi <= levels[levels.len() - 1];
        if inside && round > 0 {
            break;
        }
        let mid = 0.5 * (lo + hi);
        let half = (0.6 * (hi - lo)).max(0.1 * p);
        let count = levels.len();
        let new = even_levels(mid - half, mid + half, count);
        let stocks = sol.stocks.clone();
        sol = resolve(sol, new, stocks, o)?;
    }
    // finer grids where the residual is too large, while the residual over the path's states is
    // above the limit
    for _ in 0..REFINE_ROUNDS {
        let Some((lo, hi)) = path_range(&sol) else {
            break;
        };
        if let Some(r) = sol.memory.as_mut() {
            r.reach = Some((lo, hi));
        }
        let residual = sol.euler_residual_max(o.test_points);
        if residual <= super::RESIDUAL_LIMIT {
            break;
        }
        let Some((stocks, levels)) = refined_grids(&sol, super::REFINE_TARGET) else {
            break;
        };
        sol = resolve(sol, levels, stocks, o)?;
    }
    Ok(sol)
}

/// Refinement rounds of a two-state solve beside farmers with a memory.
const REFINE_ROUNDS: usize = 6;
/// Largest refined stock grid.
const REFINE_MAX_STOCKS: usize = 1200;

/// The grids of a refinement round: every stock interval where some level's row has a residual
/// above `target` at its quarter points is halved, and every memory interval whose residual at its
/// midpoint (at the knots' midpoints) exceeds `target`. `None` when nothing is to split or the
/// grids would grow past [`REFINE_MAX_STOCKS`] and [`MEMORY_LEVELS_MAX`].
fn refined_grids(sol: &PrivateSolution, target: f64) -> Option<(Vec<f64>, Vec<f64>)> {
    let r = sol.memory.as_ref()?;
    let nx = sol.stocks.len();
    let nl = r.levels.len();
    // levels in parallel, collected in order (flags or-ed: the same at any thread count)
    let flags: Vec<(Vec<bool>, bool)> = (0..nl)
        .into_par_iter()
        .map(|l| {
            let mut split_x = vec![false; nx - 1];
            let mut split_m = false;
            let Some(sp) = r.rows[l].spline.as_ref() else {
                return (split_x, split_m);
            };
            let zs = sp.knots();
            for j in 0..zs.len() - 1 {
                let worst = [0.25, 0.5, 0.75]
                    .iter()
                    .map(|f| sol.euler_residual_with(zs[j] + f * (zs[j + 1] - zs[j]), r.levels[l]))
                    .fold(0.0, f64::max);
                split_x[j] = worst > target;
                if l + 1 < nl && !split_m {
                    let mid = 0.5 * (r.levels[l] + r.levels[l + 1]);
                    split_m = sol.euler_residual_with(0.5 * (zs[j] + zs[j + 1]), mid) > target;
                }
            }
            (split_x, split_m)
        })
        .collect();
    let mut split_x = vec![false; nx - 1];
    let mut split_m = vec![false; nl - 1];
    for (l, (fx, fm)) in flags.into_iter().enumerate() {
        for (a, b) in split_x.iter_mut().zip(fx) {
            *a |= b;
        }
        if l + 1 < nl {
            split_m[l] = fm;
        }
    }
    let grow_x = split_x.iter().filter(|&&b| b).count();
    let grow_m = split_m.iter().filter(|&&b| b).count();
    let grow_x = if nx + grow_x > REFINE_MAX_STOCKS {
        0
    } else {
        grow_x
    };
    let grow_m = if nl + grow_m > MEMORY_LEVELS_MAX {
        0
    } else {
        grow_m
    };
    if grow_x == 0 && grow_m == 0 {
        return None;
    }
    let halve = |v: &[f64], split: &[bool], on: bool| {
        let mut out = Vec::with_capacity(v.len() * 2);
        for j in 0..v.len() {
            out.push(v[j]);
            if on && j + 1 < v.len() && split[j] {
                out.push(0.5 * (v[j] + v[j + 1]));
            }
        }
        out
    };
    Some((
        halve(&sol.stocks, &split_x, grow_x > 0),
        halve(&r.levels, &split_m, grow_m > 0),
    ))
}

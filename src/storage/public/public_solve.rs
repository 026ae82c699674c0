//! Solving the two-state (public band stock) equilibrium: endogenous-grid iteration on a grid of
//! end-of-period private stock × public stock, and residual-driven refinement of both grids.

use rayon::prelude::*;

use super::agency::ReleaseInStorage;
use super::market::StorageMarket;
use super::next_price::NextPrice;
use super::public::{reach, Band, PublicSolution};
use super::solve::{plant_accepting, PriceRule, SolveOptions, PLANT_ACCEPT};
use super::StorageError;
use crate::numeric::interp::Monotone;

/// Solves the two-state equilibrium on `o.grid_2d` private-stock points × `o.public_grid`
/// public-stock points (no refinement).
pub fn solve_public(
    m: StorageMarket,
    band: Band,
    o: &SolveOptions,
) -> Result<PublicSolution, StorageError> {
    let n = o.grid_2d.max(8);
    let mm = o.public_grid.max(2);
    let x_max = o
        .stock_bound
        .unwrap_or_else(|| super::solve::first_stock_bound(&m));
    let stocks: Vec<f64> = (0..n)
        .map(|j| x_max * (j as f64 / (n - 1) as f64).powi(2))
        .collect();
    let mut publics: Vec<f64> = (0..mm)
        .map(|i| band.capacity * i as f64 / (mm - 1) as f64)
        .collect();
    // A release rule may switch what it does at a carried-in stock G* (the target rule: from
    // restocking to running down): the rules bend there as functions of G. The level is put on
    // the grid twice, and interpolation never reaches across it (see [`super::blend::weights`]).
    if let Some(gs) = band.release.bend(band.keep) {
        if gs > 0.0 && gs < band.capacity {
            let k = publics.partition_point(|&v| v < gs);
            publics.splice(k..k, [gs, gs]);
        }
    }
    let mm = publics.len();
    let planted = vec![vec![m.q_star; n]; mm];
    let start = (publics.clone(), vec![PriceRule::no_storage(); mm]);
    iterate(m, band, stocks, publics, planted, start, o)
}

/// A refinement round that does not cut the residual below this fraction of the last one is not
/// material: refinement stops there (common practice, no source).
pub const REFINE_STALL: f64 = 0.9;

/// How a two-state refinement judges its progress: `measure` gives the residual of a solution (the
/// one the caller's accuracy check uses; `None`: the largest residual the refinement's own scan of
/// the grid finds), and refinement stops once it is at or below `limit`. A solution whose
/// `residual` is already set is taken as measured.
pub struct RefineStop<'a> {
    pub limit: f64,
    pub measure: Option<&'a mut dyn FnMut(&mut PublicSolution) -> f64>,
}

/// Refines a two-state solution: halves every private-stock interval where some row's residual at
/// its quarter points exceeds `target`, and every public-stock interval where the residual at its
/// midpoint does, then solves again from the current rules. Stops when nothing is too coarse, the
/// grids would pass `max_stocks` × `max_publics` points, the residual ([`RefineStop`]) is at or below
/// `stop.limit`, or a round cut it by less than a tenth ([`REFINE_STALL`]); returns the solution
/// with the lowest residual reached.
pub fn refine_public(
    mut sol: PublicSolution,
    o: &SolveOptions,
    target: f64,
    max_stocks: usize,
    max_publics: usize,
    mut stop: RefineStop<'_>,
) -> Result<PublicSolution, StorageError> {
    let mut total = sol.iterations;
    // residual of the best solution so far (measured lazily for the scan's own residual)
    let mut best: Option<(PublicSolution, f64)> = None;
    // (a residual the caller measured already is taken as the first one)
    let mut reached = match stop.measure.as_mut() {
        Some(_) if sol.residual.is_finite() => Some(sol.residual),
        Some(f) => Some(f(&mut sol)),
        None => None,
    };
    for _ in 0..12 {
        // (with a measure the scan waits until the stop rules below have been checked: after the
        // last round it would only be thrown away)
        let mut scanned = if reached.is_none() {
            Some(scan(&sol, target))
        } else {
            None
        };
        let residual = reached.unwrap_or_else(|| scanned.as_ref().map_or(f64::NAN, |s| s.2));
        if let Some((_, last)) = &best {
            if residual > REFINE_STALL * last {
                // not a material improvement: keep the better of the two and stop
                if residual >= *last {
                    sol = best.take().map_or(sol, |b| b.0);
                }
                return Ok(with_total(sol, total));
            }
        }
        if residual <= stop.limit {
            break;
        }
        let (split_x, split_g, _) = match scanned.take() {
            Some(s) => s,
            None => scan(&sol, target),
        };
        let add_x = split_x.iter().filter(|&&b| b).count();
        let add_g = split_g.iter().filter(|&&b| b).count();
        if add_x + add_g == 0 {
            break;
        }
        let nx = sol.stocks.len();
        let add_x = if nx + add_x > max_stocks { 0 } else { add_x };
        let add_g = if sol.publics.len() + add_g > max_publics {
            0
        } else {
            add_g
        };
        if add_x + add_g == 0 {
            break;
        }
        let stocks = if add_x > 0 {
            halve(&sol.stocks, &split_x)
        } else {
            sol.stocks.clone()
        };
        let publics = if add_g > 0 {
            halve(&sol.publics, &split_g)
        } else {
            sol.publics.clone()
        };
        super::progress::report(super::progress::ProgressEvent::Stage(
            super::progress::Stage::Refining,
        ));
        let planted: Vec<Vec<f64>> = publics
            .iter()
            .map(|&g| stocks.iter().map(|&x| sol.planted_guess(x, g)).collect())
            .collect();
        let start = (sol.publics.clone(), sol.rows.clone());
        let mut next = iterate(
            sol.market.clone(),
            sol.band,
            stocks,
            publics,
            planted,
            start,
            o,
        )?;
        total += next.iterations;
        reached = stop.measure.as_mut().map(|f| f(&mut next));
        best = Some((std::mem::replace(&mut sol, next), residual));
    }
    Ok(with_total(sol, total))
}

/// `sol` with the count of every solve of the refinement (`total` already holds its own).
fn with_total(mut sol: PublicSolution, total: usize) -> PublicSolution {
    sol.iterations = total;
    sol
}

/// The intervals of both grids a refinement round splits (private stock: some row's residual at the
/// quarter points above `target`; public stock: the residual at the midpoint above it) and the
/// largest residual the scan met.
fn scan(sol: &PublicSolution, target: f64) -> (Vec<bool>, Vec<bool>, f64) {
    let mut split_x = vec![false; sol.stocks.len() - 1];
    let mut split_g = vec![false; sol.publics.len() - 1];
    let mut most = 0.0_f64;
    // levels in parallel, collected in order (flags are or-ed and residuals maxed: the same at
    // any number of threads)
    let levels: Vec<Option<(Vec<f64>, Vec<f64>)>> = (0..sol.publics.len())
        .into_par_iter()
        .map(|mi| {
            let g = sol.publics[mi];
            // y at the knots of this row: y_j = x_j + D(π_jm)
            let ys: Vec<f64> = sol.rows[mi].spline.as_ref()?.knots().to_vec();
            let quarters: Vec<f64> = ys
                .windows(2)
                .flat_map(|w| [0.25, 0.5, 0.75].map(|f| w[0] + f * (w[1] - w[0])))
                .collect();
            let at_quarters = sol.end_residuals(&quarters, g);
            // (every midpoint is evaluated: the largest residual met is compared between rounds)
            let at_mid = if mi + 1 < sol.publics.len() {
                let gm = 0.5 * (g + sol.publics[mi + 1]);
                let mids: Vec<f64> = ys.windows(2).map(|w| 0.5 * (w[0] + w[1])).collect();
                sol.end_residuals(&mids, gm)
            } else {
                Vec::new()
            };
            Some((at_quarters, at_mid))
        })
        .collect();
    for (mi, level) in levels.into_iter().enumerate() {
        let Some((at_quarters, at_mid)) = level else {
            continue;
        };
        for (j, r3) in at_quarters.chunks(3).enumerate() {
            let worst = r3.iter().copied().fold(0.0, f64::max);
            most = most.max(worst);
            if worst > target {
                split_x[j] = true;
            }
        }
        for &r in &at_mid {
            most = most.max(r);
            if r > target {
                split_g[mi] = true;
            }
        }
    }
    (split_x, split_g, most)
}

/// Extends the private-stock grid of a two-state solution up to `x_max` (long paths carry more than
/// the grid held) and solves again from the current rules.
pub fn extend_public(
    sol: PublicSolution,
    x_max: f64,
    o: &SolveOptions,
) -> Result<PublicSolution, StorageError> {
    let mut stocks = Vec::new();
    let planted: Vec<Vec<f64>> = sol
        .planted
        .iter()
        .map(|row| {
            let (s, q) = super::solve::continue_grid(&sol.stocks, row, x_max);
            stocks = s;
            q
        })
        .collect();
    let total = sol.iterations;
    let start = (sol.publics.clone(), sol.rows.clone());
    let out = iterate(sol.market, sol.band, stocks, sol.publics, planted, start, o)?;
    Ok(super::fixed_point::after(total, out))
}

/// `v` with the midpoint of every interval whose flag is set inserted.
fn halve(v: &[f64], split: &[bool]) -> Vec<f64> {
    let mut out = Vec::with_capacity(v.len() * 2);
    for j in 0..v.len() {
        out.push(v[j]);
        // a doubled level (a barrier of the interpolation) is never split
        if j + 1 < v.len() && split[j] && v[j + 1] > v[j] {
            out.push(0.5 * (v[j] + v[j + 1]));
        }
    }
    out
}

/// Steps of history the two-state iteration mixes over ([`super::fixed_point::Anderson`]; 0: the
/// plain iteration).
pub const MIXING_DEPTH: usize = 4;

/// The price rule of one public-stock level from its end-of-period prices `prices` at the private
/// stocks `stocks`: the pairs (x_j + D(p_j), p_j) up to the first price at or below the floor (or
/// NaN, a point cut off before), leaving out points where the price would rise with x (the rule is
/// their decreasing envelope).
fn level_rule(m: &StorageMarket, stocks: &[f64], prices: &[f64]) -> PriceRule {
    let n = stocks.len();
    let (mut ys, mut ps) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for (&x, &p) in stocks.iter().zip(prices) {
        if p.is_nan() || p <= m.floor {
            break;
        }
        if ps.last().is_some_and(|&last| p > last) {
            continue;
        }
        ys.push(x + m.demand.quantity(p));
        ps.push(p);
    }
    if ps.len() >= 2 {
        PriceRule {
            kink: ys[0],
            spline: Some(Monotone::new(ys, ps)),
        }
    } else {
        PriceRule::no_storage()
    }
}

/// Endogenous-grid iteration to the tolerance; the first expectation uses the rules `start` (on their
/// own public-stock grid). The stopping rule and the count are the shared driver's
/// ([`super::fixed_point::iterate`]): an iteration maps the end-of-period prices the rules were
/// built from to new ones, and stops when no price moved by more than the tolerance; the next
/// rules are built from Anderson's mix of the recent steps ([`MIXING_DEPTH`]), except after the
/// last step, whose rules are the map's own image.
fn iterate(
    m: StorageMarket,
    band: Band,
    stocks: Vec<f64>,
    publics: Vec<f64>,
    mut planted: Vec<Vec<f64>>,
    start: (Vec<f64>, Vec<PriceRule>),
    o: &SolveOptions,
) -> Result<PublicSolution, StorageError> {
    let n = stocks.len();
    let mm = publics.len();
    let (mut prev_publics, mut rows) = start;
    // the end-of-period prices the current rules were built from, level by level (NaN: cut off)
    let mut current: Vec<f64> = Vec::new();
    let mut mixer = super::fixed_point::Anderson::new(MIXING_DEPTH);
    let hi = reach(&m, &stocks);
    // one Newton step of planting per point once it is short (see [`plant_accepting`])
    let accept = PLANT_ACCEPT;
    let done = super::fixed_point::iterate(o, n * mm, |it| {
        // rows are independent given last iteration's rules: solved in parallel, collected in order
        // (the result does not depend on the number of threads)
        let image: Vec<f64> = publics
            .par_iter()
            .zip(planted.par_iter_mut())
            .map(|(&gm, planted_row)| {
                let np = NextPrice::prepared(&m, &band, &prev_publics, &rows, band.keep * gm);
                let breaks = np.pieces(hi);
                let mut raw = vec![f64::NAN; n];
                for (j, &x) in stocks.iter().enumerate() {
                    let (q, psi) = plant_accepting(
                        &m,
                        planted_row[j],
                        &|q| np.expect(m.keep * x, q, &breaks),
                        accept,
                    );
                    planted_row[j] = q;
                    let p = m.discount * psi - m.cost;
                    if p <= m.floor {
                        break;
                    }
                    raw[j] = p;
                }
                raw
            })
            .collect::<Vec<Vec<f64>>>()
            .concat();
        let change = if it == 1 {
            f64::INFINITY
        } else {
            image
                .iter()
                .zip(current.iter())
                .map(|(a, b)| match (a.is_nan(), b.is_nan()) {
                    (true, true) => 0.0,
                    (false, false) => (a - b).abs(),
                    _ => f64::INFINITY,
                })
                .fold(0.0, f64::max)
                / m.p_star
        };
        // (the first image is on a grid of its own rules' making: mixing starts after it)
        let next = if it == 1 || change < o.tolerance {
            image
        } else {
            mixer.next(&current, &image)
        };
        rows = next
            .par_chunks(n)
            .map(|prices| level_rule(&m, &stocks, prices))
            .collect();
        current = next;
        prev_publics.clone_from(&publics);
        change
    })?;
    Ok(PublicSolution {
        market: m,
        band,
        publics,
        rows,
        stocks,
        planted,
        iterations: done.iterations,
        change: done.change,
        residual: f64::NAN,
        reach: None,
    })
}

impl super::fixed_point::Iterated for PublicSolution {
    fn iterations_mut(&mut self) -> &mut usize {
        &mut self.iterations
    }
}

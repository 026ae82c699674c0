//! The agency's rule inside the storage equilibrium.
//!
//! What each policy rule does here is written in its own file (`crate::policies::Rule::storage`): each
//! adds itself to a [`StoragePlan`], and [`band_of`] turns the plan into the agency's [`Band`].
//! Given the state (availability z, public stock g carried in) and the price that would result
//! from any end-of-period public stock G, pg(G) = P(y = z + g − G, G) (increasing in G), [`decide`]
//! fixes G as the period engine's rules do: the stock's release rule decides
//! ([`ReleaseInStorage::decide`], in the rule's own file `policies/stock.rs`: the band, then what the
//! release rule does inside it; a purchase floor and a ceiling by release set the band's edges), then
//! the purchase budget cuts what it spends (here). Nothing here names a release rule. `tests/rules.rs` runs the engine's period
//! decision and this one on the same states and checks they agree.

use super::StorageError;
pub use crate::policies::in_storage::{AgencyMode, Band, Decision, ReleaseInStorage, StoragePlan};
use crate::policies::stock::Release;
use crate::policies::PolicySpec;

/// The plan of `policy`: each rule adds what it does; an error names the rule's section when the
/// storage model does not cover it as configured.
pub fn plan_of(policy: &PolicySpec) -> Result<StoragePlan, StorageError> {
    let mut plan = StoragePlan::default();
    for rule in &policy.rules {
        rule.storage(&mut plan)
            .map_err(|reason| StorageError::UnsupportedPolicy {
                file: policy.source.clone(),
                key: format!("[{}]", rule.section()),
                reason,
            })?;
    }
    Ok(plan)
}

/// The agency's rule as a price band inside the storage equilibrium, or `None` for a policy that
/// does not trade. Covered: a band stock released by the band, the target or the share rule, a floor
/// defended by purchase (a band that never sells), a ceiling defended by release (the selling edge
/// lowered to the ceiling; with the target or drawdown release only where it lies at or above
/// `sell_above`), within a purchase budget if one is set (an unlimited capacity is solved on a
/// bounded grid, see [`super::solve`]); payments do not trade.
pub fn band_of(policy: &PolicySpec) -> Result<Option<Band>, StorageError> {
    let unsupported = |key: &str, reason: &str| StorageError::UnsupportedPolicy {
        file: policy.source.clone(),
        key: key.into(),
        reason: reason.into(),
    };
    if let Some(e) = policy.expectations {
        if !e.is_rational() {
            return Err(unsupported(
                "expectations.rule",
                &format!("\"{}\": the storage model needs rule = \"rational\" (farmers and storers look ahead)", e.rule_name()),
            ));
        }
    }
    let plan = plan_of(policy)?;
    let floor = plan.purchase_floor;
    let band = match plan.stock {
        // a purchase floor without a [stock] section: an unlimited store without losses that never
        // sells (as in the period engine); solved on a bounded grid, see `storage::solve`
        None => floor.map(|f| Band {
            buy_below: f,
            sell_above: f64::INFINITY,
            capacity: f64::INFINITY,
            keep: 1.0,
            release: Release::band_only(),
            budget: f64::INFINITY,
        }),
        // a store that holds nothing never trades
        Some(stock) if stock.capacity <= 0.0 => return Ok(None),
        Some(stock) => {
            let buy_below = floor.map_or(stock.buy_below, |f| f.max(stock.buy_below));
            let sell_above = if floor.is_some() && stock.sell_above <= buy_below {
                f64::INFINITY
            } else {
                stock.sell_above
            };
            Some(Band {
                buy_below,
                sell_above,
                capacity: stock.capacity,
                keep: stock.keep,
                release: stock.release,
                budget: stock.budget,
            })
        }
    };
    let (Some(mut band), Some(c)) = (band, plan.ceiling) else {
        return Ok(band);
    };
    if c >= band.sell_above {
        // the band sells down to sell_above or runs out first: the ceiling never acts
        return Ok(Some(band));
    }
    if c <= band.buy_below {
        return Err(unsupported(
            "ceiling.price",
            "a ceiling at or below the price the agency buys at (floor or stock.buy_below): the \
             storage model needs the selling edge above the buying one",
        ));
    }
    if band.release.trades_inside_band() {
        return Err(unsupported(
            "ceiling.price",
            "a ceiling below stock.sell_above with release = \"target\" or \"drawdown\" is not \
             covered by the storage model (set the ceiling at or above sell_above, or use the band \
             release)",
        ));
    }
    band.sell_above = c;
    Ok(Some(band))
}

/// The agency's decision, the price and dP/dz (0 where the price is held at a limit).
///
/// With a finite purchase budget B, purchases G − g > 0 are cut, as in the period engine
/// (`Clearing::buy_at_most`), so that the spending at the price they leave, (G − g)·pg(G), is at most
/// B: when the rule's own decision would spend more, G solves (G − g)·pg(G) = B (the left side
/// increases with G) and the regime is [`AgencyMode::BudgetBound`]. The slope dpg/dG that root and
/// dP/dz need is taken here by central differences; a caller that knows it uses [`decide_knowing`].
#[inline]
pub fn decide<F: Fn(f64) -> (f64, f64)>(
    band: &Band,
    g: f64,
    pg: &F,
) -> (f64, f64, AgencyMode, Decision) {
    let pgd = |gg: f64| {
        let (p, p_y) = pg(gg);
        let h = 1e-6 * gg.abs().max(1.0);
        let lo = (gg - h).max(g);
        (p, p_y, (pg(gg + h).0 - pg(lo).0) / (gg + h - lo))
    };
    decide_knowing(band, g, pg, &pgd)
}

/// [`decide`] for a caller that knows how pg changes with G: `pgd(G)` gives pg(G), ∂P/∂z at fixed
/// G and dpg/dG. The budget-bound root is found by Newton steps kept inside its bracket (the
/// function is increasing and smooth between the few points where the rows' interpolation
/// switches), from the purchase the budget pays for at the rule's own price: 3.6 evaluations of
/// pg on average on the demo's budget-bound store, where Brent's method (with the central
/// differences for the slope) took fifteen to twenty.
#[inline]
pub fn decide_knowing<F: Fn(f64) -> (f64, f64), H: Fn(f64) -> (f64, f64, f64)>(
    band: &Band,
    g: f64,
    pg: &F,
    pgd: &H,
) -> (f64, f64, AgencyMode, Decision) {
    // the stock rule decides (with the edges a purchase floor and a ceiling set), in its own file
    let out = band.release.decide(band, g, pg);
    if band.budget.is_finite() {
        if let Some((lo, hi)) = budget_bracket(band.budget, g, out.0, out.3, pg) {
            return spend_budget(band.budget, g, out.0, lo, hi, pgd);
        }
    }
    out
}

/// Where the root of (G − g)·pg(G) = budget lies when the decision `d` (at price `price`) would
/// spend more than `budget` on purchases, else `None`: spending is below the budget at the lower
/// end and above it at the upper one.
fn budget_bracket<F: Fn(f64) -> (f64, f64)>(
    budget: f64,
    g: f64,
    price: f64,
    d: Decision,
    pg: &F,
) -> Option<(f64, f64)> {
    match d {
        Decision::Stock(to) if to > g && (to - g) * price > budget => Some((g, to)),
        Decision::AtPrice { price, hi, .. } if hi > g => {
            // the held price needs the G where pg(G) = price; the budget buys only up to g + B/price
            let most = g + budget / price;
            (most < hi && pg(most).0 < price).then_some((most, hi))
        }
        _ => None,
    }
}

/// The outcome when the budget binds: G from (G − g)·pg(G) = budget in [lo, hi] (`price`: the
/// price of the rule's own decision, above pg at the root), the price pg(G), and dP/dz from the
/// implicit function theorem: with P_y = ∂P/∂z at fixed G and p_G = dpg/dG,
/// dG/dz = −(G − g)·P_y / (pg + (G − g)·p_G) and dP/dz = P_y + p_G·dG/dz.
fn spend_budget<H: Fn(f64) -> (f64, f64, f64)>(
    budget: f64,
    g: f64,
    price: f64,
    mut lo: f64,
    mut hi: f64,
    pgd: &H,
) -> (f64, f64, AgencyMode, Decision) {
    let tol = 1e-13 * hi.abs().max(1.0);
    // the stock the budget buys at the rule's price: pg is lower at the root, so this is short
    // of it (spending below the budget)
    let mut to = (g + budget / price).clamp(lo, hi);
    let mut at = pgd(to);
    for _ in 0..200 {
        let (p, _, p_g) = at;
        let spend = (to - g) * p - budget;
        if spend < 0.0 {
            lo = to;
        } else {
            hi = to;
        }
        let d = p + (to - g) * p_g;
        let step = spend / d;
        if (d > 0.0 && step.abs() <= tol) || hi - lo <= tol {
            // the root is within the tolerance of this point
            break;
        }
        let newton = to - step;
        to = if d > 0.0 && newton > lo && newton < hi {
            newton
        } else {
            0.5 * (lo + hi)
        };
        at = pgd(to);
    }
    let (p, p_y, p_g) = at;
    let bought = to - g;
    let denominator = p + bought * p_g;
    let slope = if denominator > 0.0 {
        p_y + p_g * (-bought * p_y / denominator)
    } else {
        p_y
    };
    (p, slope, AgencyMode::BudgetBound, Decision::Stock(to))
}

#[cfg(test)]
mod tests {
    use super::*;

    // A linear stand-in for pg: the price rises by `slope` per unit of public stock kept off the market.
    fn pg_with(base: f64, slope: f64) -> impl Fn(f64) -> (f64, f64) {
        move |gg: f64| (base + slope * gg, -1.0)
    }

    fn pg(base: f64) -> impl Fn(f64) -> (f64, f64) {
        pg_with(base, 2.0)
    }

    fn band(release: Release) -> Band {
        Band {
            buy_below: 195.0,
            sell_above: 230.0,
            capacity: 60.0,
            keep: 1.0,
            release,
            budget: f64::INFINITY,
        }
    }

    #[test]
    fn band_rule_matches_its_definition() {
        // INTERFACE.md: buy while the price would fall below buy_below (within capacity), sell while
        // it would rise above sell_above (within stock).
        let b = band(Release::Band);
        let (p, _, r, d) = decide(&b, 10.0, &pg(150.0)); // pg(10) = 170 < 195: buy to 195 at G = 22.5
        assert_eq!((p, r), (195.0, AgencyMode::Buying));
        assert_eq!(
            d,
            Decision::AtPrice {
                price: 195.0,
                lo: 10.0,
                hi: 60.0
            }
        );
        let (p, _, r, _) = decide(&b, 10.0, &pg(50.0)); // pg(60) = 170 < 195: store full
        assert_eq!((p, r), (170.0, AgencyMode::Full));
        let (p, _, r, _) = decide(&b, 10.0, &pg(240.0)); // pg(0) = 240 > 230: stock out
        assert_eq!((p, r), (240.0, AgencyMode::Empty));
        let (p, _, r, _) = decide(&b, 10.0, &pg(190.0)); // 210: inside
        assert_eq!((p, r), (210.0, AgencyMode::Inside));
    }

    #[test]
    fn target_and_share_rules_trade_inside_the_band_within_their_limits() {
        // Engine semantics (src/policies/stock_target.rs, stock_share.rs).
        let t = band(Release::Target {
            target: 40.0,
            speed: 0.5,
        });
        // carried 10 (price 196, inside), gap 15 → G = 25: pg(25) = 211 ≤ middle 212.5, all of it
        let (p, _, r, d) = decide(&t, 10.0, &pg_with(186.0, 1.0));
        assert_eq!(
            (p, r, d),
            (211.0, AgencyMode::Steering, Decision::Stock(25.0))
        );
        // steeper: pg(25) = 230 > 212.5, so it buys only until the price reaches the middle
        let (p, _, _, d) = decide(&t, 10.0, &pg(180.0));
        assert_eq!(p, 212.5);
        assert_eq!(
            d,
            Decision::AtPrice {
                price: 212.5,
                lo: 10.0,
                hi: 25.0
            }
        );
        // above the target: sells toward it, not below the middle
        let (p, _, _, d) = decide(&t, 50.0, &pg(120.0)); // pg(50) = 220, gap −5 → pg(45) = 210 < 212.5
        assert_eq!(p, 212.5);
        assert_eq!(
            d,
            Decision::AtPrice {
                price: 212.5,
                lo: 45.0,
                hi: 50.0
            }
        );
        let s = band(Release::Share { share: 0.25 });
        // carried 40, release to 30 → pg(30) = 140 + 60 = 200 ≥ 195
        let (p, _, r, d) = decide(&s, 40.0, &pg(140.0));
        assert_eq!(
            (p, r, d),
            (200.0, AgencyMode::Rotating, Decision::Stock(30.0))
        );
        // release would push the price below 195: held at 195
        let (p, _, _, d) = decide(&s, 40.0, &pg(120.0));
        assert_eq!(p, 195.0);
        assert_eq!(
            d,
            Decision::AtPrice {
                price: 195.0,
                lo: 30.0,
                hi: 40.0
            }
        );
    }

    #[test]
    fn a_finite_budget_caps_the_spending_at_the_price_it_leaves() {
        // Engine semantics (src/policies/clearing.rs): purchases are cut so that price × quantity
        // bought stays within the period's budget. pg(G) = 150 + 2G, carried g = 10: the band would
        // buy to G = 22.5 at 195 (spending 12.5 × 195 = 2437.5).
        let mut b = band(Release::Band);
        b.budget = 1000.0;
        let (p, slope, r, d) = decide(&b, 10.0, &pg(150.0));
        assert_eq!(r, AgencyMode::BudgetBound);
        let Decision::Stock(to) = d else {
            panic!("a budget-bound decision fixes the stock")
        };
        // closed form: (G − 10)(150 + 2G) = 1000 ⇔ 2G² + 130G − 2500 = 0
        let closed = (-130.0 + (130.0_f64 * 130.0 + 8.0 * 2500.0).sqrt()) / 4.0;
        assert!((to - closed).abs() < 1e-9, "{to} vs {closed}");
        assert!((p - (150.0 + 2.0 * closed)).abs() < 1e-9 && p < 195.0);
        // dP/dz by finite differences of the whole decision (pg shifts down by 1 per unit of z)
        let at = |z: f64| decide(&b, 10.0, &move |gg: f64| (150.0 - z + 2.0 * gg, -1.0)).0;
        let numeric = (at(1e-4) - at(-1e-4)) / 2e-4;
        assert!((slope - numeric).abs() < 1e-6, "{slope} vs {numeric}");
        // a budget large enough changes nothing
        b.budget = 2437.5 + 1e-6;
        assert_eq!(decide(&b, 10.0, &pg(150.0)).2, AgencyMode::Buying);
        // with the exact slope in G (decide_knowing, Newton steps) the same root and slope
        b.budget = 1000.0;
        let exact = |gg: f64| (150.0 + 2.0 * gg, -1.0, 2.0);
        let (p2, slope2, r2, d2) = decide_knowing(&b, 10.0, &pg(150.0), &exact);
        assert_eq!(r2, AgencyMode::BudgetBound);
        let Decision::Stock(to2) = d2 else { panic!() };
        assert!((to2 - closed).abs() < 1e-12 * closed, "{to2} vs {closed}");
        assert!((p2 - (150.0 + 2.0 * closed)).abs() < 1e-10);
        assert!((slope2 - numeric).abs() < 1e-6, "{slope2} vs {numeric}");
        // a price convex in G (pg = 120 + G²/20 + 3G): (G − 10)·pg(G) = 1000 solved to 1e-12 by
        // bisection here, independently of the Newton steps
        let convex = |gg: f64| (120.0 + gg * gg / 20.0 + 3.0 * gg, -1.0);
        let convex_d = |gg: f64| (convex(gg).0, -1.0, gg / 10.0 + 3.0);
        let (_, _, _, d3) = decide_knowing(&b, 10.0, &convex, &convex_d);
        let Decision::Stock(to3) = d3 else { panic!() };
        let (mut lo, mut hi) = (10.0, 60.0);
        while hi - lo > 1e-12 {
            let mid = 0.5 * (lo + hi);
            if (mid - 10.0) * convex(mid).0 < 1000.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        assert!((to3 - lo).abs() < 1e-10, "{to3} vs {lo}");
        // the target rule's restocking is cut the same way
        let mut t = band(Release::Target {
            target: 40.0,
            speed: 0.5,
        });
        t.budget = 100.0;
        let (p, _, r, d) = decide(&t, 10.0, &pg_with(186.0, 1.0));
        assert_eq!(r, AgencyMode::BudgetBound);
        let Decision::Stock(to) = d else { panic!() };
        assert!(((to - 10.0) * p - 100.0).abs() < 1e-9);
    }
}

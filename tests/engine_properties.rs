//! Property tests of the engine against closed forms and the defining recursions of each rule.

mod common;

use common::{linear_market, policy};
use furrow::engine::{Model, PeriodShock};
use furrow::policies::PolicySpec;
use proptest::prelude::*;

/// The seed of every property test here: fixed, so a run (in CI or anywhere) draws the same cases and
/// cannot fail by chance. `PROPTEST_RNG_SEED=N` explores other cases locally; failures found that way
/// are saved in `tests/engine_properties.proptest-regressions` (committed), which proptest replays
/// first on every run.
const PROPTEST_SEED: u64 = 0x00f0_2202_6120_0012;

fn config(cases: u32) -> ProptestConfig {
    common::proptest_config(PROPTEST_SEED, cases)
}

/// Random valid linear markets: demand intercept, demand slope, supply slope and a P0 near P*.
fn markets() -> impl Strategy<Value = (f64, f64, f64, f64, f64)> {
    (
        50.0..500.0f64,
        -5.0..-0.2f64,
        0.2..5.0f64,
        0.0..1.0f64,
        0.8..1.2f64,
    )
        .prop_map(|(a, b, d, c_share, p0_share)| {
            // supply intercept c between −0.9·a·d/|b| and a/2, so that P* = (a − c)/(d − b) > 0 and
            // Q* = (a·d − b·c)/(d − b) > 0
            let lo = -0.9 * a * d / -b;
            let c = lo + c_share * (0.5 * a - lo);
            let p_star = (a - c) / (d - b);
            (a, b, c, d, p0_share * p_star)
        })
}

fn path(
    a: f64,
    b: f64,
    c: f64,
    d: f64,
    extra: &str,
    pol: &PolicySpec,
    periods: usize,
) -> Option<Vec<furrow::engine::PeriodRecord>> {
    let s = linear_market(a, b, c, d, extra);
    Model::new(&s, pol).run(periods, |_| PeriodShock::NONE).ok()
}

proptest! {
    #![proptest_config(config(200))]

    /// Ezekiel (1938), the cobweb theorem: under naive expectations with linear curves,
    /// P_t = P* + (P_0 − P*)·(−d/|b|)^t, where d is the supply slope and |b| the demand slope.
    #[test]
    fn naive_linear_path_matches_closed_form((a, b, c, d, p0) in markets()) {
        let s = linear_market(a, b, c, d, &format!("[run]\ninitial_price = {p0:?}\n"));
        let p_star = (a - c) / (d - b);
        let ratio = -d / -b;
        let model = Model::new(&s, &PolicySpec::none());
        // a path may diverge when |ratio| > 1; compare the periods that ran
        let mut sim = model.simulator();
        for t in 1..=25 {
            let Ok(r) = sim.step(&PeriodShock::NONE) else { break };
            let closed = p_star + (p0 - p_star) * ratio.powi(t);
            prop_assert!((r.price - closed).abs() <= 1e-9 * p_star.max(1.0) * (1.0 + ratio.abs().powi(t)),
                "t={t} {} vs {closed}", r.price);
        }
    }

    /// Each rule obeys its defining recursion on the simulated producer-price series.
    #[test]
    fn rules_follow_their_recursions((a, b, c, d, p0) in markets(), w in 0.05..1.0f64, k in 1usize..6) {
        let run = format!("[run]\ninitial_price = {p0:?}\n");
        let none = PolicySpec::none();
        // adaptive (Nerlove 1958)
        if let Some(p) = path(a, b, c, d, &format!("[expectations]\nrule = \"adaptive\"\nweight = {w:?}\n{run}"), &none, 20) {
            let mut prev_e = p0;
            let mut prev_p = p0;
            for (i, r) in p.iter().enumerate() {
                let want = if i == 0 { p0 } else { prev_e + w * (prev_p - prev_e) };
                prop_assert!((r.expected_price - want).abs() < 1e-9 * want.abs().max(1.0));
                prev_e = r.expected_price;
                prev_p = r.producer_price;
            }
        }
        // trailing mean of k prices, history padded with P0
        if let Some(p) = path(a, b, c, d, &format!("[expectations]\nrule = \"trailing-mean\"\nwindow = {k}\n{run}"), &none, 20) {
            let mut hist = vec![p0; k];
            for r in &p {
                let want = hist[hist.len() - k..].iter().sum::<f64>() / k as f64;
                prop_assert!((r.expected_price - want).abs() < 1e-9 * want.max(1.0));
                hist.push(r.producer_price);
            }
        }
        // extrapolative (Goodwin 1947) with rho in (−1, 1)
        let rho = w * 1.8 - 0.9;
        if let Some(p) = path(a, b, c, d, &format!("[expectations]\nrule = \"extrapolative\"\nweight = {rho:?}\n{run}"), &none, 20) {
            let (mut p1, mut p2) = (p0, p0);
            for r in &p {
                let want = p1 + rho * (p1 - p2);
                prop_assert!((r.expected_price - want).abs() < 1e-9 * want.abs().max(1.0));
                p2 = p1;
                p1 = r.producer_price;
            }
        }
        // normal price with a fixed normal price N = P*
        let n = (a - c) / (d - b);
        if let Some(p) = path(a, b, c, d, &format!("[expectations]\nrule = \"normal-price\"\nweight = {w:?}\nnormal_price = {n:?}\n{run}"), &none, 20) {
            let mut p1 = p0;
            for r in &p {
                let want = p1 + w * (n - p1);
                prop_assert!((r.expected_price - want).abs() < 1e-9 * want.abs().max(1.0));
                p1 = r.producer_price;
            }
        }
    }

    /// Identities between rules: adaptive λ = 1, normal-price η = 0, trailing-mean k = 1 and
    /// extrapolative ρ = 0 all reduce to naive expectations (definitions).
    #[test]
    fn degenerate_rules_equal_naive((a, b, c, d, p0) in markets()) {
        let run = format!("[run]\ninitial_price = {p0:?}\n");
        let none = PolicySpec::none();
        let naive = path(a, b, c, d, &run, &none, 15);
        for rule in [
            "rule = \"adaptive\"\nweight = 1.0",
            "rule = \"normal-price\"\nweight = 0.0\nnormal_price = 77.0",
            "rule = \"normal-price\"\nweight = 0.0\nwindow = 3",
            "rule = \"trailing-mean\"\nwindow = 1",
            "rule = \"extrapolative\"\nweight = 0.0",
        ] {
            let other = path(a, b, c, d, &format!("[expectations]\n{rule}\n{run}"), &none, 15);
            match (&naive, &other) {
                (Some(x), Some(y)) => {
                    for (r, s) in x.iter().zip(y) {
                        prop_assert!((r.price - s.price).abs() < 1e-9 * r.price.max(1.0), "{rule}");
                    }
                }
                (None, None) => {}
                _ => prop_assert!(false, "{rule}: one diverged, the other did not"),
            }
        }
    }

    /// Stock balance S_t = (1 − loss)·S_{t−1} + X_t − R_t, consumption C_t = Q_t − X_t + R_t and the
    /// fiscal identity (parts add up to the total) hold to 1e-9 on every run, with shocks.
    #[test]
    fn accounting_identities_hold(
        (a, b, c, d, p0) in markets(),
        lo in 0.7..1.0f64, width in 0.0..0.5f64, cap in 0.0..0.5f64, init in 0.0..1.0f64,
        loss in 0.0..0.2f64, sc in 0.0..5.0f64, fin in 0.0..0.1f64, hc in 0.0..3.0f64,
        release in 0usize..3, floor_kind in 0usize..3, budget in prop::option::of(1.0..1e4f64),
        shocks in prop::collection::vec((0.8..1.2f64, -0.05..0.05f64, -0.05..0.05f64), 30),
    ) {
        let p_star = (a - c) / (d - b);
        let q_star = a + b * p_star;
        let buy = lo * p_star;
        let sell = buy * (1.0 + width);
        let capacity = cap * q_star;
        let initial = init * capacity;
        let release_text = match release {
            0 => "release = \"band\"".to_string(),
            1 => "release = \"target\"\ntarget = 0.0\nspeed = 0.5".to_string(),
            _ => "release = \"share\"\nshare = 0.3".to_string(),
        };
        let floor_text = match floor_kind {
            0 => String::new(),
            1 => format!("[floor]\nprice = {:?}\ninstrument = \"purchase\"\n", 0.9 * p_star),
            _ => format!("[floor]\nprice = {:?}\ninstrument = \"deficiency-payment\"\n", 0.95 * p_star),
        };
        let budget_text = budget.map(|b| format!("purchase_budget = {b:?}\n")).unwrap_or_default();
        let pol = policy(&format!(
            "{floor_text}[stock]\nbuy_below = {buy:?}\nsell_above = {sell:?}\ncapacity = {capacity:?}\ninitial = {initial:?}\nloss_rate = {loss:?}\nstorage_cost = {sc:?}\nfinancing_rate = {fin:?}\nhandling_cost = {hc:?}\n{budget_text}{release_text}\n"
        ));
        let s = linear_market(a, b, c, d, &format!("[run]\ninitial_price = {p0:?}\n"));
        let model = Model::new(&s, &pol);
        let shock_at = |t: usize| {
            let (y, sup, dem) = shocks[(t - 1) % shocks.len()];
            PeriodShock { yield_factor: y, supply: sup * q_star, demand: dem * q_star, world_factor: 1.0 }
        };
        let mut sim = model.simulator();
        let mut prev = initial;
        let tol = 1e-9 * q_star.max(1.0);
        for t in 1..=30 {
            let Ok(r) = sim.step(&shock_at(t)) else { break };
            prop_assert!((r.stock - ((1.0 - loss) * prev + r.purchases - r.releases)).abs() < tol);
            prop_assert!((r.consumption - (r.harvest - r.purchases + r.releases)).abs() < tol);
            let parts = r.purchase_cost - r.sales_revenue + r.storage_cost + r.financing_cost
                + r.handling_cost + r.deficiency_payments;
            prop_assert!((r.fiscal_cost - parts).abs() < 1e-9 * r.fiscal_cost.abs().max(1.0));
            prop_assert!((r.purchase_cost - r.price * r.purchases).abs() < 1e-9 * r.purchase_cost.abs().max(1.0));
            prop_assert!(r.stock >= -tol && r.stock <= capacity + tol);
            prop_assert!(r.purchases >= 0.0 && r.releases >= 0.0);
            if let Some(b) = budget {
                prop_assert!(r.purchase_cost <= b * (1.0 + 1e-9) + 1e-9);
            }
            prev = r.stock;
        }
    }

    /// Whenever capacity and stock allow, a band keeps the price inside [buy_below, sell_above].
    #[test]
    fn band_holds_price_when_it_can(
        (a, b, c, d, p0) in markets(), lo in 0.8..1.0f64, width in 0.0..0.3f64,
        release in 0usize..3, shocks in prop::collection::vec(0.85..1.15f64, 20),
    ) {
        let p_star = (a - c) / (d - b);
        let buy = lo * p_star;
        let sell = buy * (1.0 + width);
        let release_text = match release {
            0 => "release = \"band\"".to_string(),
            1 => "release = \"target\"\ntarget = 1.0\nspeed = 0.5".to_string(),
            _ => "release = \"share\"\nshare = 0.2".to_string(),
        };
        let pol = policy(&format!(
            "[stock]\nbuy_below = {buy:?}\nsell_above = {sell:?}\ncapacity = 1e9\ninitial = 0.0\n{release_text}\n"
        ));
        let s = linear_market(a, b, c, d, &format!("[run]\ninitial_price = {p0:?}\n"));
        let model = Model::new(&s, &pol);
        let mut sim = model.simulator();
        for (t, y) in shocks.iter().enumerate() {
            let Ok(r) = sim.step(&PeriodShock { yield_factor: *y, supply: 0.0, demand: 0.0, world_factor: 1.0 }) else { break };
            let limited = r.flags & (furrow::policies::flags::CAPACITY_FULL
                | furrow::policies::flags::STOCK_OUT | furrow::policies::flags::BUDGET_BOUND) != 0;
            if !limited {
                prop_assert!(r.price >= buy * (1.0 - 1e-9), "t={t}: {} < {buy}", r.price);
                prop_assert!(r.price <= sell * (1.0 + 1e-9), "t={t}: {} > {sell}", r.price);
            } else {
                // a sale cut short only happens with an empty store
                if r.price > sell * (1.0 + 1e-9) {
                    prop_assert!(r.stock <= 1e-9);
                }
            }
        }
    }

    /// Price-support analysis (textbook; e.g. Gardner 1987, "The Economics of Agricultural Policies",
    /// ch. 4 — from memory): from the steady state, an announced purchase floor F > P* makes the stock
    /// grow by exactly S(F) − D(F) per period, and a deficiency payment costs exactly (F − P_t)·Q_t.
    #[test]
    fn floors_from_the_steady_state((a, b, c, d, _p0) in markets(), up in 0.01..0.3f64) {
        let p_star = (a - c) / (d - b);
        let f = p_star * (1.0 + up);
        let run = format!("[run]\ninitial_price = {p_star:?}\n");
        let excess = (c + d * f) - (a + b * f);
        if let Some(p) = path(a, b, c, d, &run, &policy(&format!("[floor]\nprice = {f:?}\ninstrument = \"purchase\"\n")), 10) {
            for (i, r) in p.iter().enumerate() {
                prop_assert!((r.stock - excess * (i + 1) as f64).abs() < 1e-9 * (excess * 10.0).max(1.0));
                prop_assert!((r.price - f).abs() < 1e-9 * f);
            }
        }
        if let Some(p) = path(a, b, c, d, &run, &policy(&format!("[floor]\nprice = {f:?}\ninstrument = \"deficiency-payment\"\n")), 10) {
            for r in &p {
                let want = (f - r.price).max(0.0) * r.harvest;
                prop_assert!((r.deficiency_payments - want).abs() < 1e-9 * want.max(1.0));
                // announced: farmers plant on F, so the harvest is S(F) and the price D⁻¹(S(F))
                prop_assert!((r.harvest - (c + d * f)).abs() < 1e-9 * r.harvest);
            }
        }
    }
}

/// Constant-elasticity curves calibrated at a point reproduce the point and the elasticity.
#[test]
fn calibrated_curves_reproduce_their_point() {
    for (form, ed, es) in [
        ("linear", -0.25, 0.2),
        ("constant-elasticity", -0.25, 0.2),
        ("constant-elasticity", -1.0, 1.5),
    ] {
        let text = format!(
            "[demand]\nform = \"{form}\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = {ed:?}\n\
             [supply]\nform = \"{form}\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = {es:?}\n"
        );
        let s = furrow::scenario::market_from_str("cal.toml", &text).unwrap();
        for (curve, e) in [(s.market.demand, ed), (s.market.supply, es)] {
            assert!((curve.quantity(210.0) - 480.0).abs() < 1e-10);
            assert!((curve.elasticity_at(210.0) - e).abs() < 1e-12);
            // numerical elasticity by central differences (definition of a point elasticity)
            let h = 1e-4;
            let num = (curve.quantity(210.0 + h).ln() - curve.quantity(210.0 - h).ln())
                / ((210.0 + h).ln() - (210.0 - h).ln());
            assert!((num - e).abs() < 1e-6, "{form}: {num} vs {e}");
        }
        assert!((s.steady.price - 210.0).abs() < 1e-9);
    }
}

proptest! {
    #![proptest_config(config(100))]

    /// Constant-elasticity cobweb under naive expectations: P_t = D⁻¹(S(P_{t−1})) is linear in logs,
    /// so ln(P_t / P*) = (e_s / e_d)^t · ln(P_0 / P*) exactly (follows from Q = k·P^e on both sides;
    /// derived here from the curve definitions; the eigenvalue e_s/e_d is the constant-elasticity form
    /// of the cobweb theorem, Ezekiel 1938).
    #[test]
    fn constant_elasticity_naive_path_is_log_linear(
        ed in -2.0..-0.05f64, es in 0.05..1.5f64, q_ratio in 0.7..1.3f64, p0_share in 0.7..1.4f64,
    ) {
        let text = format!(
            "[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\nat_quantity = 50.0\nelasticity = {ed:?}\n\
             [supply]\nform = \"constant-elasticity\"\nat_price = 100.0\nat_quantity = {:?}\nelasticity = {es:?}\n",
            50.0 * q_ratio
        );
        let mut s = furrow::scenario::market_from_str("ce.toml", &text).unwrap();
        let p_star = s.steady.price;
        // closed form of the crossing: 50 (P/100)^ed = 50 q (P/100)^es → P* = 100 q^(1/(ed − es))
        prop_assert!((p_star - 100.0 * q_ratio.powf(1.0 / (ed - es))).abs() < 1e-9 * p_star);
        let p0 = p0_share * p_star;
        s.run.initial_price = p0;
        s.run.price_history = vec![p0];
        let model = Model::new(&s, &PolicySpec::none());
        let ratio = es / ed;
        // The closed form uses the exact crossing P* = 100 q^(1/(e_d − e_s)) (computed to a few ulp),
        // not the solver's P̂* (accurate to about 1e-11 relative): with x_t = ln(P_t/P*) the engine
        // computes x_t = r·x_{t−1} + η_t, r = e_s/e_d, where η_t is the rounding of one step —
        // S(P) = q_s (P/100)^e_s then D⁻¹(Q) = 100 (Q/50)^(1/e_d): a few ulp, the second powf
        // multiplying the relative error of its argument by |1/e_d| — so |η_t| ≤ κ·ε with
        // κ = 4·(2 + |1/e_d| + e_s). Errors add up as |x_t − x̂_t| ≤ κ·ε·Σ_{k<t} |r|^k + δ·(1 + |r|^t),
        // δ the error of P* used by the closed form (δ ≤ κ*·ε, κ* = 4·(1 + 1/|e_d − e_s|)), and the
        // closed form exp(y_t), y_t = ln(P_0/P*)·r^t, adds |y_t|·ε + 2ε. A relative error ξ in ln-space
        // is a relative error of about ξ in the price. The tolerance is that bound times 8 (slack for
        // the "few ulp"); the old fixed 1e-9 could not absorb the solver's P̂* error times |r|^t.
        let eps = f64::EPSILON;
        let p_exact = 100.0 * q_ratio.powf(1.0 / (ed - es));
        let kappa = 4.0 * (2.0 + (1.0 / ed).abs() + es);
        let kappa_star = 4.0 * (1.0 + 1.0 / (ed - es).abs());
        let mut sim = model.simulator();
        let mut geometric = 0.0; // Σ_{k<t} |r|^k
        for t in 1..=20 {
            geometric += ratio.abs().powi(t - 1);
            let Ok(r) = sim.step(&PeriodShock::NONE) else { break };
            let y = (p0 / p_exact).ln() * ratio.powi(t);
            let want = p_exact * y.exp();
            let amplified = ratio.abs().powi(t);
            let tol = 8.0 * eps * (kappa * geometric + kappa_star * (1.0 + amplified) + y.abs() + 2.0);
            prop_assert!((r.price - want).abs() <= tol * want,
                "t={t}: {} vs {want} (tolerance {tol:e} relative, |r|^t = {amplified:e})", r.price);
        }
    }
}

/// Rational expectations with a purchase floor above the steady state: the expected producer price is the
/// floor itself (the floor binds in every state), so farmers plant S(F) (Muth 1961 applied to a pinned price).
#[test]
fn rational_expectation_under_a_binding_floor_is_the_floor() {
    let s = linear_market(
        120.0,
        -0.8,
        -10.0,
        0.5,
        "[expectations]\nrule = \"rational\"\n[shocks]\nsupply_sd = 1.0\n",
    );
    let p = policy("[floor]\nprice = 110.0\ninstrument = \"purchase\"\n");
    let model = Model::new(&s, &p);
    let rec = model.run(5, |_| PeriodShock::NONE).unwrap();
    for r in rec {
        assert!(
            (r.expected_price - 110.0).abs() < 1e-8,
            "{}",
            r.expected_price
        );
        assert!((r.planted - (-10.0 + 0.5 * 110.0)).abs() < 1e-8);
    }
}

/// Muth (1961): with linear curves and additive zero-mean shocks, the rational expectation is the
/// steady-state price, whatever the shocks realised.
#[test]
fn rational_expectation_with_additive_shocks_is_the_steady_state() {
    let s = linear_market(
        120.0,
        -0.8,
        -10.0,
        0.5,
        "[expectations]\nrule = \"rational\"\n[shocks]\nsupply_sd = 2.0\ndemand_sd = 1.5\n[run]\ninitial_price = 80.0\n",
    );
    let model = Model::new(&s, &PolicySpec::none());
    let shocks = furrow::stochastic::single_path_shocks(&s);
    let rec = model.run(20, |t| shocks[t - 1]).unwrap();
    for r in rec {
        assert!(
            (r.expected_price - 100.0).abs() < 1e-9,
            "{}",
            r.expected_price
        );
    }
}

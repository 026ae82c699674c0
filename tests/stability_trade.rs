//! Stability of a trading market: importing and exporting as regimes (the price pinned at a
//! parity), the steady state of each, border measures moving the parities, quotas, and the cobweb
//! bounded by trade. Every expected value is derived in the test from the linear curves
//! Q_d = A − d·P and Q_s = c + b·P^e, or named with its source.

mod common;

use common::{bin, linear_market, policy, succeed};
use furrow::policies::PolicySpec;
use furrow::scenario::Scenario;
use furrow::stability::{self, StabilityAnalysis, Verdict};

const A: f64 = 300.0;
const D: f64 = 1.0;
/// The closed market's steady price S(P) = D(P) every test market is built around.
const P_STAR: f64 = 150.0;

/// Supply intercept that puts the closed steady state at P* = 150 for supply slope `b`:
/// A − d·P* = c + b·P*  ⇒  c = A − (d + b)·P*.
fn intercept(b: f64) -> f64 {
    A - (D + b) * P_STAR
}

fn demand(p: f64) -> f64 {
    A - D * p
}

fn supply(b: f64, p: f64) -> f64 {
    intercept(b) + b * p
}

/// Linear market with supply slope `b` and the given extra sections (`[trade]`, `[expectations]`).
fn market(b: f64, extra: &str) -> Scenario {
    linear_market(A, -D, intercept(b), b, extra)
}

fn trade(world: f64, import_cost: f64, export_cost: f64) -> String {
    format!(
        "[trade]\nworld_price = {world:?}\nimport_cost = {import_cost:?}\nexport_cost = {export_cost:?}\n"
    )
}

fn analyse(s: &Scenario, p: &PolicySpec) -> StabilityAnalysis {
    stability::analyse(s, p).expect("analysis")
}

fn regime<'a>(a: &'a StabilityAnalysis, name: &str) -> &'a stability::RegimeStability {
    a.regimes
        .iter()
        .find(|r| r.name == name)
        .unwrap_or_else(|| panic!("no regime {name}: {a:#?}"))
}

fn close(x: f64, y: f64) -> bool {
    (x - y).abs() <= 1e-9 * y.abs().max(1.0)
}

#[test]
fn naive_importing_regime_has_eigenvalue_zero_and_steady_imports_d_minus_s() {
    // W = 100, import cost 20: import parity P_m = 120 below P* = 150, so the price rests at P_m.
    // Pinned price ⇒ dP_t/dP^e_t = 0 ⇒ the naive map P_t = h(P_{t−1}) has derivative 0 (the cobweb
    // map's slope −b/d replaced by the flat curve; Ezekiel 1938 for the closed map).
    let b = 0.5;
    let s = market(b, &trade(100.0, 20.0, 20.0));
    let a = analyse(&s, &PolicySpec::none());
    let pm = 100.0 + 20.0;
    let imp = regime(&a, "importing");
    assert!(imp.holds_steady_state);
    assert_eq!(a.regimes[0].name, "importing");
    assert_eq!(imp.eigenvalues.len(), 1);
    assert_eq!((imp.eigenvalues[0].re, imp.eigenvalues[0].im), (0.0, 0.0));
    assert_eq!(a.verdict, Verdict::Stable);
    assert!(close(imp.at_price, pm));
    // steady state at the parity: price P_m, harvest S(P_m), imports D(P_m) − S(P_m)
    assert!(close(a.steady_state.price, pm));
    assert!(close(a.steady_state.quantity, supply(b, pm)));
    let t = a.trade.as_ref().expect("trade analysis");
    assert_eq!(t.holding, "importing");
    assert!(close(t.imports, demand(pm) - supply(b, pm)), "{t:?}");
    assert_eq!(t.exports, 0.0);
    assert_eq!(t.import_parity, Some(pm));
    assert_eq!(t.export_parity, Some(80.0));
    // the domestic regime between the parities keeps the closed cobweb's eigenvalue −b/d
    let free = regime(&a, "free market");
    assert!(!free.holds_steady_state);
    assert!(close(free.eigenvalues[0].re, -b / D));
}

#[test]
fn exporting_steady_state_exports_s_minus_d_at_export_parity() {
    // W = 200, export cost 20: export parity P_x = 180 above P* = 150: the price rests at P_x and
    // traders export S(P_x) − D(P_x).
    let b = 0.5;
    let s = market(b, &trade(200.0, 20.0, 20.0));
    let a = analyse(&s, &PolicySpec::none());
    let px = 180.0;
    assert_eq!(a.regimes[0].name, "exporting");
    assert!(close(a.steady_state.price, px));
    let t = a.trade.as_ref().unwrap();
    assert!(close(t.exports, supply(b, px) - demand(px)), "{t:?}");
    assert_eq!(t.imports, 0.0);
    assert_eq!(a.spectral_radius, 0.0);
}

#[test]
fn free_trade_is_stable_for_every_b_over_d_while_the_closed_market_is_not() {
    // Ezekiel (1938), the cobweb theorem: the closed linear market under naive expectations has the
    // eigenvalue −b/d, stable iff b/d < 1. With import parity below P* the price rests at the parity
    // and its eigenvalue is 0 whatever b/d.
    for b in [0.5, 1.2, 3.0] {
        let closed = analyse(&market(b, ""), &PolicySpec::none());
        assert!(closed.trade.is_none());
        assert_eq!(closed.regimes.len(), 1);
        assert!(close(closed.regimes[0].eigenvalues[0].re, -b / D));
        let expected = if b < D {
            Verdict::Stable
        } else {
            Verdict::Unstable
        };
        assert_eq!(closed.verdict, expected, "closed b/d = {b}");
        let open = analyse(&market(b, &trade(100.0, 20.0, 20.0)), &PolicySpec::none());
        assert_eq!(open.verdict, Verdict::Stable, "open b/d = {b}");
        assert_eq!(open.spectral_radius, 0.0);
        assert_eq!(open.regimes[0].name, "importing");
    }
}

#[test]
fn an_unstable_cobweb_between_the_parities_is_bounded_by_trade() {
    // Parities 130 and 170 around P* = 150. Naive map inside: P' = P* − (b/d)(P − P*). For b/d > 1
    // a deviation grows until it reaches a parity; from P_m = P* + w the next price would be
    // P* − (b/d)·w < P_x, so it is pinned at P_x, and from P_x the next is P_m: a 2-cycle
    // {P_x, P_m}, at a parity every period (derived here). For b/d = 0.5 the steady state is
    // stable and no cycle is reported.
    let (px, pm) = (130.0, 170.0);
    for b in [0.5, 1.2, 3.0] {
        let a = analyse(&market(b, &trade(150.0, 20.0, 20.0)), &PolicySpec::none());
        assert_eq!(a.regimes[0].name, "free market");
        assert!(close(a.steady_state.price, P_STAR));
        let t = a.trade.as_ref().unwrap();
        assert_eq!((t.imports, t.exports), (0.0, 0.0));
        if b < D {
            assert_eq!(a.verdict, Verdict::Stable);
            assert!(t.bounded_cycle.is_none());
            continue;
        }
        // the steady state itself is unstable (spectral radius b/d), the orbit bounded
        assert_eq!(a.verdict, Verdict::Unstable);
        assert!(close(a.spectral_radius, b / D));
        let w = pm - P_STAR;
        assert!(P_STAR - b / D * w <= px && P_STAR + b / D * w >= pm);
        let c = t.bounded_cycle.as_ref().expect("bounded cycle");
        assert_eq!(c.period, Some(2), "{c:?}");
        assert!(close(c.low, px) && close(c.high, pm), "{c:?}");
        assert_eq!(c.at_parity_share, 1.0);
        assert!(t.note.contains("bounded cycle"), "{}", t.note);
    }
}

#[test]
fn adaptive_expectations_at_a_parity_keep_their_own_eigenvalue() {
    // Adaptive rule P^e' = P^e + λ(P − P^e) (Nerlove 1958, from memory): with P pinned, ∂P^e'/∂P^e = 1 − λ.
    let lambda = 0.4;
    let s = market(
        3.0,
        &format!(
            "{}[expectations]\nrule = \"adaptive\"\nweight = {lambda}\n",
            trade(100.0, 20.0, 20.0)
        ),
    );
    let a = analyse(&s, &PolicySpec::none());
    let imp = regime(&a, "importing");
    assert!(imp.holds_steady_state);
    assert!(close(imp.eigenvalues[0].re, 1.0 - lambda));
    assert_eq!(a.verdict, Verdict::Stable);
    // in the free regime the closed map's 1 − λ − λ·b/d (Nerlove 1958, from memory) = 1 − 0.4 − 1.2 = −0.6
    let free = regime(&a, "free market");
    assert!(close(
        free.eigenvalues[0].re,
        1.0 - lambda - lambda * 3.0 / D
    ));
}

#[test]
fn a_tariff_moves_import_parity_and_a_ban_removes_exporting() {
    // A specific tariff τ adds τ to import parity: P_m = W + cost + τ (definition of the landed,
    // duty-paid price).
    let b = 0.5;
    let s = market(b, &trade(100.0, 20.0, 20.0));
    let tau = 10.0;
    let p = policy(&format!("[border]\nimport_tariff = {tau:?}\n"));
    let a = analyse(&s, &p);
    let pm = 100.0 + 20.0 + tau;
    let imp = regime(&a, "importing");
    assert!(imp.holds_steady_state && close(imp.at_price, pm));
    assert!(close(
        a.trade.as_ref().unwrap().imports,
        demand(pm) - supply(b, pm)
    ));
    // an export ban: no exporting regime; with P* below export parity (W = 200) the closed market's
    // steady state comes back, the regime list is the free market and importing only
    let s = market(b, &trade(200.0, 20.0, 20.0));
    let a = analyse(&s, &policy("[border]\nexport_ban = true\n"));
    assert!(a.regimes.iter().all(|r| r.name != "exporting"));
    assert_eq!(a.regimes[0].name, "free market");
    assert!(close(a.steady_state.price, P_STAR));
    assert_eq!(a.trade.as_ref().unwrap().export_parity, None);
    // a levy target above the landed price lifts import parity to the target
    let s = market(b, &trade(100.0, 20.0, 20.0));
    let a = analyse(&s, &policy("[border]\nimport_price_target = 140.0\n"));
    assert!(close(regime(&a, "importing").at_price, 140.0));
}

#[test]
fn a_binding_import_quota_leaves_the_domestic_curve_shifted_by_the_quota() {
    // Free trade would import D(120) − S(120) = 45 a period; a quota of 20 binds, and the market
    // clears harvest + quota: A − d·P = c + b·P + q  ⇒  P = (A − c − q)/(b + d), imports = q; the
    // shifted curve keeps the cobweb eigenvalue −b/d.
    let b = 0.5;
    let q = 20.0;
    let s = market(b, &trade(100.0, 20.0, 20.0));
    assert!(demand(120.0) - supply(b, 120.0) > q);
    let a = analyse(&s, &policy(&format!("[border]\nimport_quota = {q:?}\n")));
    let full = &a.regimes[0];
    assert_eq!(full.name, "importing, quota full");
    let p = (A - intercept(b) - q) / (b + D);
    assert!(close(full.at_price, p), "{} vs {p}", full.at_price);
    assert!(close(full.eigenvalues[0].re, -b / D));
    assert!(close(a.steady_state.price, p));
    assert_eq!(a.trade.as_ref().unwrap().imports, q);
    // the pinned importing regime is still listed, for the shocks that bring it
    assert!(!regime(&a, "importing").holds_steady_state);
}

#[test]
fn defences_beyond_a_parity_give_way_to_trade_or_leak_abroad() {
    let b = 0.5;
    let stock = "[stock]\ncapacity = 1000.0\nloss_rate = 0.05\n";
    // a purchase floor 170 above P* = 150 but below export parity 180: exporters take the surplus
    // at 180 first, the agency never buys at rest
    let s = market(b, &trade(200.0, 20.0, 20.0));
    let p = policy(&format!(
        "[floor]\nprice = 170.0\ninstrument = \"purchase\"\n{stock}"
    ));
    let a = analyse(&s, &p);
    assert_eq!(a.regimes[0].name, "exporting");
    assert!(a.regimes[0].holds_steady_state);
    assert!(a.regimes.iter().skip(1).all(|r| !r.holds_steady_state));
    // a purchase floor 160 above import parity 120: the agency would buy every import — no steady
    // state with finite stock
    let s = market(b, &trade(100.0, 20.0, 20.0));
    let p = policy(&format!(
        "[floor]\nprice = 160.0\ninstrument = \"purchase\"\n{stock}"
    ));
    let a = analyse(&s, &p);
    assert!(!a.steady_state_exists, "{a:#?}");
    assert!(a.regimes[0]
        .note
        .as_deref()
        .unwrap_or("")
        .contains("leaks abroad"));
}

#[test]
fn a_varying_world_price_is_taken_at_its_mean_and_said_so() {
    let s = market(
        0.5,
        "[trade]\nworld_price = 100.0\nworld_price_cv = 0.2\nimport_cost = 20.0\nexport_cost = 20.0\n",
    );
    let a = analyse(&s, &PolicySpec::none());
    let t = a.trade.as_ref().unwrap();
    assert_eq!(t.world_price, 100.0);
    assert!(t.note.contains("treated at the mean"), "{}", t.note);
    let text = stability::render(&a, furrow::output::Format::Table);
    assert!(text.contains("treated at the mean"), "{text}");
}

#[test]
fn sweep_over_import_cost_switches_the_holding_regime_at_p_star() {
    // W = 125: import parity 125 + cost lies below P* = 150 for cost < 25 (importing holds,
    // spectral radius 0) and above it for cost > 25 (the free market, radius b/d = 0.5; Ezekiel
    // 1938).
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("m.toml");
    std::fs::write(
        &path,
        format!(
            "[demand]\nintercept = {A:?}\nslope = {:?}\n[supply]\nintercept = {:?}\nslope = 0.5\n{}",
            -D,
            intercept(0.5),
            trade(125.0, 0.0, 20.0)
        ),
    )
    .unwrap();
    let (out, _) = succeed(bin().args([
        "sweep",
        path.to_str().unwrap(),
        "--vary",
        "trade.import_cost=0:30:4",
        "--format",
        "csv",
    ]));
    let rows: Vec<Vec<&str>> = out.lines().map(|l| l.split(',').collect()).collect();
    assert_eq!(rows[0], ["trade.import_cost", "spectral_radius", "verdict"]);
    let radius: Vec<f64> = rows[1..].iter().map(|r| r[1].parse().unwrap()).collect();
    assert_eq!(radius, [0.0, 0.0, 0.0, 0.5]);
    // two keys in different sections go through the patched setup: same answer at b = 0.5
    let (out, _) = succeed(bin().args([
        "sweep",
        path.to_str().unwrap(),
        "--vary",
        "trade.import_cost=0:30:4",
        "--vary",
        "demand.intercept=300:300:1",
        "--format",
        "csv",
    ]));
    let radius: Vec<f64> = out
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(2).unwrap().parse().unwrap())
        .collect();
    assert_eq!(radius, [0.0, 0.0, 0.0, 0.5]);
}

#[test]
fn a_binding_export_quota_leaves_the_domestic_curve_less_the_quota() {
    // W = 200: free trade would export S(180) − D(180) = 45; a quota of 20 binds and the market
    // clears harvest − quota: A − d·P = c + b·P − q  ⇒  P = (A − c + q)/(b + d), below P_x.
    let b = 0.5;
    let q = 20.0;
    let s = market(b, &trade(200.0, 20.0, 20.0));
    assert!(supply(b, 180.0) - demand(180.0) > q);
    let a = analyse(&s, &policy(&format!("[border]\nexport_quota = {q:?}\n")));
    assert_eq!(a.regimes[0].name, "exporting, quota full");
    let p = (A - intercept(b) + q) / (b + D);
    assert!(p < 180.0 && close(a.steady_state.price, p), "{a:#?}");
    assert!(close(a.regimes[0].eigenvalues[0].re, -b / D));
    let t = a.trade.as_ref().unwrap();
    assert_eq!((t.imports, t.exports), (0.0, q));
}

#[test]
fn a_closed_market_reports_no_trade() {
    // INTERFACE.md's stability JSON: steady_state, regimes, verdict — and no trade part without
    // [trade]
    let a = analyse(&market(0.5, ""), &PolicySpec::none());
    let json: serde_json::Value =
        serde_json::from_str(&stability::render(&a, furrow::output::Format::Json)).unwrap();
    assert!(json.get("trade").is_none());
    for key in ["steady_state", "regimes", "verdict"] {
        assert!(json.get(key).is_some(), "{key}");
    }
    let open = analyse(&market(0.5, &trade(100.0, 20.0, 20.0)), &PolicySpec::none());
    let json: serde_json::Value =
        serde_json::from_str(&stability::render(&open, furrow::output::Format::Json)).unwrap();
    assert_eq!(json["trade"]["holding"], "importing");
}

#[test]
fn a_deficiency_payment_above_export_parity_exports_the_surplus_at_parity() {
    // Producers are paid F = 170 > P* = 150, plant S(170); the market price would be
    // D⁻¹(S(170)) = A − S(170) (d = 1) = 140 < P_x = 145 (W = 165), so traders export
    // S(170) − D(145) and the market price rests at P_x; the producer price stays F.
    let b = 0.5;
    let s = market(b, &trade(165.0, 20.0, 20.0));
    let a = analyse(
        &s,
        &policy("[floor]\nprice = 170.0\ninstrument = \"deficiency-payment\"\n"),
    );
    assert_eq!(a.regimes[0].name, "deficiency payment binding");
    assert!(A - supply(b, 170.0) < 145.0);
    assert!(close(a.producer_price, 170.0));
    assert!(close(a.steady_state.price, 145.0), "{a:#?}");
    let t = a.trade.as_ref().unwrap();
    assert!(close(t.exports, supply(b, 170.0) - demand(145.0)), "{t:?}");
}

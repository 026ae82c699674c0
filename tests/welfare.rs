//! Welfare accounting against textbook closed forms, and the classic results on gains from price
//! stabilisation reproduced by a costless buffer stock.

use furrow::compare::{compare, CompareResult};
use furrow::engine::{Model, PeriodShock};
use furrow::scenario::{market_from_table, parse_toml, policy_from_table, PolicySpec, Scenario};
use furrow::stochastic::NoProgress;
use furrow::welfare::{crra_certainty_equivalent, path_pv, risk_premium};

// Demand Q = 200 − 2P (choke price 100), supply Q = −40 + P^e (minimum price 40): P* = 80, Q* = 40.
const A: f64 = 200.0;
const D: f64 = 2.0;
const C: f64 = -40.0;
const B: f64 = 1.0;
const P_STAR: f64 = 80.0;
const Q_STAR: f64 = 40.0;

fn market(expectations: &str, run: &str, shocks: &str) -> Scenario {
    let text = format!(
        "[market]\nname = \"Test\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
         [demand]\nform = \"linear\"\nintercept = {A}\nslope = -{D}\n\
         [supply]\nform = \"linear\"\nintercept = {C}\nslope = {B}\n\
         [expectations]\n{expectations}\n[run]\n{run}\n[shocks]\n{shocks}\n"
    );
    market_from_table("test.toml", parse_toml("test.toml", &text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    policy_from_table("p.toml", parse_toml("p.toml", text).unwrap()).unwrap()
}

fn demand(p: f64) -> f64 {
    A - D * p
}
fn supply(p: f64) -> f64 {
    C + B * p
}
/// Σ_{t=1..T} (1 + r)^−t: the annuity factor.
fn annuity(r: f64, t: i32) -> f64 {
    (1.0 - (1.0 + r).powi(-t)) / r
}

#[test]
fn surpluses_are_the_triangles_of_linear_curves() {
    // Consumer surplus = ½·(choke price − P)·Q, producer surplus = ½·(P − minimum supply price)·Q
    // (textbook triangles, e.g. Just, Hueth and Schmitz 2004, ch. 2 and 4; from memory).
    let s = market("rule = \"naive\"", "periods = 3\ninitial_price = 86.0", "");
    let model = Model::new(&s, &PolicySpec::none());
    let path = model.run(3, |_| PeriodShock::NONE).unwrap();
    for r in &path {
        let q = r.harvest;
        let cs = 0.5 * (A / D - r.price) * demand(r.price);
        assert!(
            (r.consumer_surplus - cs).abs() < 1e-9,
            "CS {} vs {cs}",
            r.consumer_surplus
        );
        // planted at the expected price; revenue at the realised price minus the cost triangle
        // cost of the planted quantity: the trapezoid under the inverse supply curve from 0 to q,
        // between the minimum supply price −C/B and the planting price
        let cost = 0.5 * (-C / B + r.expected_price) * q;
        let ps = r.price * q - cost;
        assert!(
            (r.producer_surplus - ps).abs() < 1e-9,
            "PS {} vs {ps}",
            r.producer_surplus
        );
    }
    // at the steady state PS is the triangle ½·(P* − 40)·Q* = 800 and CS ½·(100 − 80)·40 = 400
    let s = market("rule = \"naive\"", "periods = 2\ninitial_price = 80.0", "");
    let r = Model::new(&s, &PolicySpec::none())
        .run(1, |_| PeriodShock::NONE)
        .unwrap()[0];
    assert!((r.producer_surplus - 800.0).abs() < 1e-9 && (r.consumer_surplus - 400.0).abs() < 1e-9);
}

fn deterministic_compare(policy_text: &str, terminal: &str, periods: i32) -> CompareResult {
    let s = market(
        "rule = \"naive\"",
        &format!("periods = {periods}\ninitial_price = 80.0\ndiscount_rate = 0.05\nterminal_stock = \"{terminal}\""),
        "",
    );
    compare(&s, &[policy(policy_text)], &NoProgress).unwrap()
}

#[test]
fn purchase_floor_from_the_steady_state_matches_the_closed_forms() {
    // An announced floor F = 86 defended by purchase, from P*: farmers plant S(F) = 46, consumers take
    // D(F) = 28, the agency buys 18 every period at F. Per period (textbook price support, e.g.
    // Pindyck and Rubinfeld, "Microeconomics", price supports; from memory):
    //   ΔCS = −(F − P*)(D(F) + Q*)/2,  ΔPS = (F − P*)(S(F) + Q*)/2,  fiscal = F·(S(F) − D(F)),
    // and with the purchased grain worth nothing (terminal_stock = "zero") the net change is minus the
    // deadweight loss (S(F) − D(F))·(F + P*)/2: the stock is bought at F and consumes the resources
    // of the trapezoid under the supply curve plus the lost consumer value.
    let (f, t, r) = (86.0, 12, 0.05);
    let res = deterministic_compare(
        "[policy]\nname = \"Floor\"\n[floor]\nprice = 86.0\ninstrument = \"purchase\"\n",
        "zero",
        t,
    );
    let p = &res.policies[0];
    let k = annuity(r, t);
    let bought = supply(f) - demand(f);
    let d_cs = -(f - P_STAR) * (demand(f) + Q_STAR) / 2.0 * k;
    let d_ps = (f - P_STAR) * (supply(f) + Q_STAR) / 2.0 * k;
    let fiscal = f * bought * k;
    let dwl = bought * (f + P_STAR) / 2.0 * k;
    let close = |key: &str, want: f64| {
        let got = p.number(key).unwrap();
        assert!(
            (got - want).abs() < 1e-7 * want.abs().max(1.0),
            "{key}: {got} vs {want}"
        );
    };
    close("consumer_surplus_change_pv", d_cs);
    close("producer_surplus_change_pv", d_ps);
    close("fiscal_cost_pv", fiscal);
    close("purchase_cost_pv", fiscal);
    close("net_welfare_change_pv", -dwl);
    close("net_welfare_change_pv_p05", -dwl);
    close("floor_binding_share", 1.0);
    close("final_stock", bought * t as f64);
    close("mean_price", f);
    // valuing the stock left at T at the market price adds F·S_T·(1 + r)^−T as a treasury receipt
    let res = deterministic_compare(
        "[policy]\nname = \"Floor\"\n[floor]\nprice = 86.0\ninstrument = \"purchase\"\n",
        "market",
        t,
    );
    let terminal = f * bought * t as f64 * (1.0 + r).powi(-t);
    let got = res.policies[0].number("net_welfare_change_pv").unwrap();
    assert!((got - (-dwl + terminal)).abs() < 1e-7 * dwl, "{got}");
}

#[test]
fn deficiency_payment_from_the_steady_state_matches_the_closed_forms() {
    // Announced deficiency payment at F = 86: farmers plant S(F) = 46, the market clears at
    // P_m = D⁻¹(46) = 77, the treasury pays (F − P_m)·S(F). Per period (textbook target price with
    // deficiency payments, e.g. Gardner 1987, "The Economics of Agricultural Policies", ch. 4; from memory):
    //   ΔCS = (P* − P_m)(Q* + S(F))/2, ΔPS = (F − P*)(S(F) + Q*)/2, fiscal = (F − P_m)·S(F),
    //   net = −½·(F − P_m)(S(F) − Q*)  (the deadweight triangle).
    let (f, t, r) = (86.0, 10, 0.05);
    let res = deterministic_compare(
        "[policy]\nname = \"DP\"\n[floor]\nprice = 86.0\ninstrument = \"deficiency-payment\"\n",
        "market",
        t,
    );
    let p = &res.policies[0];
    let k = annuity(r, t);
    let qf = supply(f);
    let pm = (A - qf) / D;
    assert!((pm - 77.0).abs() < 1e-12);
    let want = [
        (
            "consumer_surplus_change_pv",
            (P_STAR - pm) * (Q_STAR + qf) / 2.0 * k,
        ),
        (
            "producer_surplus_change_pv",
            (f - P_STAR) * (qf + Q_STAR) / 2.0 * k,
        ),
        ("fiscal_cost_pv", (f - pm) * qf * k),
        ("deficiency_payments_pv", (f - pm) * qf * k),
        ("net_welfare_change_pv", -0.5 * (f - pm) * (qf - Q_STAR) * k),
        ("mean_producer_price", f),
        ("mean_price", pm),
    ];
    for (key, w) in want {
        let got = p.number(key).unwrap();
        assert!(
            (got - w).abs() < 1e-7 * w.abs().max(1.0),
            "{key}: {got} vs {w}"
        );
    }
}

// Gains from price stabilisation (Waugh 1944, QJE 58; Oi 1961, Econometrica 29; Massell 1969, AER 59),
// in Massell's model: linear demand and supply with additive random shifts, price fixed at its
// arithmetic mean by a costless buffer stock. Here supply is the cobweb's planted quantity with farmers
// expecting P* every season (normal-price rule with weight 1 and normal price P*), so the harvest is
// Q* + e_t and does not respond to the realised price — Massell's case of a zero short-run supply slope.
// Derived for this case (Massell 1969, eqs. 7–10 with the supply slope set to zero; derivation from memory):
// - supply shifts e (variance σ²): free price P* − e/d. Stabilised at P*: consumers lose σ²/(2d) per
//   period (Waugh: consumers gain from instability), producers gain σ²/d (revenue E[P·Q] = P*Q* − σ²/d
//   unstabilised), the agency's expected trading cost is 0, net gain σ²/(2d).
// - demand shifts u (variance σ²), same timing: consumers gain σ²/(2d), producers gain 0, net σ²/(2d).
// Oi's result (producers gain from instability) needs output that responds to the realised price, which
// the cobweb's timing excludes, so it is not tested here.
fn stabilised(shocks: &str) -> (f64, f64, f64, f64, f64) {
    let t = 20;
    let s = market(
        "rule = \"normal-price\"\nweight = 1.0\nnormal_price = 80.0",
        &format!(
            "periods = {t}\ninitial_price = 80.0\nseed = 77\nreplications = 20000\ndiscount_rate = 0.0\n\
             terminal_stock = \"market\""
        ),
        shocks,
    );
    let initial = 300.0;
    let res = compare(
        &s,
        &[policy(&format!(
            "[policy]\nname = \"Costless stock\"\n[stock]\nbuy_below = 80.0\nsell_above = 80.0\ninitial = {initial}\n"
        ))],
        &NoProgress,
    )
    .unwrap();
    let p = &res.policies[0];
    let per = |k: &str| p.number(k).unwrap() / t as f64;
    let net = p.number("net_welfare_change_pv").unwrap();
    let terminal = p.number("terminal_stock_value_pv").unwrap();
    let fiscal = p.number("fiscal_cost_pv").unwrap();
    // identity for a costless, lossless stock pinned at P* with r = 0: terminal value − fiscal cost
    // = P*·(initial stock); the rest of the net change is the gain from stabilisation
    assert!(
        (terminal - fiscal - P_STAR * initial).abs() < 1e-6 * P_STAR * initial,
        "{terminal} {fiscal}"
    );
    assert!(p.number("stockout_share").unwrap() == 0.0);
    (
        per("consumer_surplus_change_pv"),
        per("producer_surplus_change_pv"),
        fiscal / t as f64,
        (net - P_STAR * initial) / t as f64,
        p.number("price_sd").unwrap(),
    )
}

#[test]
fn massell_gains_from_stabilising_supply_shocks() {
    let sigma: f64 = 3.0;
    let (cs, ps, fiscal, net, price_sd) = stabilised(&format!("supply_sd = {sigma}"));
    let v = sigma * sigma;
    // Monte Carlo error: per-period changes are ±σ²/d-scale quadratic terms averaged over 400 000
    // draws; fiscal cost is P*·e with sd 240, mean error ≈ 240/sqrt(20000·20) ≈ 0.4
    assert!(price_sd < 1e-9, "price pinned at P*: sd {price_sd}");
    // ΔCS and ΔPS each carry a term Q*·e/d with mean 0 and standard error ≈ 0.095 here
    assert!(
        (cs - (-v / (2.0 * D))).abs() < 0.12 * v / D,
        "ΔCS {cs} vs {}",
        -v / (2.0 * D)
    );
    assert!((ps - v / D).abs() < 0.12 * v / D, "ΔPS {ps} vs {}", v / D);
    assert!(fiscal.abs() < 2.0, "fiscal {fiscal}");
    assert!(
        (net - v / (2.0 * D)).abs() < 2.0,
        "net {net} vs {}",
        v / (2.0 * D)
    );
    // ΔCS + ΔPS = e²/(2d) draw by draw (the terms linear in e cancel): tight check
    assert!(
        (cs + ps - v / (2.0 * D)).abs() < 0.05 * v / D,
        "{}",
        cs + ps
    );
}

#[test]
fn massell_gains_from_stabilising_demand_shocks() {
    let sigma: f64 = 3.0;
    let (cs, ps, _fiscal, _net, _) = stabilised(&format!("demand_sd = {sigma}"));
    let v = sigma * sigma;
    // both carry a term ±Q*·u/d with mean 0 (standard error ≈ 0.095 here)
    assert!(
        (cs - v / (2.0 * D)).abs() < 0.12 * v / D,
        "ΔCS {cs} vs {}",
        v / (2.0 * D)
    );
    assert!(ps.abs() < 0.12 * v / D, "ΔPS {ps}");
}

#[test]
fn revenue_risk_premium_approximates_the_crra_certainty_equivalent() {
    // For lognormal revenue with coefficient of variation cv, the exact CRRA premium is
    // E[Y]·(1 − exp(−R·s²/2)), s² = ln(1 + cv²) (Pratt 1964 with lognormal moments, Aitchison and
    // Brown 1957); the Newbery–Stiglitz approximation ½·R·cv²·E[Y] agrees to second order.
    let (cv, r, mean) = (0.1_f64, 2.0, 1000.0);
    let s2 = (1.0 + cv * cv).ln();
    let exact = mean * (1.0 - (-r * s2 / 2.0).exp());
    let approx = risk_premium(mean, cv * mean, r);
    assert!((approx - exact).abs() < 0.02 * exact, "{approx} vs {exact}");
    // and the sample certainty equivalent of lognormal draws (the engine's yield factor has exactly
    // this law) agrees with the exact premium within Monte Carlo error
    let spec = furrow::scenario::ShockSpec {
        yield_cv: cv,
        ..Default::default()
    };
    let mut stream = furrow::stochastic::ShockStream::new(&spec, 4, 0);
    let ys: Vec<f64> = (0..200_000)
        .map(|_| mean * stream.next_shock().yield_factor)
        .collect();
    let sample_mean = ys.iter().sum::<f64>() / ys.len() as f64;
    let ce = crra_certainty_equivalent(&ys, r).unwrap();
    assert!(
        ((sample_mean - ce) - exact).abs() < 0.02 * exact,
        "{} vs {exact}",
        sample_mean - ce
    );
}

#[test]
fn path_present_values_discount_each_period() {
    // PV = Σ x_t (1 + r)^−t: a constant stream gives the annuity factor (any finance text)
    let s = market("rule = \"naive\"", "periods = 5\ninitial_price = 80.0", "");
    let path = Model::new(&s, &PolicySpec::none())
        .run(5, |_| PeriodShock::NONE)
        .unwrap();
    let pv = path_pv(&path, 0.1, furrow::scenario::TerminalStock::Market);
    assert!((pv.consumer_surplus - 400.0 * annuity(0.1, 5)).abs() < 1e-9);
    assert!((pv.producer_surplus - 800.0 * annuity(0.1, 5)).abs() < 1e-9);
    assert_eq!(pv.terminal_stock_value, 0.0);
}

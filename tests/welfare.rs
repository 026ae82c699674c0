//! Welfare accounting against textbook closed forms, and the classic results on gains from price
//! stabilisation reproduced by a costless buffer stock.

mod common;
use common::phi;

use furrow::compare::{compare, CompareResult};
use furrow::engine::{Model, PeriodShock};
use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml, Scenario};
use furrow::stochastic::NoProgress;
use furrow::welfare::{crra_certainty_equivalent, path_pv, risk_premium, Books};

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
             terminal_stock = \"market\"\nopening_stock = \"free\""
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
    let s = market(
        "rule = \"naive\"",
        "periods = 5\ninitial_price = 80.0\ndiscount_rate = 0.1",
        "",
    );
    let model = Model::new(&s, &PolicySpec::none());
    let path = model.run(5, |_| PeriodShock::NONE).unwrap();
    let pv = path_pv(&path, &Books::new(&s, &model.policy.agency));
    assert!((pv.consumer_surplus - 400.0 * annuity(0.1, 5)).abs() < 1e-9);
    assert!((pv.producer_surplus - 800.0 * annuity(0.1, 5)).abs() < 1e-9);
    assert_eq!(pv.terminal_stock_value, 0.0);
}

// ---------------------------------------------------------------------------------------------
// Honest books: opening and terminal stock, financing, the cost of public funds, like-for-like
// baselines, standard errors, fiscal risk, alerts, producers' risk, rotation.
// ---------------------------------------------------------------------------------------------

fn compare_with(s: &Scenario, policies: &[&str]) -> CompareResult {
    let specs: Vec<PolicySpec> = policies.iter().map(|p| policy(p)).collect();
    compare(s, &specs, &NoProgress).unwrap()
}

#[test]
fn a_costless_perfect_band_gains_massell_minus_the_carrying_cost_of_its_opening_stock() {
    // Linear demand D = a − bP + u_t (b = 2) and supply q_t = c + d·P^e_t + v_t (d = 1), naive
    // farmers, P_0 = P* = 80. A costless, lossless band with buy_below = sell_above = P* and a large
    // opening stock S_0 pins the price at P*, so farmers always plant Q*.
    //
    // Stabilisation gain for furrow's timing (Massell 1969, AER 59, derived here for a supply planted
    // on the last price): without the band the price is the cobweb P_t = (a + u_t − c − d·P_{t−1}
    // − v_t)/b; with δ_t = d·(P_{t−1} − P*) the planting deviation, per period
    //   W_band − W_free = (u − v − δ)²/(2b) + P*(u − v) + δ²/(2d)
    // (surpluses: CS = consumption²/(2b) on the shifted linear demand, PS = P·H − cost(q) with
    // cost(q) − cost(Q*) = P*δ + δ²/(2d); the band's trade costs P*(v − u)). Its mean is
    //   G_t = (σ_u² + σ_v² + d²V_{t−1})/(2b) + d·V_{t−1}/2,
    //   V_0 = 0, V_t = (d/b)²·V_{t−1} + (σ_u² + σ_v²)/b²   (the cobweb's price variance, AR(1)).
    // Carrying cost of the stock (opening_stock = "charged", terminal_stock = "disposal"):
    //   − P*·S_0 + (1 + r)^−(T+1)·E[S_T·(P* − S_T/b)],  S_T = S_0 + Σ(v_t − u_t),
    //   E[S_T(P* − S_T/b)] = P*·S_0 − (S_0² + T(σ_u² + σ_v²))/b.
    let (t, r, s0, su, sv) = (20usize, 0.05f64, 60.0f64, 2.0f64, 2.0f64);
    let (b, d) = (D, B);
    let sig2 = su * su + sv * sv;
    let s = market(
        "rule = \"naive\"",
        &format!(
            "periods = {t}\ninitial_price = 80.0\nseed = 11\nreplications = 20000\n\
             discount_rate = {r}"
        ),
        &format!("supply_sd = {sv}\ndemand_sd = {su}"),
    );
    let band = format!(
        "[policy]\nname = \"Perfect band\"\n[stock]\nbuy_below = 80.0\nsell_above = 80.0\ninitial = {s0}\n"
    );
    let res = compare_with(&s, &[&band]);
    let p = &res.policies[0];
    let (mut gain, mut v) = (0.0, 0.0);
    for k in 1..=t {
        let g = (sig2 + d * d * v) / (2.0 * b) + d * v / 2.0;
        gain += g * (1.0 + r).powi(-(k as i32));
        v = (d / b).powi(2) * v + sig2 / (b * b);
    }
    let carrying = -P_STAR * s0
        + (1.0 + r).powi(-(t as i32 + 1)) * (P_STAR * s0 - (s0 * s0 + t as f64 * sig2) / b);
    let want = gain + carrying;
    let got = p.number("net_welfare_change_pv").unwrap();
    let se = p.number("net_welfare_change_pv_se").unwrap();
    assert!(want < -3000.0, "the answer is strongly negative: {want}");
    assert!(
        (got - want).abs() < 4.0 * se,
        "net {got} ± {se} vs closed form {want} (gain {gain}, carrying {carrying})"
    );
    assert_eq!(p.number("stockout_share").unwrap(), 0.0);
    close_to(p, "opening_stock_cost", P_STAR * s0, 1e-12);
    // the old convention (free opening stock, terminal stock at P_T) showed a gain
    let old = market(
        "rule = \"naive\"",
        &format!(
            "periods = {t}\ninitial_price = 80.0\nseed = 11\nreplications = 2000\n\
             discount_rate = {r}\nopening_stock = \"free\"\nterminal_stock = \"market\""
        ),
        &format!("supply_sd = {sv}\ndemand_sd = {su}"),
    );
    let shown = compare_with(&old, &[&band]).policies[0]
        .number("net_welfare_change_pv")
        .unwrap();
    assert!(shown > 1000.0, "{shown}");
}

fn close_to(p: &furrow::compare::PolicyComparison, key: &str, want: f64, rel: f64) {
    let got = p.number(key).unwrap_or(f64::NAN);
    assert!(
        (got - want).abs() <= rel * want.abs().max(1.0),
        "{key}: {got} vs {want}"
    );
}

#[test]
fn disposal_sells_the_terminal_stock_down_the_demand_curve_a_period_later() {
    // purchase floor F = 86 from P*: the agency takes S(F) − D(F) = 18 a period, so S_T = 18·T.
    // "disposal": S_T·D⁻¹(Q* + S_T)·(1 + r)^−(T+1), with D⁻¹(Q) = (A − Q)/D on the linear demand.
    let (t, r) = (5, 0.05f64);
    let res = deterministic_compare(
        "[policy]\nname = \"Floor\"\n[floor]\nprice = 86.0\ninstrument = \"purchase\"\n",
        "disposal",
        t,
    );
    let st = 18.0 * t as f64;
    let want = st * (A - Q_STAR - st) / D * (1.0 + r).powi(-(t + 1));
    close_to(&res.policies[0], "terminal_stock_value_pv", want, 1e-9);
    // and it is the default
    let s = market(
        "rule = \"naive\"",
        &format!("periods = {t}\ninitial_price = 80.0\ndiscount_rate = 0.05"),
        "",
    );
    let default = compare_with(
        &s,
        &["[policy]\nname = \"Floor\"\n[floor]\nprice = 86.0\ninstrument = \"purchase\"\n"],
    );
    close_to(&default.policies[0], "terminal_stock_value_pv", want, 1e-9);
}

#[test]
fn financing_at_the_discount_rate_adds_nothing_and_lambda_scales_the_fiscal_term() {
    // Discounting at r already charges the capital tied up in stock: interest at f = r adds nothing
    // to present values (only the spread f − r counts), while the cash outlay per season shows it.
    let base =
        "periods = 15\ninitial_price = 92.0\nseed = 5\nreplications = 300\ndiscount_rate = 0.05";
    let band = |f: f64| {
        format!(
            "[policy]\nname = \"Band {f}\"\n[stock]\nbuy_below = 76.0\nsell_above = 84.0\n\
             initial = 10.0\nstorage_cost = 1.0\nfinancing_rate = {f}\n"
        )
    };
    let s = market("rule = \"naive\"", base, "supply_sd = 3.0");
    let res = compare_with(&s, &[&band(0.0), &band(0.05), &band(0.08)]);
    let [none, at_r, above] = [&res.policies[0], &res.policies[1], &res.policies[2]];
    let n = |p: &furrow::compare::PolicyComparison, k: &str| p.number(k).unwrap();
    assert!(
        (n(none, "net_welfare_change_pv") - n(at_r, "net_welfare_change_pv")).abs() < 1e-9,
        "{} vs {}",
        n(none, "net_welfare_change_pv"),
        n(at_r, "net_welfare_change_pv")
    );
    assert_eq!(n(at_r, "financing_cost_pv"), 0.0);
    assert!(n(at_r, "fiscal_cost_season_mean") > n(none, "fiscal_cost_season_mean") + 1.0);
    // above the discount rate, the spread: 0.03/0.08 of the interest paid
    assert!(n(above, "financing_cost_pv") > 0.0);
    assert!(n(above, "net_welfare_change_pv") < n(none, "net_welfare_change_pv"));
    // λ = 1.25 (Alston and Hurd 1990): net = ΔCS + ΔPS − λ·Δ(fiscal − terminal)
    let s2 = market(
        "rule = \"naive\"",
        &format!("{base}\npublic_funds_cost = 1.25"),
        "supply_sd = 3.0",
    );
    let res2 = compare_with(&s2, &[&band(0.0)]);
    let p2 = &res2.policies[0];
    // the fiscal cost includes the opening stock bought at P_0 (10 × 92, undiscounted)
    assert!((n(none, "opening_stock_cost") - 920.0).abs() < 1e-9);
    let fiscal = n(none, "fiscal_cost_pv") - n(none, "terminal_stock_value_pv");
    let want = n(none, "consumer_surplus_change_pv") + n(none, "producer_surplus_change_pv")
        - 1.25 * fiscal;
    assert!(
        (n(p2, "net_welfare_change_pv") - want).abs() < 1e-6 * fiscal.abs().max(1.0),
        "{} vs {want}",
        n(p2, "net_welfare_change_pv")
    );
    assert!(
        (n(p2, "net_welfare_change_pv") - (n(none, "net_welfare_change_pv") - 0.25 * fiscal)).abs()
            < 1e-6 * fiscal.abs().max(1.0)
    );
}

#[test]
fn a_file_that_only_changes_the_farmers_rule_is_a_behaviour_change_not_a_policy() {
    let s = market(
        "rule = \"naive\"",
        "periods = 12\ninitial_price = 92.0\nseed = 3\nreplications = 64",
        "supply_sd = 2.0",
    );
    let rule = "[expectations]\nrule = \"adaptive\"\nweight = 0.4\n";
    let only_rule = format!("[policy]\nname = \"Cautious farmers\"\n{rule}");
    let band_rule = format!(
        "[policy]\nname = \"Band, cautious\"\n[stock]\nbuy_below = 76.0\nsell_above = 84.0\n{rule}"
    );
    let res = compare_with(&s, &[&only_rule, &band_rule]);
    let p = &res.policies[0];
    for key in [
        "consumer_surplus_change_pv",
        "producer_surplus_change_pv",
        "net_welfare_change_pv",
        "fiscal_cost_pv",
    ] {
        assert_eq!(p.number(key), Some(0.0), "{key}");
    }
    assert_eq!(p.expectations, "adaptive (weight 0.400)");
    assert_eq!(res.policies[1].baseline, p.baseline);
    assert_ne!(p.baseline, res.baseline.name);
    // the behaviour line: free market under the override against free market under the market's
    // rule, recomputed here straight from the engine on the same shocks (common random numbers)
    assert_eq!(res.behaviour.len(), 1);
    let line = &res.behaviour[0];
    assert!(line.name.contains("not a policy"));
    let naive = Model::new(&s, &PolicySpec::none());
    let adaptive = Model::new(&s, &policy(&only_rule));
    let books = Books::new(&s, &naive.policy.agency);
    let mut sum = 0.0;
    for rep in 0..64u64 {
        let mut stream = furrow::stochastic::ShockStream::new(&s.shocks, 3, rep);
        let shocks: Vec<PeriodShock> = (0..12).map(|_| stream.next_shock()).collect();
        let a = adaptive.run(12, |t| shocks[t - 1]).unwrap();
        let n = naive.run(12, |t| shocks[t - 1]).unwrap();
        sum += path_pv(&a, &books).consumer_surplus - path_pv(&n, &books).consumer_surplus;
    }
    close_to(line, "consumer_surplus_change_pv", sum / 64.0, 1e-9);
}

/// A market with (almost) fixed planting Q̄ = 100 (linear supply 100 + 10⁻⁶·P^e: planting moves by
/// about 10⁻⁶ over the prices seen), constant-elasticity demand through (100, 100)
/// with elasticity −0.5, and lognormal yields with coefficient of variation `cv`.
fn fixed_planting_market(cv: f64, run: &str) -> Scenario {
    let text = format!(
        "[market]\nname = \"Fixed\"\n[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\n\
         at_quantity = 100.0\nelasticity = -0.5\n[supply]\nform = \"linear\"\n\
         intercept = 100.0\nslope = 1e-6\n[expectations]\nrule = \"naive\"\n\
         [run]\ninitial_price = 100.0\n{run}\n[shocks]\nyield_cv = {cv}\n"
    );
    market_from_table("fixed.toml", parse_toml("fixed.toml", &text).unwrap()).unwrap()
}

#[test]
fn deficiency_payments_per_season_follow_the_lognormal_partial_expectations() {
    // Planting fixed at Q̄ = 100, yield Y lognormal (ln Y ~ N(μ, s²), s² = ln(1 + cv²), μ = −s²/2),
    // P = 100·Y^−2, floor F = 100: the payment is g(Y) = (F − P)·Q = 10⁴·(Y − 1/Y) for Y > 1.
    // Partial expectations of the lognormal (Aitchison and Brown 1957; Johnson, Kotz and
    // Balakrishnan 1994, ch. 14): E[Y^k; Y > 1] = exp(kμ + k²s²/2)·Φ((μ + k s²)/s). g increases in
    // Y and P(Y > 1) > 5 %, so its 95 % quantile is g(exp(μ + z₀.₉₅ s)), z₀.₉₅ = 1.6448536
    // (standard normal table).
    let cv: f64 = 0.2;
    let s = fixed_planting_market(
        cv,
        "periods = 25\nreplications = 4000\nseed = 19\ndiscount_rate = 0.05",
    );
    let res = compare_with(
        &s,
        &["[policy]\nname = \"DP\"\n[floor]\nprice = 100.0\ninstrument = \"deficiency-payment\"\n"],
    );
    let p = &res.policies[0];
    let s2 = (1.0 + cv * cv).ln();
    let (mu, sd) = (-s2 / 2.0, s2.sqrt());
    let partial = |k: f64| (k * mu + k * k * s2 / 2.0).exp() * phi((mu + k * s2) / sd);
    let mean = 1e4 * (partial(1.0) - partial(-1.0));
    let y95 = (mu + 1.644_853_6 * sd).exp();
    let p95 = 1e4 * (y95 - 1.0 / y95);
    let got = p.number("fiscal_cost_season_mean").unwrap();
    let se = p.number("fiscal_cost_season_mean_se").unwrap();
    assert!((got - mean).abs() < 4.0 * se, "mean {got} ± {se} vs {mean}");
    let got95 = p.number("fiscal_cost_season_p95").unwrap();
    assert!((got95 - p95).abs() < 0.02 * p95, "p95 {got95} vs {p95}");
}

#[test]
fn the_exact_crra_premium_matches_a_direct_integral() {
    // Same fixed-planting market: revenue P·Q = 10⁴/Y. With crop share α, income I = 10⁴/Y + B,
    // B = (1 − α)/α·P*Q* = (1 − α)/α·10⁴. Exact premium E[I] − (E[I^{1−R}])^{1/(1−R)} (Pratt 1964),
    // integrated here by Simpson's rule over the normal density of ln Y on [−10, 10] sd.
    let (cv, alpha, r_aversion) = (0.25f64, 0.5f64, 2.0f64);
    let s = fixed_planting_market(
        cv,
        &format!(
            "periods = 25\nreplications = 4000\nseed = 23\ndiscount_rate = 0.05\n\
             risk_aversion = {r_aversion}\ncrop_income_share = {alpha}"
        ),
    );
    let res = compare_with(&s, &["[policy]\nname = \"Nothing\"\n"]);
    let p = &res.policies[0];
    let s2 = (1.0 + cv * cv).ln();
    let (mu, sd) = (-s2 / 2.0, s2.sqrt());
    let b = (1.0 - alpha) / alpha * 1e4;
    let income = |z: f64| 1e4 / (mu + sd * z).exp() + b;
    let density = |z: f64| (-z * z / 2.0).exp() / (2.0 * std::f64::consts::PI).sqrt();
    let simpson = |f: &dyn Fn(f64) -> f64| {
        let (lo, hi, n) = (-10.0, 10.0, 4000);
        let h = (hi - lo) / n as f64;
        let mut sum = f(lo) + f(hi);
        for i in 1..n {
            sum += f(lo + i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        sum * h / 3.0
    };
    let e_i = simpson(&|z| income(z) * density(z));
    let e_u = simpson(&|z| income(z).powf(1.0 - r_aversion) * density(z));
    let exact = e_i - e_u.powf(1.0 / (1.0 - r_aversion));
    let got = p.number("revenue_risk_premium_exact").unwrap();
    assert!((got - exact).abs() < 0.03 * exact, "{got} vs {exact}");
    // per season in present value: every season has the same law, so PV = premium × annuity
    let pv = p.number("revenue_risk_premium_pv").unwrap();
    let want_pv = exact * annuity(0.05, 25);
    assert!((pv - want_pv).abs() < 0.05 * want_pv, "{pv} vs {want_pv}");
    // the approximation ½·R·CV²·E[I] is beside it (Newbery and Stiglitz 1981) and differs
    let approx = p.number("revenue_risk_premium").unwrap();
    assert!(approx > 0.0 && (approx - got).abs() > 1e-6 * got);
    // a policy that removes all risk reduces the premium by all of it: risk-adjusted net welfare
    // adds the PV of the reduction (checked on the do-nothing policy: no change at all)
    assert_eq!(p.number("revenue_risk_premium_change_pv"), Some(0.0));
    assert_eq!(p.number("risk_adjusted_net_welfare_change_pv"), Some(0.0));
}

#[test]
fn standard_errors_are_the_sample_formula_over_replications() {
    // se = s/√n over the per-replication values (paired differences for changes; the sample
    // standard error of a mean, e.g. Rice 2007, ch. 7), recomputed from the Monte Carlo output
    let s = market(
        "rule = \"naive\"",
        "periods = 10\ninitial_price = 92.0\nseed = 8\nreplications = 150",
        "supply_sd = 3.0",
    );
    let band = policy("[policy]\nname = \"Band\"\n[stock]\nbuy_below = 76.0\nsell_above = 84.0\n");
    let mc = furrow::stochastic::run_monte_carlo(
        &s,
        &[PolicySpec::none(), band.clone()],
        &[],
        &NoProgress,
    )
    .unwrap();
    let res = compare(&s, &[band], &NoProgress).unwrap();
    let p = &res.policies[0];
    let sample_se = |v: &[f64]| {
        let n = v.len() as f64;
        let m = v.iter().sum::<f64>() / n;
        (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (n - 1.0)).sqrt() / n.sqrt()
    };
    let (base, pol) = (&mc.policies[0].replications, &mc.policies[1].replications);
    let diffs: Vec<f64> = pol
        .iter()
        .zip(base)
        .map(|(a, b)| a.welfare.consumer_surplus - b.welfare.consumer_surplus)
        .collect();
    close_to(p, "consumer_surplus_change_pv_se", sample_se(&diffs), 1e-9);
    let means: Vec<f64> = pol.iter().map(|r| r.mean_price).collect();
    close_to(p, "mean_price_se", sample_se(&means), 1e-9);
    // the paired difference is far more precise than the two means' errors combined
    let levels: Vec<f64> = pol.iter().map(|r| r.welfare.consumer_surplus).collect();
    let base_levels: Vec<f64> = base.iter().map(|r| r.welfare.consumer_surplus).collect();
    let unpaired = (sample_se(&levels).powi(2) + sample_se(&base_levels).powi(2)).sqrt();
    assert!(sample_se(&diffs) < unpaired);
}

#[test]
fn fiscal_risk_budget_and_alerts_on_closed_form_paths() {
    // Purchase floor F = 86 from P*: the outlay is F·18 = 1548 every season (deterministic), so
    // every season's quantile is 1548, the worst season 1548 and the peak running total 1548·T.
    let t = 8;
    let s = market(
        "rule = \"naive\"",
        &format!("periods = {t}\ninitial_price = 80.0\nalert_price = [85.0, 90.0]"),
        "",
    );
    let floor = |budget: f64| {
        format!(
            "[policy]\nname = \"Floor {budget}\"\nannual_budget = {budget}\n[floor]\nprice = 86.0\n\
             instrument = \"purchase\"\n"
        )
    };
    let res = compare_with(&s, &[&floor(1000.0), &floor(2000.0)]);
    let (tight, loose) = (&res.policies[0], &res.policies[1]);
    let outlay = 86.0 * 18.0;
    for key in [
        "fiscal_cost_season_mean",
        "fiscal_cost_season_p95",
        "fiscal_cost_season_p99",
        "worst_season_fiscal_cost_mean",
    ] {
        close_to(tight, key, outlay, 1e-12);
    }
    close_to(
        tight,
        "peak_cumulative_fiscal_cost_mean",
        outlay * t as f64,
        1e-12,
    );
    close_to(tight, "budget_exceeded_share", 1.0, 0.0);
    close_to(tight, "budget_ever_exceeded_share", 1.0, 0.0);
    close_to(loose, "budget_exceeded_share", 0.0, 0.0);
    // alerts: the price sits at the floor 86 (above 85, below 90); the baseline at P* = 80
    close_to(tight, "price_above_alert_share", 1.0, 0.0);
    close_to(tight, "price_above_alert_share_2", 0.0, 0.0);
    close_to(&res.baseline, "price_above_alert_share", 0.0, 0.0);
    // the cobweb from P_0 = 92 with naive farmers: P_t = 80 + 12·(−1/2)^t (Ezekiel 1938), so of
    // 74, 83, 78.5, 80.75, … only season 2 is above 82
    let cobweb = market(
        "rule = \"naive\"",
        "periods = 12\ninitial_price = 92.0\nalert_price = 82.0",
        "",
    );
    let res = compare_with(&cobweb, &["[policy]\nname = \"Nothing\"\n"]);
    close_to(&res.baseline, "price_above_alert_share", 1.0 / 12.0, 1e-12);
}

#[test]
fn rotation_leaves_stock_and_prices_alone_and_costs_handling_on_both_legs() {
    // release = "rotate" sells `share` of the old grain and buys as much new grain at the same price:
    // stock and price path are those of the plain band exactly; the fiscal difference per season is
    // handling_cost × (sold + bought) = 2·h·rotated, rotated = share × min(carried, S_t).
    let s = market(
        "rule = \"naive\"",
        "periods = 30\ninitial_price = 92.0\nseed = 4",
        "supply_sd = 4.0\ndemand_sd = 2.0",
    );
    let stock = "buy_below = 77.0\nsell_above = 83.0\ncapacity = 40.0\ninitial = 20.0\n\
                 loss_rate = 0.02\nhandling_cost = 1.5\nstorage_cost = 0.5\n";
    let band = Model::new(
        &s,
        &policy(&format!("[policy]\nname = \"B\"\n[stock]\n{stock}")),
    );
    let rot = Model::new(
        &s,
        &policy(&format!(
            "[policy]\nname = \"R\"\n[stock]\n{stock}release = \"rotate\"\nshare = 0.25\n"
        )),
    );
    let mut stream = furrow::stochastic::ShockStream::new(&s.shocks, 4, 0);
    let shocks: Vec<PeriodShock> = (0..30).map(|_| stream.next_shock()).collect();
    let a = band.run(30, |t| shocks[t - 1]).unwrap();
    let b = rot.run(30, |t| shocks[t - 1]).unwrap();
    let mut carried = 20.0 * 0.98;
    let mut rotated_total = 0.0;
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x.price.to_bits(), y.price.to_bits());
        assert_eq!(x.stock.to_bits(), y.stock.to_bits());
        let rotated = 0.25 * f64::min(carried, x.stock);
        assert!(
            (y.rotated - rotated).abs() < 1e-12,
            "{} vs {rotated}",
            y.rotated
        );
        assert!((y.fiscal_cost - x.fiscal_cost - 2.0 * 1.5 * rotated).abs() < 1e-9);
        rotated_total += rotated;
        carried = x.stock * 0.98;
    }
    assert!(rotated_total > 10.0);
    // "share" is kept as an alias of "drawdown", which runs the stock down
    let alias = policy(
        "[policy]\nname = \"S\"\n[stock]\nbuy_below = 77.0\nrelease = \"share\"\nshare = 0.25\n",
    );
    let drawdown = policy(
        "[policy]\nname = \"S\"\n[stock]\nbuy_below = 77.0\nrelease = \"drawdown\"\nshare = 0.25\n",
    );
    assert_eq!(alias, drawdown);
}

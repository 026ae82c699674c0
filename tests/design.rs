//! Design search against closed forms: the break-even deficiency-payment floor, the opening stock
//! that keeps the stock-out probability under a target (reflection principle with Siegmund's
//! correction), and the frontier against brute force.

mod common;
use common::phi;

use furrow::design::{self, frontier::pareto, Objective, Requirement, Spec};
use furrow::scenario::parse_toml;
use furrow::stochastic::NoProgress;
use furrow::sweep::Base;

/// Linear market D: Q = 200 − P, S: Q = −10 + 0.5·P^e (P* = 140, Q* = 60), naive farmers starting at
/// the steady state.
fn linear_market(extra: &str) -> String {
    format!(
        "[market]\nname = \"lin\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\n\
         slope = 0.5\n[expectations]\nrule = \"naive\"\n[run]\ninitial_price = 140.0\ndiscount_rate = 0.05\n{extra}"
    )
}

fn base(market: &str, policy: &str) -> Base {
    Base::new(
        "m.toml",
        parse_toml("m.toml", market).unwrap(),
        Some(("p.toml", parse_toml("p.toml", policy).unwrap())),
    )
}

#[test]
fn break_even_deficiency_floor_is_the_root_of_a_quadratic() {
    // Derived in the test. Announced floor F > P* = 140, naive farmers from the steady state: each
    // season they expect max(P_{t−1}, F) = F (the market price stays below F), plant Q = −10 + 0.5F,
    // the market clears at P = 200 − Q = 210 − 0.5F < F, and the treasury pays (F − P)·Q =
    // (1.5F − 210)(0.5F − 10) every season. Its present value over T seasons is that times
    // A = (1 − (1 + r)^−T)/r. Fiscal PV ≤ B ⟺ 0.75F² − 120F + 2100 ≤ B/A, so the highest floor is
    // F = (120 + √(8100 + 3B/A))/1.5 (the larger root; at B = 0 it is P* = 140).
    let (t, r, budget) = (20.0, 0.05, 20_000.0);
    let market = linear_market("periods = 20\nreplications = 1\n");
    let policy =
        "[policy]\nname = \"dp\"\n[floor]\nprice = 150.0\ninstrument = \"deficiency-payment\"\n";
    let b = base(&market, policy);
    let axes = [design::parse_vary("floor.price=140:195:12").unwrap()];
    let spec = Spec {
        requirements: vec![Requirement::parse(&format!("fiscal_cost_pv<={budget}")).unwrap()],
        ..Spec::default()
    };
    let found = design::search(&b, &axes, &spec, &NoProgress).unwrap();
    let a = (1.0 - (1.0f64 + r).powf(-t)) / r;
    let want = (120.0 + (8100.0 + 3.0 * budget / a).sqrt()) / 1.5;
    let got = found.chosen.as_ref().unwrap().values[0];
    assert!(found.met && !found.within_noise);
    assert!((got - want).abs() < 1e-6, "floor {got}, closed form {want}");
    // the answer is on the met side of the boundary, and the bracket holds the closed form
    let (lo, hi) = found.bracket.unwrap();
    assert!(lo <= want + 1e-9 && want <= hi + 1e-9, "{lo} {want} {hi}");
    // the fiscal PV at the answer is the closed form's too
    let pay = (1.5 * got - 210.0) * (0.5 * got - 10.0);
    let pv = found
        .chosen
        .as_ref()
        .unwrap()
        .number("fiscal_cost_pv")
        .unwrap();
    assert!(
        (pv - pay * a).abs() < 1e-6 * pv.abs().max(1.0),
        "{pv} {}",
        pay * a
    );

    // --maximise the key itself gives the same answer; a budget no grid floor meets says so
    let spec_max = Spec {
        objective: Some(Objective::Maximise("floor.price".into())),
        ..spec.clone()
    };
    let again = design::search(&b, &axes, &spec_max, &NoProgress).unwrap();
    assert_eq!(again.chosen.unwrap().values[0], got);
    let none = Spec {
        requirements: vec![Requirement::parse("fiscal_cost_pv<-1").unwrap()],
        ..Spec::default()
    };
    let found = design::search(&b, &axes, &none, &NoProgress).unwrap();
    assert!(found.chosen.is_none() && !found.met);
    assert!(
        found.notes[0].contains("no grid value meets"),
        "{:?}",
        found.notes
    );
    // an unknown indicator is refused with the valid names
    let bad = Spec {
        requirements: vec![Requirement::parse("fiscal_cots_pv<=1").unwrap()],
        ..Spec::default()
    };
    let e = design::search(&b, &axes, &bad, &NoProgress)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("fiscal_cots_pv") && e.contains("fiscal_cost_pv"),
        "{e}"
    );
}

/// Φ⁻¹(q) by bisection on [`phi`].
fn phi_inv(q: f64) -> f64 {
    let (mut lo, mut hi) = (-10.0, 10.0);
    for _ in 0..100 {
        let m = 0.5 * (lo + hi);
        if phi(m) < q {
            lo = m;
        } else {
            hi = m;
        }
    }
    0.5 * (lo + hi)
}

#[test]
fn smallest_opening_stock_meets_the_stock_out_target_of_a_random_walk() {
    // A costless band holding the price at P* = 140 (buy_below = sell_above) with additive normal
    // i.i.d. harvest shocks ε_t ~ N(0, σ²): farmers expect 140 every season, plant Q* = 60, and the
    // agency takes up ε_t, so until the first stock-out the stock is the random walk
    // S_t = S_0 + ε_1 + … + ε_t, and a stock-out within T seasons is min_t S_t < 0.
    // Reflection principle (Brownian motion; e.g. Feller 1971, vol. II): P(min_{s≤T} W_s < −x) =
    // 2Φ(−x/(σ√T)). For the discrete walk Siegmund (1985, Sequential Analysis, ch. X) corrects the
    // barrier by the expected overshoot, x → x + ρσ with ρ = −ζ(1/2)/√(2π) ≈ 0.5826 (from memory;
    // the constant's tie to ζ(1/2) is in Chang and Peres 1997). So P ≤ p ⟺
    // S_0 ≥ σ(√T·Φ⁻¹(1 − p/2) − ρ): the smallest opening stock, derived in the test.
    let (sigma, periods, p, reps) = (10.0, 30.0f64, 0.2, 20_000);
    let rho = 1.460_354_508_809_586_8 / (2.0 * std::f64::consts::PI).sqrt();
    let want = sigma * (periods.sqrt() * phi_inv(1.0 - p / 2.0) - rho);
    let market = linear_market(&format!(
        "periods = {periods}\nreplications = {reps}\nseed = 7\n[shocks]\nsupply_sd = {sigma}\n"
    ));
    let policy = "[policy]\nname = \"fixed price\"\n[stock]\nbuy_below = 140.0\nsell_above = 140.0\ninitial = 50.0\n\
                  storage_cost = 0.0\nloss_rate = 0.0\n";
    let b = base(&market, policy);
    let axes = [design::parse_vary("stock.initial=30:100:8").unwrap()];
    let spec = Spec {
        requirements: vec![Requirement::parse(&format!("stockout_any_share<={p}")).unwrap()],
        ..Spec::default()
    };
    let found = design::search(&b, &axes, &spec, &NoProgress).unwrap();
    let chosen = found.chosen.as_ref().unwrap();
    let got = chosen.values[0];
    // Monte Carlo error of the answer: the share's se √(p(1−p)/n) over the slope of P in S_0,
    // 2φ(z)/(σ√T); bisection stops within two of those, and the estimate itself is off by about
    // one: allow four (about 1.8 here), well inside the correction ρσ ≈ 5.8 the test must resolve.
    let z = phi_inv(1.0 - p / 2.0);
    let slope =
        2.0 * (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt() / (sigma * periods.sqrt());
    let se = (p * (1.0 - p) / reps as f64).sqrt() / slope;
    let tol = 4.0 * se;
    assert!(
        tol < 0.5 * rho * sigma,
        "the test could not tell the correction apart"
    );
    assert!(
        (got - want).abs() < tol,
        "opening stock {got}, Siegmund-corrected reflection {want} (± {tol})"
    );
    assert!(found.met);
    // the share there is the corrected formula's within its own standard error (× 3)
    let share = chosen.number("stockout_any_share").unwrap();
    let share_se = chosen.number("stockout_any_share_se").unwrap();
    let formula = 2.0 * phi(-(got / sigma + rho) / periods.sqrt());
    assert!(
        (share - formula).abs() < 3.0 * share_se + 2e-3,
        "{share} {formula} {share_se}"
    );
}

/// A small linear congruential generator for test data (Knuth's MMIX constants).
fn lcg(state: &mut u64) -> f64 {
    *state = state
        .wrapping_mul(6_364_136_223_846_793_005)
        .wrapping_add(1_442_695_040_888_963_407);
    (*state >> 11) as f64 / (1u64 << 53) as f64
}

/// Brute force: i is kept when no j is ≤ on both and < on one.
fn brute(points: &[(f64, f64)]) -> Vec<usize> {
    (0..points.len())
        .filter(|&i| {
            !(0..points.len()).any(|j| {
                let (a, b) = (points[j], points[i]);
                a.0 <= b.0 && a.1 <= b.1 && (a.0 < b.0 || a.1 < b.1)
            })
        })
        .collect()
}

#[test]
fn frontier_is_the_brute_force_set() {
    // definition of Pareto dominance (e.g. Miettinen 1999, Nonlinear Multiobjective Optimization,
    // def. 2.2.1), checked by brute force over every pair; values rounded to a coarse grid so ties
    // and duplicates occur
    let mut s = 42;
    for n in [1, 2, 5, 30, 200] {
        for _ in 0..20 {
            let pts: Vec<(f64, f64)> = (0..n)
                .map(|_| ((lcg(&mut s) * 8.0).round(), (lcg(&mut s) * 8.0).round()))
                .collect();
            let mut got = pareto(&pts);
            got.sort();
            assert_eq!(got, brute(&pts), "{pts:?}");
        }
    }
}

#[test]
fn design_frontier_over_a_grid_is_the_brute_force_set() {
    // two keys of the demo band on the weather market: the frontier of (price_cv, fiscal_cost_pv)
    // among the grid's designs equals brute force on the same outcomes
    let market = std::fs::read_to_string("examples/veldmark_weather.toml")
        .unwrap()
        .replace("replications = 2000", "replications = 40");
    let policy = std::fs::read_to_string("policies/price_band.toml").unwrap();
    let b = base(&market, &policy);
    let axes = [
        design::parse_vary("stock.capacity=20:120:4").unwrap(),
        design::parse_vary("stock.sell_above=220:240:3").unwrap(),
    ];
    let spec = Spec {
        frontier: Some(("price_cv".into(), "fiscal_cost_pv".into())),
        ..Spec::default()
    };
    let found = design::search(&b, &axes, &spec, &NoProgress).unwrap();
    assert_eq!(found.grid.len(), 12);
    let pts: Vec<(f64, f64)> = found
        .grid
        .iter()
        .map(|o| {
            (
                o.number("price_cv").unwrap(),
                o.number("fiscal_cost_pv").unwrap(),
            )
        })
        .collect();
    let mut got = found.frontier.clone();
    got.sort();
    assert_eq!(got, brute(&pts));
    assert!(!got.is_empty());
    // with a requirement, only the designs that meet it are candidates
    let cut = pts.iter().map(|p| p.1).fold(f64::INFINITY, f64::min) * 1.5;
    let spec = Spec {
        requirements: vec![Requirement::parse(&format!("fiscal_cost_pv<={cut}")).unwrap()],
        frontier: Some(("price_cv".into(), "fiscal_cost_pv".into())),
        objective: None,
    };
    let found = design::search(&b, &axes, &spec, &NoProgress).unwrap();
    for &i in &found.frontier {
        assert!(pts[i].1 <= cut);
    }
    let ok: Vec<usize> = (0..pts.len()).filter(|&i| pts[i].1 <= cut).collect();
    let sub: Vec<(f64, f64)> = ok.iter().map(|&i| pts[i]).collect();
    let mut want: Vec<usize> = brute(&sub).into_iter().map(|k| ok[k]).collect();
    want.sort();
    let mut got = found.frontier.clone();
    got.sort();
    assert_eq!(got, want);
}

#[test]
fn cli_design_json_and_sweep_outcomes_at_any_thread_count() {
    // the fixed JSON shape {"key", "value", "met", "indicators"} and byte-identical output on one
    // and two threads (common practice, no source)
    let dir = tempfile::tempdir().unwrap();
    let m = dir.path().join("m.toml");
    std::fs::write(&m, linear_market("periods = 20\nreplications = 1\n")).unwrap();
    let p = dir.path().join("p.toml");
    std::fs::write(
        &p,
        "[policy]\nname = \"dp\"\n[floor]\nprice = 150.0\ninstrument = \"deficiency-payment\"\n",
    )
    .unwrap();
    let (m, p) = (m.to_str().unwrap(), p.to_str().unwrap());
    let (out, _) = common::succeed(common::bin().args([
        "design",
        m,
        "--policy",
        p,
        "--vary",
        "floor.price=140:195",
        "--require",
        "fiscal_cost_pv<=20000",
        "--format",
        "json",
    ]));
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["key"], "floor.price");
    assert_eq!(v["met"], true);
    assert!(v["value"].as_f64().unwrap() > 150.0);
    assert!(v["indicators"]["fiscal_cost_pv"].as_f64().unwrap() <= 20000.0);
    // an unknown indicator: exit 2 and the valid names
    let out = common::bin()
        .args([
            "design",
            m,
            "--policy",
            p,
            "--vary",
            "floor.price=140:195",
            "--require",
            "fiscal<=1",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("fiscal") && err.contains("fiscal_cost_pv"),
        "{err}"
    );
    let args = [
        "sweep",
        "examples/veldmark_weather.toml",
        "--policy",
        "policies/price_band.toml",
        "--vary",
        "stock.capacity=20:200:5",
        "--indicators",
        "all",
        "--replications",
        "200",
        "--format",
        "csv",
    ];
    let one = common::succeed(common::bin().env("RAYON_NUM_THREADS", "1").args(args)).0;
    let two = common::succeed(common::bin().env("RAYON_NUM_THREADS", "2").args(args)).0;
    assert_eq!(one, two);
    assert!(
        one.starts_with("stock.capacity,mean_price,mean_price_se,"),
        "{one}"
    );
    assert_eq!(one.lines().count(), 6);
}

#[test]
fn frontier_over_policy_files_is_compares_columns_brute_forced() {
    // each file a design: the frontier of (price_cv, fiscal_cost_pv) over compare's own columns
    // against brute force (common practice, no source), and the chosen design the best met column
    let market = std::fs::read_to_string("examples/veldmark_weather.toml")
        .unwrap()
        .replace("replications = 2000", "replications = 50");
    let s = furrow::scenario::market_from_str("w.toml", &market).unwrap();
    let files = [
        "policies/price_band.toml",
        "policies/target_reserve.toml",
        "policies/drawdown_reserve.toml",
        "policies/deficiency_payment.toml",
        "policies/support_purchase.toml",
    ];
    let specs: Vec<_> = files
        .iter()
        .map(|f| furrow::policies::file::load_policy(f).unwrap())
        .collect();
    let spec = Spec {
        frontier: Some(("price_cv".into(), "fiscal_cost_pv".into())),
        objective: Some(Objective::Maximise("net_welfare_change_pv".into())),
        requirements: vec![Requirement::parse("fiscal_cost_pv<=1e9").unwrap()],
    };
    let found = design::search_policies(&s, &specs, &spec, &NoProgress).unwrap();
    let cmp = furrow::compare::compare(&s, &specs, &NoProgress).unwrap();
    let pts: Vec<(f64, f64)> = cmp
        .policies
        .iter()
        .map(|c| {
            (
                c.number("price_cv").unwrap(),
                c.number("fiscal_cost_pv").unwrap(),
            )
        })
        .collect();
    let mut got = found.frontier.clone();
    got.sort();
    assert_eq!(got, brute(&pts));
    let best = cmp
        .policies
        .iter()
        .enumerate()
        .max_by(|a, b| {
            a.1.number("net_welfare_change_pv")
                .unwrap()
                .total_cmp(&b.1.number("net_welfare_change_pv").unwrap())
        })
        .unwrap()
        .0;
    assert_eq!(found.chosen.unwrap().values[0], (best + 1) as f64);
    assert_eq!(found.labels[best], cmp.policies[best].name);
}

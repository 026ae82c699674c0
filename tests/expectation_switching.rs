//! `switching`: shares chosen by discrete choice on past forecast errors (Brock and Hommes 1997).
//! Intensity 0 is `mixed` with equal shares bit for bit; with a costly rational forecast against a
//! free naive one, the steady state loses stability by period doubling at the intensity derived
//! here, and a 2-cycle appears beyond it.

use furrow::engine::{Model, PeriodShock};
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_str, Scenario};
use furrow::stability::analyse;

/// Linear market: demand Q = a − b·P (b = |demand slope|), supply Q = c + d·P^e (d = supply slope).
fn market(a: f64, b: f64, c: f64, d: f64, rule: &str, p0: f64) -> Scenario {
    let text = format!(
        "[market]\nname = \"veldmark-test\"\n[demand]\nintercept = {a:?}\nslope = {:?}\n\
         [supply]\nintercept = {c:?}\nslope = {d:?}\n[expectations]\n{rule}\n\
         [run]\nperiods = 40\ninitial_price = {p0:?}\n",
        -b
    );
    market_from_str("veldmark-test.toml", &text).expect("valid test market")
}

/// A deterministic, irregular shock stream (no generator needed to make the runs differ).
fn shock(t: usize) -> PeriodShock {
    let x = t as f64;
    PeriodShock {
        yield_factor: 1.0 + 0.08 * (1.7 * x).sin(),
        supply: 3.0 * (0.9 * x).cos(),
        demand: 4.0 * (2.3 * x).sin(),
        world_factor: 1.0,
    }
}

#[test]
fn intensity_zero_equals_mixed_with_equal_shares_bit_for_bit() {
    // β = 0: exp(0)/Σ exp(0) = 1/k whatever the errors and costs (Brock and Hommes 1997, the
    // fractions' formula), so the market is `mixed` with shares 1/k
    for (groups, k, costs) in [
        ("rational, naive", 2, "[3.0, 0.0]"),
        ("naive, adaptive:0.4", 2, "[0.0, 7.5]"),
        (
            "naive, adaptive:0.4, trailing-mean:3, rational",
            4,
            "[0.0, 1.0, 2.0, 3.0]",
        ),
    ] {
        let shares = vec![format!("{:?}", 1.0 / k as f64); k].join(", ");
        let m = market(
            400.0,
            1.0,
            -20.0,
            1.4,
            &format!("rule = \"mixed\"\ngroups = \"{groups}\"\nshares = [{shares}]"),
            190.0,
        );
        let s = market(
            400.0,
            1.0,
            -20.0,
            1.4,
            &format!(
                "rule = \"switching\"\ngroups = \"{groups}\"\ncost = {costs}\nintensity = 0.0\nmemory = 0.3"
            ),
            190.0,
        );
        let run = |sc: &Scenario| {
            Model::new(sc, &PolicySpec::none())
                .run(60, shock)
                .expect("runs")
        };
        let (a, b) = (run(&m), run(&s));
        assert_eq!(a.len(), 60);
        for (x, y) in a.iter().zip(&b) {
            // Debug prints each float's shortest round-trip form: equal text is equal bits
            assert_eq!(format!("{x:?}"), format!("{y:?}"), "{groups}");
        }
    }
}

/// The first period-doubling intensity for rational (cost C) against naive (free) farmers,
/// derived here: at the steady state every forecast error is zero, so the fitness is −cost and the
/// rational share is n* = 1/(1 + e^{βC}); the shares move with squared errors, which do not enter
/// the linearisation, so the root is the mixed market's −d(1 − n*)/(b + d·n*) (derived in
/// tests/expectation_mixed.rs). It reaches −1 where n* = (d − b)/(2d), i.e.
/// e^{βC} = (d + b)/(d − b): β* = ln((d + b)/(d − b))/C, for an unstable naive market (d > b).
/// (Brock and Hommes 1997 find the same route — stable steady state, then period doubling as β
/// rises — with profits as fitness; from memory for their exact statement.)
fn first_doubling(b: f64, d: f64, cost: f64) -> f64 {
    ((d + b) / (d - b)).ln() / cost
}

fn switching(cost: f64, beta: f64) -> String {
    format!(
        "rule = \"switching\"\ngroups = \"rational, naive\"\ncost = [{cost:?}, 0.0]\nintensity = {beta:?}"
    )
}

#[test]
fn the_steady_state_loses_stability_at_the_derived_intensity() {
    let (a, c) = (400.0, -20.0);
    for (b, d, cost) in [(1.0, 1.5, 1.0), (1.0, 2.0, 4.0), (0.7, 1.0, 0.5)] {
        let beta_star = first_doubling(b, d, cost);
        for (factor, stable) in [(0.5, true), (0.95, true), (1.05, false), (2.0, false)] {
            let beta = factor * beta_star;
            let s = market(a, b, c, d, &switching(cost, beta), 150.0);
            let rep = analyse(&s, &PolicySpec::none()).unwrap();
            let ev = &rep.regimes[0].eigenvalues;
            assert_eq!(ev.len(), 1, "{ev:?}");
            let n = 1.0 / (1.0 + (beta * cost).exp());
            let want = -d * (1.0 - n) / (b + d * n);
            assert!(
                (ev[0].re - want).abs() < 1e-6,
                "β {beta}: {:?} vs {want}",
                ev[0]
            );
            assert_eq!(ev[0].re > -1.0, stable, "β/β* = {factor}: {:?}", ev[0]);
        }
    }
}

#[test]
fn below_the_derived_intensity_the_path_settles_and_beyond_it_a_two_cycle_appears() {
    let (a, b, c, d, cost) = (400.0, 1.0, -20.0, 1.5, 1.0);
    let p_star = (a - c) / (b + d);
    let beta_star = first_doubling(b, d, cost);
    let tail = |beta: f64| -> Vec<f64> {
        let s = market(a, b, c, d, &switching(cost, beta), p_star + 0.5);
        let r = Model::new(&s, &PolicySpec::none())
            .run(3000, |_| PeriodShock::NONE)
            .expect("a switching market stays bounded");
        r[r.len() - 6..].iter().map(|r| r.price).collect()
    };
    // below β*: back to the steady state (where the curves cross)
    for p in tail(0.8 * beta_star) {
        assert!((p - p_star).abs() < 1e-6, "{p} vs {p_star}");
    }
    // just beyond β*: a 2-cycle around the steady state (P_{t+2} = P_t ≠ P_{t+1}), the period
    // doubling. (Far beyond it a large swing can send the rational share to 1 in floating point,
    // which lands the market exactly on its unstable steady state; not tested here.)
    for factor in [1.1, 1.2, 1.3] {
        let p = tail(factor * beta_star);
        for t in 0..4 {
            assert!((p[t + 2] - p[t]).abs() < 1e-6, "β/β* {factor}: {p:?}");
        }
        assert!((p[1] - p[0]).abs() > 1e-2, "β/β* {factor}: no cycle {p:?}");
        assert!(
            (p[0] - p_star) * (p[1] - p_star) < 0.0,
            "the cycle straddles P*: {p:?}"
        );
    }
}

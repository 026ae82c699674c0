//! Sweeps and long runs: grid results against point-by-point analysis, long-run prices against the
//! simulator, Lyapunov exponents against closed forms.

mod stability_common;

use approx::assert_relative_eq;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml};
use furrow::stability::{analyse, Verdict};
use furrow::sweep::{self, Base};
use stability_common::*;

#[test]
fn period_two_cycle_of_a_constant_elasticity_market() {
    // With e_s = −e_d the naive map is P_{t+1} = P*²/P_t (in logs ln P' = 2 ln P* − ln P, by hand):
    // every start other than P* is a period-2 cycle, the eigenvalue is −1 and the Lyapunov exponent 0.
    let s = ce(0.5, -0.5, "rule = \"naive\"");
    let rep = analyse(&s, &PolicySpec::none()).unwrap();
    assert_relative_eq!(rep.regimes[0].eigenvalues[0].re, -1.0, epsilon = 1e-9);
    assert_eq!(rep.verdict, Verdict::Neutral);
    let lr = sweep::longrun::long_run(&s, &PolicySpec::none(), 1000, 4);
    let p_star = s.steady.price;
    let p0 = s.run.initial_price;
    let other = p_star * p_star / p0;
    // period 1000 is even: P_1000 = P_0
    let want = [other, p0, other, p0];
    for (x, w) in lr.prices.iter().zip(want) {
        assert_relative_eq!(*x, w, max_relative = 1e-9);
    }
    assert!(lr.lyapunov.unwrap().abs() < 1e-6, "{:?}", lr.lyapunov);
}

#[test]
fn lyapunov_of_linear_and_power_maps_is_log_slope() {
    // a linear map x' = m x has exponent ln|m|; the CE naive map is linear in logs with m = e_s/e_d
    // (Benettin et al. 1980 reduces to mean ln|f'| in one dimension)
    let s = linear(200.0, 1.0, -10.0, 0.7, "rule = \"naive\"");
    let lr = sweep::longrun::long_run(&s, &PolicySpec::none(), 60, 5);
    assert_relative_eq!(lr.lyapunov.unwrap(), 0.7_f64.ln(), epsilon = 1e-6);
    let s = ce(0.3, -0.6, "rule = \"naive\"");
    let (l, _) = sweep::longrun::lyapunov(&s, &PolicySpec::none(), 40);
    // along a converging orbit f' → e_s/e_d; allow for the transient (second half averaged)
    assert_relative_eq!(l.unwrap(), 0.5_f64.ln(), epsilon = 1e-3);
}

#[test]
fn long_run_prices_are_the_simulators() {
    // the orbit kept is the engine's run (common practice, no source: two code paths must agree)
    let s = linear(200.0, 1.0, -10.0, 0.9, "rule = \"adaptive\"\nweight = 0.8");
    let lr = sweep::longrun::long_run(&s, &PolicySpec::none(), 30, 3);
    let recs = furrow::engine::Model::new(&s, &PolicySpec::none())
        .run(30, |_| furrow::engine::PeriodShock::NONE)
        .unwrap();
    let tail: Vec<f64> = recs[27..].iter().map(|r| r.price).collect();
    assert_eq!(lr.prices, tail);
}

#[test]
fn two_key_sweep_matches_point_by_point_analysis() {
    // the fast path (sections patched from per-value validation) against full validation per point
    let text = "[market]\nname = \"g\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\nslope = 0.5\n\
                [expectations]\nrule = \"adaptive\"\nweight = 0.5\n";
    let base = Base::new("g.toml", parse_toml("g.toml", text).unwrap(), None);
    let axes = [
        sweep::parse_vary("supply.slope=0.2:3.0:7").unwrap(),
        sweep::parse_vary("expectations.weight=0.1:1.0:4").unwrap(),
    ];
    let points = sweep::sweep(&base, &axes, None).unwrap();
    assert_eq!(points.len(), 28);
    for pt in &points {
        let (s, p) = base
            .validate(&[
                ("supply.slope", pt.values[0]),
                ("expectations.weight", pt.values[1]),
            ])
            .unwrap();
        let rep = analyse(&s, &p).unwrap();
        let (rho, v) = pt.outcome.clone().unwrap();
        assert_eq!(rho, rep.spectral_radius);
        assert_eq!(v, rep.verdict);
        // Nerlove's closed form for the radius: |1 − λ(1 + b/d)|
        assert_relative_eq!(
            rho,
            (1.0 - pt.values[1] * (1.0 + pt.values[0])).abs(),
            epsilon = 1e-12
        );
    }
    // same output on a one-thread pool (rayon keeps the order)
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let again = pool.install(|| sweep::sweep(&base, &axes, None).unwrap());
    assert_eq!(again, points);
}

#[test]
fn invalid_points_are_kept_and_unknown_keys_fail() {
    let text = "[market]\nname = \"g\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\nslope = 0.5\n";
    let base = Base::new("g.toml", parse_toml("g.toml", text).unwrap(), None);
    let axes = [sweep::parse_vary("supply.slope=-0.5:0.5:3").unwrap()];
    let points = sweep::sweep(&base, &axes, None).unwrap();
    assert!(points[0]
        .outcome
        .as_ref()
        .unwrap_err()
        .contains("supply.slope"));
    assert!(points[1].outcome.is_err()); // slope 0 is out of range (> 0)
    assert!(points[2].outcome.is_ok());
    let axes = [sweep::parse_vary("supply.slpoe=0.5:1:2").unwrap()];
    let err = sweep::sweep(&base, &axes, None).unwrap_err().to_string();
    assert!(err.contains("supply.slpoe"), "{err}");
    // a policy key without a policy file starts from an empty policy
    let axes = [sweep::parse_vary("floor.price=100:150:2").unwrap()];
    let points = sweep::sweep(&base, &axes, None).unwrap();
    assert_eq!(points[0].outcome.as_ref().unwrap().1, Verdict::Stable);
    // 150 > P* = 140: no steady state with finite stock, the stock's unit root: neutral (it once
    // read "unstable", against the documented neutral band)
    assert_eq!(
        points[1].outcome.as_ref().unwrap(),
        &(1.0, Verdict::Neutral)
    );
    // a purchase floor at or above the choke price 200 leaves demand nothing: invalid, naming the key
    let axes = [sweep::parse_vary("floor.price=150:250:3").unwrap()];
    let points = sweep::sweep(&base, &axes, None).unwrap();
    assert!(points[0].outcome.is_ok());
    for p in &points[1..] {
        let msg = p.outcome.as_ref().unwrap_err();
        assert!(
            msg.contains("floor.price") && msg.contains("below 200"),
            "{msg}"
        );
    }
}

#[test]
fn benettin_exponent_of_a_linear_second_order_map_is_log_radius() {
    // for a linear map x' = J x the largest Lyapunov exponent is ln ρ(J) (Oseledets 1968; Benettin
    // et al. 1980 estimate it by renormalised tangent vectors). Extrapolative ρ = −0.8, b/d = 1.2:
    // a complex pair of modulus √(0.96) inside the unit circle.
    let s = linear(
        300.0,
        1.0,
        -10.0,
        1.2,
        "rule = \"extrapolative\"\nweight = -0.8",
    );
    let rep = analyse(&s, &PolicySpec::none()).unwrap();
    let rho = rep.spectral_radius;
    assert_relative_eq!(rho, (1.2_f64 * 0.8).sqrt(), max_relative = 1e-12);
    let (l, orbit) = sweep::longrun::lyapunov(&s, &PolicySpec::none(), 400);
    assert_eq!(orbit, sweep::Orbit::Ok);
    // a complex pair rotates the tangent vector, so the per-step growth oscillates; the average
    // over 200 steps is within a few 1e-3 of ln ρ
    assert!(
        (l.unwrap() - rho.ln()).abs() < 5e-3,
        "{l:?} vs {}",
        rho.ln()
    );
}

#[test]
fn lyapunov_on_a_nonlinear_two_cycle_matches_the_chain_rule() {
    // Constant-elasticity market (demand −0.3, supply 1.5 at P = 100, Q = 50): P = 100 (P^e/100)^−5.
    // Adaptive λ = 0.35 is unstable at the steady state (b/d = 5 > (2 − λ)/λ ≈ 4.71, Nerlove 1958)
    // but settles on a 2-cycle of P^e. On a k-cycle the exponent is (1/k) Σ ln|f'(x_i)| (chain rule),
    // with f(x) = (1 − λ) x + λ h(x), h'(x) = −5 h(x)/x.
    let text = "[market]\nname = \"ce\"\n[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\n\
                at_quantity = 50.0\nelasticity = -0.3\n[supply]\nform = \"constant-elasticity\"\n\
                at_price = 100.0\nat_quantity = 50.0\nelasticity = 1.5\n[expectations]\nrule = \"adaptive\"\n\
                weight = 0.35\n[run]\ninitial_price = 120.0\n";
    let s = market_from_table("ce.toml", parse_toml("ce.toml", text).unwrap()).unwrap();
    let none = PolicySpec::none();
    assert_eq!(analyse(&s, &none).unwrap().verdict, Verdict::Unstable);
    let recs = furrow::engine::Model::new(&s, &none)
        .run(2000, |_| furrow::engine::PeriodShock::NONE)
        .unwrap();
    let (a, b) = (recs[1998].expected_price, recs[1999].expected_price);
    assert!((a - b).abs() > 1.0, "not a 2-cycle: {a} {b}");
    assert_relative_eq!(recs[1997].expected_price, b, max_relative = 1e-9);
    let l = 0.35;
    let h = |x: f64| 100.0 * (x / 100.0_f64).powf(-5.0);
    let fprime = |x: f64| (1.0 - l) + l * (-5.0 * h(x) / x);
    let want = 0.5 * (fprime(a).abs().ln() + fprime(b).abs().ln());
    let (got, orbit) = sweep::longrun::lyapunov(&s, &none, 2000);
    assert_eq!(orbit, sweep::Orbit::Ok);
    assert_relative_eq!(got.unwrap(), want, epsilon = 1e-6);
    assert!(want < 0.0); // the cycle attracts
}

#[test]
fn a_floor_hit_in_the_transient_does_not_hide_the_exponent() {
    // Q_d = 200 − P, Q_s = −10 + 0.5 P (P* = 140), naive, P_0 = 180: the first price 200 − 80 = 120
    // is below the floor 125, which pins it once; afterwards the orbit converges at the rate
    // b/d = 0.5, so the exponent is ln 0.5 (linear map; Benettin et al. 1980)
    let text = "[market]\nname = \"f\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\n\
                slope = 0.5\n[run]\ninitial_price = 180.0\n";
    let s = market_from_table("f.toml", parse_toml("f.toml", text).unwrap()).unwrap();
    let p = policy("[policy]\nname = \"floor\"\n[floor]\nprice = 125.0\n");
    let recs = furrow::engine::Model::new(&s, &p)
        .run(2, |_| furrow::engine::PeriodShock::NONE)
        .unwrap();
    assert!(recs[0].purchases > 0.0 && recs[0].price == 125.0);
    let (l, orbit) = sweep::longrun::lyapunov(&s, &p, 200);
    assert_eq!(orbit, sweep::Orbit::Ok);
    assert_relative_eq!(l.unwrap(), 0.5_f64.ln(), epsilon = 1e-6);
}

#[test]
fn unstable_market_started_at_its_steady_state_is_not_shown_as_settled() {
    // Q_d = 200 − P, Q_s = −10 + b P with b > 1 and P_0 = P* given in the file: naive deviations
    // grow by −b/d each season (Ezekiel 1938). The long run starts from P*·(1 + 1e-3), so the
    // prices spread and the exponent is ln(b/d) > 0 (a linear map's exponent is ln|slope|;
    // Benettin et al. 1980); at rest it showed a flat diagram.
    let text = "[market]\nname = \"u\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\n\
                slope = 1.1\n[run]\ninitial_price = 100.0\n";
    let base = Base::new("u.toml", parse_toml("u.toml", text).unwrap(), None);
    // P* = 210/2.1 = 100: the file starts at rest
    let axes = [sweep::parse_vary("supply.slope=1.1:1.3:3").unwrap()];
    let spec = sweep::LongRunSpec {
        keep: 20,
        periods: 1020,
    };
    let points = sweep::sweep(&base, &axes, Some(spec)).unwrap();
    for pt in &points {
        let b = pt.values[0];
        assert_eq!(pt.outcome.as_ref().unwrap().1, Verdict::Unstable, "b = {b}");
        let lr = pt.long_run.as_ref().unwrap();
        // a linear cobweb cannot cycle: the run leaves the region (price ≤ 0) and says so
        assert_eq!(lr.orbit, sweep::Orbit::Diverged, "b = {b}");
        let spread = lr.prices.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
            - lr.prices.iter().cloned().fold(f64::INFINITY, f64::min);
        assert!(spread > 10.0, "b = {b}: flat diagram {:?}", lr.prices);
        let l = lr.lyapunov.expect("an exponent before the divergence");
        assert_relative_eq!(l, b.ln(), epsilon = 1e-6);
        // the kept prices are the engine's path from the documented start, up to the divergence:
        // P*·(1 + 1e-3) where the file's P_0 = 100 is the steady state (b = 1.1), else P_0
        let mut s = base.validate(&[("supply.slope", b)]).unwrap().0;
        let at_rest = (s.steady.price - 100.0).abs() < 1e-9;
        assert_eq!(at_rest, b == 1.1);
        let p0 = if at_rest {
            s.steady.price * (1.0 + sweep::REST_PERTURBATION)
        } else {
            100.0
        };
        s.run.initial_price = p0;
        s.run.price_history = vec![p0];
        let model = furrow::engine::Model::new(&s, &PolicySpec::none());
        let mut sim = model.simulator();
        let mut path = Vec::new();
        while let Ok(r) = sim.step(&furrow::engine::PeriodShock::NONE) {
            path.push(r.price);
        }
        assert_eq!(lr.first_period + lr.prices.len() - 1, path.len());
        assert_eq!(lr.prices[..], path[path.len() - lr.prices.len()..]);
    }
}

#[test]
fn stable_market_started_at_rest_still_settles() {
    // b/d = 0.5 < 1 (Ezekiel 1938): from P*·(1 + 1e-3) the deviation dies out; exponent ln 0.5
    let text = "[market]\nname = \"s\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\n\
                slope = 0.5\n";
    let base = Base::new("s.toml", parse_toml("s.toml", text).unwrap(), None);
    let axes = [sweep::parse_vary("supply.slope=0.5:0.5:1").unwrap()];
    let spec = sweep::LongRunSpec {
        keep: 4,
        periods: 200,
    };
    let points = sweep::sweep(&base, &axes, Some(spec)).unwrap();
    let lr = points[0].long_run.as_ref().unwrap();
    assert_eq!(lr.orbit, sweep::Orbit::Ok);
    assert_eq!(lr.first_period, 197);
    assert_relative_eq!(lr.lyapunov.unwrap(), 0.5_f64.ln(), epsilon = 1e-6);
    for p in &lr.prices {
        assert_relative_eq!(*p, 140.0, max_relative = 1e-12);
    }
}

#[test]
fn two_key_sweep_checks_the_floor_against_each_points_demand() {
    // Q_d = a − P has the choke price a (by hand). Demand's intercept and the purchase floor are
    // validated apart, each against the other file's base value (a = 200): floor 180 passes there,
    // but at the grid point a = 150 it lies above the choke price and must be refused like a file
    // with both values would be (it was analysed as a valid point).
    let text = "[market]\nname = \"g\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\nslope = 0.5\n";
    let base = Base::new("g.toml", parse_toml("g.toml", text).unwrap(), None);
    let axes = [
        sweep::parse_vary("demand.intercept=150:250:3").unwrap(),
        sweep::parse_vary("floor.price=100:180:2").unwrap(),
    ];
    let points = sweep::sweep(&base, &axes, None).unwrap();
    assert_eq!(points.len(), 6);
    let mut refused = 0;
    for pt in &points {
        let (a, f) = (pt.values[0], pt.values[1]);
        // the whole-file validation of the same two values decides, point by point
        match base.validate(&[("demand.intercept", a), ("floor.price", f)]) {
            Ok((s, p)) => {
                let rep = analyse(&s, &p).unwrap();
                assert_eq!(
                    pt.outcome,
                    Ok((rep.spectral_radius, rep.verdict)),
                    "a = {a}, floor = {f}"
                );
            }
            Err(e) => {
                refused += 1;
                assert_eq!(pt.outcome, Err(e.to_string()), "a = {a}, floor = {f}");
            }
        }
        if f >= a {
            let msg = pt.outcome.as_ref().unwrap_err();
            assert!(
                msg.contains("floor.price") && msg.contains(&format!("below {a}")),
                "{msg}"
            );
        }
    }
    // exactly one point has the floor at or above the choke price: (a = 150, floor = 180)
    assert_eq!(refused, 1);
}

#[test]
fn monte_carlo_sweep_points_are_compare_bit_for_bit() {
    // each grid point's indicators against a separate `compare` of the policy file with the key set
    // in the file itself (two code paths must agree; common practice, no source)
    let market = std::fs::read_to_string("examples/veldmark_weather.toml").unwrap();
    let market = market.replace("replications = 2000", "replications = 60");
    let policy_text = std::fs::read_to_string("policies/price_band.toml").unwrap();
    let base = Base::new(
        "w.toml",
        parse_toml("w.toml", &market).unwrap(),
        Some(("band.toml", parse_toml("band.toml", &policy_text).unwrap())),
    );
    let axes = [
        sweep::parse_vary("stock.capacity=20:100:3").unwrap(),
        sweep::parse_vary("demand.elasticity=-0.3:-0.2:2").unwrap(),
    ];
    let points =
        sweep::outcomes::outcomes(&base, &axes, &furrow::stochastic::NoProgress, &|_| Ok(()))
            .unwrap();
    assert_eq!(points.len(), 6);
    for pt in &points {
        let cap = format!("capacity = {:?}", pt.values[0]);
        let el = format!("elasticity = {:?}", pt.values[1]);
        let m = market.replacen("elasticity = -0.25", &el, 1);
        let p = policy_text.replace("capacity = 60.0", &cap);
        let s = furrow::scenario::market_from_str("w.toml", &m).unwrap();
        let spec = furrow::policies::file::policy_from_table(
            "band.toml",
            parse_toml("band.toml", &p).unwrap(),
        )
        .unwrap();
        let want = furrow::compare::compare(&s, &[spec], &furrow::stochastic::NoProgress).unwrap();
        let got = pt.indicators.as_ref().unwrap();
        assert_eq!(got, &want.policies[0].indicators, "at {:?}", pt.values);
    }
    // the same shocks at every point: capacity changes the figures, a one-thread pool does not
    assert_ne!(points[0].number("price_cv"), points[4].number("price_cv"));
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let again = pool.install(|| {
        sweep::outcomes::outcomes(&base, &axes, &furrow::stochastic::NoProgress, &|_| Ok(()))
            .unwrap()
    });
    assert_eq!(again, points);
    // names: `_se` follows each, unknown names list the valid ones
    let first = sweep::outcomes::first_valid(&points).unwrap();
    let cols = sweep::outcomes::Selection::parse("price_cv,mean_price")
        .unwrap()
        .columns(first)
        .unwrap();
    assert_eq!(cols, ["price_cv", "mean_price", "mean_price_se"]);
    let err = sweep::outcomes::Selection::parse("price_vc")
        .unwrap()
        .columns(first)
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("price_vc") && err.contains("price_cv"),
        "{err}"
    );
}

#[test]
fn points_run_together_in_one_comparison_get_each_points_own_figures() {
    // an identity (no outside source): grid points that vary only the policy file run in batches
    // of one `compare` (the market left alone stepped once for the batch); every point must get
    // what its own `compare` gives, bit for bit, a failing point its own error, and the progress
    // must count each point's replications once
    use std::sync::atomic::{AtomicU64, Ordering};
    struct Count(AtomicU64);
    impl furrow::stochastic::Progress for Count {
        fn advance(&self, n: u64) {
            self.0.fetch_add(n, Ordering::Relaxed);
        }
    }
    let market = std::fs::read_to_string("examples/veldmark_weather.toml").unwrap();
    let market = market.replace("replications = 2000", "replications = 150");
    let band = std::fs::read_to_string("policies/price_band.toml").unwrap();
    let base = Base::new(
        "w.toml",
        parse_toml("w.toml", &market).unwrap(),
        Some(("band.toml", parse_toml("band.toml", &band).unwrap())),
    );
    let scenario = base.validate(&[]).unwrap().0;
    assert!(
        sweep::outcomes::batch_size(&scenario) >= 2,
        "batches must form"
    );
    let axes = [
        sweep::parse_vary("stock.capacity=10:200:5").unwrap(),
        sweep::parse_vary("stock.sell_above=215:245:3").unwrap(),
    ];
    let count = Count(AtomicU64::new(0));
    let points = sweep::outcomes::outcomes(&base, &axes, &count, &|_| Ok(())).unwrap();
    assert_eq!(points.len(), 15);
    // capacity 10 is below the file's initial stock: three points are refused, before any run
    let valid = points.iter().filter(|p| p.indicators.is_ok()).count();
    assert_eq!(valid, 12);
    assert_eq!(count.0.load(Ordering::Relaxed), 12 * 150);
    let alone = |values: &[f64]| {
        let overrides: Vec<(&str, f64)> = axes
            .iter()
            .zip(values)
            .map(|(a, v)| (a.key.as_str(), *v))
            .collect();
        sweep::outcomes::evaluate(&base, &overrides, &furrow::stochastic::NoProgress)
    };
    for pt in &points {
        assert_eq!(pt.indicators, alone(&pt.values), "at {:?}", pt.values);
    }
    assert_ne!(
        points[1].number("fiscal_cost_pv"),
        points[7].number("fiscal_cost_pv")
    );
    // farmers who extrapolate: the market left alone under their rule diverges for a positive
    // weight, so batches hold failing points; each keeps its own message
    let cycle = std::fs::read_to_string("examples/dunmere_cycle.toml").unwrap();
    let extra = "[policy]\nname = \"Band, extrapolating farmers\"\n[stock]\nbuy_below = 100.0\n\
                 sell_above = 140.0\ncapacity = 30.0\n[expectations]\nrule = \"extrapolative\"\n\
                 weight = 0.5\n";
    let base = Base::new(
        "c.toml",
        parse_toml(
            "c.toml",
            &cycle.replace("replications = 2000", "replications = 100"),
        )
        .unwrap(),
        Some(("x.toml", parse_toml("x.toml", extra).unwrap())),
    );
    let axes = [sweep::parse_vary("expectations.weight=-0.9:0.9:10").unwrap()];
    let points =
        sweep::outcomes::outcomes(&base, &axes, &furrow::stochastic::NoProgress, &|_| Ok(()))
            .unwrap();
    let failed = points.iter().filter(|p| p.indicators.is_err()).count();
    assert!(failed > 0 && failed < points.len(), "{failed} failed");
    for pt in &points {
        let overrides = [(axes[0].key.as_str(), pt.values[0])];
        let want = sweep::outcomes::evaluate(&base, &overrides, &furrow::stochastic::NoProgress);
        assert_eq!(pt.indicators, want, "at {:?}", pt.values);
    }
}

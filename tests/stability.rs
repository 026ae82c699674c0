//! Stability analysis checked against closed forms and published conditions (sources beside each).

use approx::assert_relative_eq;
use furrow::scenario::{market_from_table, parse_toml, policy_from_table, PolicySpec, Scenario};
use furrow::stability::{self, analyse, Clearing, Eigenvalue, Setup, StateMap, Verdict};
use furrow::sweep::{self, Base};

/// Linear market Q_d = a − d P, Q_s = c + b P^e with the given expectations section body.
fn linear(a: f64, d: f64, c: f64, b: f64, rule: &str) -> Scenario {
    let text = format!(
        "[market]\nname = \"t\"\n[demand]\nintercept = {a}\nslope = {}\n[supply]\nintercept = {c}\nslope = {b}\n\
         [expectations]\n{rule}\n[run]\nperiods = 50\ninitial_price = 90.0\n",
        -d
    );
    market_from_table("t.toml", parse_toml("t.toml", &text).unwrap()).unwrap()
}

fn ce(es: f64, ed: f64, rule: &str) -> Scenario {
    let text = format!(
        "[market]\nname = \"ce\"\n[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\nat_quantity = 50.0\n\
         elasticity = {ed}\n[supply]\nform = \"constant-elasticity\"\nat_price = 80.0\nat_quantity = 45.0\n\
         elasticity = {es}\n[expectations]\n{rule}\n[run]\ninitial_price = 130.0\n"
    );
    market_from_table("ce.toml", parse_toml("ce.toml", &text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    policy_from_table("p.toml", parse_toml("p.toml", text).unwrap()).unwrap()
}

fn sorted(mut v: Vec<Eigenvalue>) -> Vec<Eigenvalue> {
    v.sort_by(|a, b| a.re.total_cmp(&b.re).then(a.im.total_cmp(&b.im)));
    v
}

/// Roots of z² + a1 z + a0 by the quadratic formula (solved by hand), sorted like `sorted`.
fn quadratic_roots(a1: f64, a0: f64) -> Vec<Eigenvalue> {
    let disc = a1 * a1 - 4.0 * a0;
    let v = if disc >= 0.0 {
        let s = disc.sqrt();
        vec![
            Eigenvalue {
                re: (-a1 - s) / 2.0,
                im: 0.0,
            },
            Eigenvalue {
                re: (-a1 + s) / 2.0,
                im: 0.0,
            },
        ]
    } else {
        let s = (-disc).sqrt();
        vec![
            Eigenvalue {
                re: -a1 / 2.0,
                im: -s / 2.0,
            },
            Eigenvalue {
                re: -a1 / 2.0,
                im: s / 2.0,
            },
        ]
    };
    sorted(v)
}

fn free(s: &Scenario) -> stability::Regime {
    let r = analyse(s, &PolicySpec::none()).unwrap();
    assert!(r.regimes[0].holds_steady_state);
    r.regimes[0].clone()
}

fn close(a: &[Eigenvalue], b: &[Eigenvalue], tol: f64) {
    assert_eq!(a.len(), b.len(), "{a:?} vs {b:?}");
    for (x, y) in sorted(a.to_vec()).iter().zip(sorted(b.to_vec())) {
        assert!(
            (x.re - y.re).abs() <= tol && (x.im - y.im).abs() <= tol,
            "{a:?} vs {b:?}"
        );
    }
}

// b = 0.5, d = 1 → b/d = 0.5 unless stated
#[test]
fn naive_eigenvalue_is_minus_b_over_d() {
    // cobweb: p_t = −(b/d) p_{t−1} (Ezekiel 1938)
    for (b, d) in [(0.5, 1.0), (1.1, 1.25), (2.0, 1.0)] {
        let r = free(&linear(200.0, d, -10.0, b, "rule = \"naive\""));
        close(
            &r.eigenvalues,
            &[Eigenvalue {
                re: -b / d,
                im: 0.0,
            }],
            1e-12,
        );
        assert_eq!(r.period, Some(2.0));
        assert!(r.oscillating);
    }
}

#[test]
fn adaptive_eigenvalue_is_one_minus_lambda_one_plus_ratio() {
    // Nerlove (1958): P^e_{t+1} = [1 − λ(1 + b/d)] P^e_t (deviations)
    for l in [0.2, 0.6, 1.0] {
        let r = free(&linear(
            200.0,
            1.0,
            -10.0,
            0.5,
            &format!("rule = \"adaptive\"\nweight = {l}"),
        ));
        close(
            &r.eigenvalues,
            &[Eigenvalue {
                re: 1.0 - l * 1.5,
                im: 0.0,
            }],
            1e-12,
        );
    }
}

#[test]
fn normal_price_fixed_eigenvalue() {
    // P^e = P_{t−1} + η (N − P_{t−1}) → root −(b/d)(1 − η) (by hand from the rule)
    let eta = 0.3;
    let s = linear(
        200.0,
        1.0,
        -10.0,
        0.5,
        &format!("rule = \"normal-price\"\nweight = {eta}\nnormal_price = 70.0"),
    );
    let rep = analyse(&s, &PolicySpec::none()).unwrap();
    close(
        &rep.regimes[0].eigenvalues,
        &[Eigenvalue {
            re: -0.5 * (1.0 - eta),
            im: 0.0,
        }],
        1e-12,
    );
    // the fixed point solves p = D⁻¹(S((1 − η) p + η N)): (200 − p) = −10 + 0.5((1 − η)p + η·70)
    let want = (210.0 - 0.5 * eta * 70.0) / (1.0 + 0.5 * (1.0 - eta));
    assert_relative_eq!(rep.producer_price, want, max_relative = 1e-10);
}

#[test]
fn extrapolative_roots_match_quadratic() {
    // p_t = −r[(1 + ρ) p_{t−1} − ρ p_{t−2}] → z² + r(1 + ρ) z − rρ = 0 (Goodwin 1947 form, solved by hand)
    for (b, rho) in [(0.5, 0.4), (0.9, -0.6), (1.5, 0.5)] {
        let r = b / 1.0;
        let reg = free(&linear(
            200.0,
            1.0,
            -10.0,
            b,
            &format!("rule = \"extrapolative\"\nweight = {rho}"),
        ));
        close(
            &reg.eigenvalues,
            &quadratic_roots(r * (1.0 + rho), -r * rho),
            1e-10,
        );
    }
}

#[test]
fn window_rules_match_quadratic() {
    // trailing mean of 2: p_t = −r (p_{t−1} + p_{t−2})/2 → z² + (r/2) z + r/2 (complex pair for r = 1.5)
    for b in [0.5, 1.5] {
        let reg = free(&linear(
            200.0,
            1.0,
            -10.0,
            b,
            "rule = \"trailing-mean\"\nwindow = 2",
        ));
        close(&reg.eigenvalues, &quadratic_roots(b / 2.0, b / 2.0), 1e-10);
    }
    // normal price over a 2-window: P^e = (1 − η) p1 + η (p1 + p2)/2 → z² + r(1 − η/2) z + r η/2
    let (b, eta) = (1.2, 0.5);
    let reg = free(&linear(
        200.0,
        1.0,
        -10.0,
        b,
        &format!("rule = \"normal-price\"\nweight = {eta}\nwindow = 2"),
    ));
    close(
        &reg.eigenvalues,
        &quadratic_roots(b * (1.0 - eta / 2.0), b * eta / 2.0),
        1e-10,
    );
    // trailing mean of 3 has the companion cubic z³ + (r/3)(z² + z + 1): check each root satisfies it
    let reg = free(&linear(
        200.0,
        1.0,
        -10.0,
        0.9,
        "rule = \"trailing-mean\"\nwindow = 3",
    ));
    assert_eq!(reg.eigenvalues.len(), 3);
    for e in &reg.eigenvalues {
        let z = num_complex_like(e.re, e.im);
        let v = poly3(z, 0.3);
        assert!(v.0.hypot(v.1) < 1e-12, "{e:?}");
    }
}

fn num_complex_like(re: f64, im: f64) -> (f64, f64) {
    (re, im)
}
fn mul(a: (f64, f64), b: (f64, f64)) -> (f64, f64) {
    (a.0 * b.0 - a.1 * b.1, a.0 * b.1 + a.1 * b.0)
}
/// z³ + c z² + c z + c
fn poly3(z: (f64, f64), c: f64) -> (f64, f64) {
    let z2 = mul(z, z);
    let z3 = mul(z2, z);
    (z3.0 + c * z2.0 + c * z.0 + c, z3.1 + c * z2.1 + c * z.1)
}

#[test]
fn verdicts_on_both_sides_of_the_published_bounds() {
    // Ezekiel (1938): stable iff b < d
    for (b, want) in [
        (0.99, Verdict::Stable),
        (1.0, Verdict::Neutral),
        (1.01, Verdict::Unstable),
    ] {
        let rep = analyse(
            &linear(200.0, 1.0, -10.0, b, "rule = \"naive\""),
            &PolicySpec::none(),
        )
        .unwrap();
        assert_eq!(rep.verdict, want, "b = {b}");
        assert_eq!(rep.conditions[0].holds, want == Verdict::Stable);
    }
    // Nerlove (1958): stable iff b/d < (2 − λ)/λ; λ = 0.5 → bound 3
    for (b, want) in [(2.9, Verdict::Stable), (3.1, Verdict::Unstable)] {
        let rep = analyse(
            &linear(400.0, 1.0, -10.0, b, "rule = \"adaptive\"\nweight = 0.5"),
            &PolicySpec::none(),
        )
        .unwrap();
        assert_eq!(rep.verdict, want, "b = {b}");
        assert_eq!(rep.conditions[0].holds, want == Verdict::Stable);
    }
    // Jury (1964) for z² + r(1 + ρ) z − rρ with ρ = 0.5: |a0| < 1 ⇔ r < 2; 1 − a1 + a0 > 0 ⇔ r < 1/2
    // (that one binds: the real root −… leaves through −1)
    for (b, want) in [(0.45, Verdict::Stable), (0.55, Verdict::Unstable)] {
        let rep = analyse(
            &linear(
                200.0,
                1.0,
                -10.0,
                b,
                "rule = \"extrapolative\"\nweight = 0.5",
            ),
            &PolicySpec::none(),
        )
        .unwrap();
        assert_eq!(rep.verdict, want, "b = {b}");
        assert_eq!(rep.conditions[0].holds, want == Verdict::Stable);
    }
    // ρ = −0.8: the complex pair leaves through |a0| = 0.8 r = 1 ⇔ r = 1.25
    for (b, want) in [(1.2, Verdict::Stable), (1.3, Verdict::Unstable)] {
        let rep = analyse(
            &linear(
                300.0,
                1.0,
                -10.0,
                b,
                "rule = \"extrapolative\"\nweight = -0.8",
            ),
            &PolicySpec::none(),
        )
        .unwrap();
        assert_eq!(rep.verdict, want, "b = {b}");
        assert_eq!(rep.conditions[0].holds, want == Verdict::Stable);
        assert!(rep.regimes[0].eigenvalues[0].im != 0.0);
    }
}

#[test]
fn constant_elasticity_naive_eigenvalue_is_elasticity_ratio() {
    // S'(P)/D'(P) = (e_s Q/P)/(e_d Q/P) = e_s/e_d = −e_s/|e_d| at the steady state (by hand)
    for (es, ed) in [(0.3, -0.5), (0.8, -0.4)] {
        let reg = free(&ce(es, ed, "rule = \"naive\""));
        assert_eq!(reg.jacobian, "numerical");
        close(
            &reg.eigenvalues,
            &[Eigenvalue {
                re: es / ed,
                im: 0.0,
            }],
            1e-9,
        );
    }
}

#[test]
fn numerical_jacobian_matches_analytic_on_linear_markets() {
    let rules = [
        "rule = \"naive\"",
        "rule = \"adaptive\"\nweight = 0.35",
        "rule = \"extrapolative\"\nweight = 0.4",
        "rule = \"trailing-mean\"\nwindow = 4",
        "rule = \"normal-price\"\nweight = 0.3\nnormal_price = 85.0",
        "rule = \"normal-price\"\nweight = 0.6\nwindow = 3",
    ];
    for rule in rules {
        let s = linear(200.0, 1.3, -10.0, 0.7, rule);
        let setup = Setup::new(&s, &PolicySpec::none());
        for clearing in [
            Clearing::Free { offtake: 0.0 },
            Clearing::Free { offtake: 5.0 },
            Clearing::Pinned(90.0),
        ] {
            let map = StateMap::new(&setup, clearing);
            let p = map.fixed_point(s.steady.price).unwrap();
            let a = map.analytic_jacobian(p);
            let n = map.numerical_jacobian(&map.rest_state(p));
            assert!((a - n).abs().max() < 1e-9, "{rule} {clearing:?}");
        }
    }
}

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
fn rational_reports_zero_without_hanging() {
    let rep = analyse(
        &linear(200.0, 1.0, -10.0, 1.5, "rule = \"rational\""),
        &PolicySpec::none(),
    )
    .unwrap();
    close(
        &rep.regimes[0].eigenvalues,
        &[Eigenvalue { re: 0.0, im: 0.0 }],
        0.0,
    );
    assert_eq!(rep.verdict, Verdict::Stable);
    assert!(rep.note.is_some());
}

// Market Q_d = 200 − P, Q_s = −10 + 0.5 P: P* = 140, Q* = 60.
#[test]
fn floor_above_steady_state_has_no_finite_stock() {
    let s = linear(200.0, 1.0, -10.0, 0.5, "rule = \"naive\"");
    let p = policy("[policy]\nname = \"f\"\n[floor]\nprice = 150.0\n");
    let rep = analyse(&s, &p).unwrap();
    assert!(!rep.steady_state_exists);
    assert!(rep.regimes[0].eigenvalues.is_empty());
    assert_eq!(rep.verdict, Verdict::Unstable);
    // stock grows by S(150) − D(150) = 65 − 50 = 15 a period (by hand)
    assert!(rep.regimes[0].note.as_ref().unwrap().contains("15.0000"));
}

#[test]
fn floor_above_with_losses_settles() {
    // with loss rate ℓ the stock settles at X/ℓ = 15/0.1 = 150 (purchases = losses)
    let s = linear(200.0, 1.0, -10.0, 0.5, "rule = \"adaptive\"\nweight = 0.4");
    let p = policy("[policy]\nname = \"f\"\n[floor]\nprice = 150.0\n[stock]\nloss_rate = 0.1\n");
    let rep = analyse(&s, &p).unwrap();
    assert!(rep.steady_state_exists);
    let r = &rep.regimes[0];
    assert_eq!(r.name, "floor binding (purchase)");
    // price pinned: adaptive deviations decay by 1 − λ (expectations anchored on the floor)
    close(&r.eigenvalues, &[Eigenvalue { re: 0.6, im: 0.0 }], 1e-12);
    assert_relative_eq!(r.stock_eigenvalue.unwrap(), 0.9, epsilon = 1e-15);
    assert!(r.note.as_ref().unwrap().contains("150.0000"));
}

#[test]
fn floor_below_steady_state_is_a_secondary_regime() {
    let s = linear(200.0, 1.0, -10.0, 0.5, "rule = \"naive\"");
    let p = policy("[policy]\nname = \"f\"\n[floor]\nprice = 120.0\n");
    let rep = analyse(&s, &p).unwrap();
    assert_eq!(rep.regimes[0].name, "free market");
    assert_relative_eq!(rep.spectral_radius, 0.5, epsilon = 1e-12);
    let floor = &rep.regimes[1];
    assert!(!floor.holds_steady_state);
    close(&floor.eigenvalues, &[Eigenvalue { re: 0.0, im: 0.0 }], 0.0);
}

#[test]
fn deficiency_payment_binding_anchors_expectations() {
    // producer price pinned at F = 150: naive deviations die at once; the market clears at
    // D⁻¹(S(150)) = 200 − 65 = 135 (by hand)
    let s = linear(200.0, 1.0, -10.0, 1.5, "rule = \"naive\"");
    let p = policy(
        "[policy]\nname = \"d\"\n[floor]\nprice = 150.0\ninstrument = \"deficiency-payment\"\n",
    );
    let rep = analyse(&s, &p).unwrap();
    // free market here: P* = 210/2.5 = 84 < 150, so the payment binds
    assert_eq!(rep.regimes[0].name, "deficiency payment binding");
    close(
        &rep.regimes[0].eigenvalues,
        &[Eigenvalue { re: 0.0, im: 0.0 }],
        0.0,
    );
    assert_relative_eq!(
        rep.steady_state.price,
        200.0 - (-10.0 + 1.5 * 150.0),
        epsilon = 1e-9
    );
    assert_eq!(rep.verdict, Verdict::Stable);
    // the free-market regime (unstable, b/d = 1.5) is listed as secondary
    let fm = rep
        .regimes
        .iter()
        .find(|r| r.name == "free market")
        .unwrap();
    assert_eq!(fm.verdict, Verdict::Unstable);
}

#[test]
fn stock_band_regimes() {
    let s = linear(200.0, 1.0, -10.0, 0.5, "rule = \"naive\"");
    // P* = 140 inside [130, 150]: idle holds, buying and selling regimes pinned at the edges
    let p = policy("[policy]\nname = \"b\"\n[stock]\nbuy_below = 130.0\nsell_above = 150.0\nloss_rate = 0.05\n");
    let rep = analyse(&s, &p).unwrap();
    let names: Vec<&str> = rep.regimes.iter().map(|r| r.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "stock idle (free market)",
            "stock buying at buy_below",
            "stock selling at sell_above"
        ]
    );
    assert_relative_eq!(rep.spectral_radius, 0.5, epsilon = 1e-12);
    assert_eq!(rep.regimes[1].at_price, 130.0);
    assert_eq!(rep.regimes[2].spectral_radius, 0.0);
    // target release: the stock settles at speed·T/(1 − (1 − ℓ)(1 − speed)) and buys its losses
    let p = policy(
        "[policy]\nname = \"t\"\n[stock]\nbuy_below = 100.0\nsell_above = 200.0\nloss_rate = 0.1\n\
         release = \"target\"\ntarget = 20.0\nspeed = 0.5\n",
    );
    let rep = analyse(&s, &p).unwrap();
    let settled = 0.5 * 20.0 / (1.0 - 0.9 * 0.5);
    // P = D⁻¹(S(P) − ℓ S*): 200 − P = −10 + 0.5 P − 0.1 S* (by hand)
    let want = (210.0 + 0.1 * settled) / 1.5;
    assert_relative_eq!(rep.producer_price, want, max_relative = 1e-10);
    assert_relative_eq!(
        rep.regimes[0].stock_eigenvalue.unwrap(),
        0.45,
        epsilon = 1e-15
    );
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
    assert_eq!(points[1].outcome.as_ref().unwrap().1, Verdict::Unstable); // 150 > P* = 140: stock grows
}

#[test]
fn steady_state_matches_the_engines_long_run() {
    // the regime's predicted steady state against the simulator after many seasons (two code paths
    // must agree; common practice, no source). Q_d = 200 − P, Q_s = −10 + 0.5 P, P* = 140.
    let cases = [
        // store fills, then the full store buys its losses: P = D⁻¹(S(150) − 0.05·100) (announced)
        ("rule = \"naive\"", "[policy]\nname = \"a\"\n[floor]\nprice = 150.0\n[stock]\ncapacity = 100.0\nloss_rate = 0.05\n"),
        // target reserve settles and buys its losses
        (
            "rule = \"adaptive\"\nweight = 0.5",
            "[policy]\nname = \"b\"\n[stock]\nbuy_below = 100.0\nsell_above = 200.0\nloss_rate = 0.1\nrelease = \"target\"\ntarget = 20.0\nspeed = 0.5\n",
        ),
        // restocking stops at the band's middle 140.5 < 141.2: price pinned at the middle
        (
            "rule = \"naive\"",
            "[policy]\nname = \"b2\"\n[stock]\nbuy_below = 100.0\nsell_above = 181.0\nloss_rate = 0.1\nrelease = \"target\"\ntarget = 20.0\nspeed = 0.5\n",
        ),
        // free steady state 140 at the middle of [100, 180]: the reserve cannot restock
        (
            "rule = \"naive\"",
            "[policy]\nname = \"b3\"\n[stock]\nbuy_below = 100.0\nsell_above = 180.0\nloss_rate = 0.1\nrelease = \"target\"\ntarget = 20.0\nspeed = 0.5\n",
        ),
        // deficiency payment binding: market price D⁻¹(S(150)) = 135
        ("rule = \"naive\"", "[policy]\nname = \"c\"\n[floor]\nprice = 150.0\ninstrument = \"deficiency-payment\"\n"),
        // fixed normal price moves the steady state
        ("rule = \"normal-price\"\nweight = 0.4\nnormal_price = 120.0", "[policy]\nname = \"d\"\n"),
    ];
    for (rule, pol) in cases {
        let s = linear(200.0, 1.0, -10.0, 0.5, rule);
        let p = policy(pol);
        let rep = analyse(&s, &p).unwrap();
        let recs = furrow::engine::Model::new(&s, &p)
            .run(600, |_| furrow::engine::PeriodShock::NONE)
            .unwrap();
        let last = recs.last().unwrap();
        assert_relative_eq!(rep.steady_state.price, last.price, max_relative = 1e-9);
        assert_relative_eq!(rep.producer_price, last.producer_price, max_relative = 1e-9);
        assert_relative_eq!(rep.steady_state.quantity, last.harvest, max_relative = 1e-9);
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
fn verdicts_on_both_sides_of_the_window_and_normal_price_bounds() {
    // trailing mean of 2: z² + (r/2) z + r/2; Jury's |a0| < 1 gives r < 2 (Jury 1964)
    for (b, want) in [(1.9, Verdict::Stable), (2.1, Verdict::Unstable)] {
        let rep = analyse(
            &linear(400.0, 1.0, -10.0, b, "rule = \"trailing-mean\"\nwindow = 2"),
            &PolicySpec::none(),
        )
        .unwrap();
        assert_eq!(rep.verdict, want, "b = {b}");
        assert_eq!(rep.conditions[0].holds, want == Verdict::Stable);
    }
    // fixed normal price, η = 0.5: root −r/2, stable iff r < 2 (the rule's own root)
    for (b, want) in [(1.9, Verdict::Stable), (2.1, Verdict::Unstable)] {
        let rep = analyse(
            &linear(
                400.0,
                1.0,
                -10.0,
                b,
                "rule = \"normal-price\"\nweight = 0.5\nnormal_price = 130.0",
            ),
            &PolicySpec::none(),
        )
        .unwrap();
        assert_eq!(rep.verdict, want, "b = {b}");
        assert_eq!(rep.conditions[0].holds, want == Verdict::Stable);
    }
}

//! Eigenvalues of each rule checked against its characteristic polynomial solved by hand, and
//! verdicts on both sides of each published bound (sources beside each check).

mod stability_common;

use approx::assert_relative_eq;
use furrow::policies::PolicySpec;
use furrow::stability::{analyse, Eigenvalue, RegimePrice, Setup, StateMap, Verdict};
use stability_common::*;

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
        let z = (e.re, e.im);
        let v = poly3(z, 0.3);
        assert!(v.0.hypot(v.1) < 1e-12, "{e:?}");
    }
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
        assert_eq!(reg.jacobian, "analytic");
        close(
            &reg.eigenvalues,
            &[Eigenvalue {
                re: es / ed,
                im: 0.0,
            }],
            1e-12,
        );
    }
}

#[test]
fn analytic_jacobian_matches_numerical_on_constant_elasticity_markets() {
    // the closed-form derivative e·Q/P of each curve against central differences of the real map
    // (two code paths must agree; common practice, no source)
    let rules = [
        "rule = \"naive\"",
        "rule = \"adaptive\"\nweight = 0.35",
        "rule = \"extrapolative\"\nweight = 0.4",
        "rule = \"trailing-mean\"\nwindow = 3",
    ];
    for rule in rules {
        let s = ce(0.4, -0.7, rule);
        let setup = Setup::new(&s, &PolicySpec::none());
        for clearing in [
            RegimePrice::Free { offtake: 0.0 },
            RegimePrice::Free { offtake: 3.0 },
        ] {
            let map = StateMap::new(&setup, clearing);
            let p = map.fixed_point(s.steady.price).unwrap();
            let a = map.analytic_jacobian(p);
            let n = map.numerical_jacobian(&map.rest_state(p));
            assert!((a - n).abs().max() < 1e-8, "{rule} {clearing:?}");
        }
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
            RegimePrice::Free { offtake: 0.0 },
            RegimePrice::Free { offtake: 5.0 },
            RegimePrice::Pinned(90.0),
        ] {
            let map = StateMap::new(&setup, clearing);
            let p = map.fixed_point(s.steady.price).unwrap();
            let a = map.analytic_jacobian(p);
            let n = map.numerical_jacobian(&map.rest_state(p));
            assert!((a - n).abs().max() < 1e-9, "{rule} {clearing:?}");
        }
    }
}

// Market Q_d = 200 − P, Q_s = −10 + 0.5 P: P* = 140, Q* = 60.

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

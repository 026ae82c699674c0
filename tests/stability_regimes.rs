//! Regimes of the policies: which holds the steady state, what its eigenvalues are, and the
//! predicted steady state against the simulator's long run.

mod stability_common;

use approx::assert_relative_eq;
use furrow::policies::PolicySpec;
use furrow::stability::{analyse, Eigenvalue, Verdict};
use stability_common::*;

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

#[test]
fn floor_above_steady_state_has_no_finite_stock() {
    let s = linear(200.0, 1.0, -10.0, 0.5, "rule = \"naive\"");
    let p = policy("[policy]\nname = \"f\"\n[floor]\nprice = 150.0\n");
    let rep = analyse(&s, &p).unwrap();
    assert!(!rep.steady_state_exists);
    assert!(rep.regimes[0].eigenvalues.is_empty());
    // the stock's unit root: neutral, as the documented band says for ρ = 1 (issue: it read
    // "spectral_radius 1, unstable" in compare and sweep)
    assert_eq!(rep.verdict, Verdict::Neutral);
    assert_eq!(rep.spectral_radius, 1.0);
    assert_eq!(rep.regimes[0].half_life, None);
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
    // D⁻¹(S(150)) = 200 − (−10 + 1.1·150) = 45 (by hand; with b = 1.5 it would be −15, a steady
    // state that does not exist and was once reported as stable)
    let s = linear(200.0, 1.0, -10.0, 1.1, "rule = \"naive\"");
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
        200.0 - (-10.0 + 1.1 * 150.0),
        epsilon = 1e-9
    );
    assert_eq!(rep.verdict, Verdict::Stable);
    // the free-market regime (unstable, b/d = 1.1) is listed as secondary
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
fn pinned_price_with_three_lags_gives_exact_zeros() {
    // the nilpotent 3 × 3 case that hangs an unlimited Schur iteration (NOTES.md): a deficiency
    // payment pins the producer price, so a trailing mean of 3 forgets a deviation in 3 seasons and
    // every eigenvalue is 0 (a nilpotent shift; linear algebra)
    let s = linear(
        200.0,
        1.0,
        -10.0,
        1.1,
        "rule = \"trailing-mean\"\nwindow = 3",
    );
    let p = policy(
        "[policy]\nname = \"d\"\n[floor]\nprice = 150.0\ninstrument = \"deficiency-payment\"\n",
    );
    let rep = analyse(&s, &p).unwrap();
    let r = &rep.regimes[0];
    assert_eq!(r.name, "deficiency payment binding");
    assert_eq!(r.eigenvalues.len(), 3);
    assert!(r.eigenvalues.iter().all(|e| e.re == 0.0 && e.im == 0.0));
    assert!(!r.oscillating);
    assert_eq!(r.half_life, Some(0.0));
}

//! Knife edges of the stability analysis: markets exactly on a published boundary, unit roots,
//! steady states that do not exist, errors that name the right file.

mod stability_common;

use furrow::policies::file::policy_from_str;
use furrow::policies::PolicySpec;
use furrow::scenario::market_from_str;
use furrow::stability::{analyse, Verdict};
use stability_common::*;

/// A constant-elasticity market with supply elasticity `es` and demand elasticity `ed`, calibrated
/// at different points so that the steady state is found by the root finder, not given.
fn ce_at(es: f64, ed: f64) -> furrow::scenario::Scenario {
    let text = format!(
        "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = {ed}\n\
         [supply]\nform = \"constant-elasticity\"\nat_price = 190.0\nat_quantity = 470.0\nelasticity = {es}\n\
         [expectations]\nrule = \"naive\"\n"
    );
    market_from_str("ce.toml", &text).unwrap()
}

#[test]
fn iso_elastic_cobweb_with_unit_elasticity_ratio_is_neutral_at_every_scale() {
    // Ezekiel (1938): the naive cobweb's eigenvalue is −(supply slope)/(demand slope); for
    // iso-elastic curves at the steady state that is e_s/e_d, so |e_s/e_d| = 1 is neutral whatever
    // the elasticities. Elasticities from 1e-3 to 10 (the numerical Jacobian flipped the verdict
    // below about 0.01).
    let mut e = 1e-3_f64;
    while e <= 10.0 + 1e-12 {
        let s = ce_at(e, -e);
        let rep = analyse(&s, &PolicySpec::none()).unwrap();
        assert_eq!(
            rep.verdict,
            Verdict::Neutral,
            "e = {e}: ρ = {}",
            rep.spectral_radius
        );
        assert!(
            (rep.spectral_radius - 1.0).abs() < 1e-10,
            "e = {e}: ρ − 1 = {:e}, P* = {}",
            rep.spectral_radius - 1.0,
            rep.steady_state.price
        );
        let r = &rep.regimes[0];
        assert_eq!(r.half_life, None, "e = {e}");
        assert_eq!(r.period, Some(2.0), "e = {e}");
        // the published condition b < d sits on its boundary (b = d at the steady state)
        assert_eq!(rep.conditions[0].status(), "on the boundary", "e = {e}");
        e *= 10f64.powf(0.25);
    }
    // either side of the boundary is decided, also at small elasticities
    for e in [1e-3, 0.01, 1.0] {
        let stable = analyse(&ce_at(0.9 * e, -e), &PolicySpec::none()).unwrap();
        assert_eq!(stable.verdict, Verdict::Stable, "e = {e}");
        let unstable = analyse(&ce_at(1.1 * e, -e), &PolicySpec::none()).unwrap();
        assert_eq!(unstable.verdict, Verdict::Unstable, "e = {e}");
    }
}

#[test]
fn adaptive_market_on_nerloves_boundary_is_neutral_with_no_half_life() {
    // Nerlove (1958): stable iff b/d < (2 − λ)/λ; at λ = 0.5 the bound is 3. b = 0.3, d = 0.1 puts
    // the market on it (0.3/0.1 rounds to 2.9999999999999996); ρ = |1 − λ(1 + b/d)| = 1.
    let s = linear(100.0, 0.1, -10.0, 0.3, "rule = \"adaptive\"\nweight = 0.5");
    let rep = analyse(&s, &PolicySpec::none()).unwrap();
    assert_eq!(rep.verdict, Verdict::Neutral);
    let c = &rep.conditions[0];
    assert!(!c.holds, "{c:?}");
    assert_eq!(c.status(), "on the boundary");
    assert_eq!(rep.regimes[0].half_life, None);
    // just inside and just outside the bound
    let inside = analyse(
        &linear(100.0, 0.1, -10.0, 0.29, "rule = \"adaptive\"\nweight = 0.5"),
        &PolicySpec::none(),
    )
    .unwrap();
    assert_eq!(inside.verdict, Verdict::Stable);
    assert_eq!(inside.conditions[0].status(), "holds");
    assert!(inside.regimes[0].half_life.is_some());
}

#[test]
fn naive_linear_market_with_equal_slopes_is_on_the_boundary() {
    // Ezekiel (1938): b = d gives the eigenvalue −1, a cycle of constant amplitude
    let rep = analyse(
        &linear(200.0, 0.7, -10.0, 0.7, "rule = \"naive\""),
        &PolicySpec::none(),
    )
    .unwrap();
    assert_eq!(rep.verdict, Verdict::Neutral);
    assert_eq!(rep.conditions[0].status(), "on the boundary");
    assert_eq!(rep.regimes[0].half_life, None);
}

#[test]
fn deficiency_floor_beyond_what_demand_absorbs_has_no_steady_state() {
    // with the producer price pinned at F = 400, farmers grow S(400) = −10 + 0.5·400 = 190 > 150,
    // more than demand Q = 150 − 0.5 P takes at any positive price: no steady state (never "stable")
    let s = linear(150.0, 0.5, -10.0, 0.5, "rule = \"naive\"");
    let p = policy_from_str(
        "pay.toml",
        "[policy]\nname = \"pay\"\n[floor]\nprice = 400.0\ninstrument = \"deficiency-payment\"\n",
    )
    .unwrap();
    let err = analyse(&s, &p).unwrap_err();
    let msg = err.to_string();
    assert!(msg.contains("no steady state"), "{msg}");
    // the policy created the regime: the policy file is blamed
    assert_eq!(err.blame(&s, &p), "pay.toml");
}

#[test]
fn a_harvest_that_overflows_at_the_defended_price_is_no_steady_state() {
    // supply calibrated at 100 t at the price 1e-300 with elasticity 1.2: at the band's buying edge
    // 50 farmers would grow 100·(50/1e-300)^1.2 ≈ 1e363 t, beyond any double: the regime has no
    // steady state (it once gave a note "buys inf kt … after about 0 periods" and a verdict)
    let s = market_from_str(
        "huge.toml",
        "[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\nat_quantity = 100.0\nelasticity = -0.5\n\
         [supply]\nform = \"constant-elasticity\"\nat_price = 1e-300\nat_quantity = 100.0\nelasticity = 1.2\n",
    )
    .unwrap();
    let p = policy_from_str(
        "band.toml",
        "[policy]\nname = \"band\"\n[stock]\nbuy_below = 50.0\nsell_above = 80.0\ncapacity = 10.0\nloss_rate = 0.01\n",
    )
    .unwrap();
    let err = analyse(&s, &p).unwrap_err();
    let msg = err.to_string();
    assert!(
        msg.contains("no steady state") && msg.contains("50"),
        "{msg}"
    );
    assert!(!msg.contains("inf"), "{msg}");
    assert_eq!(err.blame(&s, &p), "band.toml");
}

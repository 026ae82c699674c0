use super::statespace::{layout, StateLayout};
use super::*;
use crate::curves::Curve;
use crate::scenario::ExpectationSpec;

fn setup(rule: ExpectationSpec) -> Setup {
    Setup::with_rules(
        Curve::ConstantElasticity {
            at_price: 100.0,
            at_quantity: 50.0,
            elasticity: -0.4,
        },
        Curve::ConstantElasticity {
            at_price: 90.0,
            at_quantity: 45.0,
            elasticity: 0.6,
        },
        rule,
        Vec::new(),
    )
}

#[test]
fn rules_at_rest_expect_the_resting_price() {
    // a rule whose past prices are all p expects p (weights sum to one), except a fixed normal price
    // (definition of each rule, INTERFACE.md)
    let rules = [
        "rule = \"naive\"",
        "rule = \"adaptive\"\nweight = 0.3",
        "rule = \"extrapolative\"\nweight = -0.4",
        "rule = \"trailing-mean\"\nwindow = 5",
        "rule = \"normal-price\"\nweight = 0.5\nwindow = 3",
    ];
    for text in rules {
        let r = ExpectationSpec::parse(text).unwrap();
        let s = setup(r);
        let map = StateMap::new(&s, RegimePrice::Free { offtake: 0.0 });
        assert!(
            (map.expectation_at_rest(123.0) - 123.0).abs() < 1e-12,
            "{r:?}"
        );
        if let StateLayout::Lags(w) = layout(&r) {
            assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-15, "{r:?}");
        }
    }
}

#[test]
fn clearing_slope_matches_finite_difference() {
    // dP/dP^e = S'(P^e)/D'(P) (chain rule through the inverse demand curve)
    let s = setup(ExpectationSpec::parse("rule = \"naive\"").unwrap());
    let c = RegimePrice::Free { offtake: 3.0 };
    let pe = 95.0;
    let h = 1e-5;
    let fd = (c.producer_price(&s, pe + h) - c.producer_price(&s, pe - h)) / (2.0 * h);
    assert!((c.slope(&s, pe) - fd).abs() < 1e-8);
    assert_eq!(RegimePrice::Pinned(80.0).slope(&s, pe), 0.0);
}

//! One expectation method for every solve: a public stock that never trades is the market without
//! a policy, so the two-state solve (private stock × public stock) must reproduce the one-state
//! equilibrium and every `compare` indicator. Both solves integrate next season's shock by the same
//! breakpoint-splitting quadrature; what is left is the discretisation error of each grid, which
//! must be far below 1e-6.
//!
//! Source: an identity of the model (a stock that never trades changes nothing: market clearing
//! z + g = D(P) + x + G with G = g reduces to the one-state clearing z = D(P) + x), no outside
//! table needed.

use furrow::compare::{compare, Kind, Value};
use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{apply_override, market_from_table, parse_toml, Scenario};
use furrow::stochastic::NoProgress;
use furrow::storage::{self, Equilibrium, SolveOptions};

const EXAMPLE: &str = "examples/veldmark_storers.toml";

fn example(linear: bool) -> Scenario {
    let text = std::fs::read_to_string(EXAMPLE).unwrap();
    let mut table = parse_toml(EXAMPLE, &text).unwrap();
    if linear {
        apply_override(
            &mut table,
            "demand.form",
            toml::Value::String("linear".into()),
        )
        .unwrap();
    }
    market_from_table(EXAMPLE, table).unwrap()
}

/// A band so wide that the agency never trades: it buys only below 1 crown and sells only above
/// 100 000, starts empty and loses nothing.
fn never_trading() -> PolicySpec {
    let text = "[policy]\nname = \"idle band\"\n[stock]\nbuy_below = 1.0\nsell_above = 100000.0\n\
                capacity = 60.0\ninitial = 0.0\nstorage_cost = 0.0\nloss_rate = 0.0\nrelease = \"band\"\n";
    policy_from_table("idle.toml", parse_toml("idle.toml", text).unwrap()).unwrap()
}

fn check_market(s: &Scenario) {
    let o = SolveOptions::default();
    let base = storage::solve(s, &PolicySpec::none(), &o).unwrap();
    let idle = storage::solve(s, &never_trading(), &o).unwrap();
    let (Equilibrium::Private(p), Equilibrium::Public(q)) = (&base, &idle) else {
        panic!("expected a one-state and a two-state equilibrium");
    };
    // the stockout price at every public stock equals the one-state stockout price
    let p0 = p.stockout_price();
    for g in [0.0, 15.0, 30.0, 60.0] {
        let q0 = q.stockout_price(g);
        assert!((q0 - p0).abs() < 1e-6 * p0, "g = {g}: {q0} against {p0}");
    }
    // prices and private stocks agree over the range paths reach
    let (lo, hi) = p.range();
    for i in 0..=400 {
        let z = lo + (hi - lo) * i as f64 / 400.0;
        let a = p.rule.price(&p.market, z);
        let c = q.clear(z, 0.0);
        assert!(
            (c.price - a).abs() < 1e-6 * a,
            "z = {z}: {} against {a}",
            c.price
        );
        let x = p.rule.stock(&p.market, z);
        assert!(
            (c.private_stock - x).abs() < 1e-6 * p.market.q_star,
            "z = {z}: stock {} against {x}",
            c.private_stock
        );
        assert!(c.public_stock == 0.0, "the idle band traded at z = {z}");
    }
    // every compare indicator agrees with the market left alone to 1e-6 relative: prices relative
    // to the mean price, quantities to the mean harvest, money to the market's value over the run,
    // shares absolutely
    let mut s = s.clone();
    s.run.replications = 40;
    let r = compare(&s, &[never_trading()], &NoProgress).unwrap();
    let num = |v: &Value| match v {
        Value::Number(x) => Some(*x),
        _ => None,
    };
    let find = |key: &str| {
        r.baseline
            .indicators
            .iter()
            .find(|i| i.key == key)
            .and_then(|i| num(&i.value))
            .unwrap()
    };
    let (price, harvest) = (find("mean_price"), find("mean_harvest"));
    let money = price * harvest * s.run.periods as f64;
    let mut checked = 0;
    for (b, i) in r.baseline.indicators.iter().zip(&r.policies[0].indicators) {
        assert_eq!(b.key, i.key);
        let scale = match i.kind {
            Kind::Price => price,
            Kind::Quantity => harvest,
            Kind::Money => money,
            Kind::Share | Kind::Number | Kind::Text => 1.0,
        };
        match (num(&b.value), num(&i.value)) {
            (Some(x), Some(y)) => {
                assert!(
                    (x - y).abs() <= 1e-6 * scale,
                    "{}: {y} against the market left alone {x}",
                    i.key
                );
                checked += 1;
            }
            // a change against the baseline is reported only for the policy
            (None, Some(y)) if i.key.contains("change") => {
                assert!(y.abs() <= 1e-6 * scale, "{}: {y}", i.key);
                checked += 1;
            }
            (None, Some(_)) if i.key == "public_stock_mean" || i.key == "crowding_out" => {}
            // a share only a policy with a band or a budget has (the baseline reports none): an
            // idle band never fails, never binds a budget
            (None, Some(y)) if i.kind == Kind::Share => {
                assert!(y == 0.0, "{}: {y}", i.key);
                checked += 1;
            }
            (x, y) => assert!(
                x.is_none() && y.is_none() || b.value == i.value,
                "{}: {:?} against {:?}",
                i.key,
                i.value,
                b.value
            ),
        }
    }
    assert!(checked > 10, "only {checked} indicators compared");
}

#[test]
fn a_never_trading_band_reproduces_the_demo_without_policy() {
    check_market(&example(false));
}

#[test]
fn a_never_trading_band_reproduces_a_linear_market_without_policy() {
    check_market(&example(true));
}

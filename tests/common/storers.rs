//! The storers demo with other farmers, shared by the tests of storers beside backward-looking
//! farmers (one state and two).

use furrow::engine::{Model, PeriodRecord};
use furrow::policies::PolicySpec;
use furrow::scenario::{apply_override, market_from_table, parse_toml, Scenario};
use furrow::stochastic::ShockStream;
use furrow::storage::{self, Equilibrium, SolveOptions, SolvedStorage};

pub const EXAMPLE: &str = "examples/veldmark_storers.toml";

/// The storers demo with `rule` (an `[expectations]` body) and `overrides`.
pub fn demo(rule: &str, overrides: &[(&str, toml::Value)]) -> Scenario {
    let text = std::fs::read_to_string(EXAMPLE)
        .unwrap()
        .replace("rule = \"rational\"", rule);
    let mut table = parse_toml(EXAMPLE, &text).unwrap();
    for (k, v) in overrides {
        apply_override(&mut table, k, v.clone()).unwrap();
    }
    market_from_table(EXAMPLE, table).unwrap()
}

/// The private-storers equilibrium of a market without a public stock.
pub fn private(s: &Scenario) -> storage::PrivateSolution {
    match storage::solve(s, &PolicySpec::none(), &SolveOptions::default()).unwrap() {
        Equilibrium::Private(p) => p,
        Equilibrium::Public(_) => panic!("no public stock expected"),
    }
}

/// `periods` seasons of the market with storers (`solved`, replication 0) and of the storer-free
/// period engine on the same shocks (replication 0's stream), in that order.
pub fn with_and_without_storers(
    s: &Scenario,
    solved: &SolvedStorage,
    periods: usize,
) -> (Vec<PeriodRecord>, Vec<PeriodRecord>) {
    let stored = solved.records(0, periods);
    let mut stream = ShockStream::new(&s.shocks, s.run.seed, 0);
    let engine = Model::new(s, &PolicySpec::none())
        .run(periods, |_| stream.next_shock())
        .unwrap();
    (stored, engine)
}

/// The population standard deviation of the prices of `records` after the first `skip` seasons.
pub fn price_sd(records: &[PeriodRecord], skip: usize) -> f64 {
    let p: Vec<f64> = records.iter().skip(skip).map(|r| r.price).collect();
    let n = p.len() as f64;
    let mean = p.iter().sum::<f64>() / n;
    (p.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n).sqrt()
}

/// Nobody stores when k exceeds any attainable discounted price (Gustafson 1958's no-carryover
/// case): the market is then the period engine's cobweb under the same farmers' rule, season by
/// season on the same shocks (an identity of the model). The engine forms the expectation with
/// the rule's own code; the storage path with what the storage model asked of it. Checked for
/// each rule (an `[expectations]` body) to `tol` relative, over 60 seasons.
pub fn assert_prohibitive_cost_gives_the_engine(rules: &[&str], tol: f64) {
    for rule in rules {
        let s = demo(
            rule,
            &[
                ("storers.storage_cost", toml::Value::Float(1e5)),
                ("run.initial_price", toml::Value::Float(190.0)),
            ],
        );
        let periods = 60;
        let solved = SolvedStorage::new(&s, &PolicySpec::none()).unwrap();
        let (stored, engine) = with_and_without_storers(&s, &solved, periods);
        assert_eq!(stored.len(), engine.len());
        for (a, b) in stored.iter().zip(&engine) {
            for (name, x, y) in [
                ("expected_price", a.expected_price, b.expected_price),
                ("planted", a.planted, b.planted),
                ("harvest", a.harvest, b.harvest),
                ("price", a.price, b.price),
                ("consumption", a.consumption, b.consumption),
            ] {
                assert!(
                    (x - y).abs() <= tol * y.abs().max(1.0),
                    "{rule}: period {}: {name} {x} against {y}",
                    a.period
                );
            }
        }
        let path = solved.path(0, periods);
        assert!(path.iter().all(|r| r.private_stock == 0.0), "{rule}");
    }
}

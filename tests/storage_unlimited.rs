//! A public store without a capacity inside the storage equilibrium: solved on a bounded grid whose
//! bound never binds, or refused when the stock has no stationary level.

use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{load_market, parse_toml};
use furrow::storage::{self, simulate, Equilibrium, SolveOptions, StorageError};

const EXAMPLE: &str = "examples/veldmark_storers.toml";

fn policy(text: &str) -> PolicySpec {
    policy_from_table("p.toml", parse_toml("p.toml", text).unwrap()).unwrap()
}

/// A band that buys rarely (175) and loses 5 % of its stock a season, with `capacity` or none.
fn band(capacity: Option<f64>) -> PolicySpec {
    let cap = capacity.map_or(String::new(), |c| format!("capacity = {c}\n"));
    policy(&format!(
        "[policy]\nname = \"band\"\n[stock]\nbuy_below = 175.0\nsell_above = 230.0\n{cap}\
         initial = 0.0\nstorage_cost = 6.0\nloss_rate = 0.05\nrelease = \"band\"\n"
    ))
}

fn solved_capacity(eq: &Equilibrium) -> f64 {
    match eq {
        Equilibrium::Public(p) => p.band.capacity,
        Equilibrium::Private(_) => panic!("a public stock was expected"),
    }
}

#[test]
fn an_unlimited_store_is_solved_on_a_bound_it_never_reaches_and_matches_a_slack_capacity() {
    // Model property (common practice, no source): a capacity constraint that never binds does not
    // change the equilibrium, so an unlimited store and one with room to spare give the same
    // long-run means on the same shocks, up to the discretisation of the public-stock grid.
    let s = load_market(EXAMPLE).unwrap();
    let o = SolveOptions::default();
    let unlimited = storage::solve(&s, &band(None), &o).unwrap();
    let bound = solved_capacity(&unlimited);
    assert!(bound.is_finite() && bound > 0.0);
    let path = simulate(&unlimited, &s.shocks, s.run.seed, 0, 0.0, 10_200);
    let peak = path.iter().map(|r| r.public_stock).fold(0.0, f64::max);
    assert!(peak > 0.0, "the store should trade");
    assert!(peak < 0.9 * bound, "peak {peak} against the bound {bound}");
    // a different replication also stays clear of the bound
    let other = simulate(&unlimited, &s.shocks, s.run.seed, 7, 0.0, 10_200);
    assert!(other.iter().all(|r| r.public_stock < bound));

    let with = storage::storage_indicators(&s, &band(None)).unwrap();
    let slack = storage::storage_indicators(&s, &band(Some(1.3 * bound))).unwrap();
    let rel = |a: f64, b: f64| (a - b).abs() / b.abs().max(1e-9);
    assert!(
        rel(with.public_stock_mean, slack.public_stock_mean) < 0.02,
        "{} vs {}",
        with.public_stock_mean,
        slack.public_stock_mean
    );
    assert!(rel(with.private_stock_mean, slack.private_stock_mean) < 0.02);
    assert!(rel(with.mean_price, slack.mean_price) < 1e-3);
    let c = with.crowding_out.unwrap();
    assert!(c > 0.0 && c < 1.0, "crowding-out {c}");
}

#[test]
fn a_purchase_floor_without_a_store_limit_has_no_stationary_stock_and_is_refused() {
    // A store that never sells and loses nothing only grows: its stock is nondecreasing and rises
    // with positive probability every season the floor binds, so it is unbounded (elementary
    // probability: a nondecreasing sum of i.i.d. nonnegative, not almost surely zero, terms
    // diverges). furrow must refuse it, naming the key.
    let s = load_market(EXAMPLE).unwrap();
    let floor =
        policy("[policy]\nname = \"floor\"\n[floor]\nprice = 200.0\ninstrument = \"purchase\"\n");
    match storage::solve(&s, &floor, &SolveOptions::default()) {
        Err(StorageError::UnsupportedPolicy { key, reason, .. }) => {
            assert_eq!(key, "stock.capacity");
            assert!(reason.contains("unlimited"), "{reason}");
        }
        other => panic!("expected a refusal, got {:?}", other.map(|_| ())),
    }
}

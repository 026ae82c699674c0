//! Private storers beside farmers who look back: farmers plant on a rule of the last producer
//! price (naive, normal-price with a fixed normal price, trailing mean over one season) while
//! storers arbitrage with rational expectations. The equilibrium keeps one state (availability):
//! next season's planting is the farmers' rule of today's price, which the storers know. Farmers
//! with one more state (adaptive, learning, two-lag rules) make it two states: availability and
//! the farmers' memory (tests/storage_farmers_memory.rs).

mod common;

use common::storers::{demo, price_sd, private, with_and_without_storers, EXAMPLE};
use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml};
use furrow::storage::{self, SolveOptions, SolvedStorage, StorageError};

const BACKWARD: [&str; 3] = [
    "rule = \"naive\"",
    "rule = \"normal-price\"\nweight = 0.3\nnormal_price = 205.0",
    "rule = \"trailing-mean\"\nwindow = 1",
];

#[test]
fn with_prohibitive_storage_cost_the_storers_market_is_the_storer_free_engine() {
    common::storers::assert_prohibitive_cost_gives_the_engine(&BACKWARD, 1e-12);
}

#[test]
fn without_shocks_the_naive_stockout_price_is_the_closed_form() {
    // Derived in the test from the model's equations: with no shocks, x = 0 carried out and naive
    // farmers planting on today's price p, next availability is S(p) and, below the kink, next price
    // D⁻¹(S(p)); the arbitrage condition p = β·D⁻¹(S(p)) − k with linear curves (Q = a + bP,
    // Q = c + dP) gives p = (β(c − a)/b − k)/(1 − β·d/b). With a rational rule the same condition
    // would give β·P* − k (Wright and Williams 1982); naive farmers plant less after a low price,
    // so storers expect a higher price and the threshold is higher.
    let s = demo(
        "rule = \"naive\"",
        &[
            ("demand.form", toml::Value::String("linear".into())),
            ("shocks.yield_cv", toml::Value::Float(0.0)),
        ],
    );
    let (b, d) = (-0.25 * 480.0 / 210.0, 0.2 * 480.0 / 210.0);
    let (a, c) = (480.0 - b * 210.0, 480.0 - d * 210.0);
    let (beta, k) = (0.98 / 1.05, 4.0);
    let closed = (beta * (c - a) / b - k) / (1.0 - beta * d / b);
    let sol = private(&s);
    assert!(
        (sol.stockout_price() - closed).abs() < 1e-9 * closed,
        "{} against {closed}",
        sol.stockout_price()
    );
    assert!(closed > beta * 210.0 - k);
    // at the steady state nobody stores and farmers plant Q*
    let row = sol.row(480.0);
    assert!((row.price - 210.0).abs() < 1e-9);
    assert_eq!(row.private_stock, 0.0);
    assert!((row.planted - 480.0).abs() < 1e-9);
}

#[test]
fn storers_beside_naive_farmers_solve_accurately_and_steady_the_cobweb() {
    // Accuracy: the Euler residual (Judd 1992) over the states the paths reach below 1e-6. Storage
    // smooths prices: the price sd with storers is below the storer-free cobweb's on the same shocks
    // (Wright and Williams 1991, qualitatively; Miranda and Helmberger 1988), and storers hold stock
    // in some seasons but not all (the stockout kink is reached).
    let s = demo("rule = \"naive\"", &[]);
    let sol = private(&s);
    assert!(sol.residual < 1e-6, "{}", sol.residual);
    let periods = 4000;
    let solved = SolvedStorage::new(&s, &PolicySpec::none()).unwrap();
    let (stored, engine) = with_and_without_storers(&s, &solved, periods);
    let (with, without) = (price_sd(&stored, 100), price_sd(&engine, 100));
    assert!(with < 0.8 * without, "{with} against {without}");
    let path = solved.path(0, periods);
    let holding = path.iter().filter(|r| r.private_stock > 0.0).count();
    assert!(holding > periods / 10 && holding < periods, "{holding}");
    // farmers plant on the last price: P^e_t = P_{t−1} in every season after the first
    for w in stored.windows(2) {
        assert!((w[1].expected_price - w[0].producer_price).abs() < 1e-12 * w[0].price);
    }
    assert_eq!(stored[0].expected_price, s.run.initial_price);
}

#[test]
fn rules_with_more_state_and_what_the_model_does_not_cover_are_refused_by_name() {
    // a trailing mean over three seasons carries two lagged prices: not covered (yet), refused
    // naming the file, the key and the rule
    let text = std::fs::read_to_string(EXAMPLE).unwrap().replace(
        "rule = \"rational\"",
        "rule = \"trailing-mean\"\nwindow = 3",
    );
    let err = parse_toml(EXAMPLE, &text)
        .and_then(|t| market_from_table(EXAMPLE, t))
        .unwrap_err()
        .to_string();
    assert!(err.contains(EXAMPLE), "{err}");
    assert!(err.contains("expectations.rule"), "{err}");
    assert!(err.contains("\"trailing-mean\""), "{err}");
    assert!(err.contains("\"naive\""), "{err}");
    assert!(err.contains("\"adaptive\""), "{err}");
    // planting on revenue beside naive farmers
    let text = std::fs::read_to_string(EXAMPLE)
        .unwrap()
        .replace("rule = \"rational\"", "rule = \"naive\"")
        .replace("[supply]\n", "[supply]\nplants_on = \"revenue\"\n");
    let err = parse_toml(EXAMPLE, &text)
        .and_then(|t| market_from_table(EXAMPLE, t))
        .unwrap_err()
        .to_string();
    assert!(err.contains("supply.plants_on"), "{err}");
    // a public stock beside naive farmers
    let band = "[policy]\nname = \"band\"\n[stock]\nbuy_below = 190.0\nsell_above = 235.0\n\
                capacity = 60.0\ninitial = 0.0\nstorage_cost = 6.0\nloss_rate = 0.02\n";
    let p = policy_from_table("band.toml", parse_toml("band.toml", band).unwrap()).unwrap();
    let err =
        storage::solve(&demo("rule = \"naive\"", &[]), &p, &SolveOptions::default()).unwrap_err();
    assert!(
        matches!(err, StorageError::UnsupportedPolicy { .. }),
        "{err}"
    );
    assert!(err.to_string().contains("band.toml"), "{err}");
}

#[test]
fn the_storage_verb_solves_the_naive_demo() {
    // end to end: `storage` solves it (exit 0, the INTERFACE JSON keys present)
    let text = std::fs::read_to_string(EXAMPLE)
        .unwrap()
        .replace("rule = \"rational\"", "rule = \"naive\"");
    let dir = tempfile::tempdir().unwrap();
    let market = dir.path().join("naive.toml");
    std::fs::write(&market, text).unwrap();
    let out = common::stdout_of(["storage", market.to_str().unwrap(), "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert!(v["euler_residual_max"].as_f64().unwrap() < 1e-6);
    assert!(v["stockout_price"].as_f64().unwrap() > 0.0);
}

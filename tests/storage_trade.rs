//! The storage equilibrium of a market that trades at a constant world price: private storers and
//! private traders together (storage arbitrage bounded by trade arbitrage), with and without a
//! public band stock. The closed forms are derived in each test from the model's equations
//! (docs/storage.md: P_t + k ≥ β·E_t[P_{t+1}], equality when stock is carried; traders import at
//! import parity and export at export parity without limit).

use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml, Scenario};
use furrow::storage::{self, Equilibrium, SolveOptions, StorageError, StoragePeriod};

const EXAMPLE: &str = "examples/veldmark_storers.toml";

/// The storers demo (constant-elasticity demand, 12 % yield risk, k = 4, r = 5 %, 2 % losses)
/// with a `[trade]` section (no `[trade]` when `trade` is `None`).
fn market(trade: Option<(f64, f64, f64)>) -> Scenario {
    let mut text = std::fs::read_to_string(EXAMPLE).unwrap();
    if let Some((world, import_cost, export_cost)) = trade {
        text.push_str(&format!(
            "\n[trade]\nworld_price = {world:?}\nworld_price_cv = 0.0\nworld_price_persistence = 0.0\nimport_cost = {import_cost:?}\nexport_cost = {export_cost:?}\n"
        ));
    }
    market_from_table(EXAMPLE, parse_toml(EXAMPLE, &text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    policy_from_table("band.toml", parse_toml("band.toml", text).unwrap()).unwrap()
}

/// β = (1 − δ)/(1 + r) and k of the demo's storers.
fn carrying(s: &Scenario) -> (f64, f64) {
    let st = s.storers.unwrap();
    (
        (1.0 - st.loss_rate) / (1.0 + st.interest_rate),
        st.storage_cost,
    )
}

fn private(s: &Scenario) -> storage::PrivateSolution {
    match storage::solve(s, &PolicySpec::none(), &SolveOptions::default()).unwrap() {
        Equilibrium::Private(p) => p,
        Equilibrium::Public(_) => panic!("no public stock expected"),
    }
}

/// The indicator-length path of `eq` (the file's seed, replication 0).
fn path(eq: &Equilibrium, s: &Scenario, initial: f64) -> Vec<StoragePeriod> {
    storage::simulate(eq, &s.shocks, s.run.seed, 0, initial, 10_200)
}

#[test]
fn storers_hold_nothing_once_the_price_would_pass_import_parity() {
    // Derivation (from the model's equations): with unlimited imports at import parity P_m the
    // price never exceeds P_m, so E[P'] ≤ P_m and storers, who carry stock only where
    // P = β·E[P'] − k, carry stock only at prices P ≤ β·P_m − k < P_m. Hence no private stock in
    // any season whose price is above β·P_m − k, in particular whenever traders import; and the
    // stockout price is at most β·P_m − k. Chosen so that P_m = 210 lies below the closed
    // market's stockout price (223.12 on the demo, docs/storage.md), where storage would matter.
    let closed = private(&market(None));
    let pm = 200.0 + 10.0;
    assert!(closed.stockout_price() > pm, "{}", closed.stockout_price());
    let s = market(Some((200.0, 10.0, 60.0)));
    let (beta, k) = carrying(&s);
    let bound = beta * pm - k;
    let sol = private(&s);
    let p0 = sol.stockout_price();
    assert!(
        p0 > 0.0 && p0 <= bound + 1e-9 * pm,
        "stockout {p0} > {bound}"
    );
    assert!(sol.residual <= 1e-6, "residual {}", sol.residual);
    // the solved policy: on a dense grid of availability, stock only where P ≤ β·P_m − k
    let m = &sol.market;
    let (lo, hi) = sol.range();
    for i in 0..=4000 {
        let z = lo + (hi - lo) * f64::from(i) / 4000.0;
        let (p, x) = (sol.rule.price(m, z), sol.rule.stock(m, z));
        assert!(
            p <= pm && p >= 140.0,
            "price {p} at {z} outside the parities"
        );
        if x > 0.0 {
            assert!(p <= bound + 1e-9 * pm, "stock {x} at price {p} > {bound}");
        }
    }
    // the simulated path
    let eq = Equilibrium::Private(sol.clone());
    let rows = path(&eq, &s, 0.0);
    let (mut importing, mut storing) = (0, 0);
    for r in &rows {
        assert!(r.price <= pm + 1e-9 && r.price >= 140.0 - 1e-9, "{r:?}");
        if r.private_stock > 0.0 {
            storing += 1;
            assert!(r.price <= bound + 1e-9 * pm, "{r:?}");
        }
        if r.imports > 0.0 {
            importing += 1;
            assert_eq!(r.private_stock, 0.0, "{r:?}");
            assert!((r.price - pm).abs() <= 1e-9 * pm, "{r:?}");
        }
        // market clearing: consumers take D(P) (no demand shock in the demo)
        let d = s.market.demand.quantity(r.price);
        assert!(
            (r.consumption - d).abs() <= 1e-6 * d,
            "consumption {} against D(P) {d}",
            r.consumption
        );
    }
    // both regimes occur (otherwise the checks above would say little)
    assert!(importing > 500 && storing > 500, "{importing} {storing}");
}

#[test]
fn a_parity_band_narrower_than_the_carrying_margin_leaves_no_private_storage() {
    // Derivation: E[P'] ≤ P_m, so storers need P ≤ β·P_m − k; with export parity
    // P_x > β·P_m − k every price (≥ P_x) is above that, so nobody ever stores. The price is then
    // the kinked inverse demand of the harvest, clamp(D⁻¹(H), P_x, P_m), season by season.
    let s = market(Some((210.0, 5.0, 5.0)));
    let (beta, k) = carrying(&s);
    let (pm, px) = (215.0, 205.0);
    assert!(px > beta * pm - k);
    let sol = private(&s);
    assert_eq!(sol.stockout_price(), 0.0);
    let eq = Equilibrium::Private(sol);
    let rows = path(&eq, &s, 0.0);
    let (mut imp, mut exp) = (0, 0);
    for r in &rows {
        assert_eq!(r.private_stock, 0.0, "{r:?}");
        let untraded = s.market.demand.price_at(r.harvest);
        let expected = untraded.clamp(px, pm);
        assert!(
            (r.price - expected).abs() <= 1e-9 * pm,
            "{r:?} vs {expected}"
        );
        // traders fill the gap at import parity, take the surplus at export parity
        if untraded > pm {
            imp += 1;
            let gap = s.market.demand.quantity(pm) - r.harvest;
            assert!((r.imports - gap).abs() <= 1e-9 * gap.max(1.0), "{r:?}");
        }
        if untraded < px {
            exp += 1;
            let surplus = r.harvest - s.market.demand.quantity(px);
            assert!(
                (r.exports - surplus).abs() <= 1e-9 * surplus.max(1.0),
                "{r:?}"
            );
        }
    }
    assert!(imp > 1000 && exp > 1000, "{imp} {exp}");
}

#[test]
fn prohibitive_trade_costs_reproduce_the_closed_equilibrium() {
    // Parities far outside every price the closed equilibrium reaches (export parity 1, import
    // parity 100 210 crowns): no trade can happen, so the equilibrium is the closed one; only the
    // extra breakpoints of the quadrature differ (integrated exactly, docs/storage.md).
    let closed_s = market(None);
    let open_s = market(Some((210.0, 1e5, 209.0)));
    let closed = private(&closed_s);
    let open = private(&open_s);
    let (a, b) = (closed.stockout_price(), open.stockout_price());
    assert!((a - b).abs() <= 1e-9 * a, "stockout {a} against {b}");
    let m = &closed.market;
    let (lo, hi) = closed.range();
    for i in 0..=200 {
        let z = lo + (hi - lo) * f64::from(i) / 200.0;
        let (p, q) = (closed.rule.price(m, z), open.rule.price(&open.market, z));
        assert!((p - q).abs() <= 1e-9 * p, "P({z}): {p} against {q}");
    }
    let (ca, cb) = (
        path(&Equilibrium::Private(closed), &closed_s, 0.0),
        path(&Equilibrium::Private(open), &open_s, 0.0),
    );
    for (x, y) in ca.iter().zip(&cb) {
        assert!((x.price - y.price).abs() <= 1e-9 * x.price, "{x:?} {y:?}");
        assert_eq!((y.imports, y.exports), (0.0, 0.0));
    }
}

const BAND: &str = "[policy]\nname = \"band\"\n[stock]\nbuy_below = BUY\nsell_above = SELL\ncapacity = 60.0\ninitial = 20.0\nstorage_cost = 6.0\nloss_rate = 0.02\nfinancing_rate = 0.04\nhandling_cost = 2.0\nrelease = \"band\"\n";

fn band(buy: f64, sell: f64) -> PolicySpec {
    policy(
        &BAND
            .replace("BUY", &format!("{buy:?}"))
            .replace("SELL", &format!("{sell:?}")),
    )
}

#[test]
fn a_band_outside_the_parities_never_trades() {
    // Derivation: traders hold the price in [P_x, P_m] = [185, 225]; the agency buys only when
    // the price would fall below buy_below = 180 < P_x and sells only when it would rise above
    // sell_above = 230 > P_m, so it never trades: its stock only decays by its losses.
    let s = market(Some((205.0, 20.0, 20.0)));
    let p = band(180.0, 230.0);
    let eq = storage::solve(&s, &p, &SolveOptions::default()).unwrap();
    let rows = path(&eq, &s, 20.0);
    for r in &rows {
        assert_eq!((r.purchases, r.releases), (0.0, 0.0), "{r:?}");
    }
    let report = storage::trade_report(&s, &p, &eq, &SolveOptions::default())
        .unwrap()
        .unwrap();
    assert_eq!(report.leakage, None);
}

#[test]
fn a_band_inside_the_parities_is_crowded_out_and_leaks_abroad() {
    // Williams and Wright (1991), ch. 9 (from memory): in a small open economy a public stock
    // crowds out private storage and much of its stabilisation leaks abroad through trade: what
    // it buys in a glut would otherwise have been exported, what it sells in a shortage replaces
    // imports. Signs: crowding-out > 0; leakage (share of each unit bought or sold that changes net
    // exports) in (0, 1]. A band 195–215 inside the parities [185, 225].
    let s = market(Some((205.0, 20.0, 20.0)));
    let p = band(195.0, 215.0);
    let eq = storage::solve(&s, &p, &SolveOptions::default()).unwrap();
    assert!(
        eq.euler_residual_max() <= 1e-6,
        "{}",
        eq.euler_residual_max()
    );
    let report = storage::trade_report(&s, &p, &eq, &SolveOptions::default())
        .unwrap()
        .unwrap();
    eprintln!("{report:?}");
    let c = report.crowding_out.unwrap();
    let l = report.leakage.unwrap();
    assert!(c > 0.0 && c < 1.5, "crowding-out {c}");
    assert!(l > 0.0 && l <= 1.0 + 1e-9, "leakage {l}");
    assert!(report.private_stock_change.unwrap() < 0.0);
    // the price stays within the parities and the agency trades only at its band's edges
    for r in path(&eq, &s, 20.0) {
        assert!(r.price >= 185.0 - 1e-9 && r.price <= 225.0 + 1e-9, "{r:?}");
        if r.purchases > 1e-9 {
            assert!((r.price - 195.0).abs() < 1e-6 || r.public_stock >= 60.0 * (1.0 - 1e-9));
        }
    }
}

#[test]
fn what_the_storage_model_does_not_cover_is_refused_by_key() {
    let mut s = market(Some((205.0, 20.0, 20.0)));
    s.trade.as_mut().unwrap().world_price_cv = 0.1;
    match storage::solve(&s, &PolicySpec::none(), &SolveOptions::default()) {
        Err(StorageError::UnsupportedPolicy { key, .. }) => assert_eq!(key, "trade.world_price_cv"),
        other => panic!("{other:?}"),
    }
    let s = market(Some((205.0, 20.0, 20.0)));
    let q = policy("[policy]\nname = \"quota\"\n[border]\nimport_quota = 30.0\n");
    match storage::solve(&s, &q, &SolveOptions::default()) {
        Err(StorageError::UnsupportedPolicy { key, .. }) => assert_eq!(key, "border.import_quota"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn a_tariff_moves_the_ceiling_by_its_amount() {
    // Trade::terms: import parity = world + import cost + tariff (trade.rs); the storage model's
    // ceiling is that parity, so storers' bound β·P_m − k moves with it.
    let s = market(Some((200.0, 10.0, 60.0)));
    let q = policy("[policy]\nname = \"duty\"\n[border]\nimport_tariff = 15.0\n");
    let eq = storage::solve(&s, &q, &SolveOptions::default()).unwrap();
    assert_eq!(eq.market().ceiling, 225.0);
    let (beta, k) = carrying(&s);
    if let Equilibrium::Private(sol) = &eq {
        assert!(sol.stockout_price() <= beta * 225.0 - k + 1e-9);
    } else {
        panic!("no public stock expected");
    }
    for r in path(&eq, &s, 0.0) {
        assert!(r.price <= 225.0 + 1e-9);
    }
}

#[test]
fn an_export_ban_without_imports_is_the_closed_market() {
    // Trade::terms: an export ban leaves no export (export quota 0) and a prohibitive import cost
    // puts import parity above every price reached, so nothing can cross the border: the
    // equilibrium is the closed one (same stockout price to 1e-9), whatever the world price.
    let closed = private(&market(None));
    let s = market(Some((120.0, 1e5, 0.0)));
    let ban = policy("[policy]\nname = \"ban\"\n[border]\nexport_ban = true\n");
    let eq = storage::solve(&s, &ban, &SolveOptions::default()).unwrap();
    assert_eq!(eq.market().floor, 0.0);
    let Equilibrium::Private(open) = &eq else {
        panic!("no public stock expected")
    };
    let (a, b) = (closed.stockout_price(), open.stockout_price());
    assert!((a - b).abs() <= 1e-9 * a, "{a} against {b}");
}

#[test]
fn the_summary_reports_trade_only_for_a_market_that_trades() {
    // The JSON keys of docs/storage.md, "A market that trades"; a closed market's summary has none.
    let o = SolveOptions::default();
    let closed = storage::summary(&market(None), &PolicySpec::none(), &o, 3).unwrap();
    assert!(closed.trade.is_none());
    let json = storage::render_summary(&closed, furrow::output::Format::Json);
    assert!(!json.contains("import_parity") && !json.contains("leakage"));
    let s = market(Some((205.0, 20.0, 20.0)));
    let open = storage::summary(&s, &band(195.0, 215.0), &o, 3).unwrap();
    let json = storage::render_summary(&open, furrow::output::Format::Json);
    for key in [
        "\"import_parity\"",
        "\"export_parity\"",
        "\"imports_mean\"",
        "\"exports_mean\"",
        "\"import_season_share\"",
        "\"export_season_share\"",
        "\"crowding_out\"",
        "\"leakage\"",
        "\"private_stock_change\"",
        "\"net_exports_change\"",
    ] {
        assert!(json.contains(key), "{key} missing");
    }
    let t = open.trade.unwrap();
    // shares are shares; a season cannot both import and export (trade.rs, Traded)
    assert!(t.import_season_share + t.export_season_share <= 1.0);
}

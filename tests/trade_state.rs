//! State trading (`[border] public_import_above`, `public_import_max`): the agency imports at the
//! landed price into its stock and releases it in the same season while the domestic price would
//! be above its trigger. The checks are identities of the books and closed forms derived here from
//! the kinked curve of private trade (import parity P_m = W + import_cost; the agency pays the
//! landed price W + import_cost, no duty).

mod common;

use furrow::engine::{Model, PeriodRecord, PeriodShock};
use furrow::policies::file::{policy_for_market, policy_from_table};
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml, Scenario};
use furrow::stochastic::ShockStream;
use furrow::storage::{self, SolveOptions};
use proptest::prelude::*;

/// The property tests' fixed seed (the same cases on every run; `PROPTEST_RNG_SEED=N` explores).
const PROPTEST_SEED: u64 = 0x5747_e7ad_1e00_0016;

fn config(cases: u32) -> ProptestConfig {
    common::proptest_config(PROPTEST_SEED, cases)
}

fn market(text: &str) -> Scenario {
    market_from_table("m.toml", parse_toml("m.toml", text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    let t = parse_toml("p.toml", &format!("[policy]\nname = \"p\"\n{text}")).unwrap();
    policy_from_table("p.toml", t).unwrap()
}

/// Constant-elasticity demand through (480, 210) with elasticity −0.25, planting fixed at 480 to
/// within 10⁻⁴ (supply elasticity 10⁻⁶), naive farmers, lognormal yields with CV `cv`, a border
/// with import cost 20 and export cost 20 at world price 210 (CV `world_cv`).
fn open_market(cv: f64, world_cv: f64, seed: u64) -> Scenario {
    market(&format!(
        "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = -0.25\n[supply]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = 0.000001\n[expectations]\nrule = \"naive\"\n[run]\ninitial_price = 210.0\n\
         periods = 10\nseed = {seed}\n[shocks]\nyield_cv = {cv}\n[trade]\nworld_price = 210.0\n\
         world_price_cv = {world_cv}\nimport_cost = 20.0\nexport_cost = 20.0\n"
    ))
}

/// D⁻¹(C) = 210 (C/480)^−4 (no demand shock in these markets).
fn inverse_demand(c: f64) -> f64 {
    210.0 * (c / 480.0).powf(-4.0)
}

/// D(P) = 480 (P/210)^−0.25.
fn demand(p: f64) -> f64 {
    480.0 * (p / 210.0).powf(-0.25)
}

/// `periods` seasons of replication 0's shocks (the world price on its own stream).
fn path(s: &Scenario, p: &PolicySpec, periods: usize) -> Vec<PeriodRecord> {
    let mut stream = ShockStream::for_scenario(s, 0);
    let shocks: Vec<PeriodShock> = (0..periods).map(|_| stream.next_shock()).collect();
    Model::new(s, p).run(periods, |t| shocks[t - 1]).unwrap()
}

fn close(a: f64, b: f64, scale: f64) -> bool {
    (a - b).abs() <= 1e-9 * scale.abs().max(1.0)
}

/// The price the season would have cleared at without its public imports, on the kinked curve of
/// free trade: the agency's other trades leave Q − X + (R − Z); traders import at
/// P_m = W + 20 + `tariff` and export at P_x = W − 20.
fn price_without_imports(r: &PeriodRecord, tariff: f64) -> f64 {
    let world = r.trade.unwrap().world_price;
    let left = r.harvest - r.purchases + (r.releases - r.public_imports());
    inverse_demand(left)
        .max(world - 20.0)
        .min(world + 20.0 + tariff)
}

proptest! {
    #![proptest_config(config(48))]

    #[test]
    fn stock_balance_books_and_trigger_hold_every_season(
        trigger in 196.0..245.0f64,
        max in 0.5..80.0f64,
        capacity in 5.0..150.0f64,
        fill in 0.0..1.0f64,
        sell_above in 200.0..240.0f64,
        buy_below in 150.0..195.0f64,
        loss in 0.0..0.1f64,
        handling in 0.0..5.0f64,
        budget in prop::option::of(500.0..20_000.0f64),
        tariff in 0.0..10.0f64,
        cv in 0.05..0.3f64,
        world_cv in 0.0..0.2f64,
        seed in 1u64..1000,
    ) {
        let s = open_market(cv, world_cv, seed);
        let budget_line = budget.map_or(String::new(), |b| format!("purchase_budget = {b:?}\n"));
        let p = policy(&format!(
            "[stock]\nbuy_below = {buy_below:?}\nsell_above = {sell_above:?}\n\
             capacity = {capacity:?}\ninitial = {:?}\nloss_rate = {loss:?}\n\
             handling_cost = {handling:?}\nstorage_cost = 3.0\nfinancing_rate = 0.03\n{budget_line}\
             [border]\nimport_tariff = {tariff:?}\npublic_import_above = {trigger:?}\n\
             public_import_max = {max:?}\n",
            fill * capacity
        ));
        policy_for_market(&s, &p).unwrap();
        let records = path(&s, &p, 80);
        let mut before = fill * capacity;
        for r in &records {
            let z = r.public_imports();
            let carried = (1.0 - loss) * before;
            // stock balance: S_t = (1 − loss) S_{t−1} + X_t + Z_t − R_t (the task's identity)
            prop_assert!(
                close(r.stock, carried + r.purchases + z - r.releases, capacity),
                "t {}: {} vs {}", r.period, r.stock, carried + r.purchases + z - r.releases
            );
            // public imports are released in the season: R_t ≥ Z_t, and never above the store
            prop_assert!(r.releases >= z - 1e-12);
            prop_assert!(r.stock <= capacity * (1.0 + 1e-12));
            // the fiscal identity: the public import cost is the landed price times the quantity
            let world = r.trade.unwrap().world_price;
            prop_assert!(close(r.public_import_cost(), (world + 20.0) * z, r.public_import_cost()));
            // the books: fiscal cost = P·X − P·R + storage + financing + handling + deficiency
            // + consumer payments − border receipts + public import cost (INTERFACE.md's sum with
            // the border's two lines)
            let books = r.purchase_cost - r.sales_revenue + r.storage_cost + r.financing_cost
                + r.handling_cost + r.deficiency_payments + r.consumer_payments
                - r.border_revenue() + r.public_import_cost();
            prop_assert!(close(r.fiscal_cost, books, books.abs() + r.sales_revenue));
            // handling on both legs of the public import (entry and release)
            let handled = handling * (r.purchases + r.releases + z);
            prop_assert!(close(r.handling_cost, handled, handled));
            // limits: the season's maximum, the budget at the landed price
            prop_assert!(z <= max * (1.0 + 1e-12));
            if let Some(b) = budget {
                prop_assert!((world + 20.0) * z <= b * (1.0 + 1e-9));
            }
            // the trigger: the agency imports only when the price without its imports would be
            // above it (and above export parity: what it brought in below that, traders would
            // export again); then the price ends at that level, or above it when a limit bound
            let without = price_without_imports(r, tariff);
            let target = trigger.max(world - 20.0);
            if z > 0.0 {
                prop_assert!(without > target, "t {}: imported {z} at {without}", r.period);
                prop_assert!(r.price >= target * (1.0 - 1e-9));
                prop_assert_eq!(r.exports(), 0.0);
                let parity = world + 20.0 + tariff;
                if r.price < parity * (1.0 - 1e-12) {
                    // below import parity the imports lower the price: no private imports left
                    prop_assert!(r.price < without);
                    prop_assert_eq!(r.imports(), 0.0);
                } else {
                    // still at import parity: the public imports displace private ones unit
                    // for unit, M = D(P_m) − (Q − X + R) = M without them − Z
                    let left = r.harvest - r.purchases + r.releases;
                    prop_assert!(close(r.price, parity, parity));
                    prop_assert!(close(r.imports(), demand(parity) - left, left));
                    prop_assert!(close(r.imports() + z, demand(parity) - (left - z), left));
                }
                let limited = z >= max * (1.0 - 1e-12)
                    || r.acted().contains("capacity-full")
                    || r.acted().contains("budget-bound");
                if !limited {
                    prop_assert!(close(r.price, target, target), "{} vs {target}", r.price);
                }
            } else if without > target * (1.0 + 1e-9) {
                // above the trigger without imports: only a full store or a spent budget stops it
                prop_assert!(
                    r.acted().contains("capacity-full") || r.acted().contains("budget-bound")
                        || r.stock >= capacity * (1.0 - 1e-12),
                    "t {}: no import at {without} above {trigger}: {}", r.period, r.acted()
                );
            }
            before = r.stock;
        }
    }
}

#[test]
fn a_trigger_at_or_above_import_parity_never_imports() {
    // Derived here: private traders import whenever the price would pass import parity
    // P_m = 210 + 20 = 230 (no quota), so after private trade P_t ≤ P_m ≤ trigger in every season and
    // the agency's shortfall to the trigger is never positive. The path is the one of the same
    // policy without state trading, bit for bit.
    let s = open_market(0.25, 0.0, 7);
    let band = "[stock]\nbuy_below = 195.0\nsell_above = 215.0\ncapacity = 15.0\ninitial = 5.0\n";
    let without = path(&s, &policy(band), 400);
    assert!(
        without.iter().any(|r| r.imports() > 0.0),
        "the test needs imports"
    );
    for trigger in [230.0, 235.0, 300.0] {
        let with = path(
            &s,
            &policy(&format!(
                "{band}[border]\npublic_import_above = {trigger:?}\n"
            )),
            400,
        );
        assert!(with.iter().all(|r| r.public_imports() == 0.0));
        assert_eq!(with, without, "trigger {trigger}");
    }
}

#[test]
fn imports_lower_the_price_against_the_same_policy_without_them() {
    // Derived here: a small band stock runs out in short harvests; above it the price rises to
    // import parity 230. With state trading at 222 (most 25 a season) the agency imports the gap
    // D(222) − (Q − X + R) up to 25: the price is 222, or D⁻¹(Q − X + R + 25) when 25 is not enough
    // — below the price without imports in every such season, unless even that is above import
    // parity, where traders import the rest (25 fewer units than without state trading). Planting is fixed (supply elasticity
    // 10⁻⁶), so the two paths see the same harvests to within 10⁻⁶ relative. The imports pass
    // through the store, so its room (capacity 10 less the stock) bounds them too.
    let s = open_market(0.25, 0.0, 3);
    let band = "[stock]\nbuy_below = 190.0\nsell_above = 215.0\ncapacity = 10.0\ninitial = 5.0\n";
    let base = path(&s, &policy(band), 2000);
    let with = path(
        &s,
        &policy(&format!(
            "{band}[border]\npublic_import_above = 222.0\npublic_import_max = 25.0\n"
        )),
        2000,
    );
    let mut bound = 0;
    let mut capped = 0;
    for (a, b) in with.iter().zip(&base) {
        let z = a.public_imports();
        if z > 0.0 {
            bound += 1;
            if a.price >= 230.0 {
                // 25 was not enough to bring the price below import parity: traders still import
                // there, Z fewer units (the agency displaces them; the price stays at P_m)
                assert!((b.imports() - a.imports() - z).abs() < 1e-3 * b.imports().max(1.0));
                continue;
            }
            assert!(
                a.price < b.price - 1e-6,
                "t {}: {} vs {}",
                a.period,
                a.price,
                b.price
            );
            if z < 25.0 * (1.0 - 1e-12) && !a.acted().contains("capacity-full") {
                assert!((a.price - 222.0).abs() < 1e-9, "{}", a.price);
            } else {
                capped += 1;
                assert!(z <= 25.0 * (1.0 + 1e-12) && a.stock <= 10.0 * (1.0 + 1e-12));
                let left = a.harvest - a.purchases + a.releases;
                assert!((a.price - inverse_demand(left).min(230.0)).abs() < 1e-9 * a.price);
            }
            // the agency displaces private imports first: none while it holds the price below P_m
            if a.price < 230.0 {
                assert_eq!(a.imports(), 0.0);
            }
        } else {
            // no public import: the same season as without state trading (to planting's 10⁻⁶)
            assert!(
                (a.price - b.price).abs() < 1e-4 * b.price,
                "{} {}",
                a.price,
                b.price
            );
        }
    }
    assert!(
        bound > 50 && capped > 0,
        "{bound} seasons imported, {capped} at the maximum"
    );
    let mean = |v: &[PeriodRecord]| v.iter().map(|r| r.price).sum::<f64>() / v.len() as f64;
    assert!(mean(&with) < mean(&base));
    // the books: imports landed at 230 and sold at ≥ 222 cost at most 8 a unit more than they fetch
    for r in &with {
        let z = r.public_imports();
        if z > 0.0 {
            assert!((r.public_import_cost() - 230.0 * z).abs() < 1e-9 * r.public_import_cost());
        }
    }
}

#[test]
fn a_full_store_and_a_spent_budget_bind_public_imports() {
    // Derived here. A store full at the start (capacity = initial = 20, no band) has no room for
    // the imports to pass through: none happen. A purchase budget B lets the agency spend at most
    // B at the landed price 230 a season: Z ≤ B/230.
    let s = open_market(0.25, 0.0, 5);
    let full = path(
        &s,
        &policy(
            "[stock]\ncapacity = 20.0\ninitial = 20.0\n[border]\npublic_import_above = 215.0\n",
        ),
        300,
    );
    assert!(full.iter().all(|r| r.public_imports() == 0.0));
    assert!(full.iter().any(|r| r.acted().contains("capacity-full")));
    let budget = path(
        &s,
        &policy("[stock]\npurchase_budget = 2300.0\n[border]\npublic_import_above = 215.0\n"),
        300,
    );
    let most = budget
        .iter()
        .map(|r| r.public_imports())
        .fold(0.0, f64::max);
    assert!(most > 0.0 && most <= 10.0 * (1.0 + 1e-12), "{most}");
    assert!(budget.iter().any(|r| r.acted().contains("budget-bound")));
    // without a stock section the store is unlimited: the imports pass through it, S stays 0
    let plain = path(&s, &policy("[border]\npublic_import_above = 215.0\n"), 300);
    assert!(plain.iter().any(|r| r.public_imports() > 0.0));
    assert!(plain.iter().all(|r| r.stock.abs() < 1e-9));
}

#[test]
fn what_state_trading_cannot_be_is_refused_by_key() {
    let s = open_market(0.2, 0.0, 1);
    // a limit without a trigger
    let t = parse_toml(
        "p.toml",
        "[policy]\nname = \"p\"\n[border]\npublic_import_max = 40.0\n",
    )
    .unwrap();
    let e = policy_from_table("p.toml", t).unwrap_err().to_string();
    assert!(
        e.contains("border.public_import_max") && e.contains("public_import_above"),
        "{e}"
    );
    // a trigger below the price the agency buys at
    let p = policy(
        "[stock]\nbuy_below = 200.0\ncapacity = 50.0\n[border]\npublic_import_above = 195.0\n",
    );
    let e = policy_for_market(&s, &p).unwrap_err().to_string();
    assert!(
        e.contains("border.public_import_above") && e.contains("stock.buy_below"),
        "{e}"
    );
    // out of range
    let t = parse_toml(
        "p.toml",
        "[policy]\nname = \"p\"\n[border]\npublic_import_above = -1.0\n",
    )
    .unwrap();
    let e = policy_from_table("p.toml", t).unwrap_err().to_string();
    assert!(e.contains("border.public_import_above"), "{e}");
    // the storage equilibrium does not cover it: refused naming the key
    let text = std::fs::read_to_string("examples/veldmark_storers.toml").unwrap()
        + "\n[trade]\nworld_price = 205.0\nimport_cost = 20.0\nexport_cost = 20.0\n";
    let storers = market_from_table(
        "examples/veldmark_storers.toml",
        parse_toml("examples/veldmark_storers.toml", &text).unwrap(),
    )
    .unwrap();
    let p = policy("[border]\npublic_import_above = 215.0\n");
    let e = storage::solve(&storers, &p, &SolveOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("border.public_import_above"), "{e}");
}

#[test]
fn compare_measures_the_leakage_of_public_imports_that_displace_private_ones() {
    // Derived here. Planting is fixed; traders import at P_m = 230. With a trigger at 229.99 the
    // agency imports Z_t = D(229.99) − Q_t whenever traders would have imported M_t = D(230) − Q_t,
    // and sells it at home: a_t = −Z_t, ΔNX_t = +M_t (no private imports are left), so the season
    // adds M_t·Z_t to −Σ ΔNX·a and Z_t² to Σ a². Seasons with the price between 229.99 and 230 add
    // only to Σ a² (Z_t ≤ D(229.99) − D(230) ≈ 5·10⁻⁴). The leakage −Σ ΔNX·a / Σ a² (the storage
    // module's definition) is therefore within 10⁻³ of 1 below it: every unit the agency sells
    // replaces a unit traders would have imported. A border with a tariff only never trades: null.
    let text = String::from(
        "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = -0.25\n[supply]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = 0.000001\n[expectations]\nrule = \"naive\"\n[run]\ninitial_price = 210.0\n\
         periods = 40\nreplications = 30\nseed = 4\n[shocks]\nyield_cv = 0.2\n[trade]\n\
         world_price = 210.0\nimport_cost = 20.0\nexport_cost = 20.0\n",
    );
    let s = market(&text);
    let state = policy("[border]\npublic_import_above = 229.99\n");
    let tariff = policy("[border]\nimport_tariff = 5.0\n");
    let out =
        furrow::compare::compare(&s, &[state, tariff], &furrow::stochastic::NoProgress).unwrap();
    let value =
        |k: usize, key: &str| furrow::compare::finite_number(&out.policies[k].indicators, key);
    let l = value(0, "leakage").expect("a leakage");
    assert!(l <= 1.0 + 1e-12 && l > 0.999, "{l}");
    assert!(value(0, "leakage_se").is_some_and(|se| (0.0..1e-3).contains(&se)));
    assert_eq!(value(1, "leakage"), None);
}

#[test]
fn the_demo_briefing_and_run_summary_show_state_trading() {
    // The briefing's border paragraph names the policy's trigger and limit from its file; the run
    // summary of a trading market carries the world price, imports and exports (their means are
    // checked against the definition: imports and exports are never negative, the world price
    // mean lies near the file's mean, 210, within its 10 % variation).
    use assert_cmd::Command;
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("brief.html");
    let o = Command::cargo_bin("furrow")
        .unwrap()
        .args([
            "report",
            "examples/veldmark_border.toml",
            "policies/border/band_public_imports.toml",
            "--replications",
            "40",
            "--out",
        ])
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.contains("State trading"), "no state trading paragraph");
    assert!(
        html.contains("above 240"),
        "the trigger from the policy file"
    );
    assert!(
        html.contains("at most 40"),
        "the limit from the policy file"
    );
    let o = Command::cargo_bin("furrow")
        .unwrap()
        .args([
            "run",
            "examples/veldmark_border.toml",
            "--policy",
            "policies/border/band_public_imports.toml",
            "--replications",
            "200",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(rows.len(), 30);
    for r in &rows {
        let w = r["world_price_mean"].as_f64().unwrap();
        assert!((w - 210.0).abs() < 0.1 * 210.0, "{w}");
        assert!(r["imports_mean"].as_f64().unwrap() >= 0.0);
        assert!(r["exports_p05"].as_f64().unwrap() >= 0.0);
    }
}

/// Linear market Q_d = 300 − P, Q_s = c + b·P^e with the closed steady state at P* = 150
/// (c = 300 − (1 + b)·150), naive farmers, a border at world price 100 with costs 40: import
/// parity 140, export parity 60.
fn linear_open(b: f64) -> Scenario {
    let c = 300.0 - (1.0 + b) * 150.0;
    market(&format!(
        "[demand]\nform = \"linear\"\nintercept = 300.0\nslope = -1.0\n[supply]\nform = \"linear\"\n\
         intercept = {c:?}\nslope = {b:?}\n[expectations]\nrule = \"naive\"\n[run]\n\
         initial_price = 150.0\nperiods = 10\n[trade]\nworld_price = 100.0\nimport_cost = 40.0\n\
         export_cost = 40.0\n"
    ))
}

#[test]
fn the_agency_importing_regime_pins_the_price_at_its_trigger() {
    // Derived here. The closed market rests at P* = 150, above import parity 140, so free trade
    // rests at 140 importing D(140) − S(140). With state trading at 130 < 140 the agency's imports
    // reach first: the price rests at 130 (pinned: dP/dP^e = 0, so the naive map's eigenvalue is
    // 0, as for private imports at a parity), with public imports D(130) − S(130) = 170 − (c + 130b)
    // and no private imports. With a limit L below that gap, the domestic curve clears the harvest
    // plus L: 300 − P = c + b·P + L ⇒ P = (300 − c − L)/(1 + b) (the cobweb eigenvalue −b), and
    // when that price is above 140 traders import the rest at parity: D(140) − S(140) − L.
    let b = 0.5;
    let c = 300.0 - 1.5 * 150.0;
    let s = linear_open(b);
    let a =
        furrow::stability::analyse(&s, &policy("[border]\npublic_import_above = 130.0\n")).unwrap();
    let hold = &a.regimes[0];
    assert_eq!(hold.name, "agency importing");
    assert!(hold.holds_steady_state);
    assert_eq!((hold.eigenvalues[0].re, hold.eigenvalues[0].im), (0.0, 0.0));
    assert!((a.steady_state.price - 130.0).abs() < 1e-9);
    let t = a.trade.as_ref().unwrap();
    let gap = 170.0 - (c + 130.0 * b);
    assert!((t.public_imports.unwrap() - gap).abs() < 1e-9, "{t:?}");
    assert_eq!(t.imports, 0.0);
    // a limit L = 5 below the gap 42.5, price (300 − c − 5)/1.5 = 146.67 > 140: traders import
    // D(140) − S(140) − 5 = 160 − 145 − 5 = 10 at parity, the agency its 5
    let a = furrow::stability::analyse(
        &s,
        &policy("[border]\npublic_import_above = 130.0\npublic_import_max = 5.0\n"),
    )
    .unwrap();
    assert_eq!(a.regimes[0].name, "importing", "{a:#?}");
    let t = a.trade.as_ref().unwrap();
    assert!(
        (t.imports - (160.0 - (c + 140.0 * b) - 5.0)).abs() < 1e-9,
        "{t:?}"
    );
    assert_eq!(t.public_imports, Some(5.0));
    // a limit L = 20: (300 − c − 20)/1.5 = 136.67 < 140: the agency's limit holds, no traders
    let a = furrow::stability::analyse(
        &s,
        &policy("[border]\npublic_import_above = 130.0\npublic_import_max = 20.0\n"),
    )
    .unwrap();
    let hold = &a.regimes[0];
    assert_eq!(hold.name, "agency importing, at its limit", "{a:#?}");
    let p = (300.0 - c - 20.0) / (1.0 + b);
    assert!(
        (a.steady_state.price - p).abs() < 1e-9,
        "{} vs {p}",
        a.steady_state.price
    );
    assert!((hold.eigenvalues[0].re + b).abs() < 1e-9);
    let t = a.trade.as_ref().unwrap();
    assert_eq!((t.imports, t.public_imports), (0.0, Some(20.0)));
    // a trigger at or above import parity never imports: free trade's steady state
    let a =
        furrow::stability::analyse(&s, &policy("[border]\npublic_import_above = 145.0\n")).unwrap();
    assert_eq!(a.regimes[0].name, "importing");
    assert!(a.regimes.iter().all(|r| !r.name.starts_with("agency")));
}

//! The competitive storage equilibrium: accuracy, limit cases with closed forms, shape, simulated
//! moments and crowding-out. Each check names its outside source.

use assert_cmd::Command;
use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{apply_override, market_from_table, parse_toml, Scenario};
use furrow::storage::{self, simulate, Equilibrium, SolveOptions, StorageError};

const EXAMPLE: &str = "examples/veldmark_storers.toml";

fn example_with(overrides: &[(&str, toml::Value)]) -> Scenario {
    let text = std::fs::read_to_string(EXAMPLE).unwrap();
    let mut table = parse_toml(EXAMPLE, &text).unwrap();
    // the closed forms below are for linear demand; a case may override the form again
    apply_override(
        &mut table,
        "demand.form",
        toml::Value::String("linear".into()),
    )
    .unwrap();
    for (k, v) in overrides {
        apply_override(&mut table, k, v.clone()).unwrap();
    }
    market_from_table(EXAMPLE, table).unwrap()
}

fn band_policy(buy: f64, sell: f64, capacity: f64) -> PolicySpec {
    let text = format!(
        "[policy]\nname = \"band\"\n[stock]\nbuy_below = {buy}\nsell_above = {sell}\ncapacity = {capacity}\n\
         initial = 0.0\nstorage_cost = 6.0\nloss_rate = 0.02\nrelease = \"band\"\n"
    );
    policy_from_table("band.toml", parse_toml("band.toml", &text).unwrap()).unwrap()
}

fn private(s: &Scenario) -> furrow::storage::PrivateSolution {
    match storage::solve(s, &PolicySpec::none(), &SolveOptions::default()).unwrap() {
        Equilibrium::Private(p) => p,
        Equilibrium::Public(_) => panic!("no public stock expected"),
    }
}

/// Linear demand of the example's calibration point: Q = a + b P (480 kt, 210 crowns, elasticity −0.25).
fn linear_demand() -> (f64, f64) {
    let b = -0.25 * 480.0 / 210.0;
    (480.0 - b * 210.0, b)
}

#[test]
fn euler_residuals_are_below_1e_minus_6_on_a_dense_grid() {
    // Accuracy check by the relative Euler-equation error on points off the solution grid
    // (Judd 1992, "Projection methods for solving aggregate growth models", section 5).
    let sol = private(&example_with(&[]));
    let (lo, hi) = sol.range();
    let worst = (0..=20_000)
        .map(|i| sol.euler_residual(lo + (hi - lo) * i as f64 / 20_000.0))
        .fold(0.0, f64::max);
    assert!(worst < 1e-6, "largest residual {worst:e}");
    // the unrefined 200-point solve is already a consistent approximation, only coarser
    let s = example_with(&[]);
    let m = storage::StorageMarket::new(&s, 10).unwrap();
    let coarse = storage::solve_private(m, &SolveOptions::default()).unwrap();
    assert!(coarse.euler_residual_max(2001) < 1e-3);
}

#[test]
fn prohibitive_storage_cost_gives_the_inverse_demand_of_the_harvest() {
    // Nobody stores when k exceeds any attainable discounted price: then P = D⁻¹(harvest) (Gustafson
    // 1958's no-carryover case). With linear curves and mean-one yield shocks, E[D⁻¹(q·Y)] = D⁻¹(q),
    // so rational planting is the deterministic steady state q = Q* (Muth 1961, eq. 3.4 with linear
    // curves). The yield cv is lowered to 4 % so that no quadrature node's harvest reaches the demand
    // intercept, where free disposal would hold the price at zero and break the linearity.
    let s = example_with(&[
        ("storers.storage_cost", toml::Value::Float(1e5)),
        ("shocks.yield_cv", toml::Value::Float(0.04)),
    ]);
    let sol = private(&s);
    let (a, b) = linear_demand();
    assert_eq!(sol.stockout_price(), 0.0);
    for z in [350.0, 420.0, 480.0, 530.0, 590.0] {
        let row = sol.row(z);
        assert_eq!(row.private_stock, 0.0);
        assert!(
            (row.price - (z - a) / b).abs() < 1e-9 * row.price,
            "{z}: {}",
            row.price
        );
        // (the continuous-shock quadrature integrates E[Y] = 1 to about 1e-10 relative)
        assert!((row.planted - 480.0).abs() < 1e-7, "{}", row.planted);
    }
    // simulated prices are then i.i.d. with sd = Q*·cv(Y)/|b| (linear transform of the yield factor)
    let path = simulate(&Equilibrium::Private(sol), &s.shocks, 11, 0, 0.0, 20_000);
    let n = path.len() as f64;
    let mean = path.iter().map(|r| r.price).sum::<f64>() / n;
    let sd = (path.iter().map(|r| (r.price - mean).powi(2)).sum::<f64>() / n).sqrt();
    let expected = 480.0 * 0.04 / -b;
    assert!(
        (sd - expected).abs() < 0.02 * expected,
        "sd {sd} vs {expected}"
    ); // MC error ≈ 0.5 %
    let mc = expected / n.sqrt(); // standard error of the sample mean
    assert!(
        (mean - 210.0).abs() < 4.0 * mc,
        "mean {mean}, standard error {mc}"
    );
}

#[test]
fn without_shocks_the_steady_state_has_no_stocks() {
    // Deterministic limit: with positive carrying costs the stationary state is the market's steady
    // state with zero carryover (Wright and Williams 1982, section II), and at zero stock the storers'
    // threshold is the discounted next price less the storage cost: (1 − δ)/(1 + r)·P* − k.
    // Derivation from the model's equations: with no shocks and x = 0 carried out, next availability
    // is the planting q and next price P' = D⁻¹(q) (no one stores at the steady state, shown below);
    // rational planting q = S(E[P']) = S(D⁻¹(q)) has the unique root q = Q*, P' = P*; the arbitrage
    // condition P + k ≥ β·E[P'] with β = (1 − δ)/(1 + r) binds exactly at P = β·P* − k, the price
    // above which storers hold nothing. Here δ = 0.02, r = 0.05, k = 4, P* = 210.
    let s = example_with(&[("shocks.yield_cv", toml::Value::Float(0.0))]);
    let sol = private(&s);
    let row = sol.row(480.0);
    assert!((row.price - 210.0).abs() < 1e-9, "{}", row.price);
    assert_eq!(row.private_stock, 0.0);
    assert!((row.planted - 480.0).abs() < 1e-8);
    let threshold = 0.98 / 1.05 * 210.0 - 4.0;
    assert!(
        (sol.stockout_price() - threshold).abs() < 1e-9,
        "{}",
        sol.stockout_price()
    );
    let path = simulate(&Equilibrium::Private(sol), &s.shocks, 1, 0, 0.0, 50);
    assert!(path
        .iter()
        .all(|r| r.private_stock == 0.0 && (r.price - 210.0).abs() < 1e-9));
}

#[test]
fn price_falls_with_availability_and_kinks_where_stocks_start() {
    // Shape of the equilibrium price function: decreasing, equal to inverse demand where stocks are
    // zero, flatter where storers hold stock, with a kink at the stockout point (Deaton and Laroque
    // 1992, Theorem 1; Gustafson 1958).
    let sol = private(&example_with(&[]));
    let m = &sol.market;
    let (lo, hi) = sol.range();
    let mut prev = f64::INFINITY;
    for i in 0..=4000 {
        let z = lo + (hi - lo) * i as f64 / 4000.0;
        let p = sol.rule.price(m, z);
        assert!(p < prev, "not decreasing at {z}");
        prev = p;
    }
    let kink = sol.rule.kink;
    assert!(kink > lo && kink < hi);
    let (_, b) = linear_demand();
    let h = 1e-4;
    let left = (sol.rule.price(m, kink) - sol.rule.price(m, kink - h)) / h;
    let right = (sol.rule.price(m, kink + h) - sol.rule.price(m, kink)) / h;
    assert!((left - 1.0 / b).abs() < 1e-6, "left slope {left}");
    assert!(
        right.abs() < 0.9 * left.abs(),
        "right slope {right} vs left {left}"
    );
    assert!((sol.rule.price(m, kink) - sol.stockout_price()).abs() < 1e-9);
    assert_eq!(sol.rule.stock(m, kink - 1.0), 0.0);
    assert!(sol.rule.stock(m, kink + 1.0) > 0.0);
}

#[test]
fn accuracy_and_shape_hold_across_markets() {
    // The same checks (Judd 1992 residual; Deaton and Laroque 1992 shape) on linear and
    // constant-elasticity demand, cheap and dear storage, low and high risk, yield and additive shocks.
    let cases: [(&str, f64, f64, f64, f64); 6] = [
        ("linear", 0.0, 0.02, 0.05, 0.0),
        ("linear", 20.0, 0.10, 0.20, 0.0),
        ("constant-elasticity", 4.0, 0.05, 0.12, 0.0),
        ("constant-elasticity", 0.0, 0.03, 0.25, 0.0),
        ("linear", 2.0, 0.05, 0.0, 30.0),
        ("constant-elasticity", 8.0, 0.08, 0.08, 15.0),
    ];
    for (form, cost, rate, cv, sd) in cases {
        let s = example_with(&[
            ("demand.form", toml::Value::String(form.into())),
            ("storers.storage_cost", toml::Value::Float(cost)),
            ("storers.interest_rate", toml::Value::Float(rate)),
            ("shocks.yield_cv", toml::Value::Float(cv)),
            ("shocks.supply_sd", toml::Value::Float(sd)),
        ]);
        let sol = private(&s);
        let label = format!("{form} k={cost} r={rate} cv={cv} sd={sd}");
        let worst = sol.euler_residual_max(5001);
        assert!(worst < 1e-6, "{label}: residual {worst:e}");
        let m = &sol.market;
        let (lo, hi) = sol.range();
        let mut prev = f64::INFINITY;
        for i in 0..=2000 {
            let p = sol.rule.price(m, lo + (hi - lo) * i as f64 / 2000.0);
            assert!(p < prev, "{label}: not decreasing");
            prev = p;
        }
        let kink = sol.rule.kink;
        assert!(
            (sol.rule.price(m, kink) - sol.stockout_price()).abs() < 1e-9 * sol.stockout_price()
        );
    }
}

fn autocorrelation(xs: &[f64]) -> f64 {
    let n = xs.len() as f64;
    let mean = xs.iter().sum::<f64>() / n;
    let var = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>();
    xs.windows(2)
        .map(|w| (w[0] - mean) * (w[1] - mean))
        .sum::<f64>()
        / var
}

fn skewness(xs: &[f64]) -> f64 {
    let n = xs.len() as f64;
    let mean = xs.iter().sum::<f64>() / n;
    let m2 = xs.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n;
    let m3 = xs.iter().map(|x| (x - mean).powi(3)).sum::<f64>() / n;
    m3 / m2.powf(1.5)
}

#[test]
fn storage_makes_iid_harvest_prices_persistent_and_less_variable() {
    // Deaton and Laroque's setting (1992, 1996): harvests i.i.d., supply (almost) fixed, linear
    // demand. Confirmed (Deaton and Laroque 1996, abstract): speculation "can substantially increase
    // autocorrelation for prices that are weakly autocorrelated in its absence". From memory (Deaton
    // and Laroque 1992, section 4; Williams and Wright 1991, ch. 4): storage lowers the price
    // variance and leaves the price distribution skewed to the right.
    let base = [
        ("supply.elasticity", toml::Value::Float(0.001)),
        ("storers.storage_cost", toml::Value::Float(0.0)),
    ];
    let stored = example_with(&base);
    let mut none = base.to_vec();
    none[1] = ("storers.storage_cost", toml::Value::Float(1e5));
    let unstored = example_with(&none);
    let moments = |s: &Scenario| {
        let eq = storage::solve(s, &PolicySpec::none(), &SolveOptions::default()).unwrap();
        let path = simulate(&eq, &s.shocks, 7, 0, 0.0, 20_200);
        let prices: Vec<f64> = path[200..].iter().map(|r| r.price).collect();
        let n = prices.len() as f64;
        let mean = prices.iter().sum::<f64>() / n;
        let sd = (prices.iter().map(|p| (p - mean).powi(2)).sum::<f64>() / n).sqrt();
        (autocorrelation(&prices), sd / mean, skewness(&prices))
    };
    let (ac0, cv0, _) = moments(&unstored);
    let (ac1, cv1, sk1) = moments(&stored);
    assert!(ac0.abs() < 0.03, "no storage: autocorrelation {ac0}"); // i.i.d., sampling sd ≈ 0.007
    assert!(ac1 > 0.2, "with storage: autocorrelation {ac1}");
    assert!(cv1 < 0.9 * cv0, "cv {cv1} vs {cv0}");
    assert!(sk1 > 0.3, "skewness {sk1}");
}

#[test]
fn a_band_reserve_crowds_out_part_of_private_storage() {
    // A public buffer stock displaces private stocks, but less than one for one (Miranda and
    // Helmberger 1988, qualitatively; Wright and Williams 1982).
    let s = example_with(&[]);
    let ind = storage::storage_indicators(&s, &band_policy(195.0, 230.0, 60.0)).unwrap();
    let c = ind.crowding_out.expect("the agency holds stock");
    assert!(c > 0.0 && c < 1.0, "crowding-out {c}");
    assert!(ind.public_stock_mean > 1.0);
    assert!(ind.private_stock_mean < ind.private_stock_mean_without_policy);
    // two-state accuracy on the default grids (150 × 16) with the breakpoint-splitting quadrature:
    // Euler residual (Judd 1992) measured 9.1e-7 on this linear-demand market (docs/storage.md)
    assert!(ind.euler_residual_max < 2e-6, "{}", ind.euler_residual_max);
    // no policy: no public stock and no crowding-out figure
    let none = storage::storage_indicators(&s, &PolicySpec::none()).unwrap();
    assert_eq!(none.public_stock_mean, 0.0);
    assert!(none.crowding_out.is_none());
}

#[test]
fn the_band_holds_inside_the_equilibrium() {
    // Market-clearing identity z + g = D(P) + x + G and the band rule, at every simulated period
    // (definition of the band rule in INTERFACE.md; accounting identity).
    let s = example_with(&[]);
    let eq = storage::solve(
        &s,
        &band_policy(195.0, 230.0, 60.0),
        &SolveOptions::default(),
    )
    .unwrap();
    let path = simulate(&eq, &s.shocks, 3, 0, 20.0, 2000);
    let (a, b) = linear_demand();
    let mut prev_public = 20.0;
    for r in &path {
        let carried = 0.98 * prev_public;
        assert!((r.public_stock - (carried + r.purchases - r.releases)).abs() < 1e-9);
        assert!(
            (r.consumption - (a + b * r.price)).abs() < 1e-6 * r.consumption,
            "{r:?}"
        );
        if r.purchases > 1e-9 {
            assert!(r.price <= 195.0 + 1e-6, "bought at {}", r.price);
        }
        if r.releases > 1e-9 {
            assert!(r.price >= 230.0 - 1e-6, "sold at {}", r.price);
        }
        assert!(r.public_stock <= 60.0 + 1e-9);
        prev_public = r.public_stock;
    }
}

#[test]
fn a_rotating_reserve_releases_its_share_inside_the_equilibrium() {
    // Share rule (engine semantics, src/policies/stock_share.rs): unless the band bought, at least
    // share·carried is released, never pushing the price below buy_below.
    let s = example_with(&[]);
    let text = "[policy]\nname = \"rot\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\n\
                capacity = 60.0\ninitial = 30.0\nloss_rate = 0.02\nrelease = \"share\"\nshare = 0.25\n";
    let p = policy_from_table("rot.toml", parse_toml("rot.toml", text).unwrap()).unwrap();
    let eq = storage::solve(&s, &p, &SolveOptions::default()).unwrap();
    let path = simulate(&eq, &s.shocks, 3, 0, 30.0, 2000);
    let mut prev = 30.0;
    let mut rotated = 0;
    for r in &path {
        let carried = 0.98 * prev;
        if r.purchases <= 1e-9 {
            let released_share = r.public_stock <= 0.75 * carried + 1e-7;
            let held_at_floor = (r.price - 195.0).abs() < 1e-6;
            assert!(released_share || held_at_floor, "{r:?} carried {carried}");
            rotated += usize::from(r.releases > 1e-9 && r.price < 230.0 - 1e-6);
        }
        prev = r.public_stock;
    }
    assert!(
        rotated > 100,
        "rotation inside the band happened {rotated} times"
    );
    let ind = storage::storage_indicators(&s, &p).unwrap();
    let c = ind.crowding_out.unwrap();
    assert!(c > 0.0 && c < 1.0, "crowding-out {c}");
    // Euler residual (Judd 1992) of the two-state solve: measured 6.9e-8 on this market
    assert!(ind.euler_residual_max < 1e-6, "{}", ind.euler_residual_max);
}

#[test]
fn storage_periods_become_engine_records_with_the_fiscal_identity() {
    // INTERFACE.md: fiscal cost = P·X − P·R + storage_cost·S + financing + handling + deficiency
    // payments; stock S_t = (1 − loss)·S_{t−1} + X_t − R_t (accounting identities).
    let s = example_with(&[]);
    let text = "[policy]\nname = \"band\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\n\
                capacity = 60.0\ninitial = 20.0\nstorage_cost = 6.0\nloss_rate = 0.02\n\
                financing_rate = 0.04\nhandling_cost = 2.0\nrelease = \"band\"\n";
    let p = policy_from_table("b.toml", parse_toml("b.toml", text).unwrap()).unwrap();
    let solved = storage::SolvedStorage::new(&s, &p).unwrap();
    let path = solved.path(4, 300);
    let records = solved.records(4, 300);
    assert_eq!(path.len(), records.len());
    let mut prev = 20.0;
    let (mut bought, mut sold) = (0, 0);
    for (r, e) in path.iter().zip(&records) {
        assert_eq!(
            (r.price, r.harvest, r.public_stock),
            (e.price, e.harvest, e.stock)
        );
        let fiscal = e.price * e.purchases - e.price * e.releases
            + 6.0 * e.stock
            + 0.04 * e.price * e.stock
            + 2.0 * (e.purchases + e.releases);
        assert!((e.fiscal_cost - fiscal).abs() < 1e-9 * (1.0 + fiscal.abs()));
        assert!((e.stock - (0.98 * prev + e.purchases - e.releases)).abs() < 1e-9);
        bought += usize::from(e.acted().contains("stock-buy"));
        sold += usize::from(e.acted().contains("stock-sell"));
        prev = e.stock;
    }
    assert!(bought > 10 && sold > 10, "bought {bought}, sold {sold}");
    // the one-call helper simulates the file's periods
    let one = storage::storage_records(&s, &p, 4).unwrap();
    assert_eq!(one.len(), s.run.periods);
    assert_eq!(one[..5], records[..5]);
}

#[test]
fn bad_storage_inputs_are_named() {
    let s = example_with(&[
        ("storers.interest_rate", toml::Value::Float(0.0)),
        ("storers.loss_rate", toml::Value::Float(0.0)),
    ]);
    let e = storage::solve(&s, &PolicySpec::none(), &SolveOptions::default()).unwrap_err();
    assert!(matches!(e, StorageError::NoCarryingCost { .. }));
    assert!(e.to_string().contains("storers.interest_rate"));
    let text = "[policy]\nname = \"x\"\n[stock]\nbuy_below = 190.0\nsell_above = 235.0\n\
                capacity = 80.0\n[expectations]\nrule = \"adaptive\"\nweight = 0.5\n";
    let p = policy_from_table("tr.toml", parse_toml("tr.toml", text).unwrap()).unwrap();
    let e = storage::solve(&example_with(&[]), &p, &SolveOptions::default()).unwrap_err();
    assert!(e.to_string().contains("tr.toml: expectations.rule"), "{e}");
}

#[test]
fn deficiency_payments_raise_planting_to_the_expected_producer_price() {
    // Without storage, rational farmers under an announced deficiency payment plant
    // q = S(E[max(D⁻¹(q·Y), F)]) (expected producer price; definition of the payment in INTERFACE.md).
    // Reference: the same fixed point solved here by bisection with a 20 001-point midpoint rule over
    // the normal density instead of Gauss–Hermite (common practice, no source).
    let s = example_with(&[("storers.storage_cost", toml::Value::Float(1e5))]);
    let text = "[policy]\nname = \"dp\"\n[floor]\nprice = 200.0\ninstrument = \"deficiency-payment\"\nannounced = true\n";
    let p = policy_from_table("dp.toml", parse_toml("dp.toml", text).unwrap()).unwrap();
    let eq = storage::solve(&s, &p, &SolveOptions::default()).unwrap();
    let q = eq.planted_at(0.0, 0.0);
    let (a, b) = linear_demand();
    let (c, d) = (480.0 - 0.2 * 480.0, 0.2 * 480.0 / 210.0); // supply calibrated at (210, 480), ε = 0.2
    let sigma = (1.0f64 + 0.12 * 0.12).ln().sqrt();
    let expected_producer = |q: f64| {
        let n = 20_001;
        let h = 16.0 / n as f64;
        (0..n)
            .map(|i| {
                let z = -8.0 + (i as f64 + 0.5) * h;
                let y = (sigma * z - 0.5 * sigma * sigma).exp();
                let p = ((q * y - a) / b).max(0.0).max(200.0);
                p * (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt() * h
            })
            .sum::<f64>()
    };
    let (mut lo, mut hi) = (400.0, 600.0);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if mid - (c + d * expected_producer(mid)) < 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    assert!((q - lo).abs() < 2e-3 * lo, "planted {q} vs reference {lo}");
    assert!(q > 480.5, "the floor must raise planting: {q}");
    let path = simulate(&eq, &s.shocks, 5, 0, 0.0, 500);
    for r in &path {
        assert!(r.producer_price >= 200.0 - 1e-12 && r.producer_price >= r.price);
        let gap = (200.0 - r.price).max(0.0);
        assert!(
            (r.deficiency_payments - gap * r.harvest).abs() < 1e-9 * (1.0 + r.deficiency_payments)
        );
    }
}

#[test]
fn storage_verb_prints_the_interface_json() {
    let out = Command::cargo_bin("furrow")
        .unwrap()
        .args(["storage", EXAMPLE, "--format", "json"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert!(v["euler_residual_max"].as_f64().unwrap() < 1e-6);
    assert!(v["iterations"].as_u64().unwrap() > 0);
    let stockout = v["stockout_price"].as_f64().unwrap();
    let grid = v["grid"].as_array().unwrap();
    assert!(grid.len() > 10);
    for row in grid {
        for key in ["availability", "price", "private_stock", "planted"] {
            assert!(row[key].is_f64(), "{key}");
        }
        // storers hold stock exactly when the price is below the stockout price
        let held = row["private_stock"].as_f64().unwrap() > 0.0;
        assert_eq!(held, row["price"].as_f64().unwrap() < stockout, "{row}");
    }
    // a market without [storers] is bad input (exit 2) and the message names the section
    Command::cargo_bin("furrow")
        .unwrap()
        .args(["storage", "examples/veldmark.toml"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("[storers]"));
}

#[test]
fn storage_verb_solves_with_a_band_policy() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("band.toml");
    std::fs::write(
        &path,
        "[policy]\nname = \"Band\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"band\"\n",
    )
    .unwrap();
    let out = Command::cargo_bin("furrow")
        .unwrap()
        .args([
            "storage",
            EXAMPLE,
            "--policy",
            path.to_str().unwrap(),
            "--format",
            "csv",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    assert!(text.starts_with("availability,public_stock,price,private_stock,planted"));
    // one simulated path with the solved rules
    let out = Command::cargo_bin("furrow")
        .unwrap()
        .args([
            "storage",
            EXAMPLE,
            "--policy",
            path.to_str().unwrap(),
            "--path",
        ])
        .args(["--periods", "12", "--format", "json"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    let rows = v.as_array().unwrap();
    assert_eq!(rows.len(), 12);
    for r in rows {
        let (x, g) = (
            r["private_stock"].as_f64().unwrap(),
            r["public_stock"].as_f64().unwrap(),
        );
        assert!(x >= 0.0 && (0.0..=60.0 + 1e-9).contains(&g), "{r}");
    }
}

#[test]
fn a_target_reserve_converges_and_keeps_its_books() {
    // Target rule (engine semantics, src/policies/stock_target.rs): the band first; inside the band
    // trade toward the target, restocking never above the band's middle and run-down sales never
    // below it. Stock balance S_t = (1 − loss)·S_{t−1} + X_t − R_t and INTERFACE.md's fiscal cost
    // (accounting identities); crowding-out in [0, 1] (Miranda and Helmberger 1988, qualitatively).
    let s = example_with(&[]);
    let text = "[policy]\nname = \"target\"\n[stock]\nbuy_below = 190.0\nsell_above = 235.0\n\
                capacity = 80.0\ninitial = 10.0\nstorage_cost = 6.0\nloss_rate = 0.02\n\
                financing_rate = 0.04\nhandling_cost = 2.0\nrelease = \"target\"\n\
                target = 40.0\nspeed = 0.5\n";
    let p = policy_from_table("t.toml", parse_toml("t.toml", text).unwrap()).unwrap();
    let o = SolveOptions::default();
    let eq = storage::solve(&s, &p, &o).unwrap(); // an error if the iteration does not converge
    let Equilibrium::Public(ref sol) = eq else {
        panic!("a public stock expected")
    };
    assert!(sol.iterations < o.max_iterations && sol.change < o.tolerance);
    // Euler residual (Judd 1992): the expectation is integrated exactly across the rule's price jumps
    // (breakpoint-splitting quadrature), so the plain iteration converges, and the public-stock grid
    // is refined where the residual exceeds 1e-6 (7.2e-6 on this market without the refinement)
    let residual = sol.euler_residual_max(201, 9);
    assert!(residual < 1e-6, "Euler residual {residual}");
    let solved = storage::SolvedStorage::new(&s, &p).unwrap();
    let records = solved.records(2, 2000);
    let mut prev = 10.0;
    let (mut steered_in, mut steered_out) = (0, 0);
    let middle = 0.5 * (190.0 + 235.0);
    for e in &records {
        assert!((e.stock - (0.98 * prev + e.purchases - e.releases)).abs() < 1e-9);
        assert!(e.stock >= -1e-9 && e.stock <= 80.0 + 1e-9);
        let fiscal = e.price * e.purchases - e.price * e.releases
            + 6.0 * e.stock
            + 0.04 * e.price * e.stock
            + 2.0 * (e.purchases + e.releases);
        assert!((e.fiscal_cost - fiscal).abs() < 1e-9 * (1.0 + fiscal.abs()));
        if e.purchases > 1e-9 {
            assert!(e.price <= middle + 1e-6, "bought at {}", e.price);
            steered_in += usize::from(e.price > 190.0 + 1e-6);
        }
        if e.releases > 1e-9 {
            assert!(e.price >= middle - 1e-6, "sold at {}", e.price);
            steered_out += usize::from(e.price < 235.0 - 1e-6);
        }
        prev = e.stock;
    }
    assert!(
        steered_in > 20 && steered_out > 20,
        "target trades inside the band: {steered_in} in, {steered_out} out"
    );
    let ind = storage::storage_indicators(&s, &p).unwrap();
    let c = ind.crowding_out.expect("the agency holds stock");
    assert!((0.0..=1.0).contains(&c), "crowding-out {c}");
    eprintln!(
        "target: iterations {}, residual {residual:e}, crowding-out {c}",
        sol.iterations
    );
}

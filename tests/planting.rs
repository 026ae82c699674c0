//! Planting on expected revenue (`[supply] plants_on = "revenue"`): farmers plant on
//! E[P·Y]/E[Y] with Y the yield factor (Wright and Williams 1991), in the period engine and in the
//! storage equilibrium alike. Each check names its source; the closed forms are derived in the tests.

use furrow::engine::{Model, PeriodRecord, PeriodShock};
use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{apply_override, market_from_table, parse_toml, Scenario};
use furrow::storage::{self, Equilibrium, SolveOptions};

fn market(text: &str, plants_on: &str) -> Scenario {
    let text = text.replace(
        "[supply]\n",
        &format!("[supply]\nplants_on = \"{plants_on}\"\n"),
    );
    market_from_table("m.toml", parse_toml("m.toml", &text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    let t = parse_toml("p.toml", &format!("[policy]\nname = \"p\"\n{text}")).unwrap();
    policy_from_table("p.toml", t).unwrap()
}

/// A fixed, irregular sequence of standard normals (no generator needed: any sequence will do).
fn z(t: usize) -> f64 {
    let u = ((t as f64) * 0.618_033_988_749_895).fract();
    // a smooth map of (0, 1) onto about (−2.3, 2.3)
    (u - 0.5) * 4.6 * (1.0 - 0.3 * (u - 0.5).abs())
}

/// The lognormal yield factor with mean 1 and coefficient of variation `cv` at a standard normal.
fn yield_factor(cv: f64, s: f64) -> f64 {
    let sigma2 = (1.0 + cv * cv).ln();
    (sigma2.sqrt() * s - 0.5 * sigma2).exp()
}

fn run(s: &Scenario, p: &PolicySpec, shock: impl Fn(usize) -> PeriodShock) -> Vec<PeriodRecord> {
    Model::new(s, p).run(60, shock).unwrap()
}

const RULES: [&str; 6] = [
    "rule = \"naive\"",
    "rule = \"adaptive\"\nweight = 0.4",
    "rule = \"normal-price\"\nweight = 0.5\nwindow = 3",
    "rule = \"extrapolative\"\nweight = 0.3",
    "rule = \"trailing-mean\"\nwindow = 3",
    "rule = \"rational\"",
];

#[test]
fn without_yield_risk_revenue_is_the_price_bit_for_bit() {
    // Derived in the test: with Y = 1 in every season, E[P·Y]/E[Y] = E[P] and P_t·Y_t = P_t, so
    // every record must be the same to the last bit, for every expectation rule, with additive and
    // persistent demand shocks and with an announced deficiency-payment floor.
    let floor =
        policy("[floor]\nprice = 99.0\ninstrument = \"deficiency-payment\"\nannounced = true\n");
    for rule in RULES {
        let text = format!(
            "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n\
             [expectations]\n{rule}\n[run]\ninitial_price = 90.0\n\
             [shocks]\nsupply_sd = 4.0\ndemand_sd = 3.0\ndemand_persistence = 0.5\n"
        );
        let shock = |t: usize| PeriodShock {
            yield_factor: 1.0,
            supply: 4.0 * z(t),
            demand: 3.0 * z(t + 7),
            world_factor: 1.0,
        };
        for p in [PolicySpec::none(), floor.clone()] {
            let a = run(&market(&text, "price"), &p, shock);
            let b = run(&market(&text, "revenue"), &p, shock);
            assert_eq!(a, b, "{rule}");
        }
    }
}

#[test]
fn rational_planting_on_revenue_with_linear_curves_is_the_closed_form() {
    // Derived in the test (after Wright and Williams 1991): with demand Q = a + b·P, supply
    // Q = c + d·P^e and harvest S(P^e)·Y, E[Y] = 1, E[Y²] = 1 + cv², the price is
    // P(Y) = (S·Y − a)/b, so E[P·Y] = (S·E[Y²] − a)/b, and P^e = E[P·Y] gives
    // P^e = (c·E[Y²] − a)/(b − d·E[Y²]). On price instead, E[P] = (S − a)/b and P^e = P* (Muth 1961).
    let (a, b, c, d, cv) = (200.0, -1.0, 0.0, 1.0, 0.1);
    let text = format!(
        "[demand]\nintercept = {a:.1}\nslope = {b:.1}\n[supply]\nintercept = {c:.1}\nslope = {d:.1}\n\
         [expectations]\nrule = \"rational\"\n[shocks]\nyield_cv = {cv}\n"
    );
    let m2 = 1.0 + cv * cv;
    let closed = (c * m2 - a) / (b - d * m2);
    let shock = |t: usize| PeriodShock {
        yield_factor: yield_factor(cv, z(t)),
        supply: 0.0,
        demand: 0.0,
        world_factor: 1.0,
    };
    let revenue = run(&market(&text, "revenue"), &PolicySpec::none(), shock);
    let price = run(&market(&text, "price"), &PolicySpec::none(), shock);
    for (r, p) in revenue.iter().zip(&price) {
        assert!(
            (r.expected_price - closed).abs() < 1e-10 * closed,
            "{} against {closed}",
            r.expected_price
        );
        assert!((p.expected_price - 100.0).abs() < 1e-10 * 100.0);
    }
    // prices fall when yields rise, so revenue is worth less than price × mean yield: farmers plant
    // less on revenue (Wright and Williams 1991, the negative covariance of price and yield)
    assert!(closed < 100.0);
}

#[test]
fn rational_planting_on_revenue_with_constant_elasticity_demand_matches_a_quadrature() {
    // Demand Q = 100·(P/100)^(−1/2), so P = 100·(Q/100)^(−2); supply Q = P^e (both cross at 100).
    // Derived in the test: P·Y = 100·(S/100)^(−2)·Y^(−1), so P^e = E[P·Y] solves
    // (P^e/100)³ = E[Y^(−1)] = exp(σ²) (lognormal moments: E[Y^k] = exp(k(k − 1)σ²/2) with
    // E[Y] = 1; Aitchison and Brown 1957, from memory), P^e = 100·exp(σ²/3). The moment is checked
    // against an independent composite Simpson quadrature over the normal density of log Y.
    let cv: f64 = 0.2;
    let sigma2 = (1.0 + cv * cv).ln();
    let n = 20_000;
    let (lo, hi) = (-10.0, 10.0);
    let h = (hi - lo) / n as f64;
    let mut moment = 0.0;
    for i in 0..=n {
        let s = lo + h * i as f64;
        let weight = if i == 0 || i == n {
            1.0
        } else if i % 2 == 1 {
            4.0
        } else {
            2.0
        };
        let density = (-0.5 * s * s).exp() / (2.0 * std::f64::consts::PI).sqrt();
        moment += weight * density / yield_factor(cv, s);
    }
    moment *= h / 3.0;
    assert!((moment - sigma2.exp()).abs() < 1e-12, "{moment}");
    let closed = 100.0 * moment.powf(1.0 / 3.0);
    let text = format!(
        "[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\nat_quantity = 100.0\n\
         elasticity = -0.5\n[supply]\nintercept = 0.0\nslope = 1.0\n\
         [expectations]\nrule = \"rational\"\n[shocks]\nyield_cv = {cv}\n"
    );
    let shock = |t: usize| PeriodShock {
        yield_factor: yield_factor(cv, z(t)),
        supply: 0.0,
        demand: 0.0,
        world_factor: 1.0,
    };
    let path = run(&market(&text, "revenue"), &PolicySpec::none(), shock);
    for r in &path {
        // the engine's 15-node Gauss–Hermite rule integrates Y^(−1) to about 1e-12
        assert!(
            (r.expected_price - closed).abs() < 1e-9 * closed,
            "{} against {closed}",
            r.expected_price
        );
    }
}

#[test]
fn backward_looking_rules_on_revenue_read_the_revenue_equivalent_price() {
    // By definition (README, `plants_on`): a backward-looking rule on revenue forecasts
    // P_t·Y_t/E[Y] = P_t·Y_t. Naive: P^e_t = P_{t−1}·Y_{t−1}; Y_t is read back from the records as
    // harvest / planted (no additive shock). The first season plants on P_0.
    let cv = 0.15;
    let text = "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n\
                [expectations]\nrule = \"naive\"\n[run]\ninitial_price = 90.0\n[shocks]\nyield_cv = 0.15\n";
    let shock = |t: usize| PeriodShock {
        yield_factor: yield_factor(cv, z(t)),
        supply: 0.0,
        demand: 0.0,
        world_factor: 1.0,
    };
    let path = run(&market(text, "revenue"), &PolicySpec::none(), shock);
    assert_eq!(path[0].expected_price, 90.0);
    for w in path.windows(2) {
        let y = w[0].harvest / w[0].planted;
        let want = w[0].producer_price * y;
        assert!(
            (w[1].expected_price - want).abs() < 1e-12 * want,
            "period {}: {} against {want}",
            w[1].period,
            w[1].expected_price
        );
    }
    // adaptive with weight 1 is naive (Nerlove 1958, eq. 1 with λ = 1): the same path on revenue
    let adaptive = text.replace("rule = \"naive\"", "rule = \"adaptive\"\nweight = 1.0");
    let again = run(&market(&adaptive, "revenue"), &PolicySpec::none(), shock);
    for (a, b) in path.iter().zip(&again) {
        assert!((a.price - b.price).abs() < 1e-12 * a.price);
    }
}

const STORERS: &str = "examples/veldmark_storers.toml";

fn storers(overrides: &[(&str, toml::Value)]) -> Scenario {
    let text = std::fs::read_to_string(STORERS).unwrap();
    let mut table = parse_toml(STORERS, &text).unwrap();
    for (k, v) in overrides {
        apply_override(&mut table, k, v.clone()).unwrap();
    }
    market_from_table(STORERS, table).unwrap()
}

fn private(s: &Scenario) -> storage::PrivateSolution {
    match storage::solve(s, &PolicySpec::none(), &SolveOptions::default()).unwrap() {
        Equilibrium::Private(p) => p,
        Equilibrium::Public(_) => panic!("no public stock expected"),
    }
}

#[test]
fn engine_and_storage_agree_on_revenue_planting_when_storage_is_prohibitive() {
    // Nobody stores when k exceeds any attainable discounted price (Gustafson 1958's no-carryover
    // case), so the storage equilibrium is the period engine's rational market, and on revenue
    // both plant on the closed form of the linear market above (derived in
    // `rational_planting_on_revenue_with_linear_curves_is_the_closed_form`), with the demo's
    // calibration: 480 kt at 210 crowns, demand elasticity −0.25, supply elasticity 0.2. The yield
    // cv is 4 % so that no quadrature node's harvest reaches the demand intercept.
    let cv = 0.04;
    let s = storers(&[
        ("demand.form", toml::Value::String("linear".into())),
        ("storers.storage_cost", toml::Value::Float(1e5)),
        ("shocks.yield_cv", toml::Value::Float(cv)),
        ("supply.plants_on", toml::Value::String("revenue".into())),
    ]);
    let (b, d) = (-0.25 * 480.0 / 210.0, 0.2 * 480.0 / 210.0);
    let (a, c) = (480.0 - b * 210.0, 480.0 - d * 210.0);
    let m2 = 1.0 + cv * cv;
    let closed = (c * m2 - a) / (b - d * m2);
    let planted = c + d * closed;
    let sol = private(&s);
    assert_eq!(sol.stockout_price(), 0.0);
    for z in [400.0, 480.0, 560.0] {
        let row = sol.row(z);
        assert_eq!(row.private_stock, 0.0);
        // (the continuous-shock quadrature integrates E[Y²] to about 1e-10 relative)
        assert!(
            (row.planted - planted).abs() < 1e-7,
            "{z}: {} against {planted}",
            row.planted
        );
    }
    let shock = |t: usize| PeriodShock {
        yield_factor: yield_factor(cv, z(t)),
        supply: 0.0,
        demand: 0.0,
        world_factor: 1.0,
    };
    let path = Model::new(&s, &PolicySpec::none()).run(20, shock).unwrap();
    for r in &path {
        assert!((r.expected_price - closed).abs() < 1e-9 * closed);
        assert!((r.planted - planted).abs() < 1e-7);
    }
    // and the storage model's simulated records plant the same
    let solved = storage::SolvedStorage::new(&s, &PolicySpec::none()).unwrap();
    for r in solved.records(0, 20) {
        assert!(
            (r.planted - planted).abs() < 1e-7,
            "{} against {planted}",
            r.planted
        );
        assert!((r.expected_price - closed).abs() < 1e-9 * closed);
    }
}

#[test]
fn storage_without_yield_risk_plants_the_same_on_revenue_and_on_price() {
    // Derived in the test: Y = 1 at every node, so E[max(P', F)·Y] = E[max(P', F)] term by term;
    // the solved equilibria must be identical to the last bit (the additive shock keeps storers busy).
    let base = [
        ("shocks.yield_cv", toml::Value::Float(0.0)),
        ("shocks.supply_sd", toml::Value::Float(40.0)),
    ];
    let on = |word: &str| {
        let mut o = base.to_vec();
        o.push(("supply.plants_on", toml::Value::String(word.into())));
        storers(&o)
    };
    let a = private(&on("price"));
    let b = private(&on("revenue"));
    assert!(a.stockout_price() > 0.0);
    assert_eq!(a.grid(41), b.grid(41));
    assert_eq!(a.stockout_price(), b.stockout_price());
}

#[test]
fn storage_on_revenue_solves_accurately_and_plants_less_than_on_price() {
    // With yield risk, prices and yields move against each other, so revenue is worth less than
    // price × mean yield and farmers plant less at the same carried stock (Wright and Williams 1991).
    // Accuracy: the Euler residual (Judd 1992) over the states the paths reach stays below 1e-6.
    let price = private(&storers(&[]));
    let revenue = private(&storers(&[(
        "supply.plants_on",
        toml::Value::String("revenue".into()),
    )]));
    assert!(revenue.residual < 1e-6, "{}", revenue.residual);
    for x in [0.0, 10.0, 40.0] {
        assert!(
            revenue.planted_at(x) < price.planted_at(x),
            "{x}: {} against {}",
            revenue.planted_at(x),
            price.planted_at(x)
        );
    }
}

#[test]
fn plants_on_takes_price_or_revenue_only() {
    let text = "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\nplants_on = \"profit\"\n";
    let err = market_from_table("m.toml", parse_toml("m.toml", text).unwrap())
        .unwrap_err()
        .to_string();
    assert!(err.contains("m.toml"), "{err}");
    assert!(err.contains("supply.plants_on"), "{err}");
    assert!(err.contains("\"profit\""), "{err}");
    assert!(err.contains("\"revenue\""), "{err}");
    // the key belongs to [supply] only
    let text = "[demand]\nintercept = 120.0\nslope = -0.8\nplants_on = \"revenue\"\n[supply]\nintercept = -10.0\nslope = 0.5\n";
    let err = parse_toml("m.toml", text)
        .and_then(|t| market_from_table("m.toml", t))
        .unwrap_err()
        .to_string();
    assert!(err.contains("demand.plants_on"), "{err}");
}

//! Policy rules written once: every registered rule answers every behaviour the program asks of it,
//! the period engine and the storage equilibrium decide alike on the same states, and the consumer
//! price ceiling (added as one rule file) against closed forms.

mod common;

use common::{bin, linear_market, policy};
use furrow::engine::{Model, PeriodShock};
use furrow::policies::file::is_policy_section;
use furrow::policies::PolicySpec;
use furrow::policies::{self, Clearing, SECTIONS};
use furrow::scenario;
use furrow::stability::{self, regimes, Setup};
use furrow::storage::agency::{self, decide, Decision, StoragePlan};
use furrow::sweep::apply::{Base, Target};

fn veldmark() -> scenario::Scenario {
    scenario::load_market(&format!(
        "{}/examples/veldmark.toml",
        env!("CARGO_MANIFEST_DIR")
    ))
    .unwrap()
}

/// The Veldmark market with a border (world price 210, trade costs 20 each way), for the rules that
/// act only on a market that trades.
fn veldmark_trading() -> scenario::Scenario {
    let path = format!("{}/examples/veldmark.toml", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap()
        + "\n[trade]\nworld_price = 210.0\nimport_cost = 20.0\nexport_cost = 20.0\n";
    scenario::market_from_str(&path, &text).unwrap()
}

/// Every variant of every registered rule, as a policy file.
fn every_example() -> Vec<(&'static str, PolicySpec)> {
    let mut out = Vec::new();
    for s in SECTIONS {
        assert!(!s.examples.is_empty(), "[{}] has no example", s.name);
        for text in s.examples {
            out.push((s.name, policy(text)));
        }
    }
    out
}

#[test]
fn every_registered_rule_answers_every_behaviour() {
    let closed = veldmark();
    let trading = veldmark_trading();
    let sections: Vec<&str> = SECTIONS.iter().map(|s| s.name).collect();
    assert!(sections.contains(&"ceiling"), "{sections:?}");
    for (name, p) in every_example() {
        // border measures act only where the market trades, and defend no price of their own
        // unless a variable levy sets a target
        let border = name == "border";
        let market = if border { &trading } else { &closed };
        let what = format!("[{name}] {}", p.rules[0].describe());
        assert_eq!(p.rules.len(), 1, "{what}");
        let rule = &p.rules[0];
        assert_eq!(rule.section(), name);
        // schema: every key has a type, every numeric key a range; --vary sends them to the policy
        let section = policies::rule::section(name).unwrap();
        let base = Base::new("m.toml", toml::Table::new(), None);
        for key in section.keys {
            let numeric = !matches!(
                key.kind,
                scenario::raw::ValueType::Text | scenario::raw::ValueType::Bool
            );
            assert_eq!(numeric, key.range.is_some(), "{what}: {}", key.name);
            let dotted = format!("{name}.{}", key.name);
            if let Some(r) = key.range {
                assert_eq!(r.key, dotted);
            }
            assert_eq!(base.target(&dotted), Target::Policy, "{dotted}");
        }
        assert!(is_policy_section(name));
        // period engine: at least one period action, and the policy intervenes
        let compiled = policies::compile(&p);
        assert!(
            !compiled.rules.is_empty() || compiled.border != furrow::trade::BorderMeasures::FREE,
            "{what}: no period action"
        );
        assert!(p.intervenes());
        // storage: the rule changes the agency's plan
        let mut plan = StoragePlan::default();
        if compiled.border.public_import_above.is_some() {
            // state trading is outside the storage model: refused, naming the key
            let e = rule.storage(&mut plan).unwrap_err();
            assert!(e.contains("border.public_import_above"), "{what}: {e}");
        } else {
            rule.storage(&mut plan).unwrap();
            assert_ne!(plan, StoragePlan::default(), "{what}: storage ignores it");
        }
        // stability: the rule adds at least one regime besides the free market
        let setup = Setup::new(market, &p);
        let free = stability::free_price(&setup).unwrap();
        let cases = regimes::regimes(&setup, free, "kt").unwrap();
        assert!(
            cases.iter().any(|c| c.name != "free market"),
            "{what}: no regime of its own"
        );
        // description: a line, a reference price, and its table rows under its section's labels
        assert!(!rule.describe().is_empty());
        let levy = compiled.border.import_price_target.is_some();
        if !border || levy {
            assert!(rule.reference_price() > 0.0, "{what}");
            assert!(!rule.price_lines().is_empty(), "{what}: no price line");
        }
        let labels: Vec<&str> = rule.rows().iter().map(|r| r.label).collect();
        let absent: Vec<&str> = section.absent.iter().map(|(l, _)| *l).collect();
        assert_eq!(labels, absent, "{what}");
        // its check against the market it runs on
        policies::file::policy_for_market(market, &p).unwrap();
        if border {
            // and it is refused on a closed market, naming its section
            let e = policies::file::policy_for_market(&closed, &p).unwrap_err();
            assert!(e.to_string().contains("[border]"), "{e}");
        }
    }
}

/// The engine's period decision and the storage model's decision (`storage::agency::decide`) on the
/// same state: harvest `q`, carried public stock `g`, linear demand, no private storers. Returns
/// (engine price, engine stock, storage price, storage stock).
fn both(p: &PolicySpec, q: f64, g: f64) -> (f64, f64, f64, f64) {
    let market = veldmark();
    let demand = market.market.demand;
    let compiled = policies::compile(p);
    let a = compiled.agency;
    let mut m = Clearing::new(&demand, 0.0, q, g, a.capacity, a.purchase_budget);
    for action in &compiled.rules {
        action.trade(&mut m);
    }
    let band = agency::band_of(p).unwrap().expect("a trading policy");
    // the price at end-of-period public stock G: consumption q + g − G
    let pg = |gg: f64| {
        (
            demand.price_at(q + g - gg),
            1.0 / demand.slope_at(demand.price_at(q + g - gg)),
        )
    };
    let (price, _, _, d) = decide(&band, g, &pg);
    let stock = match d {
        Decision::Stock(s) => s,
        Decision::AtPrice { price, .. } => q + g - demand.quantity(price),
    };
    (m.price(), m.stock(), price, stock)
}

#[test]
fn engine_and_storage_decide_alike_on_the_same_states() {
    // Both implement the rules' definitions (README "Policy rules and their order"); on a grid of
    // harvests and carried stocks they must give the same price and end-of-period stock.
    let policies = [
        "[floor]\nprice = 200.0\n[stock]\ncapacity = 60.0\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\npurchase_budget = 1500.0\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"target\"\ntarget = 30.0\nspeed = 0.5\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"drawdown\"\nshare = 0.25\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"rotate\"\nshare = 0.25\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\n[ceiling]\nprice = 220.0\ninstrument = \"release\"\n",
        "[floor]\nprice = 190.0\n[stock]\ncapacity = 80.0\n[ceiling]\nprice = 225.0\ninstrument = \"release\"\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\n[ceiling]\nprice = 235.0\ninstrument = \"consumer-subsidy\"\n",
    ];
    let mut checked = 0;
    for body in policies {
        let p = policy(body);
        for q in [
            380.0, 420.0, 450.0, 470.0, 480.0, 490.0, 510.0, 540.0, 600.0,
        ] {
            for g in [0.0, 5.0, 20.0, 35.0, 59.0] {
                let (pe, se, ps, ss) = both(&p, q, g);
                assert!(
                    (pe - ps).abs() <= 1e-7 * pe && (se - ss).abs() <= 1e-7 * (1.0 + se),
                    "{body} q={q} g={g}: engine ({pe}, {se}) vs storage ({ps}, {ss})"
                );
                checked += 1;
            }
        }
    }
    assert_eq!(checked, 9 * 9 * 5);
}

#[test]
fn a_ceiling_the_storage_model_cannot_represent_is_refused_by_name() {
    let p = policy(
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"target\"\ntarget = 30.0\n[ceiling]\nprice = 220.0\ninstrument = \"release\"\n",
    );
    let err = agency::band_of(&p).unwrap_err().to_string();
    assert!(err.contains("ceiling.price"), "{err}");
    // at or above sell_above it never acts, so any release rule is covered
    let p = policy(
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"target\"\ntarget = 30.0\n[ceiling]\nprice = 230.0\ninstrument = \"release\"\n",
    );
    assert_eq!(agency::band_of(&p).unwrap().unwrap().sell_above, 230.0);
}

#[test]
fn consumer_subsidy_pays_the_excess_on_consumption_in_closed_form() {
    // Linear cobweb with naive expectations (Ezekiel 1938): demand Q = a + bP, supply Q = c + dP_{t-1},
    // P_t = P* + (d/b)^t (P_0 − P*) with P* = (a − c)/(d − b). The subsidy does not change the path
    // (consumption is D(P_t)); the treasury pays (P_t − k)·D(P_t) when P_t > k; consumers' surplus at
    // the price they pay is (a + bP_t)²/(2|b|) + that payment (area under linear demand above P_t,
    // from memory). Fiscal identity: fiscal cost = payment; ΔCS − Δfiscal = 0 against the free market.
    let (a, b, c, d) = (120.0, -0.8, -10.0, 0.6);
    let market = linear_market(
        a,
        b,
        c,
        d,
        "[expectations]\nrule = \"naive\"\n[run]\nperiods = 30\ninitial_price = 110.0\n",
    );
    // P* = 130/1.4 ≈ 92.86: prices oscillate around it and exceed k every other period
    let k = 93.0;
    let p = policy(&format!(
        "[ceiling]\nprice = {k:?}\ninstrument = \"consumer-subsidy\"\n"
    ));
    let with = Model::new(&market, &p)
        .run(30, |_| PeriodShock::NONE)
        .unwrap();
    let free = Model::new(&market, &PolicySpec::none())
        .run(30, |_| PeriodShock::NONE)
        .unwrap();
    let star = (a - c) / (d - b);
    let mut paid_any = 0;
    for (t, (r, f)) in with.iter().zip(&free).enumerate() {
        let price = star + (d / b).powi(t as i32 + 1) * (110.0 - star);
        assert!((r.price - price).abs() < 1e-9, "t={t}");
        let consumed = a + b * price;
        let payment = if price > k {
            (price - k) * consumed
        } else {
            0.0
        };
        if payment > 0.0 {
            paid_any += 1;
        }
        assert!((r.consumer_payments - payment).abs() < 1e-9, "t={t}");
        assert!((r.fiscal_cost - payment).abs() < 1e-9, "t={t}");
        let cs = consumed * consumed / (2.0 * -b) + payment;
        assert!((r.consumer_surplus - cs).abs() < 1e-9, "t={t}");
        // a transfer: what consumers gain the treasury pays
        assert!(
            ((r.consumer_surplus - f.consumer_surplus) - (r.fiscal_cost - f.fiscal_cost)).abs()
                < 1e-9
        );
        assert_eq!(r.producer_price.to_bits(), f.producer_price.to_bits());
    }
    assert!(paid_any >= 5, "the test should exercise the payment");
}

#[test]
fn ceiling_release_sells_from_stock_down_to_the_ceiling_in_closed_form() {
    // With the price above the ceiling k, the agency sells R = D(k) − Q (at most its stock) so that
    // P = k (README, ceiling by release): Q_1 = c + d·P_0.
    let (a, b, c, d) = (120.0, -0.8, -10.0, 0.6);
    let market = linear_market(
        a,
        b,
        c,
        d,
        "[expectations]\nrule = \"naive\"\n[run]\nperiods = 3\ninitial_price = 70.0\n",
    );
    let k = 95.0;
    let p = policy(&format!(
        "[stock]\ninitial = 50.0\ncapacity = 50.0\n[ceiling]\nprice = {k:?}\ninstrument = \"release\"\n"
    ));
    let path = Model::new(&market, &p)
        .run(3, |_| PeriodShock::NONE)
        .unwrap();
    let q1 = c + d * 70.0; // 32: the free price would be (120 − 32)/0.8 = 110 > 95
    assert!((path[0].price - k).abs() < 1e-9);
    assert!((path[0].releases - (a + b * k - q1)).abs() < 1e-9);
    assert!((path[0].stock - (50.0 - (a + b * k - q1))).abs() < 1e-9);
    // period 2 plants on 95: Q = 47, free price (120 − 47)/0.8 = 91.25 < 95: no sale
    assert_eq!(path[1].releases, 0.0);
    assert!(path[0].acted().contains("ceiling-sell"));
}

#[test]
fn ceiling_regimes_in_stability() {
    // Veldmark's free steady state is 210. A ceiling below it by release: the stock runs out and the
    // free market holds; the defended ceiling pins the price (dP/dP^e = 0, eigenvalue 0). By
    // consumer subsidy: the free market's dynamics hold (payments do not feed back on planting), so
    // its spectral radius is the free market's, |S'/D'| for naive expectations (Ezekiel 1938).
    let market = veldmark();
    let free = stability::analyse(&market, &PolicySpec::none()).unwrap();
    let release = stability::analyse(
        &market,
        &policy("[ceiling]\nprice = 200.0\ninstrument = \"release\"\n"),
    )
    .unwrap();
    let names: Vec<&str> = release.regimes.iter().map(|r| r.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "ceiling stock empty (free market)",
            "ceiling defended by release"
        ]
    );
    assert!(release.regimes[1].spectral_radius.abs() < 1e-12);
    let subsidy = stability::analyse(
        &market,
        &policy("[ceiling]\nprice = 200.0\ninstrument = \"consumer-subsidy\"\n"),
    )
    .unwrap();
    assert_eq!(
        subsidy.regimes[0].name,
        "consumer subsidy paid (free market)"
    );
    assert!((subsidy.spectral_radius - free.spectral_radius).abs() < 1e-12);
    // elasticities 0.20 and −0.25 at the same point: |S'/D'| = 0.8
    assert!((free.spectral_radius - 0.8).abs() < 1e-9);
}

fn write(dir: &std::path::Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().to_string()
}

#[test]
fn the_ceiling_works_in_every_verb() {
    let dir = tempfile::tempdir().unwrap();
    let market = format!("{}/examples/veldmark.toml", env!("CARGO_MANIFEST_DIR"));
    let release = write(
        dir.path(),
        "ceiling.toml",
        "[policy]\nname = \"Ceiling 215\"\n[stock]\ninitial = 40.0\ncapacity = 60.0\n[ceiling]\nprice = 215.0\ninstrument = \"release\"\n",
    );
    let subsidy = write(
        dir.path(),
        "subsidy.toml",
        "[policy]\nname = \"Subsidy 215\"\n[ceiling]\nprice = 215.0\ninstrument = \"consumer-subsidy\"\n",
    );
    let out = bin().args(["check", &release]).output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{text}");
    assert!(text.contains("ceiling 215 by release from stock"), "{text}");
    let out = bin()
        .args(["run", &market, "--policy", &release, "--format", "csv"])
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{text}");
    // Veldmark starts at 240: period 2 plants on that price and the ceiling binds later
    assert!(
        text.contains("ceiling-sell") || text.lines().count() > 10,
        "{text}"
    );
    for args in [
        vec!["run", &market, "--policy", &subsidy, "--replications", "50"],
        vec![
            "compare",
            &market,
            &release,
            &subsidy,
            "--replications",
            "50",
        ],
        vec!["stability", &market, "--policy", &release],
        vec![
            "sweep",
            &market,
            "--policy",
            &subsidy,
            "--vary",
            "ceiling.price=200:230:4",
            "--format",
            "csv",
        ],
    ] {
        let out = bin().args(&args).output().unwrap();
        assert!(
            out.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(!text.contains("NaN") && !text.contains("inf"), "{text}");
    }
    // sweep: four ceiling prices, one row each
    let out = bin()
        .args([
            "sweep",
            &market,
            "--policy",
            &release,
            "--vary",
            "ceiling.price=200:230:4",
            "--format",
            "csv",
        ])
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(
        text.lines().filter(|l| !l.trim().is_empty()).count(),
        5,
        "{text}"
    );
    // a bad instrument is refused, naming the file, the key and the allowed values
    let bad = write(
        dir.path(),
        "bad.toml",
        "[policy]\n[ceiling]\nprice = 215.0\ninstrument = \"cap\"\n",
    );
    let out = bin().args(["check", &bad]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("ceiling.instrument") && err.contains("consumer-subsidy"),
        "{err}"
    );
}

#[test]
fn the_ceiling_in_the_storage_equilibrium() {
    // By definition (README, ceiling by release) a ceiling c below a band's sell_above sells down to
    // c while stock lasts: the solved equilibrium is that of the band with sell_above = c.
    let dir = tempfile::tempdir().unwrap();
    let market = format!(
        "{}/examples/veldmark_storers.toml",
        env!("CARGO_MANIFEST_DIR")
    );
    let stock = "[stock]\nbuy_below = 190.0\ncapacity = 60.0\ninitial = 20.0\n";
    let ceiling = write(
        dir.path(),
        "ceiling.toml",
        &format!("[policy]\nname = \"P\"\n{stock}sell_above = 250.0\n[ceiling]\nprice = 230.0\ninstrument = \"release\"\n"),
    );
    let band = write(
        dir.path(),
        "band.toml",
        &format!("[policy]\nname = \"P\"\n{stock}sell_above = 230.0\n"),
    );
    let solve = |policy: &str| {
        let out = bin()
            .args(["storage", &market, "--policy", policy, "--format", "json"])
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8(out.stdout).unwrap()
    };
    let (with_ceiling, with_band) = (solve(&ceiling), solve(&band));
    assert!(with_ceiling.contains("\"grid\""));
    assert_eq!(with_ceiling, with_band);
    // a consumer subsidy changes no decision; its payment is booked on the storage path's records:
    // fiscal cost = (P − c)·C when P > c (and nothing else: no agency)
    let subsidy = write(
        dir.path(),
        "subsidy.toml",
        "[policy]\nname = \"S\"\n[ceiling]\nprice = 215.0\ninstrument = \"consumer-subsidy\"\n",
    );
    let out = bin()
        .args([
            "run",
            &market,
            "--policy",
            &subsidy,
            "--replications",
            "1",
            "--format",
            "csv",
        ])
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let col = |name: &str| header.iter().position(|h| *h == name).unwrap();
    let (price, consumption, fiscal) = (col("price"), col("consumption"), col("fiscal_cost"));
    let mut paid = 0;
    for line in lines.filter(|l| !l.is_empty()) {
        let v: Vec<f64> = line
            .split(',')
            .map(|x| x.parse().unwrap_or(f64::NAN))
            .collect();
        let want = (v[price] - 215.0).max(0.0) * v[consumption];
        assert!((v[fiscal] - want).abs() <= 1e-6 * (1.0 + want), "{line}");
        if want > 0.0 {
            paid += 1;
        }
    }
    assert!(paid > 0, "{text}");
}

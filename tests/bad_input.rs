//! A generated corpus of valid and broken input files: the library never panics, every broken file
//! gets an error naming the file and the key, and the binary exits 2 with that message.

mod common;

use furrow::policies::file::policy_from_str;
use furrow::scenario::market_from_str;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

const MARKET: &str = r#"[market]
name = "Corpus"
quantity_unit = "kt"
price_unit = "per t"

[demand]
form = "linear"
intercept = 120.0
slope = -0.8

[supply]
form = "linear"
intercept = -10.0
slope = 0.5

[expectations]
rule = "adaptive"
weight = 0.5

[run]
periods = 12
initial_price = 90.0
replications = 1
seed = 3
discount_rate = 0.05
terminal_stock = "market"

[shocks]
yield_cv = 0.1
supply_sd = 1.0
demand_sd = 1.0
demand_persistence = 0.2
"#;

const POLICY: &str = r#"[policy]
name = "Corpus band"

[floor]
price = 95.0
instrument = "purchase"
announced = true

[stock]
buy_below = 96.0
sell_above = 110.0
capacity = 30.0
initial = 5.0
storage_cost = 2.0
loss_rate = 0.02
purchase_budget = 5000.0
financing_rate = 0.03
handling_cost = 1.0
release = "band"
"#;

/// Values that break most keys: wrong types, out of range, non-finite, absurd.
const BAD_VALUES: &[&str] = &[
    "-1.0",
    "0",
    "-1e9",
    "1e300",
    "\"text\"",
    "true",
    "[1, 2]",
    "nan",
    "inf",
    "-inf",
    "2.0",
    "-0.5",
    "1.0",
    "{ a = 1 }",
    "1e-320",
];

/// (key line prefix, key) pairs that appear in the base files.
fn keys(base: &str) -> Vec<(String, String)> {
    let mut section = String::new();
    let mut out = Vec::new();
    for line in base.lines() {
        let l = line.trim();
        if l.starts_with('[') {
            section = l.trim_matches(|c| c == '[' || c == ']').to_string();
        } else if let Some((k, _)) = l.split_once('=') {
            out.push((section.clone(), k.trim().to_string()));
        }
    }
    out
}

fn replace_value(base: &str, section: &str, key: &str, value: &str) -> String {
    let mut cur = String::new();
    base.lines()
        .map(|line| {
            let l = line.trim();
            if l.starts_with('[') {
                cur = l.trim_matches(|c| c == '[' || c == ']').to_string();
            }
            match l.split_once('=') {
                Some((k, _)) if cur == section && k.trim() == key => format!("{key} = {value}"),
                _ => line.to_string(),
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
}

fn typo(rng: &mut ChaCha8Rng, key: &str) -> String {
    let mut chars: Vec<char> = key.chars().collect();
    let i = rng.random_range(0..chars.len());
    match rng.random_range(0..3) {
        0 => {
            chars.remove(i);
        }
        1 => chars.insert(i, 'x'),
        _ => {
            let j = (i + 1) % chars.len();
            chars.swap(i, j);
        }
    }
    let t: String = chars.into_iter().collect();
    if t == key {
        format!("{key}z")
    } else {
        t
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Expect {
    /// Must be an error naming this key (or at least its section).
    Names,
    /// Anything but a panic (a truncated or scrambled file).
    NoPanic,
}

/// One generated case: (is policy, text, key it is about, expectation).
fn case(rng: &mut ChaCha8Rng) -> (bool, String, String, Expect) {
    let policy = rng.random_bool(0.4);
    let base = if policy { POLICY } else { MARKET };
    let ks = keys(base);
    let (section, key) = ks[rng.random_range(0..ks.len())].clone();
    let dotted = format!("{section}.{key}");
    match rng.random_range(0..5) {
        0 | 1 => {
            let v = BAD_VALUES[rng.random_range(0..BAD_VALUES.len())];
            (
                policy,
                replace_value(base, &section, &key, v),
                dotted,
                Expect::Names,
            )
        }
        2 => {
            let t = typo(rng, &key);
            let text = base
                .lines()
                .map(|l| {
                    if l.trim_start().starts_with(&format!("{key} =")) {
                        l.replacen(&key, &t, 1)
                    } else {
                        l.to_string()
                    }
                })
                .collect::<Vec<_>>()
                .join("\n");
            (policy, text, t, Expect::Names)
        }
        3 => {
            // truncate at a random byte (on a char boundary)
            let mut cut = rng.random_range(0..base.len());
            while !base.is_char_boundary(cut) {
                cut -= 1;
            }
            (
                policy,
                base[..cut].to_string(),
                String::new(),
                Expect::NoPanic,
            )
        }
        _ => {
            // scramble: insert random punctuation at a random place
            let junk = ["=", "[", "]]", "\"", "#", "{", ",", "\u{0}", "é", "\n[x]\n"];
            let mut at = rng.random_range(0..base.len());
            while !base.is_char_boundary(at) {
                at -= 1;
            }
            let j = junk[rng.random_range(0..junk.len())];
            (
                policy,
                format!("{}{}{}", &base[..at], j, &base[at..]),
                String::new(),
                Expect::NoPanic,
            )
        }
    }
}

fn check_one(policy: bool, text: &str) -> Result<(), String> {
    let file = if policy {
        "corpus-policy.toml"
    } else {
        "corpus-market.toml"
    };
    let result = std::panic::catch_unwind(|| {
        if policy {
            policy_from_str(file, text)
                .map(|_| ())
                .map_err(|e| e.to_string())
        } else {
            market_from_str(file, text)
                .map(|s| {
                    // a valid market must also simulate without panicking
                    let model =
                        furrow::engine::Model::new(&s, &furrow::policies::PolicySpec::none());
                    let _ = model.run(s.run.periods.min(50), |_| furrow::engine::PeriodShock::NONE);
                })
                .map_err(|e| e.to_string())
        }
    });
    match result {
        Ok(r) => r,
        Err(_) => panic!("panicked on input:\n{text}"),
    }
}

#[test]
fn generated_corpus_never_panics_and_names_the_key() {
    let mut rng = ChaCha8Rng::seed_from_u64(20261201);
    let mut broken = 0;
    let mut valid = 0;
    for _ in 0..10_000 {
        let (policy, text, key, expect) = case(&mut rng);
        match check_one(policy, &text) {
            Ok(()) => valid += 1,
            Err(msg) => {
                broken += 1;
                let file = if policy {
                    "corpus-policy.toml"
                } else {
                    "corpus-market.toml"
                };
                assert!(msg.starts_with(file), "message must name the file: {msg}");
                if expect == Expect::Names {
                    let section = key.split('.').next().unwrap_or("");
                    let short = key.rsplit('.').next().unwrap_or("");
                    assert!(
                        msg.contains(&key) || msg.contains(short) || msg.contains(section),
                        "message must name `{key}`: {msg}"
                    );
                }
                assert!(!msg.contains("NaN") && !msg.contains("panicked"), "{msg}");
            }
        }
    }
    // the corpus must really hold both kinds
    assert!(broken > 5_000, "{broken} broken");
    assert!(valid > 200, "{valid} valid");
}

#[test]
fn valid_variations_are_accepted() {
    // the unmutated files and a few valid edits load
    assert!(market_from_str("m.toml", MARKET).is_ok());
    assert!(policy_from_str("p.toml", POLICY).is_ok());
    let edited = replace_value(MARKET, "expectations", "weight", "1");
    assert!(
        market_from_str("m.toml", &edited).is_ok(),
        "integers are numbers"
    );
}

#[test]
fn binary_exits_2_and_names_the_key_on_a_sample() {
    let dir = tempfile::tempdir().unwrap();
    let market_path = dir.path().join("market.toml");
    std::fs::write(&market_path, MARKET).unwrap();
    let mut rng = ChaCha8Rng::seed_from_u64(99);
    let mut checked = 0;
    while checked < 150 {
        let (policy, text, key, expect) = case(&mut rng);
        if expect != Expect::Names || check_one(policy, &text).is_ok() {
            continue;
        }
        checked += 1;
        let path = dir.path().join("case.toml");
        std::fs::write(&path, &text).unwrap();
        let mut cmd = common::bin();
        if policy {
            cmd.args([
                "run",
                market_path.to_str().unwrap(),
                "--policy",
                path.to_str().unwrap(),
            ]);
        } else {
            cmd.args(["run", path.to_str().unwrap()]);
        }
        let out = cmd.output().unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{key}: {stderr}");
        let short = key.rsplit('.').next().unwrap_or("");
        let section = key.split('.').next().unwrap_or("");
        assert!(
            stderr.contains(short) || stderr.contains(section),
            "{key}: {stderr}"
        );
        assert!(!stderr.contains("panicked"), "{stderr}");
        assert!(out.stdout.is_empty(), "no data on failure");
    }
}

// ---- regression tests for the hardening issue (items 3 to 7) -------------------------------------

use common::{bin, linear_market, policy, stdout_of};
use furrow::policies::file::policy_for_market;
use furrow::policies::file::{all_ranges, range_of};
use furrow::scenario::raw::ValueType;
use furrow::scenario::schema;

fn tmp(dir: &tempfile::TempDir, name: &str, text: &str) -> String {
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().to_string()
}

#[test]
fn broken_policy_files_are_errors_not_no_intervention() {
    // empty, blank, comment-only, cut-short and [policy]-less files once gave a column identical to
    // the baseline under the file's name
    let cases = [
        ("empty.toml", "", "empty"),
        ("blank.toml", "  \n\t\n", "empty"),
        (
            "comments.toml",
            "# support price\n# to be decided\n",
            "only comments",
        ),
        (
            "nopolicy.toml",
            "[floor]\nprice = 95.0\n",
            "[floor] but no [policy]",
        ),
        (
            "cut.toml",
            "[policy]\nname = \"cut\"\n[stock]\n",
            "[stock] section is empty",
        ),
        (
            "cut2.toml",
            "[policy]\nname = \"cut\"\n[floor]\nprice = ",
            "TOML parse error",
        ),
    ];
    let dir = tempfile::tempdir().unwrap();
    let market = tmp(&dir, "m.toml", MARKET);
    for (name, text, what) in cases {
        let err = policy_from_str(name, text).unwrap_err().to_string();
        assert!(err.starts_with(name), "{err}");
        assert!(err.contains(what), "{name}: {err}");
        // every verb refuses it with exit 2, naming the file
        let path = tmp(&dir, name, text);
        for verb in [
            vec!["compare", &market, &path],
            vec!["run", &market, "--policy", &path],
            vec!["stability", &market, "--policy", &path],
            vec!["check", &path],
        ] {
            let out = bin().args(&verb).output().unwrap();
            let msg = String::from_utf8_lossy(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{verb:?}: {msg}");
            assert!(msg.contains(name), "{verb:?}: {msg}");
        }
    }
    // a file with only [policy] stays the market left alone
    assert!(policy_from_str("none.toml", "[policy]\nname = \"none\"\n")
        .unwrap()
        .is_none());
}

#[test]
fn check_decides_the_kind_by_sections_and_validates_like_every_verb() {
    let dir = tempfile::tempdir().unwrap();
    // a policy file without [policy] is read as a policy (it has [floor]) and refused for the
    // missing [policy], not as a market file with an unknown [floor]
    let p = tmp(&dir, "floor.toml", "[floor]\nprice = 95.0\n");
    let out = bin().args(["check", &p]).output().unwrap();
    let msg = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2));
    assert!(msg.contains("[policy]: missing"), "{msg}");
    assert!(!msg.contains("unknown key"), "{msg}");
    // check says which kind it took and why
    let m = tmp(&dir, "m.toml", MARKET);
    let pol = tmp(&dir, "p.toml", POLICY);
    let out = stdout_of(["check", &m, &pol, "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v[0]["kind"], "market");
    assert!(v[0]["read_as"].as_str().unwrap().contains("[demand]"));
    assert_eq!(v[1]["kind"], "policy");
    assert!(v[1]["read_as"].as_str().unwrap().contains("[policy]"));
    // sections of both kinds in one file
    let both = tmp(
        &dir,
        "both.toml",
        &format!("{MARKET}\n[floor]\nprice = 95.0\n"),
    );
    let out = bin().args(["check", &both]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("mixes market sections"));
    // storers with persistent demand shocks: refused by check exactly as by the simulation verbs
    let storers = MARKET
        .replace("rule = \"adaptive\"\nweight = 0.5", "rule = \"rational\"")
        .replace("demand_persistence = 0.2", "demand_persistence = 0.5")
        + "\n[storers]\nstorage_cost = 1.0\n";
    let err = market_from_str("st.toml", &storers)
        .unwrap_err()
        .to_string();
    assert!(err.contains("shocks.demand_persistence"), "{err}");
    let st = tmp(&dir, "st.toml", &storers);
    for verb in [vec!["check", &st], vec!["run", &st], vec!["storage", &st]] {
        let out = bin().args(&verb).output().unwrap();
        let msg = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{verb:?}: {msg}");
        assert!(msg.contains("shocks.demand_persistence"), "{verb:?}: {msg}");
    }
}

/// A policy that makes farmers backward-looking on a market with private storers is refused by
/// every verb alike, naming the policy file and the key (the storage model needs rational farmers).
#[test]
fn a_backward_looking_override_on_a_storers_market_is_refused_by_every_verb() {
    let m = "examples/veldmark_storers.toml";
    let p = "policies/band_cautious_farmers.toml";
    let mut messages = Vec::new();
    for verb in [
        vec!["check", m, p],
        vec!["run", m, "--policy", p],
        vec!["compare", m, p],
        vec!["storage", m, "--policy", p],
    ] {
        let out = bin().args(&verb).output().unwrap();
        let msg = String::from_utf8_lossy(&out.stderr).to_string();
        assert_eq!(out.status.code(), Some(2), "{verb:?}: {msg}");
        assert!(
            msg.contains(&format!("{p}: expectations.rule = \"adaptive\"")),
            "{verb:?}: {msg}"
        );
        messages.push(msg);
    }
    assert!(messages.windows(2).all(|w| w[0] == w[1]), "{messages:?}");
}

#[test]
fn purchase_floor_beyond_the_choke_price_is_refused_naming_the_largest_floor() {
    // Q_d = 120 − 0.8 P falls to zero at P = 150 (the choke price; by hand). At a purchase floor F
    // consumption is D(F), so F ≥ 150 asks the agency to buy more than the harvest.
    let m = linear_market(120.0, -0.8, -10.0, 0.5, "");
    for f in [150.0, 151.0, 1e6] {
        let p = policy(&format!("[floor]\nprice = {f:?}\n"));
        let err = policy_for_market(&m, &p).unwrap_err().to_string();
        assert!(err.starts_with("test-policy.toml: floor.price"), "{err}");
        assert!(err.contains("below 150"), "{err}");
    }
    let ok = policy("[floor]\nprice = 149.0\n");
    assert!(policy_for_market(&m, &ok).is_ok());
    // a deficiency payment does not buy: no such limit
    let pay = policy("[floor]\nprice = 160.0\ninstrument = \"deficiency-payment\"\n");
    assert!(policy_for_market(&m, &pay).is_ok());
    // the same for the band's buying edge
    let band = policy("[stock]\nbuy_below = 155.0\nsell_above = 170.0\n");
    let err = policy_for_market(&m, &band).unwrap_err().to_string();
    assert!(err.contains("stock.buy_below"), "{err}");
    // and through the binary, exit 2 before anything runs
    let dir = tempfile::tempdir().unwrap();
    let mk = tmp(
        &dir,
        "m.toml",
        "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n",
    );
    let pf = tmp(
        &dir,
        "high.toml",
        "[policy]\nname = \"high\"\n[floor]\nprice = 400.0\n",
    );
    for verb in [
        vec!["run", &mk, "--policy", &pf],
        vec!["compare", &mk, &pf],
        vec!["check", &mk, &pf],
    ] {
        let out = bin().args(&verb).output().unwrap();
        let msg = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{verb:?}: {msg}");
        assert!(
            msg.contains("high.toml: floor.price = 400"),
            "{verb:?}: {msg}"
        );
    }
}

#[test]
fn negative_consumption_is_divergence() {
    // a floor below the choke price, but a demand shock that leaves demand at the floor negative:
    // D(140) = 120 − 112 = 8, shock −20 → the agency would have to buy 12 more than the harvest
    let m = linear_market(120.0, -0.8, -10.0, 0.5, "[run]\ninitial_price = 100.0\n");
    let p = policy("[floor]\nprice = 140.0\n");
    let model = furrow::engine::Model::new(&m, &p);
    let mut sim = model.simulator();
    let shock = furrow::engine::PeriodShock {
        yield_factor: 1.0,
        supply: 0.0,
        demand: -20.0,
        world_factor: 1.0,
    };
    let err = sim.step(&shock).unwrap_err();
    assert_eq!(err.period, 1);
    assert!(err.reason.contains("consumption"), "{}", err.reason);
}

#[test]
fn check_prints_unlimited_not_inf() {
    let text = stdout_of([
        "check",
        &format!(
            "{}/policies/support_purchase.toml",
            env!("CARGO_MANIFEST_DIR")
        ),
        &format!("{}/policies/price_band.toml", env!("CARGO_MANIFEST_DIR")),
    ]);
    assert!(text.contains("unlimited"), "{text}");
    assert!(!text.contains("inf"), "{text}");
}

#[test]
fn every_numeric_key_has_a_finite_range_and_the_readme_lists_it() {
    // the schema's numeric keys and the range table are the same set
    let mut numeric = Vec::new();
    for schema in [schema::market(), furrow::policies::file::schema()] {
        for (section, keys) in &schema {
            for (key, kind) in keys {
                if matches!(
                    kind,
                    ValueType::Number
                        | ValueType::Integer
                        | ValueType::Numbers
                        | ValueType::NumberOrNumbers
                ) {
                    let dotted = format!("{section}.{key}");
                    assert!(range_of(&dotted).is_some(), "{dotted} has no range");
                    numeric.push(dotted);
                }
            }
        }
    }
    for r in all_ranges() {
        assert!(
            numeric.iter().any(|k| k == r.key),
            "{} is not in a schema",
            r.key
        );
        assert!(r.lo.is_finite() && r.hi.is_finite(), "{}", r.key);
    }
    // the README's table, row for row
    let readme =
        std::fs::read_to_string(format!("{}/README.md", env!("CARGO_MANIFEST_DIR"))).unwrap();
    let want: Vec<String> = all_ranges()
        .iter()
        .map(|r| format!("| `{}` | {} | {} |", r.key, r.describe(), r.note))
        .collect();
    let got: Vec<String> = readme
        .lines()
        .skip_while(|l| !l.starts_with("### Input ranges"))
        .skip_while(|l| !l.starts_with("| `"))
        .take_while(|l| l.starts_with("| `"))
        .map(|l| l.trim_end().to_string())
        .collect();
    assert_eq!(got, want, "README table should read:\n{}", want.join("\n"));
}

#[test]
fn values_beyond_the_ranges_are_refused_in_short_form() {
    // costs, capacities, sell_above and budgets once took up to 1.8e308 and overflowed the tables
    for (key, value) in [
        ("storage_cost", "1e300"),
        ("capacity", "1e300"),
        ("sell_above", "1e300"),
        ("handling_cost", "1e300"),
        ("purchase_budget", "1e300"),
    ] {
        let text = replace_value(POLICY, "stock", key, value);
        let err = policy_from_str("p.toml", &text).unwrap_err().to_string();
        assert!(err.contains(&format!("stock.{key} = 1e+300")), "{err}");
        assert!(err.len() < 200, "{err}");
    }
    // a 400-character number is echoed in at most 12 characters
    let long = format!("1{}.0", "0".repeat(300));
    let text = replace_value(POLICY, "floor", "price", &long);
    let err = policy_from_str("p.toml", &text).unwrap_err().to_string();
    assert!(err.contains("floor.price = 1e+300:"), "{err}");
    // control characters in key names are escaped
    let text = POLICY.replace("[floor]\n", "[floor]\n\"pri\\nce\\u0007\" = 1.0\n");
    let err = policy_from_str("p.toml", &text).unwrap_err().to_string();
    assert!(!err.chars().any(|c| c.is_control()), "{err:?}");
    assert!(err.contains("pri\\nce\\u{7}"), "{err}");
}

#[test]
fn advice_names_keys_that_are_in_the_file() {
    // point-calibrated linear curves that do not cross: demand through (100, 50) with elasticity
    // −0.5 (intercept 75), supply through (100, 200) with 0.1 (intercept 180; by hand)
    let text = "[demand]\nat_price = 100.0\nat_quantity = 50.0\nelasticity = -0.5\n\
                [supply]\nat_price = 100.0\nat_quantity = 200.0\nelasticity = 0.1\n";
    let err = market_from_str("pt.toml", text).unwrap_err().to_string();
    assert!(err.contains("demand.at_quantity"), "{err}");
    assert!(!err.contains("demand.intercept"), "{err}");
    // with intercepts given, the intercepts are named
    let text =
        "[demand]\nintercept = 10.0\nslope = -1.0\n[supply]\nintercept = 20.0\nslope = 1.0\n";
    let err = market_from_str("ic.toml", text).unwrap_err().to_string();
    assert!(err.contains("demand.intercept"), "{err}");
}

#[test]
fn stability_failure_caused_by_the_policy_names_the_policy_file() {
    // a deficiency floor at 400 makes farmers grow more than demand takes at any positive price
    let dir = tempfile::tempdir().unwrap();
    let mk = tmp(
        &dir,
        "mk.toml",
        "[demand]\nintercept = 150.0\nslope = -0.5\n[supply]\nintercept = -10.0\nslope = 0.5\n",
    );
    let pf = tmp(
        &dir,
        "pay.toml",
        "[policy]\nname = \"pay\"\n[floor]\nprice = 400.0\ninstrument = \"deficiency-payment\"\n",
    );
    let out = bin()
        .args(["stability", &mk, "--policy", &pf])
        .output()
        .unwrap();
    let msg = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{msg}");
    assert!(msg.contains("pay.toml: no steady state"), "{msg}");
    assert!(!msg.contains("stable"), "{msg}");
}

#[test]
fn small_supply_elasticity_leaves_no_blank_welfare_cell() {
    // constant-elasticity supply with e = 0.005: the cost integral once overflowed to inf and the
    // producer-surplus cells came out blank
    let text = "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = -0.25\n\
                [supply]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = 0.005\n\
                [run]\nperiods = 5\ninitial_price = 230.0\n";
    let m = market_from_str("ce.toml", text).unwrap();
    let recs = furrow::engine::Model::new(&m, &furrow::policies::PolicySpec::none())
        .run(5, |_| furrow::engine::PeriodShock::NONE)
        .unwrap();
    for r in &recs {
        assert!(r.producer_surplus.is_finite(), "{r:?}");
        // surplus = revenue − cost with cost = Q·P^e·e/(1 + e) ≤ revenue at P = P^e (by hand)
        assert!(r.producer_surplus > -1e-9 * r.harvest * r.price, "{r:?}");
    }
}

#[test]
fn check_of_a_pair_refuses_what_run_refuses_with_the_same_message() {
    // each file is valid alone; together the band buys above the choke price 150 of Q = 120 − 0.8 P
    // (by hand). One validation serves every verb: `check MARKET POLICY` (either order) refuses the
    // pair with exactly the message `run` and `compare` give.
    let dir = tempfile::tempdir().unwrap();
    let mk = tmp(
        &dir,
        "m.toml",
        "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n",
    );
    let pf = tmp(
        &dir,
        "band.toml",
        "[policy]\nname = \"band\"\n[stock]\nbuy_below = 155.0\nsell_above = 170.0\n",
    );
    for alone in [&mk, &pf] {
        assert!(bin()
            .args(["check", alone])
            .output()
            .unwrap()
            .status
            .success());
    }
    let refusal = |args: &[&str]| {
        let out = bin().args(args).output().unwrap();
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        String::from_utf8(out.stderr).unwrap()
    };
    let run = refusal(&["run", &mk, "--policy", &pf]);
    assert!(run.contains("band.toml: stock.buy_below"), "{run}");
    assert_eq!(refusal(&["compare", &mk, &pf]), run);
    assert_eq!(refusal(&["check", &mk, &pf]), run);
    assert_eq!(refusal(&["check", &pf, &mk]), run);
}

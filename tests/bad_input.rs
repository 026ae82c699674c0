//! A generated corpus of valid and broken input files: the library never panics, every broken file
//! gets an error naming the file and the key, and the binary exits 2 with that message.

mod common;

use furrow::scenario::{market_from_str, policy_from_str};
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
                        furrow::engine::Model::new(&s, &furrow::scenario::PolicySpec::none());
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

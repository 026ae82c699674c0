//! The fuzz corpus: 20 000 generated market and policy files from a fixed seed — valid, near a
//! boundary, broken, truncated, empty, comment-only, with unknown keys, huge or tiny numbers, control
//! characters in keys — run in-process through every verb (the command line's own code, parsed and
//! dispatched here, output captured): `check`, `run`, `stability`, `compare` (few replications),
//! `sweep` (a three-point grid) and, on a small subset, `storage`.
//!
//! Asserted (rules of the project, common practice, no source): no panic; a failure maps to exit code
//! 1 or 2; every error message names the file at fault; accepted input never gives a blank, NaN or
//! infinite cell in a CSV table or a JSON value, nor a negative price or quantity in a path, nor a
//! steady state shown at a price ≤ 0; `check` of the pair refuses exactly what `run` and `compare`
//! refuse as bad input, with the same message; a policy file without `[policy]` is an error. No
//! violation is tolerated.

#[allow(dead_code, unused_imports)]
#[path = "../src/cli/mod.rs"]
mod cli;

use std::collections::BTreeMap;
use std::path::Path;
use std::sync::Mutex;

use clap::Parser;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

/// The corpus seed (fixed: the same 20 000 files on every run).
const SEED: u64 = 0x00f0_2202_6120_0012;
/// Market files, and as many policy files (paired with them).
const PAIRS: usize = 10_000;
/// Every `STORAGE_EVERY`-th pair has a storers market, run through `check`, `stability` and
/// `storage` only (each solve takes about a second).
const STORAGE_EVERY: usize = 2000;

/// What went wrong, by kind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Kind {
    Panic,
    ExitCode,
    FileNotNamed,
    WrongFileNamed,
    BlankCell,
    InfInCheck,
    NegativeState,
    CheckDisagrees,
    BrokenPolicyAccepted,
    UnparsableOutput,
}

#[derive(Debug, Clone)]
struct Violation {
    kind: Kind,
    what: String,
}

// ---------------------------------------------------------------------------------------------
// The generator.

/// How a generated file was made.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Class {
    Valid,
    NearBoundary,
    Broken,
    Truncated,
    Empty,
    CommentOnly,
    UnknownKey,
    Extreme,
    ControlKey,
    /// A policy file without its `[policy]` section.
    NoPolicySection,
}

impl Class {
    /// A file of this class must be refused (the others may be accepted or refused).
    fn must_fail(self) -> bool {
        matches!(
            self,
            Class::Broken | Class::Empty | Class::CommentOnly | Class::NoPolicySection
        )
    }
}

/// A market's steady state and the numbers its paired policy is built from.
#[derive(Debug, Clone, Copy)]
struct Anchor {
    price: f64,
    quantity: f64,
}

fn pick<'a, T>(rng: &mut ChaCha8Rng, xs: &'a [T]) -> &'a T {
    &xs[rng.random_range(0..xs.len())]
}

fn num(x: f64) -> String {
    format!("{x:?}")
}

/// A file as sections of (key, value text), in order.
type Sections = Vec<(String, Vec<(String, String)>)>;

fn to_text(s: &Sections) -> String {
    let mut t = String::new();
    for (name, keys) in s {
        t.push_str(&format!("[{name}]\n"));
        for (k, v) in keys {
            t.push_str(&format!("{k} = {v}\n"));
        }
        t.push('\n');
    }
    t
}

/// A valid market around a random steady state (P*, Q*) with elasticities e_d < 0 < e_s: each curve
/// linear through the point, constant-elasticity through it, or calibrated at it.
fn valid_market(rng: &mut ChaCha8Rng, storers: bool) -> (Sections, Anchor) {
    let p = rng.random_range(5.0..500.0f64);
    let q = rng.random_range(5.0..2000.0f64);
    let ed = -rng.random_range(0.1..1.5f64);
    let es = rng.random_range(0.05..1.2f64);
    let curve = |rng: &mut ChaCha8Rng, e: f64| -> Vec<(String, String)> {
        match rng.random_range(0..3) {
            0 => {
                let slope = e * q / p;
                vec![
                    ("form".into(), "\"linear\"".into()),
                    ("intercept".into(), num(q - slope * p)),
                    ("slope".into(), num(slope)),
                ]
            }
            1 => vec![
                ("form".into(), "\"constant-elasticity\"".into()),
                ("at_price".into(), num(p)),
                ("at_quantity".into(), num(q)),
                ("elasticity".into(), num(e)),
            ],
            _ => vec![
                ("form".into(), "\"linear\"".into()),
                ("at_price".into(), num(p)),
                ("at_quantity".into(), num(q)),
                ("elasticity".into(), num(e)),
            ],
        }
    };
    let mut s: Sections = vec![(
        "market".into(),
        vec![
            ("name".into(), "\"Fuzz market\"".into()),
            ("quantity_unit".into(), "\"kt\"".into()),
            ("price_unit".into(), "\"crowns per t\"".into()),
        ],
    )];
    s.push(("demand".into(), curve(rng, ed)));
    s.push(("supply".into(), curve(rng, es)));
    let rule = if storers {
        vec![("rule".into(), "\"rational\"".into())]
    } else {
        match rng.random_range(0..12) {
            0..=3 => vec![("rule".into(), "\"naive\"".into())],
            4..=5 => vec![
                ("rule".into(), "\"adaptive\"".into()),
                ("weight".into(), num(rng.random_range(0.05..1.0))),
            ],
            6 => vec![
                ("rule".into(), "\"normal-price\"".into()),
                ("weight".into(), num(rng.random_range(0.0..1.0))),
                ("normal_price".into(), num(p * rng.random_range(0.8..1.2))),
            ],
            7 => vec![
                ("rule".into(), "\"normal-price\"".into()),
                ("weight".into(), num(rng.random_range(0.0..1.0))),
                ("window".into(), rng.random_range(1..6).to_string()),
            ],
            8 => vec![
                ("rule".into(), "\"extrapolative\"".into()),
                ("weight".into(), num(rng.random_range(-0.9..0.9))),
            ],
            9..=10 => vec![
                ("rule".into(), "\"trailing-mean\"".into()),
                ("window".into(), rng.random_range(1..8).to_string()),
            ],
            _ => vec![("rule".into(), "\"rational\"".into())],
        }
    };
    s.push(("expectations".into(), rule));
    let mut run = vec![
        ("periods".into(), rng.random_range(1..50).to_string()),
        ("seed".into(), rng.random_range(0..1000u32).to_string()),
        ("discount_rate".into(), num(rng.random_range(0.0..0.2))),
    ];
    if rng.random_bool(0.6) {
        run.push(("initial_price".into(), num(p * rng.random_range(0.7..1.3))));
    }
    if rng.random_bool(0.2) {
        run.push(("risk_aversion".into(), num(rng.random_range(0.0..5.0))));
    }
    s.push(("run".into(), run));
    if storers || rng.random_bool(0.4) {
        let mut shocks = vec![("yield_cv".into(), num(rng.random_range(0.0..0.25)))];
        if !storers && rng.random_bool(0.5) {
            shocks.push(("demand_sd".into(), num(q * rng.random_range(0.0..0.05))));
            shocks.push((
                "demand_persistence".into(),
                num(rng.random_range(-0.8..0.8)),
            ));
        }
        if rng.random_bool(0.3) {
            shocks.push(("supply_sd".into(), num(q * rng.random_range(0.0..0.05))));
        }
        s.push(("shocks".into(), shocks));
    }
    if storers {
        s.push((
            "storers".into(),
            vec![
                ("storage_cost".into(), num(p * rng.random_range(0.0..0.05))),
                ("interest_rate".into(), num(rng.random_range(0.0..0.1))),
                ("loss_rate".into(), num(rng.random_range(0.0..0.05))),
            ],
        ));
    }
    (
        s,
        Anchor {
            price: p,
            quantity: q,
        },
    )
}

/// A valid policy for a market anchored at `a`.
fn valid_policy(rng: &mut ChaCha8Rng, a: Anchor) -> Sections {
    let mut s: Sections = vec![(
        "policy".into(),
        vec![("name".into(), "\"Fuzz policy\"".into())],
    )];
    let shape = rng.random_range(0..6);
    if shape == 0 || shape == 2 {
        s.push((
            "floor".into(),
            vec![
                ("price".into(), num(a.price * rng.random_range(0.6..1.1))),
                (
                    "instrument".into(),
                    pick(rng, &["\"purchase\"", "\"deficiency-payment\""]).to_string(),
                ),
                (
                    "announced".into(),
                    pick(rng, &["true", "false"]).to_string(),
                ),
            ],
        ));
    }
    if shape == 1 || shape == 2 || shape == 3 {
        let lo = a.price * rng.random_range(0.6..1.0);
        let hi = lo * rng.random_range(1.0..1.6);
        let cap = a.quantity * rng.random_range(0.05..1.0);
        let mut keys = vec![
            ("buy_below".into(), num(lo)),
            ("sell_above".into(), num(hi)),
            ("capacity".into(), num(cap)),
            ("initial".into(), num(cap * rng.random_range(0.0..1.0))),
            (
                "storage_cost".into(),
                num(a.price * rng.random_range(0.0..0.05)),
            ),
            ("loss_rate".into(), num(rng.random_range(0.0..0.1))),
        ];
        if rng.random_bool(0.3) {
            keys.push((
                "purchase_budget".into(),
                num(a.price * a.quantity * rng.random_range(0.01..0.5)),
            ));
        }
        if rng.random_bool(0.3) {
            keys.push(("financing_rate".into(), num(rng.random_range(0.0..0.1))));
            keys.push(("handling_cost".into(), num(rng.random_range(0.0..5.0))));
        }
        match rng.random_range(0..3) {
            0 => keys.push(("release".into(), "\"band\"".into())),
            1 => {
                keys.push(("release".into(), "\"target\"".into()));
                keys.push(("target".into(), num(cap * rng.random_range(0.0..1.0))));
                keys.push(("speed".into(), num(rng.random_range(0.05..1.0))));
            }
            _ => {
                keys.push(("release".into(), "\"share\"".into()));
                keys.push(("share".into(), num(rng.random_range(0.05..1.0))));
            }
        }
        s.push(("stock".into(), keys));
    }
    if shape == 4 {
        s.push((
            "expectations".into(),
            vec![
                ("rule".into(), "\"adaptive\"".into()),
                ("weight".into(), num(rng.random_range(0.05..1.0))),
            ],
        ));
    }
    s
}

const EDGE_VALUES: &[&str] = &[
    "1.0",
    "0.0",
    "-0.0",
    "1e-9",
    "0.999999999",
    "-0.999999999",
    "1",
    "0",
    "2.0",
    "1e6",
    "-1.0",
    "-1e3",
    "true",
    "\"\"",
    "\"abc\"",
];
const EXTREME_VALUES: &[&str] = &[
    "1e308",
    "-1e308",
    "1.7976931348623157e308",
    "1e-308",
    "5e-324",
    "-5e-324",
    "nan",
    "inf",
    "-inf",
    "1e300",
    "123456789012345678901234567890.0",
    "9223372036854775807",
];
/// Values of a type no generated key takes (every one is an error wherever it is put).
const BROKEN_VALUES: &[&str] = &["[1.0, 2.0]", "{ a = 1 }", "1979-05-27", "[]"];

/// Changes the value of one random key of `s`.
fn mutate_value(rng: &mut ChaCha8Rng, s: &mut Sections, values: &[&str]) {
    let candidates: Vec<(usize, usize)> = s
        .iter()
        .enumerate()
        .flat_map(|(i, (_, ks))| (0..ks.len()).map(move |j| (i, j)))
        .collect();
    if candidates.is_empty() {
        return;
    }
    let (i, j) = *pick(rng, &candidates);
    s[i].1[j].1 = pick(rng, values).to_string();
}

fn typo(rng: &mut ChaCha8Rng, key: &str) -> String {
    let mut chars: Vec<char> = key.chars().collect();
    let i = rng.random_range(0..chars.len());
    match rng.random_range(0..3) {
        0 => {
            chars.remove(i);
        }
        1 => chars.insert(i, 'q'),
        _ => chars.push('x'),
    }
    let t: String = chars.into_iter().collect();
    if t == key || t.is_empty() {
        format!("{key}zz")
    } else {
        t
    }
}

/// One generated file of the given kind from a valid one.
fn corrupt(rng: &mut ChaCha8Rng, mut s: Sections, policy: bool) -> (String, Class) {
    let class = match rng.random_range(0..100) {
        0..=29 => Class::Valid,
        30..=39 => Class::NearBoundary,
        40..=51 => Class::Broken,
        52..=61 => Class::Truncated,
        62..=64 => Class::Empty,
        65..=67 => Class::CommentOnly,
        68..=77 => Class::UnknownKey,
        78..=89 => Class::Extreme,
        90..=94 => Class::ControlKey,
        _ if policy => Class::NoPolicySection,
        _ => Class::Valid,
    };
    let text = match class {
        Class::Valid => to_text(&s),
        Class::NearBoundary => {
            mutate_value(rng, &mut s, EDGE_VALUES);
            to_text(&s)
        }
        Class::Extreme => {
            mutate_value(rng, &mut s, EXTREME_VALUES);
            to_text(&s)
        }
        Class::Broken => {
            if rng.random_bool(0.3) && s.len() > 1 {
                // a required section goes missing
                let name = if policy { "policy" } else { "demand" };
                s.retain(|(n, _)| n != name);
            } else {
                mutate_value(rng, &mut s, BROKEN_VALUES);
            }
            to_text(&s)
        }
        Class::Truncated => {
            let full = to_text(&s);
            let mut cut = rng.random_range(0..full.len().max(1));
            while !full.is_char_boundary(cut) {
                cut -= 1;
            }
            full[..cut].to_string()
        }
        Class::Empty => pick(rng, &["", " \n\t\n", "\n\n"]).to_string(),
        Class::CommentOnly => "# nothing here yet\n# [demand]\n#   slope = -1\n".to_string(),
        Class::UnknownKey => {
            let i = rng.random_range(0..s.len());
            let key = if s[i].1.is_empty() || rng.random_bool(0.3) {
                "colour".to_string()
            } else {
                let k = s[i].1[rng.random_range(0..s[i].1.len())].0.clone();
                typo(rng, &k)
            };
            s[i].1.push((key, "1.0".into()));
            to_text(&s)
        }
        Class::ControlKey => {
            let i = rng.random_range(0..s.len());
            let ctl = pick(
                rng,
                &["\\u0007", "\\u001b[31m", "\\n", "\\t", "\\u0000", "\\r"],
            );
            s[i].1.push((format!("\"sl{ctl}ope\""), "1.0".into()));
            to_text(&s)
        }
        Class::NoPolicySection => {
            s.retain(|(n, _)| n != "policy");
            to_text(&s)
        }
    };
    (text, class)
}

struct Pair {
    index: usize,
    market: String,
    market_class: Class,
    policy: String,
    policy_class: Class,
    /// A dotted key of the market file to sweep, and its grid.
    vary: String,
    storers: bool,
}

fn generate(dir: &Path) -> Vec<Pair> {
    let mut rng = ChaCha8Rng::seed_from_u64(SEED);
    let mut pairs = Vec::with_capacity(PAIRS);
    for index in 0..PAIRS {
        let storers = index % STORAGE_EVERY == 0;
        let (m, anchor) = valid_market(&mut rng, storers);
        // storers: the equilibrium with a public stock takes minutes to solve; the fuzz keeps to the
        // market without intervention there
        let p = if storers {
            vec![(
                "policy".to_string(),
                vec![("name".to_string(), "\"Fuzz policy\"".to_string())],
            )]
        } else {
            valid_policy(&mut rng, anchor)
        };
        let vary = {
            let has = |sec: &str, key: &str| {
                m.iter()
                    .any(|(n, ks)| n == sec && ks.iter().any(|(k, _)| k == key))
            };
            if has("expectations", "weight") {
                "expectations.weight=0.1:0.9:3".to_string()
            } else if has("supply", "slope") {
                let slope: f64 = m
                    .iter()
                    .find(|(n, _)| n == "supply")
                    .and_then(|(_, ks)| ks.iter().find(|(k, _)| k == "slope"))
                    .and_then(|(_, v)| v.parse().ok())
                    .unwrap_or(1.0);
                format!("supply.slope={}:{}:3", slope * 0.5, slope * 1.5)
            } else {
                "run.discount_rate=0.0:0.1:3".to_string()
            }
        };
        // one file of the pair is generated as it comes (valid or not), the other stays valid, so
        // that an error has one culprit and about half the pairs simulate
        let (mtext, mclass, ptext, pclass) = if storers {
            (to_text(&m), Class::Valid, to_text(&p), Class::Valid)
        } else if rng.random_bool(0.5) {
            let (t, c) = corrupt(&mut rng, m, false);
            (t, c, to_text(&p), Class::Valid)
        } else {
            let (t, c) = corrupt(&mut rng, p, true);
            (to_text(&m), Class::Valid, t, c)
        };
        let market = dir.join(format!("m{index:05}.toml"));
        let policy = dir.join(format!("p{index:05}.toml"));
        std::fs::write(&market, mtext).unwrap();
        std::fs::write(&policy, ptext).unwrap();
        pairs.push(Pair {
            index,
            market: market.to_string_lossy().to_string(),
            market_class: mclass,
            policy: policy.to_string_lossy().to_string(),
            policy_class: pclass,
            vary,
            storers,
        });
    }
    pairs
}

// ---------------------------------------------------------------------------------------------
// Running a verb in-process.

/// What a verb did: its output, or its error message and exit code.
enum Outcome {
    Ok(String),
    Failed { code: u8, message: String },
    Panicked(String),
}

fn invoke(args: &[&str]) -> Outcome {
    let mut argv = vec!["furrow"];
    argv.extend_from_slice(args);
    let parsed = match cli::Cli::try_parse_from(&argv) {
        Ok(c) => c,
        Err(e) => {
            return Outcome::Failed {
                code: 2,
                message: format!("usage: {e}"),
            }
        }
    };
    let (result, out) = furrow::output::capture_stdout(|| {
        std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| cli::dispatch(parsed)))
    });
    match result {
        Err(p) => Outcome::Panicked(
            p.downcast_ref::<String>()
                .cloned()
                .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default(),
        ),
        Ok(Ok(())) => Outcome::Ok(String::from_utf8_lossy(&out).to_string()),
        Ok(Err(e)) => Outcome::Failed {
            code: cli::exit_code(&e),
            message: format!("{e:#}"),
        },
    }
}

// ---------------------------------------------------------------------------------------------
// Checking what came out.

fn bad_cell(c: &str) -> bool {
    let t = c.trim();
    t.is_empty()
        || t.eq_ignore_ascii_case("nan")
        || t.eq_ignore_ascii_case("inf")
        || t.eq_ignore_ascii_case("-inf")
        || t.eq_ignore_ascii_case("infinity")
        || t.eq_ignore_ascii_case("n/a")
}

/// Rows of a CSV output (header first).
fn csv_rows(text: &str) -> Result<Vec<Vec<String>>, String> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(false)
        .from_reader(text.as_bytes());
    r.records()
        .map(|rec| {
            rec.map(|x| x.iter().map(String::from).collect())
                .map_err(|e| e.to_string())
        })
        .collect()
}

/// Blank or non-finite cells of a CSV table; `allowed(header, first cell)` exempts a documented one.
fn blank_cells(text: &str, allowed: impl Fn(&str, &str) -> bool) -> Result<Vec<String>, String> {
    let rows = csv_rows(text)?;
    let Some(header) = rows.first() else {
        return Err("no header row".into());
    };
    let mut bad = Vec::new();
    for row in &rows[1..] {
        for (h, c) in header.iter().zip(row) {
            if bad_cell(c) && !allowed(h, &row[0]) {
                bad.push(format!("{h}/{}: `{c}`", row[0]));
            }
        }
    }
    Ok(bad)
}

fn col(header: &[String], name: &str) -> Option<usize> {
    header.iter().position(|h| h == name)
}

struct Checker {
    violations: Mutex<Vec<Violation>>,
    accepted_runs: std::sync::atomic::AtomicUsize,
    calls: std::sync::atomic::AtomicUsize,
}

impl Checker {
    fn report(&self, kind: Kind, what: String) {
        self.violations
            .lock()
            .unwrap()
            .push(Violation { kind, what });
    }

    /// Runs one verb and checks the common rules; returns the output when it succeeded.
    fn verb(&self, pair: &Pair, verb: &[&str], at_fault: Option<&str>) -> Option<String> {
        self.verb_code(pair, verb, at_fault).ok()
    }

    /// [`Checker::verb`], with the exit code (101 for a panic) and message of a failure.
    fn verb_code(
        &self,
        pair: &Pair,
        verb: &[&str],
        at_fault: Option<&str>,
    ) -> Result<String, (u8, String)> {
        self.calls
            .fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        let label = format!("#{} `{}`", pair.index, verb.join(" "));
        match invoke(verb) {
            Outcome::Panicked(msg) => {
                self.report(Kind::Panic, format!("{label}: panicked: {msg}"));
                Err((101, msg))
            }
            Outcome::Failed { code, message } => {
                if code != 1 && code != 2 {
                    self.report(Kind::ExitCode, format!("{label}: exit code {code}"));
                }
                let names = |f: &str| message.contains(f);
                match at_fault {
                    Some(f) if !names(f) => {
                        let other = if f == pair.market {
                            &pair.policy
                        } else {
                            &pair.market
                        };
                        let kind = if names(other) {
                            Kind::WrongFileNamed
                        } else {
                            Kind::FileNotNamed
                        };
                        self.report(kind, format!("{label}: should name {f}: {message}"));
                    }
                    None if !names(&pair.market) && !names(&pair.policy) => {
                        self.report(
                            Kind::FileNotNamed,
                            format!("{label}: names neither file: {message}"),
                        );
                    }
                    _ => {}
                }
                Err((code, message))
            }
            Outcome::Ok(text) => Ok(text),
        }
    }
}

/// Runs every verb on one pair.
fn exercise(c: &Checker, pair: &Pair) {
    let (m, p) = (pair.market.as_str(), pair.policy.as_str());
    // check, each file alone (JSON: every number present and finite)
    let market_ok = check_one(c, pair, m);
    let policy_ok = check_one(c, pair, p);
    let policy_has_section = std::fs::read_to_string(p)
        .map(|t| t.lines().any(|l| l.trim() == "[policy]"))
        .unwrap_or(false);
    for (ok, class, file) in [
        (market_ok, pair.market_class, m),
        (policy_ok, pair.policy_class, p),
    ] {
        if ok && class.must_fail() {
            let kind = if file == p {
                Kind::BrokenPolicyAccepted
            } else {
                Kind::CheckDisagrees
            };
            c.report(
                kind,
                format!("#{}: check accepts a {class:?} file {file}", pair.index),
            );
        }
    }
    // which file an error must name: the one check refused (either when both or neither were)
    let at_fault = match (market_ok, policy_ok) {
        (false, true) => Some(m),
        (true, false) => Some(p),
        _ => None,
    };
    // check, the two files together: the policy is then also checked against the market, as every
    // verb does (one validation for every verb)
    let pair_check = (market_ok && policy_ok && !pair.storers).then(|| {
        c.calls.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        invoke(&["check", m, p, "--format", "json"])
    });
    let pair_refusal = match &pair_check {
        Some(Outcome::Failed { code, message }) => Some((*code, message.clone())),
        _ => None,
    };
    // a verb refuses bad input (exit 2) exactly when `check` refuses the pair, with its message
    let disagree = |c: &Checker, verb: &str, outcome: Result<(), (u8, &str)>| {
        if !(market_ok && policy_ok) {
            return;
        }
        let refused = match outcome {
            Err((2, message)) => Some(message),
            _ => None,
        };
        let what = match (&pair_refusal, refused) {
            (None, Some(message)) => {
                format!("check accepts the pair, {verb} refuses it: {message}")
            }
            (Some((_, message)), None) => {
                format!("check refuses the pair ({message}), {verb} does not refuse it")
            }
            (Some((_, want)), Some(got)) if want != got => {
                format!("check and {verb} refuse the pair differently: `{want}` vs `{got}`")
            }
            _ => return,
        };
        c.report(Kind::CheckDisagrees, format!("#{}: {what}", pair.index));
    };
    if pair.storers {
        // the storage equilibrium (and no other solve of it: each takes about a second)
        if let Some(text) = c.verb(
            pair,
            &[
                "storage", m, "--grid", "40", "--rows", "6", "--format", "csv",
            ],
            Some(m),
        ) {
            match blank_cells(&text, |_, _| false) {
                Ok(bad) if !bad.is_empty() => c.report(
                    Kind::BlankCell,
                    format!("#{} storage: {}", pair.index, bad.join(", ")),
                ),
                Err(e) => c.report(
                    Kind::UnparsableOutput,
                    format!("#{} storage: {e}", pair.index),
                ),
                _ => {}
            }
        }
        if let Some(text) = c.verb(pair, &["stability", m, "--format", "csv"], Some(m)) {
            check_stability(c, pair, &text);
        }
        return;
    }
    // run: the path as CSV
    let run = c.verb_code(
        pair,
        &["run", m, "--policy", p, "--format", "csv"],
        at_fault,
    );
    match &run {
        Ok(text) => {
            c.accepted_runs
                .fetch_add(1, std::sync::atomic::Ordering::Relaxed);
            if !policy_has_section {
                c.report(
                    Kind::BrokenPolicyAccepted,
                    format!("#{}: run accepts {p}, which has no [policy]", pair.index),
                );
            }
            check_path(c, pair, text);
            disagree(c, "run", Ok(()));
        }
        Err((code, message)) => disagree(c, "run", Err((*code, message))),
    }
    if run.is_err() && !(market_ok && policy_ok) {
        return; // bad input: every verb fails the same way at loading; the message was checked
    }
    // stability: CSV table, and the steady state it reports
    let stability = c.verb(
        pair,
        &["stability", m, "--policy", p, "--format", "csv"],
        at_fault,
    );
    if let Some(text) = &stability {
        check_stability(c, pair, text);
    }
    // compare with few replications
    let compare = c.verb_code(
        pair,
        &["compare", m, p, "--replications", "4", "--format", "csv"],
        at_fault,
    );
    match &compare {
        Ok(_) => disagree(c, "compare", Ok(())),
        Err((code, message)) => disagree(c, "compare", Err((*code, message))),
    }
    if let Ok(text) = compare {
        match blank_cells(&text, |_, row| {
            // documented: crowding-out and the private/public stock means exist only with storers
            // and a public stock; the floor, band and budget failure shares only with a floor, a
            // band or an annual budget (README, "null without one")
            let row = row.strip_suffix("_se").unwrap_or(row);
            // and the stability rows are null when `stability` has no answer for the pair
            (stability.is_none() && matches!(row, "spectral_radius" | "verdict"))
                || matches!(
                    row,
                    "crowding_out"
                        | "private_stock_mean"
                        | "public_stock_mean"
                        | "floor_failed_share"
                        | "band_failed_share"
                        | "budget_exceeded_share"
                        | "budget_ever_exceeded_share"
                )
        }) {
            Ok(bad) if !bad.is_empty() => c.report(
                Kind::BlankCell,
                format!("#{} compare: {}", pair.index, bad.join(", ")),
            ),
            Err(e) => c.report(
                Kind::UnparsableOutput,
                format!("#{} compare: {e}", pair.index),
            ),
            _ => {}
        }
    }
    // sweep over a three-point grid
    if let Some(text) = c.verb(
        pair,
        &[
            "sweep", m, "--policy", p, "--vary", &pair.vary, "--format", "csv",
        ],
        at_fault,
    ) {
        // an `invalid` grid point has no spectral radius (documented)
        let rows = csv_rows(&text).unwrap_or_default();
        let invalid_rows: Vec<String> = rows
            .iter()
            .filter(|r| r.last().is_some_and(|v| v == "invalid"))
            .map(|r| r[0].clone())
            .collect();
        match blank_cells(&text, |h, first| {
            h == "spectral_radius" && invalid_rows.iter().any(|r| r == first)
        }) {
            Ok(bad) if !bad.is_empty() => c.report(
                Kind::BlankCell,
                format!("#{} sweep: {}", pair.index, bad.join(", ")),
            ),
            Err(e) => c.report(
                Kind::UnparsableOutput,
                format!("#{} sweep: {e}", pair.index),
            ),
            _ => {}
        }
    }
}

/// `check FILE --format json`: on success every number is finite and no text shows `inf`/`NaN`.
fn check_one(c: &Checker, pair: &Pair, file: &str) -> bool {
    let Some(text) = c.verb(pair, &["check", file, "--format", "json"], Some(file)) else {
        return false;
    };
    match serde_json::from_str::<serde_json::Value>(&text) {
        Ok(v) => {
            let mut bad = Vec::new();
            walk_json(&v, "", &mut bad);
            for b in bad {
                let kind = if b.contains("summary") {
                    Kind::InfInCheck
                } else {
                    Kind::BlankCell
                };
                c.report(kind, format!("#{} check {file}: {b}", pair.index));
            }
        }
        Err(e) => c.report(
            Kind::UnparsableOutput,
            format!("#{} check {file}: {e}", pair.index),
        ),
    }
    true
}

/// Nulls (serde_json writes NaN and infinity as null) and texts naming a non-finite number.
fn walk_json(v: &serde_json::Value, at: &str, bad: &mut Vec<String>) {
    match v {
        serde_json::Value::Null => bad.push(format!("{at}: null")),
        serde_json::Value::String(s) => {
            let words: Vec<&str> = s
                .split(|ch: char| !ch.is_ascii_alphanumeric() && ch != '-' && ch != '.')
                .collect();
            if words.iter().any(|w| {
                let w = w.to_ascii_lowercase();
                w == "inf" || w == "-inf" || w == "nan" || w == "infinity"
            }) {
                bad.push(format!("{at}: `{s}`"));
            }
        }
        serde_json::Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                walk_json(x, &format!("{at}[{i}]"), bad);
            }
        }
        serde_json::Value::Object(o) => {
            for (k, x) in o {
                walk_json(x, &format!("{at}.{k}"), bad);
            }
        }
        _ => {}
    }
}

/// A `run` path: no blank cell; prices positive; quantities not negative (INTERFACE.md: prices and
/// quantities never go negative).
fn check_path(c: &Checker, pair: &Pair, text: &str) {
    let rows = match csv_rows(text) {
        Ok(r) if !r.is_empty() => r,
        Ok(_) => {
            return c.report(
                Kind::UnparsableOutput,
                format!("#{} run: empty", pair.index),
            )
        }
        Err(e) => return c.report(Kind::UnparsableOutput, format!("#{} run: {e}", pair.index)),
    };
    match blank_cells(text, |_, _| false) {
        Ok(bad) if !bad.is_empty() => c.report(
            Kind::BlankCell,
            format!("#{} run: {}", pair.index, bad.join(", ")),
        ),
        _ => {}
    }
    let h = &rows[0];
    for row in &rows[1..] {
        for (name, positive) in [
            ("price", true),
            ("producer_price", true),
            ("expected_price", true),
            ("harvest", false),
            ("consumption", false),
            ("stock", false),
        ] {
            let Some(i) = col(h, name) else { continue };
            let Ok(x) = row[i].parse::<f64>() else {
                continue;
            };
            // quantities may show rounding dust of the order of 1e-9 of the harvest
            let scale = col(h, "harvest")
                .and_then(|j| row[j].parse::<f64>().ok())
                .unwrap_or(1.0)
                .abs()
                .max(1.0);
            if (positive && x <= 0.0) || (!positive && x < -1e-9 * scale) {
                c.report(
                    Kind::NegativeState,
                    format!("#{} run: period {} {name} = {x}", pair.index, row[0]),
                );
                return;
            }
        }
    }
}

/// A stability table: no blank cell (`-` is the documented "none"), and no stable verdict at a
/// non-positive price.
fn check_stability(c: &Checker, pair: &Pair, text: &str) {
    match blank_cells(text, |_, _| false) {
        Ok(bad) if !bad.is_empty() => c.report(
            Kind::BlankCell,
            format!("#{} stability: {}", pair.index, bad.join(", ")),
        ),
        Err(e) => {
            return c.report(
                Kind::UnparsableOutput,
                format!("#{} stability: {e}", pair.index),
            )
        }
        _ => {}
    }
    let rows = csv_rows(text).unwrap_or_default();
    let Some(h) = rows.first() else { return };
    let (Some(at), Some(holds)) = (col(h, "at_price"), col(h, "holds")) else {
        return;
    };
    for row in &rows[1..] {
        if row[holds] == "yes" && row[at].parse::<f64>().is_ok_and(|x| x <= 0.0) {
            c.report(
                Kind::NegativeState,
                format!(
                    "#{} stability: steady state at price {}",
                    pair.index, row[at]
                ),
            );
        }
    }
}

#[test]
fn generated_files_through_every_verb() {
    let dir = tempfile::tempdir().unwrap();
    if let Ok(keep) = std::env::var("FURROW_FUZZ_KEEP") {
        // write the corpus where it can be looked at
        let pairs = generate(Path::new(&keep));
        eprintln!("fuzz: wrote {} pairs into {keep}", pairs.len());
        return;
    }
    let started = std::time::Instant::now();
    let pairs = generate(dir.path());
    let generated = started.elapsed();
    let checker = Checker {
        violations: Mutex::new(Vec::new()),
        accepted_runs: Default::default(),
        calls: Default::default(),
    };
    let limit: usize = std::env::var("FURROW_FUZZ_PAIRS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(PAIRS);
    let slow = Mutex::new(Vec::new());
    pairs.par_iter().take(limit).for_each(|pair| {
        let t = std::time::Instant::now();
        exercise(&checker, pair);
        let e = t.elapsed().as_secs_f64();
        if e > 0.05 {
            slow.lock().unwrap().push((e, pair.index));
        }
    });
    let mut slow = slow.into_inner().unwrap();
    slow.sort_by(|a, b| b.0.total_cmp(&a.0));
    for (e, i) in slow.iter().take(10) {
        eprintln!("fuzz: pair #{i} took {e:.2} s");
    }
    let violations = checker.violations.into_inner().unwrap();
    let accepted = checker.accepted_runs.into_inner();
    let calls = checker.calls.into_inner();
    let mut failures: BTreeMap<Kind, Vec<String>> = BTreeMap::new();
    for v in violations {
        failures.entry(v.kind).or_default().push(v.what);
    }
    eprintln!(
        "fuzz: {} files, {calls} verb calls, {accepted} accepted runs; generated in {:.1} s, all in {:.1} s",
        2 * PAIRS,
        generated.as_secs_f64(),
        started.elapsed().as_secs_f64()
    );
    // the corpus must exercise the simulation, not only the error paths
    assert!(
        accepted > PAIRS / 5,
        "only {accepted} of {PAIRS} pairs ran: the generator no longer makes valid files"
    );
    if !failures.is_empty() {
        let mut msg = String::new();
        for (kind, list) in &failures {
            msg.push_str(&format!("\n{} × {kind:?}, e.g.:\n", list.len()));
            for w in list.iter().take(5) {
                msg.push_str(&format!("    {w}\n"));
            }
        }
        panic!("fuzz violations:{msg}");
    }
}

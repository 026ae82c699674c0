//! Prints a hash of the bit patterns of every `PeriodRecord` field over many engine runs: each market
//! in `examples/*.toml` under each policy in `policies/*.toml`, under every expectation rule, with
//! shocks and several seeds, 1200 periods. A tool for checking that a change to the engine leaves its
//! results bit for bit unchanged (compare the printed lines before and after); not a test.
//!
//! Run from the crate root: `cargo run --release --example engine_checksum`.

use std::hash::Hasher;

use furrow::engine::{Model, PeriodRecord};
use furrow::policies::file::load_policy;
use furrow::policies::PolicySpec;
use furrow::scenario::{load_market, ExpectationSpec};
use furrow::stochastic::ShockStream;

/// FNV-1a, 64 bit (stable across Rust versions, unlike `DefaultHasher`).
struct Fnv(u64);

impl Hasher for Fnv {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for b in bytes {
            self.0 ^= u64::from(*b);
            self.0 = self.0.wrapping_mul(0x0100_0000_01b3);
        }
    }
}

fn hash_record(h: &mut Fnv, r: &PeriodRecord) {
    h.write_u64(r.period as u64);
    for x in [
        r.expected_price,
        r.planted,
        r.harvest,
        r.price,
        r.producer_price,
        r.consumption,
        r.purchases,
        r.releases,
        r.stock,
        r.fiscal_cost,
        r.consumer_surplus,
        r.producer_surplus,
        r.purchase_cost,
        r.sales_revenue,
        r.storage_cost,
        r.financing_cost,
        r.handling_cost,
        r.deficiency_payments,
    ] {
        h.write_u64(x.to_bits());
    }
    h.write_u16(r.flags);
    h.write_u8(r.stockout as u8);
}

fn files(dir: &str) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path().display().to_string())
        .filter(|p| p.ends_with(".toml"))
        .collect();
    v.sort();
    v
}

fn main() {
    let periods: usize = std::env::args()
        .nth(1)
        .map(|a| a.parse().unwrap())
        .unwrap_or(1200);
    let rule = |text: &str| Some(ExpectationSpec::parse(text).unwrap());
    let rules: Vec<(&str, Option<ExpectationSpec>)> = vec![
        ("file", None),
        ("naive", rule("rule = \"naive\"")),
        ("adaptive", rule("rule = \"adaptive\"\nweight = 0.45")),
        (
            "adaptive-init",
            rule("rule = \"adaptive\"\nweight = 0.7\ninitial_expected_price = 205.0"),
        ),
        (
            "normal-fixed",
            rule("rule = \"normal-price\"\nweight = 0.4\nnormal_price = 212.0"),
        ),
        (
            "normal-window",
            rule("rule = \"normal-price\"\nweight = 0.4\nwindow = 3"),
        ),
        (
            "extrapolative",
            rule("rule = \"extrapolative\"\nweight = -0.3"),
        ),
        (
            "trailing-mean",
            rule("rule = \"trailing-mean\"\nwindow = 4"),
        ),
        ("rational", rule("rule = \"rational\"")),
    ];
    let mut policies: Vec<(String, PolicySpec)> = vec![("none()".into(), PolicySpec::none())];
    for p in files("policies") {
        policies.push((p.clone(), load_policy(&p).unwrap()));
    }
    let mut total = Fnv(0xcbf2_9ce4_8422_2325);
    let mut scenarios = 0usize;
    let mut records = 0usize;
    let mut failures = 0usize;
    for m in files("examples") {
        let Ok(base) = load_market(&m) else {
            continue;
        };
        for shocked in [false, true] {
            let mut s = base.clone();
            if shocked && s.shocks.is_deterministic() {
                s.shocks.yield_cv = 0.05;
                s.shocks.supply_sd = 2.0;
                s.shocks.demand_sd = 3.0;
                s.shocks.demand_persistence = 0.4;
            } else if shocked {
                s.shocks.supply_sd = s.shocks.supply_sd.max(1.5);
            }
            for (pname, policy) in &policies {
                for (rname, rule) in &rules {
                    let mut policy = policy.clone();
                    if let Some(r) = rule {
                        policy.expectations = Some(*r);
                    }
                    let model = Model::new(&s, &policy);
                    let seeds: &[u64] = if *rname == "rational" {
                        &[7]
                    } else {
                        &[7, 2026, 99]
                    };
                    let mut h = Fnv(0xcbf2_9ce4_8422_2325);
                    for &seed in seeds {
                        for rep in 0..2u64 {
                            let mut stream = ShockStream::new(&s.shocks, seed, rep);
                            let mut sim = model.simulator();
                            for _ in 0..periods {
                                match sim.step(&stream.next_shock()) {
                                    Ok(r) => {
                                        hash_record(&mut h, &r);
                                        records += 1;
                                    }
                                    Err(e) => {
                                        h.write(e.to_string().as_bytes());
                                        failures += 1;
                                        break;
                                    }
                                }
                            }
                            h.write_u64(sim.stock().to_bits());
                        }
                    }
                    scenarios += 1;
                    println!("{:016x} {m} shocks={shocked} {pname} {rname}", h.finish());
                    total.write_u64(h.finish());
                }
            }
        }
    }
    println!(
        "TOTAL {:016x} scenarios={scenarios} records={records} diverged={failures}",
        total.finish()
    );
}

//! Shared helpers for the integration tests.
#![allow(dead_code)]

use furrow::scenario::{self, PolicySpec, Scenario};

/// A linear market with demand Q = a + b P (b < 0) and supply Q = c + d P^e, plus extra TOML.
pub fn linear_market(a: f64, b: f64, c: f64, d: f64, extra: &str) -> Scenario {
    let text = format!(
        "[demand]\nintercept = {a:?}\nslope = {b:?}\n[supply]\nintercept = {c:?}\nslope = {d:?}\n{extra}"
    );
    scenario::market_from_str("test-market.toml", &text).expect("valid test market")
}

/// A policy from the body of a policy file (the [policy] header is added).
pub fn policy(body: &str) -> PolicySpec {
    scenario::policy_from_str(
        "test-policy.toml",
        &format!("[policy]\nname = \"test\"\n{body}"),
    )
    .expect("valid test policy")
}

/// Path of the built binary.
pub fn bin() -> assert_cmd::Command {
    assert_cmd::Command::cargo_bin("furrow").expect("binary built")
}

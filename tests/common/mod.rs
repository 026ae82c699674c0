//! Shared helpers for the integration tests.
#![allow(dead_code)]

use furrow::policies::PolicySpec;
use furrow::scenario::{self, Scenario};

/// A linear market with demand Q = a + b P (b < 0) and supply Q = c + d P^e, plus extra TOML.
pub fn linear_market(a: f64, b: f64, c: f64, d: f64, extra: &str) -> Scenario {
    let text = format!(
        "[demand]\nintercept = {a:?}\nslope = {b:?}\n[supply]\nintercept = {c:?}\nslope = {d:?}\n{extra}"
    );
    scenario::market_from_str("test-market.toml", &text).expect("valid test market")
}

/// A policy from the body of a policy file (the [policy] header is added).
pub fn policy(body: &str) -> PolicySpec {
    furrow::policies::file::policy_from_str(
        "test-policy.toml",
        &format!("[policy]\nname = \"test\"\n{body}"),
    )
    .expect("valid test policy")
}

/// Path of the built binary.
pub fn bin() -> assert_cmd::Command {
    assert_cmd::Command::cargo_bin("furrow").expect("binary built")
}

/// Runs `cmd` (a `furrow` command built with [`bin`]), asserts that it exited 0 — its stderr in the
/// failure message — and returns what it wrote: stdout as text first, stderr second.
pub fn succeed(cmd: &mut assert_cmd::Command) -> (String, String) {
    let out = cmd.output().expect("furrow runs");
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(
        out.status.success(),
        "furrow exited with {:?}: {stderr}",
        out.status.code()
    );
    let stdout = String::from_utf8(out.stdout).expect("stdout is UTF-8");
    (stdout, stderr)
}

/// `furrow ARGS`, asserted to succeed (see [`succeed`]); its stdout.
pub fn stdout_of<I, S>(args: I) -> String
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    succeed(bin().args(args)).0
}

/// Φ(x), the standard normal distribution function: ½ erfc(−x/√2), erfc by Abramowitz and Stegun
/// (1964) 7.1.26 (absolute error below 1.5e-7).
pub fn phi(x: f64) -> f64 {
    let z = x.abs() / std::f64::consts::SQRT_2;
    let t = 1.0 / (1.0 + 0.327_591_1 * z);
    let poly = t
        * (0.254_829_592
            + t * (-0.284_496_736
                + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))));
    let erfc = poly * (-z * z).exp();
    if x >= 0.0 {
        1.0 - 0.5 * erfc
    } else {
        0.5 * erfc
    }
}

/// Property tests' settings: `cases` cases from a fixed `seed` (the same cases on every run;
/// `PROPTEST_RNG_SEED=N` explores others), failures saved beside the test file.
pub fn proptest_config(seed: u64, cases: u32) -> proptest::test_runner::Config {
    use proptest::test_runner::{Config, FileFailurePersistence, RngAlgorithm, RngSeed};
    let seed = std::env::var("PROPTEST_RNG_SEED")
        .ok()
        .and_then(|s| s.parse::<u64>().ok())
        .unwrap_or(seed);
    Config {
        cases,
        rng_algorithm: RngAlgorithm::ChaCha,
        rng_seed: RngSeed::Fixed(seed),
        failure_persistence: Some(Box::new(FileFailurePersistence::WithSource(
            "proptest-regressions",
        ))),
        ..Config::default()
    }
}

pub mod storers;

//! `mixed`: fixed shares of farmers forming expectations by different rules, planting summed over
//! the groups (Q = Σ n_i S(P^e_i)). The rational/naive market's eigenvalue is derived here from the
//! two groups' planting and checked against `stability` and against a simulated path.

mod common;

use common::bin;
use furrow::engine::{Model, PeriodShock};
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_str, Scenario};
use furrow::stability::analyse;

/// Linear market: demand Q = a − b·P (b = |demand slope|), supply Q = c + d·P^e (d = supply slope),
/// with the given `[expectations]` body.
fn market(a: f64, b: f64, c: f64, d: f64, rule: &str, p0: f64) -> Scenario {
    let text = format!(
        "[market]\nname = \"veldmark-test\"\n[demand]\nintercept = {a:?}\nslope = {:?}\n\
         [supply]\nintercept = {c:?}\nslope = {d:?}\n[expectations]\n{rule}\n\
         [run]\nperiods = 40\ninitial_price = {p0:?}\n",
        -b
    );
    market_from_str("veldmark-test.toml", &text).expect("valid test market")
}

fn mixed(n: f64) -> String {
    format!(
        "rule = \"mixed\"\ngroups = \"rational, naive\"\nshares = [{n:?}, {:?}]",
        1.0 - n
    )
}

/// The closed form, derived from the two groups' planting (no shocks): the rational group's
/// forecast is the price itself, the naive group's last season's price, so
/// a − b·P_t = c + n·d·P_t + (1 − n)·d·P_{t−1}; in deviations from P* = (a − c)/(b + d),
/// (b + n·d)·p_t = −(1 − n)·d·p_{t−1}: λ = −d(1 − n)/(b + d·n).
/// (n = 0 is Ezekiel's 1938 cobweb root −d/b; n = 1 the rational market, which does not move.)
fn lambda(b: f64, d: f64, n: f64) -> f64 {
    -d * (1.0 - n) / (b + d * n)
}

const CASES: [(f64, f64, f64); 6] = [
    // (b, d, n): stable and unstable naive markets, small and large rational shares
    (1.0, 0.5, 0.5),
    (1.0, 1.5, 0.2),
    (1.0, 1.5, 0.5),
    (0.8, 2.0, 0.3),
    (1.25, 1.1, 0.8),
    (1.0, 3.0, 0.1),
];

#[test]
fn the_stability_eigenvalue_is_the_derived_root() {
    let (a, c) = (400.0, -20.0);
    for (b, d, n) in CASES {
        let s = market(a, b, c, d, &mixed(n), 150.0);
        let rep = analyse(&s, &PolicySpec::none()).expect("stability runs");
        let free = &rep.regimes[0];
        assert_eq!(free.eigenvalues.len(), 1, "{:?}", free.eigenvalues);
        let want = lambda(b, d, n);
        let got = free.eigenvalues[0];
        assert!(
            (got.re - want).abs() < 1e-6 && got.im.abs() < 1e-9,
            "b {b}, d {d}, n {n}: stability {got:?}, closed form {want}"
        );
        // the steady state is each component's: where the curves cross (P* = (a − c)/(b + d))
        let p_star = (a - c) / (b + d);
        assert!(
            (rep.producer_price - p_star).abs() < 1e-8 * p_star,
            "{} vs {p_star}",
            rep.producer_price
        );
    }
}

#[test]
fn a_simulated_path_moves_by_the_derived_root_each_season() {
    let (a, c) = (400.0, -20.0);
    for (b, d, n) in CASES {
        let p_star = (a - c) / (b + d);
        let s = market(a, b, c, d, &mixed(n), p_star + 5.0);
        let model = Model::new(&s, &PolicySpec::none());
        let want = lambda(b, d, n);
        let mut last = p_star + 5.0;
        let mut checked = 0;
        let mut sim = model.simulator();
        for _ in 0..12 {
            let Ok(r) = sim.step(&PeriodShock::NONE) else {
                break;
            };
            let (dev, prev) = (r.price - p_star, last - p_star);
            if prev.abs() > 0.05 {
                let ratio = dev / prev;
                assert!(
                    (ratio - want).abs() < 1e-7,
                    "b {b}, d {d}, n {n}: ratio {ratio}, closed form {want}"
                );
                checked += 1;
            }
            // the planted quantity is the groups' sum: n·S(P_t) + (1 − n)·S(P_{t−1})
            let planted = n * (c + d * r.price) + (1.0 - n) * (c + d * last);
            assert!(
                (r.planted - planted).abs() < 1e-7 * planted,
                "{} vs {planted}",
                r.planted
            );
            last = r.price;
        }
        assert!(checked >= 3, "b {b}, d {d}, n {n}: only {checked} seasons");
    }
}

#[test]
fn planting_sums_the_groups_on_a_curved_supply() {
    // constant-elasticity supply S(P) = q0 (P/p0)^e: the planting-equivalent price must give
    // Σ n_i S(P^e_i), not S(Σ n_i P^e_i) (the sum over groups, by definition of the rule)
    let text = "[market]\nname = \"veldmark-ce\"\n[demand]\nform = \"constant-elasticity\"\n\
                at_price = 200.0\nat_quantity = 100.0\nelasticity = -0.3\n[supply]\n\
                form = \"constant-elasticity\"\nat_price = 200.0\nat_quantity = 100.0\nelasticity = 0.6\n\
                [expectations]\nrule = \"mixed\"\ngroups = \"naive, adaptive:0.3\"\nshares = [0.4, 0.6]\n\
                [run]\ninitial_price = 260.0\n";
    let s = market_from_str("veldmark-ce.toml", text).unwrap();
    let model = Model::new(&s, &PolicySpec::none());
    let supply = |p: f64| 100.0 * (p / 200.0f64).powf(0.6);
    let mut sim = model.simulator();
    let (mut last, mut adaptive) = (260.0, 260.0);
    for t in 1..=10 {
        let r = sim.step(&PeriodShock::NONE).unwrap();
        if t > 1 {
            // adaptive (Nerlove 1958): P^e_t = P^e_{t−1} + λ (P_{t−1} − P^e_{t−1})
            adaptive += 0.3 * (last - adaptive);
        }
        let want = 0.4 * supply(last) + 0.6 * supply(adaptive);
        assert!(
            (r.planted - want).abs() < 1e-9 * want,
            "t {t}: {} vs {want}",
            r.planted
        );
        last = r.price;
    }
}

fn write(name: &str, text: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("furrow-mixed-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

#[test]
fn shares_that_do_not_sum_to_one_are_refused_naming_file_key_value_and_range() {
    let body = |groups: &str, shares: &str| {
        format!(
            "[market]\nname = \"veldmark\"\n[demand]\nintercept = 400.0\nslope = -1.0\n[supply]\n\
             intercept = -20.0\nslope = 1.5\n[expectations]\nrule = \"mixed\"\ngroups = \"{groups}\"\n\
             shares = {shares}\n"
        )
    };
    for (groups, shares, key, needle) in [
        (
            "rational, naive",
            "[0.5, 0.6]",
            "expectations.shares",
            "summing to 1",
        ),
        (
            "rational, naive",
            "[0.5]",
            "expectations.shares",
            "one number per group",
        ),
        (
            "rational, naive",
            "[1.5, -0.5]",
            "expectations.shares[0]",
            "[0, 1]",
        ),
        (
            "rational, rational",
            "[0.5, 0.5]",
            "expectations.groups",
            "at most one rational",
        ),
        (
            "naive, mixed",
            "[0.5, 0.5]",
            "expectations.groups",
            "a single rule",
        ),
        (
            "naive, adaptive:1.7",
            "[0.5, 0.5]",
            "expectations.groups",
            "adaptive:1.7",
        ),
    ] {
        let p = write("bad.toml", &body(groups, shares));
        let out = bin().arg("check").arg(&p).output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{groups} / {shares}: {err}");
        assert!(err.contains("bad.toml"), "{err}");
        assert!(err.contains(key), "{key}: {err}");
        assert!(err.contains(needle), "{needle}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
    // within 1e-6 of 1 is accepted
    let p = write(
        "ok.toml",
        &body("rational, naive", "[0.3333333, 0.6666667]"),
    );
    let out = bin().arg("check").arg(&p).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("mixed"), "check describes the rule: {text}");
}

//! Helpers shared by the stability and sweep tests: small markets written as TOML and read
//! through the real file reader.
#![allow(dead_code)]

use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml, Scenario};
use furrow::stability::{self, analyse, Eigenvalue};

/// Linear market Q_d = a − d P, Q_s = c + b P^e with the given expectations section body.
pub fn linear(a: f64, d: f64, c: f64, b: f64, rule: &str) -> Scenario {
    let text = format!(
        "[market]\nname = \"t\"\n[demand]\nintercept = {a}\nslope = {}\n[supply]\nintercept = {c}\nslope = {b}\n\
         [expectations]\n{rule}\n[run]\nperiods = 50\ninitial_price = 90.0\n",
        -d
    );
    market_from_table("t.toml", parse_toml("t.toml", &text).unwrap()).unwrap()
}

pub fn ce(es: f64, ed: f64, rule: &str) -> Scenario {
    let text = format!(
        "[market]\nname = \"ce\"\n[demand]\nform = \"constant-elasticity\"\nat_price = 100.0\nat_quantity = 50.0\n\
         elasticity = {ed}\n[supply]\nform = \"constant-elasticity\"\nat_price = 80.0\nat_quantity = 45.0\n\
         elasticity = {es}\n[expectations]\n{rule}\n[run]\ninitial_price = 130.0\n"
    );
    market_from_table("ce.toml", parse_toml("ce.toml", &text).unwrap()).unwrap()
}

pub fn policy(text: &str) -> PolicySpec {
    policy_from_table("p.toml", parse_toml("p.toml", text).unwrap()).unwrap()
}

pub fn sorted(mut v: Vec<Eigenvalue>) -> Vec<Eigenvalue> {
    v.sort_by(|a, b| a.re.total_cmp(&b.re).then(a.im.total_cmp(&b.im)));
    v
}

/// Roots of z² + a1 z + a0 by the quadratic formula (solved by hand), sorted like `sorted`.
pub fn quadratic_roots(a1: f64, a0: f64) -> Vec<Eigenvalue> {
    let disc = a1 * a1 - 4.0 * a0;
    let v = if disc >= 0.0 {
        let s = disc.sqrt();
        vec![
            Eigenvalue {
                re: (-a1 - s) / 2.0,
                im: 0.0,
            },
            Eigenvalue {
                re: (-a1 + s) / 2.0,
                im: 0.0,
            },
        ]
    } else {
        let s = (-disc).sqrt();
        vec![
            Eigenvalue {
                re: -a1 / 2.0,
                im: -s / 2.0,
            },
            Eigenvalue {
                re: -a1 / 2.0,
                im: s / 2.0,
            },
        ]
    };
    sorted(v)
}

pub fn free(s: &Scenario) -> stability::RegimeStability {
    let r = analyse(s, &PolicySpec::none()).unwrap();
    assert!(r.regimes[0].holds_steady_state);
    r.regimes[0].clone()
}

pub fn close(a: &[Eigenvalue], b: &[Eigenvalue], tol: f64) {
    assert_eq!(a.len(), b.len(), "{a:?} vs {b:?}");
    for (x, y) in sorted(a.to_vec()).iter().zip(sorted(b.to_vec())) {
        assert!(
            (x.re - y.re).abs() <= tol && (x.im - y.im).abs() <= tol,
            "{a:?} vs {b:?}"
        );
    }
}

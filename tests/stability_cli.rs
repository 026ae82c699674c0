//! The `stability` and `sweep` verbs from the outside (shapes from INTERFACE.md; numbers by hand).

mod common;

use common::{bin, stdout_of};
use std::io::Write;

fn file(dir: &tempfile::TempDir, name: &str, text: &str) -> String {
    let path = dir.path().join(name);
    std::fs::File::create(&path)
        .unwrap()
        .write_all(text.as_bytes())
        .unwrap();
    path.to_string_lossy().to_string()
}

// Q_d = 200 − P, Q_s = −10 + 0.5 P: P* = 140, b/d = 0.5
const MARKET: &str = "[market]\nname = \"cli\"\n[demand]\nintercept = 200.0\nslope = -1.0\n[supply]\nintercept = -10.0\nslope = 0.5\n[run]\ninitial_price = 150.0\n";

#[test]
fn stability_json_has_interface_keys() {
    let d = tempfile::tempdir().unwrap();
    let m = file(&d, "m.toml", MARKET);
    let js: serde_json::Value =
        serde_json::from_str(&stdout_of(["stability", &m, "--format", "json"])).unwrap();
    assert_eq!(js["verdict"], "stable");
    assert!((js["steady_state"]["price"].as_f64().unwrap() - 140.0).abs() < 1e-9);
    let reg = &js["regimes"][0];
    for k in [
        "name",
        "eigenvalues",
        "spectral_radius",
        "verdict",
        "oscillating",
        "period",
        "half_life",
    ] {
        assert!(reg.get(k).is_some(), "missing {k}");
    }
    assert!((reg["eigenvalues"][0]["re"].as_f64().unwrap() + 0.5).abs() < 1e-12);
    assert_eq!(reg["period"].as_f64(), Some(2.0));
    // half-life ln 0.5 / ln 0.5 = 1 period
    assert!((reg["half_life"].as_f64().unwrap() - 1.0).abs() < 1e-12);
}

#[test]
fn floor_above_steady_state_is_reported_not_linearised() {
    let d = tempfile::tempdir().unwrap();
    let m = file(&d, "m.toml", MARKET);
    let p = file(
        &d,
        "p.toml",
        "[policy]\nname = \"floor\"\n[floor]\nprice = 150.0\n",
    );
    let text = stdout_of(["stability", &m, "--policy", &p]);
    assert!(text.contains("no steady state with finite stock"), "{text}");
    assert!(text.contains("(none)"), "{text}");
    assert!(!text.contains("NaN") && !text.contains("inf"), "{text}");
}

#[test]
fn sweep_csv_columns_and_long_run() {
    let d = tempfile::tempdir().unwrap();
    let m = file(&d, "m.toml", MARKET);
    let text = stdout_of([
        "sweep",
        &m,
        "--vary",
        "supply.slope=0.5:1.5:3",
        "--format",
        "csv",
    ]);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "supply.slope,spectral_radius,verdict");
    assert_eq!(lines[1], "0.5,0.5,stable");
    assert_eq!(lines[2], "1,1,neutral");
    assert_eq!(lines[3], "1.5,1.5,unstable");
    let text = stdout_of([
        "sweep",
        &m,
        "--vary",
        "supply.slope=0.5:1.5:3",
        "--long-run",
        "4",
        "--format",
        "csv",
    ]);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(
        lines[0],
        "supply.slope,spectral_radius,verdict,lyapunov,orbit,period,price"
    );
    // b/d = 0.5 and 1: 4 rows each; 1.5 diverges: one marked row
    assert_eq!(lines.len(), 1 + 4 + 4 + 1);
    assert!(lines[1].starts_with("0.5,0.5,stable,") && lines[1].contains(",ok,1001,"));
    // b = d = 1: P* = 210/2 = 105; the cycle neither grows nor shrinks (Lyapunov exponent ln 1 = 0)
    // and prices alternate between P_0 = 150 and 105 − (150 − 105) = 60 (by hand)
    let row: Vec<&str> = lines[5].split(',').collect();
    assert!(row[3].parse::<f64>().unwrap().abs() < 1e-9, "{}", lines[5]);
    let p: f64 = row[6].parse().unwrap();
    assert!((p - 60.0).abs() < 1e-9 || (p - 150.0).abs() < 1e-9, "{p}");
    assert!(lines[9].contains(",diverged,"), "{}", lines[9]);
}

#[test]
fn sweep_bad_input_exits_2() {
    let d = tempfile::tempdir().unwrap();
    let m = file(&d, "m.toml", MARKET);
    for args in [
        vec!["sweep", &m, "--vary", "supply.slpoe=0.5:1:2"],
        vec!["sweep", &m, "--vary", "supply.slope=0.5:1"],
        vec![
            "sweep",
            &m,
            "--vary",
            "supply.slope=0.5:1:2",
            "--vary",
            "demand.slope=-2:-1:2",
            "--long-run",
            "5",
        ],
    ] {
        let out = bin().args(&args).output().unwrap();
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        assert!(!out.stderr.is_empty());
    }
}

#[test]
fn a_tiny_steady_price_is_shown_positive_not_as_zero() {
    // iso-elastic curves through (1e-9, 100) and (1e-9, 50): 100 (P/1e-9)^−0.5 = 50 (P/1e-9)^0.5
    // gives P* = 1e-9 · 100/50 = 2e-9 (by hand). Four decimals once printed it as 0.0000, a steady
    // state at price 0.
    let d = tempfile::tempdir().unwrap();
    let m = file(
        &d,
        "tiny.toml",
        "[market]\nname = \"tiny\"\n[demand]\nform = \"constant-elasticity\"\nat_price = 1e-9\n\
         at_quantity = 100.0\nelasticity = -0.5\n[supply]\nform = \"constant-elasticity\"\n\
         at_price = 1e-9\nat_quantity = 50.0\nelasticity = 0.5\n[run]\ninitial_price = 3e-9\n",
    );
    let csv = stdout_of(["stability", &m, "--format", "csv"]);
    let rows: Vec<Vec<&str>> = csv.lines().map(|l| l.split(',').collect()).collect();
    let at = rows[0].iter().position(|h| *h == "at_price").unwrap();
    let p: f64 = rows[1][at].parse().unwrap();
    assert!((p / 2e-9 - 1.0).abs() < 1e-4, "{csv}");
    let table = stdout_of(["stability", &m]);
    assert!(table.contains("steady state: price 2.0000e-9"), "{table}");
}

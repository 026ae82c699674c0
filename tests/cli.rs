//! Command-line behaviour of `check` and `run`: formats, files, exit codes.

mod common;

use common::bin;

fn demo(name: &str) -> String {
    format!("{}/examples/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn policy_file(name: &str) -> String {
    format!("{}/policies/{name}", env!("CARGO_MANIFEST_DIR"))
}

#[test]
fn check_accepts_every_shipped_file() {
    let mut files: Vec<String> = Vec::new();
    for dir in ["examples", "policies"] {
        for e in std::fs::read_dir(format!("{}/{dir}", env!("CARGO_MANIFEST_DIR"))).unwrap() {
            let p = e.unwrap().path();
            if p.extension().is_some_and(|x| x == "toml") {
                files.push(p.to_string_lossy().to_string());
            }
        }
    }
    assert!(files.len() >= 10);
    let out = bin().arg("check").args(&files).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn check_prints_steady_state_and_elasticities() {
    let out = bin()
        .args(["check", &demo("veldmark.toml"), "--format", "json"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    // calibrated at (210, 480) with elasticities −0.25 and 0.20: the steady state is the calibration point
    assert!((v[0]["steady_state"]["price"].as_f64().unwrap() - 210.0).abs() < 1e-9);
    assert!((v[0]["demand_elasticity"].as_f64().unwrap() + 0.25).abs() < 1e-9);
    assert!((v[0]["supply_elasticity"].as_f64().unwrap() - 0.20).abs() < 1e-9);
}

#[test]
fn run_formats_agree() {
    let csv = bin()
        .args([
            "run",
            &demo("dunmere_cycle.toml"),
            "--format",
            "csv",
            "--periods",
            "7",
        ])
        .output()
        .unwrap();
    assert!(csv.status.success());
    let text = String::from_utf8(csv.stdout).unwrap();
    assert_eq!(text.lines().count(), 8, "header + 7 periods");
    let json = bin()
        .args([
            "run",
            &demo("dunmere_cycle.toml"),
            "--format",
            "json",
            "--periods",
            "7",
        ])
        .output()
        .unwrap();
    let rows: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let last_csv_price: f64 = text
        .lines()
        .last()
        .unwrap()
        .split(',')
        .nth(3)
        .unwrap()
        .parse()
        .unwrap();
    assert!((rows[6]["price"].as_f64().unwrap() - last_csv_price).abs() < 1e-12);
    for f in ["table", "markdown"] {
        let out = bin()
            .args(["run", &demo("dunmere_cycle.toml"), "--format", f])
            .output()
            .unwrap();
        assert!(out.status.success());
        let s = String::from_utf8(out.stdout).unwrap();
        assert!(!s.contains("NaN") && !s.contains("inf"));
    }
}

#[test]
fn out_file_is_written_whole_and_not_on_failure() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("path.csv");
    let ok = bin()
        .args(["run", &demo("veldmark.toml"), "--format", "csv", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(ok.status.success());
    assert!(ok.stdout.is_empty(), "data went to the file");
    assert_eq!(std::fs::read_to_string(&out).unwrap().lines().count(), 41);
    // a diverging market: exit 1, the old file left as it was, no temporary file left behind
    let bad = dir.path().join("explode.toml");
    std::fs::write(
        &bad,
        "[demand]\nintercept = 120.0\nslope = -0.5\n[supply]\nintercept = -10.0\nslope = 0.8\n[run]\ninitial_price = 90.0\nperiods = 300\n",
    )
    .unwrap();
    let failed = bin()
        .args(["run", bad.to_str().unwrap(), "--format", "csv", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(failed.status.code(), Some(1));
    let err = String::from_utf8_lossy(&failed.stderr);
    assert!(err.contains("diverging") && err.contains("period"), "{err}");
    assert_eq!(std::fs::read_to_string(&out).unwrap().lines().count(), 41);
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2);
}

#[test]
fn usage_errors_exit_2() {
    let out = bin().args(["run"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = bin()
        .args(["run", &demo("veldmark.toml"), "--format", "xml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = bin().args(["run", "no/such/file.toml"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no/such/file.toml"));
}

#[test]
fn indefensible_floor_is_reported_in_words() {
    let out = bin()
        .args([
            "run",
            &demo("veldmark.toml"),
            "--policy",
            &policy_file("support_high_purchase.toml"),
            "--format",
            "csv",
        ])
        .output()
        .unwrap();
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("cannot be defended"), "{err}");
    assert!(
        err.contains("store was full") || err.contains("budget"),
        "{err}"
    );
}

#[test]
fn a_diverging_path_prints_nothing_on_stdout_in_any_streamed_format() {
    // naive cobweb with b/d = 0.8/0.5 = 1.6 > 1: the price oscillates ever wider (Ezekiel 1938) and
    // leaves the sanity bound; streamed formats walk the path once before the first row
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("explode.toml");
    std::fs::write(
        &bad,
        "[demand]\nintercept = 120.0\nslope = -0.5\n[supply]\nintercept = -10.0\nslope = 0.8\n[run]\ninitial_price = 90.0\nperiods = 300\n",
    )
    .unwrap();
    for format in ["csv", "markdown", "json", "table"] {
        let failed = bin()
            .args(["run", bad.to_str().unwrap(), "--format", format])
            .output()
            .unwrap();
        assert_eq!(failed.status.code(), Some(1), "{format}");
        assert!(
            failed.stdout.is_empty(),
            "{format}: printed a diverging path"
        );
        let err = String::from_utf8_lossy(&failed.stderr);
        assert!(err.contains("diverging"), "{format}: {err}");
    }
}

#[test]
fn a_streamed_path_is_the_held_path_with_or_without_storers() {
    // `--plots` holds the whole path, stdout streams it: the rows must be the same bytes
    // (a consistency check of the one runner; no outside source)
    let dir = tempfile::tempdir().unwrap();
    for (market, policy) in [
        ("veldmark.toml", "price_band.toml"),
        ("veldmark_storers.toml", "price_band.toml"),
    ] {
        for format in ["csv", "json", "markdown"] {
            let args = [
                "run",
                &demo(market),
                "--policy",
                &policy_file(policy),
                "--replications",
                "1",
                "--periods",
                "12",
                "--format",
                format,
            ];
            let streamed = bin().args(args).output().unwrap();
            assert!(streamed.status.success(), "{market} {format}");
            let held = bin()
                .args(args)
                .arg("--plots")
                .arg(dir.path().join(format!("{market}-{format}")))
                .output()
                .unwrap();
            assert!(held.status.success(), "{market} {format}");
            assert_eq!(
                String::from_utf8_lossy(&streamed.stdout),
                String::from_utf8_lossy(&held.stdout),
                "{market} {format}"
            );
        }
    }
}

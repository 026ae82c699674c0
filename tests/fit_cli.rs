//! `fit` on the command line: options parse, the market file is written whole, errors leave no file.

mod common;

use std::process::Output;

const HISTORY: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/examples/veldmark_history.csv");

fn fit(list: &[&str]) -> Output {
    common::bin().arg("fit").args(list).output().unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

#[test]
fn writes_the_market_file_and_prints_the_report() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let mut a = vec![
        HISTORY,
        "--demand-shifter",
        "trend",
        "--supply-shifter",
        "rainfall",
        "--supply-shifter",
        "fertiliser_price",
        "--method",
        "2sls",
        "--format",
        "json",
        "--out",
    ];
    let o = fit(&[a.as_slice(), &[out.to_str().unwrap()]].concat());
    assert!(o.status.success(), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["demand"]["method"], "2sls");
    let toml_text = std::fs::read_to_string(&out).unwrap();
    let t: toml::Table = toml::from_str(&toml_text).unwrap();
    assert_eq!(
        t["market"]["name"].as_str(),
        Some("Fitted from veldmark_history.csv")
    );
    assert_eq!(t["market"]["quantity_unit"].as_str(), Some("kt"));
    // `--out -` prints the market file instead of the report
    a.push("-");
    let o2 = fit(&a);
    assert_eq!(String::from_utf8_lossy(&o2.stdout), toml_text);
    // the written market is accepted by `check` and `run`
    for verb in ["check", "run"] {
        let o = common::bin()
            .args([verb, out.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(o.status.success(), "{verb}: {}", stderr(&o));
    }
}

#[test]
fn bad_input_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let o = fit(&[
        HISTORY,
        "--supply-shifter",
        "rain",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(
        e.contains("no column `rain`") && e.contains("did you mean `rainfall`"),
        "{e}"
    );
    assert!(!out.exists());
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
}

#[test]
fn option_values_are_checked() {
    assert!(fit(&[HISTORY, "--format", "markdown"]).status.success());
    let o = fit(&[HISTORY, "--format", "xml"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("table, markdown, csv, json"));
    assert_eq!(fit(&[HISTORY, "--form", "cubic"]).status.code(), Some(2));
    let o = fit(&["/nonexistent/h.csv"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("cannot read /nonexistent/h.csv"));
}

/// examples/veldmark_fitted.toml is what the documented command writes today (regenerate it with the
/// command in examples/make_history.rs when the estimator or the file layout changes).
#[test]
fn shipped_fitted_market_is_current() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let root = env!("CARGO_MANIFEST_DIR");
    let o = common::bin()
        .current_dir(root)
        .args([
            "fit",
            "examples/veldmark_history.csv",
            "--demand-shifter",
            "trend",
            "--supply-shifter",
            "rainfall",
            "--supply-shifter",
            "fertiliser_price",
            "--method",
            "2sls",
            "--name",
            "Hill millet, Veldmark (fitted 1985-2024)",
            "--price-unit",
            "crowns per t",
            "--out",
            out.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        std::fs::read_to_string(&out).unwrap(),
        std::fs::read_to_string(format!("{root}/examples/veldmark_fitted.toml")).unwrap(),
        "examples/veldmark_fitted.toml is stale"
    );
}

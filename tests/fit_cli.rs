//! `fit`'s command-line glue: options parse, the market file is written whole, errors leave no file.

use clap::Parser;
use furrow::fit::cli::{execute, FitArgs};

#[derive(Parser)]
struct Wrapper {
    #[command(flatten)]
    fit: FitArgs,
}

fn args(list: &[&str]) -> FitArgs {
    let mut v = vec!["fit"];
    v.extend_from_slice(list);
    Wrapper::try_parse_from(v).unwrap().fit
}

const HISTORY: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/examples/veldmark_history.csv");

#[test]
fn writes_the_market_file_and_prints_the_report() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let a = args(&[
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
        out.to_str().unwrap(),
    ]);
    let stdout = execute(&a).unwrap();
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["demand"]["method"], "2sls");
    let toml_text = std::fs::read_to_string(&out).unwrap();
    let t: toml::Table = toml::from_str(&toml_text).unwrap();
    assert_eq!(
        t["market"]["name"].as_str(),
        Some("Fitted from veldmark_history.csv")
    );
    assert_eq!(t["market"]["quantity_unit"].as_str(), Some("kt"));
    // `--out -` returns the market file instead of the report
    let mut a2 = a.clone();
    a2.out = Some("-".into());
    assert_eq!(execute(&a2).unwrap(), toml_text);
}

#[test]
fn bad_input_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let a = args(&[
        HISTORY,
        "--supply-shifter",
        "rain",
        "--out",
        out.to_str().unwrap(),
    ]);
    let e = format!("{:#}", execute(&a).unwrap_err());
    assert!(
        e.contains("no column `rain`") && e.contains("did you mean `rainfall`"),
        "{e}"
    );
    assert!(!out.exists());
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
}

#[test]
fn option_values_are_checked() {
    let parse = |l: &[&str]| {
        let mut v = vec!["fit", HISTORY];
        v.extend_from_slice(l);
        Wrapper::try_parse_from(v)
            .map(|_| ())
            .map_err(|e| e.to_string())
    };
    assert!(parse(&["--format", "markdown"]).is_ok());
    assert!(parse(&["--format", "xml"])
        .unwrap_err()
        .contains("table, markdown, csv, json"));
    assert!(parse(&["--form", "cubic"]).is_err());
    assert!(parse(&["--method", "2sls"]).is_ok());
    let missing = args(&["/nonexistent/h.csv"]);
    assert!(
        format!("{:#}", execute(&missing).unwrap_err()).contains("cannot read /nonexistent/h.csv")
    );
}

/// examples/veldmark_fitted.toml is what the documented command writes today (regenerate it with the
/// command in examples/make_history.rs when the estimator or the file layout changes).
#[test]
fn shipped_fitted_market_is_current() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let root = env!("CARGO_MANIFEST_DIR");
    std::env::set_current_dir(root).unwrap();
    let a = args(&[
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
    ]);
    execute(&a).unwrap();
    assert_eq!(
        std::fs::read_to_string(&out).unwrap(),
        std::fs::read_to_string(format!("{root}/examples/veldmark_fitted.toml")).unwrap(),
        "examples/veldmark_fitted.toml is stale"
    );
}

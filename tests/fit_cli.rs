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

/// The documented command that writes examples/veldmark_fitted.toml (also in examples/make_history.rs
/// and the README).
const SHIPPED_ARGS: &[&str] = &[
    "fit",
    "examples/veldmark_history.csv",
    "--production",
    "production",
    "--use",
    "use",
    "--imports",
    "imports",
    "--exports",
    "exports",
    "--stock-change",
    "stock_change",
    "--area",
    "area",
    "--yield",
    "yield",
    "--demand-shifter",
    "trend",
    "--supply-shifter",
    "fertiliser_price",
    "--supply-shifter",
    "rainfall",
    "--stochastic-shifter",
    "rainfall",
    "--method",
    "2sls",
    "--name",
    "Hill millet, Veldmark (fitted 1985-2024)",
    "--price-unit",
    "crowns per t",
];

/// examples/veldmark_fitted.toml is what the documented command writes today (regenerate it with the
/// command in examples/make_history.rs when the estimator or the file layout changes).
#[test]
fn shipped_fitted_market_is_current() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("fitted.toml");
    let root = env!("CARGO_MANIFEST_DIR");
    let o = common::bin()
        .current_dir(root)
        .args(SHIPPED_ARGS)
        .args(["--format", "json", "--out", out.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        std::fs::read_to_string(&out).unwrap(),
        std::fs::read_to_string(format!("{root}/examples/veldmark_fitted.toml")).unwrap(),
        "examples/veldmark_fitted.toml is stale"
    );
    // what was left out is said on stderr and in the file
    let e = stderr(&o);
    assert!(e.contains("trade left out"), "{e}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.contains("# LEFT OUT: trade"), "{text}");
    // the report carries the check against history and the caution
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let rows = v["history_check"]["rows"].as_array().unwrap();
    let names: Vec<&str> = rows
        .iter()
        .map(|r| r["statistic"].as_str().unwrap())
        .collect();
    assert_eq!(
        names,
        [
            "price_cv",
            "quantity_cv",
            "price_autocorrelation",
            "quantity_autocorrelation"
        ]
    );
    for r in rows {
        let (lo, mid, hi) = (
            r["p05"].as_f64().unwrap(),
            r["p50"].as_f64().unwrap(),
            r["p95"].as_f64().unwrap(),
        );
        assert!(lo <= mid && mid <= hi, "{r}");
        let h = r["history"].as_f64().unwrap();
        assert_eq!(r["outside"].as_bool().unwrap(), !(lo <= h && h <= hi));
        // a statistic outside its range is warned about on stderr
        if r["outside"].as_bool().unwrap() {
            assert!(e.contains(&format!("history's {}", r["statistic"].as_str().unwrap())));
        }
    }
    assert!(v["caution"].as_str().unwrap().contains("not forecasts"));
    // and the README's next step runs on the written market
    let o = common::bin()
        .current_dir(root)
        .args([
            "compare",
            out.to_str().unwrap(),
            "policies/none.toml",
            "examples/fitted_band.toml",
            "--replications",
            "200",
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
}

fn write(dir: &std::path::Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p.to_str().unwrap().to_string()
}

/// A small history (seasons 2001..2012) with a column named by `extra`.
fn small_history(sep: &str, extra: &str) -> String {
    let mut s = ["season", "price", "quantity", extra].join(sep) + "\n";
    let mut p = 100.0;
    for t in 0..12 {
        let rain = 600.0 + 37.0 * ((t * 7 % 5) as f64 - 2.0);
        let q = 40.0 + 0.5 * p + 0.02 * rain;
        let np = 190.0 - q + ((t * 3 % 4) as f64 - 1.5);
        s.push_str(
            &[
                format!("{}", 2001 + t),
                format!("{np:.3}"),
                format!("{q:.3}"),
                format!("{rain:.1}"),
            ]
            .join(sep),
        );
        s.push('\n');
        p = np;
    }
    s
}

/// Issue 12, item 10: a column name holding a newline or an escape character is escaped in every
/// comment, so the written market is accepted by `check`.
#[test]
fn control_characters_in_a_column_name_never_reach_the_file_raw() {
    let dir = tempfile::tempdir().unwrap();
    for name in ["rain\nfall", "rain\u{1b}[31mfall", "rain\rfall"] {
        let quoted = format!("\"{name}\"");
        let data = write(dir.path(), "h.csv", &small_history(",", &quoted));
        let out = dir.path().join("m.toml");
        let o = fit(&[
            &data,
            "--supply-shifter",
            name,
            "--out",
            out.to_str().unwrap(),
        ]);
        assert!(o.status.success(), "{name:?}: {}", stderr(&o));
        let text = std::fs::read_to_string(&out).unwrap();
        assert!(!text.contains(name), "{name:?} copied raw");
        assert!(text.contains("rain\\"), "{text}");
        for line in text.lines() {
            assert!(
                !line.chars().any(|c| c.is_control() && c != '\t'),
                "{line:?}"
            );
        }
        let c = common::bin()
            .args(["check", out.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(c.status.success(), "{name:?}: check: {}", stderr(&c));
        // messages escape it too
        let o = fit(&[&data, "--supply-shifter", &format!("{name}x")]);
        assert_eq!(o.status.code(), Some(2));
        assert!(!stderr(&o).contains(name), "{}", stderr(&o));
    }
}

#[test]
fn duplicated_column_names_are_an_error_naming_both() {
    let dir = tempfile::tempdir().unwrap();
    let data = write(dir.path(), "h.csv", &small_history(",", "price"));
    let o = fit(&[&data]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(e.contains("columns 2 and 4 are both named `price`"), "{e}");
}

#[test]
fn semicolon_and_tab_separated_files_are_detected_and_said() {
    let dir = tempfile::tempdir().unwrap();
    let comma = write(dir.path(), "c.csv", &small_history(",", "rainfall"));
    let want = fit(&[&comma, "--supply-shifter", "rainfall", "--format", "json"]);
    assert!(want.status.success(), "{}", stderr(&want));
    let want: serde_json::Value = serde_json::from_slice(&want.stdout).unwrap();
    for (sep, word) in [(";", "semicolon"), ("\t", "tab")] {
        let data = write(dir.path(), "s.csv", &small_history(sep, "rainfall"));
        let o = fit(&[&data, "--supply-shifter", "rainfall", "--format", "json"]);
        assert!(o.status.success(), "{word}: {}", stderr(&o));
        assert!(
            stderr(&o).contains(&format!("as {word}-separated")),
            "{}",
            stderr(&o)
        );
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        // the same numbers as the comma-separated file
        assert_eq!(v["demand"]["terms"], want["demand"]["terms"], "{word}");
        assert_eq!(v["supply"]["terms"], want["supply"]["terms"], "{word}");
    }
    // a decimal comma in a semicolon file gets a hint
    let text = small_history(";", "rainfall").replacen("600.0", "600,0", 1);
    let data = write(dir.path(), "d.csv", &text);
    let o = fit(&[&data, "--supply-shifter", "rainfall"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("decimal comma"), "{}", stderr(&o));
}

/// Data at a 1e-300 scale would square to zero (standard errors of 0 with exit 0): refused, naming the
/// column and asking for a rescale.
#[test]
fn data_at_a_tiny_scale_is_refused_not_fitted_to_zero_errors() {
    let dir = tempfile::tempdir().unwrap();
    let text: String = small_history(",", "rainfall")
        .lines()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                l.to_string()
            } else {
                let mut f: Vec<String> = l.split(',').map(str::to_string).collect();
                let q: f64 = f[2].parse().unwrap();
                f[2] = format!("{:e}", q * 1e-300);
                f.join(",")
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    let data = write(dir.path(), "tiny.csv", &text);
    let o = fit(&[&data]);
    assert_eq!(
        o.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    let e = stderr(&o);
    assert!(
        e.contains("column `quantity`") && e.contains("rescale"),
        "{e}"
    );
    // in log form the logs are ordinary numbers: accepted
    let o = fit(&[&data, "--form", "log"]);
    assert!(o.status.success(), "{}", stderr(&o));
}

/// A balance-sheet row that does not add up is named on the command line, with exit 2 and no file.
#[test]
fn broken_balance_row_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(HISTORY).unwrap();
    // season 2000 is on line 17; make its use 5 kt too large
    let broken: String = text
        .lines()
        .map(|l| {
            if l.starts_with("2000,") {
                let mut f: Vec<String> = l.split(',').map(str::to_string).collect();
                let u: f64 = f[10].parse().unwrap();
                f[10] = format!("{:.3}", u + 5.0);
                f.join(",")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    let data = write(dir.path(), "b.csv", &broken);
    let out = dir.path().join("m.toml");
    let o = fit(&[
        &data,
        "--production",
        "production",
        "--use",
        "use",
        "--imports",
        "imports",
        "--exports",
        "exports",
        "--stock-change",
        "stock_change",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(
        e.contains("line 17 (season 2000)") && e.contains("in 1 row(s)"),
        "{e}"
    );
    assert!(!out.exists());
    // options that do not go together are refused
    let o = fit(&[HISTORY, "--production", "production"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--use"), "{}", stderr(&o));
    let o = fit(&[HISTORY, "--stochastic-shifter", "rainfall"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("not one of the shifters"),
        "{}",
        stderr(&o)
    );
    let o = fit(&[HISTORY, "--at-season", "soon"]);
    assert_eq!(o.status.code(), Some(2));
}

/// `--supply partial-adjustment` writes an adaptive-expectations market that `check` and `stability`
/// accept, with the mapping explained in the file.
#[test]
fn partial_adjustment_writes_an_adaptive_market() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("pa.toml");
    let o = fit(&[
        HISTORY,
        "--production",
        "production",
        "--use",
        "use",
        "--demand-shifter",
        "trend",
        "--supply-shifter",
        "rainfall",
        "--stochastic-shifter",
        "rainfall",
        "--supply",
        "partial-adjustment",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(
        text.contains("rule = \"adaptive\"") && text.contains("Nerlove 1958"),
        "{text}"
    );
    assert!(String::from_utf8_lossy(&o.stdout).contains("long_run_elasticity"));
    for verb in ["check", "stability"] {
        let c = common::bin()
            .args([verb, out.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(c.status.success(), "{verb}: {}", stderr(&c));
    }
}

//! Command-line behaviour of `compare` and of `run` with replications > 1: formats, columns, exit codes.

mod common;

use common::{bin, stdout_of, succeed};

fn demo(name: &str) -> String {
    format!("{}/examples/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn policy_file(name: &str) -> String {
    format!("{}/policies/{name}", env!("CARGO_MANIFEST_DIR"))
}

fn write(dir: &tempfile::TempDir, name: &str, text: &str) -> String {
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().to_string()
}

/// Demand Q = 200 − 2P, supply Q = −40 + P^e: P* = 80, naive eigenvalue −b/d = −0.5.
const MARKET: &str = "[market]\nname = \"T\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
    [demand]\nform = \"linear\"\nintercept = 200.0\nslope = -2.0\n\
    [supply]\nform = \"linear\"\nintercept = -40.0\nslope = 1.0\n\
    [expectations]\nrule = \"naive\"\n[run]\nperiods = 12\ninitial_price = 92.0\nreplications = 50\nseed = 1\n";

#[test]
fn compare_on_the_shipped_demo_prints_every_format() {
    let market = demo("veldmark_weather.toml");
    let files = [policy_file("none.toml"), policy_file("price_band.toml")];
    let run = |format: &str| {
        succeed(bin().args(["compare", &market]).args(&files).args([
            "--replications",
            "200",
            "--format",
            format,
        ]))
        .0
    };
    let table = run("table");
    assert!(
        table.contains("Net welfare change, PV") && table.contains("5–95 % range"),
        "{table}"
    );
    assert!(!table.contains("NaN") && !table.contains("inf"));
    let md = run("markdown");
    assert!(
        md.contains("| Indicator | Unit | No intervention |"),
        "{md}"
    );
    let csv = run("csv");
    let mut lines = csv.lines();
    assert!(lines
        .next()
        .unwrap()
        .starts_with("indicator,No intervention,"));
    assert_eq!(lines.count(), furrow::compare::indicator_keys().len());
    let json: serde_json::Value = serde_json::from_str(&run("json")).unwrap();
    let policies = json["policies"].as_array().unwrap();
    assert_eq!(policies.len(), 2);
    assert_eq!(policies[1]["file"].as_str().unwrap(), files[1]);
    assert_eq!(
        policies[0]["indicators"]["net_welfare_change_pv"].as_f64(),
        Some(0.0)
    );
    // the band buys and sells, so its stock and fiscal parts are populated
    assert!(
        policies[1]["indicators"]["purchase_cost_pv"]
            .as_f64()
            .unwrap()
            > 0.0
    );
    // like-for-like baselines are named; every mean and change has its standard error
    assert_eq!(policies[1]["baseline"].as_str(), Some("No intervention"));
    assert!(policies[1]["expectations"]
        .as_str()
        .unwrap()
        .starts_with("adaptive"));
    assert!(
        policies[1]["indicators"]["net_welfare_change_pv_se"]
            .as_f64()
            .unwrap()
            > 0.0
    );
    assert!(table.contains(" ± "));
}

#[test]
fn compare_names_the_behaviour_change_and_warns_on_close_calls() {
    let dir = tempfile::tempdir().unwrap();
    let market = write(
        &dir,
        "m.toml",
        &format!("{MARKET}alert_price = 85.0\n[shocks]\nsupply_sd = 2.0\n"),
    );
    let cautious = write(
        &dir,
        "c.toml",
        "[policy]\nname = \"Cautious\"\n[expectations]\nrule = \"adaptive\"\nweight = 0.5\n",
    );
    // two files with the same band under two names: their net welfare cannot be told apart
    let band = |name: &str, lo: f64| {
        write(
            &dir,
            &format!("{name}.toml"),
            &format!(
                "[policy]\nname = \"{name}\"\n[stock]\nbuy_below = {lo}\nsell_above = 84.0\ninitial = 5.0\n"
            ),
        )
    };
    let (a, b) = (band("A", 76.0), band("B", 76.0));
    let (out, stderr) =
        succeed(bin().args(["compare", &market, &cautious, &a, &b, "--format", "json"]));
    let json: serde_json::Value = serde_json::from_str(&out).unwrap();
    let changes = json["behaviour_changes"].as_array().unwrap();
    assert_eq!(changes.len(), 1);
    assert!(changes[0]["name"]
        .as_str()
        .unwrap()
        .contains("not a policy"));
    let p = &json["policies"][0];
    assert_eq!(p["indicators"]["net_welfare_change_pv"].as_f64(), Some(0.0));
    assert_ne!(p["baseline"].as_str(), json["baseline"]["name"].as_str());
    // the alert share exists for every column, the baseline included
    assert!(json["baseline"]["indicators"]["price_above_alert_share"]
        .as_f64()
        .is_some());
    assert!(
        stderr.contains("\"A\" and \"B\"") && stderr.contains("not distinguishable"),
        "{stderr}"
    );
}

#[test]
fn compare_fails_with_exit_1_naming_policy_replication_and_period() {
    let dir = tempfile::tempdir().unwrap();
    // supply three times steeper than demand: the naive cobweb explodes (Ezekiel 1938)
    let m = write(
        &dir,
        "m.toml",
        &MARKET
            .replace("slope = 1.0", "slope = 6.0")
            .replace("intercept = -40.0", "intercept = -440.0"),
    );
    let p = write(
        &dir,
        "p.toml",
        "[policy]\nname = \"Floor\"\n[floor]\nprice = 70.0\ninstrument = \"purchase\"\n",
    );
    let out = bin().args(["compare", &m, &p]).output().unwrap();
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("replication 0") && err.contains("period") && err.contains("No intervention"),
        "{err}"
    );
}

#[test]
fn compare_needs_a_policy_and_valid_files() {
    let dir = tempfile::tempdir().unwrap();
    let m = write(&dir, "m.toml", MARKET);
    let out = bin().args(["compare", &m]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let bad = write(
        &dir,
        "bad.toml",
        "[policy]\nname = \"x\"\n[stock]\ncapacity = -1.0\n",
    );
    let out = bin().args(["compare", &m, &bad]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("capacity"));
}

#[test]
fn run_with_replications_prints_mean_and_quantile_columns() {
    let dir = tempfile::tempdir().unwrap();
    let m = write(
        &dir,
        "m.toml",
        &format!("{MARKET}[shocks]\nsupply_sd = 1.0\n"),
    );
    let text = stdout_of(["run", &m, "--format", "csv"]);
    let mut rows = text.lines();
    let header: Vec<&str> = rows.next().unwrap().split(',').collect();
    let mut want = vec!["period".to_string()];
    for s in ["price", "producer_price", "harvest", "stock"] {
        for q in ["mean", "p05", "p50", "p95"] {
            want.push(format!("{s}_{q}"));
        }
    }
    assert_eq!(header, want);
    let rows: Vec<Vec<f64>> = rows
        .map(|r| r.split(',').map(|c| c.parse().unwrap()).collect())
        .collect();
    assert_eq!(rows.len(), 12);
    for r in &rows {
        assert!(r[2] <= r[3] && r[3] <= r[4], "quantiles in order: {r:?}");
    }
}

#[test]
fn run_with_replications_on_a_deterministic_market_gives_the_closed_form_path() {
    // no shocks: every replication is the cobweb path P* + (P0 − P*)(−b/d)^t (Ezekiel 1938), so mean
    // and all quantiles coincide with it
    let dir = tempfile::tempdir().unwrap();
    let m = write(&dir, "m.toml", MARKET);
    let rows: serde_json::Value =
        serde_json::from_str(&stdout_of(["run", &m, "--format", "json"])).unwrap();
    for (t, row) in rows.as_array().unwrap().iter().enumerate() {
        let want = 80.0 + 12.0 * (-0.5f64).powi(t as i32 + 1);
        for k in ["price_mean", "price_p05", "price_p50", "price_p95"] {
            assert!(
                (row[k].as_f64().unwrap() - want).abs() < 1e-9,
                "t={} {k}",
                t + 1
            );
        }
    }
}

#[test]
fn revenue_cv_is_defined_when_revenue_underflows() {
    // iso-elastic curves through (1e-200, 1e-170): P* = 1e-200, Q* = 1e-170 (the point both curves
    // pass through), so producers' revenue P·Q ≈ 1e-370 is below the smallest double and reads 0 in
    // every period. Its CV was 0/0, a blank cell; it is 0 (README, "Indicators").
    let dir = tempfile::tempdir().unwrap();
    let m = write(
        &dir,
        "tiny.toml",
        "[market]\nname = \"tiny\"\n[demand]\nform = \"constant-elasticity\"\nat_price = 1e-200\n\
         at_quantity = 1e-170\nelasticity = -1.4\n[supply]\nform = \"constant-elasticity\"\n\
         at_price = 1e-200\nat_quantity = 1e-170\nelasticity = 0.9\n[run]\nperiods = 10\n",
    );
    let p = write(
        &dir,
        "adaptive.toml",
        "[policy]\nname = \"Adaptive\"\n[expectations]\nrule = \"adaptive\"\nweight = 0.6\n",
    );
    let csv = stdout_of(["compare", &m, &p, "--replications", "4", "--format", "csv"]);
    let row = csv
        .lines()
        .find(|l| l.starts_with("producer_revenue_cv,"))
        .unwrap_or_else(|| panic!("no revenue CV row: {csv}"));
    let cells: Vec<&str> = row.split(',').skip(1).collect();
    assert!(!cells.is_empty());
    for c in cells {
        assert_eq!(c.parse::<f64>(), Ok(0.0), "{row}");
    }
}

/// Every shipped policy file (as a shell glob orders them).
fn all_policy_files() -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(format!("{}/policies", env!("CARGO_MANIFEST_DIR")))
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.path().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    v.sort();
    v
}

/// `compare examples/veldmark_weather.toml policies/*.toml` fits a 120-column terminal in every
/// layout and lists the market left alone first (P0), whatever the glob order; the long layout
/// names every policy, the wide one splits into blocks (a terminal-width rule: common practice,
/// no source).
#[test]
fn compare_of_every_policy_fits_120_columns_with_the_market_left_alone_first() {
    let market = demo("veldmark_weather.toml");
    let files = all_policy_files();
    assert!(files.len() >= 8);
    assert!(
        !files[0].ends_with("none.toml"),
        "the glob does not put none.toml first"
    );
    for layout in ["auto", "long", "wide"] {
        let out = bin()
            .args(["compare", &market])
            .args(&files)
            .args(["--replications", "100", "--layout", layout])
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let text = String::from_utf8(out.stdout).unwrap();
        let widest = text.lines().map(|l| l.chars().count()).max().unwrap();
        assert!(widest <= 120, "{layout}: {widest} columns\n{text}");
        assert!(!text.contains("NaN") && !text.contains("inf"));
        assert!(
            text.contains("P0 No intervention ("),
            "{layout}: legend\n{text}"
        );
        if layout != "wide" {
            // the first data row is the market left alone
            let first_row = text
                .lines()
                .find(|l| l.starts_with("│ P"))
                .unwrap_or_default();
            assert!(
                first_row.starts_with("│ P0 ") && first_row.contains("No intervention"),
                "{layout}: {first_row}"
            );
        } else {
            assert!(text.contains("(part 2 of"), "wide splits into blocks");
            let header = text.lines().find(|l| l.contains("Indicator")).unwrap();
            assert!(header.contains("│ P0 "), "{header}");
            assert!(header.find("P0") < header.find("P1"));
        }
        for f in &files {
            let name: toml::Table = std::fs::read_to_string(f).unwrap().parse().unwrap();
            let name = name["policy"]["name"].as_str().unwrap();
            assert!(text.contains(name), "{layout}: {name} missing");
        }
    }
}

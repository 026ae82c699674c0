//! `report … --sensitivity`: the briefing's assumption annex shows the numbers of `sensitivity` for
//! the same inputs (read here from `sensitivity --format json` and put in the page's units by the
//! library's own unit formatting, then looked up in the briefing). An identity by construction (the
//! annex is defined as that analysis; common practice, no source).

mod common;

use common::{bin, stdout_of};
use furrow::units::{Measure, Units};
use serde_json::Value;

const MARKET: &str = "examples/veldmark_weather.toml";
const BAND: &str = "policies/price_band.toml";
const PAYMENT: &str = "policies/deficiency_payment.toml";
const SETTINGS: [&str; 4] = ["--replications", "30", "--periods", "12"];
const RULES: &str = "naive,adaptive:0.6,rational,mixed";
const RANGE: &str = "demand.elasticity=-0.4:-0.15";

fn num(v: &Value) -> Option<f64> {
    v.as_f64()
}

#[test]
fn the_annex_shows_the_sensitivity_numbers() {
    let mut args = vec![
        "sensitivity",
        MARKET,
        BAND,
        PAYMENT,
        "--rules",
        RULES,
        "--range",
        RANGE,
    ];
    args.extend(SETTINGS);
    args.extend(["--format", "json"]);
    let s: Value = serde_json::from_str(&stdout_of(args)).expect("JSON");
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("briefing.html");
    let plots = dir.path().join("plots");
    let status = bin()
        .args([
            "report",
            MARKET,
            BAND,
            PAYMENT,
            "--sensitivity",
            "--rules",
            RULES,
        ])
        .args(["--range", RANGE])
        .args(SETTINGS)
        .arg("--out")
        .arg(&out)
        .arg("--plots")
        .arg(&plots)
        .output()
        .unwrap();
    assert!(
        status.status.success(),
        "{}",
        String::from_utf8_lossy(&status.stderr)
    );
    let html = std::fs::read_to_string(&out).unwrap();
    let at = html
        .find("Annex I: how far the answer depends on the assumptions")
        .expect("the annex is in the briefing");
    let annex = &html[at..];
    let units = Units::new(
        s["price_unit"].as_str().unwrap(),
        s["quantity_unit"].as_str().unwrap(),
    );
    // the panel: every cell of the net welfare change, "value ± se" in the page's money scale
    let key = "net_welfare_change_pv";
    let panel = s["panel"].as_array().unwrap();
    let values: Vec<f64> = panel
        .iter()
        .filter_map(|c| num(&c["indicators"][key]))
        .collect();
    assert_eq!(values.len(), panel.len(), "every cell has a number");
    let scale = units.money_scale(values.iter().copied());
    let mut found = 0;
    for c in panel {
        let v = num(&c["indicators"][key]).unwrap();
        let se = num(&c["indicators"][format!("{key}_se")]).unwrap();
        let cell = format!(
            "{} ± {}",
            units.show(v, Measure::Money, &scale),
            units.show(se, Measure::Money, &scale)
        );
        let cell = furrow::briefing::escape(&cell);
        assert!(
            annex.contains(&cell),
            "{} / {}: {cell}",
            c["rule"],
            c["policy"]
        );
        found += 1;
    }
    assert_eq!(found, 4 * 2);
    // the tornado: each end of each bar
    let bars = s["tornado"].as_array().unwrap();
    assert_eq!(bars.len(), 2, "one bar per policy");
    let ends: Vec<f64> = bars
        .iter()
        .flat_map(|b| ["base", "at_low", "at_high", "swing"].map(|k| num(&b[k])))
        .flatten()
        .collect();
    let scale = units.money_scale(ends.iter().copied());
    for b in bars {
        for k in ["at_low", "at_high", "swing"] {
            let v = num(&b[k]).unwrap();
            let shown = furrow::briefing::escape(&units.show(v, Measure::Money, &scale));
            assert!(annex.contains(&shown), "{} {k}: {shown}", b["policy"]);
        }
    }
    // the robustness lines: "gain under k of n"
    for r in s["robustness"].as_array().unwrap() {
        let line = format!(
            "a net welfare gain under {} of {} assumptions",
            r["gains"], r["assumptions"]
        );
        assert!(annex.contains(&line), "{line}");
    }
    // one tornado figure per policy, written with the briefing's figures
    let written = std::fs::read_dir(&plots)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().starts_with("tornado_"))
        .count();
    assert!(written >= 2, "{written} tornado files");
    // the caution stays on the page
    assert!(html.contains("not forecasts"));
}

#[test]
fn report_refuses_sensitivity_options_without_the_flag() {
    let out = bin()
        .args(["report", MARKET, BAND, "--rules", "naive", "--out", "-"])
        .output()
        .unwrap();
    assert!(!out.status.success());
    assert!(String::from_utf8_lossy(&out.stderr).contains("--sensitivity"));
}

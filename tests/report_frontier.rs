//! `report … --frontier RISK,COST`: the briefing's cost–risk annex names exactly the designs no other
//! design beats on both indicators (checked against a brute-force reading of the definition on the
//! comparison's own numbers), and draws the frontier figure.

mod common;

use common::bin;
use furrow::briefing::frontier;
use furrow::briefing::Block;
use furrow::compare::{compare, Value};
use furrow::policies::file::load_policy;
use furrow::scenario::market_from_str_with;
use furrow::stochastic::NoProgress;

/// Brute force on the definition: i is dominated when some j is no worse on both and better on one.
fn non_dominated(points: &[(f64, f64)]) -> Vec<bool> {
    points
        .iter()
        .map(|a| {
            !points
                .iter()
                .any(|b| b.0 <= a.0 && b.1 <= a.1 && (b.0 < a.0 || b.1 < a.1))
        })
        .collect()
}

#[test]
fn the_annex_marks_exactly_the_non_dominated_policies() {
    let text = std::fs::read_to_string("examples/veldmark_weather.toml").unwrap();
    let scenario = market_from_str_with(
        "examples/veldmark_weather.toml",
        &text,
        &[
            ("run.replications", toml::Value::Integer(60)),
            ("run.periods", toml::Value::Integer(15)),
        ],
    )
    .unwrap();
    let files = [
        "policies/price_band.toml",
        "policies/deficiency_payment.toml",
        "policies/target_reserve.toml",
        "policies/support_purchase.toml",
        "policies/drawdown_reserve.toml",
    ];
    let policies: Vec<_> = files.iter().map(|f| load_policy(f).unwrap()).collect();
    let r = compare(&scenario, &policies, &NoProgress).unwrap();
    let (risk, cost) = ("price_cv", "fiscal_cost_pv");
    let value = |p: &furrow::compare::PolicyComparison, k: &str| match p
        .indicators
        .iter()
        .find(|i| i.key == k)
        .map(|i| &i.value)
    {
        Some(Value::Number(x)) => *x,
        other => panic!("{k}: {other:?}"),
    };
    let shown: Vec<_> = r.policies.iter().filter(|p| !p.is_baseline).collect();
    let points: Vec<(f64, f64)> = shown
        .iter()
        .map(|p| (value(p, risk), value(p, cost)))
        .collect();
    let want = non_dominated(&points);
    let (section, figures) = frontier::section(&r, risk, cost);
    assert_eq!(section.heading, frontier::HEADING);
    let table = section
        .blocks
        .iter()
        .find_map(|b| match b {
            Block::Table { table, .. } => Some(table),
            _ => None,
        })
        .expect("a table");
    assert_eq!(table.rows.len(), shown.len());
    for ((row, p), w) in table.rows.iter().zip(&shown).zip(&want) {
        assert_eq!(row[0], p.name);
        assert_eq!(row[3] == "yes", *w, "{}: {:?}", p.name, points);
    }
    // at least one design is on the frontier, and the figure is there
    assert!(want.iter().any(|w| *w));
    assert_eq!(figures.len(), 1);
    assert!(section
        .blocks
        .iter()
        .any(|b| matches!(b, Block::Figure { .. })));
}

#[test]
fn report_with_a_frontier_writes_the_annex_and_refuses_an_unknown_indicator() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("b.html");
    let plots = dir.path().join("plots");
    let ok = bin()
        .args([
            "report",
            "examples/veldmark_weather.toml",
            "policies/price_band.toml",
            "policies/target_reserve.toml",
            "policies/deficiency_payment.toml",
            "--replications",
            "40",
            "--periods",
            "12",
            "--frontier",
            "price_cv,fiscal_cost_pv",
            "--out",
        ])
        .arg(&out)
        .arg("--plots")
        .arg(&plots)
        .output()
        .unwrap();
    assert!(
        ok.status.success(),
        "{}",
        String::from_utf8_lossy(&ok.stderr)
    );
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.contains(frontier::HEADING), "no annex");
    assert!(plots.join("frontier.png").exists() && plots.join("frontier.svg").exists());
    let bad = bin()
        .args([
            "report",
            "examples/veldmark_weather.toml",
            "policies/price_band.toml",
            "--replications",
            "10",
            "--periods",
            "5",
            "--frontier",
            "price_cv,no_such_indicator",
            "--out",
        ])
        .arg(dir.path().join("c.html"))
        .output()
        .unwrap();
    assert_eq!(bad.status.code(), Some(2));
    let err = String::from_utf8_lossy(&bad.stderr);
    assert!(err.contains("no_such_indicator"), "{err}");
    assert!(!dir.path().join("c.html").exists());
}

//! `compare` and `run` on a market with private storers use the solved storage equilibrium.

mod common;

fn path(p: &str) -> String {
    format!("{}/{p}", env!("CARGO_MANIFEST_DIR"))
}

#[test]
fn compare_with_storers_reports_crowding_out_between_zero_and_one() {
    let out = common::bin()
        .args([
            "compare",
            &path("examples/veldmark_storers.toml"),
            &path("policies/none.toml"),
            &path("policies/price_band.toml"),
            "--replications",
            "64",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let base = &v["policies"][0]["indicators"];
    let band = &v["policies"][1]["indicators"];
    assert!(base["private_stock_mean"].as_f64().unwrap() > 0.0);
    assert_eq!(base["public_stock_mean"].as_f64(), Some(0.0));
    // a public band stock partly replaces private stocks (Miranda and Helmberger 1988, qualitatively)
    let c = band["crowding_out"].as_f64().unwrap();
    assert!(c > 0.0 && c < 1.0, "crowding-out {c}");
    assert!(
        band["private_stock_mean"].as_f64().unwrap() < base["private_stock_mean"].as_f64().unwrap()
    );
}

#[test]
fn run_with_storers_is_the_equilibrium_path() {
    let out = common::bin()
        .args([
            "run",
            &path("examples/veldmark_storers.toml"),
            "--replications",
            "1",
            "--periods",
            "12",
            "--format",
            "csv",
        ])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert_eq!(text.lines().count(), 13);
    // the same path as the library's storage simulation
    let s = furrow::scenario::load_market(&path("examples/veldmark_storers.toml")).unwrap();
    let mut s12 = s.clone();
    s12.run.periods = 12;
    let recs =
        furrow::storage::storage_records(&s12, &furrow::policies::PolicySpec::none(), 0).unwrap();
    let last: f64 = text
        .lines()
        .last()
        .unwrap()
        .split(',')
        .nth(3)
        .unwrap()
        .parse()
        .unwrap();
    assert!((last - recs[11].price).abs() < 1e-9 * last);
}

//! The open economy on the command line: `run` columns (INTERFACE.md), the trade indicators of
//! `compare` and `sweep --vary trade.*` against the lognormal closed form derived here, a closed
//! market's output without any trade column, and refusals naming their keys.

mod common;
use common::phi;

use common::{bin, stdout_of};

fn write(dir: &tempfile::TempDir, name: &str, text: &str) -> String {
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    p.to_string_lossy().to_string()
}

/// Constant-elasticity demand through (480, 210), elasticity −0.25; supply so inelastic that the
/// planted quantity is Q̄ = 480 to within 10⁻⁴; lognormal yields with CV 0.2.
fn market(trade: &str) -> String {
    format!(
        "[market]\nname = \"T\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
         [demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = -0.25\n[supply]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = 0.000001\n[expectations]\nrule = \"naive\"\n[run]\ninitial_price = 210.0\n\
         periods = 40\nreplications = 500\nseed = 5\n[shocks]\nyield_cv = 0.2\n{trade}"
    )
}

const FREE: &str = "[trade]\nworld_price = 210.0\nimport_cost = 20.0\nexport_cost = 20.0\n";

/// Derived here (see tests/trade_engine.rs for the steps): with planting fixed at Q̄ and
/// ln Y ~ N(−σ²/2, σ²), traders import iff Y < k = D(P_m)/Q̄, so the share of importing seasons
/// is Φ((ln k + σ²/2)/σ), and the mean import E[(D(P_m) − Q̄Y)⁺] = Q̄(k Φ(d) − Φ(d − σ)) by the
/// lognormal partial expectation (Aitchison and Brown 1957, ch. 2).
fn imports_closed_form(import_parity: f64) -> (f64, f64) {
    let sigma = (1.0f64 + 0.04).ln().sqrt();
    let k = (import_parity / 210.0).powf(-0.25);
    let d = (k.ln() + 0.5 * sigma * sigma) / sigma;
    (phi(d), 480.0 * (k * phi(d) - phi(d - sigma)))
}

#[test]
fn run_puts_the_trade_columns_after_price_only_for_a_trading_market() {
    // INTERFACE.md: `run` columns `world_price, imports, exports` (after `price`)
    let dir = tempfile::tempdir().unwrap();
    let open = write(&dir, "open.toml", &market(FREE));
    let closed = write(&dir, "closed.toml", &market(""));
    let header = |m: &str, format: &str| {
        stdout_of([
            "run",
            m,
            "--replications",
            "1",
            "--periods",
            "3",
            "--format",
            format,
        ])
    };
    let csv = header(&open, "csv");
    let first = csv.lines().next().unwrap();
    assert!(
        first.starts_with(
            "period,expected_price,harvest,price,world_price,imports,exports,producer_price,"
        ),
        "{first}"
    );
    let md = header(&open, "markdown");
    assert!(
        md.contains("| price | world_price | imports | exports |"),
        "{md}"
    );
    let json: serde_json::Value = serde_json::from_str(&header(&open, "json")).unwrap();
    assert!(json[0]["world_price"].as_f64().is_some());
    assert!(json[0]["imports"].as_f64().is_some());
    for format in ["csv", "json", "markdown", "table"] {
        let text = header(&closed, format);
        assert!(
            !text.contains("world_price") && !text.contains("imports"),
            "{text}"
        );
    }
}

#[test]
fn compare_reports_the_trade_indicators_against_the_closed_form() {
    let dir = tempfile::tempdir().unwrap();
    let open = write(&dir, "open.toml", &market(FREE));
    let none = write(&dir, "none.toml", "[policy]\nname = \"none\"\n");
    let tariff = write(
        &dir,
        "tariff.toml",
        "[policy]\nname = \"tariff\"\n[border]\nimport_tariff = 10.0\n",
    );
    let out = stdout_of(["compare", &open, &none, &tariff, "--format", "json"]);
    let json: serde_json::Value = serde_json::from_str(&out).unwrap();
    let ind = |k: usize, key: &str| json["policies"][k]["indicators"][key].as_f64().unwrap();
    // 500 × 40 seasons: the binomial standard error of a share is below 0.0036, that of mean
    // imports below 96/√20000 = 0.68; five of each
    for (k, parity) in [(0, 230.0), (1, 240.0)] {
        let (share, mean) = imports_closed_form(parity);
        let got = ind(k, "import_season_share");
        assert!((got - share).abs() < 0.018, "{parity}: {got} vs {share}");
        let got = ind(k, "imports_mean");
        assert!((got - mean).abs() < 3.4, "{parity}: {got} vs {mean}");
        assert!(ind(k, "imports_mean_se") > 0.0);
    }
    // the tariff's receipts: 10 per unit imported, so its PV is positive and the fiscal cost is
    // minus the receipts (the policy buys nothing)
    let revenue = ind(1, "border_revenue_pv");
    assert!(revenue > 0.0);
    assert!((ind(1, "fiscal_cost_pv") + revenue).abs() < 1e-9 * revenue);
    assert_eq!(ind(0, "border_revenue_pv"), 0.0);
    // a closed market has no trade indicator at all
    let closed = write(&dir, "closed.toml", &market(""));
    let out = stdout_of(["compare", &closed, &none, "--format", "json"]);
    assert!(!out.contains("imports_mean") && !out.contains("border_revenue_pv"));
}

#[test]
fn sweep_varies_the_import_cost_and_the_import_share_follows_the_closed_form() {
    let dir = tempfile::tempdir().unwrap();
    let open = write(&dir, "open.toml", &market(FREE));
    let out = stdout_of([
        "sweep",
        &open,
        "--vary",
        "trade.import_cost=10:40:4",
        "--indicators",
        "import_season_share",
        "--format",
        "csv",
    ]);
    let mut rows = 0;
    for line in out.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        let cost: f64 = cells[0].parse().unwrap();
        let share: f64 = cells[1].parse().unwrap();
        let (want, _) = imports_closed_form(210.0 + cost);
        assert!((share - want).abs() < 0.018, "{cost}: {share} vs {want}");
        rows += 1;
    }
    assert_eq!(rows, 4, "{out}");
}

#[test]
fn border_measures_on_a_closed_market_and_an_unlimited_floor_above_import_parity_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let closed = write(&dir, "closed.toml", &market(""));
    let open = write(&dir, "open.toml", &market(FREE));
    let ban = write(
        &dir,
        "ban.toml",
        "[policy]\nname = \"ban\"\n[border]\nexport_ban = true\n",
    );
    let out = bin()
        .args(["run", &closed, "--policy", &ban])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("[trade]"));
    let floor = write(
        &dir,
        "floor.toml",
        "[policy]\nname = \"floor\"\n[floor]\nprice = 235.0\n",
    );
    let out = bin().args(["compare", &open, &floor]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("floor.price") && err.contains("trade.world_price"),
        "{err}"
    );
}

//! `fit` checked against things outside the project: NIST's certified regression results, statsmodels
//! (a general-purpose statistics library) run by tests/reference/fit_reference.py, and the known
//! parameters of the history generator.

use std::process::Command;

use furrow::fit::market_file::MarketNames;
use furrow::fit::ols::ols;
use furrow::fit::synth::{generate, to_csv, HistoryParams};
use furrow::fit::{
    check_history, fit_text, AtSeason, Balance, FitForm, FitMethod, FitOptions, FitReport,
    SupplyModel,
};
use nalgebra::{DMatrix, DVector};

/// Relative difference |got − want| / |want| (absolute when want is 0).
fn rel(got: f64, want: f64) -> f64 {
    if want == 0.0 {
        got.abs()
    } else {
        ((got - want) / want).abs()
    }
}

/// Tracks the largest absolute and relative differences seen, and fails on any above `tol` (relative).
struct Diff {
    tol: f64,
    max_abs: f64,
    max_rel: f64,
    failures: Vec<String>,
}

impl Diff {
    fn new(tol: f64) -> Self {
        Diff {
            tol,
            max_abs: 0.0,
            max_rel: 0.0,
            failures: Vec::new(),
        }
    }
    fn check(&mut self, what: &str, got: f64, want: f64) {
        let r = rel(got, want);
        self.max_abs = self.max_abs.max((got - want).abs());
        self.max_rel = self.max_rel.max(r);
        if r.is_nan() || r > self.tol {
            self.failures.push(format!(
                "{what}: got {got:.17e}, want {want:.17e} (rel {r:.2e})"
            ));
        }
    }
    fn finish(&self, label: &str) {
        eprintln!(
            "{label}: max abs diff {:.3e}, max rel diff {:.3e} (tolerance {:.0e} relative)",
            self.max_abs, self.max_rel, self.tol
        );
        assert!(
            self.failures.is_empty(),
            "{label}:\n{}",
            self.failures.join("\n")
        );
    }
}

/// Reads a numeric CSV with `#` comments and a header row.
fn numeric_csv(text: &str) -> Vec<Vec<f64>> {
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .skip(1)
        .map(|l| l.split(',').map(|c| c.trim().parse().unwrap()).collect())
        .collect()
}

/// y in column 0, regressors after it; returns (X with intercept, y).
fn design(rows: &[Vec<f64>]) -> (DMatrix<f64>, DVector<f64>) {
    let n = rows.len();
    let k = rows[0].len();
    let mut x = DMatrix::from_element(n, k, 1.0);
    for (i, r) in rows.iter().enumerate() {
        for j in 1..k {
            x[(i, j)] = r[j];
        }
    }
    (x, DVector::from_iterator(n, rows.iter().map(|r| r[0])))
}

// NIST Statistical Reference Datasets, linear least squares (https://www.itl.nist.gov/div898/strd/),
// datasets Norris and Longley. The data and certified values were NOT fetched from NIST here (no
// network); they were transcribed from verbatim copies of Norris.dat and Longley.dat quoted in several
// public repositories found with the search tool (a JavaScript fixture quoting the whole Norris.dat
// header, GSL's test_fit.c and its Ruby binding's test for Longley, and a Go test citing Longley.dat
// fetched 2026-09-27). The copies agree with each other digit for digit. Values are the certified
// 15-significant-digit figures.

#[test]
fn nist_norris_certified_values() {
    let rows = numeric_csv(include_str!("data/nist_norris.csv"));
    assert_eq!(rows.len(), 36);
    let (x, y) = design(&rows);
    let f = ols(&x, &y).unwrap();
    let mut d = Diff::new(1e-12);
    // certified values, Norris.dat lines 31-46
    d.check("B0", f.beta[0], -0.262323073774029);
    d.check("B1", f.beta[1], 1.00211681802045);
    d.check("sd(B0)", f.std_errors()[0], 0.232818234301152);
    d.check("sd(B1)", f.std_errors()[1], 0.429796848199937E-03);
    d.check("residual sd", f.residual_sd(), 0.884796396144373);
    d.check("R-squared", f.r_squared(), 0.999993745883712);
    d.check("residual SS", f.ssr, 26.6173985294224);
    d.finish("NIST Norris");
}

#[test]
fn nist_longley_certified_values() {
    let rows = numeric_csv(include_str!("data/nist_longley.csv"));
    assert_eq!(rows.len(), 16);
    let (x, y) = design(&rows);
    let f = ols(&x, &y).unwrap();
    let b = [
        -3482258.63459582,
        15.0618722713733,
        -0.358191792925910E-01,
        -2.02022980381683,
        -1.03322686717359,
        -0.511041056535807E-01,
        1829.15146461355,
    ];
    let sd = [
        890420.383607373,
        84.9149257747669,
        0.334910077722432E-01,
        0.488399681651699,
        0.214274163161675,
        0.226073200069370,
        455.478499142212,
    ];
    // Longley is ill-conditioned (a normal-equations solver loses most digits); QR on centred columns
    // is expected to keep about 10 or more.
    let mut d = Diff::new(1e-9);
    for j in 0..7 {
        d.check(&format!("B{j}"), f.beta[j], b[j]);
        d.check(&format!("sd(B{j})"), f.std_errors()[j], sd[j]);
    }
    d.check("residual sd", f.residual_sd(), 304.854073561965);
    d.check("R-squared", f.r_squared(), 0.995479004577296);
    d.check("residual SS", f.ssr, 836424.055505915);
    d.finish("NIST Longley");
}

/// CI is set (to anything but empty, `0` or `false`): a missing tool is then a failure, not a skip.
fn in_ci() -> bool {
    std::env::var("CI").is_ok_and(|v| !v.is_empty() && v != "0" && v != "false")
}

fn statsmodels_available() -> bool {
    Command::new("python3")
        .args(["-c", "import statsmodels, numpy"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false)
}

/// The reference script `tests/reference/fit_reference.py` run by python3 on the shipped history
/// with `extra` arguments: its JSON output and the history's text. `None` (the test is skipped,
/// saying so) when python3 cannot import statsmodels and numpy, unless CI is set: then it fails.
fn statsmodels_reference(extra: &[&str]) -> Option<(serde_json::Value, String)> {
    if !statsmodels_available() {
        if in_ci() {
            panic!("CI is set but python3 cannot import statsmodels/numpy: pip install -r tests/reference/requirements.txt");
        }
        eprintln!(
            "SKIPPED: python3 with statsmodels and numpy not found (set CI to make this fatal)"
        );
        return None;
    }
    let root = env!("CARGO_MANIFEST_DIR");
    let data = format!("{root}/examples/veldmark_history.csv");
    let out = Command::new("python3")
        .arg(format!("{root}/tests/reference/fit_reference.py"))
        .arg(&data)
        .args(extra)
        .output()
        .expect("run python3");
    assert!(
        out.status.success(),
        "reference script failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let reference: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    Some((reference, std::fs::read_to_string(&data).unwrap()))
}

fn names(v: &serde_json::Value) -> Vec<String> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|s| s.as_str().unwrap().to_string())
        .collect()
}

fn nums(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|s| s.as_f64().unwrap())
        .collect()
}

fn compare_equation(
    d: &mut Diff,
    label: &str,
    e: &furrow::fit::EquationFit,
    r: &serde_json::Value,
) {
    let params = nums(&r["params"]);
    assert_eq!(params.len(), e.terms.len(), "{label}: number of terms");
    assert_eq!(
        r["nobs"].as_u64().unwrap() as usize,
        e.observations,
        "{label}"
    );
    for (j, t) in e.terms.iter().enumerate() {
        d.check(
            &format!("{label} {} estimate", t.name),
            t.estimate,
            params[j],
        );
        d.check(
            &format!("{label} {} std_error", t.name),
            t.std_error,
            nums(&r["bse"])[j],
        );
        d.check(
            &format!("{label} {} HC1", t.name),
            t.robust_std_error,
            nums(&r["hc1_se"])[j],
        );
        if r.get("numpy_params").is_some() {
            d.check(
                &format!("{label} {} estimate (numpy two-step)", t.name),
                t.estimate,
                nums(&r["numpy_params"])[j],
            );
            d.check(
                &format!("{label} {} std_error (numpy two-step)", t.name),
                t.std_error,
                nums(&r["numpy_bse"])[j],
            );
        }
    }
    for key in [
        "r_squared",
        "residual_sd",
        "durbin_watson",
        "elasticity_at_means",
    ] {
        let got = match key {
            "r_squared" => e.r_squared,
            "residual_sd" => e.residual_sd,
            "durbin_watson" => e.durbin_watson,
            _ => e.elasticity_at_means,
        };
        d.check(&format!("{label} {key}"), got, r[key].as_f64().unwrap());
    }
}

/// statsmodels 0.15 (OLS, HC1_se, durbin_watson; sandbox IV2SLS) and numpy (explicit two-step 2SLS
/// with the HC1 sandwich) on examples/veldmark_history.csv, to 1e-8 relative.
#[test]
fn statsmodels_reference_on_the_example_history() {
    let Some((reference, text)) = statsmodels_reference(&[]) else {
        return;
    };
    let mut d = Diff::new(1e-8);
    let cases = reference["cases"].as_array().unwrap();
    assert!(cases.len() >= 6);
    for case in cases {
        let opts = FitOptions {
            shifters: names(&case["both"]),
            demand_shifters: names(&case["demand_only"]),
            supply_shifters: names(&case["supply_only"]),
            form: match case["form"].as_str().unwrap() {
                "log" => FitForm::Log,
                _ => FitForm::Linear,
            },
            method: match case["method"].as_str().unwrap() {
                "2sls" => FitMethod::TwoStage,
                _ => FitMethod::Ols,
            },
            ..FitOptions::default()
        };
        let name = case["name"].as_str().unwrap();
        let rep = fit_text("veldmark_history.csv", &text, &opts).unwrap();
        compare_equation(
            &mut d,
            &format!("{name} demand"),
            &rep.demand,
            &case["demand"],
        );
        compare_equation(
            &mut d,
            &format!("{name} supply"),
            &rep.supply,
            &case["supply"],
        );
    }
    d.finish(&format!(
        "statsmodels {} / numpy {}",
        reference["statsmodels"], reference["numpy"]
    ));
}

fn demo_options() -> FitOptions {
    let mut o = balance_options();
    o.supply_shifters = vec!["fertiliser_price".into(), "rainfall".into()];
    o.balance.area = Some("area".into());
    o.balance.yield_col = Some("yield".into());
    o
}

/// Checks every generator parameter is within `k` classical standard errors of its estimate.
fn assert_recovered(rep: &FitReport, p: &HistoryParams, k: f64) {
    let want = [
        ("demand", &rep.demand, "intercept", p.demand_intercept),
        ("demand", &rep.demand, "price", p.demand_slope),
        ("demand", &rep.demand, "trend", p.demand_trend),
        ("area", &rep.supply, "intercept", p.area_intercept),
        ("area", &rep.supply, "lagged_price", p.area_price),
        ("area", &rep.supply, "fertiliser_price", p.area_fert),
        // rainfall moves yields, not the area planted
        ("area", &rep.supply, "rainfall", 0.0),
    ];
    for (eq, e, term, truth) in want {
        let t = e.terms.iter().find(|t| t.name == term).unwrap();
        let z = (t.estimate - truth) / t.std_error;
        eprintln!(
            "{} seasons, {eq} {term}: true {truth}, estimate {:.5} (se {:.5}), z = {z:.2}",
            p.seasons, t.estimate, t.std_error
        );
        assert!(z.abs() < k, "{eq} {term}: z = {z}");
    }
    let y = rep.yield_trend.as_ref().unwrap();
    let z = (y.slope - p.yield_trend) / y.slope_std_error;
    eprintln!(
        "yield trend: true {}, estimate {:.5}, z = {z:.2}",
        p.yield_trend, y.slope
    );
    assert!(z.abs() < k, "yield trend z = {z}");
    // the residual sds estimate the disturbance sds (loose: within 25%)
    assert!(rel(rep.demand.residual_sd, p.demand_sd) < 0.25);
    assert!(rel(rep.supply.residual_sd, p.area_sd) < 0.25);
}

/// The generator's known parameters are recovered from its balance sheets: 2SLS demand on use and
/// OLS of the area on the lagged price, every coefficient within 3 standard errors, on the shipped
/// 40-season demo history and on a 600-season history from the same generator (consistency; common
/// practice, no source).
#[test]
fn generator_parameters_are_recovered() {
    let p = HistoryParams::default();
    let shipped = include_str!("../examples/veldmark_history.csv");
    assert_eq!(
        shipped,
        to_csv(&generate(&p).unwrap()),
        "examples/veldmark_history.csv is stale: rerun `cargo run --example make_history`"
    );
    let rep = fit_text("veldmark_history.csv", shipped, &demo_options()).unwrap();
    assert_recovered(&rep, &p, 3.0);

    let long = HistoryParams {
        seasons: 600,
        seed: 7,
        yield_trend: 0.0005,
        ..HistoryParams::default()
    };
    let csv = to_csv(&generate(&long).unwrap());
    let rep = fit_text("long.csv", &csv, &demo_options()).unwrap();
    assert_recovered(&rep, &long, 3.0);
    // with 600 seasons the estimates are tight: the slopes within 0.05 of the truth
    assert!((rep.demand.slope() - long.demand_slope).abs() < 0.05);
    assert!((rep.supply.slope() - long.area_price).abs() < 0.02);
}

/// OLS of demand is biased towards zero when the price moves with the demand disturbance; 2SLS removes
/// the bias (simultaneity bias, e.g. Working 1927 on statistical demand curves; from memory). Averaged
/// over 200 simulated 200-season histories, OLS's demand slope is further from the truth than 2SLS's.
#[test]
fn two_stage_removes_simultaneity_bias() {
    let (mut ols_sum, mut tsls_sum) = (0.0, 0.0);
    let reps = 200;
    let base = HistoryParams {
        seasons: 200,
        demand_sd: 6.0,
        yield_trend: 0.0,
        yield_base: 2.5,
        ..HistoryParams::default()
    };
    for seed in 0..reps {
        let p = HistoryParams {
            seed: 1000 + seed,
            ..base.clone()
        };
        let csv = to_csv(&generate(&p).unwrap());
        let o = FitOptions {
            method: FitMethod::Ols,
            ..demo_options()
        };
        ols_sum += fit_text("h.csv", &csv, &o).unwrap().demand.slope();
        tsls_sum += fit_text("h.csv", &csv, &demo_options())
            .unwrap()
            .demand
            .slope();
    }
    let (ols_mean, tsls_mean) = (ols_sum / reps as f64, tsls_sum / reps as f64);
    eprintln!(
        "mean demand slope: OLS {ols_mean:.4}, 2SLS {tsls_mean:.4}, true {}",
        base.demand_slope
    );
    assert!(
        (tsls_mean - base.demand_slope).abs() < 0.02,
        "2SLS mean {tsls_mean}"
    );
    assert!(
        (ols_mean - base.demand_slope).abs() > 3.0 * (tsls_mean - base.demand_slope).abs(),
        "OLS {ols_mean} vs 2SLS {tsls_mean}"
    );
}

fn market_names() -> MarketNames {
    MarketNames {
        name: "test".into(),
        quantity_unit: "kt".into(),
        price_unit: "crowns per t".into(),
    }
}

fn balance_options() -> FitOptions {
    FitOptions {
        demand_shifters: vec!["trend".into()],
        supply_shifters: vec!["rainfall".into(), "fertiliser_price".into()],
        method: FitMethod::TwoStage,
        balance: Balance {
            production: Some("production".into()),
            domestic_use: Some("use".into()),
            imports: Some("imports".into()),
            exports: Some("exports".into()),
            stock_change: Some("stock_change".into()),
            ..FitOptions::default().balance
        },
        ..FitOptions::default()
    }
}

/// A synthetic balance sheet from known linear parameters, made here (not by the crate's generator):
/// production_t = 44 + 0.5·P_{t−1} + 0.06·rainfall_t − 0.1·fertiliser_price_t + v_t (sd 3),
/// imports, exports and the stock change exogenous, use_t = production + imports − exports − stock
/// change, and demand clears use: use_t = 190 − 1.0·P_t + 0.5·t + u_t (sd 3).
fn synthetic_balance_sheet(seasons: usize, seed: u64) -> String {
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let z = Normal::new(0.0, 1.0).unwrap();
    let mut s = String::from(
        "season,price,rainfall,fertiliser_price,trend,production,imports,exports,stock_change,use\n",
    );
    let mut prev = 100.0;
    for t in 1..=seasons {
        let mut draw = || -> f64 { z.sample(&mut rng) };
        let rain = 600.0 + 80.0 * draw();
        let fert = 300.0 + 20.0 * draw();
        let prod = 44.0 + 0.5 * prev + 0.06 * rain - 0.1 * fert + 3.0 * draw();
        let imports = (3.0 + draw()).max(0.0);
        let exports = (1.0 + 0.5 * draw()).max(0.0);
        let stock_change = 1.5 * draw();
        let u = 3.0 * draw();
        let use_ = prod + imports - exports - stock_change;
        let trend = (t as f64) * 200.0 / seasons as f64; // 0..200 over the sample
        let price = -(use_ - 190.0 - 0.5 * trend - u) / 1.0;
        s.push_str(&format!(
            "{},{price:.6},{rain:.3},{fert:.3},{trend:.6},{prod:.6},{imports:.6},{exports:.6},{stock_change:.6},{use_:.6}\n",
            1900 + t
        ));
        prev = price;
    }
    s
}

/// Balance sheets: demand estimated on use by 2SLS and supply on production recover the parameters
/// the sheet was generated with, each within two standard errors (the sampling distribution of the
/// estimates; common practice, no source); a row broken on purpose is named by line and season.
#[test]
fn balance_sheet_recovers_parameters_and_names_a_broken_row() {
    let csv = synthetic_balance_sheet(200, 11);
    let rep = fit_text("sheet.csv", &csv, &balance_options()).unwrap();
    let want = [
        (&rep.demand, "intercept", 190.0),
        (&rep.demand, "price", -1.0),
        (&rep.demand, "trend", 0.5),
        (&rep.supply, "intercept", 44.0),
        (&rep.supply, "lagged_price", 0.5),
        (&rep.supply, "rainfall", 0.06),
        (&rep.supply, "fertiliser_price", -0.1),
    ];
    for (e, term, truth) in want {
        let t = e.terms.iter().find(|t| t.name == term).unwrap();
        let z = (t.estimate - truth) / t.std_error;
        eprintln!(
            "{} {term}: true {truth}, estimate {:.5}, z = {z:.2}",
            e.dependent, t.estimate
        );
        assert!(z.abs() < 2.0, "{} {term}: z = {z}", e.dependent);
    }
    assert_eq!(rep.demand.dependent, "use");
    assert_eq!(rep.supply.dependent, "production");
    let b = rep.balance.as_ref().unwrap();
    assert!(b.identity_checked && b.largest_gap < 1e-5, "{b:?}");
    assert!(b.trade.is_some());

    // break one row: season 1950's use 2 kt too high (line 51: header on line 1, 1901 on line 2)
    let broken: String = csv
        .lines()
        .map(|l| {
            if l.starts_with("1950,") {
                let mut f: Vec<String> = l.split(',').map(str::to_string).collect();
                let u: f64 = f[9].parse().unwrap();
                f[9] = format!("{:.6}", u + 2.0);
                f.join(",")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    let e = fit_text("sheet.csv", &broken, &balance_options())
        .unwrap_err()
        .to_string();
    eprintln!("{e}");
    assert!(e.contains("in 1 row(s)"), "{e}");
    assert!(e.contains("line 51 (season 1950)"), "{e}");
    assert!(e.contains("gap -2.00000"), "{e}");
    // a wide enough tolerance accepts it
    let mut wide = balance_options();
    wide.balance.tolerance = 0.05;
    assert!(fit_text("sheet.csv", &broken, &wide).is_ok());
}

/// A partial-adjustment history (Nerlove 1958) from known parameters, made here:
/// Q_t = 20 + 0.3·P_{t−1} + 0.5·Q_{t−1} + 0.03·rainfall_t + v_t (sd 2), demand Q_t = 236 − P_t + u_t
/// (sd 2): long-run supply slope 0.6, adjustment weight 0.5.
fn partial_adjustment_history(seasons: usize, seed: u64) -> String {
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let z = Normal::new(0.0, 1.0).unwrap();
    let mut s = String::from("season,price,quantity,rainfall\n");
    let (mut p, mut q) = (100.0, 136.0);
    for t in 1..=seasons {
        let rain = 600.0 + 80.0 * z.sample(&mut rng);
        let qt = 20.0 + 0.3 * p + 0.5 * q + 0.03 * rain + 2.0 * z.sample(&mut rng);
        let pt = 236.0 - qt + 2.0 * z.sample(&mut rng);
        s.push_str(&format!("{},{pt:.6},{qt:.6},{rain:.3}\n", 2000 + t));
        (p, q) = (pt, qt);
    }
    s
}

fn pa_options() -> FitOptions {
    FitOptions {
        supply_shifters: vec!["rainfall".into()],
        stochastic_shifters: vec!["rainfall".into()],
        method: FitMethod::TwoStage,
        supply_model: SupplyModel::PartialAdjustment,
        ..FitOptions::default()
    }
}

/// Partial adjustment: θ and δ recovered within two standard errors; the long-run elasticity is the
/// short-run one over (1 − θ) (Nerlove 1958); and the written market — linear supply a + b·P^e with
/// adaptive expectations of weight 1 − θ — has, without shocks, exactly the path of the estimated
/// recursion Q_t = γ + δ·P_{t−1} + θ·Q_{t−1} with P_t from the fitted demand, continued from the last
/// season (the mapping derived in src/fit/market_file.rs, checked here by iterating both).
#[test]
fn partial_adjustment_market_follows_the_nerlove_recursion() {
    let csv = partial_adjustment_history(120, 5);
    let rep = fit_text("pa.csv", &csv, &pa_options()).unwrap();
    let pa = rep.partial_adjustment.clone().unwrap();
    let s = &rep.supply;
    for (term, truth) in [
        ("lagged_price", 0.3),
        ("lagged_quantity", 0.5),
        ("rainfall", 0.03),
    ] {
        let t = s.terms.iter().find(|t| t.name == term).unwrap();
        let z = (t.estimate - truth) / t.std_error;
        eprintln!(
            "{term}: true {truth}, estimate {:.5}, z = {z:.2}",
            t.estimate
        );
        assert!(z.abs() < 2.0, "{term}: z = {z}");
    }
    let theta = s.terms[2].estimate;
    assert_eq!(pa.theta, theta);
    let short = s.slope() * s.mean_price / s.mean_quantity;
    assert!(rel(pa.short_run_elasticity, short) < 1e-12);
    assert!(rel(pa.long_run_elasticity, short / (1.0 - theta)) < 1e-12);

    let text = rep.market_toml(&market_names()).unwrap();
    let v: toml::Table = toml::from_str(&text).unwrap();
    assert_eq!(v["expectations"]["rule"].as_str(), Some("adaptive"));
    assert!(rel(v["expectations"]["weight"].as_float().unwrap(), 1.0 - theta) < 1e-11);
    let scenario = furrow::scenario::market_from_str("pa.toml", &text).unwrap();
    let model = furrow::engine::Model::new(&scenario, &furrow::policies::PolicySpec::none());
    let mut sim = model.simulator();
    // the recursion, from the last observed season
    let last: Vec<f64> = csv
        .lines()
        .last()
        .unwrap()
        .split(',')
        .map(|c| c.parse().unwrap())
        .collect();
    let (mut p, mut q) = (last[1], last[2]);
    let gamma = s.held_intercept();
    let (ad, bd) = (rep.demand.held_intercept(), rep.demand.slope());
    let mut worst = 0.0f64;
    for t in 1..=30 {
        q = gamma + s.slope() * p + theta * q;
        p = (q - ad) / bd;
        let r = sim.step(&furrow::engine::PeriodShock::NONE).unwrap();
        worst = worst.max(rel(r.harvest, q)).max(rel(r.price, p));
        assert!(
            rel(r.harvest, q) < 1e-9 && rel(r.price, p) < 1e-9,
            "period {t}: engine Q {} P {}, recursion Q {q} P {p}",
            r.harvest,
            r.price
        );
    }
    eprintln!("engine vs partial-adjustment recursion, 30 periods: max rel diff {worst:.2e}");
}

/// statsmodels on the shipped history's balance-sheet columns and the partial-adjustment supply
/// (tests/reference/fit_reference.py --extended), to 1e-8 relative, including the long-run
/// elasticity short-run / (1 − θ) computed there from statsmodels' coefficients (Nerlove 1958).
#[test]
fn statsmodels_reference_balance_sheet_and_partial_adjustment() {
    let Some((reference, text)) = statsmodels_reference(&["--extended"]) else {
        return;
    };
    let mut d = Diff::new(1e-8);
    let cases = reference["cases"].as_array().unwrap();
    assert!(cases.len() >= 4);
    let mut pa_cases = 0;
    for case in cases {
        let col = |k: &str| case[k].as_str().unwrap().to_string();
        let mut balance = FitOptions::default().balance;
        match (col("demand_q").as_str(), col("supply_q").as_str()) {
            ("quantity", "quantity") => {}
            (u, "area") => {
                balance.domestic_use = Some(u.into());
                balance.production = Some("production".into());
                balance.area = Some("area".into());
                balance.yield_col = Some("yield".into());
            }
            (u, p) => {
                balance.domestic_use = Some(u.into());
                balance.production = Some(p.into());
            }
        }
        let opts = FitOptions {
            shifters: names_of(&case["both"]),
            demand_shifters: names_of(&case["demand_only"]),
            supply_shifters: names_of(&case["supply_only"]),
            form: match case["form"].as_str().unwrap() {
                "log" => FitForm::Log,
                _ => FitForm::Linear,
            },
            method: match case["method"].as_str().unwrap() {
                "2sls" => FitMethod::TwoStage,
                _ => FitMethod::Ols,
            },
            supply_model: match case["supply_model"].as_str().unwrap() {
                "partial-adjustment" => SupplyModel::PartialAdjustment,
                _ => SupplyModel::LaggedPrice,
            },
            balance,
            ..FitOptions::default()
        };
        let name = case["name"].as_str().unwrap();
        let rep = fit_text("veldmark_history.csv", &text, &opts).unwrap();
        compare_equation(
            &mut d,
            &format!("{name} demand"),
            &rep.demand,
            &case["demand"],
        );
        compare_equation(
            &mut d,
            &format!("{name} supply"),
            &rep.supply,
            &case["supply"],
        );
        if let Some(lr) = case["supply"].get("long_run_elasticity") {
            pa_cases += 1;
            let pa = rep.partial_adjustment.as_ref().unwrap();
            d.check(
                &format!("{name} long-run elasticity"),
                pa.long_run_elasticity,
                lr.as_f64().unwrap(),
            );
        }
    }
    assert!(pa_cases >= 3);
    d.finish(&format!(
        "extended cases, statsmodels {} / numpy {}",
        reference["statsmodels"], reference["numpy"]
    ));
}

fn names_of(v: &serde_json::Value) -> Vec<String> {
    names(v)
}

/// Steady state of a written linear market (parsed by the library, as `check` does).
fn steady(rep: &FitReport) -> (f64, f64) {
    let text = rep.market_toml(&market_names()).unwrap();
    let s = furrow::scenario::market_from_str("m.toml", &text).unwrap();
    (s.steady.price, s.steady.quantity)
}

/// `--at-season`: holding the demand trend at season s instead of its sample mean t̄ shifts the
/// demand intercept by φ·(t_s − t̄), so with linear curves Q = a_d + b_d·P and Q = a_s + b_s·P
/// (P* = (a_d − a_s)/(b_s − b_d)) the steady state moves by ΔP* = φ·(t_s − t̄)/(b_s − b_d) and
/// ΔQ* = b_s·ΔP* (derived here from the two curve equations). Also outside the data: the trend column
/// is a straight line in the season and is extended.
#[test]
fn at_season_moves_the_steady_state_by_trend_times_distance() {
    let text = include_str!("../examples/veldmark_history.csv");
    let base = FitOptions {
        demand_shifters: vec!["trend".into()],
        supply_shifters: vec!["rainfall".into()],
        stochastic_shifters: vec!["rainfall".into()],
        method: FitMethod::TwoStage,
        balance: Balance {
            production: Some("production".into()),
            domestic_use: Some("use".into()),
            ..FitOptions::default().balance
        },
        at_season: AtSeason::Mean,
        ..FitOptions::default()
    };
    let at_mean = fit_text("h.csv", text, &base).unwrap();
    let (p0, q0) = steady(&at_mean);
    let phi = at_mean.demand.terms[2].estimate;
    let t_bar = 20.5; // trend 1..40
    let (bd, bs) = (at_mean.demand.slope(), at_mean.supply.slope());
    for (season, trend) in [(2024, 40.0), (1990, 6.0), (2030, 46.0)] {
        let rep = fit_text(
            "h.csv",
            text,
            &FitOptions {
                at_season: AtSeason::Season(season),
                ..base.clone()
            },
        )
        .unwrap();
        let (p, q) = steady(&rep);
        let dp = phi * (trend - t_bar) / (bs - bd);
        eprintln!("season {season}: P* {p:.4} (mean-held {p0:.4}), derived shift {dp:.4}");
        assert!(
            (p - p0 - dp).abs() < 1e-8,
            "season {season}: {p} − {p0} vs {dp}"
        );
        assert!((q - q0 - bs * dp).abs() < 1e-8, "season {season}");
    }
    // the default is the last season
    let last = fit_text(
        "h.csv",
        text,
        &FitOptions {
            at_season: AtSeason::Last,
            ..base.clone()
        },
    )
    .unwrap();
    assert_eq!(last.projection_season, Some(2024));
    // a shifter that is not a straight line has no value beyond the data
    let e = fit_text(
        "h.csv",
        text,
        &FitOptions {
            supply_shifters: vec!["rainfall".into(), "fertiliser_price".into()],
            at_season: AtSeason::Season(2030),
            ..base
        },
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("`fertiliser_price` has no value in season 2030"),
        "{e}"
    );
}

/// The shipped fitted demo market (examples/veldmark_fitted.toml, rainfall kept as risk), simulated
/// over 2000 histories of 40 seasons: the median simulated price CV is within 15 % of the history's
/// (the target of the calibration issue; common practice, no source).
#[test]
fn fitted_demo_price_cv_is_close_to_the_history() {
    let root = env!("CARGO_MANIFEST_DIR");
    let text = include_str!("../examples/veldmark_history.csv");
    let market = std::fs::read_to_string(format!("{root}/examples/veldmark_fitted.toml")).unwrap();
    let rep = fit_text("veldmark_history.csv", text, &demo_options()).unwrap();
    let c = check_history(&rep, &market, 2000, 42).unwrap();
    let row = c.rows.iter().find(|r| r.statistic == "price_cv").unwrap();
    eprintln!(
        "price cv: history {:.4}, simulated median {:.4} (5-95 %: {:.4}-{:.4})",
        row.history, row.p50, row.p05, row.p95
    );
    assert!(rel(row.p50, row.history) < 0.15, "{row:?}");
    assert!(!row.outside);
    assert_eq!(c.diverged, 0);
}

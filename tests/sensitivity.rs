//! `sensitivity`: the assumption panel, the forecast-error decomposition and the tornado, each
//! checked against separate `compare` runs of files written with the assumption set (identities
//! derived in the test: the panel is defined as those runs, so they must agree bit for bit).

mod common;

use common::{bin, stdout_of};
use furrow::compare::{compare, CompareResult};
use furrow::policies::file::policy_from_str;
use furrow::scenario::{market_from_str, ExpectationSpec};
use furrow::sensitivity::{parse_range, parse_rules, read_range, sensitivity, Inputs, Request};
use furrow::stochastic::NoProgress;
use serde_json::Value;

const MARKET: &str = "examples/veldmark_weather.toml";
const BAND: &str = "policies/price_band.toml";
const PAYMENT: &str = "policies/deficiency_payment.toml";
const REPS: &str = "40";

fn json(text: &str) -> Value {
    serde_json::from_str(text).expect("valid JSON")
}

/// The market file with its `[expectations]` replaced by `section` (a TOML body) and optionally
/// one more key set, written to a temporary folder.
fn market_with(
    dir: &tempfile::TempDir,
    name: &str,
    section: &str,
    set: Option<(&str, f64)>,
) -> String {
    let text = std::fs::read_to_string(MARKET).unwrap();
    let mut table: toml::Table = text.parse().unwrap();
    let rule: toml::Table = section.parse().unwrap();
    table.insert("expectations".into(), toml::Value::Table(rule));
    if let Some((key, v)) = set {
        let (s, k) = key.split_once('.').unwrap();
        table
            .get_mut(s)
            .and_then(|t| t.as_table_mut())
            .unwrap()
            .insert(k.into(), toml::Value::Float(v));
    }
    let path = dir.path().join(name);
    std::fs::write(&path, toml::to_string(&table).unwrap()).unwrap();
    path.display().to_string()
}

fn compare_json(market: &str, policies: &[&str]) -> Value {
    let mut args = vec!["compare", market];
    args.extend(policies);
    args.extend(["--replications", REPS, "--format", "json"]);
    json(&stdout_of(args))
}

const RULES: &[(&str, &str)] = &[
    ("naive", "rule = \"naive\""),
    ("adaptive:0.6", "rule = \"adaptive\"\nweight = 0.6"),
    (
        "normal-price:0.5",
        "rule = \"normal-price\"\nweight = 0.5\nwindow = 3",
    ),
    ("trailing-mean:3", "rule = \"trailing-mean\"\nwindow = 3"),
    ("rational", "rule = \"rational\""),
];

#[test]
fn cli_panel_cells_and_forecast_gains_equal_separate_compare_runs() {
    let list: Vec<&str> = RULES.iter().map(|(s, _)| *s).collect();
    let out = json(&stdout_of([
        "sensitivity",
        MARKET,
        BAND,
        PAYMENT,
        "--rules",
        &list.join(","),
        "--indicator",
        "net_welfare_change_pv",
        "--indicator",
        "fiscal_cost_pv",
        "--indicator",
        "mean_price",
        "--replications",
        REPS,
        "--format",
        "json",
    ]));
    let panel = out["panel"].as_array().unwrap();
    assert_eq!(panel.len(), RULES.len() * 2);
    let dir = tempfile::tempdir().unwrap();
    // a policy file that only changes the rule: compare's behaviour column is the free market
    // under rational expectations against the free market under the market file's rule
    let rational = dir.path().join("rational.toml");
    std::fs::write(
        &rational,
        "[policy]\nname = \"rational farmers\"\n[expectations]\nrule = \"rational\"\n",
    )
    .unwrap();
    for (r, (_, section)) in RULES.iter().enumerate() {
        let market = market_with(&dir, &format!("m{r}.toml"), section, None);
        let separate = compare_json(&market, &[BAND, PAYMENT]);
        for k in 0..2 {
            let cell = &panel[r * 2 + k];
            let column = &separate["policies"][k];
            assert_eq!(cell["policy"], column["name"]);
            for key in [
                "net_welfare_change_pv",
                "net_welfare_change_pv_se",
                "fiscal_cost_pv",
                "fiscal_cost_pv_se",
                "mean_price",
                "mean_price_se",
            ] {
                assert!(column["indicators"][key].is_number(), "{key}");
                assert_eq!(
                    cell["indicators"][key], column["indicators"][key],
                    "rule {section}, policy {k}, {key}"
                );
            }
        }
        let gain = &out["forecasts"][r];
        let alone = compare_json(&market, &[rational.to_str().unwrap()]);
        match alone["behaviour_changes"].as_array().unwrap().first() {
            Some(b) => {
                assert_eq!(
                    gain["net_welfare_change_pv"],
                    b["indicators"]["net_welfare_change_pv"]
                );
                assert_eq!(
                    gain["net_welfare_change_pv_se"],
                    b["indicators"]["net_welfare_change_pv_se"]
                );
            }
            // the market's rule is the rational one: nothing to gain
            None => assert_eq!(gain["net_welfare_change_pv"].as_f64(), Some(0.0)),
        }
    }
    // the robustness count follows from the cells: a gain beyond two standard errors
    for (k, r) in out["robustness"].as_array().unwrap().iter().enumerate() {
        let gains = (0..RULES.len())
            .filter(|&i| {
                let c = &panel[i * 2 + k]["indicators"];
                let (x, se) = (
                    c["net_welfare_change_pv"].as_f64().unwrap(),
                    c["net_welfare_change_pv_se"].as_f64().unwrap(),
                );
                x > 2.0 * se
            })
            .count();
        assert_eq!(r["gains"].as_u64(), Some(gains as u64));
        assert_eq!(r["assumptions"].as_u64(), Some(RULES.len() as u64));
    }
}

#[test]
fn a_policys_own_expectation_override_is_replaced_by_the_panels_rule() {
    // band_cautious_farmers.toml holds adaptive 0.33; under the panel's naive row it must give
    // the same cells as the same band written without the override, in a naive market
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string("policies/band_cautious_farmers.toml").unwrap();
    let mut table: toml::Table = text.parse().unwrap();
    table.remove("expectations");
    let plain = dir.path().join("plain.toml");
    std::fs::write(&plain, toml::to_string(&table).unwrap()).unwrap();
    let out = json(&stdout_of([
        "sensitivity",
        MARKET,
        "policies/band_cautious_farmers.toml",
        "--rules",
        "naive",
        "--replications",
        REPS,
        "--format",
        "json",
    ]));
    let market = market_with(&dir, "naive.toml", "rule = \"naive\"", None);
    let separate = compare_json(&market, &[plain.to_str().unwrap()]);
    for key in ["net_welfare_change_pv", "fiscal_cost_pv", "price_cv"] {
        assert_eq!(
            out["panel"][0]["indicators"][key], separate["policies"][0]["indicators"][key],
            "{key}"
        );
    }
}

/// The files as the library takes them (the market as parsed, each policy as parsed).
fn inputs(market: toml::Table, policies: &[(&str, toml::Table)]) -> Inputs {
    Inputs {
        market_file: MARKET.into(),
        market,
        policies: policies
            .iter()
            .map(|(f, t)| (f.to_string(), t.clone()))
            .collect(),
    }
}

fn table_of(path: &str) -> toml::Table {
    std::fs::read_to_string(path).unwrap().parse().unwrap()
}

/// `compare` on files written out as text and read back as a user's files would be.
fn separate(market: &toml::Table, policies: &[(&str, toml::Table)]) -> CompareResult {
    let scenario = market_from_str("m.toml", &toml::to_string(market).unwrap()).unwrap();
    let specs: Vec<_> = policies
        .iter()
        .map(|(f, t)| policy_from_str(f, &toml::to_string(t).unwrap()).unwrap())
        .collect();
    compare(&scenario, &specs, &NoProgress).unwrap()
}

fn bits(v: Option<f64>) -> Option<u64> {
    v.map(f64::to_bits)
}

fn small_market() -> toml::Table {
    let mut m = table_of(MARKET);
    m.get_mut("run")
        .and_then(|r| r.as_table_mut())
        .unwrap()
        .insert("replications".into(), toml::Value::Integer(40));
    m
}

#[test]
fn library_panel_cells_and_forecasts_equal_compare_bit_for_bit() {
    let market = small_market();
    let policies = [(BAND, table_of(BAND)), (PAYMENT, table_of(PAYMENT))];
    let list: Vec<&str> = RULES.iter().map(|(s, _)| *s).collect();
    let request = Request {
        rules: parse_rules(&list.join(",")).unwrap(),
        ranges: Vec::new(),
        indicators: vec![
            "net_welfare_change_pv".into(),
            "price_sd".into(),
            "mean_price".into(),
        ],
    };
    let out = sensitivity(&inputs(market.clone(), &policies), &request, &NoProgress).unwrap();
    assert!(out.tornado.is_empty());
    for (r, (_, section)) in RULES.iter().enumerate() {
        let mut m = market.clone();
        m.insert(
            "expectations".into(),
            toml::Value::Table(section.parse().unwrap()),
        );
        let result = separate(&m, &policies);
        for k in 0..2 {
            let cell = &out.panel[r * 2 + k];
            for key in [
                "net_welfare_change_pv",
                "net_welfare_change_pv_se",
                "price_sd",
                "mean_price_se",
            ] {
                let expected = result.policies[k].number(key);
                assert!(expected.is_some(), "{key}");
                assert_eq!(
                    bits(cell.number(key)),
                    bits(expected),
                    "{section} {k} {key}"
                );
            }
        }
        // rational farmers in the same market file, left alone, against the rule left alone
        let mut rational = toml::Table::new();
        rational.insert(
            "policy".into(),
            toml::Value::Table("name = \"r\"".parse().unwrap()),
        );
        rational.insert(
            "expectations".into(),
            toml::Value::Table("rule = \"rational\"".parse().unwrap()),
        );
        let alone = separate(&m, &[("r.toml", rational)]);
        let gain = &out.forecasts[r];
        match alone.behaviour.first() {
            Some(b) => {
                assert_eq!(
                    bits(gain.net_welfare_change_pv),
                    bits(b.number("net_welfare_change_pv"))
                );
                assert_eq!(
                    bits(gain.net_welfare_change_pv_se),
                    bits(b.number("net_welfare_change_pv_se"))
                );
            }
            None => assert_eq!(gain.net_welfare_change_pv, Some(0.0)),
        }
    }
}

#[test]
fn tornado_ends_equal_separate_runs_with_the_key_set() {
    let market = small_market();
    let policies = [(BAND, table_of(BAND)), (PAYMENT, table_of(PAYMENT))];
    let request = Request {
        rules: parse_rules("naive").unwrap(),
        ranges: vec![
            parse_range("demand.elasticity=-0.4:-0.15").unwrap(),
            parse_range("stock.capacity=30:90").unwrap(),
            parse_range("run.periods=20:40").unwrap(),
        ],
        indicators: Vec::new(),
    };
    let out = sensitivity(&inputs(market.clone(), &policies), &request, &NoProgress).unwrap();
    assert_eq!(out.tornado.len(), 6);
    let base = separate(&market, &policies);
    let set = |t: &toml::Table, key: &str, v: f64| {
        let mut t = t.clone();
        let (s, k) = key.split_once('.').unwrap();
        let value = if k == "periods" {
            toml::Value::Integer(v as i64)
        } else {
            toml::Value::Float(v)
        };
        t.get_mut(s)
            .and_then(|x| x.as_table_mut())
            .unwrap()
            .insert(k.into(), value);
        t
    };
    for bar in &out.tornado {
        let k = if bar.file == BAND { 0 } else { 1 };
        assert_eq!(
            bits(bar.base),
            bits(base.policies[k].number("net_welfare_change_pv"))
        );
        for (v, at) in [(bar.low, bar.at_low), (bar.high, bar.at_high)] {
            let result = if bar.key.starts_with("stock.") {
                // a policy key: only files that have the section take it
                let band = set(&policies[0].1, &bar.key, v);
                separate(&market, &[(BAND, band), policies[1].clone()])
            } else {
                separate(&set(&market, &bar.key, v), &policies)
            };
            assert_eq!(
                bits(at),
                bits(result.policies[k].number("net_welfare_change_pv")),
                "{} = {v}, policy {k}",
                bar.key
            );
        }
        let swing = (bar.at_high.unwrap() - bar.at_low.unwrap()).abs();
        assert_eq!(bits(bar.swing), bits(Some(swing)));
    }
    // the payment has no [stock]: the capacity leaves it where it was
    let payment = out
        .tornado
        .iter()
        .find(|b| b.file == PAYMENT && b.key == "stock.capacity")
        .unwrap();
    assert_eq!(bits(payment.at_low), bits(payment.base));
    assert_eq!(payment.swing, Some(0.0));
    // widest swing first, per policy
    for f in [BAND, PAYMENT] {
        let swings: Vec<f64> = out
            .tornado
            .iter()
            .filter(|b| b.file == f)
            .map(|b| b.swing.unwrap())
            .collect();
        assert!(swings.windows(2).all(|w| w[0] >= w[1]), "{swings:?}");
    }
}

#[test]
fn a_rule_under_which_the_market_diverges_is_a_marked_row_not_a_failure() {
    // extrapolative ρ = 0.3 on this market: the free market's price goes negative within a few
    // seasons (what the run itself reports); the test checks that the panel marks the row
    let out = json(&stdout_of([
        "sensitivity",
        MARKET,
        BAND,
        "--rules",
        "naive,extrapolative:0.3",
        "--replications",
        "10",
        "--format",
        "json",
    ]));
    let row = &out["panel"][1];
    assert!(
        row["diverged"].as_str().unwrap().contains("diverging"),
        "{row}"
    );
    assert!(out["panel"][0].get("diverged").is_none());
    assert_eq!(out["robustness"][0]["diverged"].as_u64(), Some(1));
    assert!(out["forecasts"][1]["net_welfare_change_pv"].is_null());
}

#[test]
fn short_forms_read_as_the_same_sections_in_a_file() {
    let pairs = [
        ("adaptive:0.6", "rule = \"adaptive\"\nweight = 0.6"),
        ("trailing-mean:3", "rule = \"trailing-mean\"\nwindow = 3"),
        (
            "normal-price:0.5:normal_price=212",
            "rule = \"normal-price\"\nweight = 0.5\nnormal_price = 212.0",
        ),
        (
            "adaptive:0.6:initial_expected_price=200",
            "rule = \"adaptive\"\nweight = 0.6\ninitial_expected_price = 200.0",
        ),
        ("naive", "rule = \"naive\""),
    ];
    for (short, section) in pairs {
        assert_eq!(
            ExpectationSpec::from_short(short, "--rules").unwrap(),
            ExpectationSpec::parse(section).unwrap(),
            "{short}"
        );
    }
    // every registered rule has a short form that validates
    assert_eq!(
        ExpectationSpec::short_forms().len(),
        furrow::expectations::RULES.len()
    );
}

fn fails_with(args: &[&str], needle: &str) {
    let out = bin().args(args).output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains(needle), "{needle:?} not in {err}");
    assert!(out.stdout.is_empty());
}

#[test]
fn bad_options_are_refused_naming_option_key_value_and_range() {
    let base = ["sensitivity", MARKET, BAND, "--replications", "5"];
    let with = |extra: &[&'static str]| -> Vec<&str> {
        let mut v = base.to_vec();
        v.extend(extra);
        v
    };
    fails_with(&with(&["--rules", "naive,psychic"]), "allowed rules: naive");
    fails_with(
        &with(&["--rules", "adaptive:1.5"]),
        "expectations.weight = 1.5",
    );
    fails_with(&with(&["--rules", "adaptive:1.5"]), "(0, 1]");
    fails_with(&with(&["--rules", "naive:3"]), "takes no number");
    fails_with(&with(&["--rules", "adaptive:x"]), "NAME:NUMBER");
    fails_with(&with(&["--rules", "naive,naive"]), "listed twice");
    fails_with(
        &with(&["--rules", "naive", "--indicator", "happiness"]),
        "--indicator happiness",
    );
    fails_with(
        &with(&["--rules", "naive", "--indicator", "verdict"]),
        "not a number",
    );
    fails_with(
        &with(&["--range", "demand.elasticity=-0.1:-0.4"]),
        "LOW must be below HIGH",
    );
    fails_with(&with(&["--range", "demand.elasticity"]), "KEY=LOW:HIGH");
    fails_with(
        &with(&["--range", "demand.elasticty=-0.4:-0.1"]),
        "elasticty",
    );
    fails_with(
        &with(&["--range", "demand.elasticity=-0.4:0.5"]),
        "demand.elasticity",
    );
    fails_with(
        &with(&["--range", "floor.price=150:200"]),
        "no policy file given has a [floor]",
    );
}

#[test]
fn every_format_renders_without_non_numbers() {
    for format in ["table", "markdown", "csv", "json"] {
        let out = stdout_of([
            "sensitivity",
            MARKET,
            BAND,
            PAYMENT,
            "--rules",
            "naive,rational",
            "--range",
            "supply.elasticity=0.1:0.4",
            "--replications",
            "10",
            "--format",
            format,
        ]);
        for bad in ["NaN", "inf", "null"] {
            assert!(!out.contains(bad), "{format}: {bad} in\n{out}");
        }
        match format {
            "table" | "markdown" => {
                assert!(out.contains("net welfare gain under"), "{out}");
                assert!(out.contains("Caution:"));
                assert!(out.contains("Tornado"));
            }
            "csv" => {
                assert!(out.starts_with("part,policy,assumption,indicator,value\n"));
                assert!(out.contains("\ntornado,"));
                assert!(out.contains("\nforecasts,"));
            }
            _ => {
                let v = json(&out);
                assert!(v["panel"].is_array() && v["tornado"].is_array());
            }
        }
    }
}

#[test]
fn plots_write_one_tornado_per_policy_in_png_and_svg() {
    let dir = tempfile::tempdir().unwrap();
    let plots = dir.path().join("figs");
    stdout_of([
        "sensitivity",
        MARKET,
        BAND,
        PAYMENT,
        "--rules",
        "naive",
        "--range",
        "demand.elasticity=-0.4:-0.15",
        "--range",
        "supply.elasticity=0.1:0.4",
        "--replications",
        "10",
        "--format",
        "csv",
        "--plots",
        plots.to_str().unwrap(),
    ]);
    let mut names: Vec<String> = std::fs::read_dir(&plots)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| !n.starts_with('.'))
        .collect();
    names.sort();
    assert_eq!(names.len(), 4, "{names:?}");
    assert!(names.iter().all(|n| n.starts_with("tornado_")));
    for n in &names {
        let bytes = std::fs::read(plots.join(n)).unwrap();
        if n.ends_with(".png") {
            assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
        } else {
            let svg = String::from_utf8(bytes).unwrap();
            assert!(svg.contains("demand.elasticity") && svg.contains("supply.elasticity"));
            assert!(!svg.contains("NaN"));
        }
    }
}

/// The documented `fit` of the Veldmark history (README, examples/make_history.rs) into `out`;
/// the report as JSON.
fn fit_veldmark(out: &std::path::Path) -> Value {
    json(&stdout_of([
        "fit",
        "examples/veldmark_history.csv",
        "--production",
        "production",
        "--use",
        "use",
        "--area",
        "area",
        "--yield",
        "yield",
        "--demand-shifter",
        "trend",
        "--supply-shifter",
        "fertiliser_price",
        "--method",
        "2sls",
        "--format",
        "json",
        "--out",
        out.to_str().unwrap(),
    ]))
}

#[test]
fn a_range_from_fit_is_the_estimate_plus_and_minus_two_standard_errors() {
    let dir = tempfile::tempdir().unwrap();
    let fitted = dir.path().join("fitted.toml");
    let report = fit_veldmark(&fitted);
    let path = fitted.display().to_string();
    let text = std::fs::read_to_string(&fitted).unwrap();
    // demand: the price coefficient and its classical standard error, as the report gives them
    let term = &report["demand"]["terms"][1];
    let (estimate, se) = (
        term["estimate"].as_f64().unwrap(),
        term["std_error"].as_f64().unwrap(),
    );
    assert!(se > 0.0);
    let r = read_range("demand.slope=fit", &path, &text).unwrap();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1.0);
    assert!(
        close(r.low, estimate - 2.0 * se),
        "{} vs {}",
        r.low,
        estimate - 2.0 * se
    );
    assert!(
        close(r.high, estimate + 2.0 * se),
        "{} vs {}",
        r.high,
        estimate + 2.0 * se
    );
    // supply = area × trend yield: the area slope's standard error times the trend yield (taken as
    // known), about the file's slope
    let table: toml::Table = text.parse().unwrap();
    let slope = table["supply"]["slope"].as_float().unwrap();
    let area = &report["supply"]["terms"][1];
    let yield_at = slope / area["estimate"].as_f64().unwrap();
    let r = read_range("supply.slope=fit", &path, &text).unwrap();
    assert!(close(0.5 * (r.low + r.high), slope));
    assert!(close(
        0.25 * (r.high - r.low),
        area["std_error"].as_f64().unwrap() * yield_at
    ));

    // the tornado's ends equal separate runs with the key set at each end (the tornado runs the
    // market file as written, its own rule included)
    let mut market = table.clone();
    market
        .get_mut("run")
        .and_then(|t| t.as_table_mut())
        .unwrap()
        .insert("replications".into(), toml::Value::Integer(40));
    const FITTED_BAND: &str = "examples/fitted_band.toml";
    let policies = [(FITTED_BAND, table_of(FITTED_BAND))];
    let request = Request {
        rules: parse_rules("naive").unwrap(),
        ranges: vec![
            read_range("demand.slope=fit", &path, &text).unwrap(),
            read_range("supply.slope=fit", &path, &text).unwrap(),
        ],
        indicators: Vec::new(),
    };
    let out = sensitivity(&inputs(market.clone(), &policies), &request, &NoProgress).unwrap();
    assert_eq!(out.tornado.len(), 2);
    // the 2SLS demand slope is imprecise: its upper end nearly flattens demand, which then cannot
    // absorb the harvest (a marked bar); every other end is a number
    let mut compared = 0;
    for bar in &out.tornado {
        for (v, at) in [(bar.low, bar.at_low), (bar.high, bar.at_high)] {
            let mut m = market.clone();
            let (s, k) = bar.key.split_once('.').unwrap();
            m.get_mut(s)
                .and_then(|x| x.as_table_mut())
                .unwrap()
                .insert(k.into(), toml::Value::Float(v));
            let scenario = market_from_str("m.toml", &toml::to_string(&m).unwrap()).unwrap();
            let band =
                policy_from_str(FITTED_BAND, &toml::to_string(&policies[0].1).unwrap()).unwrap();
            match compare(&scenario, &[band], &NoProgress) {
                Ok(result) => {
                    let expected = result.policies[0].number("net_welfare_change_pv");
                    assert!(expected.is_some());
                    assert_eq!(bits(at), bits(expected), "{} = {v}", bar.key);
                    compared += 1;
                }
                // a run that diverges at this end is a marked bar, never a number
                Err(_) => assert!(at.is_none() && bar.diverged.is_some(), "{bar:?}"),
            }
        }
    }
    assert!(compared >= 3, "{compared}");

    // on the command line: the same ends in the tornado's JSON
    let v = json(&stdout_of([
        "sensitivity",
        path.as_str(),
        FITTED_BAND,
        "--rules",
        "naive",
        "--range",
        "demand.slope=fit",
        "--replications",
        "5",
        "--format",
        "json",
    ]));
    let bar = &v["tornado"][0];
    assert!(
        close(bar["low"].as_f64().unwrap(), estimate - 2.0 * se),
        "{bar}"
    );
    assert!(
        close(bar["high"].as_f64().unwrap(), estimate + 2.0 * se),
        "{bar}"
    );
}

#[test]
fn a_range_from_fit_on_a_file_without_standard_errors_names_the_file_and_the_key() {
    // a hand-written market records none
    fails_with(
        &[
            "sensitivity",
            MARKET,
            BAND,
            "--replications",
            "5",
            "--range",
            "demand.elasticity=fit",
        ],
        "examples/veldmark_weather.toml records no standard error for demand.elasticity",
    );
    // a fitted one records none for an intercept
    let dir = tempfile::tempdir().unwrap();
    let fitted = dir.path().join("fitted.toml");
    fit_veldmark(&fitted);
    let path = fitted.display().to_string();
    fails_with(
        &[
            "sensitivity",
            path.as_str(),
            "examples/fitted_band.toml",
            "--replications",
            "5",
            "--range",
            "demand.intercept=fit",
        ],
        "records no standard error for demand.intercept",
    );
}

//! Tests of `fit_text`, the report and the market file (error messages, TOML validity, calibration).

use super::market_file::MarketNames;
use super::synth::{generate, to_csv, HistoryParams};
use super::*;
use crate::output::Format;

fn demo_csv() -> String {
    to_csv(&generate(&HistoryParams::default()).unwrap())
}

fn demo_opts(form: FitForm, method: FitMethod) -> FitOptions {
    FitOptions {
        demand_shifters: vec!["trend".into()],
        supply_shifters: vec!["rainfall".into(), "fertiliser_price".into()],
        form,
        method,
        at_season: AtSeason::Mean,
        ..FitOptions::default()
    }
}

fn names() -> MarketNames {
    MarketNames {
        name: "Hill millet, Veldmark (fitted)".into(),
        quantity_unit: "kt".into(),
        price_unit: "crowns per t".into(),
    }
}

fn err(csv: &str, opts: &FitOptions) -> String {
    fit_text("h.csv", csv, opts).unwrap_err().to_string()
}

#[test]
fn fewer_seasons_than_parameters() {
    let csv = "season,price,quantity,rainfall,fertiliser_price,trend\n\
               2001,100,90,600,300,1\n2002,95,95,610,290,2\n2003,97,93,580,310,3\n2004,99,92,590,305,4\n";
    // supply: intercept, lagged_price, rainfall, fertiliser_price = 4 parameters, needs 5 seasons, has 3
    let e = err(csv, &demo_opts(FitForm::Linear, FitMethod::Ols));
    assert!(e.contains("supply equation has 4 parameters"), "{e}");
    assert!(e.contains("needs at least 5 seasons, but has 3"), "{e}");
    assert!(e.contains("first season has no previous price"), "{e}");
    let e = err(
        "season,price,quantity\n2001,100,90\n2002,95,95\n",
        &FitOptions::default(),
    );
    assert!(
        e.contains("demand equation has 2 parameters (intercept, price)"),
        "{e}"
    );
    let e = err("season,price,quantity\n", &FitOptions::default());
    assert!(e.contains("but has 0"), "{e}");
}

#[test]
fn missing_value_names_row_and_column() {
    let mut csv = demo_csv();
    csv = csv.replacen("1990,", "1990,,", 1);
    // the row for 1990 now has an empty price (and one field too many): the ragged row is reported
    let e = err(&csv, &demo_opts(FitForm::Linear, FitMethod::Ols));
    assert!(e.contains("line 7"), "{e}");
    let csv = demo_csv()
        .lines()
        .map(|l| {
            if l.starts_with("1990,") {
                let mut f: Vec<&str> = l.split(',').collect();
                f[3] = "NA";
                f.join(",")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    let e = err(&csv, &demo_opts(FitForm::Linear, FitMethod::Ols));
    assert!(
        e.contains("line 7 (season 1990), column `rainfall`: missing value"),
        "{e}"
    );
}

#[test]
fn non_positive_price_in_log_form() {
    let csv = "season,price,quantity\n2001,100,90\n2002,0,95\n2003,97,93\n2004,99,92\n";
    let e = err(
        csv,
        &FitOptions {
            form: FitForm::Log,
            ..FitOptions::default()
        },
    );
    assert!(
        e.contains("line 3 (season 2002), column `price`: 0 must be > 0 for --form log"),
        "{e}"
    );
    // the same data is fine in levels
    assert!(fit_text("h.csv", csv, &FitOptions::default()).is_ok());
}

#[test]
fn unknown_column_lists_the_available_ones() {
    let opts = FitOptions {
        supply_shifters: vec!["rain".into()],
        ..FitOptions::default()
    };
    let e = err(&demo_csv(), &opts);
    assert!(
        e.contains("no column `rain` (asked for by --supply-shifter)"),
        "{e}"
    );
    assert!(
        e.contains("available columns: season, price, quantity, rainfall, fertiliser_price, trend"),
        "{e}"
    );
}

#[test]
fn two_stage_needs_a_supply_only_shifter() {
    let opts = FitOptions {
        shifters: vec!["rainfall".into()],
        method: FitMethod::TwoStage,
        ..FitOptions::default()
    };
    assert_eq!(
        fit_text("h.csv", &demo_csv(), &opts),
        Err(FitError::NoInstruments)
    );
    assert!(FitError::NoInstruments
        .to_string()
        .contains("--supply-shifter"));
}

#[test]
fn duplicate_and_collinear_columns() {
    let opts = FitOptions {
        shifters: vec!["trend".into()],
        demand_shifters: vec!["trend".into()],
        ..FitOptions::default()
    };
    let e = err(&demo_csv(), &opts);
    assert!(
        e.contains("`trend` is given twice (--shifter and --demand-shifter)"),
        "{e}"
    );
    let csv = "season,price,quantity,c\n2001,100,90,5\n2002,95,95,5\n2003,97,93,5\n2004,99,92,5\n2005,96,94,5\n";
    let e = err(
        csv,
        &FitOptions {
            demand_shifters: vec!["c".into()],
            ..FitOptions::default()
        },
    );
    assert!(
        e.contains("demand equation, regressor `c` is constant"),
        "{e}"
    );
}

#[test]
fn json_has_the_interface_keys() {
    let rep = fit_text(
        "h.csv",
        &demo_csv(),
        &demo_opts(FitForm::Linear, FitMethod::TwoStage),
    )
    .unwrap();
    let v: serde_json::Value = serde_json::from_str(&rep.render(Format::Json)).unwrap();
    for eq in ["demand", "supply"] {
        let e = &v[eq];
        for k in [
            "terms",
            "r_squared",
            "residual_sd",
            "durbin_watson",
            "elasticity_at_means",
            "observations",
        ] {
            assert!(e.get(k).is_some(), "{eq}.{k}");
        }
        for t in e["terms"].as_array().unwrap() {
            for k in ["name", "estimate", "std_error", "robust_std_error", "t"] {
                assert!(t[k].is_string() || t[k].is_number(), "{eq} term {k}");
            }
        }
    }
    let tn = |eq: &str| -> Vec<String> {
        v[eq]["terms"]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| t["name"].as_str().unwrap().to_string())
            .collect()
    };
    assert_eq!(tn("demand"), ["intercept", "price", "trend"]);
    assert_eq!(
        tn("supply"),
        ["intercept", "lagged_price", "rainfall", "fertiliser_price"]
    );
    assert_eq!(v["demand"]["method"], "2sls");
    assert_eq!(v["demand"]["observations"], 40);
    assert_eq!(v["supply"]["observations"], 39);
    for f in [Format::Table, Format::Markdown, Format::Csv, Format::Json] {
        let s = rep.render(f);
        let bad = s
            .split(|c: char| !c.is_alphanumeric())
            .any(|w| ["nan", "inf", "infinity"].contains(&w.to_lowercase().as_str()));
        assert!(!bad, "{f:?}: {s}");
        assert!(s.contains("durbin_watson"), "{f:?}");
    }
    let csv = rep.render(Format::Csv);
    assert!(csv.starts_with("equation,method,term,estimate,std_error,robust_std_error,t\n"));
    assert_eq!(csv.lines().count(), 1 + 3 + 5 + 4 + 5);
}

#[test]
fn sha256_matches_the_fips_example() {
    // FIPS 180-2, appendix B.1: SHA-256("abc")
    assert_eq!(
        data_sha256(b"abc"),
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    );
}

#[test]
fn linear_market_file_is_valid_toml_with_fitted_curves() {
    let text = demo_csv();
    let rep = fit_text(
        "h.csv",
        &text,
        &demo_opts(FitForm::Linear, FitMethod::TwoStage),
    )
    .unwrap();
    let s = rep.market_toml(&names()).unwrap();
    let v: toml::Table = toml::from_str(&s).unwrap();
    assert_eq!(
        v["market"]["name"].as_str(),
        Some("Hill millet, Veldmark (fitted)")
    );
    assert_eq!(v["market"]["price_unit"].as_str(), Some("crowns per t"));
    assert_eq!(v["demand"]["form"].as_str(), Some("linear"));
    // intercept with the trend held at its mean (1..40 → 20.5)
    let d = &rep.demand;
    let want = d.terms[0].estimate + d.terms[2].estimate * 20.5;
    assert!((v["demand"]["intercept"].as_float().unwrap() - want).abs() < 1e-9);
    let close = |a: Option<f64>, b: f64| (a.unwrap() - b).abs() <= 1e-11 * b.abs();
    assert!(close(v["demand"]["slope"].as_float(), d.terms[1].estimate));
    assert!(v["demand"]["slope"].as_float().unwrap() < 0.0);
    assert!(v["supply"]["slope"].as_float().unwrap() > 0.0);
    assert_eq!(v["supply"]["form"].as_str(), Some("linear"));
    assert_eq!(v["expectations"]["rule"].as_str(), Some("naive"));
    assert_eq!(v["run"]["periods"].as_integer(), Some(40));
    assert_eq!(v["run"]["replications"].as_integer(), Some(1));
    assert_eq!(v["run"]["seed"].as_integer(), Some(42));
    let last: f64 = text
        .lines()
        .last()
        .unwrap()
        .split(',')
        .nth(1)
        .unwrap()
        .parse()
        .unwrap();
    assert_eq!(v["run"]["initial_price"].as_float(), Some(last));
    assert!(close(v["shocks"]["demand_sd"].as_float(), d.residual_sd));
    assert!(close(
        v["shocks"]["supply_sd"].as_float(),
        rep.supply.residual_sd
    ));
    assert!(s.contains(&format!("# data sha256: {}", data_sha256(text.as_bytes()))));
    assert!(s.contains("2SLS, instruments: rainfall, fertiliser_price"));
    assert!(s.contains("Durbin–Watson"));
}

#[test]
fn log_market_file_is_calibrated_on_the_fitted_curve() {
    let text = demo_csv();
    let rep = fit_text("h.csv", &text, &demo_opts(FitForm::Log, FitMethod::Ols)).unwrap();
    let s = rep.market_toml(&names()).unwrap();
    let v: toml::Table = toml::from_str(&s).unwrap();
    let rows: Vec<(f64, f64)> = text
        .lines()
        .skip(1)
        .map(|l| {
            let f: Vec<f64> = l.split(',').map(|c| c.parse().unwrap()).collect();
            (f[1], f[2])
        })
        .collect();
    let n = rows.len() as f64;
    let d = &v["demand"];
    assert_eq!(d["form"].as_str(), Some("constant-elasticity"));
    let (ap, aq, el) = (
        d["at_price"].as_float().unwrap(),
        d["at_quantity"].as_float().unwrap(),
        d["elasticity"].as_float().unwrap(),
    );
    assert!((ap - rows.iter().map(|r| r.0).sum::<f64>() / n).abs() < 1e-9);
    // An OLS fit with an intercept passes through the means of its variables (textbook property), so
    // the curve at the geometric-mean price gives the geometric-mean quantity (shifter at its mean).
    let gm_p = (rows.iter().map(|r| r.0.ln()).sum::<f64>() / n).exp();
    let gm_q = (rows.iter().map(|r| r.1.ln()).sum::<f64>() / n).exp();
    let q_at = aq * (gm_p / ap).powf(el);
    assert!((q_at / gm_q - 1.0).abs() < 1e-10, "{q_at} vs {gm_q}");
    assert!(el < 0.0);
    assert_eq!(v["supply"]["form"].as_str(), Some("constant-elasticity"));
    assert!(v["supply"]["elasticity"].as_float().unwrap() > 0.0);
    let sd = rep.supply.residual_sd;
    let cv = v["shocks"]["yield_cv"].as_float().unwrap();
    assert!((cv - ((sd * sd).exp() - 1.0).sqrt()).abs() < 1e-12 * cv);
    assert!((cv - sd).abs() < 0.01 * sd, "cv ≈ log sd for small sd");
    assert!(v["shocks"].get("supply_sd").is_none());
}

#[test]
fn wrong_sign_refuses_the_market_file() {
    // quantity rising one for one with price in the same season: "demand" slopes up
    let csv =
        "season,price,quantity\n2001,100,100\n2002,90,91\n2003,110,109\n2004,95,96\n2005,105,104\n";
    let rep = fit_text("h.csv", csv, &FitOptions::default()).unwrap();
    assert!(rep.demand.slope() > 0.0);
    let e = rep.market_toml(&names()).unwrap_err().to_string();
    assert!(e.contains("demand slope is") && e.contains("< 0"), "{e}");
}

fn sheet_opts() -> FitOptions {
    FitOptions {
        demand_shifters: vec!["trend".into()],
        supply_shifters: vec!["rainfall".into(), "fertiliser_price".into()],
        stochastic_shifters: vec!["rainfall".into()],
        method: FitMethod::TwoStage,
        balance: Balance {
            production: Some("production".into()),
            domestic_use: Some("use".into()),
            ..FitOptions::default().balance
        },
        ..FitOptions::default()
    }
}

/// A stochastic shifter is held at its sample mean and its fitted contribution's variance,
/// coefficient² × sample variance (the variance of a constant times a random variable), is added to
/// the residual variance; a deterministic one is held at its last-season value.
#[test]
fn stochastic_shifter_variance_enters_supply_sd() {
    let text = demo_csv();
    let rep = fit_text("h.csv", &text, &sheet_opts()).unwrap();
    let s = &rep.supply;
    let rain = s.shifters.iter().find(|x| x.name == "rainfall").unwrap();
    let fert = s
        .shifters
        .iter()
        .find(|x| x.name == "fertiliser_price")
        .unwrap();
    // the rainfall column over the supply sample (seasons 2..n)
    let col: Vec<f64> = text
        .lines()
        .skip(2)
        .map(|l| l.split(',').nth(3).unwrap().parse().unwrap())
        .collect();
    let m = col.iter().sum::<f64>() / col.len() as f64;
    let var = col.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (col.len() - 1) as f64;
    assert!((rain.held_at - m).abs() < 1e-9 && rain.stochastic);
    assert!((rain.sample_variance / var - 1.0).abs() < 1e-12);
    let last_fert: f64 = text
        .lines()
        .last()
        .unwrap()
        .split(',')
        .nth(4)
        .unwrap()
        .parse()
        .unwrap();
    assert_eq!(fert.held_at, last_fert);
    assert!(!fert.stochastic);
    let b = rain.coefficient;
    let want = (s.residual_sd.powi(2) + b * b * var).sqrt();
    let v: toml::Table = toml::from_str(&rep.market_toml(&names()).unwrap()).unwrap();
    let got = v["shocks"]["supply_sd"].as_float().unwrap();
    assert!((got / want - 1.0).abs() < 1e-11, "{got} vs {want}");
    // demand has no stochastic shifter: its sd is the residual sd
    let dsd = v["shocks"]["demand_sd"].as_float().unwrap();
    assert!((dsd / rep.demand.residual_sd - 1.0).abs() < 1e-11);
    // the supply intercept folds rainfall's mean and the fertiliser price's last value
    let icpt = s.terms[0].estimate + b * m + fert.coefficient * last_fert;
    assert!((v["supply"]["intercept"].as_float().unwrap() / icpt - 1.0).abs() < 1e-11);
}

/// Area × trend yield: the written supply is the area curve times the trend yield of the
/// projection season; yield_cv is the residual sd over the trend yield (linear trend) or
/// √(exp(s²) − 1) (log trend: the cv of a lognormal with log-sd s).
#[test]
fn area_times_trend_yield() {
    let text = demo_csv();
    for (form, log) in [(YieldTrendForm::Linear, false), (YieldTrendForm::Log, true)] {
        let mut o = sheet_opts();
        o.balance.area = Some("area".into());
        o.balance.yield_col = Some("yield".into());
        o.balance.yield_trend = form;
        let rep = fit_text("h.csv", &text, &o).unwrap();
        let y = rep.yield_trend.clone().unwrap();
        // the trend at the last season (2024), from the fitted line
        let fitted = y.intercept + y.slope * 2024.0;
        let ybar = if log { fitted.exp() } else { fitted };
        assert!((y.at_projection / ybar - 1.0).abs() < 1e-12);
        let cv = if log {
            (y.residual_sd.powi(2)).exp_m1().sqrt()
        } else {
            y.residual_sd / ybar
        };
        assert!((y.yield_cv / cv - 1.0).abs() < 1e-12);
        let v: toml::Table = toml::from_str(&rep.market_toml(&names()).unwrap()).unwrap();
        let slope = v["supply"]["slope"].as_float().unwrap();
        assert!((slope / (rep.supply.slope() * ybar) - 1.0).abs() < 1e-11);
        let icpt = v["supply"]["intercept"].as_float().unwrap();
        assert!((icpt / (rep.supply.held_intercept() * ybar) - 1.0).abs() < 1e-11);
        assert!((v["shocks"]["yield_cv"].as_float().unwrap() / cv - 1.0).abs() < 1e-11);
        assert_eq!(rep.supply.dependent, "area");
    }
}

#[test]
fn partial_adjustment_in_log_form_or_without_a_lag_is_not_written() {
    let text = demo_csv();
    let mut o = sheet_opts();
    o.supply_model = SupplyModel::PartialAdjustment;
    o.form = FitForm::Log;
    let rep = fit_text("h.csv", &text, &o).unwrap();
    let e = rep.market_toml(&names()).unwrap_err().to_string();
    assert!(e.contains("log form"), "{e}");
    // θ outside (0, 1): refused, naming θ
    let mut rep = fit_text(
        "h.csv",
        &text,
        &FitOptions {
            form: FitForm::Linear,
            ..o
        },
    )
    .unwrap();
    rep.partial_adjustment.as_mut().unwrap().theta = 1.2;
    let e = rep.market_toml(&names()).unwrap_err().to_string();
    assert!(e.contains("0 < θ < 1"), "{e}");
}

#[test]
fn delimiter_detection_and_printable_names() {
    use super::data::{detect_delimiter, printable};
    assert_eq!(detect_delimiter("# c,o,m\nseason;price;q\n1;2;3\n"), b';');
    assert_eq!(detect_delimiter("season\tprice\tq\n"), b'\t');
    assert_eq!(detect_delimiter("season,price,q\n"), b',');
    assert_eq!(detect_delimiter("season\n"), b',');
    assert_eq!(printable("rain\nfall"), "rain\\nfall");
    assert_eq!(printable("a\u{1b}b"), "a\\u{1b}b");
    assert_eq!(printable("plain"), "plain");
}

/// `--world-price`: the parity gaps a future `[trade]` section needs, by hand on a small sheet:
/// import seasons 2001, 2003 with P − W = 10, 14 (median 12); export season 2004 with W − P = 3.
#[test]
fn world_price_gives_the_parity_gaps() {
    let csv = "season,price,production,use,imports,exports,world\n\
               2001,100,90,95,5,0,90\n2002,95,96,96,0,0,80\n2003,104,88,94,6,0,90\n\
               2004,92,99,97,0,2,95\n2005,97,95,95,0,0,100\n2006,99,93,93,0,0,99\n";
    let opts = FitOptions {
        balance: Balance {
            production: Some("production".into()),
            domestic_use: Some("use".into()),
            imports: Some("imports".into()),
            exports: Some("exports".into()),
            world_price: Some("world".into()),
            ..FitOptions::default().balance
        },
        ..FitOptions::default()
    };
    let rep = fit_text("w.csv", csv, &opts).unwrap();
    let t = rep.balance.unwrap().trade.unwrap();
    assert_eq!((t.import_seasons, t.export_seasons), (2, 1));
    let p = t.parity.unwrap();
    assert!((p.import_cost.unwrap() - 12.0).abs() < 1e-12);
    assert!((p.export_cost.unwrap() - 3.0).abs() < 1e-12);
    let w = [90.0, 80.0, 90.0, 95.0, 100.0, 99.0];
    let m = w.iter().sum::<f64>() / 6.0;
    assert!((p.world_price - m).abs() < 1e-12);
    let sd = (w.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / 5.0).sqrt();
    assert!((p.world_price_cv - sd / m).abs() < 1e-12);
    // without trade columns it is refused
    let mut o = opts.clone();
    o.balance.imports = None;
    o.balance.exports = None;
    assert!(fit_text("w.csv", csv, &o)
        .unwrap_err()
        .to_string()
        .contains("--world-price"));
}

//! Stage two of reading input: every check on every key, once. The output types are trusted
//! downstream.

use super::keys::{check_keys, parse_toml};
use super::raw::*;
use super::*;
use crate::curves::{steady_state, Curve};

/// Reads and validates a market file from disk.
pub fn load_market(path: &str) -> Result<Scenario, InputError> {
    market_from_str(path, &read(path)?)
}

/// Reads and validates a policy file from disk.
pub fn load_policy(path: &str) -> Result<PolicySpec, InputError> {
    policy_from_str(path, &read(path)?)
}

/// Validates market-file text; `file` names it in errors.
pub fn market_from_str(file: &str, text: &str) -> Result<Scenario, InputError> {
    market_from_table(file, parse_toml(file, text)?)
}

/// Validates policy-file text; `file` names it in errors.
pub fn policy_from_str(file: &str, text: &str) -> Result<PolicySpec, InputError> {
    policy_from_table(file, parse_toml(file, text)?)
}

fn read(path: &str) -> Result<String, InputError> {
    std::fs::read_to_string(path).map_err(|e| InputError::Unreadable {
        file: path.to_string(),
        reason: e.to_string(),
    })
}

fn deserialize<T: serde::de::DeserializeOwned>(
    file: &str,
    table: toml::Table,
) -> Result<T, InputError> {
    // Keys and types were checked against the schema already, so this only maps values.
    T::deserialize(toml::Value::Table(table)).map_err(|e| InputError::Syntax {
        file: file.into(),
        message: e.to_string().trim_end().to_string(),
    })
}

/// A small helper that knows the file name for error messages.
struct Check<'a> {
    file: &'a str,
}

impl Check<'_> {
    fn bad(&self, key: &str, value: impl std::fmt::Display, expected: &str) -> InputError {
        InputError::BadValue {
            file: self.file.into(),
            key: key.into(),
            value: value.to_string(),
            expected: expected.into(),
        }
    }

    fn missing(&self, key: &str, expected: &str) -> InputError {
        InputError::Missing {
            file: self.file.into(),
            key: key.into(),
            expected: expected.into(),
        }
    }

    fn finite(&self, key: &str, v: f64) -> Result<f64, InputError> {
        if v.is_finite() {
            Ok(v)
        } else {
            // echo the value as TOML spells it
            let written = if v.is_nan() {
                "nan"
            } else if v > 0.0 {
                "inf"
            } else {
                "-inf"
            };
            Err(self.bad(key, written, "must be a finite number"))
        }
    }

    /// lo <= v <= hi (with open ends when `open_lo`/`open_hi`).
    fn range(
        &self,
        key: &str,
        v: f64,
        lo: f64,
        hi: f64,
        open_lo: bool,
        open_hi: bool,
    ) -> Result<f64, InputError> {
        let v = self.finite(key, v)?;
        let ok_lo = if open_lo { v > lo } else { v >= lo };
        let ok_hi = if open_hi { v < hi } else { v <= hi };
        if ok_lo && ok_hi {
            return Ok(v);
        }
        let l = if open_lo { "(" } else { "[" };
        let h = if open_hi { ")" } else { "]" };
        let range = match (lo.is_infinite(), hi.is_infinite()) {
            (false, true) => {
                if open_lo {
                    format!("must be > {lo}")
                } else {
                    format!("must be ≥ {lo}")
                }
            }
            (true, false) => {
                if open_hi {
                    format!("must be < {hi}")
                } else {
                    format!("must be ≤ {hi}")
                }
            }
            _ => format!("must be in {l}{lo}, {hi}{h}"),
        };
        Err(self.bad(key, v, &range))
    }

    fn positive(&self, key: &str, v: f64) -> Result<f64, InputError> {
        self.range(key, v, 0.0, f64::INFINITY, true, true)
    }

    fn non_negative(&self, key: &str, v: f64) -> Result<f64, InputError> {
        self.range(key, v, 0.0, f64::INFINITY, false, true)
    }

    fn rate(&self, key: &str, v: f64) -> Result<f64, InputError> {
        self.range(key, v, 0.0, 1.0, false, true)
    }

    fn count(&self, key: &str, v: i64, lo: i64, hi: i64) -> Result<usize, InputError> {
        if v < lo || v > hi {
            return Err(self.bad(key, v, &format!("must be a whole number from {lo} to {hi}")));
        }
        Ok(v as usize)
    }
}

fn curve(c: &Check, section: &str, raw: &RawCurve, demand: bool) -> Result<Curve, InputError> {
    let key = |k: &str| format!("{section}.{k}");
    let form = raw.form.as_deref().unwrap_or("linear");
    let point = raw.at_price.is_some() || raw.at_quantity.is_some() || raw.elasticity.is_some();
    let direct = raw.intercept.is_some() || raw.slope.is_some();
    let sign_word = if demand { "< 0" } else { "> 0" };
    let elasticity = |c: &Check| -> Result<(f64, f64, f64), InputError> {
        let p = raw.at_price.ok_or_else(|| {
            c.missing(&key("at_price"), "the calibration point needs at_price > 0")
        })?;
        let q = raw.at_quantity.ok_or_else(|| {
            c.missing(
                &key("at_quantity"),
                "the calibration point needs at_quantity > 0",
            )
        })?;
        let e = raw.elasticity.ok_or_else(|| {
            c.missing(
                &key("elasticity"),
                &format!("the calibration point needs an elasticity {sign_word}"),
            )
        })?;
        let p = c.positive(&key("at_price"), p)?;
        let q = c.positive(&key("at_quantity"), q)?;
        let e = if demand {
            c.range(&key("elasticity"), e, -50.0, 0.0, false, true)?
        } else {
            c.range(&key("elasticity"), e, 0.0, 50.0, true, false)?
        };
        Ok((p, q, e))
    };
    match form {
        "linear" => {
            if point && direct {
                return Err(c.bad(
                    &key("form"),
                    "\"linear\"",
                    "give either intercept and slope, or at_price, at_quantity and elasticity, not both",
                ));
            }
            if point {
                let (p, q, e) = elasticity(c)?;
                return Ok(Curve::linear_at_point(p, q, e));
            }
            let intercept = raw.intercept.ok_or_else(|| {
                c.missing(
                    &key("intercept"),
                    "a linear curve needs intercept and slope (or at_price, at_quantity, elasticity)",
                )
            })?;
            let slope = raw.slope.ok_or_else(|| {
                c.missing(
                    &key("slope"),
                    &format!("a linear curve needs a slope {sign_word}"),
                )
            })?;
            let intercept = c.range(&key("intercept"), intercept, -1e12, 1e12, false, false)?;
            let slope = if demand {
                c.range(&key("slope"), slope, -1e12, 0.0, false, true)?
            } else {
                c.range(&key("slope"), slope, 0.0, 1e12, true, false)?
            };
            if demand && intercept <= 0.0 {
                return Err(c.bad(
                    &key("intercept"),
                    intercept,
                    "demand must be positive at a zero price: intercept must be > 0",
                ));
            }
            Ok(Curve::Linear { intercept, slope })
        }
        "constant-elasticity" => {
            if direct {
                let k = if raw.intercept.is_some() {
                    "intercept"
                } else {
                    "slope"
                };
                return Err(c.bad(
                    &key(k),
                    raw.intercept.or(raw.slope).unwrap_or_default(),
                    "a constant-elasticity curve takes at_price, at_quantity and elasticity, not intercept/slope",
                ));
            }
            let (at_price, at_quantity, elasticity) = elasticity(c)?;
            Ok(Curve::ConstantElasticity {
                at_price,
                at_quantity,
                elasticity,
            })
        }
        other => Err(c.bad(
            &key("form"),
            format!("\"{other}\""),
            "allowed forms: \"linear\", \"constant-elasticity\"",
        )),
    }
}

fn expectations(c: &Check, raw: &RawExpectations) -> Result<ExpectationSpec, InputError> {
    let rule = raw.rule.as_deref().unwrap_or("naive");
    let weight = |lo: f64, hi: f64, open_lo: bool, open_hi: bool, what: &str| {
        let w = raw.weight.ok_or_else(|| {
            c.missing(
                "expectations.weight",
                &format!("rule \"{rule}\" needs a weight {what}"),
            )
        })?;
        c.range("expectations.weight", w, lo, hi, open_lo, open_hi)
    };
    let unused = |k: &str, present: bool| -> Result<(), InputError> {
        if present {
            Err(c.bad(
                &format!("expectations.{k}"),
                "(set)",
                &format!("rule \"{rule}\" does not use `{k}`; remove it"),
            ))
        } else {
            Ok(())
        }
    };
    let spec = match rule {
        "naive" => {
            unused("weight", raw.weight.is_some())?;
            unused("window", raw.window.is_some())?;
            ExpectationSpec::Naive
        }
        "adaptive" => {
            unused("window", raw.window.is_some())?;
            let weight = weight(0.0, 1.0, true, false, "in (0, 1]")?;
            let initial_expected_price = raw
                .initial_expected_price
                .map(|p| c.positive("expectations.initial_expected_price", p))
                .transpose()?;
            ExpectationSpec::Adaptive {
                weight,
                initial_expected_price,
            }
        }
        "normal-price" => {
            let weight = weight(0.0, 1.0, false, false, "in [0, 1]")?;
            let normal = match (raw.normal_price, raw.window) {
                (Some(_), Some(_)) => {
                    return Err(c.bad(
                        "expectations.normal_price",
                        "(set)",
                        "give either normal_price (fixed) or window (trailing mean), not both",
                    ))
                }
                (Some(n), None) => NormalPrice::Fixed(c.positive("expectations.normal_price", n)?),
                (None, Some(w)) => {
                    NormalPrice::Window(c.count("expectations.window", w, 1, 1000)?)
                }
                (None, None) => {
                    return Err(c.missing(
                        "expectations.normal_price",
                        "rule \"normal-price\" needs normal_price > 0 or window ≥ 1",
                    ))
                }
            };
            ExpectationSpec::NormalPrice { weight, normal }
        }
        "extrapolative" => {
            unused("window", raw.window.is_some())?;
            ExpectationSpec::Extrapolative {
                weight: weight(-1.0, 1.0, true, true, "in (−1, 1)")?,
            }
        }
        "trailing-mean" => {
            unused("weight", raw.weight.is_some())?;
            let w = raw.window.ok_or_else(|| {
                c.missing(
                    "expectations.window",
                    "rule \"trailing-mean\" needs a window ≥ 1",
                )
            })?;
            ExpectationSpec::TrailingMean {
                window: c.count("expectations.window", w, 1, 1000)?,
            }
        }
        "rational" => {
            unused("weight", raw.weight.is_some())?;
            unused("window", raw.window.is_some())?;
            ExpectationSpec::Rational
        }
        other => return Err(c.bad(
            "expectations.rule",
            format!("\"{other}\""),
            "allowed rules: naive, adaptive, normal-price, extrapolative, trailing-mean, rational",
        )),
    };
    if !matches!(spec, ExpectationSpec::NormalPrice { .. }) {
        unused("normal_price", raw.normal_price.is_some())?;
    }
    if !matches!(spec, ExpectationSpec::Adaptive { .. }) {
        unused(
            "initial_expected_price",
            raw.initial_expected_price.is_some(),
        )?;
    }
    Ok(spec)
}

/// Validates a parsed market file (after any `--vary` overrides were applied to `table`).
pub fn market_from_table(file: &str, table: toml::Table) -> Result<Scenario, InputError> {
    check_keys(file, &table, MARKET_SCHEMA)?;
    let raw: RawMarketFile = deserialize(file, table)?;
    let c = Check { file };
    let demand_raw = raw
        .demand
        .as_ref()
        .ok_or_else(|| c.missing("[demand]", "a market file needs a [demand] section"))?;
    let supply_raw = raw
        .supply
        .as_ref()
        .ok_or_else(|| c.missing("[supply]", "a market file needs a [supply] section"))?;
    let demand = curve(&c, "demand", demand_raw, true)?;
    let supply = curve(&c, "supply", supply_raw, false)?;
    let steady = steady_state(&demand, &supply).ok_or_else(|| {
        let describe = |c: &Curve| match *c {
            Curve::Linear { intercept, slope } => format!("intercept {intercept}, slope {slope}"),
            Curve::ConstantElasticity {
                at_price,
                at_quantity,
                elasticity,
            } => format!("{at_quantity} at {at_price}, elasticity {elasticity}"),
        };
        c.bad(
            "demand/supply",
            format!("demand ({}), supply ({})", describe(&demand), describe(&supply)),
            "the curves do not cross at a positive price and quantity: check demand.intercept and supply.intercept",
        )
    })?;
    let market = Market {
        name: raw
            .market
            .name
            .clone()
            .unwrap_or_else(|| "Unnamed market".into()),
        quantity_unit: raw
            .market
            .quantity_unit
            .clone()
            .unwrap_or_else(|| "units".into()),
        price_unit: raw
            .market
            .price_unit
            .clone()
            .unwrap_or_else(|| "per unit".into()),
        demand,
        supply,
    };
    let expectations = expectations(&c, &raw.expectations.clone().unwrap_or_default())?;

    let r = &raw.run;
    let periods = c.count("run.periods", r.periods.unwrap_or(40), 1, 1_000_000)?;
    let initial_price = c.range(
        "run.initial_price",
        r.initial_price.unwrap_or(steady.price),
        0.0,
        1e12,
        true,
        false,
    )?;
    let mut price_history = Vec::new();
    if let Some(h) = &r.price_history {
        if h.len() > 1000 {
            return Err(c.bad("run.price_history", h.len(), "at most 1000 past prices"));
        }
        for (i, p) in h.iter().enumerate() {
            c.range(
                &format!("run.price_history[{i}]"),
                *p,
                0.0,
                1e12,
                true,
                false,
            )?;
        }
        price_history = h.clone();
        if let Some(last) = h.last() {
            if (last - initial_price).abs() > 1e-12 * initial_price.max(1.0)
                && r.initial_price.is_some()
            {
                return Err(c.bad(
                    "run.price_history",
                    format!("[…, {last}]"),
                    &format!(
                        "the newest past price is P_0 and must equal run.initial_price = {initial_price}"
                    ),
                ));
            }
        }
    }
    let initial_price = price_history.last().copied().unwrap_or(initial_price);
    if price_history.is_empty() {
        price_history.push(initial_price);
    }
    let replications = c.count(
        "run.replications",
        r.replications.unwrap_or(1),
        1,
        10_000_000,
    )?;
    let seed = match r.seed {
        Some(s) if s < 0 => return Err(c.bad("run.seed", s, "must be a whole number ≥ 0")),
        Some(s) => s as u64,
        None => 42,
    };
    let discount_rate = c.rate("run.discount_rate", r.discount_rate.unwrap_or(0.05))?;
    let terminal_stock = match r.terminal_stock.as_deref().unwrap_or("disposal") {
        "disposal" => TerminalStock::Disposal,
        "market" => TerminalStock::Market,
        "zero" => TerminalStock::Zero,
        other => {
            return Err(c.bad(
                "run.terminal_stock",
                format!("\"{other}\""),
                "allowed: \"disposal\" (default), \"market\", \"zero\"",
            ))
        }
    };
    let risk_aversion = c.range(
        "run.risk_aversion",
        r.risk_aversion.unwrap_or(0.0),
        0.0,
        20.0,
        false,
        false,
    )?;
    let opening_stock = match r.opening_stock.as_deref().unwrap_or("charged") {
        "charged" => OpeningStock::Charged,
        "free" => OpeningStock::Free,
        other => {
            return Err(c.bad(
                "run.opening_stock",
                format!("\"{other}\""),
                "allowed: \"charged\" (default), \"free\"",
            ))
        }
    };
    let public_funds_cost = c.range(
        "run.public_funds_cost",
        r.public_funds_cost.unwrap_or(1.0),
        1.0,
        3.0,
        false,
        false,
    )?;
    let crop_income_share = c.range(
        "run.crop_income_share",
        r.crop_income_share.unwrap_or(1.0),
        0.0,
        1.0,
        true,
        false,
    )?;
    let alert_prices = alert_prices(&c, r.alert_price.as_ref())?;
    let s = &raw.shocks;
    let shocks = ShockSpec {
        yield_cv: c.range(
            "shocks.yield_cv",
            s.yield_cv.unwrap_or(0.0),
            0.0,
            2.0,
            false,
            false,
        )?,
        supply_sd: c.non_negative("shocks.supply_sd", s.supply_sd.unwrap_or(0.0))?,
        demand_sd: c.non_negative("shocks.demand_sd", s.demand_sd.unwrap_or(0.0))?,
        demand_persistence: c.range(
            "shocks.demand_persistence",
            s.demand_persistence.unwrap_or(0.0),
            -1.0,
            1.0,
            true,
            true,
        )?,
    };
    let storers = match &raw.storers {
        None => None,
        Some(st) => {
            if expectations != ExpectationSpec::Rational {
                return Err(c.bad(
                    "expectations.rule",
                    format!("\"{}\"", expectations.rule_name()),
                    "a market with [storers] needs rule = \"rational\" (storers and farmers look ahead)",
                ));
            }
            Some(Storers {
                storage_cost: c
                    .non_negative("storers.storage_cost", st.storage_cost.unwrap_or(0.0))?,
                interest_rate: c.rate("storers.interest_rate", st.interest_rate.unwrap_or(0.0))?,
                loss_rate: c.rate("storers.loss_rate", st.loss_rate.unwrap_or(0.0))?,
            })
        }
    };
    Ok(Scenario {
        source: file.to_string(),
        market,
        expectations,
        run: RunSettings {
            periods,
            initial_price,
            price_history,
            replications,
            seed,
            discount_rate,
            terminal_stock,
            risk_aversion,
            opening_stock,
            public_funds_cost,
            crop_income_share,
            alert_prices,
        },
        shocks,
        storers,
        steady,
    })
}

/// `[run] alert_price`: one price or a list of at most [`MAX_ALERTS`], each > 0.
fn alert_prices(c: &Check, v: Option<&toml::Value>) -> Result<Vec<f64>, InputError> {
    let Some(v) = v else {
        return Ok(Vec::new());
    };
    let number = |x: &toml::Value| x.as_float().or_else(|| x.as_integer().map(|i| i as f64));
    let values: Vec<f64> = match v.as_array() {
        Some(a) => a.iter().filter_map(number).collect(),
        None => number(v).into_iter().collect(),
    };
    if values.is_empty() || values.len() > MAX_ALERTS {
        return Err(c.bad(
            "run.alert_price",
            values.len(),
            &format!("give one price or a list of 1 to {MAX_ALERTS} prices"),
        ));
    }
    for (i, p) in values.iter().enumerate() {
        let key = if v.is_array() {
            format!("run.alert_price[{i}]")
        } else {
            "run.alert_price".to_string()
        };
        c.range(&key, *p, 0.0, 1e12, true, false)?;
    }
    Ok(values)
}

/// Validates a parsed policy file.
pub fn policy_from_table(file: &str, table: toml::Table) -> Result<PolicySpec, InputError> {
    check_keys(file, &table, POLICY_SCHEMA)?;
    let raw: RawPolicyFile = deserialize(file, table)?;
    let c = Check { file };
    let floor = match &raw.floor {
        None => None,
        Some(f) => {
            let price = f
                .price
                .ok_or_else(|| c.missing("floor.price", "a floor needs price > 0"))?;
            let price = c.range("floor.price", price, 0.0, 1e12, true, false)?;
            let instrument = match f.instrument.as_deref().unwrap_or("purchase") {
                "purchase" => FloorInstrument::Purchase,
                "deficiency-payment" => FloorInstrument::DeficiencyPayment,
                other => {
                    return Err(c.bad(
                        "floor.instrument",
                        format!("\"{other}\""),
                        "allowed instruments: \"purchase\", \"deficiency-payment\"",
                    ))
                }
            };
            Some(FloorSpec {
                price,
                instrument,
                announced: f.announced.unwrap_or(true),
            })
        }
    };
    let stock = match &raw.stock {
        None => None,
        Some(s) => {
            let buy_below = c.non_negative("stock.buy_below", s.buy_below.unwrap_or(0.0))?;
            let sell_above = match s.sell_above {
                Some(v) => c.positive("stock.sell_above", v)?,
                None => f64::INFINITY,
            };
            if buy_below > sell_above {
                return Err(c.bad(
                    "stock.buy_below",
                    buy_below,
                    &format!("must be ≤ stock.sell_above = {sell_above} (equal fixes the price)"),
                ));
            }
            let capacity = match s.capacity {
                Some(v) => c.non_negative("stock.capacity", v)?,
                None => f64::INFINITY,
            };
            let initial = c.non_negative("stock.initial", s.initial.unwrap_or(0.0))?;
            if initial > capacity {
                return Err(c.bad(
                    "stock.initial",
                    initial,
                    &format!("must be ≤ stock.capacity = {capacity}"),
                ));
            }
            let release = match s.release.as_deref().unwrap_or("band") {
                "band" => ReleaseSpec::Band,
                "target" => {
                    let target = s.target.ok_or_else(|| {
                        c.missing(
                            "stock.target",
                            "release = \"target\" needs target ≥ 0 (the stock to steer toward)",
                        )
                    })?;
                    let target = c.non_negative("stock.target", target)?;
                    if target > capacity {
                        return Err(c.bad(
                            "stock.target",
                            target,
                            &format!("must be ≤ stock.capacity = {capacity}"),
                        ));
                    }
                    let speed =
                        c.range("stock.speed", s.speed.unwrap_or(1.0), 0.0, 1.0, true, false)?;
                    ReleaseSpec::Target { target, speed }
                }
                // "share" is the old name of "drawdown", kept as an alias
                word @ ("drawdown" | "share" | "rotate") => {
                    let share = s.share.ok_or_else(|| {
                        c.missing(
                            "stock.share",
                            &format!("release = \"{word}\" needs share in (0, 1]"),
                        )
                    })?;
                    let share = c.range("stock.share", share, 0.0, 1.0, true, false)?;
                    if word == "rotate" {
                        ReleaseSpec::Rotate { share }
                    } else {
                        ReleaseSpec::Share { share }
                    }
                }
                other => {
                    return Err(c.bad(
                        "stock.release",
                        format!("\"{other}\""),
                        "allowed release rules: \"band\", \"target\", \"drawdown\" (alias \"share\"), \"rotate\"",
                    ))
                }
            };
            let release_key_unused = |k: &str, present: bool| -> Result<(), InputError> {
                if present {
                    Err(c.bad(
                        &format!("stock.{k}"),
                        "(set)",
                        &format!(
                            "release rule \"{}\" does not use `{k}`",
                            s.release.as_deref().unwrap_or("band")
                        ),
                    ))
                } else {
                    Ok(())
                }
            };
            if !matches!(release, ReleaseSpec::Target { .. }) {
                release_key_unused("target", s.target.is_some())?;
                release_key_unused("speed", s.speed.is_some())?;
            }
            if !matches!(
                release,
                ReleaseSpec::Share { .. } | ReleaseSpec::Rotate { .. }
            ) {
                release_key_unused("share", s.share.is_some())?;
            }
            Some(StockSpec {
                buy_below,
                sell_above,
                capacity,
                initial,
                storage_cost: c
                    .non_negative("stock.storage_cost", s.storage_cost.unwrap_or(0.0))?,
                loss_rate: c.rate("stock.loss_rate", s.loss_rate.unwrap_or(0.0))?,
                purchase_budget: match s.purchase_budget {
                    Some(v) => c.non_negative("stock.purchase_budget", v)?,
                    None => f64::INFINITY,
                },
                financing_rate: c.rate("stock.financing_rate", s.financing_rate.unwrap_or(0.0))?,
                handling_cost: c
                    .non_negative("stock.handling_cost", s.handling_cost.unwrap_or(0.0))?,
                release,
            })
        }
    };
    let expectations = raw
        .expectations
        .as_ref()
        .map(|e| expectations(&c, e))
        .transpose()?;
    Ok(PolicySpec {
        source: file.to_string(),
        name: raw.policy.name.clone().unwrap_or_else(|| {
            std::path::Path::new(file)
                .file_stem()
                .map(|s| s.to_string_lossy().to_string())
                .unwrap_or_else(|| "policy".into())
        }),
        floor,
        stock,
        expectations,
        annual_budget: raw
            .policy
            .annual_budget
            .map(|b| c.positive("policy.annual_budget", b))
            .transpose()?,
    })
}

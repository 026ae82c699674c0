//! Stage two of reading input: every check on every key, once. The output types are trusted
//! downstream.

use super::ranges::{escape, range_of, short_num};
use super::raw::*;
use super::*;
use crate::curves::{steady_state, Curve};
use crate::input::check::deserialize;
use crate::input::keys::{check_keys, parse_toml};
pub use crate::input::{deserialize_section, Check};

/// Reads and validates a market file from disk.
pub fn load_market(path: &str) -> Result<Scenario, InputError> {
    market_from_str(path, &crate::input::read_file(path)?)
}

/// Validates market-file text; `file` names it in errors.
pub fn market_from_str(file: &str, text: &str) -> Result<Scenario, InputError> {
    market_from_table(file, parse_toml(file, text)?)
}

/// Validates market-file text with `overrides` (dotted key, value: e.g. the command line's
/// `--periods`) written into the parsed file first, so the values are checked once, with the file's
/// own; `file` names it in errors.
pub fn market_from_str_with(
    file: &str,
    text: &str,
    overrides: &[(&str, toml::Value)],
) -> Result<Scenario, InputError> {
    let mut table = parse_toml(file, text)?;
    for (key, value) in overrides {
        super::keys::apply_override(&mut table, key, value.clone()).map_err(|reason| {
            InputError::BadValue {
                file: file.into(),
                key: key.to_string(),
                value: super::keys::short_value(value),
                expected: reason,
            }
        })?;
    }
    market_from_table(file, table)
}

/// The checks that read the market's own ranges and curves (rule files check their own keys
/// against their own ranges with `in_range`).
impl Check<'_> {
    /// A price an agency defends by buying must leave demand something to take at that price
    /// (linear demand: below its choke price, intercept / |slope|; constant elasticity has none).
    pub fn absorbs(
        &self,
        scenario: &Scenario,
        key: &str,
        price: f64,
        what: &str,
    ) -> Result<(), InputError> {
        let Curve::Linear { intercept, slope } = scenario.market.demand else {
            return Ok(());
        };
        if intercept + slope * price > 0.0 {
            return Ok(());
        }
        let choke = intercept / -slope;
        Err(InputError::BadValue {
            file: self.file.into(),
            key: key.into(),
            value: short_num(price),
            expected: format!(
                "{what} must be below {}, the price at which the linear demand of {} falls to zero \
                 (at a higher price consumption would be ≤ 0 and the agency would buy more than the \
                 harvest); the largest price demand can absorb is just below {}",
                short_num(choke),
                scenario.source,
                short_num(choke)
            ),
        })
    }

    /// Checks `v` against the key's range ([`super::ranges::range_of`]).
    pub fn within(&self, key: &str, v: f64) -> Result<f64, InputError> {
        match range_of(key) {
            Some(r) => self.range(key, v, r.lo, r.hi, r.open_lo, r.open_hi),
            None => self.finite(key, v),
        }
    }

    /// A whole number checked against the key's range.
    fn whole(&self, key: &str, v: i64) -> Result<usize, InputError> {
        let (lo, hi) = range_of(key).map_or((0, i64::MAX), |r| (r.lo as i64, r.hi as i64));
        self.count(key, v, lo, hi)
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
        let p = c.within(&key("at_price"), p)?;
        let q = c.within(&key("at_quantity"), q)?;
        let e = c.within(&key("elasticity"), e)?;
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
            let intercept = c.finite(&key("intercept"), intercept)?;
            if demand && intercept <= 0.0 {
                return Err(c.bad(
                    &key("intercept"),
                    short_num(intercept),
                    "demand must be positive at a zero price: intercept must be > 0",
                ));
            }
            let intercept = c.within(&key("intercept"), intercept)?;
            let slope = c.within(&key("slope"), slope)?;
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
                    short_num(raw.intercept.or(raw.slope).unwrap_or_default()),
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
            format!("\"{}\"", escape(other)),
            "allowed forms: \"linear\", \"constant-elasticity\"",
        )),
    }
}

/// Validates a parsed market file (after any `--vary` overrides were applied to `table`).
pub fn market_from_table(file: &str, table: toml::Table) -> Result<Scenario, InputError> {
    check_keys(file, &table, &super::schema::market())?;
    // the `[expectations]` section is read by its rule (`expectations::RULES`)
    let expectations_table = match table.get("expectations").and_then(|v| v.as_table()) {
        Some(t) => t.clone(),
        None => toml::Table::new(),
    };
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
            Curve::Linear { intercept, slope } => format!(
                "intercept {}, slope {}",
                short_num(intercept),
                short_num(slope)
            ),
            Curve::ConstantElasticity {
                at_price,
                at_quantity,
                elasticity,
            } => format!(
                "{} at {}, elasticity {}",
                short_num(at_quantity),
                short_num(at_price),
                short_num(elasticity)
            ),
        };
        // advise the keys the file actually has: intercepts when given, else the calibration points
        let keys_of = |section: &str, raw: &RawCurve| {
            if raw.intercept.is_some() {
                format!("{section}.intercept")
            } else {
                format!("{section}.at_price, {section}.at_quantity and {section}.elasticity")
            }
        };
        c.bad(
            "demand/supply",
            format!(
                "demand ({}), supply ({})",
                describe(&demand),
                describe(&supply)
            ),
            &format!(
                "the curves do not cross at a positive price and quantity: check {} and {}",
                keys_of("demand", demand_raw),
                keys_of("supply", supply_raw)
            ),
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
        plants_on: match supply_raw.plants_on.as_deref().unwrap_or("price") {
            "price" => PlantsOn::Price,
            "revenue" => PlantsOn::Revenue,
            other => {
                return Err(c.bad(
                    "supply.plants_on",
                    format!("\"{}\"", escape(other)),
                    "allowed: \"price\" (default), \"revenue\"",
                ))
            }
        },
    };
    let expectations = crate::expectations::read(&c, &expectations_table)?;

    let r = &raw.run;
    let periods = c.whole("run.periods", r.periods.unwrap_or(40))?;
    let initial_price = c.within("run.initial_price", r.initial_price.unwrap_or(steady.price))?;
    let mut price_history = Vec::new();
    if let Some(h) = &r.price_history {
        if h.len() > 1000 {
            return Err(c.bad("run.price_history", h.len(), "at most 1000 past prices"));
        }
        for (i, p) in h.iter().enumerate() {
            c.within(&format!("run.price_history[{i}]"), *p)?;
        }
        price_history = h.clone();
        if let Some(last) = h.last() {
            if (last - initial_price).abs() > 1e-12 * initial_price.max(1.0)
                && r.initial_price.is_some()
            {
                return Err(c.bad(
                    "run.price_history",
                    format!("[…, {}]", short_num(*last)),
                    &format!(
                        "the newest past price is P_0 and must equal run.initial_price = {}",
                        short_num(initial_price)
                    ),
                ));
            }
        }
    }
    let initial_price = price_history.last().copied().unwrap_or(initial_price);
    if price_history.is_empty() {
        price_history.push(initial_price);
    }
    let replications = c.whole("run.replications", r.replications.unwrap_or(1))?;
    let seed = match r.seed {
        Some(s) if s < 0 => return Err(c.bad("run.seed", s, "must be a whole number ≥ 0")),
        Some(s) => s as u64,
        None => 42,
    };
    let discount_rate = c.within("run.discount_rate", r.discount_rate.unwrap_or(0.05))?;
    let terminal_stock = match r.terminal_stock.as_deref().unwrap_or("disposal") {
        "disposal" => TerminalStock::Disposal,
        "market" => TerminalStock::Market,
        "zero" => TerminalStock::Zero,
        other => {
            return Err(c.bad(
                "run.terminal_stock",
                format!("\"{}\"", escape(other)),
                "allowed: \"disposal\" (default), \"market\", \"zero\"",
            ))
        }
    };
    let risk_aversion = c.within("run.risk_aversion", r.risk_aversion.unwrap_or(0.0))?;
    let opening_stock = match r.opening_stock.as_deref().unwrap_or("charged") {
        "charged" => OpeningStock::Charged,
        "free" => OpeningStock::Free,
        other => {
            return Err(c.bad(
                "run.opening_stock",
                format!("\"{}\"", escape(other)),
                "allowed: \"charged\" (default), \"free\"",
            ))
        }
    };
    let public_funds_cost =
        c.within("run.public_funds_cost", r.public_funds_cost.unwrap_or(1.0))?;
    let crop_income_share =
        c.within("run.crop_income_share", r.crop_income_share.unwrap_or(1.0))?;
    let alert_prices = alert_prices(&c, r.alert_price.as_ref())?;
    let s = &raw.shocks;
    let shocks = ShockSpec {
        yield_cv: c.within("shocks.yield_cv", s.yield_cv.unwrap_or(0.0))?,
        supply_sd: c.within("shocks.supply_sd", s.supply_sd.unwrap_or(0.0))?,
        demand_sd: c.within("shocks.demand_sd", s.demand_sd.unwrap_or(0.0))?,
        demand_persistence: c.within(
            "shocks.demand_persistence",
            s.demand_persistence.unwrap_or(0.0),
        )?,
    };
    let storers = match &raw.storers {
        None => None,
        Some(st) => {
            // farmers look ahead, or plant on a rule of the last price and at most one more state
            // (the storage model's `storage::market::Farmers`, which asks the rule the same
            // questions)
            if !expectations.is_rational() {
                use crate::expectations::StateLayout;
                let rule = expectations.rule();
                let covered = match (rule.layout(), rule.lags()) {
                    (StateLayout::Lags(w), 1) => w.len() == 1,
                    (StateLayout::Lags(w), 2) => w.len() == 2,
                    (StateLayout::Expectation(_), 1) => true,
                    _ => false,
                };
                if !covered {
                    return Err(c.bad(
                        "expectations.rule",
                        format!("\"{}\"", expectations.rule_name()),
                        "a market with [storers] needs rule = \"rational\" (storers and farmers look ahead) \
                         or a backward-looking rule with at most two states: \"naive\", \"adaptive\", \
                         \"learning\", \"extrapolative\", \"normal-price\" with a fixed normal_price or a \
                         window of 2, \"trailing-mean\" with window 1 or 2",
                    ));
                }
                if rule.time_varying().is_some() {
                    return Err(c.bad(
                        "expectations.gain_schedule",
                        "\"decreasing\"",
                        "a market with [storers] takes farmers whose forecast rule is the same every \
                         season (the storage equilibrium is stationary): \"constant\"",
                    ));
                }
                if market.plants_on == PlantsOn::Revenue {
                    return Err(c.bad(
                        "supply.plants_on",
                        "\"revenue\"",
                        "a market with [storers] plants on revenue only with rule = \"rational\"; \
                         with a backward-looking rule use \"price\"",
                    ));
                }
            }
            // the storage equilibrium (every verb on such a market) takes independent demand shocks
            if shocks.demand_persistence != 0.0 && shocks.demand_sd > 0.0 {
                return Err(c.bad(
                    "shocks.demand_persistence",
                    short_num(shocks.demand_persistence),
                    "a market with [storers] treats demand shocks as independent from period to \
                     period: must be 0 when shocks.demand_sd > 0",
                ));
            }
            Some(Storers {
                storage_cost: c.within("storers.storage_cost", st.storage_cost.unwrap_or(0.0))?,
                interest_rate: c
                    .within("storers.interest_rate", st.interest_rate.unwrap_or(0.0))?,
                loss_rate: c.within("storers.loss_rate", st.loss_rate.unwrap_or(0.0))?,
            })
        }
    };
    let trade = match &raw.trade {
        None => None,
        Some(t) => Some(Trade {
            world_price: c.within(
                "trade.world_price",
                t.world_price.ok_or_else(|| {
                    c.missing(
                        "trade.world_price",
                        "a market with [trade] needs its world price",
                    )
                })?,
            )?,
            world_price_cv: c.within("trade.world_price_cv", t.world_price_cv.unwrap_or(0.0))?,
            world_price_persistence: c.within(
                "trade.world_price_persistence",
                t.world_price_persistence.unwrap_or(0.0),
            )?,
            import_cost: c.within("trade.import_cost", t.import_cost.unwrap_or(0.0))?,
            export_cost: c.within("trade.export_cost", t.export_cost.unwrap_or(0.0))?,
        }),
    };
    let households = households(&c, raw.households.as_deref().unwrap_or_default())?;
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
        trade,
        steady,
        households,
    })
}

/// At most this many `[[households]]` groups.
pub const MAX_HOUSEHOLD_GROUPS: usize = 50;

/// `[[households]]`: every key of every group required and in its range (named `households[i].key`,
/// 0-based, with the group's name), a zero population share refused, names distinct and the
/// population shares summing to 1 ± 1e-6.
fn households(c: &Check, raw: &[RawHousehold]) -> Result<Vec<HouseholdGroup>, InputError> {
    if raw.len() > MAX_HOUSEHOLD_GROUPS {
        return Err(c.bad(
            "households",
            format!("{} groups", raw.len()),
            &format!("at most {MAX_HOUSEHOLD_GROUPS} [[households]] groups"),
        ));
    }
    let mut groups: Vec<HouseholdGroup> = Vec::with_capacity(raw.len());
    for (i, h) in raw.iter().enumerate() {
        let key = |k: &str| format!("households[{i}].{k}");
        let name = match h.name.as_deref().map(str::trim) {
            Some(n) if !n.is_empty() => n.to_string(),
            Some(_) => {
                return Err(c.bad(
                    &key("name"),
                    "\"\"",
                    "a group needs a name (free text, e.g. \"Smallholders, hills\")",
                ))
            }
            None => {
                return Err(c.missing(
                    &key("name"),
                    "every [[households]] group needs name, population_share, income, \
                     production_share and consumption_share",
                ))
            }
        };
        if groups.iter().any(|g| g.name == name) {
            return Err(c.bad(
                &key("name"),
                format!("\"{}\"", escape(&name)),
                "two groups have this name: give each [[households]] group its own name",
            ));
        }
        let of = |k: &str, v: Option<f64>| -> Result<f64, InputError> {
            let v = v.ok_or_else(|| {
                c.missing(
                    &key(k),
                    &format!(
                        "group \"{}\" needs {k} (see the README's household groups)",
                        escape(&name)
                    ),
                )
            })?;
            c.within(&key(k), v).map_err(|e| match e {
                InputError::BadValue {
                    file,
                    key,
                    value,
                    expected,
                } => InputError::BadValue {
                    file,
                    key,
                    value,
                    expected: format!("{expected} (group \"{}\")", escape(&name)),
                },
                other => other,
            })
        };
        if h.population_share == Some(0.0) {
            return Err(c.bad(
                &key("population_share"),
                "0",
                &format!(
                    "group \"{}\" has no households: a group with a zero population share is \
                     refused; remove it or give it a share in (0, 1]",
                    escape(&name)
                ),
            ));
        }
        groups.push(HouseholdGroup {
            population_share: of("population_share", h.population_share)?,
            income: of("income", h.income)?,
            production_share: of("production_share", h.production_share)?,
            consumption_share: of("consumption_share", h.consumption_share)?,
            name,
        });
    }
    if !groups.is_empty() {
        let total: f64 = groups.iter().map(|g| g.population_share).sum();
        if (total - 1.0).abs() > 1e-6 {
            return Err(c.bad(
                "households.population_share",
                // nine decimals: a sum just outside the tolerance must not print as "1"
                format!(
                    "{} in total",
                    format!("{total:.9}")
                        .trim_end_matches('0')
                        .trim_end_matches('.')
                ),
                "the groups' population shares must sum to 1 (± 1e-6): each is the group's share \
                 of all households",
            ));
        }
    }
    Ok(groups)
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
        c.within(&key, *p)?;
    }
    Ok(values)
}

//! `[border]`: border measures — import duties (specific and ad valorem), export taxes, an export
//! ban, import and export quotas, and a variable import levy that keeps the landed, duty-paid price
//! at or above a target. Everything the program knows of the rule is here; what the measures do to
//! a period's market is [`crate::trade::Trade::terms`].
//!
//! The rule acts only on a market that trades (`[trade]` in the market file): private traders
//! import at import parity and export at export parity, and the measures move those parities and
//! limit the quantities. Duties and export taxes are treasury receipts; quota rents go to traders.

use serde::Deserialize;

use super::in_storage::StoragePlan;
use super::rule::{rank, rule_ref, Build, Cell, Row, Rule, RuleRef, RuleSection, Watched};
use super::{flags, Agency, BandStock, Clearing, PolicyRule};
use crate::input::ranges::{r, short_num, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;
use crate::input::{deserialize_section, Check};
use crate::regime::Regimes;
use crate::regime::StabilityError;
use crate::scenario::Scenario;
use crate::trade::BorderMeasures;

/// A number key of `[border]` with its range.
const fn number(name: &'static str, key: &'static str, lo: f64, hi: f64, lo_open: bool) -> Key {
    Key {
        name,
        kind: ValueType::Number,
        range: Some(r(key, lo, hi, lo_open, false)),
    }
}

/// The registration of `[border]`.
pub const SECTION: RuleSection = RuleSection {
    name: "border",
    keys: &[
        number("import_tariff", "border.import_tariff", 0.0, BIG, false),
        number("import_tariff_rate", "border.import_tariff_rate", 0.0, 10.0, false),
        number("export_tax", "border.export_tax", 0.0, BIG, false),
        number("export_tax_rate", "border.export_tax_rate", 0.0, 1.0, false),
        Key {
            name: "export_ban",
            kind: ValueType::Bool,
            range: None,
        },
        number("import_quota", "border.import_quota", 0.0, BIG, false),
        number("export_quota", "border.export_quota", 0.0, BIG, false),
        number("import_price_target", "border.import_price_target", 0.0, BIG, true),
        number("public_import_above", "border.public_import_above", 0.0, BIG, true),
        number("public_import_max", "border.public_import_max", 0.0, BIG, true),
    ],
    read,
    absent: &[("border measures", "none")],
    examples: &[
        "[border]\nimport_tariff = 10.0\nimport_tariff_rate = 0.05\nexport_tax = 5.0\nexport_tax_rate = 0.02\nimport_quota = 50.0\nexport_quota = 40.0\n",
        "[border]\nexport_ban = true\n",
        "[border]\nimport_price_target = 240.0\n",
        "[border]\npublic_import_above = 225.0\npublic_import_max = 40.0\n",
    ],
};

/// A validated `[border]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Border {
    /// The measures, as the period's border terms read them.
    pub measures: BorderMeasures,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
struct Raw {
    import_tariff: Option<f64>,
    import_tariff_rate: Option<f64>,
    export_tax: Option<f64>,
    export_tax_rate: Option<f64>,
    export_ban: Option<bool>,
    import_quota: Option<f64>,
    export_quota: Option<f64>,
    import_price_target: Option<f64>,
    public_import_above: Option<f64>,
    public_import_max: Option<f64>,
}

fn read(c: &Check, table: &toml::Table) -> Result<RuleRef, InputError> {
    let raw: Raw = deserialize_section(c, table)?;
    let num = |key: &str, v: Option<f64>| -> Result<f64, InputError> {
        c.within_keys(SECTION.keys, key, v.unwrap_or(0.0))
    };
    let opt = |key: &str, v: Option<f64>| -> Result<Option<f64>, InputError> {
        v.map(|v| c.within_keys(SECTION.keys, key, v)).transpose()
    };
    let measures = BorderMeasures {
        import_tariff: num("border.import_tariff", raw.import_tariff)?,
        import_tariff_rate: num("border.import_tariff_rate", raw.import_tariff_rate)?,
        export_tax: num("border.export_tax", raw.export_tax)?,
        export_tax_rate: num("border.export_tax_rate", raw.export_tax_rate)?,
        export_ban: raw.export_ban.unwrap_or(false),
        import_quota: opt("border.import_quota", raw.import_quota)?,
        export_quota: opt("border.export_quota", raw.export_quota)?,
        import_price_target: opt("border.import_price_target", raw.import_price_target)?,
        public_import_above: opt("border.public_import_above", raw.public_import_above)?,
        public_import_max: opt("border.public_import_max", raw.public_import_max)?,
    };
    if measures.public_import_above.is_none() {
        if let Some(max) = measures.public_import_max {
            return Err(c.bad(
                "border.public_import_max",
                short_num(max),
                "set border.public_import_above too (the domestic price above which the agency \
                 imports), or leave public_import_max out",
            ));
        }
    }
    if measures.export_ban && measures.export_quota.is_some() {
        return Err(c.bad(
            "border.export_quota",
            short_num(measures.export_quota.unwrap_or(0.0)),
            "leave it out with export_ban = true (a ban allows no export)",
        ));
    }
    Ok(rule_ref(Border { measures }))
}

/// What a policy asks of a market that trades, across its rules (called for every verb by
/// `policies::file::policy_for_market`): a price defended by purchase above import parity, with
/// neither a store limit nor a purchase budget, would have the agency buy every unit traders bring
/// in (imports refill the market at parity whatever it buys): refused, naming the price's key and
/// `trade.world_price`. The check is at the mean world price; a varying world price that falls far
/// enough ends such a run as diverging, with the same keys named.
pub fn check_open_market(
    c: &Check,
    scenario: &Scenario,
    policy: &super::PolicySpec,
) -> Result<(), InputError> {
    let Some(trade) = &scenario.trade else {
        return Ok(());
    };
    let compiled = super::compile(policy);
    let watched = super::watched(policy);
    if let Some(trigger) = compiled.border.public_import_above {
        let bought = [
            watched.purchase_floor.map(|p| ("floor.price", p)),
            watched.band.map(|(lo, _)| ("stock.buy_below", lo)),
        ];
        for (key, price) in bought.into_iter().flatten() {
            if trigger < price {
                return Err(c.bad(
                    "border.public_import_above",
                    short_num(trigger),
                    &format!(
                        "must be ≥ {key} = {}: below it the agency would import and buy at home \
                         in the same season",
                        short_num(price)
                    ),
                ));
            }
        }
    }
    let agency = &compiled.agency;
    if agency.capacity.is_finite() || agency.purchase_budget.is_finite() {
        return Ok(());
    }
    let terms = trade.terms(trade.world_price, &compiled.border);
    if terms.import_quota.is_finite() {
        return Ok(());
    }
    let defended = [
        watched.purchase_floor.map(|p| ("floor.price", p)),
        watched.band.map(|(lo, _)| ("stock.buy_below", lo)),
    ];
    for (key, price) in defended.into_iter().flatten() {
        if price > terms.import_parity {
            return Err(c.bad(
                key,
                short_num(price),
                &format!(
                    "a price at or below import parity {} (trade.world_price {} + import_cost {} \
                     + duties) on a market that trades: above it, with neither stock.capacity \
                     nor stock.purchase_budget, the agency would buy every unit traders import",
                    short_num(terms.import_parity),
                    short_num(trade.world_price),
                    short_num(trade.import_cost)
                ),
            ));
        }
    }
    Ok(())
}

impl Border {
    /// The measures in words, e.g. `import duty 10 + 5 % of the world price, export ban`.
    fn words(&self) -> String {
        let m = &self.measures;
        let mut parts = Vec::new();
        let duty = |per_unit: f64, rate: f64| match (per_unit > 0.0, rate > 0.0) {
            (true, true) => Some(format!(
                "{} + {} % of the world price",
                short_num(per_unit),
                short_num(100.0 * rate)
            )),
            (true, false) => Some(short_num(per_unit)),
            (false, true) => Some(format!("{} % of the world price", short_num(100.0 * rate))),
            (false, false) => None,
        };
        if let Some(d) = duty(m.import_tariff, m.import_tariff_rate) {
            parts.push(format!("import duty {d}"));
        }
        if let Some(t) = m.import_price_target {
            parts.push(format!("variable levy to {}", short_num(t)));
        }
        if let Some(q) = m.import_quota {
            parts.push(format!("import quota {}", short_num(q)));
        }
        if m.export_ban {
            parts.push("export ban".into());
        }
        if let Some(d) = duty(m.export_tax, m.export_tax_rate) {
            parts.push(format!("export tax {d}"));
        }
        if let Some(q) = m.export_quota {
            parts.push(format!("export quota {}", short_num(q)));
        }
        if let Some(p) = m.public_import_above {
            parts.push(match m.public_import_max {
                Some(q) => format!(
                    "public imports above {} (at most {} a season)",
                    short_num(p),
                    short_num(q)
                ),
                None => format!("public imports above {}", short_num(p)),
            });
        }
        if parts.is_empty() {
            "free trade".into()
        } else {
            parts.join(", ")
        }
    }
}

impl Rule for Border {
    fn section(&self) -> &'static str {
        "border"
    }

    fn build(&self, build: &mut Build) {
        build.border = self.measures;
        if let Some(above) = self.measures.public_import_above {
            build.actions.push((
                rank::PUBLIC_IMPORT,
                Box::new(PublicImport {
                    above,
                    max: self.measures.public_import_max.unwrap_or(f64::INFINITY),
                }),
            ));
        }
    }

    fn storage(&self, plan: &mut StoragePlan) -> Result<(), String> {
        if let Some(p) = self.measures.public_import_above {
            return Err(format!(
                "border.public_import_above = {}: the storage equilibrium does not cover state \
                 trading (public imports at a trigger price); use `run` or `compare` with the \
                 period engine, or leave public_import_above out",
                short_num(p)
            ));
        }
        plan.border = self.measures;
        Ok(())
    }

    fn regimes(&self, r: &mut Regimes) -> Result<(), StabilityError> {
        // the agency's imports are a regime of the border (`stability::trade`)
        r.border = self.measures;
        Ok(())
    }

    fn check_market(&self, check: &Check, scenario: &Scenario) -> Result<(), InputError> {
        if scenario.trade.is_none() {
            return Err(check.bad(
                "[border]",
                self.words(),
                &format!(
                    "border measures act on a market that trades: the market {} has no [trade] \
                     section (world_price, import_cost, export_cost)",
                    scenario.source
                ),
            ));
        }
        Ok(())
    }

    fn reference_price(&self) -> f64 {
        let m = &self.measures;
        m.import_price_target
            .unwrap_or(0.0)
            .max(m.public_import_above.unwrap_or(0.0))
    }

    fn describe(&self) -> String {
        format!("border: {}", self.words())
    }

    fn price_lines(&self) -> Vec<(&'static str, f64)> {
        let m = &self.measures;
        m.import_price_target
            .map(|t| ("import price target", t))
            .into_iter()
            .chain(m.public_import_above.map(|p| ("public imports above", p)))
            .collect()
    }

    fn rows(&self) -> Vec<Row> {
        vec![Row {
            label: "border measures",
            value: Cell::Text(self.words()),
        }]
    }

    fn warning(&self, _scenario: &Scenario, _agency: &Agency) -> Option<String> {
        None
    }

    fn watch(&self, _watched: &mut Watched) {
        // neither a purchase floor nor a band
    }
}

/// The period action of state trading (`public_import_above`, `public_import_max`): after the
/// agency's domestic trades, while the price would be above `above` it imports at the landed price
/// into its stock and releases it at once (see [`Clearing::import_to`]).
#[derive(Debug, Clone, Copy)]
pub struct PublicImport {
    /// The trigger price.
    pub above: f64,
    /// The most imported a season (∞: no limit but the store and the budget).
    pub max: f64,
}

impl PolicyRule for PublicImport {
    fn planting_floor(&self) -> Option<f64> {
        None
    }
    fn trades_stock(&self) -> bool {
        true
    }
    fn trade(&self, market: &mut Clearing) {
        market.import_to(self.above, self.max, flags::PUBLIC_IMPORT);
    }
    pays_nothing!();
    fn as_band(&self) -> Option<BandStock> {
        None
    }
}

//! Applying `--vary` values to the market or policy file and re-validating them.
//!
//! A key belongs to the policy file when its section is one only policy files have (`[policy]` and
//! every registered rule section, from the one schema: `scenario::schema::is_policy_section`), and
//! for `expectations.` only when a policy file is given and has an `[expectations]` section; every
//! other key belongs to the market file. Without a policy file, policy keys start from an empty policy
//! (`[policy]` alone), so `--vary floor.price=...` works on a market by itself.
//!
//! Each value of each axis is validated once, through the same path as the files themselves
//! (`apply_override`, then `market_from_table` / `policy_from_table`). A grid point then takes the
//! section each key changed from that axis's validated value: this is exact when the two keys lie in
//! different sections (the checks that tie keys together are within one section, and the steady
//! state is re-solved at every point), except the one check across files, `policy_for_market` (a
//! purchase price below linear demand's choke price), which every assembled point goes through
//! again (`policy_fits_market`). Two keys in the same section are validated together at every
//! point (slower).

use crate::policies::file::{policy_for_market, policy_from_table};
use crate::policies::PolicySpec;
use crate::policies::RuleRef;
use crate::scenario::ranges::short_num;
use crate::scenario::{apply_override, market_from_table, ExpectationSpec, InputError, Scenario};
use crate::stability::Setup;

/// Which file a key is applied to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Target {
    /// The market file.
    Market,
    /// The policy file.
    Policy,
}

/// The parsed files a sweep starts from.
#[derive(Debug, Clone)]
pub struct Base {
    /// Market file name (for messages).
    pub market_file: String,
    /// Market file as parsed.
    pub market: toml::Table,
    /// Policy file name.
    pub policy_file: String,
    /// Policy file as parsed (an empty `[policy]` when none was given).
    pub policy: toml::Table,
    /// Whether a policy file was given.
    pub has_policy_file: bool,
}

impl Base {
    /// A base from parsed tables.
    pub fn new(
        market_file: &str,
        market: toml::Table,
        policy: Option<(&str, toml::Table)>,
    ) -> Base {
        let has_policy_file = policy.is_some();
        let (policy_file, policy) = match policy {
            Some((f, t)) => (f.to_string(), t),
            None => {
                let mut t = toml::Table::new();
                let mut p = toml::Table::new();
                p.insert("name".into(), toml::Value::String("Swept policy".into()));
                t.insert("policy".into(), toml::Value::Table(p));
                ("(policy built from --vary)".to_string(), t)
            }
        };
        Base {
            market_file: market_file.to_string(),
            market,
            policy_file,
            policy,
            has_policy_file,
        }
    }

    /// The file `key` is applied to.
    pub fn target(&self, key: &str) -> Target {
        let section = key.split('.').next().unwrap_or("");
        match section {
            "expectations" if self.has_policy_file && self.policy.contains_key("expectations") => {
                Target::Policy
            }
            s if crate::policies::file::is_policy_section(s) => Target::Policy,
            _ => Target::Market,
        }
    }

    /// True when the market file sets the starting prices itself.
    pub fn has_initial_price(&self) -> bool {
        self.market
            .get("run")
            .and_then(|r| r.as_table())
            .is_some_and(|r| r.contains_key("initial_price") || r.contains_key("price_history"))
    }

    /// Validates both files with `overrides` applied.
    pub fn validate(
        &self,
        overrides: &[(&str, f64)],
    ) -> Result<(Scenario, PolicySpec), InputError> {
        let mut market = self.market.clone();
        let mut policy = self.policy.clone();
        for (key, v) in overrides {
            let (table, file) = match self.target(key) {
                Target::Market => (&mut market, &self.market_file),
                Target::Policy => (&mut policy, &self.policy_file),
            };
            let value = value_for(key, *v, file)?;
            apply_override(table, key, value).map_err(|reason| InputError::BadValue {
                file: file.clone(),
                key: key.to_string(),
                value: short_num(*v),
                expected: reason,
            })?;
        }
        let scenario = market_from_table(&self.market_file, market)?;
        let policy = policy_from_table(&self.policy_file, policy)?;
        policy_for_market(&scenario, &policy)?;
        Ok((scenario, policy))
    }
}

/// [`policy_for_market`] at a grid point assembled from sections validated apart (the fast path
/// of a two-key sweep): the base files `s0`, `p0` with the demand curve, floor and stock of `setup`.
/// Each axis's value was checked against the base's other file only, so a floor from one axis and
/// a demand curve from the other meet here for the first time.
pub fn policy_fits_market(s0: &Scenario, p0: &PolicySpec, setup: &Setup) -> Result<(), InputError> {
    let linear = matches!(setup.demand, crate::curves::Curve::Linear { .. });
    if !linear || setup.rules.is_empty() {
        return Ok(()); // nothing the check looks at (each rule bounds its prices by linear demand)
    }
    let mut s = s0.clone();
    s.market.demand = setup.demand;
    let mut p = p0.clone();
    p.rules = setup.rules.clone();
    policy_for_market(&s, &p)
}

/// Keys whose values are whole numbers.
const WHOLE_KEYS: &[&str] = &["window", "periods", "replications", "seed"];

fn value_for(key: &str, v: f64, file: &str) -> Result<toml::Value, InputError> {
    let last = key.rsplit('.').next().unwrap_or("");
    if WHOLE_KEYS.contains(&last) {
        if v.fract() != 0.0 || v.abs() > 9.0e15 {
            return Err(InputError::BadValue {
                file: file.into(),
                key: key.into(),
                value: short_num(v),
                expected: "must be a whole number (choose FROM, TO and STEPS so that every grid value is whole)".into(),
            });
        }
        Ok(toml::Value::Integer(v as i64))
    } else {
        Ok(toml::Value::Float(v))
    }
}

/// The part of the analysis a validated key changed.
#[derive(Debug, Clone)]
pub enum Component {
    /// `demand.*`.
    Demand(crate::curves::Curve),
    /// `supply.*`.
    Supply(crate::curves::Curve),
    /// `expectations.*` of the market file.
    MarketRule(ExpectationSpec),
    /// `expectations.*` of the policy file.
    PolicyRule(Option<ExpectationSpec>),
    /// `trade.*` of the market file (the border).
    Trade(Option<crate::trade::Trade>),
    /// A key of a policy rule's section: the section and its rule (if the file has it).
    Rule(&'static str, Option<RuleRef>),
    /// A key that does not enter the linearisation (run, shocks, names).
    Nothing,
}

/// What `key` changed, read off the files validated with it.
pub fn component(base: &Base, key: &str, s: &Scenario, p: &PolicySpec) -> Component {
    let section = key.split('.').next().unwrap_or("");
    match (base.target(key), section) {
        (Target::Market, "demand") => Component::Demand(s.market.demand),
        (Target::Market, "supply") => Component::Supply(s.market.supply),
        (Target::Market, "trade") => Component::Trade(s.trade),
        (Target::Market, "expectations") => Component::MarketRule(s.expectations),
        (Target::Policy, "expectations") => Component::PolicyRule(p.expectations),
        (Target::Policy, s) => match crate::policies::rule::section(s) {
            Some(section) => Component::Rule(section.name, p.rule(section.name).cloned()),
            None => Component::Nothing,
        },
        _ => Component::Nothing,
    }
}

/// The linearisation inputs before the policy's rule override is resolved.
#[derive(Debug, Clone)]
pub struct Parts {
    /// Setup with `rule` = the market's rule.
    pub setup: Setup,
    /// The policy's override.
    pub policy_rule: Option<ExpectationSpec>,
}

impl Parts {
    /// From validated files.
    pub fn new(s: &Scenario, p: &PolicySpec) -> Parts {
        let mut setup = Setup::new(s, p);
        setup.rule = s.expectations;
        Parts {
            setup,
            policy_rule: p.expectations,
        }
    }

    /// Applies one changed component.
    pub fn patch(&mut self, c: &Component) {
        match *c {
            Component::Demand(d) => self.setup.demand = d,
            Component::Supply(s) => self.setup.supply = s,
            Component::MarketRule(r) => self.setup.rule = r,
            Component::Trade(t) => self.setup.trade = t,
            Component::PolicyRule(r) => self.policy_rule = r,
            Component::Rule(section, ref rule) => {
                // the section's rule replaced at its place (the registry's order), or removed
                let mut rules: Vec<RuleRef> = self
                    .setup
                    .rules
                    .iter()
                    .filter(|r| r.section() != section)
                    .cloned()
                    .collect();
                if let Some(rule) = rule {
                    rules.push(rule.clone());
                }
                let place = |r: &RuleRef| {
                    crate::policies::SECTIONS
                        .iter()
                        .position(|s| s.name == r.section())
                };
                rules.sort_by_key(place);
                self.setup.set_rules(rules);
            }
            Component::Nothing => {}
        }
    }

    /// The setup the analysis runs on.
    pub fn resolved(&self) -> Setup {
        let mut s = self.setup.clone();
        if let Some(r) = self.policy_rule {
            s.rule = r;
        }
        s
    }
}

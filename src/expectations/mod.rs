//! Expectation rules: how farmers form the price they plant on.
//!
//! Each rule is written once, in its own file: its registration (a [`Registration`]: the file word
//! `rule = "..."`, its `[expectations]` keys with types and ranges, how it reads and validates them,
//! how it is built, one example per variant) and a small type implementing [`ExpectationRule`]
//! (how it forms the expectation, its state for stability, its published stability conditions, its
//! descriptions). [`RULES`] is the only registration point: the schema of the `[expectations]`
//! section, its ranges, validation, the engine, stability, sweeps and the briefing reach the rules
//! through it and through the trait, never by naming a rule.
//!
//! Rules read the producer-price history (newest last, padded with P_0 before period 1) and the
//! rule's own previous expectation. A rule the model solves itself (rational expectations) only
//! declares so (`is_rational`); the engine solves it (see `engine::rational`).

mod adaptive;
pub mod conditions;
mod extrapolative;
mod groups;
mod learning;
mod mixed;
mod naive;
mod normal_price;
mod rational;
mod switching;
mod trailing_mean;

pub use adaptive::Adaptive;
pub use extrapolative::Extrapolative;
pub use groups::{GroupSet, GroupState, Groups, ShareRule, MAX_GROUPS};
pub use learning::Learning;
pub use mixed::SUM_TOLERANCE;
pub use naive::Naive;
pub use normal_price::{NormalPrice, NormalPriceRule};
pub use rational::Rational;
pub use trailing_mean::TrailingMean;

use std::sync::OnceLock;

use serde::Serialize;

use crate::input::keys::{check_keys, parse_toml};
use crate::input::ranges::{escape, KeyRange};
use crate::input::Check;
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;
use conditions::{PublishedCondition, Slopes};

/// Every registered expectation rule, in the order the documentation and messages list them; the
/// first is the rule of a file that names none (the only registration point for expectation rules).
pub const RULES: &[Registration] = &[
    naive::RULE,
    adaptive::RULE,
    normal_price::RULE,
    extrapolative::RULE,
    trailing_mean::RULE,
    learning::RULE,
    rational::RULE,
    mixed::RULE,
    switching::RULE,
];

/// Most keys one rule reads (besides `rule`); checked for every registered rule at compile time.
pub const MAX_KEYS: usize = 4;

const _: () = {
    let mut i = 0;
    while i < RULES.len() {
        assert!(RULES[i].keys.len() <= MAX_KEYS);
        i += 1;
    }
};

/// A registered expectation rule: everything the input side needs of it.
#[derive(Debug, Clone, Copy)]
pub struct Registration {
    /// The file word, `rule = "adaptive"`.
    pub name: &'static str,
    /// The `[expectations]` keys it reads (besides `rule`), with types and its ranges (the dotted
    /// key `expectations.KEY`). A key another rule reads is refused for this one.
    pub keys: &'static [Key],
    /// Reads and validates its keys (only its own are present: the others were refused) and
    /// returns the values it keeps.
    pub read: fn(&Reader) -> Result<Values, InputError>,
    /// The rule from values its `read` returned.
    pub build: fn(&Values) -> Box<dyn ExpectationRule>,
    /// Keys that set the rule's state before period 1 (a long run restarted from a perturbed price
    /// drops them, `ExpectationSpec::restarted`).
    pub starting: &'static [&'static str],
    /// The key a number in the short form `NAME:NUMBER` sets (`--rules adaptive:0.6`); `None` for a
    /// rule without parameters.
    pub main_key: Option<&'static str>,
    /// The keys the short form fills in (TOML lines without the header, e.g. `weight = 0.5`): a
    /// bare `NAME` means the rule with these values (the default assumption panel of
    /// `sensitivity`), `NAME:NUMBER` these with the main key set to NUMBER.
    pub short_form: &'static str,
    /// One `[expectations]` section per variant (TOML, header included), for the documentation
    /// and for the tests, which run every behaviour of every variant.
    pub examples: &'static [&'static str],
}

/// The registered rule called `name`.
pub fn registered(name: &str) -> Option<&'static Registration> {
    RULES.iter().find(|r| r.name == name)
}

/// What a rule sees when it forms the expectation for period t.
#[derive(Debug, Clone, Copy)]
pub struct ExpectationInput<'a> {
    /// Producer prices up to P_{t−1}, newest last (at least [`ExpectationRule::lags`] entries).
    pub history: &'a [f64],
    /// The rule's own expectation for period t−1 (`None` in period 1).
    pub previous: Option<f64>,
    /// The season t the expectation is for (1 in period 1), for a rule whose map changes with the
    /// season (decreasing-gain learning). The stability map and the long runs pass 0: they refuse
    /// such a rule ([`ExpectationRule::time_varying`]).
    pub season: usize,
}

impl ExpectationInput<'_> {
    /// P_{t−k} for k ≥ 1.
    #[inline]
    pub fn lag(&self, k: usize) -> f64 {
        self.history[self.history.len() - k]
    }
}

/// The shape of a rule's state in the stability analysis (`stability::statespace`) and the long
/// runs (`sweep::longrun`).
#[derive(Debug, Clone, PartialEq)]
pub enum StateLayout {
    /// The k last producer prices (newest first); the expectation is Σ w_i P_{t−i} (+ a constant).
    Lags(Vec<f64>),
    /// The rule's own expectation (a rule that updates it with this weight); its value before
    /// period 1 is the rule's expectation with no previous one.
    Expectation(f64),
    /// Farmers in groups (`mixed`, `switching`) with a state of this dimension: the rule's own map
    /// ([`Groups::apply`]) carries it.
    Groups(usize),
}

/// One way of forming price expectations: everything the program needs of it. No method has a
/// default: a new rule states each one (`tests/rules.rs` checks every registered rule answers each).
pub trait ExpectationRule: Send + Sync + std::fmt::Debug {
    /// How many past prices the rule reads (history is padded to at least this many).
    fn lags(&self) -> usize;
    /// The expected producer price for period t.
    fn expect(&self, input: &ExpectationInput) -> f64;
    /// True for a rule whose value the engine solves from the model (rational expectations).
    fn is_rational(&self) -> bool;
    /// The rule as adaptive expectations, when it is that rule (lets the engine call it directly
    /// instead of through the trait object; the value is the same).
    fn as_adaptive(&self) -> Option<Adaptive>;
    /// Its state in the stability analysis, with the weights of the linear rules.
    fn layout(&self) -> StateLayout;
    /// True when a rule whose past prices all equal p expects p, for every p (then the free steady
    /// state is where the curves cross; otherwise stability solves the rule's own fixed point).
    fn rests_anywhere(&self) -> bool;
    /// `Some(note)` when, without shocks, the market under this rule sits at its steady state from
    /// period 1 (the model solves the expectation itself): stability then reports the eigenvalue 0
    /// in every regime with this note, and a long run estimates no Lyapunov exponent. `None` when
    /// the rule's own map (`layout`) carries the dynamics.
    fn settles_at_once(&self) -> Option<&'static str>;
    /// The published closed-form stability conditions of its free-market dynamics (none when no
    /// closed form applies), evaluated at the steady-state slopes.
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition>;
    /// The rule with its parameters, in words (e.g. `adaptive (weight 0.33)`; `compare` and the
    /// briefing print it).
    fn describe(&self) -> String;
    /// Its main parameter in words for the briefing's policy table (e.g. `weight 0.4`); none for a
    /// rule without parameters.
    fn setting(&self) -> Option<String>;
    /// The groups, for a rule of farmers in groups (`mixed`, `switching`): the engine and the
    /// stability map plant Σ n_i S(P^e_i) through them. `None` for a single rule.
    fn groups(&self) -> Option<&Groups>;
    /// `Some(why)` when the rule's map changes from season to season (a gain that falls with
    /// time), naming the key that makes it so: such a map has no eigenvalue, so the stability
    /// analysis and the long runs' Lyapunov exponent refuse it with `why`, and it cannot be a
    /// group's rule. `None` for a rule with one map.
    fn time_varying(&self) -> Option<String>;
}

/// A parameter as the descriptions print it.
pub(crate) fn g(x: f64) -> String {
    crate::output::fmt_num(x, 3)
}

/// A parameter as the briefing's table prints it (six decimals, trailing zeros dropped).
pub(crate) fn g6(x: f64) -> String {
    let s = crate::output::fmt_num(x, 6);
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The values a rule kept from its keys (numbers; whole numbers exactly), by key. Made only by the
/// rule's own `read`, so a key it requires is always there.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Values {
    items: [(&'static str, f64); MAX_KEYS],
    len: usize,
    /// The groups of `mixed` and `switching` (interned, so the values stay cheap to copy).
    groups: Option<&'static GroupSet>,
    /// The one text key a rule may keep besides `groups` (key, one of its allowed words), e.g.
    /// learning's `gain_schedule = "decreasing"`.
    word: Option<(&'static str, &'static str)>,
}

impl Values {
    /// No values.
    pub fn new() -> Values {
        Values::default()
    }

    /// With `key` = `value` (replacing an earlier value of `key`). The rule's keys fit
    /// ([`MAX_KEYS`], checked when compiled); `read` only keeps its own keys.
    pub fn with(mut self, key: &'static str, value: f64) -> Values {
        if let Some(item) = self.items[..self.len].iter_mut().find(|(k, _)| *k == key) {
            item.1 = value;
        } else if self.len < MAX_KEYS {
            self.items[self.len] = (key, value);
            self.len += 1;
        }
        self
    }

    /// With the groups of `mixed` or `switching`.
    pub fn with_groups(mut self, set: &'static GroupSet) -> Values {
        self.groups = Some(set);
        self
    }

    /// The groups, for `mixed` and `switching`.
    pub fn groups(&self) -> Option<&'static GroupSet> {
        self.groups
    }

    /// With the text key `key` set to `word` (one of the words the rule allows for it).
    pub fn with_word(mut self, key: &'static str, word: &'static str) -> Values {
        self.word = Some((key, word));
        self
    }

    /// The word under the text key `key`, if kept.
    pub fn word(&self, key: &str) -> Option<&'static str> {
        self.word.filter(|(k, _)| *k == key).map(|(_, w)| w)
    }

    /// The kept text key and its word, if any.
    pub fn word_entry(&self) -> Option<(&'static str, &'static str)> {
        self.word
    }

    /// With `key` = `value` when there is one.
    pub fn with_opt(self, key: &'static str, value: Option<f64>) -> Values {
        match value {
            Some(v) => self.with(key, v),
            None => self,
        }
    }

    /// The value of `key`, if kept.
    pub fn get(&self, key: &str) -> Option<f64> {
        self.iter().find(|(k, _)| *k == key).map(|(_, v)| v)
    }

    /// The value of a key the rule's `read` requires (NaN only for values not made by it, which
    /// cannot happen: the fields are private).
    pub fn number(&self, key: &str) -> f64 {
        self.get(key).unwrap_or(f64::NAN)
    }

    /// The kept values in the order they were read.
    pub fn iter(&self) -> impl Iterator<Item = (&'static str, f64)> + '_ {
        self.items[..self.len].iter().copied()
    }

    fn without(self, keys: &[&str]) -> Values {
        let kept = self
            .iter()
            .filter(|(k, _)| !keys.contains(k))
            .fold(Values::new(), |v, (k, x)| v.with(k, x));
        Values {
            groups: self.groups,
            word: self.word.filter(|(k, _)| !keys.contains(k)),
            ..kept
        }
    }
}

/// What a rule's `read` reads its keys with: the `[expectations]` table as written (keys and types
/// checked against the schema, keys of other rules refused) and the checks against its own ranges.
pub struct Reader<'a> {
    check: &'a Check<'a>,
    table: &'a toml::Table,
    rule: &'static Registration,
}

impl Reader<'_> {
    fn key(&self, key: &str) -> Option<&'static Key> {
        self.rule.keys.iter().find(|k| k.name == key)
    }

    fn dotted(key: &str) -> String {
        format!("expectations.{key}")
    }

    /// True when the section sets `key`.
    pub fn has(&self, key: &str) -> bool {
        self.table.contains_key(key)
    }

    /// The number under `key`, checked against the rule's range for it; `None` when absent.
    pub fn number(&self, key: &str) -> Result<Option<f64>, InputError> {
        let Some(v) = self.table.get(key) else {
            return Ok(None);
        };
        // a number may be written as a whole number (the schema allows both)
        let v = v
            .as_float()
            .or_else(|| v.as_integer().map(|i| i as f64))
            .unwrap_or(f64::NAN);
        match self.key(key).and_then(|k| k.range.as_ref()) {
            Some(r) => self.check.in_range(r, v).map(Some),
            None => Err(self.check.bad(
                &Self::dotted(key),
                "(set)",
                "the rule declares no range for this key",
            )),
        }
    }

    /// The whole number under `key`, checked against the rule's range for it; `None` when absent.
    pub fn whole(&self, key: &str) -> Result<Option<usize>, InputError> {
        let Some(v) = self.table.get(key).and_then(|v| v.as_integer()) else {
            return Ok(None);
        };
        match self.key(key).and_then(|k| k.range.as_ref()) {
            Some(r) => self.check.whole_in(r, v).map(Some),
            None => Err(self.check.bad(
                &Self::dotted(key),
                "(set)",
                "the rule declares no range for this key",
            )),
        }
    }

    /// The text under `key`; `None` when absent.
    pub fn text(&self, key: &str) -> Option<String> {
        self.table
            .get(key)
            .and_then(|v| v.as_str())
            .map(str::to_string)
    }

    /// The word under the text key `key`, one of `allowed` (the first is what an absent key
    /// means); `None` when absent, an error naming the key, the value and the allowed words
    /// otherwise.
    pub fn word(
        &self,
        key: &str,
        allowed: &'static [&'static str],
    ) -> Result<Option<&'static str>, InputError> {
        let Some(text) = self.text(key) else {
            return Ok(None);
        };
        match allowed.iter().find(|w| **w == text) {
            Some(w) => Ok(Some(w)),
            None => {
                let words: Vec<String> = allowed.iter().map(|w| format!("\"{w}\"")).collect();
                Err(self.bad(
                    key,
                    &format!("\"{}\"", escape(&text)),
                    &format!("one of {}", words.join(", ")),
                ))
            }
        }
    }

    /// The numbers of the array under `key` (a single number counts as an array of one; NaN for
    /// an entry that is not a number, so that the caller's range check refuses it); `None` when
    /// absent.
    pub fn numbers(&self, key: &str) -> Option<Vec<f64>> {
        let v = self.table.get(key)?;
        let one = |v: &toml::Value| {
            v.as_float()
                .or_else(|| v.as_integer().map(|i| i as f64))
                .unwrap_or(f64::NAN)
        };
        Some(match v.as_array() {
            Some(a) => a.iter().map(one).collect(),
            None => vec![one(v)],
        })
    }

    /// A required key is missing: `rule "NAME" needs NEEDS`.
    pub fn missing(&self, key: &str, needs: &str) -> InputError {
        self.check.missing(
            &Self::dotted(key),
            &format!("rule \"{}\" needs {needs}", self.rule.name),
        )
    }

    /// An inconsistent value.
    pub fn bad(&self, key: &str, value: &str, expected: &str) -> InputError {
        self.check.bad(&Self::dotted(key), value, expected)
    }
}

/// A validated `[expectations]` section: the registered rule and the values of its keys. Cheap to
/// copy; [`ExpectationSpec::rule`] builds the rule itself.
#[derive(Clone, Copy)]
pub struct ExpectationSpec {
    registration: &'static Registration,
    values: Values,
}

impl ExpectationSpec {
    /// The rule's file word (`rule = "..."`).
    pub fn rule_name(&self) -> &'static str {
        self.registration.name
    }

    /// The rule (the engine's, stability's and the descriptions' one source).
    pub fn rule(&self) -> Box<dyn ExpectationRule> {
        (self.registration.build)(&self.values)
    }

    /// The rule with its parameters in words (its own `ExpectationRule::describe`): the one
    /// description `check`, `compare` and the briefing print.
    pub fn description(&self) -> String {
        self.rule().describe()
    }

    /// True when the model solves the rule's expectation itself (the storage model needs it).
    pub fn is_rational(&self) -> bool {
        self.rule().is_rational()
    }

    /// The values of its keys.
    pub fn values(&self) -> &Values {
        &self.values
    }

    /// The values that set the rule's state before period 1 (`Registration::starting`).
    pub fn starting_values(&self) -> impl Iterator<Item = f64> + '_ {
        self.values
            .iter()
            .filter(|(k, _)| self.registration.starting.contains(k))
            .map(|(_, v)| v)
    }

    /// The same rule with its state before period 1 taken from the starting prices (its starting
    /// keys dropped).
    pub fn restarted(self) -> ExpectationSpec {
        ExpectationSpec {
            values: self.values.without(self.registration.starting),
            ..self
        }
    }

    /// Reads a `[expectations]` body (without its header) written on its own, e.g.
    /// `rule = "adaptive"\nweight = 0.4` (for examples, benchmarks and tests).
    pub fn parse(text: &str) -> Result<ExpectationSpec, InputError> {
        let file = "[expectations]";
        let table = parse_toml(file, text)?;
        let mut whole = toml::Table::new();
        whole.insert("expectations".into(), toml::Value::Table(table.clone()));
        check_keys(file, &whole, &vec![("expectations", section_keys())])?;
        read(&Check::new(file), &table)
    }
}

impl ExpectationSpec {
    /// Reads a rule in its short form `NAME[:NUMBER][:KEY=VALUE]...` (e.g. `adaptive:0.6`,
    /// `trailing-mean:3`, `normal-price:0.5:normal_price=212`): the registration's `short_form`
    /// keys, the main key set to NUMBER, then each KEY=VALUE (when any is given, the short form's
    /// other keys are dropped, so that a rule's alternatives can be chosen). Checked exactly as the
    /// same `[expectations]` section in a file; errors name `what` (e.g. `--rules adaptive:1.5`).
    pub fn from_short(item: &str, what: &str) -> Result<ExpectationSpec, InputError> {
        let bad = |value: &str, expected: &str| InputError::BadValue {
            file: what.to_string(),
            key: "expectations.rule".into(),
            value: format!("\"{}\"", escape(value)),
            expected: expected.to_string(),
        };
        let mut parts = item.split(':');
        let name = parts.next().unwrap_or("").trim();
        let Some(registration) = registered(name) else {
            let names: Vec<&str> = RULES.iter().map(|r| r.name).collect();
            return Err(bad(name, &format!("allowed rules: {}", names.join(", "))));
        };
        let value_of = |text: &str| -> Option<toml::Value> {
            format!("v = {}", text.trim())
                .parse::<toml::Table>()
                .ok()
                .and_then(|mut t| t.remove("v"))
                .filter(|v| v.is_float() || v.is_integer())
        };
        let mut table = parse_toml(what, registration.short_form)?;
        let mut explicit = toml::Table::new();
        let mut number = None;
        for (i, part) in parts.enumerate() {
            match part.split_once('=') {
                Some((key, value)) => {
                    let word = value.trim();
                    let is_word = !word.is_empty()
                        && word
                            .chars()
                            .all(|c| c.is_ascii_alphabetic() || c == '-' || c == '_');
                    let v = if is_word {
                        // a word for a text key (e.g. gain_schedule=decreasing)
                        toml::Value::String(word.to_string())
                    } else {
                        let Some(v) = value_of(value) else {
                            return Err(bad(
                                part,
                                "KEY=VALUE with a number or a word, e.g. window=3",
                            ));
                        };
                        v
                    };
                    explicit.insert(key.trim().to_string(), v);
                }
                None if i == 0 => {
                    let Some(main) = registration.main_key else {
                        return Err(bad(
                            item,
                            &format!("rule \"{name}\" takes no number; write `{name}`"),
                        ));
                    };
                    let Some(v) = value_of(part) else {
                        return Err(bad(
                            item,
                            &format!("NAME:NUMBER, the number being its {main}"),
                        ));
                    };
                    number = Some((main, v));
                }
                None => {
                    return Err(bad(item, "NAME[:NUMBER][:KEY=VALUE]..."));
                }
            }
        }
        if !explicit.is_empty() {
            table.retain(|k, _| registration.main_key == Some(k));
        }
        if let Some((main, v)) = number {
            table.insert(main.to_string(), v);
        }
        table.extend(explicit);
        table.insert("rule".into(), toml::Value::String(name.to_string()));
        let mut whole = toml::Table::new();
        whole.insert("expectations".into(), toml::Value::Table(table.clone()));
        check_keys(what, &whole, &vec![("expectations", section_keys())])?;
        read(&Check::new(what), &table)
    }

    /// The section as a file would hold it (`rule` and the values of its keys), to write into a
    /// parsed market or policy file.
    pub fn to_table(&self) -> toml::Table {
        let mut t = toml::Table::new();
        t.insert(
            "rule".into(),
            toml::Value::String(self.registration.name.into()),
        );
        for (k, v) in self.values.iter() {
            let whole = self.is_whole(k);
            let value = if whole {
                toml::Value::Integer(v as i64)
            } else {
                toml::Value::Float(v)
            };
            t.insert(k.into(), value);
        }
        if let Some((k, w)) = self.values.word {
            t.insert(k.into(), toml::Value::String(w.into()));
        }
        if let Some(set) = self.values.groups {
            t.insert("groups".into(), toml::Value::String(set.text()));
            t.insert(
                set.key.into(),
                toml::Value::Array(set.numbers.iter().map(|n| toml::Value::Float(*n)).collect()),
            );
        }
        t
    }

    /// The rule in its short form `NAME[:KEY=VALUE]...` with every value written out, which
    /// [`ExpectationSpec::from_short`] reads back to the same rule (a rule with groups has none).
    pub fn short_form(&self) -> String {
        let mut out = self.registration.name.to_string();
        for (k, v) in self.values.iter() {
            if self.is_whole(k) {
                out.push_str(&format!(":{k}={}", v as i64));
            } else {
                out.push_str(&format!(":{k}={v:?}"));
            }
        }
        if let Some((k, w)) = self.values.word {
            out.push_str(&format!(":{k}={w}"));
        }
        out
    }

    /// Whether the rule declares `key` a whole number (written and serialised as an integer).
    fn is_whole(&self, key: &str) -> bool {
        self.registration
            .keys
            .iter()
            .any(|k| k.name == key && k.kind == ValueType::Integer)
    }

    /// Every registered rule in its short form (`Registration::short_form`), in registry order.
    pub fn short_forms() -> Vec<ExpectationSpec> {
        RULES
            .iter()
            .filter_map(|r| ExpectationSpec::from_short(r.name, "short form").ok())
            .collect()
    }
}

impl PartialEq for ExpectationSpec {
    fn eq(&self, other: &Self) -> bool {
        self.registration.name == other.registration.name && self.values == other.values
    }
}

impl std::fmt::Debug for ExpectationSpec {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let mut d = f.debug_struct("ExpectationSpec");
        d.field("rule", &self.registration.name);
        for (k, v) in self.values.iter() {
            d.field(k, &v);
        }
        if let Some((k, w)) = self.values.word {
            d.field(k, &w);
        }
        if let Some(set) = self.values.groups {
            d.field("groups", &set.text());
            d.field(set.key, &set.numbers);
        }
        d.finish()
    }
}

impl Serialize for ExpectationSpec {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let extra = if self.values.groups.is_some() { 2 } else { 0 }
            + usize::from(self.values.word.is_some());
        let mut m = s.serialize_map(Some(1 + self.values.len + extra))?;
        m.serialize_entry("rule", self.registration.name)?;
        for (k, v) in self.values.iter() {
            let whole = self.is_whole(k);
            if whole {
                m.serialize_entry(k, &(v as i64))?;
            } else {
                m.serialize_entry(k, &v)?;
            }
        }
        if let Some((k, w)) = self.values.word {
            m.serialize_entry(k, w)?;
        }
        if let Some(set) = self.values.groups {
            m.serialize_entry("groups", &set.text())?;
            m.serialize_entry(set.key, &set.numbers)?;
        }
        m.end()
    }
}

/// Builds the rule a validated spec describes.
pub fn build(spec: &ExpectationSpec) -> Box<dyn ExpectationRule> {
    spec.rule()
}

/// The `[expectations]` section's keys with their types: `rule`, then every registered rule's keys
/// (each once, in registry order) — the one schema's entry for the section.
pub fn section_keys() -> Vec<(&'static str, ValueType)> {
    let mut out = vec![("rule", ValueType::Text)];
    for rule in RULES {
        for key in rule.keys {
            if !out.iter().any(|(k, _)| *k == key.name) {
                out.push((key.name, key.kind));
            }
        }
    }
    out
}

/// The range of each numeric `[expectations]` key over the rules that read it (for the range table
/// and `--vary` messages; each rule checks its own). Where the rules' ranges differ, the row spans
/// them and its note gives each rule's.
pub fn key_ranges() -> &'static [KeyRange] {
    static RANGES: OnceLock<Vec<KeyRange>> = OnceLock::new();
    RANGES.get_or_init(|| {
        let mut out: Vec<KeyRange> = Vec::new();
        for (name, _) in section_keys() {
            let per_rule: Vec<(&str, KeyRange)> = RULES
                .iter()
                .flat_map(|rule| {
                    rule.keys
                        .iter()
                        .filter(|k| k.name == name)
                        .filter_map(move |k| k.range.map(|r| (rule.name, r)))
                })
                .collect();
            let Some((_, first)) = per_rule.first().copied() else {
                continue;
            };
            if per_rule.iter().all(|(_, r)| *r == first) {
                out.push(first);
                continue;
            }
            let mut span = first;
            for (_, r) in &per_rule {
                if r.lo < span.lo || (r.lo == span.lo && !r.open_lo) {
                    span.lo = r.lo;
                    span.open_lo = r.open_lo;
                }
                if r.hi > span.hi || (r.hi == span.hi && !r.open_hi) {
                    span.hi = r.hi;
                    span.open_hi = r.open_hi;
                }
            }
            let note: Vec<String> = per_rule
                .iter()
                .map(|(rule, r)| format!("{rule} {}", r.describe()))
                .collect();
            // built once for the life of the program
            span.note = String::leak(note.join("; "));
            out.push(span);
        }
        out
    })
}

/// Reads and validates an `[expectations]` section as written (keys and types already checked):
/// the rule it names (the first registered when it names none), keys of other rules refused, then
/// the rule's own `read`.
pub fn read(check: &Check, table: &toml::Table) -> Result<ExpectationSpec, InputError> {
    let name = table
        .get("rule")
        .and_then(|v| v.as_str())
        .unwrap_or(RULES[0].name);
    let Some(registration) = registered(name) else {
        let names: Vec<&str> = RULES.iter().map(|r| r.name).collect();
        return Err(check.bad(
            "expectations.rule",
            format!("\"{}\"", escape(name)),
            &format!("allowed rules: {}", names.join(", ")),
        ));
    };
    for (key, _) in section_keys().into_iter().skip(1) {
        if table.contains_key(key) && !registration.keys.iter().any(|k| k.name == key) {
            return Err(check.bad(
                &format!("expectations.{key}"),
                "(set)",
                &format!("rule \"{name}\" does not use `{key}`; remove it"),
            ));
        }
    }
    let values = (registration.read)(&Reader {
        check,
        table,
        rule: registration,
    })?;
    Ok(ExpectationSpec {
        registration,
        values,
    })
}

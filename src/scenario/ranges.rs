//! The allowed range of every numeric key, in one table: `validate` checks values against it, the
//! README's table of input ranges is checked against it in a test, and every range is finite so that
//! no accepted value can overflow a welfare, fiscal or stability figure.
//!
//! Prices are capped at 10¹², quantities (intercepts, capacities, stocks, shock sizes) at 10¹², costs
//! per unit at 10¹², money per period (purchase budget) at 10²⁴ (a price times a quantity); the
//! engine's divergence bound (1000 × the largest reference price) then keeps every product finite.

/// The allowed interval of one numeric key.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeyRange {
    /// Dotted key, e.g. `stock.capacity`.
    pub key: &'static str,
    /// Lower end.
    pub lo: f64,
    /// Upper end.
    pub hi: f64,
    /// The lower end itself is not allowed.
    pub open_lo: bool,
    /// The upper end itself is not allowed.
    pub open_hi: bool,
    /// A whole number.
    pub integer: bool,
    /// What the range depends on, when it is narrower in some cases (empty otherwise).
    pub note: &'static str,
}

pub const fn r(key: &'static str, lo: f64, hi: f64, open_lo: bool, open_hi: bool) -> KeyRange {
    KeyRange {
        key,
        lo,
        hi,
        open_lo,
        open_hi,
        integer: false,
        note: "",
    }
}

pub const fn int(key: &'static str, lo: f64, hi: f64) -> KeyRange {
    KeyRange {
        key,
        lo,
        hi,
        open_lo: false,
        open_hi: false,
        integer: true,
        note: "",
    }
}

pub const fn noted(mut k: KeyRange, note: &'static str) -> KeyRange {
    k.note = note;
    k
}

/// Largest price, quantity or cost per unit accepted anywhere.
pub const BIG: f64 = 1e12;
/// Largest amount of money per period accepted (a price times a quantity).
pub const MONEY: f64 = 1e24;
/// Largest seed (i64::MAX: TOML integers are signed 64-bit).
const SEED_MAX: f64 = 9_223_372_036_854_775_807.0;

/// Every numeric key of the market file and of a policy file's own sections with its range, in two
/// parts around `[expectations]` (the rule sections' keys and the `[expectations]` keys, shared by
/// both files, are declared with their rules): the curves' keys here.
pub const CURVE_RANGES: &[KeyRange] = &[
    noted(r("demand.intercept", 0.0, BIG, true, false), "linear form"),
    noted(r("demand.slope", -BIG, 0.0, false, true), "linear form"),
    r("demand.at_price", 0.0, BIG, true, false),
    r("demand.at_quantity", 0.0, BIG, true, false),
    r("demand.elasticity", -50.0, 0.0, false, true),
    noted(
        r("supply.intercept", -BIG, BIG, false, false),
        "linear form",
    ),
    noted(r("supply.slope", 0.0, BIG, true, false), "linear form"),
    r("supply.at_price", 0.0, BIG, true, false),
    r("supply.at_quantity", 0.0, BIG, true, false),
    r("supply.elasticity", 0.0, 50.0, true, false),
];

/// The rest of the market file's numeric keys (after `[expectations]`) and `[policy]`'s.
pub const RANGES: &[KeyRange] = &[
    // run
    int("run.periods", 1.0, 1_000_000.0),
    r("run.initial_price", 0.0, BIG, true, false),
    noted(
        r("run.price_history", 0.0, BIG, true, false),
        "each price; at most 1000 prices",
    ),
    int("run.replications", 1.0, 10_000_000.0),
    int("run.seed", 0.0, SEED_MAX),
    r("run.discount_rate", 0.0, 1.0, false, true),
    r("run.risk_aversion", 0.0, 20.0, false, false),
    r("run.public_funds_cost", 1.0, 3.0, false, false),
    r("run.crop_income_share", 0.0, 1.0, true, false),
    noted(
        r("run.alert_price", 0.0, BIG, true, false),
        "each price; at most 8 prices",
    ),
    // shocks
    r("shocks.yield_cv", 0.0, 2.0, false, false),
    r("shocks.supply_sd", 0.0, BIG, false, false),
    r("shocks.demand_sd", 0.0, BIG, false, false),
    noted(
        r("shocks.demand_persistence", -1.0, 1.0, true, true),
        "0 with [storers] and demand_sd > 0",
    ),
    // private storers
    r("storers.storage_cost", 0.0, BIG, false, false),
    r("storers.interest_rate", 0.0, 1.0, false, true),
    r("storers.loss_rate", 0.0, 1.0, false, true),
    // household groups (`[[households]]`, each group)
    noted(
        r("households.population_share", 0.0, 1.0, true, false),
        "each group; the groups' shares sum to 1 ± 1e-6",
    ),
    noted(
        r("households.income", 0.0, BIG, true, false),
        "each group, per household per season",
    ),
    noted(
        r("households.production_share", 0.0, 1.0, false, false),
        "each group",
    ),
    noted(
        r("households.consumption_share", 0.0, 1.0, false, false),
        "each group",
    ),
    // policy file (the rule sections' keys are declared in their rule files)
    r("policy.annual_budget", 0.0, MONEY, true, false),
];

/// The range of `key` (a dotted key; an indexed key such as `run.price_history[3]` takes its
/// array's range, and a key of an array of tables such as `households[2].income` its section's).
pub fn range_of(key: &str) -> Option<&'static KeyRange> {
    let unindexed;
    let key = match key.split_once('[') {
        Some((section, rest)) if !section.contains('.') => match rest.split_once("].") {
            Some((_, inner)) => {
                unindexed = format!("{section}.{inner}");
                unindexed.as_str()
            }
            None => key,
        },
        _ => key,
    };
    let base = key.split('[').next().unwrap_or(key);
    CURVE_RANGES
        .iter()
        .chain(RANGES)
        .chain(crate::expectations::key_ranges())
        .chain(rule_ranges())
        .find(|k| k.key == base)
}

/// The ranges the registered policy rules declare for their keys.
fn rule_ranges() -> impl Iterator<Item = &'static KeyRange> {
    crate::policies::SECTIONS
        .iter()
        .flat_map(|s| s.keys)
        .filter_map(|k| k.range.as_ref())
}

/// Every numeric key's range in README order: the market file's curves, the `[expectations]` keys
/// (over the rules that read each, `expectations::key_ranges`), the rest of the market file's, the
/// rule sections' (registry order), then `[policy]`'s.
pub fn all() -> Vec<&'static KeyRange> {
    let (policy, market): (Vec<_>, Vec<_>) =
        RANGES.iter().partition(|k| k.key.starts_with("policy."));
    CURVE_RANGES
        .iter()
        .chain(crate::expectations::key_ranges())
        .chain(market)
        .chain(rule_ranges())
        .chain(policy)
        .collect()
}

/// A number in short form for messages and tables: plain when it is short, otherwise scientific
/// with at most five significant digits (`1.2346e+300`); never longer than 12 characters.
pub fn short_num(v: f64) -> String {
    if v.is_nan() {
        return "nan".into();
    }
    if v.is_infinite() {
        return if v > 0.0 { "inf" } else { "-inf" }.into();
    }
    let plain = format!("{v}");
    if plain.len() <= 12 && (v == 0.0 || v.abs() >= 1e-4) {
        return plain;
    }
    if (1e-4..1e12).contains(&v.abs()) {
        // six significant digits, trailing zeros dropped
        let decimals = (5 - v.abs().log10().floor() as i32).max(0) as usize;
        let fixed = format!("{v:.decimals$}");
        let fixed = if fixed.contains('.') {
            fixed
                .trim_end_matches('0')
                .trim_end_matches('.')
                .to_string()
        } else {
            fixed
        };
        if fixed.len() <= 12 {
            return fixed;
        }
    }
    let sci = format!("{v:.4e}");
    let (mantissa, exponent) = sci.split_once('e').unwrap_or((&sci, "0"));
    let mantissa = if mantissa.contains('.') {
        mantissa.trim_end_matches('0').trim_end_matches('.')
    } else {
        mantissa
    };
    let exponent: i32 = exponent.parse().unwrap_or(0);
    format!(
        "{mantissa}e{}{}",
        if exponent < 0 { '-' } else { '+' },
        exponent.abs()
    )
}

impl KeyRange {
    /// The interval in words, e.g. `(0, 1e+12]`, or `from 1 to 1000` for whole numbers.
    pub fn describe(&self) -> String {
        if self.integer {
            return format!(
                "a whole number from {} to {}",
                self.lo as i64, self.hi as i64
            );
        }
        format!(
            "{}{}, {}{}",
            if self.open_lo { '(' } else { '[' },
            short_num(self.lo),
            short_num(self.hi),
            if self.open_hi { ')' } else { ']' }
        )
    }

    /// True when `v` lies in the interval.
    pub fn contains(&self, v: f64) -> bool {
        let lo = if self.open_lo {
            v > self.lo
        } else {
            v >= self.lo
        };
        let hi = if self.open_hi {
            v < self.hi
        } else {
            v <= self.hi
        };
        v.is_finite() && lo && hi
    }
}

/// A key name or string value from a file for an error message: control characters escaped (a
/// newline shows as `\n`), everything else as written.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        if ch.is_control() {
            out.extend(ch.escape_default());
        } else {
            out.push(ch);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_numbers_stay_short() {
        assert_eq!(short_num(1.2345678e300), "1.2346e+300");
        assert_eq!(short_num(-1.0e300), "-1e+300");
        assert_eq!(short_num(1e12), "1e+12");
        assert_eq!(short_num(200.0), "200");
        assert_eq!(short_num(0.25), "0.25");
        assert_eq!(short_num(1e-300), "1e-300");
        assert_eq!(short_num(0.1 + 0.2), "0.3");
        assert_eq!(short_num(f64::MAX), "1.7977e+308");
        for v in [
            1e307,
            f64::MIN_POSITIVE,
            -1.5e200,
            1.0 / 3.0,
            123456.789e-12,
            98765.4321,
        ] {
            assert!(short_num(v).len() <= 12, "{}", short_num(v));
            // the short form reads back within its five significant digits
            let back: f64 = short_num(v).parse().unwrap();
            assert!((back - v).abs() <= 1e-4 * v.abs(), "{v} {back}");
        }
    }

    #[test]
    fn every_range_is_finite_and_ordered() {
        for k in all() {
            assert!(
                k.lo.is_finite() && k.hi.is_finite() && k.lo < k.hi,
                "{}",
                k.key
            );
        }
    }

    #[test]
    fn control_characters_are_escaped() {
        assert_eq!(escape("a\nb\u{7}"), "a\\nb\\u{7}");
        assert_eq!(escape("prix_é"), "prix_é");
    }
}

//! The allowed range of every numeric key, in one table: `validate` checks values against it, the
//! README's table of input ranges is checked against it in a test, and every range is finite so that
//! no accepted value can overflow a welfare, fiscal or stability figure.
//!
//! Prices are capped at 10¹², quantities (intercepts, capacities, stocks, shock sizes) at 10¹², costs
//! per unit at 10¹², money per period (purchase budget) at 10²⁴ (a price times a quantity); the
//! engine's divergence bound (1000 × the largest reference price) then keeps every product finite.

pub use crate::input::ranges::{escape, int, noted, r, short_num, KeyRange, BIG, MONEY};

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
    // the border
    r("trade.world_price", 0.0, BIG, true, false),
    r("trade.world_price_cv", 0.0, 2.0, false, false),
    r("trade.world_price_persistence", -1.0, 1.0, true, true),
    r("trade.import_cost", 0.0, BIG, false, false),
    r("trade.export_cost", 0.0, BIG, false, false),
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
        .find(|k| k.key == base)
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
    fn control_characters_are_escaped() {
        assert_eq!(escape("a\nb\u{7}"), "a\\nb\\u{7}");
        assert_eq!(escape("prix_é"), "prix_é");
    }
}

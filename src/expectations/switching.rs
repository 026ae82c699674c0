//! `rule = "switching"`: farmers choose between rules by their past forecast performance (Brock and
//! Hommes 1997, "A rational route to randomness", Econometrica 65(5)): the share of rule i is
//! n_i,t = exp(β U_i,t−1)/Σ_j exp(β U_j,t−1), with U_i = −E_i − cost_i, E_i the weighted past
//! squared forecast errors (E_i ← m·E_i + (1 − m)·error², m the memory) and cost_i what the
//! forecast costs per season. Brock and Hommes measure performance by realised profit; with a
//! quadratic production cost the profits of two forecasts differ by S'/2 times the difference of
//! their squared errors (derived in `tests/expectation_switching.rs`), so their β is ours times 2/S'.
//! The machinery is in `groups`; everything the program knows of the rule itself is here.

use super::groups::{read_groups, values_with, Groups, ShareRule};
use super::{ExpectationRule, Reader, Registration, Values};
use crate::input::ranges::{r, KeyRange, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The registration of `rule = "switching"`.
pub const RULE: Registration = Registration {
    name: "switching",
    keys: &[
        Key {
            name: "groups",
            kind: ValueType::Text,
            range: None,
        },
        Key {
            name: "cost",
            kind: ValueType::Numbers,
            range: Some(KeyRange {
                note: "each group, per season, in squared price units",
                ..r("expectations.cost", 0.0, BIG, false, false)
            }),
        },
        Key {
            name: "intensity",
            kind: ValueType::Number,
            range: Some(r("expectations.intensity", 0.0, BIG, false, false)),
        },
        Key {
            name: "memory",
            kind: ValueType::Number,
            range: Some(r("expectations.memory", 0.0, 1.0, false, true)),
        },
    ],
    read,
    build,
    starting: &[],
    main_key: Some("intensity"),
    short_form: "groups = \"rational, naive\"\ncost = [1.0, 0.0]\nintensity = 1.0",
    examples: &[
        "[expectations]\nrule = \"switching\"\ngroups = \"rational, naive\"\ncost = [1.0, 0.0]\nintensity = 2.0\n",
        "[expectations]\nrule = \"switching\"\ngroups = \"naive, adaptive:0.5\"\ncost = [0.0, 0.5]\nintensity = 0.1\nmemory = 0.5\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let set = read_groups(r, "cost", |v| {
        if (0.0..BIG).contains(&v) {
            Ok(())
        } else {
            Err(format!("a cost in [0, {BIG:e})"))
        }
    })?;
    let intensity = r
        .number("intensity")?
        .ok_or_else(|| r.missing("intensity", "the intensity of choice β ≥ 0"))?;
    Ok(values_with(set)
        .with("intensity", intensity)
        .with("memory", r.number("memory")?.unwrap_or(0.0)))
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    let shares = ShareRule::Switching {
        intensity: v.number("intensity"),
        memory: v.get("memory").unwrap_or(0.0),
    };
    match v.groups {
        Some(set) => Box::new(Groups::new("switching", set, shares)),
        // `read` always sets the groups; a value made otherwise plants as naive farmers
        None => Box::new(super::Naive),
    }
}

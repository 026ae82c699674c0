//! `rule = "mixed"`: fixed shares of farmers forming their expectations by different rules, e.g.
//! half rational, half naive; planting is summed over the groups, Q = Σ n_i S(P^e_i) (the
//! machinery is in `groups`). Everything the program knows of the rule itself is here.

use super::conditions::{PublishedCondition, Slopes};
use super::groups::{read_groups, values_with, Groups, ShareRule};
use super::{ExpectationRule, Reader, Registration, Values};
use crate::input::ranges::{r, KeyRange};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// How far the shares' sum may be from 1.
pub const SUM_TOLERANCE: f64 = 1e-6;

/// The registration of `rule = "mixed"`.
pub const RULE: Registration = Registration {
    name: "mixed",
    keys: &[
        Key {
            name: "groups",
            kind: ValueType::Text,
            range: None,
        },
        Key {
            name: "shares",
            kind: ValueType::Numbers,
            range: Some(KeyRange {
                note: "each group; the shares sum to 1 ± 1e-6",
                ..r("expectations.shares", 0.0, 1.0, false, false)
            }),
        },
    ],
    read,
    build,
    starting: &[],
    main_key: None,
    short_form: "groups = \"rational, naive\"\nshares = [0.5, 0.5]",
    examples: &[
        "[expectations]\nrule = \"mixed\"\ngroups = \"rational, naive\"\nshares = [0.3, 0.7]\n",
        "[expectations]\nrule = \"mixed\"\ngroups = \"naive, adaptive:0.4, trailing-mean:3\"\nshares = [0.25, 0.5, 0.25]\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let set = read_groups(r, "shares", |v| {
        if (0.0..=1.0).contains(&v) {
            Ok(())
        } else {
            Err("a share in [0, 1]".into())
        }
    })?;
    let sum: f64 = set.numbers.iter().sum();
    if (sum - 1.0).abs() > SUM_TOLERANCE {
        return Err(r.bad(
            "shares",
            &format!("sum {}", crate::output::fmt_num(sum, 9)),
            "shares summing to 1 (± 1e-6)",
        ));
    }
    Ok(values_with(set))
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    match v.groups {
        Some(set) => Box::new(Groups::new("mixed", set, ShareRule::Fixed)),
        // `read` always sets the groups; a value made otherwise plants as naive farmers
        None => Box::new(super::Naive),
    }
}

/// The closed form for rational and naive groups: with shares n rational, 1 − n naive and the
/// linearised market (b = S', d = |D'|), the rational group's forecast equals the price, so
/// −d·dP_t = n·b·dP_t + (1 − n)·b·dP_{t−1}: the root is −b(1 − n)/(d + b·n) (derived here from the
/// two groups' planting; the naive case n = 0 is Ezekiel's b < d). For `switching` the shares at
/// rest are the ones with no forecast errors. No condition for other groups.
pub(crate) fn conditions(groups: &Groups, slopes: &Slopes) -> Vec<PublishedCondition> {
    let names: Vec<&str> = groups.forms.iter().map(String::as_str).collect();
    let Some(r) = groups.rational else {
        return Vec::new();
    };
    if names.len() != 2 || !names.contains(&"naive") {
        return Vec::new();
    }
    let k = names.len();
    let mut shares = vec![0.0; k];
    groups.shares_at(&vec![0.0; k], &mut shares);
    let n = shares[r];
    let w = (1.0 - n) * slopes.d / (slopes.d + slopes.b * n);
    let mut c = slopes.first_order(w);
    c.name = "b(1 − n)/(d + b·n) < 1, n the rational share".into();
    c.source = "root of the mixed rational/naive cobweb; derived here from the two groups' \
                planting (no published source checked)"
        .into();
    c.detail = format!("{}, n = {}", c.detail, super::g6(n));
    vec![c]
}

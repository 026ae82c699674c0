//! `rule = "extrapolative"`: farmers extend last season's price change (Goodwin 1947). Everything
//! the program knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    g, g6, Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::ranges::r;
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The registration of `rule = "extrapolative"`.
pub const RULE: Registration = Registration {
    name: "extrapolative",
    keys: &[Key {
        name: "weight",
        kind: ValueType::Number,
        range: Some(r("expectations.weight", -1.0, 1.0, true, true)),
    }],
    read,
    build,
    starting: &[],
    main_key: Some("weight"),
    short_form: "weight = -0.3",
    examples: &["[expectations]\nrule = \"extrapolative\"\nweight = -0.3\n"],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let weight = r
        .number("weight")?
        .ok_or_else(|| r.missing("weight", "a weight in (−1, 1)"))?;
    Ok(Values::new().with("weight", weight))
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    Box::new(Extrapolative {
        weight: v.number("weight"),
    })
}

/// Extrapolative expectations (Goodwin 1947): P^e_t = P_{t−1} + ρ (P_{t−1} − P_{t−2}).
#[derive(Debug, Clone, Copy)]
pub struct Extrapolative {
    /// ρ in (−1, 1).
    pub weight: f64,
}

impl ExpectationRule for Extrapolative {
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> StateLayout {
        StateLayout::Lags(vec![1.0 + self.weight, -self.weight])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// Second order: Jury's conditions on z² + (b/d)(1 + ρ) z − (b/d) ρ.
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        vec![slopes.second_order(1.0 + self.weight, -self.weight)]
    }
    fn describe(&self) -> String {
        format!("extrapolative (weight {})", g(self.weight))
    }
    fn setting(&self) -> Option<String> {
        Some(format!("weight {}", g6(self.weight)))
    }
    fn lags(&self) -> usize {
        2
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        let (p1, p2) = (input.lag(1), input.lag(2));
        p1 + self.weight * (p1 - p2)
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

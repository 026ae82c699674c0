//! `rule = "adaptive"`: farmers revise their expectation by a share of last season's surprise
//! (Nerlove 1958). Everything the program knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{g, g6, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values};
use crate::input::ranges::{r, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The registration of `rule = "adaptive"`.
pub const RULE: Registration = Registration {
    name: "adaptive",
    keys: &[
        Key {
            name: "weight",
            kind: ValueType::Number,
            range: Some(r("expectations.weight", 0.0, 1.0, true, false)),
        },
        Key {
            name: "initial_expected_price",
            kind: ValueType::Number,
            range: Some(r(
                "expectations.initial_expected_price",
                0.0,
                BIG,
                true,
                false,
            )),
        },
    ],
    read,
    build,
    starting: &["initial_expected_price"],
    main_key: Some("weight"),
    short_form: "weight = 0.5",
    examples: &[
        "[expectations]\nrule = \"adaptive\"\nweight = 0.4\n",
        "[expectations]\nrule = \"adaptive\"\nweight = 0.7\ninitial_expected_price = 205.0\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let weight = r
        .number("weight")?
        .ok_or_else(|| r.missing("weight", "a weight in (0, 1]"))?;
    Ok(Values::new().with("weight", weight).with_opt(
        "initial_expected_price",
        r.number("initial_expected_price")?,
    ))
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    Box::new(Adaptive {
        weight: v.number("weight"),
        initial_expected_price: v.get("initial_expected_price"),
    })
}

/// Adaptive expectations (Nerlove 1958): P^e_t = P^e_{t−1} + λ (P_{t−1} − P^e_{t−1}), with
/// P^e_1 = `initial_expected_price` (default P_0).
#[derive(Debug, Clone, Copy)]
pub struct Adaptive {
    /// λ in (0, 1].
    pub weight: f64,
    /// P^e_1; `None` means P_0.
    pub initial_expected_price: Option<f64>,
}

impl Adaptive {
    /// The expectation given the previous one (`None` in period 1) and the last price P_{t−1}.
    #[inline]
    pub fn next(&self, previous: Option<f64>, last: f64) -> f64 {
        match previous {
            None => self.initial_expected_price.unwrap_or(last),
            Some(prev) => prev + self.weight * (last - prev),
        }
    }
}

impl ExpectationRule for Adaptive {
    fn lags(&self) -> usize {
        1
    }
    fn is_rational(&self) -> bool {
        false
    }
    fn layout(&self) -> StateLayout {
        StateLayout::Expectation(self.weight)
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// b/d < (2 − λ)/λ (Nerlove 1958).
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        vec![slopes.nerlove(self.weight)]
    }
    fn describe(&self) -> String {
        match self.initial_expected_price {
            Some(p) => format!("adaptive (weight {}, initial {})", g(self.weight), g(p)),
            None => format!("adaptive (weight {})", g(self.weight)),
        }
    }
    fn setting(&self) -> Option<String> {
        Some(format!("weight {}", g6(self.weight)))
    }
    #[inline]
    fn expect(&self, input: &ExpectationInput) -> f64 {
        self.next(input.previous, input.lag(1))
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        Some(*self)
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

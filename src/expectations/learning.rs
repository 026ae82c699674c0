//! `rule = "learning"`: farmers estimate the mean price they face by recursive least squares on a
//! constant with a constant gain (Evans and Honkapohja 2001, ch. 3 and 14): each season the
//! estimate moves by the gain times last season's forecast error. With a constant gain γ this is
//! adaptive expectations with weight γ (the recursion is the same, so the engine calls it
//! directly). Everything the program knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    g, g6, Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::ranges::{r, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The registration of `rule = "learning"`.
pub const RULE: Registration = Registration {
    name: "learning",
    keys: &[
        Key {
            name: "gain",
            kind: ValueType::Number,
            range: Some(r("expectations.gain", 0.0, 1.0, true, false)),
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
    main_key: Some("gain"),
    short_form: "gain = 0.2",
    examples: &[
        "[expectations]\nrule = \"learning\"\ngain = 0.2\n",
        "[expectations]\nrule = \"learning\"\ngain = 0.05\ninitial_expected_price = 190.0\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let gain = r
        .number("gain")?
        .ok_or_else(|| r.missing("gain", "a constant gain in (0, 1]"))?;
    Ok(Values::new().with("gain", gain).with_opt(
        "initial_expected_price",
        r.number("initial_expected_price")?,
    ))
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    Box::new(Learning {
        gain: v.number("gain"),
        initial_estimate: v.get("initial_expected_price"),
    })
}

/// Constant-gain learning of the mean price: a_t = a_{t−1} + γ (P_{t−1} − a_{t−1}), P^e_t = a_t,
/// with a_1 = `initial_expected_price` (default P_0).
#[derive(Debug, Clone, Copy)]
pub struct Learning {
    /// γ in (0, 1].
    pub gain: f64,
    /// a_1; `None` means P_0.
    pub initial_estimate: Option<f64>,
}

impl Learning {
    /// The same recursion as adaptive expectations with weight γ.
    fn as_recursion(&self) -> Adaptive {
        Adaptive {
            weight: self.gain,
            initial_expected_price: self.initial_estimate,
        }
    }
}

impl ExpectationRule for Learning {
    fn lags(&self) -> usize {
        1
    }
    fn is_rational(&self) -> bool {
        false
    }
    fn layout(&self) -> StateLayout {
        StateLayout::Expectation(self.gain)
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// The map of the estimate is adaptive expectations' with λ = γ: b/d < (2 − γ)/γ (Nerlove
    /// 1958); E-stability alone (Evans and Honkapohja 2001) holds for every b/d > 0, the constant
    /// gain being what can make the path unstable.
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        vec![slopes.nerlove(self.gain)]
    }
    fn describe(&self) -> String {
        match self.initial_estimate {
            Some(p) => format!(
                "learning (constant gain {}, initial estimate {})",
                g(self.gain),
                g(p)
            ),
            None => format!("learning (constant gain {})", g(self.gain)),
        }
    }
    fn setting(&self) -> Option<String> {
        Some(format!("gain {}", g6(self.gain)))
    }
    #[inline]
    fn expect(&self, input: &ExpectationInput) -> f64 {
        // a_t = a_{t−1} + γ (P_{t−1} − a_{t−1})
        match input.previous {
            None => self.initial_estimate.unwrap_or(input.lag(1)),
            Some(prev) => prev + self.gain * (input.lag(1) - prev),
        }
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        Some(self.as_recursion())
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
}

//! `rule = "learning"`: farmers estimate the mean price they face by recursive least squares on a
//! constant (Evans and Honkapohja 2001, ch. 3 and 14): each season the estimate moves by the gain
//! times last season's forecast error. The gain is constant (`gain_schedule = "constant"`, the
//! default) or falls with the seasons (`"decreasing"`, Bray and Savin 1986): then the estimate is
//! the mean of the past prices, the initial estimate counting as 1/γ − 1 seasons of them. With a
//! constant gain γ this is adaptive expectations with weight γ (the recursion is the same, so the
//! engine calls it directly). Everything the program knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    g, g6, Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::ranges::{r, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The words of `gain_schedule`; the first is what an absent key means.
const SCHEDULES: &[&str] = &["constant", "decreasing"];

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
            name: "gain_schedule",
            kind: ValueType::Text,
            range: None,
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
        "[expectations]\nrule = \"learning\"\ngain = 0.25\ngain_schedule = \"decreasing\"\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let gain = r.number("gain")?.ok_or_else(|| {
        r.missing(
            "gain",
            "a gain in (0, 1] (constant, or the first season's when it decreases)",
        )
    })?;
    let values = Values::new().with("gain", gain).with_opt(
        "initial_expected_price",
        r.number("initial_expected_price")?,
    );
    Ok(match r.word("gain_schedule", SCHEDULES)? {
        Some(w) => values.with_word("gain_schedule", w),
        None => values,
    })
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    Box::new(Learning {
        gain: v.number("gain"),
        decreasing: v.word("gain_schedule") == Some("decreasing"),
        initial_estimate: v.get("initial_expected_price"),
    })
}

/// Learning the mean price: a_t = a_{t−1} + γ_t (P_{t−1} − a_{t−1}), P^e_t = a_t, with
/// a_1 = `initial_expected_price` (default P_0). Constant gain: γ_t = γ. Decreasing gain:
/// γ_t = γ/(1 + γ(t − 2)) = 1/(w + t − 1) with w = 1/γ − 1, so that
/// a_t = (w·a_1 + P_1 + … + P_{t−1})/(w + t − 1): least squares on a constant with a prior worth
/// w seasons (Bray and Savin 1986; γ = 1: the plain mean of the prices seen).
#[derive(Debug, Clone, Copy)]
pub struct Learning {
    /// γ in (0, 1]: the gain, or its first value (season 2) when it decreases.
    pub gain: f64,
    /// The gain falls as 1/t (`gain_schedule = "decreasing"`).
    pub decreasing: bool,
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

    /// γ_t, the gain of the revision made for season t ≥ 2 (season 2 for a smaller t).
    #[inline]
    pub fn gain_at(&self, season: usize) -> f64 {
        if self.decreasing {
            let after = season.max(2) - 2;
            self.gain / (1.0 + self.gain * after as f64)
        } else {
            self.gain
        }
    }

    /// The weight w of the initial estimate, in seasons of prices: 1/γ − 1.
    pub fn prior_weight(&self) -> f64 {
        1.0 / self.gain - 1.0
    }
}

impl ExpectationRule for Learning {
    fn lags(&self) -> usize {
        1
    }
    fn is_rational(&self) -> bool {
        false
    }
    /// The estimate is the state, revised with γ (the first gain when it decreases: the
    /// stability analysis refuses that map, `time_varying`).
    fn layout(&self) -> StateLayout {
        StateLayout::Expectation(self.gain)
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// Constant gain: the map of the estimate is adaptive expectations' with λ = γ,
    /// b/d < (2 − γ)/γ (Nerlove 1958); the constant gain is what can make the path unstable.
    /// Decreasing gain: the path follows the limiting map (the E-stability differential equation),
    /// stable iff T'(a*) = −b/d < 1 (Evans and Honkapohja 2001).
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        if self.decreasing {
            vec![slopes.e_stability()]
        } else {
            vec![slopes.nerlove(self.gain)]
        }
    }
    fn describe(&self) -> String {
        let schedule = if self.decreasing {
            let w = self.prior_weight();
            format!(
                "decreasing gain from {}: the mean of past prices, the initial estimate counting \
                 as {} season{}",
                g(self.gain),
                g6(w),
                if w == 1.0 { "" } else { "s" }
            )
        } else {
            format!("constant gain {}", g(self.gain))
        };
        match self.initial_estimate {
            Some(p) => format!("learning ({schedule}, initial estimate {})", g(p)),
            None => format!("learning ({schedule})"),
        }
    }
    fn setting(&self) -> Option<String> {
        Some(if self.decreasing {
            format!("decreasing gain from {}", g6(self.gain))
        } else {
            format!("gain {}", g6(self.gain))
        })
    }
    #[inline]
    fn expect(&self, input: &ExpectationInput) -> f64 {
        // a_t = a_{t−1} + γ_t (P_{t−1} − a_{t−1})
        match input.previous {
            None => self.initial_estimate.unwrap_or(input.lag(1)),
            Some(prev) => prev + self.gain_at(input.season) * (input.lag(1) - prev),
        }
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        (!self.decreasing).then(|| self.as_recursion())
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        self.decreasing.then(|| {
            "expectations.gain_schedule = \"decreasing\": the gain falls every season, so the \
             estimate's map changes with the season and has no eigenvalue"
                .to_string()
        })
    }
}

//! `rule = "trailing-mean"`: farmers expect the mean of the last k prices. Everything the program
//! knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::ranges::int;
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The registration of `rule = "trailing-mean"`.
pub const RULE: Registration = Registration {
    name: "trailing-mean",
    keys: &[Key {
        name: "window",
        kind: ValueType::Integer,
        range: Some(int("expectations.window", 1.0, 1000.0)),
    }],
    read,
    build,
    starting: &[],
    main_key: Some("window"),
    short_form: "window = 3",
    examples: &[
        "[expectations]\nrule = \"trailing-mean\"\nwindow = 1\n",
        "[expectations]\nrule = \"trailing-mean\"\nwindow = 2\n",
        "[expectations]\nrule = \"trailing-mean\"\nwindow = 4\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let window = r
        .whole("window")?
        .ok_or_else(|| r.missing("window", "a window ≥ 1"))?;
    Ok(Values::new().with("window", window as f64))
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    Box::new(TrailingMean {
        window: v.number("window") as usize,
    })
}

/// Trailing-mean expectations: P^e_t = mean(P_{t−1}, …, P_{t−k}).
#[derive(Debug, Clone, Copy)]
pub struct TrailingMean {
    /// k ≥ 1.
    pub window: usize,
}

/// Mean of the last `k` entries of `history` (which holds at least `k`).
pub(crate) fn mean_of_last(history: &[f64], k: usize) -> f64 {
    let tail = &history[history.len() - k..];
    tail.iter().sum::<f64>() / k as f64
}

impl ExpectationRule for TrailingMean {
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> StateLayout {
        StateLayout::Lags(vec![1.0 / self.window as f64; self.window])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// A window of one is the naive rule (Ezekiel 1938); of two, Jury's conditions on
    /// z² + (b/d)/2 z + (b/d)/2; longer windows have no closed form here.
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        match self.window {
            1 => vec![slopes.ezekiel()],
            2 => vec![slopes.second_order(0.5, 0.5)],
            _ => Vec::new(),
        }
    }
    fn describe(&self) -> String {
        format!("trailing-mean (window {})", self.window)
    }
    fn setting(&self) -> Option<String> {
        Some(format!("window {}", self.window))
    }
    fn lags(&self) -> usize {
        self.window
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        mean_of_last(input.history, self.window)
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

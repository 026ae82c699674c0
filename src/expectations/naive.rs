//! `rule = "naive"`: farmers expect last season's price (the classic cobweb). Everything the program
//! knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::InputError;

/// The registration of `rule = "naive"` (no keys of its own).
pub const RULE: Registration = Registration {
    name: "naive",
    keys: &[],
    read,
    build,
    starting: &[],
    main_key: None,
    short_form: "",
    examples: &["[expectations]\nrule = \"naive\"\n"],
};

fn read(_: &Reader) -> Result<Values, InputError> {
    Ok(Values::new())
}

fn build(_: &Values) -> Box<dyn ExpectationRule> {
    Box::new(Naive)
}

/// Naive expectations: P^e_t = P_{t−1} (the classic cobweb).
#[derive(Debug, Clone, Copy)]
pub struct Naive;

impl ExpectationRule for Naive {
    fn lags(&self) -> usize {
        1
    }
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> StateLayout {
        StateLayout::Lags(vec![1.0])
    }
    fn rests_anywhere(&self) -> bool {
        true
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// The cobweb theorem: b < d (Ezekiel 1938).
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        vec![slopes.ezekiel()]
    }
    fn describe(&self) -> String {
        "naive".into()
    }
    fn setting(&self) -> Option<String> {
        None
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        input.lag(1)
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

//! `rule = "normal-price"`: farmers expect last season's price pulled toward a normal price, fixed
//! or the mean of recent prices. Everything the program knows of it is here.

use super::conditions::{PublishedCondition, Slopes};
use super::{
    g, g6, Adaptive, ExpectationInput, ExpectationRule, Reader, Registration, StateLayout, Values,
};
use crate::input::ranges::{int, r, BIG};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;

/// The registration of `rule = "normal-price"`.
pub const RULE: Registration = Registration {
    name: "normal-price",
    keys: &[
        Key {
            name: "weight",
            kind: ValueType::Number,
            range: Some(r("expectations.weight", 0.0, 1.0, false, false)),
        },
        Key {
            name: "window",
            kind: ValueType::Integer,
            range: Some(int("expectations.window", 1.0, 1000.0)),
        },
        Key {
            name: "normal_price",
            kind: ValueType::Number,
            range: Some(r("expectations.normal_price", 0.0, BIG, true, false)),
        },
    ],
    read,
    build,
    starting: &[],
    main_key: Some("weight"),
    short_form: "weight = 0.5\nwindow = 3",
    examples: &[
        "[expectations]\nrule = \"normal-price\"\nweight = 0.4\nnormal_price = 212.0\n",
        "[expectations]\nrule = \"normal-price\"\nweight = 0.3\nwindow = 1\n",
        "[expectations]\nrule = \"normal-price\"\nweight = 0.3\nwindow = 2\n",
        "[expectations]\nrule = \"normal-price\"\nweight = 0.4\nwindow = 3\n",
    ],
};

fn read(r: &Reader) -> Result<Values, InputError> {
    let weight = r
        .number("weight")?
        .ok_or_else(|| r.missing("weight", "a weight in [0, 1]"))?;
    let values = Values::new().with("weight", weight);
    if r.has("normal_price") && r.has("window") {
        return Err(r.bad(
            "normal_price",
            "(set)",
            "give either normal_price (fixed) or window (trailing mean), not both",
        ));
    }
    match (r.number("normal_price")?, r.whole("window")?) {
        (Some(n), _) => Ok(values.with("normal_price", n)),
        (None, Some(w)) => Ok(values.with("window", w as f64)),
        (None, None) => Err(r.missing("normal_price", "normal_price > 0 or window ≥ 1")),
    }
}

fn build(v: &Values) -> Box<dyn ExpectationRule> {
    let normal = match v.get("normal_price") {
        Some(n) => NormalPrice::Fixed(n),
        None => NormalPrice::Window(v.number("window") as usize),
    };
    Box::new(NormalPriceRule {
        weight: v.number("weight"),
        normal,
    })
}

/// How the normal price of the normal-price rule is formed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum NormalPrice {
    /// A fixed normal price N.
    Fixed(f64),
    /// The mean of the last `window` producer prices.
    Window(usize),
}

/// Normal-price expectations: P^e_t = P_{t−1} + η (N_t − P_{t−1}), with N_t fixed or the mean of the
/// last `window` producer prices.
#[derive(Debug, Clone, Copy)]
pub struct NormalPriceRule {
    /// η in [0, 1].
    pub weight: f64,
    /// How N_t is formed.
    pub normal: NormalPrice,
}

impl ExpectationRule for NormalPriceRule {
    fn is_rational(&self) -> bool {
        false
    }
    fn as_adaptive(&self) -> Option<Adaptive> {
        None
    }
    fn layout(&self) -> StateLayout {
        match self.normal {
            NormalPrice::Fixed(_) => StateLayout::Lags(vec![1.0 - self.weight]),
            NormalPrice::Window(k) => {
                let mut w = vec![self.weight / k as f64; k];
                w[0] += 1.0 - self.weight;
                StateLayout::Lags(w)
            }
        }
    }
    /// A fixed normal price pulls the expectation toward N: at rest at p it expects p only at N.
    fn rests_anywhere(&self) -> bool {
        matches!(self.normal, NormalPrice::Window(_))
    }
    fn settles_at_once(&self) -> Option<&'static str> {
        None
    }
    /// First order (a fixed normal price: w = 1 − η; a window of one: w = 1): the root −(b/d)·w;
    /// a window of two: Jury's conditions; longer windows have no closed form here.
    fn conditions(&self, slopes: &Slopes) -> Vec<PublishedCondition> {
        match self.normal {
            NormalPrice::Fixed(_) => vec![slopes.first_order(1.0 - self.weight)],
            NormalPrice::Window(1) => vec![slopes.first_order(1.0)],
            NormalPrice::Window(2) => {
                vec![slopes.second_order(1.0 - self.weight + self.weight / 2.0, self.weight / 2.0)]
            }
            NormalPrice::Window(_) => Vec::new(),
        }
    }
    fn describe(&self) -> String {
        match self.normal {
            NormalPrice::Fixed(n) => {
                format!("normal-price (weight {}, normal {})", g(self.weight), g(n))
            }
            NormalPrice::Window(w) => {
                format!("normal-price (weight {}, window {w})", g(self.weight))
            }
        }
    }
    fn setting(&self) -> Option<String> {
        Some(format!("weight {}", g6(self.weight)))
    }
    fn lags(&self) -> usize {
        match self.normal {
            NormalPrice::Fixed(_) => 1,
            NormalPrice::Window(w) => w,
        }
    }
    fn expect(&self, input: &ExpectationInput) -> f64 {
        let last = input.lag(1);
        let normal = match self.normal {
            NormalPrice::Fixed(n) => n,
            NormalPrice::Window(w) => super::trailing_mean::mean_of_last(input.history, w),
        };
        last + self.weight * (normal - last)
    }
    fn groups(&self) -> Option<&super::Groups> {
        None
    }
    fn time_varying(&self) -> Option<String> {
        None
    }
}

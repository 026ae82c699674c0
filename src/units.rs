//! Units and number formats for everything a person reads: tables, the briefing and figure axes.
//!
//! One place decides
//! - the unit of money: the price unit times the quantity unit, named once ("crowns per t" × "kt"
//!   is "thousand crowns"), then stepped up by thousands ("million crowns") when the magnitudes of a
//!   set of numbers call for it ([`Units::money_scale`]) — one scale per table or page, so numbers
//!   side by side are in the same unit;
//! - the decimals of each kind of number ([`decimals`]), the same in every table, the briefing and
//!   the figures;
//! - thousands separators ([`group`]) wherever a person reads a number. CSV and JSON never use this
//!   module: they stay plain (`output::fmt_full`).

/// What a number measures, for its decimals and its unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    /// A price, in the price unit.
    Price,
    /// A quantity, in the quantity unit.
    Quantity,
    /// Money: price unit × quantity unit, scaled by [`MoneyScale`].
    Money,
    /// A share, shown as a percentage.
    Share,
    /// A pure number (spectral radius, ratio).
    Number,
}

/// Decimals shown for each measure, everywhere a person reads the number.
pub fn decimals(m: Measure) -> usize {
    match m {
        Measure::Price => 2,
        Measure::Quantity => 1,
        Measure::Money => 1,
        Measure::Share => 1,
        Measure::Number => 3,
    }
}

/// `x` with `digits` decimals and a comma between thousands ("13,408.2", "-1,024"); "n/a" when
/// `x` is not finite (a table never shows NaN or infinity). "-0.0" is written "0.0".
pub fn group(x: f64, digits: usize) -> String {
    if !x.is_finite() {
        return "n/a".into();
    }
    let s = format!("{:.digits$}", x.abs());
    let (int, frac) = match s.split_once('.') {
        Some((i, f)) => (i, Some(f)),
        None => (s.as_str(), None),
    };
    let mut out = String::with_capacity(s.len() + s.len() / 3 + 1);
    let zero = s.chars().all(|c| c == '0' || c == '.');
    if x < 0.0 && !zero {
        out.push('-');
    }
    let n = int.len();
    for (i, c) in int.chars().enumerate() {
        if i > 0 && (n - i) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    if let Some(f) = frac {
        out.push('.');
        out.push_str(f);
    }
    out
}

/// A share as a percentage with the shared decimals ("12.5 %").
pub fn percent(share: f64) -> String {
    if !share.is_finite() {
        return "n/a".into();
    }
    format!("{} %", group(100.0 * share, decimals(Measure::Share)))
}

/// Parses a number written by [`group`] (separators dropped; a trailing " %" allowed); `None` for
/// anything else. Used to right-align numeric cells.
pub fn parse_grouped(s: &str) -> Option<f64> {
    let t = s.trim().trim_end_matches('%').trim_end();
    if t.is_empty() {
        return None;
    }
    let plain: String = t.chars().filter(|c| *c != ',').collect();
    plain.parse::<f64>().ok().filter(|x| x.is_finite())
}

/// Powers of a thousand and their names.
const STEPS: [(i32, &str); 5] = [
    (0, ""),
    (3, "thousand"),
    (6, "million"),
    (9, "billion"),
    (12, "trillion"),
];

/// Mass units (their size in kilograms as a power of ten) that price and quantity units may use.
fn mass_exponent(unit: &str) -> Option<i32> {
    match unit.trim() {
        "kg" => Some(0),
        "t" | "tonne" | "tonnes" | "ton" => Some(3),
        "kt" => Some(6),
        "Mt" => Some(9),
        _ => None,
    }
}

/// The units of one market: price, quantity and the money they make.
#[derive(Debug, Clone, PartialEq)]
pub struct Units {
    /// Price unit as written ("crowns per t").
    pub price: String,
    /// Quantity unit as written ("kt").
    pub quantity: String,
    /// The currency word when the price unit reads "CURRENCY per MASS" ("crowns").
    currency: Option<String>,
    /// Price × quantity is 10^base currency units (3 for crowns per t × kt).
    base: i32,
}

/// A money unit for one set of numbers: divide by `divisor`, then name it `label`.
#[derive(Debug, Clone, PartialEq)]
pub struct MoneyScale {
    /// What one unit of the shown number is ("thousand crowns", "million crowns").
    pub label: String,
    /// Value in price × quantity units per shown unit.
    pub divisor: f64,
}

impl MoneyScale {
    /// `x` (price × quantity units) in this scale, grouped, with the shared money decimals.
    pub fn show(&self, x: f64) -> String {
        group(x / self.divisor, decimals(Measure::Money))
    }

    /// `x` with the unit ("13.4 million crowns").
    pub fn with_unit(&self, x: f64) -> String {
        format!("{} {}", self.show(x), self.label)
    }
}

impl Units {
    /// The units of a market file's `price_unit` and `quantity_unit`.
    pub fn new(price_unit: &str, quantity_unit: &str) -> Units {
        let mut currency = None;
        let mut base = 0;
        if let Some((cur, per)) = price_unit.rsplit_once(" per ") {
            if let (Some(p), Some(q)) = (mass_exponent(per), mass_exponent(quantity_unit)) {
                if !cur.trim().is_empty() && (q - p) >= 0 && (q - p) % 3 == 0 {
                    currency = Some(cur.trim().to_string());
                    base = q - p;
                }
            }
        }
        Units {
            price: price_unit.to_string(),
            quantity: quantity_unit.to_string(),
            currency,
            base,
        }
    }

    /// The money unit itself (price × quantity, not stepped up): "thousand crowns", or
    /// "crowns per t × kt" when the units do not name a currency and a mass.
    pub fn money(&self) -> String {
        self.money_scale(std::iter::empty()).label
    }

    /// The money scale for a set of numbers (in price × quantity units): stepped up by thousands
    /// while the largest magnitude stays at or above 10,000 shown units, so a table shows at most
    /// four integer digits before the decimals ("13,408 thousand" becomes "13.4 million").
    pub fn money_scale(&self, values: impl IntoIterator<Item = f64>) -> MoneyScale {
        let Some(cur) = &self.currency else {
            return MoneyScale {
                label: format!("{} × {}", self.price, self.quantity),
                divisor: 1.0,
            };
        };
        let max = values
            .into_iter()
            .filter(|x| x.is_finite())
            .fold(0.0f64, |m, x| m.max(x.abs()));
        let mut step = STEPS.iter().position(|(e, _)| *e == self.base).unwrap_or(0);
        let mut divisor = 1.0;
        while step + 1 < STEPS.len() && max / divisor >= 10_000.0 {
            step += 1;
            divisor *= 1000.0;
        }
        let name = STEPS[step].1;
        MoneyScale {
            label: if name.is_empty() {
                cur.clone()
            } else {
                format!("{name} {cur}")
            },
            divisor,
        }
    }

    /// The unit shown beside a measure (money in `scale`; shares as "%").
    pub fn unit(&self, m: Measure, scale: &MoneyScale) -> String {
        match m {
            Measure::Price => self.price.clone(),
            Measure::Quantity => self.quantity.clone(),
            Measure::Money => scale.label.clone(),
            Measure::Share => "%".into(),
            Measure::Number => String::new(),
        }
    }

    /// A number of measure `m` as a person reads it (money in `scale`, shares as percentages,
    /// without the "%" sign: the unit says it).
    pub fn show(&self, x: f64, m: Measure, scale: &MoneyScale) -> String {
        match m {
            Measure::Money => scale.show(x),
            Measure::Share => group(100.0 * x, decimals(m)),
            _ => group(x, decimals(m)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn groups_thousands_and_keeps_decimals() {
        assert_eq!(group(13408.24, 1), "13,408.2");
        assert_eq!(group(-1024.0, 0), "-1,024");
        assert_eq!(group(999.0, 0), "999");
        assert_eq!(group(137554949.0, 0), "137,554,949");
        assert_eq!(group(-0.01, 1), "0.0");
        assert_eq!(group(f64::NAN, 1), "n/a");
        assert_eq!(group(f64::INFINITY, 1), "n/a");
        assert_eq!(parse_grouped("137,554,949"), Some(137554949.0));
        assert_eq!(parse_grouped("12.5 %"), Some(12.5));
        assert_eq!(parse_grouped("abc"), None);
    }

    /// crowns per t × kt = 10^3 crowns (1 kt = 1,000 t; SI prefixes, BIPM 2019 brochure, from memory).
    #[test]
    fn money_is_price_times_quantity_named_once() {
        let u = Units::new("crowns per t", "kt");
        assert_eq!(u.money(), "thousand crowns");
        let s = u.money_scale([745.0, -13_408.0]);
        assert_eq!(s.label, "million crowns");
        assert_eq!(s.show(-13_408.0), "-13.4");
        assert_eq!(u.money_scale([9_999.0]).label, "thousand crowns");
        assert_eq!(Units::new("crowns per t", "t").money(), "crowns");
        assert_eq!(Units::new("crowns per kg", "Mt").money(), "billion crowns");
        assert_eq!(Units::new("per t", "kt").money(), "per t × kt");
        assert_eq!(
            Units::new("shillings per bag", "kt").money(),
            "shillings per bag × kt"
        );
        assert_eq!(
            Units::new("crowns per t", "kt").money_scale([1.0e12]).label,
            "trillion crowns"
        );
    }
}

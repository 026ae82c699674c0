//! Numeric key ranges and the short forms of numbers and names used in messages: the vocabulary
//! every file reader (the market's, each policy rule's, each expectation rule's) shares.

/// The allowed interval of one numeric key.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeyRange {
    /// Dotted key, e.g. `stock.capacity`.
    pub key: &'static str,
    /// Lower end.
    pub lo: f64,
    /// Upper end.
    pub hi: f64,
    /// The lower end itself is not allowed.
    pub open_lo: bool,
    /// The upper end itself is not allowed.
    pub open_hi: bool,
    /// A whole number.
    pub integer: bool,
    /// What the range depends on, when it is narrower in some cases (empty otherwise).
    pub note: &'static str,
}

pub const fn r(key: &'static str, lo: f64, hi: f64, open_lo: bool, open_hi: bool) -> KeyRange {
    KeyRange {
        key,
        lo,
        hi,
        open_lo,
        open_hi,
        integer: false,
        note: "",
    }
}

pub const fn int(key: &'static str, lo: f64, hi: f64) -> KeyRange {
    KeyRange {
        key,
        lo,
        hi,
        open_lo: false,
        open_hi: false,
        integer: true,
        note: "",
    }
}

pub const fn noted(mut k: KeyRange, note: &'static str) -> KeyRange {
    k.note = note;
    k
}

/// Largest price, quantity or cost per unit accepted anywhere.
pub const BIG: f64 = 1e12;
/// Largest amount of money per period accepted (a price times a quantity).
pub const MONEY: f64 = 1e24;
/// Largest seed (i64::MAX: TOML integers are signed 64-bit).
/// A number in short form for messages and tables: plain when it is short, otherwise scientific
/// with at most five significant digits (`1.2346e+300`); never longer than 12 characters.
pub fn short_num(v: f64) -> String {
    if v.is_nan() {
        return "nan".into();
    }
    if v.is_infinite() {
        return if v > 0.0 { "inf" } else { "-inf" }.into();
    }
    let plain = format!("{v}");
    if plain.len() <= 12 && (v == 0.0 || v.abs() >= 1e-4) {
        return plain;
    }
    if (1e-4..1e12).contains(&v.abs()) {
        // six significant digits, trailing zeros dropped
        let decimals = (5 - v.abs().log10().floor() as i32).max(0) as usize;
        let fixed = format!("{v:.decimals$}");
        let fixed = if fixed.contains('.') {
            fixed
                .trim_end_matches('0')
                .trim_end_matches('.')
                .to_string()
        } else {
            fixed
        };
        if fixed.len() <= 12 {
            return fixed;
        }
    }
    let sci = format!("{v:.4e}");
    let (mantissa, exponent) = sci.split_once('e').unwrap_or((&sci, "0"));
    let mantissa = if mantissa.contains('.') {
        mantissa.trim_end_matches('0').trim_end_matches('.')
    } else {
        mantissa
    };
    let exponent: i32 = exponent.parse().unwrap_or(0);
    format!(
        "{mantissa}e{}{}",
        if exponent < 0 { '-' } else { '+' },
        exponent.abs()
    )
}

impl KeyRange {
    /// The interval in words, e.g. `(0, 1e+12]`, or `from 1 to 1000` for whole numbers.
    pub fn describe(&self) -> String {
        if self.integer {
            return format!(
                "a whole number from {} to {}",
                self.lo as i64, self.hi as i64
            );
        }
        format!(
            "{}{}, {}{}",
            if self.open_lo { '(' } else { '[' },
            short_num(self.lo),
            short_num(self.hi),
            if self.open_hi { ')' } else { ']' }
        )
    }

    /// True when `v` lies in the interval.
    pub fn contains(&self, v: f64) -> bool {
        let lo = if self.open_lo {
            v > self.lo
        } else {
            v >= self.lo
        };
        let hi = if self.open_hi {
            v < self.hi
        } else {
            v <= self.hi
        };
        v.is_finite() && lo && hi
    }
}

/// A key name or string value from a file for an error message: control characters escaped (a
/// newline shows as `\n`), everything else as written.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        if ch.is_control() {
            out.extend(ch.escape_default());
        } else {
            out.push(ch);
        }
    }
    out
}

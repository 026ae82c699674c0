//! The checker rule files and the market's reader read their sections with: it knows the file
//! name, and turns a value outside a key's range into a message naming file, key, value and range.

use super::ranges::{short_num, KeyRange};
use super::{InputError, Key};

/// A small helper that knows the file name for error messages (rule files read their sections
/// through it).
pub struct Check<'a> {
    pub(crate) file: &'a str,
}

/// Reads a rule section's table into the rule's raw struct (keys and types were checked against the
/// schema already, so this only maps values).
pub fn deserialize_section<T: serde::de::DeserializeOwned>(
    c: &Check,
    table: &toml::Table,
) -> Result<T, InputError> {
    deserialize(c.file, table.clone())
}

/// Maps a checked table onto a raw struct; a type the schema let through is reported as a syntax
/// error naming the file.
pub(crate) fn deserialize<T: serde::de::DeserializeOwned>(
    file: &str,
    table: toml::Table,
) -> Result<T, InputError> {
    // Keys and types were checked against the schema already, so this only maps values.
    T::deserialize(toml::Value::Table(table)).map_err(|e| InputError::Syntax {
        file: file.into(),
        message: e.to_string().trim_end().to_string(),
    })
}

impl<'a> Check<'a> {
    /// A checker for `file`.
    pub fn new(file: &'a str) -> Check<'a> {
        Check { file }
    }

    /// The file checked.
    pub fn file(&self) -> &str {
        self.file
    }

    /// An out-of-range or inconsistent value.
    pub fn bad(&self, key: &str, value: impl std::fmt::Display, expected: &str) -> InputError {
        InputError::BadValue {
            file: self.file.into(),
            key: key.into(),
            value: value.to_string(),
            expected: expected.into(),
        }
    }

    /// A missing key.
    pub fn missing(&self, key: &str, expected: &str) -> InputError {
        InputError::Missing {
            file: self.file.into(),
            key: key.into(),
            expected: expected.into(),
        }
    }

    pub(crate) fn finite(&self, key: &str, v: f64) -> Result<f64, InputError> {
        if v.is_finite() {
            Ok(v)
        } else {
            // echo the value as TOML spells it
            let written = if v.is_nan() {
                "nan"
            } else if v > 0.0 {
                "inf"
            } else {
                "-inf"
            };
            Err(self.bad(key, written, "must be a finite number"))
        }
    }

    /// lo <= v <= hi (with open ends when `open_lo`/`open_hi`).
    pub(crate) fn range(
        &self,
        key: &str,
        v: f64,
        lo: f64,
        hi: f64,
        open_lo: bool,
        open_hi: bool,
    ) -> Result<f64, InputError> {
        let v = self.finite(key, v)?;
        let ok_lo = if open_lo { v > lo } else { v >= lo };
        let ok_hi = if open_hi { v < hi } else { v <= hi };
        if ok_lo && ok_hi {
            return Ok(v);
        }
        let l = if open_lo { "(" } else { "[" };
        let h = if open_hi { ")" } else { "]" };
        let range = match (lo.is_infinite(), hi.is_infinite()) {
            (false, true) => {
                if open_lo {
                    format!("must be > {}", short_num(lo))
                } else {
                    format!("must be ≥ {}", short_num(lo))
                }
            }
            (true, false) => {
                if open_hi {
                    format!("must be < {}", short_num(hi))
                } else {
                    format!("must be ≤ {}", short_num(hi))
                }
            }
            _ => format!("must be in {l}{}, {}{h}", short_num(lo), short_num(hi)),
        };
        Err(self.bad(key, short_num(v), &range))
    }

    /// Checks `v` against `range` (a rule's own range for one of its keys).
    pub fn in_range(&self, range: &KeyRange, v: f64) -> Result<f64, InputError> {
        self.range(
            range.key,
            v,
            range.lo,
            range.hi,
            range.open_lo,
            range.open_hi,
        )
    }

    /// A whole number checked against `range` (a rule's own range for one of its keys).
    pub fn whole_in(&self, range: &KeyRange, v: i64) -> Result<usize, InputError> {
        self.count(range.key, v, range.lo as i64, range.hi as i64)
    }

    pub(crate) fn count(&self, key: &str, v: i64, lo: i64, hi: i64) -> Result<usize, InputError> {
        if v < lo || v > hi {
            return Err(self.bad(
                key,
                short_num(v as f64),
                &format!(
                    "must be a whole number from {} to {}",
                    short_num(lo as f64),
                    short_num(hi as f64)
                ),
            ));
        }
        Ok(v as usize)
    }

    /// Checks `v` against the range a rule declares for `key` among its own `keys` (its
    /// registration); a key declared without a range is only checked to be finite.
    pub fn within_keys(&self, keys: &[Key], key: &str, v: f64) -> Result<f64, InputError> {
        match keys
            .iter()
            .find_map(|k| k.range.as_ref().filter(|r| r.key == key))
        {
            Some(range) => self.in_range(range, v),
            None => self.finite(key, v),
        }
    }
}

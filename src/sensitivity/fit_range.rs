//! `--range KEY=fit`: the tornado's ends from the standard error `fit` recorded for the key, the
//! value in the market file ± two standard errors (about a 95 % interval for the estimate under
//! the usual normal approximation; common practice, no source).
//!
//! A market file written by `furrow fit` carries, among its comments, a block headed
//! [`STANDARD_ERRORS_HEADER`] with one line `#   KEY = STANDARD_ERROR` per key it estimated
//! directly (`fit::market_file`). A file without that line for the key is refused, naming the file
//! and the key.

use super::{Range, SensitivityError};
use crate::fit::market_file::STANDARD_ERRORS_HEADER;

/// What follows `=` in `--range KEY=fit`.
pub const FROM_FIT: &str = "fit";

/// How many standard errors each end lies from the value.
pub const STANDARD_ERRORS: f64 = 2.0;

/// The standard error the comments of a `fit`-written market file record for `key`; `None` when
/// the file has no such line.
pub fn recorded_standard_error(text: &str, key: &str) -> Option<f64> {
    let mut lines = text.lines();
    lines.find(|l| l.starts_with(STANDARD_ERRORS_HEADER))?;
    lines
        .take_while(|l| l.starts_with("#   "))
        .filter_map(|l| l.trim_start_matches('#').trim().split_once(" = "))
        .find(|(k, _)| k.trim() == key)
        .and_then(|(_, v)| v.trim().parse::<f64>().ok())
        .filter(|se| se.is_finite() && *se > 0.0)
}

/// Reads one `--range`: `KEY=LOW:HIGH`, or `KEY=fit` for the value of `key` in the market file
/// (`market_file`, its text `market_text`) ± two of the standard errors its `fit` comments record.
pub fn read_range(
    text: &str,
    market_file: &str,
    market_text: &str,
) -> Result<Range, SensitivityError> {
    let Some((key, ends)) = text.split_once('=') else {
        return super::parse_range(text);
    };
    if ends.trim() != FROM_FIT {
        return super::parse_range(text);
    }
    let key = key.trim();
    let bad = |why: String| SensitivityError::Usage(format!("--range {text}: {why}"));
    let Some(se) = recorded_standard_error(market_text, key) else {
        return Err(bad(format!(
            "{market_file} records no standard error for {key} (a market file written by \
             `furrow fit` lists them in its comments under \"{}\"; write KEY=LOW:HIGH instead)",
            STANDARD_ERRORS_HEADER.trim_start_matches("# ")
        )));
    };
    let value = market_text
        .parse::<toml::Table>()
        .ok()
        .and_then(|t| {
            let (section, name) = key.split_once('.')?;
            let v = t.get(section)?.as_table()?.get(name)?.clone();
            v.as_float().or_else(|| v.as_integer().map(|i| i as f64))
        })
        .filter(|v| v.is_finite());
    let Some(value) = value else {
        return Err(bad(format!(
            "{market_file} sets no number for {key}, so there is no estimate to move"
        )));
    };
    Ok(Range {
        key: key.to_string(),
        low: value - STANDARD_ERRORS * se,
        high: value + STANDARD_ERRORS * se,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    const FILE: &str = "# Market estimated by `furrow fit`\n#\n\
        # standard errors of the keys below (classical):\n#   demand.slope = 0.25\n\
        #   supply.slope = 0.5\n#\n[demand]\nslope = -1.5\n[supply]\nslope = 2\n";

    #[test]
    fn the_ends_are_the_value_plus_and_minus_two_recorded_standard_errors() {
        let r = read_range("demand.slope=fit", "f.toml", FILE).unwrap();
        assert_eq!((r.low, r.high), (-2.0, -1.0));
        // a whole number in the file is a number too
        let r = read_range("supply.slope=fit", "f.toml", FILE).unwrap();
        assert_eq!((r.low, r.high), (1.0, 3.0));
        // the explicit form is unchanged
        let r = read_range("supply.slope=1:4", "f.toml", FILE).unwrap();
        assert_eq!((r.low, r.high), (1.0, 4.0));
    }

    #[test]
    fn a_key_without_a_recorded_standard_error_is_refused_naming_file_and_key() {
        for (text, key) in [
            (FILE, "demand.intercept"),
            ("[demand]\nslope = -1.5\n", "demand.slope"),
        ] {
            let e = read_range(&format!("{key}=fit"), "f.toml", text)
                .unwrap_err()
                .to_string();
            assert!(e.contains("f.toml") && e.contains(key), "{e}");
        }
    }
}

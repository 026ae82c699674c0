//! The one schema of the input files: every section, every key with its type, and every numeric
//! key's range. The unknown-key check and the type check (`keys::check_keys`), validation's range
//! checks (`ranges::range_of`), `--vary` routing (`sweep::apply`, by [`is_policy_section`]) and the
//! README's table of input ranges (`ranges::all`, tested against the README) all read it. Policy
//! rule sections and the `[expectations]` keys are not listed here: each rule file declares its
//! keys and registers them (`policies::SECTIONS`, `expectations::RULES`).

use super::raw::{ValueType, MARKET_SCHEMA_AFTER, MARKET_SCHEMA_BEFORE};
pub use crate::input::Key;

pub use crate::input::Schema;

/// The market file's schema (its own sections, `[expectations]` from the expectation rules).
pub fn market() -> Schema {
    let own = |part: &[(&'static str, &'static [(&'static str, ValueType)])]| {
        part.iter()
            .map(|(s, keys)| (*s, keys.to_vec()))
            .collect::<Schema>()
    };
    let mut out = own(MARKET_SCHEMA_BEFORE);
    out.push(("expectations", crate::expectations::section_keys()));
    out.extend(own(MARKET_SCHEMA_AFTER));
    out
}

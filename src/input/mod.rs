//! The vocabulary of reading input files, shared by the market's reader (`scenario`), the policy
//! rules' and the expectation rules' readers: the error type, value types, keys with their ranges,
//! TOML parsing with unknown-key checks, and the checker. It imports no other furrow module, so the
//! rule files read their sections without importing `scenario`.

pub mod check;
pub mod keys;
pub mod ranges;

pub use check::{deserialize_section, Check};

/// The text of the file at `path`; an unreadable file is an error naming it.
pub fn read_file(path: &str) -> Result<String, InputError> {
    std::fs::read_to_string(path).map_err(|e| InputError::Unreadable {
        file: path.to_string(),
        reason: e.to_string(),
    })
}
pub use ranges::KeyRange;

/// An input problem, always naming the file and, where there is one, the key and the value.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum InputError {
    /// The file could not be read.
    #[error("{file}: cannot read: {reason}")]
    Unreadable { file: String, reason: String },
    /// TOML syntax or type error, with line and column where the parser gave them.
    #[error("{file}: {message}")]
    Syntax { file: String, message: String },
    /// A key that no section allows.
    #[error("{file}: {key}: unknown key{suggestion}")]
    UnknownKey {
        file: String,
        key: String,
        suggestion: String,
    },
    /// A key whose value is out of range or inconsistent with others.
    #[error("{file}: {key} = {value}: {expected}")]
    BadValue {
        file: String,
        key: String,
        value: String,
        expected: String,
    },
    /// A required key is missing.
    #[error("{file}: {key}: missing; {expected}")]
    Missing {
        file: String,
        key: String,
        expected: String,
    },
}

impl InputError {
    /// The dotted key the error is about, when it is about one.
    pub fn key(&self) -> Option<&str> {
        match self {
            InputError::UnknownKey { key, .. }
            | InputError::BadValue { key, .. }
            | InputError::Missing { key, .. } => Some(key),
            _ => None,
        }
    }
}

/// The type a key's value must have.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ValueType {
    /// A number (integer or float).
    Number,
    /// A whole number.
    Integer,
    /// A string.
    Text,
    /// true or false.
    Bool,
    /// An array of numbers.
    Numbers,
    /// A number or an array of numbers.
    NumberOrNumbers,
}

/// One key of a rule section: name, type and (numeric keys) range.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Key {
    /// The key within its section, e.g. `price`.
    pub name: &'static str,
    /// Its type.
    pub kind: ValueType,
    /// Its range (numeric keys), with the dotted key.
    pub range: Option<KeyRange>,
}

/// Sections with their keys and types.
pub type Schema = Vec<(&'static str, Vec<(&'static str, ValueType)>)>;

/// Sections written as arrays of tables (`[[households]]`): the key check (`keys::check_keys`) reads every table of
/// the array against the section's keys and names them `section[i].key` (0-based).
pub const ARRAY_SECTIONS: &[&str] = &["households"];

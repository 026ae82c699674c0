//! TOML parsing with file-named errors, the unknown-key check with nearest-key suggestions, and dotted
//! key overrides (`--vary supply.slope=...`).

use super::ranges::escape;
use super::InputError;
use super::ValueType;

/// Parses TOML text, naming the file in the error (the parser's message carries line and column).
pub fn parse_toml(file: &str, text: &str) -> Result<toml::Table, InputError> {
    text.parse::<toml::Table>().map_err(|e| InputError::Syntax {
        file: file.to_string(),
        // the parser quotes the offending line: escape control characters in it, keep its layout
        message: e
            .to_string()
            .trim_end()
            .split('\n')
            .map(escape)
            .collect::<Vec<_>>()
            .join("\n"),
    })
}

/// Rejects sections and keys the schema does not know, suggesting the nearest valid one.
pub fn check_keys(
    file: &str,
    table: &toml::Table,
    schema: &super::Schema,
) -> Result<(), InputError> {
    for (section, value) in table {
        let Some((_, keys)) = schema.iter().find(|(s, _)| s == section) else {
            let names: Vec<&str> = schema.iter().map(|(s, _)| *s).collect();
            return Err(InputError::UnknownKey {
                file: file.into(),
                key: format!("[{}]", escape(section)),
                suggestion: suggest(section, &names, "sections"),
            });
        };
        if super::ARRAY_SECTIONS.contains(&section.as_str()) {
            // `[[section]]`: every table of the array against the section's keys
            let tables = value
                .as_array()
                .filter(|a| !a.is_empty() && a.iter().all(|t| t.is_table()));
            let Some(tables) = tables else {
                return Err(InputError::BadValue {
                    file: file.into(),
                    key: escape(section),
                    value: short_value(value),
                    expected: format!(
                        "must be one or more tables written `[[{section}]]` (one per entry)"
                    ),
                });
            };
            for (i, t) in tables.iter().enumerate() {
                if let Some(t) = t.as_table() {
                    check_section(file, &format!("{section}[{i}]"), t, keys)?;
                }
            }
            continue;
        }
        let Some(inner) = value.as_table() else {
            return Err(InputError::BadValue {
                file: file.into(),
                key: escape(section),
                value: short_value(value),
                expected: format!("must be a section `[{section}]`"),
            });
        };
        check_section(file, section, inner, keys)?;
    }
    Ok(())
}

/// Checks one section's (or one array entry's, named `section[i]`) keys and their types.
fn check_section(
    file: &str,
    section: &str,
    inner: &toml::Table,
    keys: &[(&str, ValueType)],
) -> Result<(), InputError> {
    for (key, v) in inner {
        let Some((_, kind)) = keys.iter().find(|(k, _)| k == key) else {
            let names: Vec<&str> = keys.iter().map(|(k, _)| *k).collect();
            return Err(InputError::UnknownKey {
                file: file.into(),
                key: format!("{section}.{}", escape(key)),
                suggestion: suggest(key, &names, "keys"),
            });
        };
        let fits = match kind {
            ValueType::Number => v.is_float() || v.is_integer(),
            ValueType::Integer => v.is_integer(),
            ValueType::Text => v.is_str(),
            ValueType::Bool => v.is_bool(),
            ValueType::Numbers => v
                .as_array()
                .is_some_and(|a| a.iter().all(|x| x.is_float() || x.is_integer())),
            ValueType::NumberOrNumbers => {
                v.is_float()
                    || v.is_integer()
                    || v.as_array()
                        .is_some_and(|a| a.iter().all(|x| x.is_float() || x.is_integer()))
            }
        };
        if !fits {
            let want = match kind {
                ValueType::Number => "must be a number",
                ValueType::Integer => "must be a whole number",
                ValueType::Text => "must be a quoted string",
                ValueType::Bool => "must be true or false",
                ValueType::Numbers => "must be an array of numbers, e.g. [90.0, 95.0]",
                ValueType::NumberOrNumbers => "must be a number or an array of numbers, e.g. 230.0",
            };
            return Err(InputError::BadValue {
                file: file.into(),
                key: format!("{section}.{key}"),
                value: short_value(v),
                expected: want.into(),
            });
        }
    }
    Ok(())
}

fn suggest(word: &str, candidates: &[&str], kind: &str) -> String {
    let best = candidates
        .iter()
        .map(|c| (strsim::damerau_levenshtein(word, c), *c))
        .min();
    match best {
        Some((d, c)) if d <= 3.max(word.len() / 3) => {
            format!(
                "; did you mean `{c}`? (valid {kind}: {})",
                candidates.join(", ")
            )
        }
        _ => format!("; valid {kind}: {}", candidates.join(", ")),
    }
}

/// A TOML value shortened for an error message (numbers in short scientific form, control
/// characters escaped).
pub fn short_value(v: &toml::Value) -> String {
    if let Some(x) = v.as_float() {
        return super::ranges::short_num(x);
    }
    if let Some(i) = v.as_integer() {
        return super::ranges::short_num(i as f64);
    }
    let s = escape(&v.to_string());
    if s.len() > 40 {
        format!(
            "{}…",
            &s[..s.char_indices().nth(37).map(|c| c.0).unwrap_or(s.len())]
        )
    } else {
        s
    }
}

/// Sets the dotted key `section.key` in `table` to `value` (creating the section when missing).
pub fn apply_override(
    table: &mut toml::Table,
    dotted: &str,
    value: toml::Value,
) -> Result<(), String> {
    let Some((section, key)) = dotted.split_once('.') else {
        return Err(format!(
            "`{dotted}`: a key is written section.key, e.g. supply.slope"
        ));
    };
    if key.contains('.') || section.is_empty() || key.is_empty() {
        return Err(format!(
            "`{dotted}`: a key is written section.key, e.g. supply.slope"
        ));
    }
    let entry = table
        .entry(section.to_string())
        .or_insert_with(|| toml::Value::Table(toml::Table::new()));
    match entry.as_table_mut() {
        Some(t) => {
            t.insert(key.to_string(), value);
            Ok(())
        }
        None => Err(format!("`{section}` is not a section")),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_key_gets_a_suggestion() {
        let t = parse_toml("m.toml", "[supply]\nslpoe = 1.0\n").unwrap();
        let err = check_keys("m.toml", &t, &crate::scenario::schema::market()).unwrap_err();
        let msg = err.to_string();
        assert!(msg.contains("supply.slpoe"), "{msg}");
        assert!(msg.contains("did you mean `slope`"), "{msg}");
    }

    #[test]
    fn syntax_error_names_line() {
        let err = parse_toml("m.toml", "[supply]\nslope = = 1\n").unwrap_err();
        let msg = err.to_string();
        assert!(msg.starts_with("m.toml:"), "{msg}");
        assert!(msg.contains("line 2"), "{msg}");
    }

    #[test]
    fn override_sets_nested_key() {
        let mut t = parse_toml("m.toml", "[supply]\nslope = 1.0\n").unwrap();
        apply_override(&mut t, "supply.slope", toml::Value::Float(2.5)).unwrap();
        apply_override(&mut t, "expectations.weight", toml::Value::Float(0.5)).unwrap();
        assert_eq!(t["supply"]["slope"].as_float(), Some(2.5));
        assert_eq!(t["expectations"]["weight"].as_float(), Some(0.5));
        assert!(apply_override(&mut t, "slope", toml::Value::Float(1.0)).is_err());
    }
}

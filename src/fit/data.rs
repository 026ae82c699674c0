//! Loading a season history from CSV: the columns asked for, checked row by row.
//!
//! The file has one header row and one row per season, oldest first. Lines starting with `#` are
//! comments. Cells are trimmed. A cell that is empty or reads `NA`, `N/A`, `NaN`, `null` or `.` is a
//! missing value, which is an error naming the line, the season and the column (the estimator has no
//! way to skip a season without breaking the lag between consecutive seasons). Seasons must be
//! consecutive integers (a year, say), because supply is estimated on the previous season's price.
//!
//! The delimiter is detected from the header row: a comma, unless the header holds more semicolons or
//! tabs than commas (files saved by spreadsheets set to a decimal comma use `;`). Two columns with the
//! same name are an error naming both. Column names are echoed with control characters escaped
//! ([`printable`]), so a name holding a newline can never break a message or a `#` comment.

use super::FitError;

/// The requested columns of a history, all finite, one entry per season.
#[derive(Debug, Clone)]
pub struct History {
    /// Season labels (consecutive integers).
    pub seasons: Vec<i64>,
    /// Line number in the file of each season's row (the header is line 1 in a file without comments).
    pub lines: Vec<u64>,
    /// The requested value columns, in the order asked for.
    pub columns: Vec<Vec<f64>>,
    /// The delimiter used.
    pub delimiter: u8,
}

/// A column name (or any text) with control characters escaped (`\n`, `\t`, `\u{1b}`), for
/// messages and comments.
pub fn printable(name: &str) -> String {
    if !name.chars().any(char::is_control) {
        return name.to_string();
    }
    name.chars()
        .map(|c| {
            if c.is_control() {
                c.escape_default().to_string()
            } else {
                c.to_string()
            }
        })
        .collect()
}

/// The delimiter of the first non-comment line: `;` or tab when it holds more of them than commas.
pub fn detect_delimiter(text: &str) -> u8 {
    let header = text
        .lines()
        .find(|l| !l.trim_start().starts_with('#') && !l.trim().is_empty())
        .unwrap_or("");
    let count = |c: char| header.matches(c).count();
    let (commas, semis, tabs) = (count(','), count(';'), count('\t'));
    if semis > commas && semis >= tabs {
        b';'
    } else if tabs > commas && tabs > semis {
        b'\t'
    } else {
        b','
    }
}

/// The delimiter in words.
pub fn delimiter_name(d: u8) -> &'static str {
    match d {
        b';' => "semicolon",
        b'\t' => "tab",
        _ => "comma",
    }
}

/// One column to read: the option that named it (for messages) and the header name.
#[derive(Debug, Clone)]
pub struct ColumnRequest<'a> {
    /// The command-line option or role that asked for the column, e.g. `--price`.
    pub role: &'a str,
    /// The header name.
    pub name: &'a str,
}

fn is_missing(cell: &str) -> bool {
    let c = cell.trim();
    c.is_empty()
        || c == "."
        || ["na", "n/a", "nan", "null"]
            .iter()
            .any(|m| c.eq_ignore_ascii_case(m))
}

fn column_index(
    file: &str,
    headers: &[String],
    req_role: &str,
    name: &str,
) -> Result<usize, FitError> {
    if let Some(i) = headers.iter().position(|h| h == name) {
        return Ok(i);
    }
    let suggestion = headers
        .iter()
        .map(|h| (strsim::jaro_winkler(h, name), h))
        .filter(|(s, _)| *s > 0.8)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, h)| format!("; did you mean `{}`?", printable(h)))
        .or_else(|| {
            headers
                .iter()
                .find(|h| h.eq_ignore_ascii_case(name))
                .map(|h| format!("; did you mean `{}`?", printable(h)))
        })
        .unwrap_or_default();
    Err(FitError::UnknownColumn {
        file: file.to_string(),
        role: req_role.to_string(),
        column: printable(name),
        available: headers
            .iter()
            .map(|h| printable(h))
            .collect::<Vec<_>>()
            .join(", "),
        suggestion,
    })
}

/// Reads the season column and the requested value columns from CSV text.
pub fn load(
    file: &str,
    text: &str,
    season: &ColumnRequest<'_>,
    values: &[ColumnRequest<'_>],
) -> Result<History, FitError> {
    let csv_err = |e: csv::Error| FitError::Csv {
        file: file.to_string(),
        line: e.position().map(|p| p.line()),
        message: match e.kind() {
            csv::ErrorKind::UnequalLengths {
                expected_len, len, ..
            } => format!("row has {len} fields where the header has {expected_len}"),
            _ => e.to_string(),
        },
    };
    let delimiter = detect_delimiter(text);
    let mut rdr = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .flexible(false)
        .from_reader(text.as_bytes());
    let headers: Vec<String> = rdr
        .headers()
        .map_err(csv_err)?
        .iter()
        .map(str::to_string)
        .collect();
    if headers.iter().all(|h| h.is_empty()) {
        return Err(FitError::Csv {
            file: file.to_string(),
            line: Some(1),
            message: "no header row (expected column names such as season,price,quantity)".into(),
        });
    }
    for (j, h) in headers.iter().enumerate() {
        if h.is_empty() {
            continue;
        }
        if let Some(i) = headers[..j].iter().position(|g| g == h) {
            return Err(FitError::Csv {
                file: file.to_string(),
                line: Some(1),
                message: format!(
                    "columns {} and {} are both named `{}`; rename one (furrow cannot tell which is meant)",
                    i + 1,
                    j + 1,
                    printable(h)
                ),
            });
        }
    }
    let season_idx = column_index(file, &headers, season.role, season.name)?;
    let idx: Vec<usize> = values
        .iter()
        .map(|r| column_index(file, &headers, r.role, r.name))
        .collect::<Result<_, _>>()?;

    let mut h = History {
        seasons: Vec::new(),
        lines: Vec::new(),
        columns: vec![Vec::new(); values.len()],
        delimiter,
    };
    for rec in rdr.records() {
        let rec = rec.map_err(csv_err)?;
        let line = rec.position().map(|p| p.line()).unwrap_or(0);
        let cell = |i: usize| rec.get(i).unwrap_or("");
        let s = cell(season_idx);
        if is_missing(s) {
            return Err(FitError::MissingValue {
                file: file.to_string(),
                line,
                season: "?".into(),
                column: printable(season.name),
            });
        }
        let season_value: i64 = s.parse().map_err(|_| FitError::Season {
            file: file.to_string(),
            line,
            message: format!(
                "season `{}` in column `{}` is not an integer (seasons must be consecutive integers such as years)",
                printable(s),
                printable(season.name)
            ),
        })?;
        if let Some(&prev) = h.seasons.last() {
            if season_value != prev + 1 {
                return Err(FitError::Season {
                    file: file.to_string(),
                    line,
                    message: format!(
                        "season {season_value} follows season {prev}; seasons must be consecutive integers, oldest first, without gaps (supply is estimated on the previous season's price)"
                    ),
                });
            }
        }
        for (k, (&i, req)) in idx.iter().zip(values).enumerate() {
            let c = cell(i);
            if is_missing(c) {
                return Err(FitError::MissingValue {
                    file: file.to_string(),
                    line,
                    season: season_value.to_string(),
                    column: printable(req.name),
                });
            }
            let v: f64 = match c.parse::<f64>() {
                Ok(v) if v.is_finite() => v,
                _ => {
                    return Err(FitError::NotANumber {
                        file: file.to_string(),
                        line,
                        season: season_value.to_string(),
                        column: printable(req.name),
                        value: format!(
                            "{}{}",
                            printable(c),
                            if delimiter != b',' && c.contains(',') {
                                " (a decimal comma? write decimals with a point)"
                            } else {
                                ""
                            }
                        ),
                    })
                }
            };
            h.columns[k].push(v);
        }
        h.seasons.push(season_value);
        h.lines.push(line);
    }
    Ok(h)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn req<'a>(role: &'a str, name: &'a str) -> ColumnRequest<'a> {
        ColumnRequest { role, name }
    }

    #[test]
    fn reads_columns_and_skips_comments() {
        let text = "# a note\nseason, price ,quantity,extra\n2001, 10.5, 3,x\n2002,11,4,y\n";
        let h = load(
            "d.csv",
            text,
            &req("--season", "season"),
            &[req("--price", "price"), req("--quantity", "quantity")],
        )
        .unwrap();
        assert_eq!(h.seasons, vec![2001, 2002]);
        assert_eq!(h.columns[0], vec![10.5, 11.0]);
        assert_eq!(h.columns[1], vec![3.0, 4.0]);
        assert_eq!(h.lines, vec![3, 4]);
    }

    #[test]
    fn missing_value_names_line_season_and_column() {
        let text = "season,price,quantity\n2001,10,3\n2002,NA,4\n";
        let e = load(
            "d.csv",
            text,
            &req("--season", "season"),
            &[req("--price", "price"), req("--quantity", "quantity")],
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("d.csv"), "{e}");
        assert!(e.contains("line 3"), "{e}");
        assert!(e.contains("season 2002"), "{e}");
        assert!(e.contains("`price`"), "{e}");
    }

    #[test]
    fn gap_in_seasons_is_an_error() {
        let text = "season,price\n2001,10\n2003,11\n";
        let e = load(
            "d.csv",
            text,
            &req("--season", "season"),
            &[req("--price", "price")],
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("line 3") && e.contains("2003 follows season 2001"),
            "{e}"
        );
    }

    #[test]
    fn ragged_row_and_text_cell() {
        let e = load(
            "d.csv",
            "season,price\n2001,10,9\n",
            &req("--season", "season"),
            &[req("--price", "price")],
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("line 2") && e.contains("3 fields where the header has 2"),
            "{e}"
        );
        let e = load(
            "d.csv",
            "season,price\n2001,ten\n",
            &req("--season", "season"),
            &[req("--price", "price")],
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("`ten`") && e.contains("`price`"), "{e}");
    }

    #[test]
    fn unknown_column_lists_available_and_suggests() {
        let e = load(
            "d.csv",
            "season,price,quantity\n",
            &req("--season", "season"),
            &[req("--price", "prce")],
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("season, price, quantity"), "{e}");
        assert!(e.contains("did you mean `price`"), "{e}");
    }
}

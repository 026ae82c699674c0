//! Output formats: one enum, one small table type, and whole-or-nothing file writing.
//!
//! Every verb builds either a [`TextTable`] (rows of already formatted cells) or a serialisable result
//! struct, and hands it to [`TextTable::render`] or `serde_json`. Numbers are formatted by [`fmt_num`],
//! which never prints `NaN` or `inf` (a non-finite value is written as an empty cell / JSON `null`).

use std::io::Write;
use std::path::Path;

use serde::Serialize;
use tabled::builder::Builder;
use tabled::settings::Style;

/// The output formats every verb offers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Format {
    /// A boxed plain-text table for the terminal.
    Table,
    /// A GitHub-flavoured Markdown table (pastes into briefings).
    Markdown,
    /// Comma-separated values with one header row.
    Csv,
    /// JSON (the structure is documented per verb).
    Json,
}

impl std::str::FromStr for Format {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "table" => Ok(Format::Table),
            "markdown" | "md" => Ok(Format::Markdown),
            "csv" => Ok(Format::Csv),
            "json" => Ok(Format::Json),
            other => Err(format!(
                "unknown format `{other}`: allowed are table, markdown, csv, json"
            )),
        }
    }
}

/// A table of formatted cells with one header row.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TextTable {
    /// Column names (CSV headers).
    pub headers: Vec<String>,
    /// Rows of cells, each as long as `headers`.
    pub rows: Vec<Vec<String>>,
}

impl TextTable {
    /// An empty table with these column names.
    pub fn new<S: AsRef<str>>(headers: &[S]) -> Self {
        TextTable {
            headers: headers.iter().map(|h| h.as_ref().to_string()).collect(),
            rows: Vec::new(),
        }
    }

    /// Appends one row.
    pub fn push(&mut self, row: Vec<String>) {
        self.rows.push(row);
    }

    /// Renders as table, Markdown or CSV. JSON is not a table format: callers serialise their result
    /// struct instead; asked for JSON, this renders the rows as an array of objects keyed by header.
    pub fn render(&self, format: Format) -> String {
        match format {
            Format::Table => {
                let mut b = Builder::default();
                b.push_record(self.headers.clone());
                for r in &self.rows {
                    b.push_record(r.clone());
                }
                let mut t = b.build();
                t.with(Style::rounded());
                format!("{t}\n")
            }
            Format::Markdown => {
                let mut s = String::new();
                s.push_str(&markdown_row(&self.headers));
                s.push_str(&markdown_row(
                    &self
                        .headers
                        .iter()
                        .map(|_| "---".to_string())
                        .collect::<Vec<_>>(),
                ));
                for r in &self.rows {
                    s.push_str(&markdown_row(r));
                }
                s
            }
            Format::Csv => {
                let mut s = String::new();
                s.push_str(&csv_row(&self.headers));
                for r in &self.rows {
                    s.push_str(&csv_row(r));
                }
                s
            }
            Format::Json => {
                let objs: Vec<serde_json::Map<String, serde_json::Value>> = self
                    .rows
                    .iter()
                    .map(|r| {
                        self.headers
                            .iter()
                            .zip(r)
                            .map(|(h, c)| (h.clone(), cell_to_json(c)))
                            .collect()
                    })
                    .collect();
                let mut s = serde_json::to_string_pretty(&objs).unwrap_or_default();
                s.push('\n');
                s
            }
        }
    }
}

fn cell_to_json(c: &str) -> serde_json::Value {
    if c.is_empty() {
        return serde_json::Value::Null;
    }
    match c.parse::<f64>() {
        Ok(v) if v.is_finite() => serde_json::json!(v),
        _ => serde_json::Value::String(c.to_string()),
    }
}

fn markdown_row(cells: &[String]) -> String {
    let inner: Vec<String> = cells.iter().map(|c| c.replace('|', "\\|")).collect();
    format!("| {} |\n", inner.join(" | "))
}

fn csv_row(cells: &[String]) -> String {
    let quoted: Vec<String> = cells
        .iter()
        .map(|c| {
            if c.contains([',', '"', '\n']) {
                format!("\"{}\"", c.replace('"', "\"\""))
            } else {
                c.clone()
            }
        })
        .collect();
    format!("{}\n", quoted.join(","))
}

/// Formats a number for tables: up to `digits` decimals, trailing zeros kept for alignment;
/// non-finite values become an empty cell (they must never reach a table as `NaN`/`inf`).
pub fn fmt_num(x: f64, digits: usize) -> String {
    if !x.is_finite() {
        return String::new();
    }
    let s = format!("{x:.digits$}");
    // avoid "-0.000"
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// Formats a number with full round-trip precision (CSV and JSON-like exports).
pub fn fmt_full(x: f64) -> String {
    if !x.is_finite() {
        return String::new();
    }
    format!("{x}")
}

/// Writes `contents` to `path` whole or not at all: the text goes to a temporary file beside the target,
/// which is then renamed over it. `-` means standard output.
pub fn write_whole(path: &Path, contents: &[u8]) -> std::io::Result<()> {
    if path.as_os_str() == "-" {
        let mut out = std::io::stdout().lock();
        return match out.write_all(contents).and_then(|_| out.flush()) {
            Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
            other => other,
        };
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "out".into());
    let tmp = dir.join(format!(".{name}.furrow-tmp-{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(contents)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_quotes_commas_and_quotes() {
        let mut t = TextTable::new(&["a", "b"]);
        t.push(vec!["x,y".into(), "say \"hi\"".into()]);
        assert_eq!(t.render(Format::Csv), "a,b\n\"x,y\",\"say \"\"hi\"\"\"\n");
    }

    #[test]
    fn non_finite_numbers_become_empty_cells() {
        assert_eq!(fmt_num(f64::NAN, 2), "");
        assert_eq!(fmt_num(f64::INFINITY, 2), "");
        assert_eq!(fmt_num(-0.0001, 2), "0.00");
        assert_eq!(fmt_num(1.5, 2), "1.50");
    }

    #[test]
    fn markdown_has_separator_row() {
        let mut t = TextTable::new(&["k", "v"]);
        t.push(vec!["a".into(), "1".into()]);
        assert_eq!(
            t.render(Format::Markdown),
            "| k | v |\n| --- | --- |\n| a | 1 |\n"
        );
    }

    #[test]
    fn write_whole_replaces_file() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("o.csv");
        write_whole(&p, b"first").unwrap();
        write_whole(&p, b"second").unwrap();
        assert_eq!(std::fs::read_to_string(&p).unwrap(), "second");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }
}

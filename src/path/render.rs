//! One path as a table (terminal, Markdown, CSV, JSON), whole or streamed row by row: the `run`
//! verb's output (INTERFACE.md's columns first, then the fiscal parts).

use crate::engine::PeriodRecord;
use std::sync::LazyLock;

use crate::output::{csv_row, fmt_full, fmt_num, markdown_row, Format, TextTable};

/// Columns of the one-path table, in order (INTERFACE.md's first, then the fiscal parts).
pub const RUN_COLUMNS: &[&str] = &[
    "period",
    "expected_price",
    "harvest",
    "price",
    "producer_price",
    "consumption",
    "purchases",
    "releases",
    "stock",
    "fiscal_cost",
    "consumer_surplus",
    "producer_surplus",
    "planted",
    "purchase_cost",
    "sales_revenue",
    "storage_cost",
    "financing_cost",
    "handling_cost",
    "deficiency_payments",
    "acted",
];

/// The trade columns, shown right after `price` on a market that trades.
const TRADE_COLUMNS: &[&str] = &["world_price", "imports", "exports"];

/// The border's fiscal line, the quota rents and the public imports (state trading) with their
/// cost, the last columns before `acted` of the full table of a market that trades.
const BORDER_BOOK_COLUMNS: &[&str] = &[
    "border_revenue",
    "quota_rent",
    "public_imports",
    "public_import_cost",
];

/// `base` for a market that trades: [`TRADE_COLUMNS`] after `price`, and with `books` the
/// [`BORDER_BOOK_COLUMNS`] before `acted`.
fn with_trade(base: &[&'static str], books: bool) -> Vec<&'static str> {
    let mut out = Vec::with_capacity(base.len() + 7);
    for &c in base {
        if c == "acted" && books {
            out.extend_from_slice(BORDER_BOOK_COLUMNS);
        }
        out.push(c);
        if c == "price" {
            out.extend_from_slice(TRADE_COLUMNS);
        }
    }
    out
}

/// Columns of the one-path table of a market that trades: [`RUN_COLUMNS`] with `world_price`,
/// `imports`, `exports` after `price` and the border's fiscal line and quota rents before `acted`.
pub static RUN_COLUMNS_TRADE: LazyLock<Vec<&'static str>> =
    LazyLock::new(|| with_trade(RUN_COLUMNS, true));

/// Columns the terminal table shows of a market that trades (the trade columns only).
static TABLE_COLUMNS_TRADE: LazyLock<Vec<&'static str>> =
    LazyLock::new(|| with_trade(TABLE_COLUMNS, false));

/// Columns the terminal table shows (the full set goes to CSV, Markdown and JSON).
const TABLE_COLUMNS: &[&str] = &[
    "period",
    "expected_price",
    "harvest",
    "price",
    "producer_price",
    "purchases",
    "releases",
    "stock",
    "fiscal_cost",
    "acted",
];

fn cell(r: &PeriodRecord, col: &str, full: bool) -> String {
    let f = |x: f64| if full { fmt_full(x) } else { fmt_num(x, 3) };
    match col {
        "period" => r.period.to_string(),
        "expected_price" => f(r.expected_price),
        "harvest" => f(r.harvest),
        "price" => f(r.price),
        "producer_price" => f(r.producer_price),
        "consumption" => f(r.consumption),
        "purchases" => f(r.purchases),
        "releases" => f(r.releases),
        "stock" => f(r.stock),
        "fiscal_cost" => f(r.fiscal_cost),
        "consumer_surplus" => f(r.consumer_surplus),
        "producer_surplus" => f(r.producer_surplus),
        "planted" => f(r.planted),
        "purchase_cost" => f(r.purchase_cost),
        "sales_revenue" => f(r.sales_revenue),
        "storage_cost" => f(r.storage_cost),
        "financing_cost" => f(r.financing_cost),
        "handling_cost" => f(r.handling_cost),
        "deficiency_payments" => f(r.deficiency_payments),
        "world_price" => r.trade.map_or(String::new(), |t| f(t.world_price)),
        "imports" => f(r.imports()),
        "exports" => f(r.exports()),
        "border_revenue" => f(r.border_revenue()),
        "quota_rent" => f(r.quota_rent()),
        "public_imports" => f(r.public_imports()),
        "public_import_cost" => f(r.public_import_cost()),
        "acted" => r.acted(),
        _ => String::new(),
    }
}

/// One record as a JSON object: every column, `acted` as text.
fn json_row(r: &PeriodRecord) -> serde_json::Value {
    let mut v = serde_json::to_value(r).unwrap_or_default();
    if let Some(o) = v.as_object_mut() {
        o.insert("acted".into(), serde_json::Value::String(r.acted()));
    }
    v
}

/// Renders one whole path in the requested format (no caution; the caller adds it to the
/// human-readable formats).
pub fn render_path(records: &[PeriodRecord], format: Format) -> String {
    match format {
        Format::Json => {
            let rows: Vec<serde_json::Value> = records.iter().map(json_row).collect();
            serde_json::to_string_pretty(&rows).unwrap_or_default() + "\n"
        }
        f => {
            let trading = records.first().is_some_and(|r| r.trade.is_some());
            let cols = match (f == Format::Table, trading) {
                (true, false) => TABLE_COLUMNS,
                (true, true) => TABLE_COLUMNS_TRADE.as_slice(),
                (false, false) => RUN_COLUMNS,
                (false, true) => RUN_COLUMNS_TRADE.as_slice(),
            };
            let full = f == Format::Csv;
            let mut t = TextTable::new(cols);
            for r in records {
                t.push(cols.iter().map(|c| cell(r, c, full)).collect());
            }
            t.render(f)
        }
    }
}

/// A path streamed in CSV, Markdown or JSON: the header, one row at a time, the footer — the same
/// bytes as [`render_path`] gives for the whole path plus the caution below a Markdown table.
#[derive(Debug, Clone)]
pub struct PathStream {
    format: Format,
    first: bool,
    columns: &'static [&'static str],
}

impl PathStream {
    /// A stream in `format` (CSV for anything but Markdown and JSON).
    pub fn new(format: Format) -> PathStream {
        PathStream {
            format,
            first: true,
            columns: RUN_COLUMNS,
        }
    }

    /// This stream for a market that trades (`trading`: the trade columns, [`RUN_COLUMNS_TRADE`])
    /// or a closed one ([`RUN_COLUMNS`]).
    pub fn trading(mut self, trading: bool) -> PathStream {
        self.columns = if trading {
            RUN_COLUMNS_TRADE.as_slice()
        } else {
            RUN_COLUMNS
        };
        self
    }

    /// What comes before the first row.
    pub fn header(&self) -> String {
        let cols: Vec<String> = self.columns.iter().map(|c| c.to_string()).collect();
        match self.format {
            Format::Json => "[".into(),
            Format::Markdown => {
                let rule: Vec<String> = cols.iter().map(|_| "---".to_string()).collect();
                markdown_row(&cols) + &markdown_row(&rule)
            }
            _ => csv_row(&cols),
        }
    }

    /// One row.
    pub fn row(&mut self, r: &PeriodRecord) -> String {
        let text = match self.format {
            Format::Json => {
                // the same text as serde_json's pretty printer gives for the whole array
                let item = serde_json::to_string_pretty(&json_row(r)).unwrap_or_default();
                let lead = if self.first { "\n  " } else { ",\n  " };
                format!("{lead}{}", item.replace('\n', "\n  "))
            }
            f => {
                let full = f != Format::Markdown;
                let cells: Vec<String> = self.columns.iter().map(|c| cell(r, c, full)).collect();
                if full {
                    csv_row(&cells)
                } else {
                    markdown_row(&cells)
                }
            }
        };
        self.first = false;
        text
    }

    /// What comes after the last row.
    pub fn footer(&self) -> String {
        match self.format {
            Format::Json if self.first => "]\n".into(),
            Format::Json => "\n]\n".into(),
            Format::Markdown => format!("\nCaution: {}\n", crate::CAUTION),
            _ => String::new(),
        }
    }
}

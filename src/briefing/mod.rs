//! The briefing: what a minister's office reads, built from a comparison, and its HTML page.
//!
//! - [`build`] makes the whole briefing from a market, its policies and a [`crate::compare::CompareResult`]: the
//!   first page ([`headline`]: the answer, one row per policy with ranges, caveats), then the
//!   annexes (settings with their source file, policy designs, full tables, figures, stability,
//!   provenance). It simulates one path per policy itself, thinned as it goes ([`path`]), so its
//!   size does not grow with `periods`.
//! - [`Briefing`] is the document: a summary, the caution, sections of paragraphs, tables and
//!   figures, and provenance; [`Briefing::to_html`] writes one self-contained page (inline CSS and
//!   SVG, no scripts, no external links). All text is HTML-escaped there; callers pass plain text.
//!   Tables wider than a printed page are split into blocks of columns.
//! - [`figures`] decides which plots each result gets (also for the verbs' `--plots`).
//!
//! Numbers go through [`crate::units`].

pub mod assumptions;
mod build;
pub mod figures;
pub mod frontier;
pub mod headline;
mod households;
mod html;
pub mod path;
pub mod tables;

pub use build::{
    build, build_with_households, comparison_figures, stability_of, Built, Request, CAUTION,
};
pub use figures::Figure;
pub use html::{escape, inline_svg, is_numeric};

use crate::output::TextTable;

/// Which run settings came from the command line rather than the market file.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Overrides {
    /// `--seed` was given.
    pub seed: bool,
    /// `--replications` was given.
    pub replications: bool,
    /// `--periods` was given.
    pub periods: bool,
}

/// Why a briefing could not be built.
#[derive(Debug, thiserror::Error)]
pub enum BriefingError {
    /// An input file could not be read (for its settings or its hash).
    #[error("cannot read {path}: {source}")]
    Read {
        /// The file.
        path: String,
        /// The underlying error.
        source: std::io::Error,
    },
    /// An input file is not valid TOML.
    #[error(transparent)]
    Input(#[from] crate::scenario::InputError),
    /// A policy's single path failed.
    #[error(transparent)]
    Path(#[from] path::PathError),
}

/// One block of a section.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A paragraph of plain text.
    Paragraph(String),
    /// A smaller explanatory note.
    Note(String),
    /// A table with a caption; the first column is the row label.
    Table {
        /// Caption above the table.
        caption: String,
        /// The cells.
        table: TextTable,
    },
    /// A figure: an SVG document (inlined) and its caption.
    Figure {
        /// Caption under the figure.
        caption: String,
        /// The SVG text, e.g. from `Plot::svg_string`.
        svg: String,
    },
}

/// A titled section.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Section {
    /// Heading.
    pub heading: String,
    /// Blocks in order.
    pub blocks: Vec<Block>,
}

impl Section {
    /// An empty section with this heading.
    pub fn new(heading: impl Into<String>) -> Section {
        Section {
            heading: heading.into(),
            blocks: Vec::new(),
        }
    }

    /// Adds a paragraph.
    pub fn paragraph(&mut self, text: impl Into<String>) -> &mut Self {
        self.blocks.push(Block::Paragraph(text.into()));
        self
    }

    /// Adds a note.
    pub fn note(&mut self, text: impl Into<String>) -> &mut Self {
        self.blocks.push(Block::Note(text.into()));
        self
    }

    /// Adds a table.
    pub fn table(&mut self, caption: impl Into<String>, table: TextTable) -> &mut Self {
        self.blocks.push(Block::Table {
            caption: caption.into(),
            table,
        });
        self
    }

    /// Adds a figure.
    pub fn figure(&mut self, caption: impl Into<String>, svg: String) -> &mut Self {
        self.blocks.push(Block::Figure {
            caption: caption.into(),
            svg,
        });
        self
    }
}

/// A whole briefing.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Briefing {
    /// Page title.
    pub title: String,
    /// One line under the title.
    pub subtitle: String,
    /// Key findings, one sentence each, shown first.
    pub summary: Vec<String>,
    /// The first page's table (one row per policy), shown under the summary.
    pub key_table: Option<(String, TextTable)>,
    /// Caveats shown on the first page, after the table.
    pub caveats: Vec<String>,
    /// The caution, shown right after the summary.
    pub caution: String,
    /// The body.
    pub sections: Vec<Section>,
    /// Provenance rows (what, value): version, seed, input hashes.
    pub provenance: Vec<(String, String)>,
}

/// Anchor id of a heading.
fn anchor(i: usize) -> String {
    format!("s{}", i + 1)
}

/// Width budget of one printed table, in characters of the table font (about 180 mm of A4
/// portrait at 11 px, and the 1 280 px screen column at 14 px; common practice, no source).
pub const TABLE_BUDGET: usize = 96;

/// Characters a column needs at least: numbers never wrap, words wrap at spaces (a column of
/// text is given up to 16 characters before it wraps).
fn column_width(t: &TextTable, j: usize) -> usize {
    let longest_word = |c: &str| {
        c.split_whitespace()
            .map(|w| w.chars().count())
            .max()
            .unwrap_or(0)
    };
    let cell = |c: &str| {
        if is_numeric(c) {
            c.chars().count()
        } else {
            c.lines()
                .map(|l| l.chars().count().min(16).max(longest_word(l)))
                .max()
                .unwrap_or(0)
        }
    };
    let head = t
        .headers
        .get(j)
        .map_or(0, |h| h.chars().count().min(12).max(longest_word(h)));
    t.rows
        .iter()
        .filter_map(|r| r.get(j))
        .map(|c| cell(c))
        .max()
        .unwrap_or(0)
        .max(head)
        + 3
}

/// The table's columns in blocks that fit [`TABLE_BUDGET`]: the label column (and a "unit"
/// column) repeated in each block, the other columns packed in order.
pub fn column_blocks(t: &TextTable) -> Vec<Vec<usize>> {
    let n = t.headers.len();
    let fixed: Vec<usize> = if n > 2 && t.headers[1].eq_ignore_ascii_case("unit") {
        vec![0, 1]
    } else {
        vec![0]
    };
    let fixed_w: usize = fixed.iter().map(|&j| column_width(t, j).min(30)).sum();
    let mut blocks: Vec<Vec<usize>> = Vec::new();
    let mut cur: Vec<usize> = Vec::new();
    let mut used = fixed_w;
    for j in fixed.len()..n {
        let w = column_width(t, j);
        if !cur.is_empty() && used + w > TABLE_BUDGET {
            blocks.push(std::mem::take(&mut cur));
            used = fixed_w;
        }
        cur.push(j);
        used += w;
    }
    if !cur.is_empty() || blocks.is_empty() {
        blocks.push(cur);
    }
    blocks
        .into_iter()
        .map(|b| fixed.iter().copied().chain(b).collect())
        .collect()
}

fn cell_html(c: &str) -> String {
    c.split('\n').map(escape).collect::<Vec<_>>().join("<br>")
}

fn render_table(out: &mut String, caption: &str, t: &TextTable, split: bool) {
    let blocks = if split {
        column_blocks(t)
    } else {
        vec![(0..t.headers.len()).collect()]
    };
    // A column is right-aligned when every non-empty cell in it is a number.
    let numeric: Vec<bool> = (0..t.headers.len())
        .map(|j| {
            let cells: Vec<&String> = t
                .rows
                .iter()
                .filter_map(|r| r.get(j))
                .filter(|c| !c.trim().is_empty())
                .collect();
            !cells.is_empty() && cells.iter().all(|c| is_numeric(c))
        })
        .collect();
    out.push_str("<div class=\"tablegroup\">\n");
    let parts = blocks.len();
    for (k, cols) in blocks.iter().enumerate() {
        out.push_str("<div class=\"tablewrap\"><table>\n");
        if !caption.is_empty() {
            let part = if parts > 1 {
                format!(" (part {} of {parts})", k + 1)
            } else {
                String::new()
            };
            out.push_str(&format!("<caption>{}{part}</caption>\n", escape(caption)));
        }
        out.push_str("<thead><tr>");
        for &j in cols {
            out.push_str(&format!(
                "<th scope=\"col\">{}</th>",
                cell_html(t.headers.get(j).map_or("", |h| h.as_str()))
            ));
        }
        out.push_str("</tr></thead>\n<tbody>\n");
        for row in &t.rows {
            out.push_str("<tr>");
            for &i in cols {
                let c = row.get(i).map_or("", |c| c.as_str());
                if i == 0 {
                    out.push_str(&format!("<th scope=\"row\">{}</th>", cell_html(c)));
                } else if numeric.get(i).copied().unwrap_or(false) {
                    out.push_str(&format!("<td class=\"num\">{}</td>", cell_html(c)));
                } else {
                    out.push_str(&format!("<td>{}</td>", cell_html(c)));
                }
            }
            out.push_str("</tr>\n");
        }
        out.push_str("</tbody></table></div>\n");
    }
    out.push_str("</div>\n");
}

impl Briefing {
    /// The page as one HTML document.
    pub fn to_html(&self) -> String {
        let mut o = String::with_capacity(64 * 1024);
        o.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
        o.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
        o.push_str(&format!("<title>{}</title>\n", escape(&self.title)));
        o.push_str(&format!(
            "<style>{}</style>\n</head>\n<body>\n<main>\n",
            html::CSS
        ));
        o.push_str(&format!(
            "<header class=\"brief\"><h1>{}</h1><p class=\"sub\">{}</p>\n",
            escape(&self.title),
            escape(&self.subtitle)
        ));
        if !self.sections.is_empty() {
            o.push_str("<nav class=\"toc\">");
            for (i, s) in self.sections.iter().enumerate() {
                o.push_str(&format!(
                    "<a href=\"#{}\">{}</a>",
                    anchor(i),
                    escape(&s.heading)
                ));
            }
            o.push_str("<a href=\"#provenance\">Provenance</a></nav>\n");
        }
        o.push_str("</header>\n");
        if !self.summary.is_empty() || self.key_table.is_some() {
            o.push_str("<section class=\"summary\" id=\"summary\"><h2>In brief</h2><ul>\n");
            for s in &self.summary {
                o.push_str(&format!("<li>{}</li>\n", escape(s)));
            }
            o.push_str("</ul></section>\n");
            if let Some((caption, t)) = &self.key_table {
                o.push_str("<section class=\"keyfigures\" id=\"key-figures\">\n");
                render_table(&mut o, caption, t, false);
                o.push_str("</section>\n");
            }
            if !self.caveats.is_empty() {
                o.push_str(
                    "<section class=\"caveats\" id=\"caveats\"><h3>Read with care</h3><ul>\n",
                );
                for c in &self.caveats {
                    o.push_str(&format!("<li>{}</li>\n", escape(c)));
                }
                o.push_str("</ul></section>\n");
            }
        }
        if !self.caution.is_empty() {
            o.push_str(&format!(
                "<aside class=\"caution\" id=\"caution\"><strong>Caution.</strong> {}</aside>\n",
                escape(&self.caution)
            ));
        }
        for (i, s) in self.sections.iter().enumerate() {
            o.push_str(&format!(
                "<section id=\"{}\"{}>\n<h2>{}</h2>\n",
                anchor(i),
                if i == 0 {
                    " class=\"annexes-start\""
                } else {
                    ""
                },
                escape(&s.heading)
            ));
            for b in &s.blocks {
                match b {
                    Block::Paragraph(t) => o.push_str(&format!("<p>{}</p>\n", escape(t))),
                    Block::Note(t) => o.push_str(&format!("<p class=\"note\">{}</p>\n", escape(t))),
                    Block::Table { caption, table } => render_table(&mut o, caption, table, true),
                    Block::Figure { caption, svg } => {
                        o.push_str("<figure>\n");
                        o.push_str(&inline_svg(svg, caption));
                        o.push_str(&format!(
                            "\n<figcaption>{}</figcaption>\n</figure>\n",
                            escape(caption)
                        ));
                    }
                }
            }
            o.push_str("</section>\n");
        }
        o.push_str("<section id=\"provenance\">\n<h2>Provenance</h2>\n");
        let mut t = TextTable::new(&["item", "value"]);
        for (k, v) in &self.provenance {
            t.push(vec![k.clone(), v.clone()]);
        }
        render_table(
            &mut o,
            "How this briefing was produced (re-running with these inputs gives the same numbers)",
            &t,
            true,
        );
        o.push_str("</section>\n");
        if !self.caution.is_empty() {
            o.push_str(&format!("<footer>{}</footer>\n", escape(&self.caution)));
        }
        o.push_str("</main>\n</body>\n</html>\n");
        o
    }
}

//! The HTML briefing: one self-contained page (inline CSS and SVG, no scripts, no external links)
//! built from generic pieces — a summary, the caution, sections of paragraphs, tables and figures,
//! and provenance. All text is HTML-escaped here; callers pass plain text.

mod html;

pub use html::{escape, inline_svg, is_numeric};

use crate::output::TextTable;

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

fn render_table(out: &mut String, caption: &str, t: &TextTable) {
    out.push_str("<div class=\"tablewrap\"><table>\n");
    if !caption.is_empty() {
        out.push_str(&format!("<caption>{}</caption>\n", escape(caption)));
    }
    out.push_str("<thead><tr>");
    for h in &t.headers {
        out.push_str(&format!("<th scope=\"col\">{}</th>", escape(h)));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
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
    for row in &t.rows {
        out.push_str("<tr>");
        for (i, c) in row.iter().enumerate() {
            if i == 0 {
                out.push_str(&format!("<th scope=\"row\">{}</th>", escape(c)));
            } else if numeric.get(i).copied().unwrap_or(false) {
                out.push_str(&format!("<td class=\"num\">{}</td>", escape(c)));
            } else {
                out.push_str(&format!("<td>{}</td>", escape(c)));
            }
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody></table></div>\n");
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
        if !self.summary.is_empty() {
            o.push_str("<section class=\"summary\" id=\"summary\"><h2>In brief</h2><ul>\n");
            for s in &self.summary {
                o.push_str(&format!("<li>{}</li>\n", escape(s)));
            }
            o.push_str("</ul></section>\n");
        }
        if !self.caution.is_empty() {
            o.push_str(&format!(
                "<aside class=\"caution\" id=\"caution\"><strong>Caution.</strong> {}</aside>\n",
                escape(&self.caution)
            ));
        }
        for (i, s) in self.sections.iter().enumerate() {
            o.push_str(&format!(
                "<section id=\"{}\">\n<h2>{}</h2>\n",
                anchor(i),
                escape(&s.heading)
            ));
            for b in &s.blocks {
                match b {
                    Block::Paragraph(t) => o.push_str(&format!("<p>{}</p>\n", escape(t))),
                    Block::Note(t) => o.push_str(&format!("<p class=\"note\">{}</p>\n", escape(t))),
                    Block::Table { caption, table } => render_table(&mut o, caption, table),
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
        );
        o.push_str("</section>\n");
        if !self.caution.is_empty() {
            o.push_str(&format!("<footer>{}</footer>\n", escape(&self.caution)));
        }
        o.push_str("</main>\n</body>\n</html>\n");
        o
    }
}

//! The stability analysis as text: a table (one row per regime) in any format, then the published
//! conditions and notes; JSON as the analysis serialises.

use super::{Eigenvalue, StabilityAnalysis};
use crate::output::{fmt_num, Format, TextTable};

fn eig_text(e: &Eigenvalue) -> String {
    if e.im == 0.0 {
        fmt_num(e.re, 6)
    } else {
        let sign = if e.im < 0.0 { "−" } else { "+" };
        format!("{}{sign}{}i", fmt_num(e.re, 6), fmt_num(e.im.abs(), 6))
    }
}

/// A price or quantity: four decimals, or five significant digits in scientific form when four
/// decimals would show a positive number as 0 (or a huge one with dozens of digits).
fn level(x: f64) -> String {
    if x != 0.0 && !(1e-3..1e12).contains(&x.abs()) {
        format!("{x:.4e}")
    } else {
        fmt_num(x, 4)
    }
}

fn opt(x: Option<f64>) -> String {
    x.map(|v| fmt_num(v, 4)).unwrap_or_else(|| "-".into())
}

/// Renders the analysis as a table (one row per regime) followed by the conditions and notes.
pub fn render(analysis: &StabilityAnalysis, format: Format) -> String {
    if format == Format::Json {
        return serde_json::to_string_pretty(analysis).unwrap_or_default() + "\n";
    }
    let headers = [
        "regime",
        "holds",
        "eigenvalues",
        "spectral_radius",
        "verdict",
        "oscillating",
        "period",
        "half_life",
        "at_price",
        "stock_eigenvalue",
    ];
    let mut t = TextTable::new(&headers);
    for r in &analysis.regimes {
        let eigs: Vec<String> = r.eigenvalues.iter().map(eig_text).collect();
        t.push(vec![
            r.name.clone(),
            if r.holds_steady_state {
                "yes".into()
            } else {
                "no".into()
            },
            if eigs.is_empty() {
                "(none)".into()
            } else {
                eigs.join(" ")
            },
            fmt_num(r.spectral_radius, 6),
            r.verdict.as_str().into(),
            if r.oscillating {
                "yes".into()
            } else {
                "no".into()
            },
            opt(r.period),
            opt(r.half_life),
            level(r.at_price),
            opt(r.stock_eigenvalue),
        ]);
    }
    let mut out = t.render(format);
    if format == Format::Csv {
        return out;
    }
    let bullet = if format == Format::Markdown {
        "- "
    } else {
        "  "
    };
    out.push_str(&format!(
        "\nsteady state: price {}, harvest {}, producer price {}, planting price {} (rule {})\n",
        level(analysis.steady_state.price),
        level(analysis.steady_state.quantity),
        level(analysis.producer_price),
        level(analysis.planting_price),
        analysis.rule
    ));
    out.push_str(&format!(
        "verdict: {} (spectral radius {}; neutral within 1e-9 of 1)\n",
        analysis.verdict.as_str(),
        fmt_num(analysis.spectral_radius, 6)
    ));
    if let Some(t) = &analysis.trade {
        out.push_str(&format!(
            "trade: import parity {}, export parity {}; at the steady state imports {}, exports {} \
             a period ({} regime)\n",
            t.import_parity.map(level).unwrap_or_else(|| "none".into()),
            t.export_parity.map(level).unwrap_or_else(|| "none".into()),
            level(t.imports),
            level(t.exports),
            t.holding
        ));
        out.push_str(&format!("trade: {}\n", t.note));
    }
    if !analysis.conditions.is_empty() {
        out.push_str("\npublished conditions (free market at its steady state):\n");
        for c in &analysis.conditions {
            out.push_str(&format!(
                "{bullet}{}: {} — {}; {}\n",
                c.name,
                c.status(),
                c.detail,
                c.source
            ));
        }
    }
    let notes: Vec<String> = analysis
        .regimes
        .iter()
        .filter_map(|r| r.note.as_ref().map(|n| format!("{}: {n}", r.name)))
        .chain(analysis.note.clone())
        .collect();
    if !notes.is_empty() {
        out.push_str("\nnotes:\n");
        for n in notes {
            out.push_str(&format!("{bullet}{n}\n"));
        }
    }
    out
}

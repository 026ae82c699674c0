//! The furrow look: one palette, one font, one way of laying out a figure (title block, chart, legend
//! strip), and the small helpers every plot shares (axis ranges, number labels).
//!
//! The palette is our own: muted field-and-soil colours on a warm paper background, chosen so that
//! neighbouring series differ in lightness as well as hue (they stay apart when printed in grey).

use std::sync::Once;

use plotters::prelude::*;
pub use plotters::style::RGBColor;
use plotters::style::{FontStyle, TextStyle};

/// Background of every figure (warm paper).
pub const PAPER: RGBColor = RGBColor(0xFB, 0xF8, 0xF1);
/// Background of the plotting area.
pub const FIELD: RGBColor = RGBColor(0xFF, 0xFE, 0xFB);
/// Main text colour.
pub const INK: RGBColor = RGBColor(0x26, 0x2A, 0x2E);
/// Secondary text (subtitles, notes).
pub const MUTED: RGBColor = RGBColor(0x6A, 0x6F, 0x73);
/// Fine grid lines.
pub const GRID_LIGHT: RGBColor = RGBColor(0xEE, 0xE9, 0xDF);
/// Major grid lines.
pub const GRID_BOLD: RGBColor = RGBColor(0xD9, 0xD2, 0xC3);
/// Reference lines (steady state, unit circle, ρ = 1 contour).
pub const REFERENCE: RGBColor = RGBColor(0x3B, 0x3B, 0x3B);

/// Series colours, in the order they are handed out.
pub const SERIES: [RGBColor; 8] = [
    RGBColor(0x1F, 0x5C, 0x73), // deep lake
    RGBColor(0xC8, 0x7F, 0x0A), // ripe millet
    RGBColor(0x9E, 0x3B, 0x2E), // brick soil
    RGBColor(0x5B, 0x7F, 0x2A), // young leaf
    RGBColor(0x6E, 0x4C, 0x8C), // heather
    RGBColor(0x3E, 0x9C, 0x9A), // river teal
    RGBColor(0x8A, 0x6A, 0x45), // straw brown
    RGBColor(0xB5, 0x4E, 0x7A), // clover
];

/// The colour of series `i` (cycles after eight).
pub fn series_colour(i: usize) -> RGBColor {
    SERIES[i % SERIES.len()]
}

/// Font family name every plot uses (registered from the embedded DejaVu Sans).
pub const FAMILY: &str = "sans-serif";

/// Default figure size in pixels.
pub const WIDTH: u32 = 960;
/// Default figure height in pixels.
pub const HEIGHT: u32 = 560;

static FONTS: Once = Once::new();

/// Registers the embedded DejaVu Sans (regular and bold) as `sans-serif`, once per process. Needed
/// before any text is drawn; no system font is ever looked up.
pub fn ensure_fonts() {
    FONTS.call_once(|| {
        // The embedded files are valid fonts; a failure here would only mean a broken dejavu crate,
        // and then text drawing reports FontUnavailable as a PlotError.
        let _ = plotters::style::register_font(FAMILY, FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font(FAMILY, FontStyle::Bold, dejavu::sans::bold());
    });
}

/// Text style of the given size and colour.
pub fn text(size: u32, colour: RGBColor) -> TextStyle<'static> {
    (FAMILY, size as f64).into_font().color(&colour)
}

/// Bold text style of the given size and colour.
pub fn bold(size: u32, colour: RGBColor) -> TextStyle<'static> {
    (FAMILY, size as f64, FontStyle::Bold)
        .into_font()
        .color(&colour)
}

/// A range `[lo, hi]` covering all finite values with a margin of `pad` (share of the span) on both
/// sides; a flat or empty set gets a sensible non-zero span.
pub fn padded_range<I: IntoIterator<Item = f64>>(values: I, pad: f64) -> (f64, f64) {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for v in values.into_iter().filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() || !hi.is_finite() {
        return (0.0, 1.0);
    }
    let span = hi - lo;
    if span <= 1e-12 * hi.abs().max(1.0) {
        let half = (hi.abs() * 0.05).max(0.5);
        return (lo - half, hi + half);
    }
    (lo - pad * span, hi + pad * span)
}

/// Formats an axis tick: few digits, thousands without exponent, never NaN.
pub fn tick(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let a = v.abs();
    let s = if a >= 1e7 {
        format!("{:.1}M", v / 1e6)
    } else if a >= 1e4 {
        group_thousands(v.round() as i64)
    } else if a >= 100.0 || a == 0.0 {
        format!("{v:.0}")
    } else if a >= 10.0 {
        format!("{v:.1}")
    } else if a >= 1.0 {
        format!("{v:.2}")
    } else {
        format!("{v:.3}")
    };
    let s = if s.contains('.') && !s.ends_with('M') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

/// An integer with thousands separators, as every table writes it ([`crate::units::group`]).
fn group_thousands(n: i64) -> String {
    crate::units::group(n as f64, 0)
}

/// Heights of the parts of a figure.
pub const TITLE_BLOCK: u32 = 64;
/// Height of one legend row.
pub const LEGEND_ROW: u32 = 26;

/// One entry of the legend strip: a name and how its key is drawn.
#[derive(Debug, Clone)]
pub struct LegendEntry {
    /// The label (a policy's name, a regime).
    pub name: String,
    /// Key colour.
    pub colour: RGBColor,
    /// Key shape.
    pub key: LegendKey,
}

/// The shape drawn in front of a legend label.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LegendKey {
    /// A thick line.
    Line,
    /// A dashed line.
    Dashed,
    /// A filled box (bands, bars).
    Block,
    /// A dot (scatter points).
    Dot,
    /// A solid box (bars).
    Bar,
    /// A filled square (scatter points of a second group).
    Square,
    /// A filled triangle (a third group).
    Triangle,
    /// A cross (a fourth group, or points apart from the data).
    Cross,
}

/// Left edge of the legend strip's first key, in pixels.
pub const LEGEND_LEFT: i32 = 70;

/// Pixels one legend entry takes: key (28) and gap (8), the label, and the space before the next.
pub fn legend_advance(label_width: u32) -> u32 {
    36 + label_width + 28
}

/// Splits the entries into rows that fit `width`; `measure` gives a label's width in pixels.
pub fn legend_rows(
    entries: &[LegendEntry],
    width: u32,
    measure: &dyn Fn(&str) -> u32,
) -> Vec<Vec<(LegendEntry, u32)>> {
    let mut rows: Vec<Vec<(LegendEntry, u32)>> = Vec::new();
    let mut used = 0u32;
    let avail = width.saturating_sub(LEGEND_LEFT as u32 + 12);
    for e in entries {
        let w = legend_advance(measure(&e.name));
        if rows.is_empty() || (used + w > avail && used > 0) {
            rows.push(Vec::new());
            used = 0;
        }
        if let Some(r) = rows.last_mut() {
            r.push((e.clone(), w));
        }
        used += w;
    }
    rows
}

/// Height the legend strip needs for `rows` rows.
pub fn legend_height(rows: usize) -> u32 {
    if rows == 0 {
        0
    } else {
        rows as u32 * LEGEND_ROW + 12
    }
}

/// An RGB triple, as tests and callers compare pixels with it.
pub type RGBColourLike = [u8; 3];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_short_and_consistent() {
        assert_eq!(tick(8000.0), "8000");
        assert_eq!(tick(12500.0), "12,500");
        assert_eq!(tick(-250000.0), "-250,000");
        assert_eq!(tick(2.5e7), "25.0M");
        assert_eq!(tick(0.25), "0.25");
        assert_eq!(tick(-0.0), "0");
        assert_eq!(tick(f64::NAN), "");
    }

    #[test]
    fn padded_range_handles_flat_and_empty_data() {
        assert_eq!(padded_range(vec![], 0.1), (0.0, 1.0));
        let (lo, hi) = padded_range(vec![5.0, 5.0], 0.1);
        assert!(lo < 5.0 && hi > 5.0);
        let (lo, hi) = padded_range(vec![0.0, 10.0, f64::NAN], 0.1);
        assert!((lo + 1.0).abs() < 1e-12 && (hi - 11.0).abs() < 1e-12);
    }
}

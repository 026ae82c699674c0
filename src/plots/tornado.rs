//! The tornado diagram of one policy: for each varied key a horizontal bar from the indicator at
//! base to its value with the key at its low end and to its value at its high end, widest swing at
//! the top; a dashed line at the base value.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::frame::{de, frame, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// One bar: a key and the indicator at its two ends (none where the run had no value).
#[derive(Debug, Clone, PartialEq)]
pub struct TornadoRow {
    /// The key with its range, as the axis shows it (e.g. `demand.elasticity −0.4 … −0.15`).
    pub label: String,
    /// The indicator with the key at its low value.
    pub at_low: Option<f64>,
    /// The indicator with the key at its high value.
    pub at_high: Option<f64>,
}

/// Tornado data.
#[derive(Debug, Clone, PartialEq)]
pub struct Tornado {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label (the indicator with its unit).
    pub x_label: String,
    /// The indicator with every key at base.
    pub base: Option<f64>,
    /// Bars, widest swing first (drawn at the top).
    pub rows: Vec<TornadoRow>,
}

/// The tornado of one policy's indicator (`x_label` with its unit) over the varied keys.
pub fn tornado(policy: &str, x_label: &str, base: Option<f64>, rows: Vec<TornadoRow>) -> Plot {
    Plot::Tornado(Tornado {
        titles: Titles {
            title: format!("What moves the answer: {policy}"),
            subtitle: "one key at a time at its low and its high value, every other key at base; widest swing at the top"
                .into(),
        },
        x_label: x_label.into(),
        base,
        rows,
    })
}

/// Height of a tornado of `rows` bars.
pub(crate) fn height(rows: usize) -> u32 {
    (style::TITLE_BLOCK + 150 + 46 * rows as u32).max(style::HEIGHT)
}

impl Tornado {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let values: Vec<f64> = self
            .rows
            .iter()
            .flat_map(|r| [r.at_low, r.at_high])
            .chain([self.base])
            .flatten()
            .filter(|v| v.is_finite())
            .collect();
        if values.is_empty() || self.rows.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let low_c = style::series_colour(0);
        let high_c = style::series_colour(1);
        let legend = vec![
            LegendEntry {
                name: "key at its low value".into(),
                colour: low_c,
                key: LegendKey::Bar,
            },
            LegendEntry {
                name: "key at its high value".into(),
                colour: high_c,
                key: LegendKey::Bar,
            },
            LegendEntry {
                name: "every key at base".into(),
                colour: style::REFERENCE,
                key: LegendKey::Dashed,
            },
        ];
        let body = frame(root, &self.titles, &legend)?;
        let label_style = style::text(13, style::INK);
        let label_width = self
            .rows
            .iter()
            .map(|r| {
                root.estimate_text_size(&r.label, &label_style)
                    .map_or(8 * r.label.len() as u32, |(w, _)| w)
            })
            .max()
            .unwrap_or(0);
        let (x0, x1) = style::padded_range(values.iter().copied(), 0.06);
        let n = self.rows.len();
        let mut chart = ChartBuilder::on(&body)
            .margin_left(16)
            .margin_right(28)
            .margin_top(8)
            .margin_bottom(6)
            .x_label_area_size(48)
            .y_label_area_size(label_width + 16)
            .build_cartesian_2d(x0..x1, 0f64..n as f64)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        // the widest bar (first row) at the top: row i sits at y = n − 1 − i .. n − i
        let labels: Vec<String> = self.rows.iter().map(|r| r.label.clone()).collect();
        let label_at = |y: &f64| -> String {
            let i = n as f64 - 0.5 - y;
            if (i - i.round()).abs() < 1e-6 && i >= -0.5 {
                labels.get(i.round() as usize).cloned().unwrap_or_default()
            } else {
                String::new()
            }
        };
        chart
            .configure_mesh()
            .x_desc(&self.x_label)
            .axis_desc_style(style::text(15, style::INK))
            .label_style(style::text(13, style::MUTED))
            .light_line_style(style::GRID_LIGHT)
            .bold_line_style(style::GRID_BOLD)
            .axis_style(style::MUTED)
            .x_labels(10)
            .x_max_light_lines(1)
            .disable_y_mesh()
            .y_labels(0)
            .x_label_formatter(&|v| style::tick(*v))
            .draw()
            .map_err(de)?;
        let base = self.base.filter(|b| b.is_finite());
        for (i, row) in self.rows.iter().enumerate() {
            let y = (n - 1 - i) as f64;
            let (top, bottom) = (y + 0.78, y + 0.22);
            let from = base.unwrap_or(x0.max(0.0).min(x1));
            for (end, colour) in [(row.at_low, low_c), (row.at_high, high_c)] {
                if let Some(v) = end.filter(|v| v.is_finite()) {
                    chart
                        .draw_series(std::iter::once(Rectangle::new(
                            [(from.min(v), top), (from.max(v), bottom)],
                            colour.mix(0.85).filled(),
                        )))
                        .map_err(de)?;
                }
            }
            // the key's name to the left of the chart, at the bar's middle
            let (px, py) = chart.backend_coord(&(x0, y + 0.5));
            root.draw(&Text::new(
                label_at(&(y + 0.5)),
                (px - label_width as i32 - 10, py - 7),
                label_style.clone(),
            ))
            .map_err(de)?;
        }
        if let Some(b) = base {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(b, 0.0), (b, n as f64)],
                    8,
                    5,
                    style::REFERENCE.stroke_width(2),
                ))
                .map_err(de)?;
        }
        Ok(())
    }
}

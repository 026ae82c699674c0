//! Bars of one household group's welfare change under each policy ("who gains"): one bar per
//! policy in the policy's colour, the first-order value as a black tick across its bar, a zero line.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::frame::{builder, de, frame, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// One policy's bar.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupBar {
    /// The policy's name (legend).
    pub name: String,
    /// Its short code under the bar (e.g. `P1`).
    pub code: String,
    /// The bar's height (e.g. the welfare change with response, % of income).
    pub value: f64,
    /// The tick across the bar (e.g. the first-order change), if any.
    pub tick: Option<f64>,
    /// The policy's colour (index into the palette, as in the other figures).
    pub colour: usize,
}

/// A bar per policy for one group.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupBars {
    /// Title and subtitle.
    pub titles: Titles,
    /// Y axis label with unit.
    pub y_label: String,
    /// What the tick marks (legend), when bars carry one.
    pub tick_label: String,
    /// The bars, left to right.
    pub bars: Vec<GroupBar>,
}

/// A group's bars as a figure.
pub fn group_bars(
    title: &str,
    subtitle: &str,
    y_label: &str,
    tick_label: &str,
    bars: Vec<GroupBar>,
) -> Plot {
    Plot::GroupBars(GroupBars {
        titles: Titles {
            title: title.into(),
            subtitle: subtitle.into(),
        },
        y_label: y_label.into(),
        tick_label: tick_label.into(),
        bars,
    })
}

impl GroupBars {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let bars: Vec<&GroupBar> = self.bars.iter().filter(|b| b.value.is_finite()).collect();
        if bars.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let mut legend: Vec<LegendEntry> = bars
            .iter()
            .map(|b| LegendEntry {
                name: format!("{} {}", b.code, b.name),
                colour: style::series_colour(b.colour),
                key: LegendKey::Bar,
            })
            .collect();
        if bars.iter().any(|b| b.tick.is_some_and(f64::is_finite)) {
            legend.push(LegendEntry {
                name: self.tick_label.clone(),
                colour: style::INK,
                key: LegendKey::Line,
            });
        }
        let body = frame(root, &self.titles, &legend)?;
        let values = bars
            .iter()
            .flat_map(|b| [Some(b.value), b.tick])
            .flatten()
            .filter(|v| v.is_finite())
            .chain(Some(0.0));
        let (y0, y1) = style::padded_range(values, 0.12);
        let n = bars.len() as f64;
        let mut chart = builder(&body)
            .build_cartesian_2d(0.4..n + 0.6, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .y_desc(self.y_label.as_str())
            .axis_desc_style(style::text(15, style::INK))
            .label_style(style::text(13, style::MUTED))
            .light_line_style(style::GRID_LIGHT)
            .bold_line_style(style::GRID_BOLD)
            .axis_style(style::MUTED)
            .x_labels(0)
            .y_labels(8)
            .y_max_light_lines(1)
            .y_label_formatter(&|v| style::tick(*v))
            .draw()
            .map_err(de)?;
        let half = 0.32;
        chart
            .draw_series(bars.iter().enumerate().map(|(i, b)| {
                let x = i as f64 + 1.0;
                Rectangle::new(
                    [(x - half, 0.0), (x + half, b.value)],
                    style::series_colour(b.colour).filled(),
                )
            }))
            .map_err(de)?;
        for (i, b) in bars.iter().enumerate() {
            let x = i as f64 + 1.0;
            if let Some(t) = b.tick.filter(|t| t.is_finite()) {
                chart
                    .draw_series(LineSeries::new(
                        vec![(x - half - 0.04, t), (x + half + 0.04, t)],
                        style::INK.stroke_width(3),
                    ))
                    .map_err(de)?;
            }
            // the code under the bars, at the foot of the chart
            chart
                .draw_series(std::iter::once(Text::new(
                    b.code.clone(),
                    (x, y0),
                    style::text(14, style::INK).pos(Pos::new(HPos::Center, VPos::Bottom)),
                )))
                .map_err(de)?;
        }
        chart
            .draw_series(LineSeries::new(
                vec![(0.4, 0.0), (n + 0.6, 0.0)],
                style::INK.stroke_width(1),
            ))
            .map_err(de)?;
        Ok(())
    }
}

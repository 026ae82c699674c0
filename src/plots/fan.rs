//! Monte Carlo fan charts: for each policy the p05–p95 band (translucent), the median (solid) and
//! the mean (dashed) over periods, overlaid so the policies' spreads can be compared directly.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::RGBColor;

use super::frame::{builder, de, frame, mesh, panel_mesh, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// One policy's band over periods 1, 2, …
#[derive(Debug, Clone, PartialEq)]
pub struct FanBand {
    /// Legend name (the policy).
    pub name: String,
    /// 5th percentile per period.
    pub p05: Vec<f64>,
    /// Median per period.
    pub p50: Vec<f64>,
    /// 95th percentile per period.
    pub p95: Vec<f64>,
    /// Mean per period (dashed), if known.
    pub mean: Option<Vec<f64>>,
    /// Palette index (keeps a policy's colour the same across figures); `None`: its position.
    pub colour: Option<usize>,
    /// Periods per value (1: one value per period; k: value i stands for periods ik+1 …
    /// (i+1)k, drawn at the first of them), for long runs thinned before plotting.
    pub stride: usize,
}

impl FanBand {
    fn colour_at(&self, i: usize) -> RGBColor {
        style::series_colour(self.colour.unwrap_or(i))
    }
}

/// Fan chart data.
#[derive(Debug, Clone, PartialEq)]
pub struct FanChart {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label.
    pub x_label: String,
    /// Y axis label with unit.
    pub y_label: String,
    /// One band per policy.
    pub bands: Vec<FanBand>,
    /// The first band is the market left alone: repeat it in grey behind the other panels.
    pub reference_first: bool,
}

/// A fan chart of several policies overlaid. `replications` goes into the subtitle.
pub fn fan(
    title: &str,
    x_label: &str,
    y_label: &str,
    replications: usize,
    bands: Vec<FanBand>,
) -> Plot {
    Plot::Fan(FanChart {
        titles: Titles {
            title: title.into(),
            subtitle: format!(
                "shaded: 5th to 95th percentile of {replications} simulated paths; solid: median; dashed: mean"
            ),
        },
        x_label: x_label.into(),
        y_label: y_label.into(),
        bands,
        reference_first: true,
    })
}

fn period_points(v: &[f64], stride: usize) -> Vec<(f64, f64)> {
    let k = stride.max(1);
    v.iter()
        .enumerate()
        .map(|(i, &y)| ((i * k + 1) as f64, y))
        .filter(|p| p.1.is_finite())
        .collect()
}

/// Panels in a small-multiples layout of `n` bands: (columns, rows); (1, 1) means one overlaid chart.
pub(crate) fn panel_grid(n: usize) -> (usize, usize) {
    if n <= 2 {
        (1, 1)
    } else {
        let cols = if n <= 6 { 2 } else { 3 };
        (cols, n.div_ceil(cols))
    }
}

/// Pixel height of a fan chart of `n` bands.
pub(crate) fn height(n: usize) -> u32 {
    let (_, rows) = panel_grid(n);
    if rows <= 1 && n <= 2 {
        style::HEIGHT
    } else {
        style::TITLE_BLOCK + 2 * style::LEGEND_ROW + 30 + rows as u32 * 250
    }
}

fn draw_band<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    b: &FanBand,
    c: RGBColor,
    alpha: f64,
) -> Result<(), PlotError> {
    let lo = period_points(&b.p05, b.stride);
    let hi = period_points(&b.p95, b.stride);
    if lo.len() >= 2 && lo.len() == hi.len() {
        let mut poly = hi.clone();
        poly.extend(lo.iter().rev().copied());
        chart
            .draw_series(std::iter::once(Polygon::new(poly, c.mix(alpha).filled())))
            .map_err(de)?;
        chart
            .draw_series(LineSeries::new(lo, c.mix(0.55).stroke_width(1)))
            .map_err(de)?;
        chart
            .draw_series(LineSeries::new(hi, c.mix(0.55).stroke_width(1)))
            .map_err(de)?;
    }
    Ok(())
}

fn draw_centre<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    b: &FanBand,
    c: RGBColor,
) -> Result<(), PlotError> {
    chart
        .draw_series(LineSeries::new(
            period_points(&b.p50, b.stride),
            // dense medians 1 px wide (wide zig-zags get spiky joins in the bitmap backend)
            c.stroke_width(if b.p50.len() > 200 { 1 } else { 3 }),
        ))
        .map_err(de)?;
    if let Some(m) = &b.mean {
        chart
            .draw_series(DashedLineSeries::new(
                period_points(m, b.stride),
                7,
                5,
                c.stroke_width(2),
            ))
            .map_err(de)?;
    }
    Ok(())
}

impl FanChart {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let all = self
            .bands
            .iter()
            .flat_map(|b| b.p05.iter().chain(&b.p95).chain(&b.p50).copied());
        if !all.clone().any(f64::is_finite) {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let n = self
            .bands
            .iter()
            .map(|b| (b.p50.len().max(1) - 1) * b.stride.max(1) + 1)
            .max()
            .unwrap_or(1)
            .max(2);
        let (y0, y1) = style::padded_range(all, 0.05);
        if panel_grid(self.bands.len()) != (1, 1) {
            return self.draw_panels(root, n, y0, y1);
        }
        let legend: Vec<LegendEntry> = self
            .bands
            .iter()
            .enumerate()
            .map(|(i, b)| LegendEntry {
                name: b.name.clone(),
                colour: b.colour_at(i),
                key: LegendKey::Block,
            })
            .collect();
        let body = frame(root, &self.titles, &legend)?;
        let mut chart = builder(&body)
            .build_cartesian_2d(1.0..n as f64, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, &self.x_label, &self.y_label)?;
        for (i, b) in self.bands.iter().enumerate() {
            draw_band(&mut chart, b, b.colour_at(i), 0.22)?;
        }
        for (i, b) in self.bands.iter().enumerate() {
            draw_centre(&mut chart, b, b.colour_at(i))?;
        }
        Ok(())
    }

    /// Small multiples: one panel per policy on a shared scale, the first band (the market left
    /// alone) repeated in grey behind every other panel for reference.
    fn draw_panels<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        n: usize,
        y0: f64,
        y1: f64,
    ) -> Result<(), PlotError> {
        let (cols, rows) = panel_grid(self.bands.len());
        let grey = style::MUTED;
        let mut legend = vec![
            LegendEntry {
                name: "5–95 % band".into(),
                colour: style::INK,
                key: LegendKey::Block,
            },
            LegendEntry {
                name: "median".into(),
                colour: style::INK,
                key: LegendKey::Line,
            },
            LegendEntry {
                name: "mean".into(),
                colour: style::INK,
                key: LegendKey::Dashed,
            },
        ];
        if let Some(first) = self.bands.first().filter(|_| self.reference_first) {
            legend.push(LegendEntry {
                name: format!("{} (grey, for reference)", first.name),
                colour: grey,
                key: LegendKey::Block,
            });
        }
        let mut titles = self.titles.clone();
        titles.subtitle = format!(
            "{}; x: {}; y: {}",
            titles.subtitle, self.x_label, self.y_label
        );
        let body = frame(root, &titles, &legend)?;
        let panels = body.split_evenly((rows, cols));
        for (i, (b, area)) in self.bands.iter().zip(panels.iter()).enumerate() {
            let c = b.colour_at(i);
            let mut chart = ChartBuilder::on(area)
                .margin(6)
                .margin_right(14)
                .caption(b.name.clone(), style::bold(14, style::INK))
                .x_label_area_size(22)
                .y_label_area_size(48)
                .build_cartesian_2d(1.0..n as f64, y0..y1)
                .map_err(de)?;
            chart.plotting_area().fill(&style::FIELD).map_err(de)?;
            panel_mesh(&mut chart)?;
            if i > 0 && self.reference_first {
                if let Some(first) = self.bands.first() {
                    draw_band(&mut chart, first, grey, 0.12)?;
                }
            }
            draw_band(&mut chart, b, c, 0.28)?;
            draw_centre(&mut chart, b, c)?;
        }
        Ok(())
    }
}

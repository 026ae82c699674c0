//! Monte Carlo fan charts: for each policy the p05–p95 band (translucent), the median (solid) and
//! the mean (dashed) over periods, overlaid so the policies' spreads can be compared directly.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::frame::{builder, de, frame, mesh, Titles};
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
    })
}

fn period_points(v: &[f64]) -> Vec<(f64, f64)> {
    v.iter()
        .enumerate()
        .map(|(i, &y)| ((i + 1) as f64, y))
        .filter(|p| p.1.is_finite())
        .collect()
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
        let legend: Vec<LegendEntry> = self
            .bands
            .iter()
            .enumerate()
            .map(|(i, b)| LegendEntry {
                name: b.name.clone(),
                colour: style::series_colour(i),
                key: LegendKey::Block,
            })
            .collect();
        let body = frame(root, &self.titles, &legend)?;
        let n = self
            .bands
            .iter()
            .map(|b| b.p50.len())
            .max()
            .unwrap_or(1)
            .max(2);
        let (y0, y1) = style::padded_range(all, 0.05);
        let mut chart = builder(&body)
            .build_cartesian_2d(1.0..n as f64, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, &self.x_label, &self.y_label)?;
        let alpha = if self.bands.len() > 2 { 0.14 } else { 0.22 };
        for (i, b) in self.bands.iter().enumerate() {
            let c = style::series_colour(i);
            let lo = period_points(&b.p05);
            let hi = period_points(&b.p95);
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
        }
        for (i, b) in self.bands.iter().enumerate() {
            let c = style::series_colour(i);
            chart
                .draw_series(LineSeries::new(period_points(&b.p50), c.stroke_width(3)))
                .map_err(de)?;
            if let Some(m) = &b.mean {
                chart
                    .draw_series(DashedLineSeries::new(
                        period_points(m),
                        7,
                        5,
                        c.stroke_width(2),
                    ))
                    .map_err(de)?;
            }
        }
        Ok(())
    }
}

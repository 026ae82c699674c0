//! The bifurcation diagram of a one-key sweep: for each value of the key, the prices the path
//! keeps visiting after its transient (one dot each). One dot per value means convergence, two a
//! two-season cycle, a smear an irregular or diverging path.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::frame::{builder, de, frame, mesh_with, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// Bifurcation diagram data.
#[derive(Debug, Clone, PartialEq)]
pub struct Bifurcation {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label (the swept key).
    pub x_label: String,
    /// Y axis label (price with unit).
    pub y_label: String,
    /// Values of the swept key.
    pub values: Vec<f64>,
    /// Long-run prices at each value (same length as `values`).
    pub prices: Vec<Vec<f64>>,
    /// Steady-state price at each value (dashed line), if known.
    pub steady: Option<Vec<f64>>,
}

/// A bifurcation diagram of `key`.
pub fn bifurcation(
    key: &str,
    price_unit: &str,
    values: Vec<f64>,
    prices: Vec<Vec<f64>>,
    steady: Option<Vec<f64>>,
) -> Plot {
    Plot::Bifurcation(Bifurcation {
        titles: Titles {
            title: format!("Long-run prices as {key} varies"),
            subtitle: "each dot a price visited after the transient; one dot: settles, two: a two-season cycle, a smear: no settling"
                .into(),
        },
        x_label: key.into(),
        y_label: format!("price ({price_unit})"),
        values,
        prices,
        steady,
    })
}

impl Bifurcation {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let dots: Vec<(f64, f64)> = self
            .values
            .iter()
            .zip(&self.prices)
            .flat_map(|(&x, ps)| ps.iter().map(move |&p| (x, p)))
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        if dots.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let dot_c = style::series_colour(0);
        let mut legend = vec![LegendEntry {
            name: "long-run prices".into(),
            colour: dot_c,
            key: LegendKey::Dot,
        }];
        let steady: Vec<(f64, f64)> = self
            .steady
            .iter()
            .flat_map(|s| self.values.iter().copied().zip(s.iter().copied()))
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        if !steady.is_empty() {
            legend.push(LegendEntry {
                name: "steady-state price".into(),
                colour: style::series_colour(1),
                key: LegendKey::Dashed,
            });
        }
        // Values whose long run left no bounded prices (diverged or invalid): marked on the axis.
        let missing: Vec<f64> = self
            .values
            .iter()
            .enumerate()
            .filter(|(i, v)| {
                v.is_finite()
                    && !self
                        .prices
                        .get(*i)
                        .is_some_and(|ps| ps.iter().any(|p| p.is_finite()))
            })
            .map(|(_, v)| *v)
            .collect();
        let miss_c = style::series_colour(2);
        if !missing.is_empty() {
            legend.push(LegendEntry {
                name: "diverged: no bounded long run (strip below the chart, not data)".into(),
                colour: miss_c,
                key: LegendKey::Cross,
            });
        }
        // a log price axis when the prices span more than two decades
        let lo = dots.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
        let hi = dots.iter().map(|p| p.1).fold(0.0f64, f64::max);
        let log = lo > 0.0 && hi / lo > 100.0;
        let tf = |y: f64| if log { y.log10() } else { y };
        let mut titles = self.titles.clone();
        if log {
            titles.subtitle = format!(
                "{}; log price axis (prices span {} decades)",
                titles.subtitle,
                style::tick((hi / lo).log10().floor())
            );
        }
        let body = frame(root, &titles, &legend)?;
        // diverged values go into their own strip under the chart, apart from the data
        let (body, strip) = if missing.is_empty() {
            (body, None)
        } else {
            let (_, h) = body.dim_in_pixel();
            let (a, b) = body.split_vertically(h.saturating_sub(44));
            (a, Some(b))
        };
        let (x0, x1) = style::padded_range(self.values.iter().copied(), 0.03);
        let (y0, y1) = style::padded_range(
            dots.iter()
                .map(|p| tf(p.1))
                .chain(steady.iter().filter(|p| !log || p.1 > 0.0).map(|p| tf(p.1))),
            0.06,
        );
        let y0 = if log { y0 } else { y0.max(0.0) };
        let mut chart = builder(&body)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        let y_label = if log {
            format!("{} (log scale)", self.y_label)
        } else {
            self.y_label.clone()
        };
        if log {
            // labels at whole decades only (10, 100, …); the grid lines between stay unlabelled
            mesh_with(&mut chart, &self.x_label, &y_label, &|v| {
                if (v - v.round()).abs() < 1e-6 {
                    style::tick(10f64.powf(v.round()))
                } else {
                    String::new()
                }
            })?;
        } else {
            mesh_with(&mut chart, &self.x_label, &y_label, &|v| style::tick(*v))?;
        }
        let steady: Vec<(f64, f64)> = steady
            .into_iter()
            .filter(|p| !log || p.1 > 0.0)
            .map(|(x, y)| (x, tf(y)))
            .collect();
        let dots: Vec<(f64, f64)> = dots.into_iter().map(|(x, y)| (x, tf(y))).collect();
        if steady.len() >= 2 {
            chart
                .draw_series(DashedLineSeries::new(
                    steady,
                    8,
                    5,
                    style::series_colour(1).stroke_width(2),
                ))
                .map_err(de)?;
        }
        if let Some(strip) = strip {
            let mut band = ChartBuilder::on(&strip)
                .margin_left(16)
                .margin_right(28)
                .margin_top(4)
                .y_label_area_size(74)
                .build_cartesian_2d(x0..x1, 0.0..1.0)
                .map_err(de)?;
            band.plotting_area().fill(&miss_c.mix(0.08)).map_err(de)?;
            band.draw_series(std::iter::once(Text::new(
                "diverged".to_string(),
                (x0, 0.85),
                style::text(12, style::MUTED),
            )))
            .map_err(de)?;
            band.draw_series(
                missing
                    .iter()
                    .map(|&x| Cross::new((x, 0.45), 5, miss_c.stroke_width(2))),
            )
            .map_err(de)?;
        }
        let r = if dots.len() > 4000 {
            1
        } else if self.values.len() > 150 {
            2
        } else {
            3
        };
        chart
            .draw_series(
                dots.iter()
                    .map(|&p| Circle::new(p, r, dot_c.mix(0.75).filled())),
            )
            .map_err(de)?;
        Ok(())
    }
}

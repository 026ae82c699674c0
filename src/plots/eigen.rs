//! Eigenvalues in the complex plane with the unit circle: a point inside the circle is a mode that
//! dies out, outside one that grows; off the real axis it cycles.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::frame::{builder, de, frame, mesh, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// One eigenvalue with the group it belongs to (a regime, or a policy and regime).
#[derive(Debug, Clone, PartialEq)]
pub struct EigenPoint {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
    /// Legend group.
    pub group: String,
    /// Drawn filled (e.g. the regime holding the steady state); otherwise a ring.
    pub primary: bool,
}

/// Eigenvalue plot data.
#[derive(Debug, Clone, PartialEq)]
pub struct EigenPlot {
    /// Title and subtitle.
    pub titles: Titles,
    /// The eigenvalues.
    pub points: Vec<EigenPoint>,
}

/// Eigenvalues in the complex plane; groups keep their first-seen order in the legend.
pub fn eigenvalues(title: &str, points: Vec<EigenPoint>) -> Plot {
    Plot::Eigen(EigenPlot {
        titles: Titles {
            title: title.into(),
            subtitle: "inside the unit circle a disturbance dies out; outside it grows; off the real axis it cycles"
                .into(),
        },
        points,
    })
}

fn groups(points: &[EigenPoint]) -> Vec<String> {
    let mut g: Vec<String> = Vec::new();
    for p in points {
        if !g.contains(&p.group) {
            g.push(p.group.clone());
        }
    }
    g
}

impl EigenPlot {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let pts: Vec<&EigenPoint> = self
            .points
            .iter()
            .filter(|p| p.re.is_finite() && p.im.is_finite())
            .collect();
        let names = groups(&self.points);
        let mut legend: Vec<LegendEntry> = names
            .iter()
            .enumerate()
            .map(|(i, n)| LegendEntry {
                name: n.clone(),
                colour: style::series_colour(i),
                key: LegendKey::Dot,
            })
            .collect();
        legend.push(LegendEntry {
            name: "unit circle |λ| = 1".into(),
            colour: style::REFERENCE,
            key: LegendKey::Line,
        });
        let mut titles = self.titles.clone();
        if self.points.iter().any(|p| !p.primary) {
            titles.subtitle = format!(
                "{}; filled: the regime at the steady state, ring: other regimes",
                titles.subtitle
            );
        }
        let body = frame(root, &titles, &legend)?;
        // Equal scales on both axes: the circle must look like a circle.
        let (bw, bh) = body.dim_in_pixel();
        let pw = bw.saturating_sub(16 + 28 + 74).max(10) as f64;
        let ph = bh.saturating_sub(8 + 6 + 48).max(10) as f64;
        let m = pts.iter().map(|p| p.re.hypot(p.im)).fold(1.0f64, f64::max);
        let r = (m * 1.12).max(1.25);
        let (xr, yr) = if pw >= ph {
            (r * pw / ph, r)
        } else {
            (r, r * ph / pw)
        };
        let mut chart = builder(&body)
            .build_cartesian_2d(-xr..xr, -yr..yr)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, "real part", "imaginary part")?;
        for line in [vec![(-xr, 0.0), (xr, 0.0)], vec![(0.0, -yr), (0.0, yr)]] {
            chart
                .draw_series(LineSeries::new(line, style::MUTED.stroke_width(1)))
                .map_err(de)?;
        }
        let circle: Vec<(f64, f64)> = (0..=360)
            .map(|k| {
                let a = (k as f64).to_radians();
                (a.cos(), a.sin())
            })
            .collect();
        chart
            .draw_series(LineSeries::new(circle, style::REFERENCE.stroke_width(2)))
            .map_err(de)?;
        // Coincident eigenvalues of different groups show as concentric markers: each group's
        // markers are 2 px smaller than the previous group's.
        for (gi, name) in names.iter().enumerate() {
            let c = style::series_colour(gi);
            let size = (11 - 2 * gi as i32).max(3);
            let group: Vec<&&EigenPoint> = pts.iter().filter(|p| &p.group == name).collect();
            chart
                .draw_series(group.iter().filter(|p| !p.primary).map(|p| {
                    EmptyElement::at((p.re, p.im)) + Circle::new((0, 0), size, c.stroke_width(2))
                }))
                .map_err(de)?;
            chart
                .draw_series(group.iter().filter(|p| p.primary).map(|p| {
                    EmptyElement::at((p.re, p.im))
                        + Circle::new((0, 0), size, c.filled())
                        + Circle::new((0, 0), size, style::INK.stroke_width(1))
                }))
                .map_err(de)?;
        }
        Ok(())
    }
}

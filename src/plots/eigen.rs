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

impl EigenPlot {
    /// Number of groups (policies or regimes).
    pub fn groups(&self) -> usize {
        groups(&self.points).len()
    }
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

/// Most groups overlaid in one plane; beyond, one small panel per group (small multiples).
pub const PANEL_ABOVE: usize = 3;

/// Panels (columns, rows) for `n` groups.
fn grid(n: usize) -> (usize, usize) {
    let cols = if n <= 4 {
        2
    } else if n <= 9 {
        3
    } else {
        4
    };
    (cols, n.div_ceil(cols))
}

/// Pixel height of an eigenvalue plot of `n` groups.
pub(crate) fn height(n: usize) -> u32 {
    if n <= PANEL_ABOVE {
        style::HEIGHT
    } else {
        let (cols, rows) = grid(n);
        // square-ish panels
        style::TITLE_BLOCK
            + style::LEGEND_ROW
            + 24
            + rows as u32 * (style::WIDTH / cols as u32).min(300)
    }
}

impl EigenPlot {
    /// Small multiples: one complex plane per group (policy) on the same scale, the unit circle in
    /// each; filled: the regime at the steady state, ring: other regimes.
    fn draw_panels<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        pts: &[&EigenPoint],
        names: &[String],
    ) -> Result<(), PlotError> {
        let legend = vec![
            LegendEntry {
                name: "eigenvalue, regime at the steady state".into(),
                colour: style::INK,
                key: LegendKey::Dot,
            },
            LegendEntry {
                name: "unit circle |λ| = 1".into(),
                colour: style::REFERENCE,
                key: LegendKey::Line,
            },
        ];
        let mut titles = self.titles.clone();
        titles.subtitle = "one panel per policy; inside the unit circle a disturbance dies out, outside it grows; ring: another regime".into();
        let body = frame(root, &titles, &legend)?;
        let (cols, rows) = grid(names.len());
        let m = pts.iter().map(|p| p.re.hypot(p.im)).fold(1.0f64, f64::max);
        let r = (m * 1.12).max(1.25);
        let panels = body.split_evenly((rows, cols));
        let circle: Vec<(f64, f64)> = (0..=180)
            .map(|k| {
                let a = (2.0 * k as f64).to_radians();
                (a.cos(), a.sin())
            })
            .collect();
        for (gi, (name, area)) in names.iter().zip(panels.iter()).enumerate() {
            let c = style::series_colour(gi);
            // equal scales: the panel's plotting area is made square
            let (w, h) = area.dim_in_pixel();
            let side = w.min(h.saturating_sub(24)).max(40);
            let pad = (w.saturating_sub(side) / 2) as i32;
            let mut chart = ChartBuilder::on(area)
                .margin_left(pad.max(4) as u32)
                .margin_right(pad.max(4) as u32)
                .margin_top(2)
                .margin_bottom(4)
                .caption(name.clone(), style::bold(13, style::INK))
                .x_label_area_size(18)
                .y_label_area_size(30)
                .build_cartesian_2d(-r..r, -r..r)
                .map_err(de)?;
            chart.plotting_area().fill(&style::FIELD).map_err(de)?;
            chart
                .configure_mesh()
                .label_style(style::text(10, style::MUTED))
                .light_line_style(style::GRID_LIGHT)
                .bold_line_style(style::GRID_BOLD)
                .axis_style(style::MUTED)
                .x_labels(5)
                .y_labels(5)
                .x_max_light_lines(0)
                .y_max_light_lines(0)
                .x_label_formatter(&|v| style::tick(*v))
                .y_label_formatter(&|v| style::tick(*v))
                .draw()
                .map_err(de)?;
            chart
                .draw_series(LineSeries::new(
                    circle.clone(),
                    style::REFERENCE.stroke_width(1),
                ))
                .map_err(de)?;
            for p in pts.iter().filter(|p| &p.group == name) {
                let style = if p.primary {
                    c.filled()
                } else {
                    c.stroke_width(2)
                };
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((p.re, p.im)) + Circle::new((0, 0), 5, style),
                    ))
                    .map_err(de)?;
            }
        }
        Ok(())
    }
}

/// Marker shape of group `i` (0 circle, 1 square, 2 triangle, 3 cross); after the eight colours
/// repeat, the shapes shift so no two of the first 32 groups look alike.
fn shape_of(i: usize) -> usize {
    (i + i / 8) % 4
}

/// The legend key of group `i`'s marker.
fn marker_key(i: usize) -> LegendKey {
    match shape_of(i) {
        0 => LegendKey::Dot,
        1 => LegendKey::Square,
        2 => LegendKey::Triangle,
        _ => LegendKey::Cross,
    }
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
        if names.len() > PANEL_ABOVE {
            return self.draw_panels(root, &pts, &names);
        }
        let mut legend: Vec<LegendEntry> = names
            .iter()
            .enumerate()
            .map(|(i, n)| LegendEntry {
                name: n.clone(),
                colour: style::series_colour(i),
                key: marker_key(i),
            })
            .collect();
        legend.push(LegendEntry {
            name: "unit circle |λ| = 1".into(),
            colour: style::REFERENCE,
            key: LegendKey::Line,
        });
        let mut titles = self.titles.clone();
        if names.len() > 1 {
            titles.subtitle = "inside the unit circle a disturbance dies out, outside it grows; one marker shape per group, smaller for each later group".into();
        }
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
        // Each group has its own marker shape, each later group's markers smaller, so coincident
        // eigenvalues of different groups stay visible (one inside the other), at their true place.
        for (gi, name) in names.iter().enumerate() {
            let c = style::series_colour(gi);
            let size = (9 - 2 * gi as i32).max(4);
            let group: Vec<&&EigenPoint> = pts.iter().filter(|p| &p.group == name).collect();
            for p in group {
                let at = (p.re, p.im);
                let fill = if p.primary {
                    c.filled()
                } else {
                    c.stroke_width(2)
                };
                let e = EmptyElement::at(at);
                match shape_of(gi) {
                    0 => chart
                        .draw_series(std::iter::once(e + Circle::new((0, 0), size, fill)))
                        .map(|_| ()),
                    1 => chart
                        .draw_series(std::iter::once(
                            e + Rectangle::new([(-size, -size), (size, size)], fill),
                        ))
                        .map(|_| ()),
                    2 => chart
                        .draw_series(std::iter::once(
                            e + TriangleMarker::new((0, 0), size + 1, fill),
                        ))
                        .map(|_| ()),
                    _ => chart
                        .draw_series(std::iter::once(
                            e + Cross::new((0, 0), size, c.stroke_width(3)),
                        ))
                        .map(|_| ()),
                }
                .map_err(de)?;
            }
        }
        Ok(())
    }
}

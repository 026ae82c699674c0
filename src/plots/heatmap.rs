//! The stability map of a two-key sweep: the spectral radius ρ on the grid as coloured cells (cool
//! where ρ < 1, warm where ρ > 1) and the stability boundary ρ = 1 drawn as a contour line
//! (marching squares with linear interpolation between grid points).

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::frame::{builder, de, frame, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// Stability map data.
#[derive(Debug, Clone, PartialEq)]
pub struct StabilityMap {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label (first key).
    pub x_label: String,
    /// Y axis label (second key).
    pub y_label: String,
    /// Grid values of the first key.
    pub xs: Vec<f64>,
    /// Grid values of the second key.
    pub ys: Vec<f64>,
    /// Spectral radius, `radius[iy][ix]`; a non-finite value is drawn grey (no steady state).
    pub radius: Vec<Vec<f64>>,
}

/// The stability map of `x_key` × `y_key`; `radius[iy][ix]` belongs to `(xs[ix], ys[iy])`.
pub fn heatmap(
    x_key: &str,
    y_key: &str,
    xs: Vec<f64>,
    ys: Vec<f64>,
    radius: Vec<Vec<f64>>,
) -> Plot {
    Plot::Heat(StabilityMap {
        titles: Titles {
            title: format!("Stability map: {x_key} × {y_key}"),
            subtitle: "colour: spectral radius ρ of the linearised model; black line: the boundary ρ = 1 (stable inside the cool side)"
                .into(),
        },
        x_label: x_key.into(),
        y_label: y_key.into(),
        xs,
        ys,
        radius,
    })
}

type Segment = ((f64, f64), (f64, f64));

/// Segments of the contour `value = level` of a field given on the grid points `(xs[i], ys[j])`
/// with `grid[j][i]`; cells with a non-finite corner are skipped.
pub fn contour_segments(xs: &[f64], ys: &[f64], grid: &[Vec<f64>], level: f64) -> Vec<Segment> {
    let v = |i: usize, j: usize| {
        grid.get(j)
            .and_then(|r| r.get(i))
            .copied()
            .unwrap_or(f64::NAN)
    };
    let mut out = Vec::new();
    for j in 0..ys.len().saturating_sub(1) {
        for i in 0..xs.len().saturating_sub(1) {
            let corners = [
                (xs[i], ys[j], v(i, j)),
                (xs[i + 1], ys[j], v(i + 1, j)),
                (xs[i + 1], ys[j + 1], v(i + 1, j + 1)),
                (xs[i], ys[j + 1], v(i, j + 1)),
            ];
            if corners.iter().any(|c| !c.2.is_finite()) {
                continue;
            }
            let mut cross = Vec::with_capacity(4);
            for k in 0..4 {
                let a = corners[k];
                let b = corners[(k + 1) % 4];
                let (da, db) = (a.2 - level, b.2 - level);
                if (da < 0.0) != (db < 0.0) {
                    let t = da / (da - db);
                    cross.push((a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1)));
                }
            }
            if cross.len() == 2 {
                out.push((cross[0], cross[1]));
            } else if cross.len() == 4 {
                let centre = corners.iter().map(|c| c.2).sum::<f64>() / 4.0 - level;
                let first_low = corners[0].2 - level < 0.0;
                if (centre < 0.0) == first_low {
                    out.push((cross[0], cross[1]));
                    out.push((cross[2], cross[3]));
                } else {
                    out.push((cross[0], cross[3]));
                    out.push((cross[1], cross[2]));
                }
            }
        }
    }
    out
}

fn lerp(a: RGBColor, b: RGBColor, t: f64) -> RGBColor {
    let t = t.clamp(0.0, 1.0);
    let m = |x: u8, y: u8| (x as f64 + (y as f64 - x as f64) * t).round() as u8;
    RGBColor(m(a.0, b.0), m(a.1, b.1), m(a.2, b.2))
}

const STABLE_DEEP: RGBColor = RGBColor(0x1F, 0x5C, 0x73);
const STABLE_PALE: RGBColor = RGBColor(0xDD, 0xEB, 0xE8);
const UNSTABLE_PALE: RGBColor = RGBColor(0xF5, 0xE3, 0xC8);
const UNSTABLE_DEEP: RGBColor = RGBColor(0x8E, 0x2F, 0x24);
const MISSING: RGBColor = RGBColor(0xB8, 0xB8, 0xB8);

/// The colour of spectral radius `r` on a scale whose warm end is `top` (> 1).
pub(crate) fn radius_colour(r: f64, top: f64) -> RGBColor {
    if !r.is_finite() {
        MISSING
    } else if r < 1.0 {
        lerp(STABLE_DEEP, STABLE_PALE, r.max(0.0))
    } else {
        lerp(UNSTABLE_PALE, UNSTABLE_DEEP, (r - 1.0) / (top - 1.0))
    }
}

/// Cell edges around grid points: midpoints, extended by half a step at both ends.
fn edges(v: &[f64]) -> Vec<f64> {
    match v.len() {
        0 => vec![],
        1 => vec![v[0] - 0.5, v[0] + 0.5],
        n => {
            let mut e = Vec::with_capacity(n + 1);
            e.push(v[0] - (v[1] - v[0]) / 2.0);
            for w in v.windows(2) {
                e.push((w[0] + w[1]) / 2.0);
            }
            e.push(v[n - 1] + (v[n - 1] - v[n - 2]) / 2.0);
            e
        }
    }
}

impl StabilityMap {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let finite: Vec<f64> = self
            .radius
            .iter()
            .flatten()
            .copied()
            .filter(|r| r.is_finite())
            .collect();
        if self.xs.is_empty() || self.ys.is_empty() || finite.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let top = finite.iter().copied().fold(1.5f64, f64::max).min(3.0);
        let mut legend = vec![
            LegendEntry {
                name: "stable (ρ < 1)".into(),
                colour: STABLE_DEEP,
                key: LegendKey::Block,
            },
            LegendEntry {
                name: "unstable (ρ > 1)".into(),
                colour: UNSTABLE_DEEP,
                key: LegendKey::Block,
            },
            LegendEntry {
                name: "boundary ρ = 1".into(),
                colour: style::INK,
                key: LegendKey::Line,
            },
        ];
        if self.radius.iter().flatten().any(|r| !r.is_finite()) {
            legend.push(LegendEntry {
                name: "no steady state".into(),
                colour: MISSING,
                key: LegendKey::Block,
            });
        }
        let body = frame(root, &self.titles, &legend)?;
        let (bw, _) = body.dim_in_pixel();
        let (left, bar) = body.split_horizontally(bw.saturating_sub(120));
        let ex = edges(&self.xs);
        let ey = edges(&self.ys);
        let (x0, x1) = (ex[0].min(ex[ex.len() - 1]), ex[0].max(ex[ex.len() - 1]));
        let (y0, y1) = (ey[0].min(ey[ey.len() - 1]), ey[0].max(ey[ey.len() - 1]));
        let mut chart = builder(&left)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        let mut cells = Vec::new();
        for (j, row) in self.radius.iter().enumerate().take(self.ys.len()) {
            for (i, &r) in row.iter().enumerate().take(self.xs.len()) {
                let c = radius_colour(r, top);
                cells.push(Rectangle::new(
                    [(ex[i], ey[j]), (ex[i + 1], ey[j + 1])],
                    c.filled(),
                ));
            }
        }
        chart.draw_series(cells).map_err(de)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc(&self.x_label)
            .y_desc(&self.y_label)
            .axis_desc_style(style::text(15, style::INK))
            .label_style(style::text(13, style::MUTED))
            .axis_style(style::MUTED)
            .x_labels(10)
            .y_labels(8)
            .x_label_formatter(&|v| style::tick(*v))
            .y_label_formatter(&|v| style::tick(*v))
            .draw()
            .map_err(de)?;
        let segs = contour_segments(&self.xs, &self.ys, &self.radius, 1.0);
        chart
            .draw_series(
                segs.into_iter()
                    .map(|(a, b)| PathElement::new(vec![a, b], style::INK.stroke_width(3))),
            )
            .map_err(de)?;
        draw_colour_bar(&bar, top)
    }
}

fn draw_colour_bar<DB: DrawingBackend>(
    bar: &DrawingArea<DB, Shift>,
    top: f64,
) -> Result<(), PlotError> {
    let (_, h) = bar.dim_in_pixel();
    let (y_top, y_bot) = (30i32, h as i32 - 60);
    let span = (y_bot - y_top).max(10);
    let (x0, x1) = (18i32, 42i32);
    bar.draw(&Text::new("ρ", (x0, 8), style::bold(15, style::INK)))
        .map_err(de)?;
    for k in 0..span {
        let r = top * (1.0 - k as f64 / span as f64);
        let c = radius_colour(r, top);
        bar.draw(&Rectangle::new(
            [(x0, y_top + k), (x1, y_top + k + 1)],
            c.filled(),
        ))
        .map_err(de)?;
    }
    bar.draw(&Rectangle::new(
        [(x0, y_top), (x1, y_bot)],
        style::MUTED.stroke_width(1),
    ))
    .map_err(de)?;
    let mut ticks = vec![0.0, 0.5, 1.0];
    let mut t = 1.5;
    while t <= top + 1e-9 {
        ticks.push(t);
        t += 0.5;
    }
    for v in ticks {
        let y = y_bot - ((v / top) * span as f64).round() as i32;
        let (w, c) = if (v - 1.0).abs() < 1e-12 {
            (3, style::INK)
        } else {
            (1, style::MUTED)
        };
        bar.draw(&PathElement::new(
            vec![(x0 - 4, y), (x1 + 4, y)],
            c.stroke_width(w),
        ))
        .map_err(de)?;
        let label = if (v - top).abs() < 1e-9 && top >= 3.0 {
            "≥ 3".to_string()
        } else {
            style::tick(v)
        };
        bar.draw(&Text::new(
            label,
            (x1 + 8, y),
            style::text(13, style::INK).pos(Pos::new(HPos::Left, VPos::Center)),
        ))
        .map_err(de)?;
    }
    Ok(())
}

//! The cost–risk frontier: every design as a point (risk across, cost up), the non-dominated ones
//! joined by a line and labelled with their settings.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::frame::{builder, de, frame, mesh, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};

/// One design on the frontier plot.
#[derive(Debug, Clone, PartialEq)]
pub struct FrontierPoint {
    /// The risk indicator (across).
    pub risk: f64,
    /// The cost indicator (up).
    pub cost: f64,
    /// On the frontier (drawn filled, joined and labelled).
    pub chosen: bool,
    /// The label (the design's settings), drawn for frontier designs.
    pub label: String,
}

/// Frontier plot data.
#[derive(Debug, Clone, PartialEq)]
pub struct FrontierPlot {
    /// Title and subtitle.
    pub titles: Titles,
    /// Axis label across (the risk indicator).
    pub x_label: String,
    /// Axis label up (the cost indicator).
    pub y_label: String,
    /// Every design.
    pub points: Vec<FrontierPoint>,
}

/// Most frontier labels drawn (beyond, every k-th so they stay readable).
pub const MAX_LABELS: usize = 12;

/// The frontier of `points` with risk `risk` across and cost `cost` up.
pub fn frontier(risk: &str, cost: &str, points: Vec<FrontierPoint>) -> Plot {
    Plot::Frontier(FrontierPlot {
        titles: Titles {
            title: format!("Cost–risk frontier: {risk} against {cost}"),
            subtitle: "every design a point; filled and joined: no other design is lower on both"
                .into(),
        },
        x_label: risk.into(),
        y_label: cost.into(),
        points,
    })
}

impl FrontierPlot {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let pts: Vec<&FrontierPoint> = self
            .points
            .iter()
            .filter(|p| p.risk.is_finite() && p.cost.is_finite())
            .collect();
        if pts.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let legend = vec![
            LegendEntry {
                name: "design".into(),
                colour: style::MUTED,
                key: LegendKey::Dot,
            },
            LegendEntry {
                name: "frontier design".into(),
                colour: style::series_colour(0),
                key: LegendKey::Line,
            },
        ];
        let body = frame(root, &self.titles, &legend)?;
        let (x0, x1) = style::padded_range(pts.iter().map(|p| p.risk), 0.06);
        let (y0, y1) = style::padded_range(pts.iter().map(|p| p.cost), 0.08);
        let mut chart = builder(&body)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, &self.x_label, &self.y_label)?;
        let c = style::series_colour(0);
        chart
            .draw_series(
                pts.iter()
                    .filter(|p| !p.chosen)
                    .map(|p| Circle::new((p.risk, p.cost), 4, style::MUTED.stroke_width(1))),
            )
            .map_err(de)?;
        let mut front: Vec<&&FrontierPoint> = pts.iter().filter(|p| p.chosen).collect();
        front.sort_by(|a, b| a.risk.total_cmp(&b.risk));
        chart
            .draw_series(LineSeries::new(
                front.iter().map(|p| (p.risk, p.cost)),
                c.stroke_width(2),
            ))
            .map_err(de)?;
        chart
            .draw_series(
                front
                    .iter()
                    .map(|p| Circle::new((p.risk, p.cost), 6, c.filled())),
            )
            .map_err(de)?;
        // labels beside their points, on the inner side of the chart so none runs off it, moved up
        // or down past labels already placed (boxes estimated at 7 px a character, 14 px high)
        let every = front.len().div_ceil(MAX_LABELS).max(1);
        let mid = 0.5 * (x0 + x1);
        let mut placed: Vec<(i32, i32, i32, i32)> = Vec::new();
        for p in front.iter().step_by(every) {
            use plotters::style::text_anchor::{HPos, Pos, VPos};
            let (px, py) = chart.backend_coord(&(p.risk, p.cost));
            let w = 7 * p.label.chars().count() as i32;
            let right = p.risk > mid;
            let (dx, h) = if right {
                (-10, HPos::Right)
            } else {
                (10, HPos::Left)
            };
            let left_edge = if right { px + dx - w } else { px + dx };
            let boxed = |dy: i32| (left_edge, py + dy - 14, left_edge + w, py + dy);
            let clash = |b: (i32, i32, i32, i32)| {
                placed
                    .iter()
                    .any(|q| b.0 < q.2 && q.0 < b.2 && b.1 < q.3 && q.1 < b.3)
            };
            let dy = [-4, 18, -20, 34, -36, 50, -52]
                .into_iter()
                .find(|&dy| !clash(boxed(dy)))
                .unwrap_or(-4);
            placed.push(boxed(dy));
            let font = style::text(12, style::INK).pos(Pos::new(h, VPos::Bottom));
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at((p.risk, p.cost)) + Text::new(p.label.clone(), (dx, dy), font),
                ))
                .map_err(de)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn draws_text_and_refuses_nothing_to_draw() {
        let pts = vec![
            FrontierPoint {
                risk: 0.1,
                cost: 50.0,
                chosen: true,
                label: "capacity 100".into(),
            },
            FrontierPoint {
                risk: 0.2,
                cost: 60.0,
                chosen: false,
                label: "capacity 20".into(),
            },
        ];
        let svg = frontier("stockout_any_share", "fiscal_cost_pv", pts)
            .svg_string()
            .unwrap();
        assert!(svg.contains("capacity 100") && svg.contains("Cost–risk frontier"));
        assert!(
            !svg.contains("capacity 20"),
            "only frontier designs are labelled"
        );
        let none = vec![FrontierPoint {
            risk: f64::NAN,
            cost: 1.0,
            chosen: true,
            label: String::new(),
        }];
        assert!(matches!(
            frontier("r", "c", none).svg_string(),
            Err(PlotError::Empty(_))
        ));
    }
}

//! The cobweb diagram: demand and supply in the (quantity, price) plane, and the simulated path as
//! the staircase between them. Each season goes up or down the vertical from the supply curve
//! (planted on the expected price) to the price the harvest fetched, then along the horizontal to
//! the next planting.

use plotters::coord::Shift;
use plotters::prelude::*;

use super::frame::{builder, de, frame, mesh, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{Plot, PlotError};
use crate::curves::Curve;

/// One season of the path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CobwebStep {
    /// Harvest (quantity units).
    pub quantity: f64,
    /// The price farmers planted on.
    pub expected: f64,
    /// The market price the season cleared at.
    pub price: f64,
}

/// Cobweb diagram data.
#[derive(Debug, Clone, PartialEq)]
pub struct Cobweb {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label (quantity with unit).
    pub quantity_label: String,
    /// Y axis label (price with unit).
    pub price_label: String,
    /// Demand curve, Q = D(P).
    pub demand: Curve,
    /// Supply curve, Q = S(P^e).
    pub supply: Curve,
    /// The path, season by season.
    pub steps: Vec<CobwebStep>,
    /// The steady state (quantity, price), marked when given.
    pub steady: Option<(f64, f64)>,
}

/// A cobweb diagram. `quantity_unit` and `price_unit` come from the market file.
pub fn cobweb(
    title: &str,
    demand: &Curve,
    supply: &Curve,
    steps: Vec<CobwebStep>,
    steady: Option<(f64, f64)>,
    quantity_unit: &str,
    price_unit: &str,
) -> Plot {
    Plot::Cobweb(Cobweb {
        titles: Titles {
            title: title.into(),
            subtitle: "each season: up or down from supply (planted on the expected price) to the price paid, across to the next planting"
                .into(),
        },
        quantity_label: format!("quantity ({quantity_unit})"),
        price_label: format!("price ({price_unit})"),
        demand: *demand,
        supply: *supply,
        steps,
        steady,
    })
}

/// The staircase as a polyline: (q_t, e_t) → (q_t, p_t) → (q_t, e_{t+1}) → (q_{t+1}, e_{t+1}) → …
pub(crate) fn staircase(steps: &[CobwebStep]) -> Vec<(f64, f64)> {
    let mut pts = Vec::with_capacity(steps.len() * 3);
    for (i, s) in steps.iter().enumerate() {
        pts.push((s.quantity, s.expected));
        pts.push((s.quantity, s.price));
        if let Some(next) = steps.get(i + 1) {
            pts.push((s.quantity, next.expected));
        }
    }
    pts
}

/// Samples `price = curve⁻¹(q)` over `[q0, q1]`, keeping only the parts inside `[p0, p1]`.
fn curve_runs(curve: &Curve, q0: f64, q1: f64, p0: f64, p1: f64) -> Vec<Vec<(f64, f64)>> {
    let n = 120;
    let mut runs = Vec::new();
    let mut cur: Vec<(f64, f64)> = Vec::new();
    for k in 0..=n {
        let q = q0 + (q1 - q0) * k as f64 / n as f64;
        let p = curve.price_at(q);
        if p.is_finite() && p >= p0 && p <= p1 {
            cur.push((q, p));
        } else if !cur.is_empty() {
            runs.push(std::mem::take(&mut cur));
        }
    }
    if !cur.is_empty() {
        runs.push(cur);
    }
    runs
}

impl Cobweb {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let stair: Vec<(f64, f64)> = staircase(&self.steps)
            .into_iter()
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        if stair.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let path_c = style::series_colour(0);
        let demand_c = style::series_colour(2);
        let supply_c = style::series_colour(3);
        let mut legend = vec![
            LegendEntry {
                name: "demand D(P)".into(),
                colour: demand_c,
                key: LegendKey::Line,
            },
            LegendEntry {
                name: "supply S(Pᵉ)".into(),
                colour: supply_c,
                key: LegendKey::Line,
            },
            LegendEntry {
                name: "simulated path".into(),
                colour: path_c,
                key: LegendKey::Line,
            },
        ];
        if self.steady.is_some() {
            legend.push(LegendEntry {
                name: "steady state".into(),
                colour: style::INK,
                key: LegendKey::Dot,
            });
        }
        let body = frame(root, &self.titles, &legend)?;
        let sq = self.steady.map(|s| s.0);
        let sp = self.steady.map(|s| s.1);
        let (q0, q1) = style::padded_range(stair.iter().map(|p| p.0).chain(sq), 0.15);
        let (p0, p1) = style::padded_range(stair.iter().map(|p| p.1).chain(sp), 0.15);
        let (q0, p0) = (q0.max(0.0), p0.max(0.0));
        let mut chart = builder(&body)
            .build_cartesian_2d(q0..q1, p0..p1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, &self.quantity_label, &self.price_label)?;
        for (curve, c) in [(&self.demand, demand_c), (&self.supply, supply_c)] {
            for run in curve_runs(curve, q0, q1, p0, p1) {
                chart
                    .draw_series(LineSeries::new(run, c.stroke_width(3)))
                    .map_err(de)?;
            }
        }
        // The path: fades from light (first season) to full colour (last).
        let n = stair.len().max(2) as f64;
        for (i, w) in stair.windows(2).enumerate() {
            let alpha = 0.45 + 0.55 * (i as f64 / (n - 2.0).max(1.0));
            chart
                .draw_series(LineSeries::new(
                    vec![w[0], w[1]],
                    path_c.mix(alpha).stroke_width(2),
                ))
                .map_err(de)?;
        }
        if let Some(first) = stair.first() {
            chart
                .draw_series(std::iter::once(Circle::new(*first, 5, path_c.filled())))
                .map_err(de)?;
            chart
                .draw_series(std::iter::once(
                    EmptyElement::at(*first)
                        + Text::new(
                            "start",
                            (8, -6),
                            style::bold(13, style::INK).pos(
                                plotters::style::text_anchor::Pos::new(
                                    plotters::style::text_anchor::HPos::Left,
                                    plotters::style::text_anchor::VPos::Bottom,
                                ),
                            ),
                        ),
                ))
                .map_err(de)?;
        }
        if let Some(s) = self.steady {
            chart
                .draw_series(std::iter::once(Circle::new(s, 6, style::INK.filled())))
                .map_err(de)?;
        }
        Ok(())
    }
}

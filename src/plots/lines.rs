//! Paths over periods: price and harvest across policies, and fiscal cost (bars for one policy,
//! lines for several).

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::RGBColor;

use super::frame::{builder, de, frame, mesh, panel_mesh, Titles};
use super::style::{self, LegendEntry, LegendKey};
use super::{finite_runs, Plot, PlotError};

/// One named line.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Legend name (a policy file's name).
    pub name: String,
    /// (x, y) points; a non-finite value breaks the line.
    pub points: Vec<(f64, f64)>,
}

impl Series {
    /// A series over periods 1, 2, … from one value per period.
    pub fn periods(name: impl Into<String>, values: &[f64]) -> Series {
        Series {
            name: name.into(),
            points: values
                .iter()
                .enumerate()
                .map(|(i, &v)| ((i + 1) as f64, v))
                .collect(),
        }
    }
}

/// A labelled horizontal reference line (steady state, floor price).
#[derive(Debug, Clone, PartialEq)]
pub struct Reference {
    /// Label drawn at the right end of the line.
    pub label: String,
    /// Height of the line.
    pub value: f64,
}

/// Lines over periods.
#[derive(Debug, Clone, PartialEq)]
pub struct LineChart {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label with unit.
    pub x_label: String,
    /// Y axis label with unit.
    pub y_label: String,
    /// The lines, one per policy.
    pub series: Vec<Series>,
    /// Dashed horizontal reference lines.
    pub references: Vec<Reference>,
    /// Keep zero inside the y range (for costs).
    pub include_zero: bool,
    /// Dashed lines that belong to one series (its floor, its band), drawn in its colour:
    /// (series index, line).
    pub series_references: Vec<(usize, Reference)>,
    /// The first series is the market left alone: with more than [`OVERLAY_MAX`] series the chart
    /// becomes small multiples, one panel per other series with the first in grey behind it.
    pub reference_first: bool,
    /// Palette index of each series (keeps a policy's colour the same across figures when some
    /// series are left out); empty or short: the series' position.
    pub palette: Vec<usize>,
}

/// Most lines overlaid in one chart; beyond, one panel per policy (small multiples).
pub const OVERLAY_MAX: usize = 4;

impl LineChart {
    /// The colour of series `i`.
    pub fn colour(&self, i: usize) -> RGBColor {
        style::series_colour(self.palette.get(i).copied().unwrap_or(i))
    }

    /// True when drawn as small multiples.
    pub fn is_panelled(&self) -> bool {
        self.series.len() > OVERLAY_MAX
    }

    /// The series that get a panel each: all but the first when it is the reference.
    fn panel_series(&self) -> usize {
        if self.reference_first {
            1
        } else {
            0
        }
    }

    /// Panels (columns, rows) of the small multiples: one per series after the first.
    pub fn panel_grid(&self) -> (usize, usize) {
        let n = (self.series.len() - self.panel_series().min(self.series.len())).max(1);
        let cols = if n <= 4 { 2 } else { 3 };
        (cols, n.div_ceil(cols))
    }

    /// Pixel height: the standard height, or 250 px per row of panels.
    pub fn height(&self) -> u32 {
        if self.is_panelled() {
            let (_, rows) = self.panel_grid();
            style::TITLE_BLOCK + 2 * style::LEGEND_ROW + 30 + rows as u32 * 250
        } else {
            style::HEIGHT
        }
    }
}

/// Lines overlaid across policies (price or harvest paths).
pub fn paths(title: &str, x_label: &str, y_label: &str, series: Vec<Series>) -> Plot {
    Plot::Lines(LineChart {
        titles: Titles {
            title: title.into(),
            subtitle: String::new(),
        },
        x_label: x_label.into(),
        y_label: y_label.into(),
        series,
        references: Vec::new(),
        include_zero: false,
        series_references: Vec::new(),
        reference_first: true,
        palette: Vec::new(),
    })
}

/// Bars over periods for one series.
#[derive(Debug, Clone, PartialEq)]
pub struct BarChart {
    /// Title and subtitle.
    pub titles: Titles,
    /// X axis label.
    pub x_label: String,
    /// Y axis label with unit.
    pub y_label: String,
    /// The series (its name goes in the legend).
    pub series: Series,
}

/// Fiscal cost over time: bars when there is one policy, lines with a zero line for several.
pub fn fiscal(title: &str, x_label: &str, y_label: &str, series: Vec<Series>) -> Plot {
    let titles = Titles {
        title: title.into(),
        subtitle:
            "cost to the treasury per period; below zero the agency earned more than it spent"
                .into(),
    };
    if series.len() == 1 {
        let s = series
            .into_iter()
            .next()
            .unwrap_or_else(|| Series::periods("", &[]));
        Plot::Bars(BarChart {
            titles,
            x_label: x_label.into(),
            y_label: y_label.into(),
            series: s,
        })
    } else {
        Plot::Lines(LineChart {
            titles,
            x_label: x_label.into(),
            y_label: y_label.into(),
            series,
            references: Vec::new(),
            include_zero: true,
            series_references: Vec::new(),
            reference_first: false,
            palette: Vec::new(),
        })
    }
}

fn x_range(series: &[Series]) -> (f64, f64) {
    let (lo, hi) = style::padded_range(
        series.iter().flat_map(|s| s.points.iter().map(|p| p.0)),
        0.0,
    );
    (lo, hi)
}

impl LineChart {
    /// The number of points of the longest series (what the line widths and markers depend on).
    fn longest_series(&self) -> usize {
        self.series
            .iter()
            .map(|s| s.points.len())
            .max()
            .unwrap_or(0)
    }

    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let ys = self
            .series
            .iter()
            .flat_map(|s| s.points.iter().map(|p| p.1));
        if !ys.clone().any(f64::is_finite) {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let own = self.series_references.iter().map(|(_, r)| r.value);
        if self.is_panelled() {
            let extra = self.references.iter().map(|r| r.value).chain(own);
            let zero = if self.include_zero { Some(0.0) } else { None };
            let (y0, y1) = style::padded_range(ys.chain(extra).chain(zero), 0.06);
            return self.draw_panels(root, y0, y1);
        }
        let mut legend: Vec<LegendEntry> = self
            .series
            .iter()
            .enumerate()
            .map(|(i, s)| LegendEntry {
                name: s.name.clone(),
                colour: self.colour(i),
                key: LegendKey::Line,
            })
            .collect();
        for r in &self.references {
            legend.push(LegendEntry {
                name: r.label.clone(),
                colour: style::REFERENCE,
                key: LegendKey::Dashed,
            });
        }
        let mut titles = self.titles.clone();
        if !self.series_references.is_empty() {
            let lines: Vec<String> = self
                .series_references
                .iter()
                .map(|(i, r)| match self.series.get(*i) {
                    Some(s) if self.series.len() > 1 => format!("{}: {}", s.name, r.label),
                    _ => r.label.clone(),
                })
                .collect();
            if titles.subtitle.is_empty() {
                titles.subtitle = format!("dashed: {}", lines.join("; "));
            }
        }
        let body = frame(root, &titles, &legend)?;
        let extra = self.references.iter().map(|r| r.value).chain(own);
        let zero = if self.include_zero { Some(0.0) } else { None };
        let (y0, y1) = style::padded_range(ys.chain(extra).chain(zero), 0.06);
        let (x0, x1) = x_range(&self.series);
        let mut chart = builder(&body)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, &self.x_label, &self.y_label)?;
        self.draw_levels(&mut chart, (x0, x1), None)?;
        let many_points = self.longest_series() > 60;
        // Many policies: thinner lines and no markers, so the overlaid paths stay apart.
        let crowded = self.series.len() > 4;
        // Dense series are drawn 1 px wide: wide strokes of a zig-zag get spiky joins in the bitmap
        // backend that run far outside the plotting area.
        let dense = self.longest_series() > 200;
        let width = if dense {
            1
        } else if crowded {
            2
        } else {
            3
        };
        for (i, s) in self.series.iter().enumerate() {
            let c = self.colour(i);
            for run in finite_runs(&s.points) {
                chart
                    .draw_series(LineSeries::new(run.clone(), c.stroke_width(width)))
                    .map_err(de)?;
                if !many_points && !crowded {
                    chart
                        .draw_series(run.iter().map(|&p| Circle::new(p, 3, c.filled())))
                        .map_err(de)?;
                }
            }
        }
        Ok(())
    }
}

impl LineChart {
    /// The horizontal level lines: zero (when asked), the shared references, and the series' own
    /// levels — every series' on a single chart, only series `only`'s on its panel.
    fn draw_levels<DB: DrawingBackend>(
        &self,
        chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
        (x0, x1): (f64, f64),
        only: Option<usize>,
    ) -> Result<(), PlotError> {
        if self.include_zero {
            chart
                .draw_series(LineSeries::new(
                    vec![(x0, 0.0), (x1, 0.0)],
                    style::MUTED.stroke_width(1),
                ))
                .map_err(de)?;
        }
        for r in &self.references {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(x0, r.value), (x1, r.value)],
                    8,
                    6,
                    style::REFERENCE.stroke_width(1),
                ))
                .map_err(de)?;
        }
        let own = self
            .series_references
            .iter()
            .filter(|(j, _)| only.is_none_or(|k| *j == k));
        for (i, r) in own {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(x0, r.value), (x1, r.value)],
                    10,
                    6,
                    self.colour(*i).stroke_width(2),
                ))
                .map_err(de)?;
        }
        Ok(())
    }

    /// Small multiples: one panel per series after the first, shared axes, the first series (the
    /// market left alone) in grey in each, and the series' own dashed lines.
    fn draw_panels<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        y0: f64,
        y1: f64,
    ) -> Result<(), PlotError> {
        let (cols, rows) = self.panel_grid();
        let grey = style::MUTED;
        let mut legend = Vec::new();
        if let Some(first) = self.series.first().filter(|_| self.reference_first) {
            legend.push(LegendEntry {
                name: format!("{} (grey, in every panel)", first.name),
                colour: grey,
                key: LegendKey::Line,
            });
        }
        for r in &self.references {
            legend.push(LegendEntry {
                name: r.label.clone(),
                colour: style::REFERENCE,
                key: LegendKey::Dashed,
            });
        }
        if !self.series_references.is_empty() {
            legend.push(LegendEntry {
                name: "the policy's floor and band".into(),
                colour: style::INK,
                key: LegendKey::Dashed,
            });
        }
        let mut titles = self.titles.clone();
        // panels have no axis titles: the y quantity and unit go into the subtitle
        titles.subtitle = if titles.subtitle.is_empty() {
            format!("y: {}", self.y_label)
        } else {
            format!("y: {}; {}", self.y_label, titles.subtitle)
        };
        let body = frame(root, &titles, &legend)?;
        let (x0, x1) = x_range(&self.series);
        let panels = body.split_evenly((rows, cols));
        let skip = self.panel_series();
        let dense = self.longest_series() > 200;
        let width = if dense { 1 } else { 2 };
        for (k, (s, area)) in self.series.iter().skip(skip).zip(panels.iter()).enumerate() {
            let i = k + skip;
            let c = self.colour(i);
            let mut chart = ChartBuilder::on(area)
                .margin(6)
                .margin_right(14)
                .caption(s.name.clone(), style::bold(14, style::INK))
                .x_label_area_size(22)
                .y_label_area_size(52)
                .build_cartesian_2d(x0..x1, y0..y1)
                .map_err(de)?;
            chart.plotting_area().fill(&style::FIELD).map_err(de)?;
            panel_mesh(&mut chart)?;
            self.draw_levels(&mut chart, (x0, x1), Some(i))?;
            if let Some(first) = self.series.first().filter(|_| self.reference_first) {
                for run in finite_runs(&first.points) {
                    chart
                        .draw_series(LineSeries::new(run, grey.mix(0.7).stroke_width(width)))
                        .map_err(de)?;
                }
            }
            for run in finite_runs(&s.points) {
                chart
                    .draw_series(LineSeries::new(run, c.stroke_width(width)))
                    .map_err(de)?;
            }
        }
        Ok(())
    }
}

impl BarChart {
    pub(crate) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError> {
        let pts: Vec<(f64, f64)> = self
            .series
            .points
            .iter()
            .copied()
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        if pts.is_empty() {
            return Err(PlotError::Empty(self.titles.title.clone()));
        }
        let cost = style::series_colour(2);
        let gain = style::series_colour(3);
        let mut legend = vec![LegendEntry {
            name: format!("{}: cost", self.series.name),
            colour: cost,
            key: LegendKey::Bar,
        }];
        if pts.iter().any(|p| p.1 < 0.0) {
            legend.push(LegendEntry {
                name: "receipt (sales above cost)".into(),
                colour: gain,
                key: LegendKey::Bar,
            });
        }
        let body = frame(root, &self.titles, &legend)?;
        let (y0, y1) = style::padded_range(pts.iter().map(|p| p.1).chain(Some(0.0)), 0.06);
        let (x0, x1) = style::padded_range(pts.iter().map(|p| p.0), 0.0);
        let (x0, x1) = (x0 - 0.6, x1 + 0.6);
        let mut chart = builder(&body)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(de)?;
        chart.plotting_area().fill(&style::FIELD).map_err(de)?;
        mesh(&mut chart, &self.x_label, &self.y_label)?;
        let half = if pts.len() > 1 {
            let step = (pts[pts.len() - 1].0 - pts[0].0).abs() / (pts.len() - 1) as f64;
            (step * 0.38).max(1e-9)
        } else {
            0.4
        };
        chart
            .draw_series(pts.iter().map(|&(x, y)| {
                let c = if y >= 0.0 { cost } else { gain };
                Rectangle::new([(x - half, 0.0), (x + half, y)], c.filled())
            }))
            .map_err(de)?;
        chart
            .draw_series(LineSeries::new(
                vec![(x0, 0.0), (x1, 0.0)],
                style::INK.stroke_width(1),
            ))
            .map_err(de)?;
        Ok(())
    }
}

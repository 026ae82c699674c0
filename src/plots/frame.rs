//! The common frame of a figure: paper background, a left-aligned bold title with a muted subtitle,
//! the chart in the middle, and the legend strip (policy names) below it, never over the data.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;

use super::style::{self, LegendEntry, LegendKey};
use super::PlotError;

/// Converts any drawing error into a [`PlotError`].
pub fn de<E: std::error::Error + Send + Sync>(e: DrawingAreaErrorKind<E>) -> PlotError {
    PlotError::Draw(e.to_string())
}

/// Title texts of a figure.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Titles {
    /// Bold title.
    pub title: String,
    /// One muted line under the title (what is shown, units, source); may be empty.
    pub subtitle: String,
}

/// Draws the background, titles and legend; returns the area left for the chart.
pub fn frame<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    titles: &Titles,
    legend: &[LegendEntry],
) -> Result<DrawingArea<DB, Shift>, PlotError> {
    root.fill(&style::PAPER).map_err(de)?;
    let (w, h) = root.dim_in_pixel();
    root.draw(&Text::new(
        titles.title.clone(),
        (24, 14),
        style::bold(22, style::INK),
    ))
    .map_err(de)?;
    if !titles.subtitle.is_empty() {
        // a long subtitle gets a smaller font (down to 10 px) rather than running off the figure
        let mut size = 14;
        while size > 10 {
            let fits = root
                .estimate_text_size(&titles.subtitle, &style::text(size, style::MUTED))
                .map_or(true, |(tw, _)| tw + 48 <= w);
            if fits {
                break;
            }
            size -= 1;
        }
        root.draw(&Text::new(
            titles.subtitle.clone(),
            (24, 42),
            style::text(size, style::MUTED),
        ))
        .map_err(de)?;
    }
    let label_style = style::text(15, style::INK);
    let measure = |s: &str| {
        root.estimate_text_size(s, &label_style)
            .map(|(w, _)| w)
            .unwrap_or(s.chars().count() as u32 * 9)
    };
    let rows = style::legend_rows(legend, w, &measure);
    let legend_h = style::legend_height(rows.len());
    let body_h = h.saturating_sub(style::TITLE_BLOCK + legend_h).max(50);
    let (_, rest) = root.split_vertically(style::TITLE_BLOCK);
    let (body, strip) = rest.split_vertically(body_h);
    draw_legend(&strip, &rows)?;
    Ok(body)
}

fn draw_legend<DB: DrawingBackend>(
    strip: &DrawingArea<DB, Shift>,
    rows: &[Vec<(LegendEntry, u32)>],
) -> Result<(), PlotError> {
    for (row_i, row) in rows.iter().enumerate() {
        let y = 8 + row_i as i32 * style::LEGEND_ROW as i32 + style::LEGEND_ROW as i32 / 2;
        let mut x = style::LEGEND_LEFT;
        for (e, advance) in row {
            let c = e.colour;
            match e.key {
                LegendKey::Line => {
                    strip
                        .draw(&PathElement::new(
                            vec![(x, y), (x + 28, y)],
                            c.stroke_width(3),
                        ))
                        .map_err(de)?;
                }
                LegendKey::Dashed => {
                    for k in 0..3 {
                        let x0 = x + k * 11;
                        strip
                            .draw(&PathElement::new(
                                vec![(x0, y), (x0 + 7, y)],
                                c.stroke_width(3),
                            ))
                            .map_err(de)?;
                    }
                }
                LegendKey::Block => {
                    strip
                        .draw(&Rectangle::new(
                            [(x, y - 7), (x + 28, y + 7)],
                            c.mix(0.35).filled(),
                        ))
                        .map_err(de)?;
                    strip
                        .draw(&PathElement::new(
                            vec![(x, y), (x + 28, y)],
                            c.stroke_width(2),
                        ))
                        .map_err(de)?;
                }
                LegendKey::Bar => {
                    strip
                        .draw(&Rectangle::new(
                            [(x + 4, y - 8), (x + 24, y + 8)],
                            c.filled(),
                        ))
                        .map_err(de)?;
                }
                LegendKey::Dot => {
                    strip
                        .draw(&Circle::new((x + 14, y), 5, c.filled()))
                        .map_err(de)?;
                }
                LegendKey::Square => {
                    strip
                        .draw(&Rectangle::new(
                            [(x + 9, y - 5), (x + 19, y + 5)],
                            c.filled(),
                        ))
                        .map_err(de)?;
                }
                LegendKey::Triangle => {
                    strip
                        .draw(&TriangleMarker::new((x + 14, y), 6, c.filled()))
                        .map_err(de)?;
                }
                LegendKey::Cross => {
                    strip
                        .draw(&Cross::new((x + 14, y), 5, c.stroke_width(2)))
                        .map_err(de)?;
                }
            }
            let label = Text::new(
                e.name.clone(),
                (x + 36, y),
                style::text(15, style::INK).pos(plotters::style::text_anchor::Pos::new(
                    plotters::style::text_anchor::HPos::Left,
                    plotters::style::text_anchor::VPos::Center,
                )),
            );
            strip.draw(&label).map_err(de)?;
            x += *advance as i32;
        }
    }
    Ok(())
}

/// Configures and draws the mesh of a 2-D cartesian chart in the house style.
pub fn mesh<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    x_label: &str,
    y_label: &str,
) -> Result<(), PlotError> {
    mesh_with(chart, x_label, y_label, &|v| style::tick(*v))
}

/// [`mesh`] with its own y tick labels (e.g. a log axis drawn on log10 values).
pub fn mesh_with<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    x_label: &str,
    y_label: &str,
    y_ticks: &dyn Fn(&f64) -> String,
) -> Result<(), PlotError> {
    chart
        .configure_mesh()
        .x_desc(x_label)
        .y_desc(y_label)
        .axis_desc_style(style::text(15, style::INK))
        .label_style(style::text(13, style::MUTED))
        .light_line_style(style::GRID_LIGHT)
        .bold_line_style(style::GRID_BOLD)
        .axis_style(style::MUTED)
        .x_labels(10)
        .y_labels(8)
        .x_max_light_lines(1)
        .y_max_light_lines(1)
        .x_label_formatter(&|v| style::tick(*v))
        .y_label_formatter(y_ticks)
        .draw()
        .map_err(de)
}

/// The grid and tick labels of one small-multiple panel (no axis titles: the figure's subtitle
/// names the axes).
pub fn panel_mesh<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
) -> Result<(), PlotError> {
    chart
        .configure_mesh()
        .label_style(style::text(11, style::MUTED))
        .light_line_style(style::GRID_LIGHT)
        .bold_line_style(style::GRID_BOLD)
        .axis_style(style::MUTED)
        .x_labels(6)
        .y_labels(5)
        .x_max_light_lines(1)
        .y_max_light_lines(1)
        .x_label_formatter(&|v| style::tick(*v))
        .y_label_formatter(&|v| style::tick(*v))
        .draw()
        .map_err(de)
}

/// A chart builder on `area` with the house margins and label areas.
pub fn builder<'a, 'b, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
) -> ChartBuilder<'a, 'b, DB> {
    let mut b = ChartBuilder::on(area);
    b.margin_left(16)
        .margin_right(28)
        .margin_top(8)
        .margin_bottom(6)
        .x_label_area_size(48)
        .y_label_area_size(74);
    b
}

//! Figures for briefings: every plot takes plain data (numbers, names, curves), never the command
//! line, and renders to both SVG (a string, inlined by the HTML report) and PNG (a file).
//!
//! Text is drawn with DejaVu Sans, embedded in the binary through the `dejavu` crate and registered
//! with plotters once per process, so figures render the same on a machine with no font packages.
//!
//! ```no_run
//! use furrow::plots::{paths, Series};
//! let p = paths("Price paths", "period", "price (crowns per t)",
//!               vec![Series::periods("no intervention", &[240.0, 180.0, 225.0])]);
//! p.write(std::path::Path::new("plots"), "price").unwrap();
//! ```

mod bifurcation;
mod cobweb;
mod eigen;
mod fan;
pub mod frame;
mod frontier;
mod groups;
mod heatmap;
mod lines;
pub mod style;
mod tornado;

use std::path::{Path, PathBuf};

use plotters::coord::Shift;
use plotters::prelude::*;

pub use bifurcation::{bifurcation, Bifurcation};
pub use cobweb::{cobweb, Cobweb, CobwebStep};
pub use eigen::{eigenvalues, EigenPlot, EigenPoint};
pub use fan::{fan, FanBand, FanChart};
pub use frame::Titles;
pub use frontier::{frontier, FrontierPlot, FrontierPoint};
pub use groups::{group_bars, GroupBar, GroupBars};
pub use heatmap::{contour_segments, heatmap, StabilityMap};
pub use lines::{fiscal, paths, BarChart, LineChart, Reference, Series, OVERLAY_MAX};
pub use tornado::{tornado, Tornado, TornadoRow};

/// Why a figure could not be drawn or written.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// The drawing library failed (e.g. a font could not be laid out).
    #[error("drawing failed: {0}")]
    Draw(String),
    /// A figure file or its folder could not be written.
    #[error("cannot write {path}: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// There is nothing to draw.
    #[error("nothing to plot in `{0}`: no finite values")]
    Empty(String),
}

/// One figure, ready to render.
#[derive(Debug, Clone, PartialEq)]
pub enum Plot {
    /// Lines over periods (price, harvest or fiscal paths across policies).
    Lines(LineChart),
    /// Bars over periods (one policy's fiscal cost).
    Bars(BarChart),
    /// Supply and demand with the path as a staircase.
    Cobweb(Cobweb),
    /// Monte Carlo fan: p05–p95 band, median and mean per policy.
    Fan(FanChart),
    /// Eigenvalues in the complex plane with the unit circle.
    Eigen(EigenPlot),
    /// Spectral radius over a two-key grid with the ρ = 1 boundary.
    Heat(StabilityMap),
    /// Long-run prices against one swept key.
    Bifurcation(Bifurcation),
    /// Designs by risk and cost with the non-dominated ones joined.
    Frontier(FrontierPlot),
    /// One policy's indicator with each varied key at its low and high value.
    Tornado(Tornado),
    /// One household group's welfare change under each policy.
    GroupBars(GroupBars),
}

impl Plot {
    /// The figure's title.
    pub fn title(&self) -> &str {
        match self {
            Plot::Lines(p) => &p.titles.title,
            Plot::Bars(p) => &p.titles.title,
            Plot::Cobweb(p) => &p.titles.title,
            Plot::Fan(p) => &p.titles.title,
            Plot::Eigen(p) => &p.titles.title,
            Plot::Heat(p) => &p.titles.title,
            Plot::Bifurcation(p) => &p.titles.title,
            Plot::Frontier(p) => &p.titles.title,
            Plot::Tornado(p) => &p.titles.title,
            Plot::GroupBars(p) => &p.titles.title,
        }
    }

    /// Draws the figure on any plotters backend.
    pub fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        style::ensure_fonts();
        match self {
            Plot::Lines(p) => p.draw(root),
            Plot::Bars(p) => p.draw(root),
            Plot::Cobweb(p) => p.draw(root),
            Plot::Fan(p) => p.draw(root),
            Plot::Eigen(p) => p.draw(root),
            Plot::Heat(p) => p.draw(root),
            Plot::Bifurcation(p) => p.draw(root),
            Plot::Frontier(p) => p.draw(root),
            Plot::Tornado(p) => p.draw(root),
            Plot::GroupBars(p) => p.draw(root),
        }
    }

    /// Width and height in pixels (fan charts of many policies are taller: one panel each).
    pub fn size(&self) -> (u32, u32) {
        match self {
            Plot::Fan(f) => (style::WIDTH, fan::height(f.bands.len())),
            Plot::Lines(l) => (style::WIDTH, l.height()),
            Plot::Eigen(e) => (style::WIDTH, eigen::height(e.groups())),
            Plot::Tornado(t) => (style::WIDTH, tornado::height(t.rows.len())),
            _ => (style::WIDTH, style::HEIGHT),
        }
    }

    /// The figure as an SVG document (text as `<text>` elements).
    pub fn svg_string(&self) -> Result<String, PlotError> {
        let mut s = String::new();
        {
            let root = SVGBackend::with_string(&mut s, self.size()).into_drawing_area();
            self.draw(&root)?;
            root.present().map_err(frame::de)?;
        }
        Ok(s)
    }

    /// Writes the figure as a PNG file at `path`, whole or not at all: the image is drawn in memory,
    /// encoded into a temporary file beside `path` and renamed over it (a symlink is followed, a
    /// device or FIFO written in place; see [`crate::output::write_whole_via`]).
    pub fn write_png(&self, path: &Path) -> Result<(), PlotError> {
        let io = |source: std::io::Error| PlotError::Io {
            path: path.to_path_buf(),
            source,
        };
        let (w, h) = self.size();
        // draw into an RGB buffer first, so that the temporary file exists only while it is encoded
        let mut buf = vec![0u8; w as usize * h as usize * 3];
        {
            let root = BitMapBackend::with_buffer(&mut buf, (w, h)).into_drawing_area();
            self.draw(&root)?;
            root.present().map_err(frame::de)?;
        }
        crate::output::write_whole_via(path, ".png", |tmp| {
            let mut file = BitMapBackend::new(tmp, (w, h));
            file.blit_bitmap((0, 0), (w, h), &buf)
                .and_then(|_| file.present())
                .map_err(|e| std::io::Error::other(e.to_string()))
        })
        .map_err(io)
    }

    /// Writes `stem.png` and `stem.svg` into `dir` (created if missing); returns both paths.
    pub fn write(&self, dir: &Path, stem: &str) -> Result<Vec<PathBuf>, PlotError> {
        std::fs::create_dir_all(dir).map_err(|source| PlotError::Io {
            path: dir.to_path_buf(),
            source,
        })?;
        let png = dir.join(format!("{stem}.png"));
        let svg = dir.join(format!("{stem}.svg"));
        self.write_png(&png)?;
        let text = self.svg_string()?;
        crate::output::write_whole(&svg, text.as_bytes()).map_err(|source| PlotError::Io {
            path: svg.clone(),
            source,
        })?;
        Ok(vec![png, svg])
    }
}

/// The file in a `--plots` folder that lists the figure files furrow wrote there (one name a line).
pub const MANIFEST: &str = ".furrow-plots";

/// What [`update_manifest`] found and did.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ManifestUpdate {
    /// Files written by an earlier run and not by this one that were removed (`clean`).
    pub removed: Vec<String>,
    /// Such files that are still present (not `clean`); they stay in the manifest.
    pub stale: Vec<String>,
}

/// The file names listed in `dir`'s manifest (empty when there is none). Only plain names are
/// accepted, so a manifest can never point outside its folder.
pub fn read_manifest(dir: &Path) -> Vec<String> {
    std::fs::read_to_string(dir.join(MANIFEST))
        .map(|t| {
            t.lines()
                .map(str::trim)
                .filter(|n| {
                    !n.is_empty()
                        && !n.starts_with('#')
                        && *n != "."
                        && *n != ".."
                        && !n.contains(['/', '\\'])
                        && *n != MANIFEST
                })
                .map(String::from)
                .collect()
        })
        .unwrap_or_default()
}

/// Records that this run wrote `written` (plain file names) into `dir`. Files an earlier run wrote
/// and this one did not are removed when `clean` is set (regular files only), and otherwise listed in
/// [`ManifestUpdate::stale`] and kept in the manifest, so a later `clean` still finds them.
pub fn update_manifest(
    dir: &Path,
    written: &[String],
    clean: bool,
) -> Result<ManifestUpdate, PlotError> {
    let mut update = ManifestUpdate::default();
    let mut listed: Vec<String> = written.to_vec();
    for old in read_manifest(dir) {
        if written.contains(&old) || listed.contains(&old) {
            continue;
        }
        let p = dir.join(&old);
        let Ok(meta) = std::fs::symlink_metadata(&p) else {
            continue; // gone already
        };
        if clean && meta.file_type().is_file() {
            std::fs::remove_file(&p).map_err(|source| PlotError::Io { path: p, source })?;
            update.removed.push(old);
        } else {
            update.stale.push(old.clone());
            listed.push(old);
        }
    }
    let mut text =
        String::from("# files written by furrow --plots (stale ones are removed by --clean)\n");
    for n in &listed {
        text.push_str(n);
        text.push('\n');
    }
    let path = dir.join(MANIFEST);
    crate::output::write_whole(&path, text.as_bytes())
        .map_err(|source| PlotError::Io { path, source })?;
    Ok(update)
}

/// Splits a polyline into runs of finite points (a NaN or infinity breaks the line).
pub(crate) fn finite_runs(points: &[(f64, f64)]) -> Vec<Vec<(f64, f64)>> {
    let mut runs = Vec::new();
    let mut cur = Vec::new();
    for &(x, y) in points {
        if x.is_finite() && y.is_finite() {
            cur.push((x, y));
        } else if !cur.is_empty() {
            runs.push(std::mem::take(&mut cur));
        }
    }
    if !cur.is_empty() {
        runs.push(cur);
    }
    runs
}

//! SVG pictures drawn with the `plotters` crate.
//!
//! Each picture is one function taking a typed description made of slices
//! and small structs (no types from the science layers), and returning the
//! SVG document as a `String`. Conventions shared by all pictures:
//!
//! * the SVG has a `viewBox`, a default size in pixels ([`PlotSize`]) and
//!   all label text escaped (`&`, `<`, `>`, quotes) by the SVG backend;
//! * every axis carries its unit; large epochs (BJD ≈ 2 460 000) are drawn
//!   as `t − offset` and the offset is written in the axis label;
//! * series are told apart by marker shape, line dash and line width, never
//!   by colour alone, so a grey print stays readable;
//! * non-finite input values are skipped (never written into the SVG); a
//!   series left empty after that is a [`PlotError::EmptySeries`].

mod angles;
mod axis;
mod colour;
mod divergence;
mod heatmap;
mod periodogram;
mod posterior;
mod rv;
mod style;

pub use angles::{AnglePlot, AngleRange, AngleSeries, angle_plot};
pub use axis::{TimeOffset, format_grouped};
pub use colour::{ColourScale, relative_luminance};
pub use divergence::{DivergencePlot, divergence_plot};
pub use heatmap::{CellMarks, GridAxis, HeatMapPlot, heat_map, heat_map_marked};
pub use periodogram::{FapLevel, PeriodogramPanel, PeriodogramPlot, periodogram_plot};
pub use posterior::{
    HistogramGridPlot, PairPlot, PairStyle, ParameterSamples, histogram_grid, pair_plot,
};
pub use rv::{
    ModelCurve, PhaseFoldPlot, PhasePoints, RvPoints, RvTimeSeriesPlot, phase_fold_plot,
    rv_time_series,
};
pub use style::{LineDash, MarkerShape};

use plotters::coord::Shift;
use plotters::prelude::*;
use thiserror::Error;

/// Errors of the picture layer.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum PlotError {
    /// A series has no finite value left to draw (or was empty).
    #[error("{what}: no finite values to draw")]
    EmptySeries {
        /// Which series (its legend name or role).
        what: String,
    },
    /// Two slices that describe the same points differ in length.
    #[error("{what}: lengths differ ({left} vs {right})")]
    LengthMismatch {
        /// Which series.
        what: String,
        /// Length of the first slice.
        left: usize,
        /// Length of the other slice.
        right: usize,
    },
    /// A setting of the picture is unusable (e.g. a colour range with
    /// lower ≥ upper, a grid with no cells, zero bins).
    #[error("invalid setting {what}: {why}")]
    InvalidSetting {
        /// Name of the setting.
        what: String,
        /// Why it is refused.
        why: String,
    },
    /// The drawing backend failed (should not happen for in-memory SVG).
    #[error("drawing failed: {0}")]
    Draw(String),
}

impl<E: std::error::Error + Send + Sync> From<DrawingAreaErrorKind<E>> for PlotError {
    fn from(e: DrawingAreaErrorKind<E>) -> Self {
        PlotError::Draw(e.to_string())
    }
}

/// Size of a picture in SVG user units (pixels at 100 % zoom); also the
/// `viewBox` extent.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PlotSize {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
}

impl PlotSize {
    /// A size of `width` × `height` pixels.
    pub const fn new(width: u32, height: u32) -> Self {
        Self { width, height }
    }
}

impl Default for PlotSize {
    /// 960 × 640 pixels, a common default for a single-panel figure.
    fn default() -> Self {
        Self::new(960, 640)
    }
}

/// Smallest accepted picture side in pixels; below this labels cannot fit.
const MIN_SIDE: u32 = 120;

/// Runs `draw` on a white SVG canvas of `size` and returns the document.
fn render_svg<F>(size: PlotSize, draw: F) -> Result<String, PlotError>
where
    F: FnOnce(&DrawingArea<SVGBackend<'_>, Shift>) -> Result<(), PlotError>,
{
    if size.width < MIN_SIDE || size.height < MIN_SIDE {
        return Err(PlotError::InvalidSetting {
            what: "size".into(),
            why: format!(
                "{} × {} px is smaller than {MIN_SIDE} px a side",
                size.width, size.height
            ),
        });
    }
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (size.width, size.height)).into_drawing_area();
        root.fill(&WHITE)?;
        draw(&root)?;
        root.present()?;
    }
    Ok(out)
}

/// Checks that two slices describing the same points have one length.
fn same_len(what: &str, left: usize, right: usize) -> Result<(), PlotError> {
    if left == right {
        Ok(())
    } else {
        Err(PlotError::LengthMismatch {
            what: what.to_string(),
            left,
            right,
        })
    }
}

/// Error for a series with nothing finite to draw.
fn empty(what: &str) -> PlotError {
    PlotError::EmptySeries {
        what: what.to_string(),
    }
}

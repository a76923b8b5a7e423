//! Angles over time (resonant angles, apsidal differences Δϖ), drawn as
//! points so that wrapping never draws spurious vertical lines.

use plotters::prelude::*;

use super::axis::{finite_extent, padded, tick_label};
use super::style::{
    FONT, GRID_GREY, Glyph, LABEL_PX, MarkerShape, TICK_PX, TITLE_PX, legend_strip, marker,
    series_colour,
};
use super::{PlotError, PlotSize, empty, render_svg, same_len};

/// The interval angles are wrapped into.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AngleRange {
    /// [0°, 360°): for circulating angles and Δϖ.
    #[default]
    ZeroTo360,
    /// [−180°, 180°): for angles librating about 0°.
    Symmetric180,
}

impl AngleRange {
    /// The axis limits in degrees.
    fn limits(self) -> (f64, f64) {
        match self {
            AngleRange::ZeroTo360 => (0.0, 360.0),
            AngleRange::Symmetric180 => (-180.0, 180.0),
        }
    }

    /// `deg` wrapped into the interval.
    pub fn wrap(self, deg: f64) -> f64 {
        match self {
            AngleRange::ZeroTo360 => deg.rem_euclid(360.0),
            AngleRange::Symmetric180 => (deg + 180.0).rem_euclid(360.0) - 180.0,
        }
    }
}

/// One angle against time.
#[derive(Debug, Clone, Copy)]
pub struct AngleSeries<'a> {
    /// Legend text (e.g. "φ₁ = 2λ₂ − λ₁ − ϖ₁").
    pub name: &'a str,
    /// Times \[yr\] (e.g. Julian years since the reference epoch).
    pub time: &'a [f64],
    /// Angles \[deg\], any branch (wrapped here).
    pub angle_deg: &'a [f64],
}

/// Angles over time ([`angle_plot`]).
#[derive(Debug, Clone, Copy)]
pub struct AnglePlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// What the time counts from, for the axis label (e.g. "time since
    /// reference epoch"); the unit "\[yr\]" is appended.
    pub time_label: &'a str,
    /// The series (one marker shape each). Thin long series before drawing:
    /// every point becomes an SVG element.
    pub series: &'a [AngleSeries<'a>],
    /// Wrapping interval and axis.
    pub range: AngleRange,
    /// Picture size.
    pub size: PlotSize,
}

/// Draws angles against time as small markers on a fixed 0–360° or
/// −180–180° axis with ticks every 45°, one marker
/// shape per series, legend in a strip above the chart.
pub fn angle_plot(p: &AnglePlot<'_>) -> Result<String, PlotError> {
    if p.series.is_empty() {
        return Err(empty("series"));
    }
    let mut data = Vec::with_capacity(p.series.len());
    for s in p.series {
        same_len(s.name, s.time.len(), s.angle_deg.len())?;
        let pts: Vec<(f64, f64)> = s
            .time
            .iter()
            .zip(s.angle_deg)
            .filter(|(t, a)| t.is_finite() && a.is_finite())
            .map(|(&t, &a)| (t, p.range.wrap(a)))
            .collect();
        if pts.is_empty() {
            return Err(empty(s.name));
        }
        data.push(pts);
    }
    let (t0, t1) =
        finite_extent(data.iter().flatten().map(|q| q.0)).ok_or_else(|| empty("time"))?;
    let (x0, x1) = padded(t0, t1, 0.01);
    let (y0, y1) = p.range.limits();
    let x_desc = format!("{} [yr]", p.time_label);

    render_svg(p.size, |root| {
        let root = root.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let (strip, body) = root.split_vertically(36);
        let entries: Vec<(Glyph, &str)> = p
            .series
            .iter()
            .enumerate()
            .map(|(i, s)| (Glyph::Marker(MarkerShape::nth(i), series_colour(i)), s.name))
            .collect();
        legend_strip(&strip, &entries)?;
        let mut chart = ChartBuilder::on(&body)
            .margin_left(12)
            .margin_right(24)
            .margin_top(6)
            .x_label_area_size(56)
            .y_label_area_size(84)
            .build_cartesian_2d(x0..x1, (y0..y1 + 1e-9).step(45.0))?;
        let fx = |v: &f64| tick_label(*v, x1 - x0);
        let fy = |v: &f64| format!("{v:.0}");
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID_GREY)
            .x_labels(10)
            .y_labels(9)
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .x_desc(x_desc.as_str())
            .y_desc("angle [deg]")
            .label_style((FONT, TICK_PX))
            .axis_desc_style((FONT, LABEL_PX))
            .draw()?;
        for (i, pts) in data.iter().enumerate() {
            let (shape, colour) = (MarkerShape::nth(i), series_colour(i));
            chart.draw_series(pts.iter().map(|&q| marker(shape, colour, q, 2)))?;
        }
        Ok(())
    })
}

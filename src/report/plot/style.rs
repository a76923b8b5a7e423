//! Shared look: fonts, marker shapes, line dashes, grey-safe colours.

use plotters::element::{Drawable, PointCollection};
use plotters::prelude::DrawingBackend;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters_backend::{BackendCoord, DrawingErrorKind};

use super::PlotError;

/// Font family written into the SVG (resolved by the viewer).
pub(crate) const FONT: &str = "sans-serif";
/// Title font size (plotters size; the SVG gets size / 1.24).
pub(crate) const TITLE_PX: u32 = 26;
/// Axis description font size.
pub(crate) const LABEL_PX: u32 = 19;
/// Tick text font size.
pub(crate) const TICK_PX: u32 = 16;
/// Legend / annotation font size.
pub(crate) const LEGEND_PX: u32 = 16;

/// Marker shapes, in the order instruments receive them. Filled and open
/// variants alternate so that neighbours differ even in a blurred grey print.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MarkerShape {
    /// Filled disc.
    FilledCircle,
    /// Open square (white inside, dark outline).
    OpenSquare,
    /// Filled upward triangle.
    FilledTriangle,
    /// Open diamond.
    OpenDiamond,
    /// Diagonal cross (×).
    Cross,
    /// Open disc.
    OpenCircle,
    /// Filled square.
    FilledSquare,
    /// Open downward triangle.
    OpenTriangleDown,
}

impl MarkerShape {
    /// All shapes, in order of use.
    pub const ALL: [MarkerShape; 8] = [
        MarkerShape::FilledCircle,
        MarkerShape::OpenSquare,
        MarkerShape::FilledTriangle,
        MarkerShape::OpenDiamond,
        MarkerShape::Cross,
        MarkerShape::OpenCircle,
        MarkerShape::FilledSquare,
        MarkerShape::OpenTriangleDown,
    ];

    /// The shape of the `i`-th series (cycles after eight).
    pub fn nth(i: usize) -> Self {
        Self::ALL[i % Self::ALL.len()]
    }
}

/// Line dash patterns, in the order model curves receive them; the width
/// differs too, so two curves stay distinct where they overlap.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LineDash {
    /// Solid, 2 px.
    Solid,
    /// Long dashes (10 px on, 6 px off), 2 px.
    Dashed,
    /// Dots (2 px on, 4 px off), 3 px.
    Dotted,
    /// Short dashes (5 px on, 4 px off), 1 px.
    ShortDashed,
}

impl LineDash {
    /// All dashes, in order of use.
    pub const ALL: [LineDash; 4] = [
        LineDash::Solid,
        LineDash::Dashed,
        LineDash::Dotted,
        LineDash::ShortDashed,
    ];

    /// The dash of the `i`-th curve (cycles after four).
    pub fn nth(i: usize) -> Self {
        Self::ALL[i % Self::ALL.len()]
    }

    /// Stroke width in pixels.
    pub fn width(self) -> u32 {
        match self {
            LineDash::Solid | LineDash::Dashed => 2,
            LineDash::Dotted => 3,
            LineDash::ShortDashed => 1,
        }
    }

    /// (dash length, gap) in pixels; `None` for solid.
    fn pattern(self) -> Option<(u32, u32)> {
        match self {
            LineDash::Solid => None,
            LineDash::Dashed => Some((10, 6)),
            LineDash::Dotted => Some((2, 4)),
            LineDash::ShortDashed => Some((5, 4)),
        }
    }
}

/// Dark colours of the Okabe & Ito (2008) colour-blind-safe set, in order
/// of use; they only add to the shapes, which alone tell series apart.
const SERIES_COLOURS: [RGBColor; 6] = [
    RGBColor(0, 0, 0),
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(86, 180, 233),
];

/// Colour of the `i`-th marker series.
pub(crate) fn series_colour(i: usize) -> RGBColor {
    SERIES_COLOURS[i % SERIES_COLOURS.len()]
}

/// Light grey for shaded spans and histogram bars.
pub(crate) const LIGHT_GREY: RGBColor = RGBColor(215, 215, 215);
/// Mid grey for grid lines.
pub(crate) const GRID_GREY: RGBColor = RGBColor(225, 225, 225);

/// A marker of one shape at one point: a small element of our own (drawn
/// straight on the backend) so that it holds no backend type and can serve
/// both as a data point and as a legend sample.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Marker<C> {
    at: C,
    shape: MarkerShape,
    colour: RGBColor,
    r: i32,
}

/// A marker of `shape`, `colour` and half-size `r` px at `at`.
pub(crate) fn marker<C>(shape: MarkerShape, colour: RGBColor, at: C, r: i32) -> Marker<C> {
    Marker {
        at,
        shape,
        colour,
        r,
    }
}

impl<'b, C: 'b> PointCollection<'b, C> for &'b Marker<C> {
    type Point = &'b C;
    type IntoIter = std::iter::Once<&'b C>;
    fn point_iter(self) -> Self::IntoIter {
        std::iter::once(&self.at)
    }
}

impl<C, DB: DrawingBackend> Drawable<DB> for Marker<C> {
    fn draw<I: Iterator<Item = BackendCoord>>(
        &self,
        mut pos: I,
        backend: &mut DB,
        _: (u32, u32),
    ) -> Result<(), DrawingErrorKind<DB::ErrorType>> {
        let Some((x, y)) = pos.next() else {
            return Ok(());
        };
        let r = self.r;
        let line = ShapeStyle::from(self.colour).stroke_width(1);
        let fill = self.colour.filled();
        let white = WHITE.filled();
        let at = |pts: &[(i32, i32)]| -> Vec<(i32, i32)> {
            pts.iter().map(|&(dx, dy)| (x + dx, y + dy)).collect()
        };
        let square = at(&[(-r, -r), (r, -r), (r, r), (-r, r)]);
        let diamond = at(&[(0, -r - 1), (r + 1, 0), (0, r + 1), (-r - 1, 0)]);
        let tri_up = at(&[(0, -r - 1), (r + 1, r), (-r - 1, r)]);
        let tri_down = at(&[(0, r + 1), (r + 1, -r), (-r - 1, -r)]);
        let open = |pts: Vec<(i32, i32)>, backend: &mut DB| {
            backend.fill_polygon(pts.clone(), &white)?;
            let mut closed = pts;
            if let Some(&first) = closed.first() {
                closed.push(first);
            }
            backend.draw_path(closed, &line)
        };
        let ru = r.max(1) as u32;
        match self.shape {
            MarkerShape::FilledCircle => backend.draw_circle((x, y), ru, &fill, true),
            MarkerShape::OpenCircle => {
                backend.draw_circle((x, y), ru, &white, true)?;
                backend.draw_circle((x, y), ru, &line, false)
            }
            MarkerShape::FilledSquare => backend.fill_polygon(square, &fill),
            MarkerShape::OpenSquare => open(square, backend),
            MarkerShape::FilledTriangle => backend.fill_polygon(tri_up, &fill),
            MarkerShape::OpenTriangleDown => open(tri_down, backend),
            MarkerShape::OpenDiamond => open(diamond, backend),
            MarkerShape::Cross => {
                let l = ShapeStyle::from(self.colour).stroke_width(2);
                backend.draw_line((x - r, y - r), (x + r, y + r), &l)?;
                backend.draw_line((x - r, y + r), (x + r, y - r), &l)
            }
        }
    }
}

/// A 24 px horizontal line sample in one dash, for legends.
#[derive(Debug, Clone, Copy)]
pub(crate) struct LineSample {
    at: (i32, i32),
    dash: LineDash,
    style: ShapeStyle,
}

/// The legend sample of a line in `dash` and `style` starting at `(x, y)`.
pub(crate) fn line_sample(dash: LineDash, style: ShapeStyle, x: i32, y: i32) -> LineSample {
    LineSample {
        at: (x, y),
        dash,
        style,
    }
}

impl<'b> PointCollection<'b, (i32, i32)> for &'b LineSample {
    type Point = &'b (i32, i32);
    type IntoIter = std::iter::Once<&'b (i32, i32)>;
    fn point_iter(self) -> Self::IntoIter {
        std::iter::once(&self.at)
    }
}

impl<DB: DrawingBackend> Drawable<DB> for LineSample {
    fn draw<I: Iterator<Item = BackendCoord>>(
        &self,
        mut pos: I,
        backend: &mut DB,
        _: (u32, u32),
    ) -> Result<(), DrawingErrorKind<DB::ErrorType>> {
        let Some((x, y)) = pos.next() else {
            return Ok(());
        };
        const LEN: i32 = 24;
        match self.dash.pattern() {
            None => backend.draw_line((x, y), (x + LEN, y), &self.style),
            Some((on, off)) => {
                let (on, off) = (on as i32, off as i32);
                let mut s = 0;
                while s < LEN {
                    let e = (s + on).min(LEN);
                    backend.draw_line((x + s, y), (x + e, y), &self.style)?;
                    s = e + off;
                }
                Ok(())
            }
        }
    }
}

/// Splits points into runs of consecutive finite points (a non-finite
/// point breaks the line rather than being bridged).
pub(crate) fn finite_runs(xs: &[f64], ys: &[f64]) -> Vec<Vec<(f64, f64)>> {
    let mut runs = Vec::new();
    let mut cur = Vec::new();
    for (&x, &y) in xs.iter().zip(ys) {
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

/// Draws `runs` as one line series in `dash` and `colour`, with a legend
/// entry `label` (if given) showing the same dash.
pub(crate) fn draw_line<'a, DB, CT>(
    chart: &mut ChartContext<'a, DB, CT>,
    runs: &[Vec<(f64, f64)>],
    dash: LineDash,
    colour: RGBColor,
    label: Option<&str>,
) -> Result<(), PlotError>
where
    DB: DrawingBackend + 'a,
    CT: CoordTranslate<From = (f64, f64)>,
    DB::ErrorType: 'static,
{
    let style = ShapeStyle::from(colour).stroke_width(dash.width());
    let mut first = true;
    for run in runs {
        let anno = match dash.pattern() {
            None => chart.draw_series(LineSeries::new(run.iter().copied(), style))?,
            Some((on, off)) => {
                chart.draw_series(DashedLineSeries::new(run.iter().copied(), on, off, style))?
            }
        };
        if first {
            if let Some(name) = label {
                anno.label(name)
                    .legend(move |(x, y)| line_sample(dash, style, x, y));
            }
            first = false;
        }
    }
    Ok(())
}

/// Draws the legend box of `chart` at `pos` with a white, nearly opaque
/// background and a thin frame.
pub(crate) fn draw_legend<'a, DB, CT>(
    chart: &mut ChartContext<'a, DB, CT>,
    pos: SeriesLabelPosition,
) -> Result<(), PlotError>
where
    DB: DrawingBackend + 'a,
    CT: CoordTranslate,
    DB::ErrorType: 'static,
{
    chart
        .configure_series_labels()
        .position(pos)
        .background_style(WHITE.mix(0.9))
        .border_style(BLACK)
        .label_font((FONT, LEGEND_PX).into_font())
        .margin(8)
        .draw()?;
    Ok(())
}

/// A legend sample drawn by [`legend_strip`].
#[derive(Debug, Clone, Copy)]
pub(crate) enum Glyph {
    /// A data marker.
    Marker(MarkerShape, RGBColor),
    /// A line in a dash style.
    Line(LineDash, RGBColor),
    /// A filled swatch (shaded band or span).
    Swatch(RGBColor),
}

/// Draws a one-row legend (sample, then text) across `area`, which is a
/// strip of about 30 px height above or below a chart: the legend never
/// covers data.
pub(crate) fn legend_strip<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    entries: &[(Glyph, &str)],
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let (w, h) = area.dim_in_pixel();
    let y = h as i32 / 2;
    let font = (FONT, LEGEND_PX).into_font();
    // Width estimate: 0.55 em a character (as the SVG backend measures text).
    let widths: Vec<i32> = entries
        .iter()
        .map(|(_, t)| 40 + (t.chars().count() as f64 * LEGEND_PX as f64 * 0.5) as i32 + 24)
        .collect();
    let total: i32 = widths.iter().sum();
    let mut x = ((w as i32 - total) / 2).max(8);
    for ((g, text), wd) in entries.iter().zip(&widths) {
        match *g {
            Glyph::Marker(s, c) => area.draw(&marker(s, c, (x + 12, y), 4))?,
            Glyph::Line(d, c) => area.draw(&line_sample(
                d,
                ShapeStyle::from(c).stroke_width(d.width()),
                x,
                y,
            ))?,
            Glyph::Swatch(c) => {
                area.draw(&Rectangle::new([(x, y - 7), (x + 24, y + 7)], c.filled()))?;
                area.draw(&Rectangle::new([(x, y - 7), (x + 24, y + 7)], BLACK))?;
            }
        }
        area.draw(&Text::new(
            text.to_string(),
            (x + 32, y),
            TextStyle::from(font.clone()).pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
        x += wd;
    }
    Ok(())
}

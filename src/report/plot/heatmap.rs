//! Heat map of a scalar on a regular 2-D grid (e.g. MEGNO ⟨Y⟩ over outer
//! period × eccentricity) with a colour bar.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::axis::tick_label;
use super::colour::ColourScale;
use super::style::{FONT, LABEL_PX, LEGEND_PX, TICK_PX, TITLE_PX};
use super::{PlotError, PlotSize, render_svg};

/// One axis of a regular grid: `count` cell centres from `min` to `max`.
#[derive(Debug, Clone, Copy)]
pub struct GridAxis<'a> {
    /// Axis label with unit (e.g. "P_c \[d\]").
    pub label: &'a str,
    /// Centre of the first cell.
    pub min: f64,
    /// Centre of the last cell (> `min`).
    pub max: f64,
    /// Number of cells (≥ 2).
    pub count: usize,
}

impl GridAxis<'_> {
    fn check(&self, what: &str) -> Result<(), PlotError> {
        if self.count < 2
            || !(self.max > self.min)
            || !self.min.is_finite()
            || !self.max.is_finite()
        {
            return Err(PlotError::InvalidSetting {
                what: what.into(),
                why: format!(
                    "needs ≥ 2 cells and finite min < max (got {} cells, {} to {})",
                    self.count, self.min, self.max
                ),
            });
        }
        Ok(())
    }

    /// Cell width.
    fn step(&self) -> f64 {
        (self.max - self.min) / (self.count - 1) as f64
    }

    /// Centre of cell `i`.
    fn centre(&self, i: usize) -> f64 {
        self.min + self.step() * i as f64
    }
}

/// A scalar on a regular grid ([`heat_map`]).
#[derive(Debug, Clone, Copy)]
pub struct HeatMapPlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// Horizontal axis.
    pub x: GridAxis<'a>,
    /// Vertical axis.
    pub y: GridAxis<'a>,
    /// Values, row-major with x fastest: `values[j * x.count + i]` is the
    /// cell (x_i, y_j). NaN or infinite marks a missing cell.
    pub values: &'a [f64],
    /// Name and unit of the value for the colour bar (e.g. "⟨Y⟩ (MEGNO)").
    pub value_label: &'a str,
    /// Colour range (low, high): values outside are drawn at the ends and
    /// the colour bar says so.
    pub clip: (f64, f64),
    /// Colour scale.
    pub scale: ColourScale,
    /// Picture size.
    pub size: PlotSize,
}

/// Colour of the cross drawn on missing cells.
const MISSING_MARK: RGBColor = RGBColor(110, 110, 110);

/// Draws a missing cell: white with a grey diagonal cross, distinct from
/// every colour of the scales.
fn missing_cell<DB: DrawingBackend, CT: CoordTranslate<From = (f64, f64)>>(
    chart: &mut ChartContext<'_, DB, CT>,
    (xa, ya): (f64, f64),
    (xb, yb): (f64, f64),
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    chart.draw_series(std::iter::once(Rectangle::new(
        [(xa, ya), (xb, yb)],
        WHITE.filled(),
    )))?;
    let s = MISSING_MARK.stroke_width(1);
    chart.draw_series([
        PathElement::new(vec![(xa, ya), (xb, yb)], s),
        PathElement::new(vec![(xa, yb), (xb, ya)], s),
    ])?;
    Ok(())
}

/// Cells to mark on top of their colour ([`heat_map_marked`]), e.g. the
/// runs of a stability map that were disrupted before their end.
#[derive(Debug, Clone, Copy)]
pub struct CellMarks<'a> {
    /// One flag per cell, in the order of [`HeatMapPlot::values`].
    pub marked: &'a [bool],
    /// What a mark means, for the key (e.g. "disrupted").
    pub label: &'a str,
}

/// Draws the mark of a cell: a black dot ringed in white, visible on every
/// colour of both scales and in grey.
fn mark_element(centre: (f64, f64), radius: i32) -> [Circle<(f64, f64), i32>; 2] {
    [
        Circle::new(centre, radius + 2, WHITE.filled()),
        Circle::new(centre, radius, BLACK.filled()),
    ]
}

/// Draws a heat map: each cell filled with the colour of its value mapped
/// linearly from `clip` onto the scale (values outside clipped to the ends),
/// missing cells white with a cross, and a colour bar at the right labelled
/// with the value name and the clipping range, plus a "no value" swatch.
pub fn heat_map(p: &HeatMapPlot<'_>) -> Result<String, PlotError> {
    heat_map_marked(p, None)
}

/// [`heat_map`] with some cells marked by a dot (black, ringed in white)
/// drawn over their colour, and a key entry for the mark below the "no
/// value" swatch.
pub fn heat_map_marked(
    p: &HeatMapPlot<'_>,
    marks: Option<&CellMarks<'_>>,
) -> Result<String, PlotError> {
    p.x.check("x axis")?;
    p.y.check("y axis")?;
    let n = p.x.count * p.y.count;
    super::same_len("values", n, p.values.len())?;
    if let Some(m) = marks {
        super::same_len("marks", n, m.marked.len())?;
    }
    let (lo, hi) = p.clip;
    if !(hi > lo) || !lo.is_finite() || !hi.is_finite() {
        return Err(PlotError::InvalidSetting {
            what: "clip".into(),
            why: format!("needs finite low < high (got {lo} to {hi})"),
        });
    }
    let colour = |v: f64| {
        let (r, g, b) = p.scale.rgb((v - lo) / (hi - lo));
        RGBColor(r, g, b)
    };
    let (hx, hy) = (0.5 * p.x.step(), 0.5 * p.y.step());
    let (x0, x1) = (p.x.min - hx, p.x.max + hx);
    let (y0, y1) = (p.y.min - hy, p.y.max + hy);
    let bar_label = format!(
        "{}, clipped to [{}, {}]",
        p.value_label,
        tick_label(lo, hi - lo),
        tick_label(hi, hi - lo)
    );

    render_svg(p.size, |root| {
        let root = root.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let (w, _) = root.dim_in_pixel();
        let (main, side) = root.split_horizontally(w.saturating_sub(170));
        let mut chart = ChartBuilder::on(&main)
            .margin_left(12)
            .margin_right(16)
            .margin_top(8)
            .x_label_area_size(56)
            .y_label_area_size(84)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        let fx = |v: &f64| tick_label(*v, x1 - x0);
        let fy = |v: &f64| tick_label(*v, y1 - y0);
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(8)
            .y_labels(8)
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .x_desc(p.x.label)
            .y_desc(p.y.label)
            .label_style((FONT, TICK_PX))
            .axis_desc_style((FONT, LABEL_PX))
            .draw()?;
        let mut missing = Vec::new();
        let mut cells = Vec::with_capacity(n);
        for j in 0..p.y.count {
            for i in 0..p.x.count {
                let v = p.values[j * p.x.count + i];
                let (cx, cy) = (p.x.centre(i), p.y.centre(j));
                let corners = ((cx - hx, cy - hy), (cx + hx, cy + hy));
                if v.is_finite() {
                    cells.push(Rectangle::new([corners.0, corners.1], colour(v).filled()));
                } else {
                    missing.push(corners);
                }
            }
        }
        chart.draw_series(cells)?;
        for (a, b) in missing {
            missing_cell(&mut chart, a, b)?;
        }
        if let Some(m) = marks {
            // Dot radius: a fifth of the smaller cell side in pixels.
            let (pw, ph) = chart.plotting_area().dim_in_pixel();
            let side = (f64::from(pw) / p.x.count as f64).min(f64::from(ph) / p.y.count as f64);
            let radius = (0.2 * side).clamp(1.5, 6.0).round() as i32;
            for j in 0..p.y.count {
                for i in 0..p.x.count {
                    if m.marked[j * p.x.count + i] {
                        chart.draw_series(mark_element((p.x.centre(i), p.y.centre(j)), radius))?;
                    }
                }
            }
        }

        // Colour bar: 64 bands from lo to hi.
        let (sw, sh) = side.dim_in_pixel();
        let key_h = if marks.is_some() { 90 } else { 60 };
        let (bar, key) = side.split_vertically(sh.saturating_sub(key_h));
        let mut cb = ChartBuilder::on(&bar)
            .margin_top(8)
            .margin_right(sw.saturating_sub(110).min(60))
            .x_label_area_size(0)
            .y_label_area_size(56)
            .right_y_label_area_size(0)
            .build_cartesian_2d(0.0..1.0, lo..hi)?;
        let fb = |v: &f64| tick_label(*v, hi - lo);
        cb.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_labels(7)
            .y_label_formatter(&fb)
            .y_desc(bar_label.as_str())
            .label_style((FONT, TICK_PX))
            .axis_desc_style((FONT, LABEL_PX))
            .draw()?;
        const BANDS: usize = 64;
        let db = (hi - lo) / BANDS as f64;
        cb.draw_series((0..BANDS).map(|k| {
            let a = lo + db * k as f64;
            Rectangle::new([(0.0, a), (1.0, a + db)], colour(a + 0.5 * db).filled())
        }))?;
        cb.draw_series(std::iter::once(Rectangle::new(
            [(0.0, lo), (1.0, hi)],
            BLACK,
        )))?;
        // "no value" key.
        key.draw(&Rectangle::new([(60, 12), (84, 36)], WHITE.filled()))?;
        key.draw(&Rectangle::new([(60, 12), (84, 36)], BLACK))?;
        let s = MISSING_MARK.stroke_width(1);
        key.draw(&PathElement::new(vec![(60, 12), (84, 36)], s))?;
        key.draw(&PathElement::new(vec![(60, 36), (84, 12)], s))?;
        key.draw(&Text::new(
            "no value",
            (90, 24),
            TextStyle::from((FONT, LEGEND_PX).into_font()).pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
        if let Some(m) = marks {
            key.draw(&Rectangle::new([(60, 46), (84, 70)], WHITE.filled()))?;
            key.draw(&Rectangle::new([(60, 46), (84, 70)], BLACK))?;
            key.draw(&Circle::new((72, 58), 5, BLACK.filled()))?;
            key.draw(&Text::new(
                m.label,
                (90, 58),
                TextStyle::from((FONT, LEGEND_PX).into_font())
                    .pos(Pos::new(HPos::Left, VPos::Center)),
            ))?;
        }
        Ok(())
    })
}

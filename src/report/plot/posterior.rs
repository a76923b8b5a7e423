//! Posterior pictures: a grid of one-parameter histograms and a pair plot
//! (lower triangle of two-parameter panels, histograms on the diagonal).

use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

use super::axis::{padded, tick_label};
use super::style::{
    FONT, GRID_GREY, LIGHT_GREY, LineDash, MarkerShape, TITLE_PX, draw_line, marker,
};
use super::{PlotError, PlotSize, empty, render_svg, same_len};

/// Font size of panel captions and axis descriptions in small panels.
const SMALL_LABEL_PX: u32 = 16;
/// Font size of tick text in small panels.
const SMALL_TICK_PX: u32 = 13;

/// Posterior samples of one parameter.
#[derive(Debug, Clone, Copy)]
pub struct ParameterSamples<'a> {
    /// Parameter name (e.g. "P_b").
    pub name: &'a str,
    /// Unit written in brackets after the name (e.g. "d"); empty for a
    /// dimensionless parameter.
    pub unit: &'a str,
    /// The samples (one per draw; draws aligned across parameters).
    pub samples: &'a [f64],
}

impl ParameterSamples<'_> {
    /// "name \[unit\]", or "name" when the unit is empty.
    fn label(&self) -> String {
        if self.unit.is_empty() {
            self.name.to_string()
        } else {
            format!("{} [{}]", self.name, self.unit)
        }
    }
}

/// A grid of posterior histograms ([`histogram_grid`]).
#[derive(Debug, Clone, Copy)]
pub struct HistogramGridPlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// One panel per parameter.
    pub parameters: &'a [ParameterSamples<'a>],
    /// Number of bins (≥ 1).
    pub bins: usize,
    /// Panels a row (≥ 1).
    pub columns: usize,
    /// Picture size.
    pub size: PlotSize,
}

/// How the two-parameter panels of a pair plot show the samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PairStyle {
    /// Every k-th draw as a dot, k chosen so at most `max_points` are drawn.
    Points {
        /// Upper bound on the dots a panel.
        max_points: usize,
    },
    /// A 2-D histogram of `bins` × `bins` cells shaded in grey by count
    /// (darker = more samples; empty cells not drawn).
    Density {
        /// Cells a side (≥ 1).
        bins: usize,
    },
}

/// A pair plot ([`pair_plot`]).
#[derive(Debug, Clone, Copy)]
pub struct PairPlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// The parameters (same number of draws each).
    pub parameters: &'a [ParameterSamples<'a>],
    /// Bins of the diagonal histograms (≥ 1).
    pub bins: usize,
    /// Style of the off-diagonal panels.
    pub style: PairStyle,
    /// Picture size.
    pub size: PlotSize,
}

/// Sorted finite samples of a parameter, or an error naming it.
fn sorted_finite(p: &ParameterSamples<'_>) -> Result<Vec<f64>, PlotError> {
    let mut v: Vec<f64> = p
        .samples
        .iter()
        .copied()
        .filter(|x| x.is_finite())
        .collect();
    if v.is_empty() {
        return Err(empty(p.name));
    }
    v.sort_by(f64::total_cmp);
    Ok(v)
}

/// Quantile `q` of sorted data with linear interpolation between order
/// statistics (Hyndman & Fan 1996, definition 7; numpy's default).
fn quantile(sorted: &[f64], q: f64) -> f64 {
    let h = (sorted.len() - 1) as f64 * q;
    let i = h.floor() as usize;
    let j = (i + 1).min(sorted.len() - 1);
    sorted[i] + (h - i as f64) * (sorted[j] - sorted[i])
}

/// Counts of `sorted` in `bins` equal bins over `[a, b]`.
fn histogram(sorted: &[f64], a: f64, b: f64, bins: usize) -> Vec<usize> {
    let mut counts = vec![0usize; bins];
    for &x in sorted {
        let k = (((x - a) / (b - a)) * bins as f64).floor();
        let k = (k.max(0.0) as usize).min(bins - 1);
        counts[k] += 1;
    }
    counts
}

/// Range of a parameter's samples, widened when degenerate.
fn sample_range(sorted: &[f64]) -> (f64, f64) {
    let (a, b) = (sorted[0], sorted[sorted.len() - 1]);
    if b > a { (a, b) } else { padded(a, b, 0.0) }
}

/// Which axis texts a small panel shows.
#[derive(Debug, Clone, Copy)]
struct PanelAxes<'s> {
    caption: Option<&'s str>,
    x_desc: Option<&'s str>,
    y_desc: Option<&'s str>,
    x_ticks: bool,
    y_ticks: bool,
    /// Width kept left of the plotting area even without ticks, so that
    /// the panels of one column line up.
    left_area: Option<u32>,
}

/// Builds a small chart with the given axis texts.
fn small_chart<'a, 'b>(
    area: &'a DrawingArea<SVGBackend<'b>, Shift>,
    ax: PanelAxes<'_>,
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
) -> Result<ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>, PlotError>
{
    let mut b = ChartBuilder::on(area);
    b.margin(6)
        .x_label_area_size(match (ax.x_ticks, ax.x_desc.is_some()) {
            (_, true) => 48,
            (true, false) => 24,
            _ => 4,
        })
        .y_label_area_size(
            ax.left_area
                .unwrap_or(match (ax.y_ticks, ax.y_desc.is_some()) {
                    (_, true) => 70,
                    (true, false) => 48,
                    _ => 4,
                }),
        );
    if let Some(c) = ax.caption {
        b.caption(c, (FONT, SMALL_LABEL_PX));
    }
    // About one tick label per 75 px, so labels never run into each other.
    let ticks = (area.dim_in_pixel().0 / 75).clamp(2, 6) as usize;
    let mut chart = b.build_cartesian_2d(x0..x1, y0..y1)?;
    let fx = |v: &f64| tick_label(*v, x1 - x0);
    let fy = |v: &f64| tick_label(*v, y1 - y0);
    let mut mesh = chart.configure_mesh();
    mesh.light_line_style(WHITE)
        .bold_line_style(GRID_GREY)
        .x_labels(if ax.x_ticks { ticks } else { 0 })
        .y_labels(if ax.y_ticks { 5 } else { 0 })
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .label_style((FONT, SMALL_TICK_PX))
        .axis_desc_style((FONT, SMALL_LABEL_PX));
    if let Some(d) = ax.x_desc {
        mesh.x_desc(d);
    }
    if let Some(d) = ax.y_desc {
        mesh.y_desc(d);
    }
    mesh.draw()?;
    Ok(chart)
}

/// Draws the histogram of `sorted` on `area`, with the median (solid) and
/// the 16 % and 84 % quantiles (short dashes).
fn draw_histogram(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    sorted: &[f64],
    bins: usize,
    ax: PanelAxes<'_>,
) -> Result<(), PlotError> {
    let (a, b) = sample_range(sorted);
    let counts = histogram(sorted, a, b, bins);
    let top = counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.12;
    let mut chart = small_chart(area, ax, (a, b), (0.0, top))?;
    let w = (b - a) / bins as f64;
    chart.draw_series(
        counts
            .iter()
            .enumerate()
            .filter(|(_, c)| **c > 0)
            .map(|(k, &c)| {
                let x = a + w * k as f64;
                Rectangle::new([(x, 0.0), (x + w, c as f64)], LIGHT_GREY.filled())
            }),
    )?;
    // Outline as one step path.
    let mut step = vec![(a, 0.0)];
    for (k, &c) in counts.iter().enumerate() {
        let x = a + w * k as f64;
        step.push((x, c as f64));
        step.push((x + w, c as f64));
    }
    step.push((b, 0.0));
    draw_line(&mut chart, &[step], LineDash::Solid, BLACK, None)?;
    for (q, dash) in [
        (0.16, LineDash::ShortDashed),
        (0.5, LineDash::Solid),
        (0.84, LineDash::ShortDashed),
    ] {
        let x = quantile(sorted, q);
        draw_line(&mut chart, &[vec![(x, 0.0), (x, top)]], dash, BLACK, None)?;
    }
    Ok(())
}

/// Draws one histogram per parameter in a grid of `columns` panels a row,
/// each captioned "name \[unit\]", with median and 16/84 % quantiles marked.
pub fn histogram_grid(p: &HistogramGridPlot<'_>) -> Result<String, PlotError> {
    if p.parameters.is_empty() {
        return Err(empty("parameters"));
    }
    if p.bins == 0 || p.columns == 0 {
        return Err(PlotError::InvalidSetting {
            what: "bins/columns".into(),
            why: "need at least one bin and one column".into(),
        });
    }
    let data = p
        .parameters
        .iter()
        .map(sorted_finite)
        .collect::<Result<Vec<_>, _>>()?;
    let cols = p.columns.min(p.parameters.len());
    let rows = p.parameters.len().div_ceil(cols);
    render_svg(p.size, |root| {
        let root = root.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let panels = root.split_evenly((rows, cols));
        for (k, (par, sorted)) in p.parameters.iter().zip(&data).enumerate() {
            let label = par.label();
            let ax = PanelAxes {
                caption: Some(&label),
                x_desc: None,
                y_desc: (k % cols == 0).then_some("samples [count]"),
                x_ticks: true,
                y_ticks: true,
                left_area: Some(if k % cols == 0 { 84 } else { 52 }),
            };
            draw_histogram(&panels[k], sorted, p.bins, ax)?;
        }
        Ok(())
    })
}

/// Draws a pair plot: for n parameters an n × n lower triangle whose
/// diagonal holds each parameter's histogram and whose panel (row i,
/// column j < i) shows parameter j (horizontal) against parameter i
/// (vertical) as dots or as a grey 2-D histogram. Only draws where both
/// values are finite enter a two-parameter panel.
pub fn pair_plot(p: &PairPlot<'_>) -> Result<String, PlotError> {
    let n = p.parameters.len();
    if n == 0 {
        return Err(empty("parameters"));
    }
    let bad = match p.style {
        PairStyle::Points { max_points } => max_points == 0,
        PairStyle::Density { bins } => bins == 0,
    };
    if p.bins == 0 || bad {
        return Err(PlotError::InvalidSetting {
            what: "bins/style".into(),
            why: "need at least one bin and one point".into(),
        });
    }
    for q in p.parameters {
        same_len(q.name, p.parameters[0].samples.len(), q.samples.len())?;
    }
    let data = p
        .parameters
        .iter()
        .map(sorted_finite)
        .collect::<Result<Vec<_>, _>>()?;
    let ranges: Vec<(f64, f64)> = data.iter().map(|s| sample_range(s)).collect();
    let labels: Vec<String> = p.parameters.iter().map(|q| q.label()).collect();
    render_svg(p.size, |root| {
        let root = root.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let panels = root.split_evenly((n, n));
        for i in 0..n {
            for j in 0..=i {
                let area = &panels[i * n + j];
                let bottom = i + 1 == n;
                let left = j == 0;
                let ax = PanelAxes {
                    // Every panel gets a caption line (blank off the diagonal) so the
                    // plotting areas of a row share their height.
                    caption: Some(if i == j { labels[i].as_str() } else { " " }),
                    x_desc: bottom.then_some(labels[j].as_str()),
                    y_desc: (left && i > 0).then_some(labels[i].as_str()),
                    x_ticks: bottom,
                    y_ticks: left && i > 0,
                    left_area: Some(if left { 84 } else { 4 }),
                };
                if i == j {
                    draw_histogram(area, &data[i], p.bins, ax)?;
                    continue;
                }
                let (xs, ys) = (p.parameters[j].samples, p.parameters[i].samples);
                let pts: Vec<(f64, f64)> = xs
                    .iter()
                    .zip(ys)
                    .filter(|(x, y)| x.is_finite() && y.is_finite())
                    .map(|(x, y)| (*x, *y))
                    .collect();
                if pts.is_empty() {
                    return Err(empty(&format!(
                        "{} vs {}",
                        p.parameters[i].name, p.parameters[j].name
                    )));
                }
                let (xr, yr) = (ranges[j], ranges[i]);
                let mut chart = small_chart(area, ax, xr, yr)?;
                match p.style {
                    PairStyle::Points { max_points } => {
                        let stride = pts.len().div_ceil(max_points).max(1);
                        chart.draw_series(pts.iter().step_by(stride).map(|&q| {
                            marker(MarkerShape::FilledCircle, RGBColor(40, 40, 40), q, 1)
                        }))?;
                    }
                    PairStyle::Density { bins } => {
                        let mut counts = vec![0usize; bins * bins];
                        let cell = |v: f64, (a, b): (f64, f64)| {
                            let k = (((v - a) / (b - a)) * bins as f64).floor();
                            (k.max(0.0) as usize).min(bins - 1)
                        };
                        for &(x, y) in &pts {
                            counts[cell(y, yr) * bins + cell(x, xr)] += 1;
                        }
                        let max = counts.iter().copied().max().unwrap_or(1).max(1) as f64;
                        let (wx, wy) = ((xr.1 - xr.0) / bins as f64, (yr.1 - yr.0) / bins as f64);
                        chart.draw_series(
                            counts
                                .iter()
                                .enumerate()
                                .filter(|(_, c)| **c > 0)
                                .map(|(k, &c)| {
                                    let (ix, iy) = (k % bins, k / bins);
                                    let g = (230.0 - 200.0 * (c as f64 / max).sqrt()).round() as u8;
                                    let (xa, ya) = (xr.0 + wx * ix as f64, yr.0 + wy * iy as f64);
                                    Rectangle::new(
                                        [(xa, ya), (xa + wx, ya + wy)],
                                        RGBColor(g, g, g).filled(),
                                    )
                                }),
                        )?;
                    }
                }
            }
        }
        Ok(())
    })
}

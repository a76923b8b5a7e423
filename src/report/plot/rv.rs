//! Radial-velocity pictures: the time series of several instruments with
//! model curves and residuals, and the phase-folded signal of one planet.

use plotters::prelude::*;

use super::axis::{TimeOffset, finite_extent, padded, tick_label, union};
use super::style::{
    FONT, GRID_GREY, LABEL_PX, LineDash, MarkerShape, TICK_PX, TITLE_PX, draw_legend, draw_line,
    finite_runs, marker, series_colour,
};
use super::{PlotError, PlotSize, empty, render_svg, same_len};

/// Measurements of one instrument.
#[derive(Debug, Clone, Copy)]
pub struct RvPoints<'a> {
    /// Instrument name (legend text).
    pub name: &'a str,
    /// Epochs \[d\] (any day count, e.g. BJD_TDB).
    pub time: &'a [f64],
    /// Radial velocities \[m/s\], instrument offset removed.
    pub rv: &'a [f64],
    /// 1σ uncertainties \[m/s\] drawn as error bars (negative ones are skipped).
    pub error: &'a [f64],
    /// Residuals data − model \[m/s\] (the first model curve's), same length as
    /// `time`; empty when there are none for this instrument.
    pub residual: &'a [f64],
}

/// A model RV curve sampled densely in time.
#[derive(Debug, Clone, Copy)]
pub struct ModelCurve<'a> {
    /// Legend text (e.g. "Keplerian", "dynamical").
    pub name: &'a str,
    /// Epochs \[d\], increasing.
    pub time: &'a [f64],
    /// Model RV \[m/s\].
    pub rv: &'a [f64],
}

/// RV time series of several instruments with model curves and a residual
/// panel below sharing the time axis.
#[derive(Debug, Clone, Copy)]
pub struct RvTimeSeriesPlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// Name of the time scale for the axis label (e.g. "BJD_TDB").
    pub time_scale: &'a str,
    /// One entry per instrument (one marker shape each).
    pub instruments: &'a [RvPoints<'a>],
    /// Model curves (one dash style each).
    pub models: &'a [ModelCurve<'a>],
    /// Picture size.
    pub size: PlotSize,
}

/// Phase-folded measurements of one instrument.
#[derive(Debug, Clone, Copy)]
pub struct PhasePoints<'a> {
    /// Instrument name (legend text).
    pub name: &'a str,
    /// Orbital phase in cycles (wrapped into [0, 1)).
    pub phase: &'a [f64],
    /// RV with all other signals removed \[m/s\].
    pub rv: &'a [f64],
    /// 1σ uncertainties \[m/s\].
    pub error: &'a [f64],
}

/// Phase-folded signal of one planet: RV with the other signals removed
/// against phase, with the planet's model curve.
#[derive(Debug, Clone, Copy)]
pub struct PhaseFoldPlot<'a> {
    /// Title of the figure (e.g. "planet b, P = 12.31 d").
    pub title: &'a str,
    /// One entry per instrument.
    pub instruments: &'a [PhasePoints<'a>],
    /// Legend text of the model curve.
    pub model_name: &'a str,
    /// Phases of the model curve \[cycles\] (any order; wrapped and sorted).
    pub model_phase: &'a [f64],
    /// Model RV of this planet alone \[m/s\].
    pub model_rv: &'a [f64],
    /// Picture size.
    pub size: PlotSize,
}

/// A finite measurement: (x, v, σ).
type Point = (f64, f64, f64);

/// Keeps the measurements whose x, v and σ are finite (σ ≥ 0).
fn finite_points(x: &[f64], v: &[f64], e: &[f64]) -> Vec<Point> {
    x.iter()
        .zip(v)
        .zip(e)
        .map(|((&x, &v), &e)| (x, v, e))
        .filter(|&(x, v, e)| x.is_finite() && v.is_finite() && e.is_finite() && e >= 0.0)
        .collect()
}

/// Draws error bars and markers of series `idx` named `name` with a legend
/// entry.
fn draw_points<'a, DB, CT>(
    chart: &mut ChartContext<'a, DB, CT>,
    idx: usize,
    name: Option<&str>,
    pts: &[Point],
) -> Result<(), PlotError>
where
    DB: DrawingBackend + 'a,
    CT: CoordTranslate<From = (f64, f64)>,
    DB::ErrorType: 'static,
{
    let colour = series_colour(idx);
    let shape = MarkerShape::nth(idx);
    chart.draw_series(pts.iter().filter(|p| p.2 > 0.0).map(|&(x, v, e)| {
        PathElement::new(vec![(x, v - e), (x, v + e)], colour.stroke_width(1))
    }))?;
    let anno = chart.draw_series(
        pts.iter()
            .map(|&(x, v, _)| marker(shape, colour, (x, v), 4)),
    )?;
    if let Some(name) = name {
        anno.label(name)
            .legend(move |(x, y)| marker(shape, colour, (x + 10, y), 4));
    }
    Ok(())
}

/// Draws the RV time series of [`RvTimeSeriesPlot`]: an upper panel with
/// the measurements (error bars, one marker shape per instrument) and the
/// model curves (one dash per model), and, when residuals are given, a
/// lower panel of residuals sharing the time axis. Epochs are drawn as
/// t − offset ([`TimeOffset::choose`]) and the axis label says so.
pub fn rv_time_series(p: &RvTimeSeriesPlot<'_>) -> Result<String, PlotError> {
    if p.instruments.is_empty() {
        return Err(empty("instruments"));
    }
    let mut data = Vec::with_capacity(p.instruments.len());
    let mut resid = Vec::with_capacity(p.instruments.len());
    for ins in p.instruments {
        same_len(ins.name, ins.time.len(), ins.rv.len())?;
        same_len(ins.name, ins.time.len(), ins.error.len())?;
        let pts = finite_points(ins.time, ins.rv, ins.error);
        if pts.is_empty() {
            return Err(empty(ins.name));
        }
        data.push(pts);
        if ins.residual.is_empty() {
            resid.push(Vec::new());
        } else {
            same_len(ins.name, ins.time.len(), ins.residual.len())?;
            resid.push(finite_points(ins.time, ins.residual, ins.error));
        }
    }
    let mut curves = Vec::with_capacity(p.models.len());
    for m in p.models {
        same_len(m.name, m.time.len(), m.rv.len())?;
        let runs = finite_runs(m.time, m.rv);
        if runs.is_empty() {
            return Err(empty(m.name));
        }
        curves.push(runs);
    }

    let all_pts = || data.iter().flatten();
    let all_curve = || curves.iter().flatten().flatten();
    let t_ext = union(
        finite_extent(all_pts().map(|p| p.0)),
        finite_extent(all_curve().map(|p| p.0)),
    )
    .ok_or_else(|| empty("time"))?;
    let off = TimeOffset::choose(t_ext.0, t_ext.1);
    let (x0, x1) = padded(off.apply(t_ext.0), off.apply(t_ext.1), 0.02);
    let xspan = x1 - x0;
    let v_ext = union(
        finite_extent(all_pts().flat_map(|p| [p.1 - p.2, p.1 + p.2])),
        finite_extent(all_curve().map(|p| p.1)),
    )
    .ok_or_else(|| empty("rv"))?;
    let (y0, y1) = padded(v_ext.0, v_ext.1, 0.06);
    // Head room for the legend box in the upper corner.
    let y1 = y1 + 0.22 * (y1 - y0);

    let shift = |pts: &Vec<Point>| -> Vec<Point> {
        pts.iter().map(|&(t, v, e)| (off.apply(t), v, e)).collect()
    };
    let has_resid = resid.iter().any(|r| !r.is_empty());
    let time_label = off.label(&format!("time ({})", p.time_scale), "d");

    render_svg(p.size, |root| {
        let root = root.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let (upper, lower) = if has_resid {
            let h = root.dim_in_pixel().1;
            root.split_vertically((h as f64 * 0.70) as u32)
        } else {
            let h = root.dim_in_pixel().1;
            root.split_vertically(h)
        };
        let mut chart = ChartBuilder::on(&upper)
            .margin_left(12)
            .margin_right(24)
            .margin_top(8)
            .x_label_area_size(if has_resid { 0 } else { 56 })
            .y_label_area_size(84)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        let fx = |v: &f64| tick_label(*v, xspan);
        let fy = |v: &f64| tick_label(*v, y1 - y0);
        let mut mesh = chart.configure_mesh();
        mesh.light_line_style(WHITE)
            .bold_line_style(GRID_GREY)
            .x_labels(10)
            .y_labels(10)
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .y_desc("RV [m/s]")
            .label_style((FONT, TICK_PX))
            .axis_desc_style((FONT, LABEL_PX));
        if !has_resid {
            mesh.x_desc(time_label.as_str());
        }
        mesh.draw()?;
        for (i, (ins, pts)) in p.instruments.iter().zip(&data).enumerate() {
            draw_points(&mut chart, i, Some(ins.name), &shift(pts))?;
        }
        for (i, (m, runs)) in p.models.iter().zip(&curves).enumerate() {
            let runs: Vec<Vec<(f64, f64)>> = runs
                .iter()
                .map(|r| r.iter().map(|&(t, v)| (off.apply(t), v)).collect())
                .collect();
            draw_line(&mut chart, &runs, LineDash::nth(i), BLACK, Some(m.name))?;
        }
        draw_legend(&mut chart, SeriesLabelPosition::UpperRight)?;

        if has_resid {
            let r_ext = finite_extent(resid.iter().flatten().flat_map(|p| [p.1 - p.2, p.1 + p.2]))
                .ok_or_else(|| empty("residuals"))?;
            let m = r_ext.0.abs().max(r_ext.1.abs());
            let (r0, r1) = padded(-m, m, 0.08);
            let mut rc = ChartBuilder::on(&lower)
                .margin_left(12)
                .margin_right(24)
                .margin_top(6)
                .x_label_area_size(56)
                .y_label_area_size(84)
                .build_cartesian_2d(x0..x1, r0..r1)?;
            rc.configure_mesh()
                .light_line_style(WHITE)
                .bold_line_style(GRID_GREY)
                .x_labels(10)
                .y_labels(5)
                .x_label_formatter(&|v| tick_label(*v, xspan))
                .y_label_formatter(&|v| tick_label(*v, r1 - r0))
                .x_desc(time_label.as_str())
                .y_desc("O \u{2212} C [m/s]")
                .label_style((FONT, TICK_PX))
                .axis_desc_style((FONT, LABEL_PX))
                .draw()?;
            rc.draw_series(std::iter::once(PathElement::new(
                vec![(x0, 0.0), (x1, 0.0)],
                BLACK.stroke_width(1),
            )))?;
            for (i, pts) in resid.iter().enumerate() {
                draw_points(&mut rc, i, None, &shift(pts))?;
            }
        }
        Ok(())
    })
}

/// Draws the phase-folded signal of [`PhaseFoldPlot`]: RV with the other
/// signals removed against orbital phase in [0, 1), error bars and one
/// marker shape per instrument, and the model curve of this planet.
pub fn phase_fold_plot(p: &PhaseFoldPlot<'_>) -> Result<String, PlotError> {
    if p.instruments.is_empty() {
        return Err(empty("instruments"));
    }
    let mut data = Vec::with_capacity(p.instruments.len());
    for ins in p.instruments {
        same_len(ins.name, ins.phase.len(), ins.rv.len())?;
        same_len(ins.name, ins.phase.len(), ins.error.len())?;
        let pts: Vec<Point> = finite_points(ins.phase, ins.rv, ins.error)
            .into_iter()
            .map(|(ph, v, e)| (ph.rem_euclid(1.0), v, e))
            .collect();
        if pts.is_empty() {
            return Err(empty(ins.name));
        }
        data.push(pts);
    }
    same_len(p.model_name, p.model_phase.len(), p.model_rv.len())?;
    let mut model: Vec<(f64, f64)> = p
        .model_phase
        .iter()
        .zip(p.model_rv)
        .filter(|(ph, v)| ph.is_finite() && v.is_finite())
        .map(|(ph, v)| (ph.rem_euclid(1.0), *v))
        .collect();
    if model.is_empty() {
        return Err(empty(p.model_name));
    }
    model.sort_by(|a, b| a.0.total_cmp(&b.0));

    let v_ext = union(
        finite_extent(data.iter().flatten().flat_map(|p| [p.1 - p.2, p.1 + p.2])),
        finite_extent(model.iter().map(|p| p.1)),
    )
    .ok_or_else(|| empty("rv"))?;
    let (y0, y1) = padded(v_ext.0, v_ext.1, 0.06);
    let y1 = y1 + 0.22 * (y1 - y0);

    render_svg(p.size, |root| {
        let mut chart = ChartBuilder::on(root)
            .caption(p.title, (FONT, TITLE_PX))
            .margin(14)
            .x_label_area_size(56)
            .y_label_area_size(84)
            .build_cartesian_2d(0.0..1.0, y0..y1)?;
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID_GREY)
            .x_labels(11)
            .y_labels(8)
            .x_label_formatter(&|v| tick_label(*v, 1.0))
            .y_label_formatter(&|v| tick_label(*v, y1 - y0))
            .x_desc("orbital phase [cycles]")
            .y_desc("RV \u{2212} other signals [m/s]")
            .label_style((FONT, TICK_PX))
            .axis_desc_style((FONT, LABEL_PX))
            .draw()?;
        for (i, (ins, pts)) in p.instruments.iter().zip(&data).enumerate() {
            draw_points(&mut chart, i, Some(ins.name), pts)?;
        }
        draw_line(
            &mut chart,
            &[model],
            LineDash::Solid,
            BLACK,
            Some(p.model_name),
        )?;
        draw_legend(&mut chart, SeriesLabelPosition::UpperRight)?;
        Ok(())
    })
}

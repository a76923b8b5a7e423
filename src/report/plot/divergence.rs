//! Dynamical minus Keplerian velocity over time, with the threshold band,
//! the divergence horizon and the span of the data.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::axis::{TimeOffset, finite_extent, padded, tick_label, union};
use super::style::{
    FONT, GRID_GREY, Glyph, LABEL_PX, LEGEND_PX, LIGHT_GREY, LineDash, TICK_PX, TITLE_PX,
    draw_line, finite_runs, legend_strip,
};
use super::{PlotError, PlotSize, empty, render_svg, same_len};

/// v_dyn − v_kep against time ([`divergence_plot`]).
#[derive(Debug, Clone, Copy)]
pub struct DivergencePlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// Name of the time scale for the axis label (e.g. "BJD_TDB").
    pub time_scale: &'a str,
    /// Epochs \[d\], increasing.
    pub time: &'a [f64],
    /// Dynamical minus Keplerian RV \[m/s\] at each epoch.
    pub delta_v: &'a [f64],
    /// Half-width v of the band ±v \[m/s\] (e.g. the typical measurement
    /// error); must be finite and > 0.
    pub threshold: f64,
    /// Epoch from which |Δv| stays above the threshold \[d\], if reached.
    pub horizon: Option<f64>,
    /// First and last epoch of the data \[d\], shaded.
    pub data_span: Option<(f64, f64)>,
    /// Picture size.
    pub size: PlotSize,
}

/// Draws v_dyn − v_kep against time: the curve (solid), the band ±v
/// (dashed edges on light shading), the data span (grey shading), and the
/// divergence horizon (short-dashed vertical line, labelled). Epochs are
/// drawn as t − offset ([`TimeOffset::choose`]).
pub fn divergence_plot(p: &DivergencePlot<'_>) -> Result<String, PlotError> {
    same_len("v_dyn - v_kep", p.time.len(), p.delta_v.len())?;
    if !(p.threshold > 0.0) || !p.threshold.is_finite() {
        return Err(PlotError::InvalidSetting {
            what: "threshold".into(),
            why: format!("{} m/s is not a finite positive velocity", p.threshold),
        });
    }
    let runs = finite_runs(p.time, p.delta_v);
    if runs.is_empty() {
        return Err(empty("v_dyn - v_kep"));
    }
    let horizon = p.horizon.filter(|h| h.is_finite());
    let span = p
        .data_span
        .filter(|(a, b)| a.is_finite() && b.is_finite())
        .map(|(a, b)| (a.min(b), a.max(b)));
    let mut t_ext = finite_extent(runs.iter().flatten().map(|q| q.0));
    t_ext = union(t_ext, horizon.map(|h| (h, h)));
    t_ext = union(t_ext, span);
    let (ta, tb) = t_ext.ok_or_else(|| empty("time"))?;
    let off = TimeOffset::choose(ta, tb);
    let (x0, x1) = padded(off.apply(ta), off.apply(tb), 0.02);
    let (va, vb) =
        finite_extent(runs.iter().flatten().map(|q| q.1)).ok_or_else(|| empty("v_dyn - v_kep"))?;
    let (y0, y1) = padded(va.min(-p.threshold), vb.max(p.threshold), 0.08);
    let runs: Vec<Vec<(f64, f64)>> = runs
        .iter()
        .map(|r| r.iter().map(|&(t, v)| (off.apply(t), v)).collect())
        .collect();
    let x_desc = off.label(&format!("time ({})", p.time_scale), "d");
    let band_label = format!(
        "\u{00b1}{} m/s threshold",
        tick_label(p.threshold, p.threshold)
    );

    render_svg(p.size, |root| {
        let root = root.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let (strip, body) = root.split_vertically(36);
        let mut entries = vec![
            (Glyph::Line(LineDash::Solid, BLACK), "v_dyn \u{2212} v_kep"),
            (Glyph::Line(LineDash::Dashed, BLACK), band_label.as_str()),
        ];
        if span.is_some() {
            entries.push((Glyph::Swatch(LIGHT_GREY), "data span"));
        }
        if horizon.is_some() {
            entries.push((
                Glyph::Line(LineDash::ShortDashed, BLACK),
                "divergence horizon",
            ));
        }
        legend_strip(&strip, &entries)?;
        let mut chart = ChartBuilder::on(&body)
            .margin_left(12)
            .margin_right(24)
            .margin_top(6)
            .x_label_area_size(56)
            .y_label_area_size(84)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        let fx = |v: &f64| tick_label(*v, x1 - x0);
        let fy = |v: &f64| tick_label(*v, y1 - y0);
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID_GREY)
            .x_labels(10)
            .y_labels(8)
            .x_label_formatter(&fx)
            .y_label_formatter(&fy)
            .x_desc(x_desc.as_str())
            .y_desc("v_dyn \u{2212} v_kep [m/s]")
            .label_style((FONT, TICK_PX))
            .axis_desc_style((FONT, LABEL_PX))
            .draw()?;
        if let Some((a, b)) = span {
            chart.draw_series(std::iter::once(Rectangle::new(
                [(off.apply(a), y0), (off.apply(b), y1)],
                LIGHT_GREY.filled(),
            )))?;
        }
        chart.draw_series(std::iter::once(Rectangle::new(
            [(x0, -p.threshold), (x1, p.threshold)],
            RGBColor(242, 242, 242).filled(),
        )))?;
        for v in [-p.threshold, p.threshold] {
            draw_line(
                &mut chart,
                &[vec![(x0, v), (x1, v)]],
                LineDash::Dashed,
                BLACK,
                None,
            )?;
        }
        draw_line(&mut chart, &runs, LineDash::Solid, BLACK, None)?;
        if let Some(h) = horizon {
            let x = off.apply(h);
            draw_line(
                &mut chart,
                &[vec![(x, y0), (x, y1)]],
                LineDash::ShortDashed,
                BLACK,
                None,
            )?;
            let right_half = x > 0.5 * (x0 + x1);
            let anchor = if right_half { HPos::Right } else { HPos::Left };
            let dx = if right_half { -0.006 } else { 0.006 } * (x1 - x0);
            chart.draw_series(std::iter::once(Text::new(
                format!("horizon {}", tick_label(x, x1 - x0)),
                (x + dx, y1),
                TextStyle::from((FONT, LEGEND_PX).into_font()).pos(Pos::new(anchor, VPos::Top)),
            )))?;
        }
        Ok(())
    })
}

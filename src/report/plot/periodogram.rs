//! Periodogram pictures: power against period on a logarithmic axis, with
//! false-alarm levels, stacked for the steps of signal peeling.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::axis::{finite_extent, sig_label, tick_label};
use super::style::{
    FONT, GRID_GREY, LABEL_PX, LEGEND_PX, LineDash, MarkerShape, TICK_PX, TITLE_PX, draw_line,
    marker,
};
use super::{PlotError, PlotSize, empty, render_svg, same_len};

/// A horizontal false-alarm level.
#[derive(Debug, Clone, Copy)]
pub struct FapLevel<'a> {
    /// Text written at the line (e.g. "FAP 1 %").
    pub label: &'a str,
    /// Power of the level (same normalisation as the periodogram).
    pub power: f64,
}

/// One periodogram panel (one peeling step).
#[derive(Debug, Clone, Copy)]
pub struct PeriodogramPanel<'a> {
    /// Panel caption (e.g. "residuals after b").
    pub title: &'a str,
    /// Trial periods \[d\] (positive; any order).
    pub period: &'a [f64],
    /// Power at each period.
    pub power: &'a [f64],
    /// False-alarm levels drawn as labelled horizontal lines.
    pub fap_levels: &'a [FapLevel<'a>],
    /// Period of the peak taken at this step \[d\], marked by a vertical line.
    pub peak_period: Option<f64>,
}

/// Stacked periodograms sharing one logarithmic period axis.
#[derive(Debug, Clone, Copy)]
pub struct PeriodogramPlot<'a> {
    /// Title of the figure.
    pub title: &'a str,
    /// Name of the power with its normalisation (e.g. "GLS power \[normalised\]").
    pub power_label: &'a str,
    /// Panels from top to bottom.
    pub panels: &'a [PeriodogramPanel<'a>],
    /// Picture size (see [`PeriodogramPlot::suggested_size`]).
    pub size: PlotSize,
}

impl PeriodogramPlot<'_> {
    /// 960 px wide, 70 px for the title and axis text plus 230 px a panel.
    pub fn suggested_size(panels: usize) -> PlotSize {
        PlotSize::new(960, 90 + 230 * panels.max(1) as u32)
    }
}

/// Keeps, for each of `columns` equal bins of log period, the lowest and
/// the highest point (in period order), so that a line drawn through the
/// kept points looks as the full one at that resolution while the file
/// stays small (min/max envelope decimation, common practice for plotting
/// long series). Input sorted by period.
fn envelope(points: &[(f64, f64)], lo: f64, hi: f64, columns: usize) -> Vec<(f64, f64)> {
    if points.len() <= 2 * columns {
        return points.to_vec();
    }
    let (l0, l1) = (lo.ln(), hi.ln());
    let mut out = Vec::with_capacity(2 * columns + 2);
    let mut i = 0;
    while i < points.len() {
        let col = |p: f64| (((p.ln() - l0) / (l1 - l0)) * columns as f64).floor() as i64;
        let c = col(points[i].0);
        let mut j = i;
        let (mut imin, mut imax) = (i, i);
        while j < points.len() && col(points[j].0) == c {
            if points[j].1 < points[imin].1 {
                imin = j;
            }
            if points[j].1 > points[imax].1 {
                imax = j;
            }
            j += 1;
        }
        let (a, b) = if imin <= imax {
            (imin, imax)
        } else {
            (imax, imin)
        };
        out.push(points[a]);
        if b != a {
            out.push(points[b]);
        }
        i = j;
    }
    out
}

/// Draws stacked periodograms ([`PeriodogramPlot`]): in each panel the
/// power against period on a logarithmic axis (the same range in all
/// panels), the false-alarm levels as labelled horizontal lines and the
/// peak taken at that step as a vertical line with its period written.
pub fn periodogram_plot(p: &PeriodogramPlot<'_>) -> Result<String, PlotError> {
    if p.panels.is_empty() {
        return Err(empty("panels"));
    }
    let mut series = Vec::with_capacity(p.panels.len());
    for panel in p.panels {
        same_len(panel.title, panel.period.len(), panel.power.len())?;
        let mut pts: Vec<(f64, f64)> = panel
            .period
            .iter()
            .zip(panel.power)
            .filter(|(x, y)| x.is_finite() && **x > 0.0 && y.is_finite())
            .map(|(x, y)| (*x, *y))
            .collect();
        if pts.is_empty() {
            return Err(empty(panel.title));
        }
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        series.push(pts);
    }
    let (plo, phi) =
        finite_extent(series.iter().flatten().map(|q| q.0)).ok_or_else(|| empty("period"))?;
    let (plo, phi) = if phi > plo {
        (plo, phi)
    } else {
        (plo / 1.5, phi * 1.5)
    };
    let (x0, x1) = (plo / 1.05, phi * 1.05);
    let columns = 2 * p.size.width as usize;

    render_svg(p.size, |canvas| {
        let root = canvas.titled(p.title, (FONT, TITLE_PX).into_font())?;
        let n = p.panels.len();
        let h = root.dim_in_pixel().1;
        // Equal panels; the last one also holds the period axis text.
        let axis_h = 30u32;
        let ph = (h.saturating_sub(axis_h) / n as u32).max(60);
        let breaks: Vec<u32> = (1..n as u32).map(|k| k * ph).collect();
        let areas = root.split_by_breakpoints::<u32, u32, _, _>([], breaks);
        for (k, (panel, pts)) in p.panels.iter().zip(&series).enumerate() {
            let last = k + 1 == n;
            let area = &areas[k];
            let y_max = pts
                .iter()
                .map(|q| q.1)
                .chain(
                    panel
                        .fap_levels
                        .iter()
                        .map(|f| f.power)
                        .filter(|v| v.is_finite()),
                )
                .fold(0.0f64, f64::max);
            let y_min = pts.iter().map(|q| q.1).fold(0.0f64, f64::min);
            let y_top = if y_max > y_min { y_max * 1.18 } else { 1.0 };
            let mut chart = ChartBuilder::on(area)
                .caption(panel.title, (FONT, LABEL_PX))
                .margin_left(12)
                .margin_right(96)
                .margin_top(4)
                .x_label_area_size(if last { 56 } else { 26 })
                .y_label_area_size(84)
                .build_cartesian_2d((x0..x1).log_scale(), y_min..y_top)?;
            let fy = |v: &f64| tick_label(*v, y_top - y_min);
            let fx = |v: &f64| sig_label(*v);
            let mut mesh = chart.configure_mesh();
            mesh.light_line_style(WHITE)
                .bold_line_style(GRID_GREY)
                .x_labels(12)
                .y_labels(6)
                .x_label_formatter(&fx)
                .y_label_formatter(&fy)
                .y_desc(p.power_label)
                .label_style((FONT, TICK_PX))
                .axis_desc_style((FONT, LABEL_PX));
            if last {
                mesh.x_desc("period [d]");
            }
            mesh.draw()?;
            let thin = envelope(pts, x0, x1, columns);
            draw_line(&mut chart, &[thin], LineDash::Solid, BLACK, None)?;
            // Levels as lines; their labels in the right margin, pushed
            // apart (≥ 16 px) where levels lie close together.
            let mut marks: Vec<(i32, &str)> = Vec::new();
            for (i, f) in panel.fap_levels.iter().enumerate() {
                if !f.power.is_finite() || f.power < y_min || f.power > y_top {
                    continue;
                }
                draw_line(
                    &mut chart,
                    &[vec![(x0, f.power), (x1, f.power)]],
                    LineDash::nth(i + 1),
                    RGBColor(80, 80, 80),
                    None,
                )?;
                marks.push((chart.backend_coord(&(x1, f.power)).1, f.label));
            }
            marks.sort_by_key(|m| std::cmp::Reverse(m.0));
            for k in 1..marks.len() {
                if marks[k - 1].0 - marks[k].0 < 16 {
                    marks[k].0 = marks[k - 1].0 - 16;
                }
            }
            let x_text = chart.backend_coord(&(x1, y_min)).0 + 8;
            for (y, label) in marks {
                canvas.draw(&Text::new(
                    label.to_string(),
                    (x_text, y),
                    TextStyle::from((FONT, LEGEND_PX).into_font())
                        .pos(Pos::new(HPos::Left, VPos::Center)),
                ))?;
            }
            if let Some(pk) = panel.peak_period.filter(|v| v.is_finite() && *v > 0.0) {
                let near = pts
                    .iter()
                    .min_by(|a, b| {
                        (a.0.ln() - pk.ln())
                            .abs()
                            .total_cmp(&(b.0.ln() - pk.ln()).abs())
                    })
                    .map(|q| q.1)
                    .unwrap_or(y_top);
                draw_line(
                    &mut chart,
                    &[vec![(pk, y_min), (pk, y_top)]],
                    LineDash::ShortDashed,
                    BLACK,
                    None,
                )?;
                chart.draw_series(std::iter::once(marker(
                    MarkerShape::OpenTriangleDown,
                    BLACK,
                    (pk, near),
                    5,
                )))?;
                chart.draw_series(std::iter::once(Text::new(
                    format!("peak {} d", sig_label(pk)),
                    (pk * 1.03, y_top),
                    TextStyle::from((FONT, LEGEND_PX).into_font())
                        .pos(Pos::new(HPos::Left, VPos::Top)),
                )))?;
            }
        }
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::envelope;

    #[test]
    fn envelope_keeps_extremes_and_order() {
        let pts: Vec<(f64, f64)> = (0..100_000)
            .map(|i| {
                let p = 1.0 + i as f64 * 1e-3;
                (p, if i == 54_321 { 9.0 } else { (i as f64).sin() })
            })
            .collect();
        let kept = envelope(&pts, 1.0, 101.0, 500);
        assert!(kept.len() <= 2 * 500 + 2);
        assert!(kept.iter().any(|&(_, y)| y == 9.0));
        let lo = pts.iter().map(|q| q.1).fold(f64::INFINITY, f64::min);
        assert!(kept.iter().any(|&(_, y)| y == lo));
        assert!(kept.windows(2).all(|w| w[1].0 > w[0].0));
    }
}

//! The pictures of a job as SVG strings, from its reports: the
//! periodogram with its peeling steps, the RVs with both models and
//! residuals, each planet's phase-folded signal, and the posterior's
//! histograms and pair plot, and the heat map of a stability map. Drawing
//! is `report::plot`'s; this module only evaluates the models on grids and
//! arranges the series.

use crate::fit::models::{ModelError, ModelKind, RvModel};
use crate::model::keplerian::{PlanetSignal, add_planet_signal};
use crate::report::plot::{
    FapLevel, HistogramGridPlot, ModelCurve, PairPlot, PairStyle, ParameterSamples,
    PeriodogramPanel, PeriodogramPlot, PhaseFoldPlot, PhasePoints, PlotError, PlotSize, RvPoints,
    RvTimeSeriesPlot, histogram_grid, pair_plot, periodogram_plot, phase_fold_plot, rv_time_series,
};

use super::search::SearchReport;
use crate::report::plot::{CellMarks, ColourScale, GridAxis, HeatMapPlot, heat_map_marked};
use crate::stability::map::{Indicator, StabilityMap};

/// Colour range of ⟨Y⟩ in [`map_picture`]: from 1.5 (below the
/// quasi-periodic value 2, so that regular cells are not all at the dark
/// end and periodic ones, ⟨Y⟩ → 0, show as darkest) to 8 (four times the
/// regular value, well past the chaotic threshold
/// [`crate::stability::megno::CHAOTIC_MIN`] = 4). Values outside are drawn
/// at the ends and the colour bar says "clipped".
pub const MEGNO_CLIP: (f64, f64) = (1.5, 8.0);

/// Colour range of [`map_picture`] for a map: [`MEGNO_CLIP`] for ⟨Y⟩, 0 to
/// the run length for survival (outer orbits), 0 to 1 for the largest
/// eccentricity, 0 to the largest cell value for the drift |Δa|/a (at
/// least 10⁻⁹, so that the range is never empty).
pub fn map_clip(map: &StabilityMap) -> (f64, f64) {
    match map.settings.indicator {
        Indicator::Megno => MEGNO_CLIP,
        Indicator::SurvivalOrbits => (0.0, map.settings.run.orbits),
        Indicator::MaxEccentricity => (0.0, 1.0),
        Indicator::AxisDrift => {
            let hi = map
                .cells
                .iter()
                .filter_map(|c| c.value)
                .filter(|v| v.is_finite())
                .fold(1e-9, f64::max);
            (0.0, hi)
        }
    }
}

/// The heat map of a stability map (SVG): x and y the two varied
/// osculating Jacobi elements labelled with name, planet and unit
/// ([`crate::stability::map::Element::axis_label`]), colour the indicator
/// ([`Indicator::label`]) on the viridis scale (dark low, light high, so a
/// grey print keeps the order) clipped to [`map_clip`]. Cells disrupted by
/// an event before the end of their run
/// ([`crate::stability::map::MapCell::disrupted`]) carry a dot; with MEGNO,
/// which is not computed for them, they are filled with the chaotic end
/// of the scale. Cells without a value (impossible systems, a failed MEGNO
/// integration) are white with a cross. `system` names the system in the
/// title.
///
/// # Errors
/// An axis with fewer than two values or with max ≤ min cannot be drawn
/// as a heat map ([`PlotError::InvalidSetting`]).
pub fn map_picture(map: &StabilityMap, system: &str) -> Result<String, PictureError> {
    let s = &map.settings;
    let clip = map_clip(map);
    let megno = s.indicator == Indicator::Megno;
    let values: Vec<f64> = map
        .cells
        .iter()
        .map(|c| match c.value {
            Some(v) if v.is_finite() => v,
            _ if megno && c.disrupted() => clip.1,
            _ => f64::NAN,
        })
        .collect();
    let marked: Vec<bool> = map.cells.iter().map(|c| c.disrupted()).collect();
    let (xl, yl) = (
        s.x.element.axis_label(s.x.planet),
        s.y.element.axis_label(s.y.planet),
    );
    let title = format!(
        "{system}: {}, {} outer orbits per cell",
        if megno { "MEGNO map" } else { "stability map" },
        s.run.orbits
    );
    let label = "disrupted";
    Ok(heat_map_marked(
        &HeatMapPlot {
            title: &title,
            x: GridAxis {
                label: &xl,
                min: s.x.min,
                max: s.x.max,
                count: s.x.n,
            },
            y: GridAxis {
                label: &yl,
                min: s.y.min,
                max: s.y.max,
                count: s.y.n,
            },
            values: &values,
            value_label: s.indicator.label(),
            clip,
            scale: ColourScale::Viridis,
            size: PlotSize::default(),
        },
        Some(&CellMarks {
            marked: &marked,
            label,
        }),
    )?)
}

/// Why a picture could not be drawn.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PictureError {
    /// The drawing failed.
    #[error(transparent)]
    Plot(#[from] PlotError),
    /// A model could not be evaluated.
    #[error(transparent)]
    Model(#[from] ModelError),
}

/// The periodogram of the data and of the residuals after each peeled
/// signal, with the Baluev false-alarm levels.
pub fn periodogram_picture(report: &SearchReport) -> Result<String, PictureError> {
    let labels: Vec<String> = report
        .fap_levels
        .iter()
        .map(|(f, _)| format!("FAP {}%", f * 100.0))
        .collect();
    let levels: Vec<FapLevel> = report
        .fap_levels
        .iter()
        .zip(&labels)
        .map(|((_, p), l)| FapLevel {
            label: l,
            power: *p,
        })
        .collect();
    let titles: Vec<String> = (0..report.steps.len())
        .map(|k| {
            if k == 0 {
                "data (instrument means removed)".to_string()
            } else {
                format!("residuals after {k} signal(s)")
            }
        })
        .collect();
    let panels: Vec<PeriodogramPanel> = report
        .steps
        .iter()
        .zip(&titles)
        .map(|(s, t)| PeriodogramPanel {
            title: t,
            period: &s.period,
            power: &s.power,
            fap_levels: &levels,
            peak_period: s.detection.map(|d| d.period),
        })
        .collect();
    Ok(periodogram_plot(&PeriodogramPlot {
        title: "Generalised Lomb–Scargle periodogram",
        power_label: "GLS power",
        panels: &panels,
        size: PeriodogramPlot::suggested_size(panels.len()),
    })?)
}

/// Per-instrument columns (time or phase, RV, error[, residual]).
type Columns4 = (Vec<f64>, Vec<f64>, Vec<f64>, Vec<f64>);
/// Per-instrument columns (phase, RV, error).
type Columns3 = (Vec<f64>, Vec<f64>, Vec<f64>);

/// A time grid over the data span with `n` points.
fn grid(t: &[f64], n: usize) -> Vec<f64> {
    let lo = t.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = t.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    (0..n)
        .map(|k| lo + (hi - lo) * k as f64 / (n - 1) as f64)
        .collect()
}

/// Model RV without offsets on a grid (instrument 0, its offset removed).
fn curve(model: &RvModel, full: &[f64], t: &[f64]) -> Result<Vec<f64>, ModelError> {
    let inst = vec![0usize; t.len()];
    let mut out = vec![0.0; t.len()];
    model.model_rv_at(full, t, &inst, &mut out)?;
    let g0 = model.offsets_of(full).first().copied().unwrap_or(0.0);
    out.iter_mut().for_each(|v| *v -= g0);
    Ok(out)
}

/// RVs of each instrument (offsets of the reference model removed) with
/// the curves of every fitted model, and residuals from the reference
/// model (the last of `fits`). `fits` pairs a model with its best vector.
pub fn rv_picture(fits: &[(&RvModel, &[f64])], time_scale: &str) -> Result<String, PictureError> {
    let Some(&(reference, best)) = fits.last() else {
        return Err(PlotError::EmptySeries {
            what: "models".into(),
        }
        .into());
    };
    let obs = &reference.obs;
    let offsets = reference.offsets_of(best);
    let mut resid = vec![0.0; obs.len()];
    reference.residuals(best, &mut resid)?;
    let mut per: Vec<Columns4> = Vec::new();
    for (k, offset) in offsets.iter().enumerate().take(obs.instruments.len()) {
        let idx: Vec<usize> = (0..obs.len()).filter(|&i| obs.inst[i] == k).collect();
        per.push((
            idx.iter().map(|&i| obs.t[i]).collect(),
            idx.iter().map(|&i| obs.rv[i] - offset).collect(),
            idx.iter().map(|&i| obs.err[i]).collect(),
            idx.iter().map(|&i| resid[i]).collect(),
        ));
    }
    let points: Vec<RvPoints> = per
        .iter()
        .zip(&obs.instruments)
        .map(|((t, v, e, r), name)| RvPoints {
            name,
            time: t,
            rv: v,
            error: e,
            residual: r,
        })
        .collect();
    let tg = grid(&obs.t, 4000);
    let mut curves = Vec::new();
    for (m, full) in fits {
        curves.push((
            format!("{} model", kind_label(m.kind)),
            curve(m, full, &tg)?,
        ));
    }
    let models: Vec<ModelCurve> = curves
        .iter()
        .map(|(n, v)| ModelCurve {
            name: n,
            time: &tg,
            rv: v,
        })
        .collect();
    Ok(rv_time_series(&RvTimeSeriesPlot {
        title: "Radial velocities, models and residuals",
        time_scale,
        instruments: &points,
        models: &models,
        size: PlotSize::new(1100, 760),
    })?)
}

/// Human label of a model kind.
pub fn kind_label(kind: ModelKind) -> &'static str {
    match kind {
        ModelKind::Keplerian => "Keplerian",
        ModelKind::CoplanarEdgeOn => "N-body edge-on",
        ModelKind::CoplanarSinI => "N-body sin i",
        ModelKind::ThreeDimensional => "N-body 3-D",
    }
}

/// The phase-folded signal of each planet of a Keplerian fit: data minus
/// offsets and the other planets' signals, against phase from the time
/// of periastron, with that planet's Keplerian curve. Returns (planet
/// name, SVG) pairs.
pub fn phase_pictures(
    model: &RvModel,
    full: &[f64],
) -> Result<Vec<(String, String)>, PictureError> {
    let planets = model.decode_planets(full)?;
    let obs = &model.obs;
    let offsets = model.offsets_of(full);
    let signal = |p: &crate::fit::models::DecodedPlanet| PlanetSignal {
        period: p.period,
        semi_amplitude: p.semi_amplitude,
        eccentricity: p.eccentricity,
        omega_star: p.omega_star,
        mean_anomaly_ref: p.mean_anomaly,
    };
    let mut out = Vec::new();
    for (j, p) in planets.iter().enumerate() {
        // Data minus offsets, trend-free model of all other planets.
        let mut others = vec![0.0; obs.len()];
        for (k, q) in planets.iter().enumerate() {
            if k != j {
                add_planet_signal(&signal(q), model.t_ref, &obs.t, &mut others)
                    .map_err(|e| ModelError::Evaluation(e.to_string()))?;
            }
        }
        let tp = model.t_ref - p.mean_anomaly / std::f64::consts::TAU * p.period;
        let phase_of = |t: f64| ((t - tp) / p.period).rem_euclid(1.0);
        let mut per: Vec<Columns3> = Vec::new();
        for (k, offset) in offsets.iter().enumerate().take(obs.instruments.len()) {
            let idx: Vec<usize> = (0..obs.len()).filter(|&i| obs.inst[i] == k).collect();
            per.push((
                idx.iter().map(|&i| phase_of(obs.t[i])).collect(),
                idx.iter()
                    .map(|&i| obs.rv[i] - offset - others[i])
                    .collect(),
                idx.iter().map(|&i| obs.err[i]).collect(),
            ));
        }
        let pts: Vec<PhasePoints> = per
            .iter()
            .zip(&obs.instruments)
            .map(|((ph, v, e), name)| PhasePoints {
                name,
                phase: ph,
                rv: v,
                error: e,
            })
            .collect();
        let mph: Vec<f64> = (0..=400).map(|k| k as f64 / 400.0).collect();
        let mt: Vec<f64> = mph.iter().map(|f| tp + f * p.period).collect();
        let mut mv = vec![0.0; mt.len()];
        add_planet_signal(&signal(p), model.t_ref, &mt, &mut mv)
            .map_err(|e| ModelError::Evaluation(e.to_string()))?;
        let title = format!(
            "planet {}: P = {:.3} d, K = {:.2} m/s, e = {:.3}",
            p.name, p.period, p.semi_amplitude, p.eccentricity
        );
        let svg = phase_fold_plot(&PhaseFoldPlot {
            title: &title,
            instruments: &pts,
            model_name: "Keplerian",
            model_phase: &mph,
            model_rv: &mv,
            size: PlotSize::default(),
        })?;
        out.push((p.name.clone(), svg));
    }
    Ok(out)
}

/// Posterior histograms and a pair plot of the named columns.
pub fn posterior_pictures(
    columns: &[(String, String, Vec<f64>)],
) -> Result<(String, String), PictureError> {
    let params: Vec<ParameterSamples> = columns
        .iter()
        .map(|(n, u, v)| ParameterSamples {
            name: n,
            unit: u,
            samples: v,
        })
        .collect();
    let hist = histogram_grid(&HistogramGridPlot {
        title: "Posterior distributions",
        parameters: &params,
        bins: 40,
        columns: 3,
        size: PlotSize::new(1100, 300 * params.len().div_ceil(3).max(1) as u32),
    })?;
    let side = (220 * params.len().max(1) as u32).clamp(600, 1800);
    let pairs = pair_plot(&PairPlot {
        title: "Posterior pair plot",
        parameters: &params,
        bins: 30,
        style: PairStyle::Density { bins: 30 },
        size: PlotSize::new(side, side),
    })?;
    Ok((hist, pairs))
}

/// Parse a samples CSV (as written by the sampler) into named numeric
/// columns; only the columns in `wanted` are kept, in that order.
pub fn read_sample_columns(text: &str, wanted: &[&str]) -> Vec<(String, Vec<f64>)> {
    let mut lines = text.lines();
    let Some(header) = lines.next() else {
        return Vec::new();
    };
    let names: Vec<&str> = header.split(',').collect();
    let idx: Vec<(usize, &str)> = wanted
        .iter()
        .filter_map(|w| names.iter().position(|n| n == w).map(|i| (i, *w)))
        .collect();
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); idx.len()];
    for line in lines {
        let fields: Vec<&str> = line.split(',').collect();
        for (c, (i, _)) in cols.iter_mut().zip(&idx) {
            if let Some(v) = fields.get(*i).and_then(|f| f.parse::<f64>().ok()) {
                c.push(v);
            }
        }
    }
    idx.into_iter()
        .zip(cols)
        .map(|((_, n), c)| (n.to_string(), c))
        .collect()
}

/// Unit of a fit parameter from its name (for axis labels).
pub fn parameter_unit(name: &str) -> &'static str {
    let field = name.rsplit('.').next().unwrap_or(name);
    match field {
        "period" => "d",
        "semi_amplitude" | "offset" | "jitter" => "m/s",
        "mean_longitude" | "inclination" | "node_difference" => "deg",
        "slope" => "m/s/d",
        "curvature" => "m/s/d²",
        "sqrt_e_cos_w" | "sqrt_e_sin_w" | "sin_i" => "1",
        _ => "",
    }
}

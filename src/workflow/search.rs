//! Periodogram search of a multi-instrument dataset: per-instrument
//! offsets removed, GLS spectrum, false-alarm levels, window function and
//! peeling, with starting guesses for the fits.

use serde::{Deserialize, Serialize};

use crate::data::Dataset;
use crate::fit::models::PlanetGuess;
use crate::periodogram::{
    BaluevFap, Detection, FrequencyGrid, GlsSeries, GridSettings, PeelSettings, PeelStop,
    PeriodogramError, peel_signals, spectral_window,
};

/// Settings of a periodogram search.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields, default)]
pub struct SearchSettings {
    /// Frequency grid.
    pub grid: GridSettings,
    /// Peeling.
    pub peel: PeelSettings,
}

/// A periodogram of residuals at one peeling step.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PeelStep {
    /// Periods of the grid (d), in grid order (decreasing period).
    pub period: Vec<f64>,
    /// GLS power at each period.
    pub power: Vec<f64>,
    /// The signal found at this step, if significant.
    pub detection: Option<Detection>,
}

/// The result of a periodogram search.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SearchReport {
    /// Number of points.
    pub n_points: usize,
    /// Baseline (d).
    pub baseline: f64,
    /// Weighted mean removed from each instrument (m/s), by instrument name.
    pub instrument_means: Vec<(String, f64)>,
    /// Power levels of the Baluev (2008) false-alarm probabilities 10 %,
    /// 1 % and 0.1 % for this sampling, as (FAP, power).
    pub fap_levels: Vec<(f64, f64)>,
    /// Periodogram of the data and of the residuals after each signal.
    pub steps: Vec<PeelStep>,
    /// Spectral window of the sampling on the same grid.
    pub window: Vec<f64>,
    /// The significant signals, strongest first.
    pub detections: Vec<Detection>,
    /// Why peeling stopped, in words.
    pub stop: String,
}

/// Epochs, offset-removed RVs, errors, and the removed means by instrument.
type Centred = (Vec<f64>, Vec<f64>, Vec<f64>, Vec<(String, f64)>);

/// Offsets removed: each instrument's points minus their weighted mean.
fn centred(data: &Dataset) -> Centred {
    let t = data.time().to_vec();
    let err = data.err().to_vec();
    let mut y = data.rv().to_vec();
    let mut means = Vec::new();
    for (k, inst) in data.instruments().iter().enumerate() {
        let (mut sw, mut swy) = (0.0, 0.0);
        for i in (0..y.len()).filter(|&i| data.instrument_of()[i] == k) {
            let w = 1.0 / (err[i] * err[i]);
            sw += w;
            swy += w * y[i];
        }
        let m = if sw > 0.0 { swy / sw } else { 0.0 };
        for i in (0..y.len()).filter(|&i| data.instrument_of()[i] == k) {
            y[i] -= m;
        }
        means.push((inst.name().to_string(), m));
    }
    (t, y, err, means)
}

/// Periodogram search of `data`: GLS (Zechmeister & Kürster 2009) of the
/// offset-removed RVs, Baluev (2008) false-alarm levels, the spectral
/// window, and peeling of significant sinusoids.
pub fn search(data: &Dataset, settings: &SearchSettings) -> Result<SearchReport, PeriodogramError> {
    let (t, y, err, means) = centred(data);
    let grid = FrequencyGrid::for_epochs(&t, &settings.grid)?;
    let fap = BaluevFap::new(&t, &err, grid.last())?;
    let mut fap_levels = Vec::new();
    for level in [0.1, 0.01, 0.001] {
        fap_levels.push((level, fap.power_level(level)?));
    }
    let outcome = peel_signals(&t, &y, &err, &grid, &settings.peel)?;
    let periods: Vec<f64> = grid.frequencies().iter().map(|f| 1.0 / f).collect();
    let mut steps = Vec::new();
    let mut resid = y.clone();
    for k in 0..=outcome.detections.len() {
        let gls = match GlsSeries::new(&t, &resid, &err) {
            Ok(g) => g,
            Err(PeriodogramError::ConstantData) => break,
            Err(e) => return Err(e),
        };
        let spec = gls.spectrum(&grid);
        let detection = outcome.detections.get(k).copied();
        steps.push(PeelStep {
            period: periods.clone(),
            power: spec.power,
            detection,
        });
        if let Some(d) = detection {
            for (r, &ti) in resid.iter_mut().zip(&t) {
                *r -= d.sinusoid.value_at(ti);
            }
        } else {
            break;
        }
    }
    let window = spectral_window(&t, Some(&err), &grid)?;
    let stop = match outcome.stop {
        PeelStop::SignalLimit => format!(
            "stopped at the limit of {} signals",
            settings.peel.max_signals
        ),
        PeelStop::NotSignificant { frequency, fap, .. } => format!(
            "next peak at {:.4} d has false-alarm probability {fap:.3e} > {:.1e}",
            1.0 / frequency,
            settings.peel.fap_threshold
        ),
        PeelStop::NoResidualVariance => "no variance left in the residuals".into(),
    };
    Ok(SearchReport {
        n_points: t.len(),
        baseline: data.baseline(),
        instrument_means: means,
        fap_levels,
        steps,
        window,
        detections: outcome.detections,
        stop,
    })
}

/// Starting guesses for the fits from periodogram detections: circular
/// orbits (e = 0, ω⋆ = 0) with K the sinusoid's amplitude and the mean
/// longitude at `t_ref` that puts the RV maximum where the sinusoid has
/// it, ordered by period and named `b`, `c`, ….
///
/// With e = 0 and ω⋆ = 0 the Keplerian is K cos M, and the planet's
/// λ = M + ω_p = M + 180°.
pub fn guesses_from_detections(detections: &[Detection], t_ref: f64) -> Vec<PlanetGuess> {
    let mut d: Vec<&Detection> = detections.iter().collect();
    d.sort_by(|a, b| a.period.total_cmp(&b.period));
    d.iter()
        .enumerate()
        .map(|(k, det)| {
            let s = &det.sinusoid;
            let m = std::f64::consts::TAU * s.frequency * (t_ref - s.reference_epoch) - s.phase;
            PlanetGuess {
                name: planet_letter(k),
                period: det.period,
                semi_amplitude: s.amplitude,
                eccentricity: 0.0,
                omega_star_deg: 0.0,
                mean_longitude_deg: (m.to_degrees() + 180.0).rem_euclid(360.0),
                inclination_deg: 90.0,
                node_difference_deg: 0.0,
            }
        })
        .collect()
}

/// `b`, `c`, … for planet index 0, 1, … (the trade's naming order).
pub fn planet_letter(k: usize) -> String {
    let letters = "bcdefghijklmnopqrstuvwxyz";
    letters
        .chars()
        .nth(k)
        .map_or_else(|| format!("p{k}"), |c| c.to_string())
}

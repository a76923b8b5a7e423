//! Peeling: find, refine, fit and remove sinusoidal signals one by one.

use super::{BaluevFap, FrequencyGrid, GlsSeries, PeriodogramError, Sinusoid, Spectrum};
use argmin::core::{CostFunction, Executor, State};
use argmin::solver::brent::BrentOpt;

/// When to stop peeling.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct PeelSettings {
    /// Largest number of signals to remove (default 5).
    pub max_signals: usize,
    /// Stop at the first peak whose Baluev FAP exceeds this (default 10⁻³,
    /// a common significance threshold in RV work).
    pub fap_threshold: f64,
}

impl Default for PeelSettings {
    fn default() -> Self {
        Self {
            max_signals: 5,
            fap_threshold: 1e-3,
        }
    }
}

/// One signal found by [`peel_signals`]: a starting point for a Keplerian fit.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Detection {
    /// Refined peak frequency (1/d).
    pub frequency: f64,
    /// Period 1/frequency (d).
    pub period: f64,
    /// GLS power of the peak in the residuals it was found in.
    pub power: f64,
    /// Baluev (2008) false-alarm probability of that power.
    pub fap: f64,
    /// Best-fitting offset + sinusoid at the peak, removed before the next search.
    pub sinusoid: Sinusoid,
}

/// Why peeling stopped.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum PeelStop {
    /// `max_signals` signals were found.
    SignalLimit,
    /// The highest remaining peak is not significant.
    NotSignificant {
        /// Its refined frequency (1/d).
        frequency: f64,
        /// Its power.
        power: f64,
        /// Its Baluev FAP (above the threshold).
        fap: f64,
    },
    /// The residuals are constant: nothing is left to find.
    NoResidualVariance,
}

/// Result of [`peel_signals`].
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PeelOutcome {
    /// Significant signals, in the order found (strongest first).
    pub detections: Vec<Detection>,
    /// Why the loop ended.
    pub stop: PeelStop,
}

/// Refines the grid peak `k` of `spectrum` (computed from `gls`) by Brent's
/// minimisation of −p(f) (Brent 1973; argmin `BrentOpt`) between the
/// neighbouring grid frequencies, to 10⁻⁶ of the grid step. Returns the
/// refined (frequency (1/d), power); the grid point itself if the search
/// does not improve on it.
///
/// ```
/// use apsidal::periodogram::{refine_peak, FrequencyGrid, GlsSeries};
/// let t: Vec<f64> = (0..30).map(|i| 5.0 * i as f64 + (i % 3) as f64).collect();
/// let y: Vec<f64> = t.iter().map(|t| (std::f64::consts::TAU * t / 23.4).sin()).collect();
/// let gls = GlsSeries::new(&t, &y, &vec![1.0; 30]).unwrap();
/// let grid = FrequencyGrid::new(0.01, 0.002, 100).unwrap();
/// let spectrum = gls.spectrum(&grid);
/// let (f, p) = refine_peak(&gls, &spectrum, spectrum.peak().0).unwrap();
/// assert!((f - 1.0 / 23.4).abs() < 1e-9 && (p - 1.0).abs() < 1e-12);
/// ```
pub fn refine_peak(
    gls: &GlsSeries,
    spectrum: &Spectrum,
    k: usize,
) -> Result<(f64, f64), PeriodogramError> {
    let grid = &spectrum.grid;
    if k >= grid.len() || spectrum.power.len() != grid.len() {
        return Err(PeriodogramError::InvalidSetting {
            name: "peak index",
            value: k as f64,
            reason: "must index the spectrum's grid",
        });
    }
    let f_grid = grid.frequency(k);
    let p_grid = gls.power(f_grid)?;
    if grid.len() == 1 {
        return Ok((f_grid, p_grid));
    }
    let lo = grid.frequency(k.saturating_sub(1));
    let hi = grid.frequency((k + 1).min(grid.len() - 1));
    let solver = BrentOpt::new(lo, hi).set_tolerance(1e-12, 1e-6 * grid.step());
    let result = Executor::new(NegativePower { gls }, solver)
        .configure(|s| s.max_iters(200))
        .run()
        .map_err(|e| PeriodogramError::SolverFailed {
            reason: e.to_string(),
        })?;
    match result.state().get_best_param() {
        Some(&f) if f.is_finite() => {
            let p = gls.power(f)?;
            if p > p_grid {
                Ok((f, p))
            } else {
                Ok((f_grid, p_grid))
            }
        }
        _ => Ok((f_grid, p_grid)),
    }
}

/// −p(f), the cost minimised by the refinement.
struct NegativePower<'a> {
    gls: &'a GlsSeries,
}

impl CostFunction for NegativePower<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, f: &f64) -> Result<f64, argmin::core::Error> {
        Ok(-self.gls.power(f.max(0.0)).unwrap_or(0.0))
    }
}

/// Finds periodic signals in epochs `t` (d), velocities `y` (m/s) and
/// errors `sigma` (m/s) by peeling, the usual pre-whitening of RV work:
/// compute the GLS on `grid`, take the highest peak, refine it
/// ([`refine_peak`]), compute its Baluev FAP (f_max = highest grid
/// frequency, N = all epochs), stop if the FAP exceeds
/// `settings.fap_threshold`, otherwise fit offset + sinusoid at the refined
/// frequency, subtract it and repeat, up to `settings.max_signals` signals.
///
/// The signals are sinusoids removed one at a time (not refitted jointly);
/// their periods, amplitudes and phases are starting values for a
/// Keplerian fit, not final parameters.
///
/// ```
/// use apsidal::periodogram::{peel_signals, FrequencyGrid, GridSettings, PeelSettings};
/// use std::f64::consts::TAU;
/// let t: Vec<f64> = (0..60).map(|i| 9.0 * i as f64 + 2.0 * ((i * 7) % 5) as f64).collect();
/// let y: Vec<f64> = t
///     .iter()
///     .map(|t| 10.0 * (TAU * t / 37.0).sin() + 4.0 * (TAU * t / 130.0).cos())
///     .collect();
/// let sigma = vec![1.0; t.len()];
/// let grid = FrequencyGrid::for_epochs(
///     &t,
///     &GridSettings { shortest_period: Some(20.0), ..Default::default() },
/// )
/// .unwrap();
/// let out = peel_signals(&t, &y, &sigma, &grid, &PeelSettings::default()).unwrap();
/// assert!((out.detections[0].period - 37.0).abs() < 0.01);
/// assert!((out.detections[1].period - 130.0).abs() < 0.1);
/// ```
pub fn peel_signals(
    t: &[f64],
    y: &[f64],
    sigma: &[f64],
    grid: &FrequencyGrid,
    settings: &PeelSettings,
) -> Result<PeelOutcome, PeriodogramError> {
    let threshold = settings.fap_threshold;
    if !(threshold.is_finite() && threshold > 0.0 && threshold <= 1.0) {
        return Err(PeriodogramError::InvalidSetting {
            name: "FAP threshold",
            value: threshold,
            reason: "must lie in (0, 1]",
        });
    }
    let fap = BaluevFap::new(t, sigma, grid.last())?;
    let mut residuals = y.to_vec();
    let mut detections = Vec::new();
    loop {
        if detections.len() >= settings.max_signals {
            return Ok(PeelOutcome {
                detections,
                stop: PeelStop::SignalLimit,
            });
        }
        let gls = match GlsSeries::new(t, &residuals, sigma) {
            Ok(g) => g,
            Err(PeriodogramError::ConstantData) => {
                return Ok(PeelOutcome {
                    detections,
                    stop: PeelStop::NoResidualVariance,
                });
            }
            Err(e) => return Err(e),
        };
        let spectrum = gls.spectrum(grid);
        let (k, _) = spectrum.peak();
        let (frequency, power) = refine_peak(&gls, &spectrum, k)?;
        let probability = fap.probability(power)?;
        if probability > threshold {
            return Ok(PeelOutcome {
                detections,
                stop: PeelStop::NotSignificant {
                    frequency,
                    power,
                    fap: probability,
                },
            });
        }
        let sinusoid = gls.fit(frequency)?;
        for (r, &ti) in residuals.iter_mut().zip(t) {
            *r -= sinusoid.value_at(ti);
        }
        detections.push(Detection {
            frequency,
            period: 1.0 / frequency,
            power,
            fap: probability,
            sinusoid,
        });
    }
}

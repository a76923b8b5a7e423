//! Keplerian-versus-dynamical statistics on the same data and noise model
//! (DESIGN §5): χ², ln L, BIC and AICc of both fits and their differences,
//! residual RMS per instrument, and the largest |v_dyn − v_kep| over the
//! data span.
//!
//! **Sign convention.** Every difference Δ is *dynamical − Keplerian*:
//! Δ ln L > 0 and ΔBIC < 0 favour the dynamical model. The flag
//! ([`super::flag`]) speaks of ΔBIC(Keplerian − dynamical) = −ΔBIC, the
//! quantity 2 ln B on the Kass & Raftery (1995) scale.
//!
//! **Predictions.** [`signal_rv`] evaluates a model at its parameters with
//! every instrument offset set to zero (offsets are per-instrument
//! calibration, not signal); a fitted trend is kept, as it is part of the
//! prediction. Both models are evaluated at their own best fit.

use serde::{Deserialize, Serialize};

use crate::fit::best_fit::FitResult;
use crate::fit::likelihood::{aicc, bic};
use crate::fit::models::{ModelError, ModelKind, RvModel};

/// Why a comparison could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CompareError {
    /// The two models do not hold the same data and instruments.
    #[error("the Keplerian and dynamical models do not hold the same data: {0}")]
    DifferentData(String),
    /// A parameter vector does not fit its model.
    #[error("{which}: parameter vector has {got} values, the model has {expected}")]
    VectorLength {
        /// Which model.
        which: &'static str,
        /// Model's parameter count.
        expected: usize,
        /// Given.
        got: usize,
    },
    /// A fit result's parameter names differ from its model's.
    #[error("{0}: the fit result's parameter names differ from the model's")]
    NamesDiffer(&'static str),
    /// The first model must be Keplerian, the second dynamical.
    #[error("wrong model kinds: expected Keplerian and a dynamical kind, got {0:?} and {1:?}")]
    WrongKinds(ModelKind, ModelKind),
    /// A model could not be evaluated.
    #[error(transparent)]
    Model(#[from] ModelError),
    /// A setting is out of range.
    #[error("invalid setting: {0}")]
    Setting(String),
    /// There are no observations.
    #[error("no observations")]
    NoData,
    /// The likelihood of a model at its parameters is not finite.
    #[error("{0}: ln L is not finite at the given parameters")]
    NotFinite(&'static str),
}

/// Residual RMS of one instrument.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InstrumentRms {
    /// Instrument name.
    pub instrument: String,
    /// Number of points of the instrument.
    pub points: usize,
    /// √(mean r²) of the residuals data − model, m/s (0 with no points).
    pub rms_m_s: f64,
}

/// Statistics of one fitted model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelStatistics {
    /// Which model.
    pub kind: ModelKind,
    /// Number of data points n.
    pub n_points: usize,
    /// Number of free parameters k (jitters included).
    pub n_free: usize,
    /// χ² = Σ r²/(σ² + s²) with the fitted jitters.
    pub chi_square: f64,
    /// ln L (DESIGN §3 Gaussian likelihood with jitter).
    pub ln_likelihood: f64,
    /// BIC = k ln n − 2 ln L (Schwarz 1978).
    pub bic: f64,
    /// AICc (Hurvich & Tsai 1989); `None` when n ≤ k + 1.
    pub aicc: Option<f64>,
    /// Residual RMS per instrument.
    pub residual_rms: Vec<InstrumentRms>,
}

/// Differences dynamical − Keplerian.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct StatisticDifferences {
    /// Δχ² (negative: the dynamical model fits better).
    pub chi_square: f64,
    /// Δ ln L (positive: the dynamical model is more likely).
    pub ln_likelihood: f64,
    /// ΔBIC (negative: the dynamical model is preferred).
    pub bic: f64,
    /// ΔAICc, `None` when either AICc is undefined.
    pub aicc: Option<f64>,
    /// Δk, extra free parameters of the dynamical model.
    pub n_free: i64,
}

/// Settings of the grid on which the two predictions are compared over the
/// data span.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GridSettings {
    /// Grid points per period of the innermost planet (of the Keplerian
    /// fit). Default 50: the difference, a sum of signals of that period
    /// at most, is then sampled at 7.2° of phase, so a maximum of
    /// amplitude A is missed by at most A (1 − cos 3.6°) ≈ 0.2 % of A.
    pub points_per_inner_period: f64,
    /// Upper bound on the number of grid points (the step grows to honour
    /// it). Default 200 000.
    pub max_points: usize,
}

impl Default for GridSettings {
    fn default() -> Self {
        Self {
            points_per_inner_period: 50.0,
            max_points: 200_000,
        }
    }
}

/// The largest |v_dyn − v_kep| over the data span.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct VelocityDifference {
    /// Grid step (d): the inner period / points per period, or longer when
    /// the point cap binds.
    pub grid_step_d: f64,
    /// Number of grid points (first to last observation, both included).
    pub grid_points: usize,
    /// Largest |v_dyn − v_kep| on the grid, m/s.
    pub max_on_grid_m_s: f64,
    /// Epoch of that maximum (d).
    pub epoch_of_max_on_grid_d: f64,
    /// Largest |v_dyn − v_kep| at the observed epochs, m/s.
    pub max_at_data_m_s: f64,
    /// Epoch of that maximum (d).
    pub epoch_of_max_at_data_d: f64,
    /// RMS of v_dyn − v_kep at the observed epochs, m/s.
    pub rms_at_data_m_s: f64,
}

/// The statistics of the comparison.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ComparisonStatistics {
    /// The Keplerian fit.
    pub keplerian: ModelStatistics,
    /// The dynamical fit.
    pub dynamical: ModelStatistics,
    /// Differences dynamical − Keplerian.
    pub difference: StatisticDifferences,
    /// Median of the stated RV errors (m/s), the default velocity scale.
    pub median_error_m_s: f64,
    /// First observed epoch (d).
    pub first_epoch_d: f64,
    /// Last observed epoch (d).
    pub last_epoch_d: f64,
    /// The largest |v_dyn − v_kep| over the data span.
    pub velocity: VelocityDifference,
}

/// A model and a full parameter vector of it (e.g. its best fit).
#[derive(Debug, Clone, Copy)]
pub struct ModelAt<'a> {
    /// The model.
    pub model: &'a RvModel,
    /// Full parameter vector.
    pub values: &'a [f64],
}

impl<'a> ModelAt<'a> {
    /// The model at a fit result, checking that the names agree.
    pub fn from_fit(
        model: &'a RvModel,
        fit: &'a FitResult,
        which: &'static str,
    ) -> Result<Self, CompareError> {
        let same = fit.names.len() == model.params.len()
            && fit
                .names
                .iter()
                .zip(model.params.parameters())
                .all(|(a, b)| *a == b.name);
        if !same {
            return Err(CompareError::NamesDiffer(which));
        }
        Ok(Self {
            model,
            values: &fit.values,
        })
    }

    fn check(&self, which: &'static str) -> Result<(), CompareError> {
        if self.values.len() != self.model.params.len() {
            return Err(CompareError::VectorLength {
                which,
                expected: self.model.params.len(),
                got: self.values.len(),
            });
        }
        Ok(())
    }
}

/// The model's RV signal (m/s) at epochs `t` (d) with all instrument
/// offsets set to zero (trend kept), into `out`.
pub fn signal_rv(at: &ModelAt<'_>, t: &[f64], out: &mut [f64]) -> Result<(), CompareError> {
    let mut full = at.values.to_vec();
    for name in &at.model.obs.instruments {
        if let Some(i) = at.model.params.index_of(&format!("{name}.offset")) {
            full[i] = 0.0;
        }
    }
    let inst = vec![0usize; t.len()];
    if at.model.obs.instruments.is_empty() {
        return Err(CompareError::NoData);
    }
    at.model.model_rv_at(&full, t, &inst, out)?;
    Ok(())
}

/// v_dyn − v_kep (m/s) at epochs `t`, each model at its own parameters.
pub fn velocity_difference(
    keplerian: &ModelAt<'_>,
    dynamical: &ModelAt<'_>,
    t: &[f64],
) -> Result<Vec<f64>, CompareError> {
    let mut vk = vec![0.0; t.len()];
    let mut vd = vec![0.0; t.len()];
    signal_rv(keplerian, t, &mut vk)?;
    signal_rv(dynamical, t, &mut vd)?;
    Ok(vd.iter().zip(&vk).map(|(d, k)| d - k).collect())
}

/// Median of the stated RV errors (m/s); the mean of the two middle values
/// for an even count.
pub fn median_error(model: &RvModel) -> Result<f64, CompareError> {
    median(&model.obs.err).ok_or(CompareError::NoData)
}

pub(crate) fn median(x: &[f64]) -> Option<f64> {
    if x.is_empty() {
        return None;
    }
    let mut v = x.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    Some(if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    })
}

/// Shortest period (d) among the planets of a model at its parameters.
pub fn inner_period(at: &ModelAt<'_>) -> Result<f64, CompareError> {
    let planets = at.model.decode_planets(at.values)?;
    planets
        .iter()
        .map(|p| p.period)
        .filter(|p| *p > 0.0 && p.is_finite())
        .min_by(f64::total_cmp)
        .ok_or_else(|| CompareError::Setting("the model has no planet with a valid period".into()))
}

/// An evenly spaced grid from `start` to `end` (both included) with step at
/// most `step`, and at most `max_points` points (≥ 2).
pub(crate) fn even_grid(start: f64, end: f64, step: f64, max_points: usize) -> Vec<f64> {
    let span = end - start;
    if !(span > 0.0) {
        return vec![start];
    }
    let n = ((span / step).ceil() as usize).clamp(1, max_points.max(2) - 1);
    (0..=n)
        .map(|i| start + span * i as f64 / n as f64)
        .collect()
}

fn model_statistics(
    at: &ModelAt<'_>,
    which: &'static str,
) -> Result<ModelStatistics, CompareError> {
    let m = at.model;
    let ln_l = m.ln_likelihood(at.values);
    if !ln_l.is_finite() {
        return Err(CompareError::NotFinite(which));
    }
    let n = m.obs.len();
    let k = m.params.n_free();
    let mut r = vec![0.0; n];
    m.residuals(at.values, &mut r)?;
    let residual_rms = m
        .obs
        .instruments
        .iter()
        .enumerate()
        .map(|(i, instrument)| {
            let (mut sum, mut points) = (0.0, 0usize);
            for (x, _) in r.iter().zip(&m.obs.inst).filter(|(_, j)| **j == i) {
                sum += x * x;
                points += 1;
            }
            InstrumentRms {
                instrument: instrument.clone(),
                points,
                rms_m_s: if points == 0 {
                    0.0
                } else {
                    (sum / points as f64).sqrt()
                },
            }
        })
        .collect();
    let a = aicc(ln_l, k, n);
    Ok(ModelStatistics {
        kind: m.kind,
        n_points: n,
        n_free: k,
        chi_square: m.chi_square(at.values),
        ln_likelihood: ln_l,
        bic: bic(ln_l, k, n),
        aicc: a,
        residual_rms,
    })
}

/// Compare the Keplerian and dynamical models, each at its own parameters
/// (normally its best fit), on their common data.
///
/// The largest |v_dyn − v_kep| is sought on an even grid from the first to
/// the last observation (step: inner period / `grid.points_per_inner_period`)
/// and at the observed epochs.
pub fn compare_statistics(
    keplerian: &ModelAt<'_>,
    dynamical: &ModelAt<'_>,
    grid: &GridSettings,
) -> Result<ComparisonStatistics, CompareError> {
    keplerian.check("Keplerian")?;
    dynamical.check("dynamical")?;
    let (ok, od) = (&keplerian.model.obs, &dynamical.model.obs);
    if keplerian.model.kind != ModelKind::Keplerian || dynamical.model.kind == ModelKind::Keplerian
    {
        return Err(CompareError::WrongKinds(
            keplerian.model.kind,
            dynamical.model.kind,
        ));
    }
    if ok != od {
        return Err(CompareError::DifferentData(format!(
            "{} and {} points, instruments {:?} and {:?}",
            ok.len(),
            od.len(),
            ok.instruments,
            od.instruments
        )));
    }
    if ok.is_empty() {
        return Err(CompareError::NoData);
    }
    if !(grid.points_per_inner_period >= 2.0) || grid.max_points < 2 {
        return Err(CompareError::Setting(
            "need at least 2 grid points per inner period and a cap of at least 2 points".into(),
        ));
    }
    let kep = model_statistics(keplerian, "Keplerian")?;
    let dy = model_statistics(dynamical, "dynamical")?;
    let difference = StatisticDifferences {
        chi_square: dy.chi_square - kep.chi_square,
        ln_likelihood: dy.ln_likelihood - kep.ln_likelihood,
        bic: dy.bic - kep.bic,
        aicc: match (dy.aicc, kep.aicc) {
            (Some(a), Some(b)) => Some(a - b),
            _ => None,
        },
        n_free: dy.n_free as i64 - kep.n_free as i64,
    };
    let first = ok.t.iter().copied().fold(f64::INFINITY, f64::min);
    let last = ok.t.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let step = inner_period(keplerian)? / grid.points_per_inner_period;
    let t_grid = even_grid(first, last, step, grid.max_points);
    let dv_grid = velocity_difference(keplerian, dynamical, &t_grid)?;
    let dv_data = velocity_difference(keplerian, dynamical, &ok.t)?;
    let arg_max = |t: &[f64], dv: &[f64]| {
        let mut best = (0.0_f64, t[0]);
        for (&ti, &d) in t.iter().zip(dv) {
            if d.abs() > best.0 {
                best = (d.abs(), ti);
            }
        }
        best
    };
    let (mg, tg) = arg_max(&t_grid, &dv_grid);
    let (md, td) = arg_max(&ok.t, &dv_data);
    let rms = (dv_data.iter().map(|d| d * d).sum::<f64>() / dv_data.len() as f64).sqrt();
    let grid_step_d = if t_grid.len() > 1 {
        t_grid[1] - t_grid[0]
    } else {
        0.0
    };
    Ok(ComparisonStatistics {
        keplerian: kep,
        dynamical: dy,
        difference,
        median_error_m_s: median_error(keplerian.model)?,
        first_epoch_d: first,
        last_epoch_d: last,
        velocity: VelocityDifference {
            grid_step_d,
            grid_points: t_grid.len(),
            max_on_grid_m_s: mg,
            epoch_of_max_on_grid_d: tg,
            max_at_data_m_s: md,
            epoch_of_max_at_data_d: td,
            rms_at_data_m_s: rms,
        },
    })
}

//! The divergence horizon (DESIGN §5): the first epoch after the last
//! observation at which the dynamical and Keplerian predictions, each at
//! its own parameters, differ by more than a chosen velocity.
//!
//! Method: |v_dyn − v_kep| is scanned forward from the last observation
//! with a fixed step (default 1/20 of the inner period) up to a maximum
//! span (default 100 Julian years). The first scan point above the
//! threshold and the one before it bracket a crossing, which is refined by
//! bisection to a tolerance in time. A crossing that goes up and down again
//! between two scan points is not seen: the horizon is the first crossing
//! *resolved by the scan*, exact to the tolerance, and agrees with any finer
//! scan to within one step. The scan evaluates the predictions in blocks of
//! doubling length (1, 2, 4 … years), so the cost is at most about twice
//! that of one integration to the horizon.
//!
//! Over posterior samples ([`horizon_over_samples`]) every sample gets its
//! own horizon with the same threshold, in parallel (rayon); the order of
//! the results is that of the samples, so the summary does not depend on
//! the thread count.

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::statistics::{
    CompareError, ModelAt, even_grid, inner_period, median_error, velocity_difference,
};
use crate::units::JULIAN_YEAR_D;

/// Settings of the horizon search.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct HorizonSettings {
    /// Velocity threshold (m/s); `None`: the median stated RV error.
    pub threshold_m_s: Option<f64>,
    /// Scan step as a fraction of the inner period (Keplerian fit).
    /// Default 0.05 (20 steps per inner orbit).
    pub step_fraction: f64,
    /// Longest span searched after the last observation, days.
    /// Default 100 Julian years.
    pub max_span_d: f64,
    /// Bisection tolerance on the epoch, days. Default 10⁻³ d (86 s).
    pub tolerance_d: f64,
}

impl Default for HorizonSettings {
    fn default() -> Self {
        Self {
            threshold_m_s: None,
            step_fraction: 0.05,
            max_span_d: 100.0 * JULIAN_YEAR_D,
            tolerance_d: 1e-3,
        }
    }
}

/// Where the horizon lies.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum HorizonOutcome {
    /// The predictions already differ by more than the threshold at the
    /// last observation.
    AtLastObservation {
        /// |v_dyn − v_kep| there, m/s.
        difference_m_s: f64,
    },
    /// The first resolved crossing of the threshold.
    Reached {
        /// Epoch of the crossing (d).
        epoch_d: f64,
        /// Time after the last observation, days.
        after_last_d: f64,
        /// The same in Julian years.
        after_last_yr: f64,
    },
    /// No crossing within the searched span.
    BeyondSpan {
        /// The span searched, days.
        span_d: f64,
        /// The largest |v_dyn − v_kep| met in the scan, m/s.
        max_difference_m_s: f64,
    },
}

impl HorizonOutcome {
    /// Years after the last observation (0 at the last observation,
    /// `None` beyond the span).
    pub fn years_after_last(&self) -> Option<f64> {
        match self {
            Self::AtLastObservation { .. } => Some(0.0),
            Self::Reached { after_last_yr, .. } => Some(*after_last_yr),
            Self::BeyondSpan { .. } => None,
        }
    }

    /// Human-readable: "4.21 yr after the last observation (epoch …)".
    pub fn describe(&self) -> String {
        match self {
            Self::AtLastObservation { difference_m_s } => {
                format!("already exceeded at the last observation (|Δv| = {difference_m_s:.3} m/s)")
            }
            Self::Reached {
                epoch_d,
                after_last_yr,
                ..
            } => format!("{after_last_yr:.3} yr after the last observation (epoch {epoch_d:.3} d)"),
            Self::BeyondSpan {
                span_d,
                max_difference_m_s,
            } => format!(
                "beyond the {:.1} yr searched (largest |Δv| {max_difference_m_s:.3} m/s)",
                span_d / JULIAN_YEAR_D
            ),
        }
    }
}

/// The horizon and how it was found.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Horizon {
    /// The threshold used (m/s).
    pub threshold_m_s: f64,
    /// The last observed epoch (d), where the search starts.
    pub last_epoch_d: f64,
    /// Scan step used (d).
    pub step_d: f64,
    /// Span searched (d).
    pub max_span_d: f64,
    /// Bisection tolerance (d).
    pub tolerance_d: f64,
    /// The outcome.
    pub outcome: HorizonOutcome,
}

fn validate(settings: &HorizonSettings) -> Result<(), CompareError> {
    let bad = |s: &str| Err(CompareError::Setting(s.to_string()));
    if let Some(v) = settings.threshold_m_s {
        if !(v > 0.0 && v.is_finite()) {
            return bad("the horizon threshold must be positive and finite");
        }
    }
    if !(settings.step_fraction > 0.0 && settings.step_fraction <= 1.0) {
        return bad("the horizon step fraction must be in (0, 1]");
    }
    if !(settings.max_span_d > 0.0 && settings.max_span_d.is_finite()) {
        return bad("the horizon span must be positive and finite");
    }
    if !(settings.tolerance_d > 0.0 && settings.tolerance_d.is_finite()) {
        return bad("the horizon tolerance must be positive and finite");
    }
    Ok(())
}

/// The threshold the settings ask for on this data (m/s).
pub fn threshold_of(
    keplerian: &ModelAt<'_>,
    settings: &HorizonSettings,
) -> Result<f64, CompareError> {
    match settings.threshold_m_s {
        Some(v) => Ok(v),
        None => median_error(keplerian.model),
    }
}

/// Last observed epoch (d).
fn last_epoch(at: &ModelAt<'_>) -> Result<f64, CompareError> {
    let t = &at.model.obs.t;
    if t.is_empty() {
        return Err(CompareError::NoData);
    }
    Ok(t.iter().copied().fold(f64::NEG_INFINITY, f64::max))
}

/// |v_dyn − v_kep| at one epoch.
fn abs_diff(k: &ModelAt<'_>, d: &ModelAt<'_>, t: f64) -> Result<f64, CompareError> {
    Ok(velocity_difference(k, d, &[t])?[0].abs())
}

/// The divergence horizon of the two models, each at its own parameters.
pub fn divergence_horizon(
    keplerian: &ModelAt<'_>,
    dynamical: &ModelAt<'_>,
    settings: &HorizonSettings,
) -> Result<Horizon, CompareError> {
    validate(settings)?;
    let threshold = threshold_of(keplerian, settings)?;
    horizon_with_threshold(keplerian, dynamical, settings, threshold)
}

fn horizon_with_threshold(
    keplerian: &ModelAt<'_>,
    dynamical: &ModelAt<'_>,
    settings: &HorizonSettings,
    threshold: f64,
) -> Result<Horizon, CompareError> {
    let t0 = last_epoch(keplerian)?;
    let step = settings.step_fraction * inner_period(keplerian)?;
    let span = settings.max_span_d;
    let mut result = Horizon {
        threshold_m_s: threshold,
        last_epoch_d: t0,
        step_d: step,
        max_span_d: span,
        tolerance_d: settings.tolerance_d,
        outcome: HorizonOutcome::BeyondSpan {
            span_d: span,
            max_difference_m_s: 0.0,
        },
    };
    let d0 = abs_diff(keplerian, dynamical, t0)?;
    if d0 > threshold {
        result.outcome = HorizonOutcome::AtLastObservation { difference_m_s: d0 };
        return Ok(result);
    }
    let n_total = (span / step).ceil() as usize;
    let mut max_seen = d0;
    let mut block_len = (JULIAN_YEAR_D / step).ceil().max(1.0) as usize;
    let mut start = 0usize; // index of the last scan point already known to be below
    let mut epochs: Vec<f64> = Vec::new();
    while start < n_total {
        let end = (start + block_len).min(n_total);
        epochs.clear();
        epochs.extend((start + 1..=end).map(|i| (t0 + i as f64 * step).min(t0 + span)));
        let dv = velocity_difference(keplerian, dynamical, &epochs)?;
        if let Some(j) = dv.iter().position(|d| d.abs() > threshold) {
            let mut lo = if j == 0 {
                t0 + start as f64 * step
            } else {
                epochs[j - 1]
            };
            let mut hi = epochs[j];
            while hi - lo > settings.tolerance_d {
                let mid = 0.5 * (lo + hi);
                if abs_diff(keplerian, dynamical, mid)? > threshold {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            let after = hi - t0;
            result.outcome = HorizonOutcome::Reached {
                epoch_d: hi,
                after_last_d: after,
                after_last_yr: after / JULIAN_YEAR_D,
            };
            return Ok(result);
        }
        max_seen = dv.iter().fold(max_seen, |m, d| m.max(d.abs()));
        start = end;
        block_len *= 2;
    }
    result.outcome = HorizonOutcome::BeyondSpan {
        span_d: span,
        max_difference_m_s: max_seen,
    };
    Ok(result)
}

/// A horizon value in a posterior summary: years after the last
/// observation, or beyond the searched span.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum HorizonYears {
    /// Years after the last observation.
    Years(f64),
    /// Beyond the span searched.
    BeyondSpan,
}

/// Summary of the horizon over posterior samples.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HorizonDistribution {
    /// The threshold used for every sample (m/s).
    pub threshold_m_s: f64,
    /// Samples given.
    pub samples: usize,
    /// Samples whose horizon was found (reached, at the last observation
    /// or beyond the span).
    pub evaluated: usize,
    /// Samples whose models could not be evaluated (left out).
    pub failed: usize,
    /// Samples beyond the span.
    pub beyond_span: usize,
    /// 16th percentile.
    pub lower_68: HorizonYears,
    /// Median.
    pub median: HorizonYears,
    /// 84th percentile.
    pub upper_68: HorizonYears,
    /// Each sample's horizon in years (`None`: beyond the span or failed),
    /// in the order of the samples.
    pub per_sample_yr: Vec<Option<f64>>,
}

/// Quantile `q` ∈ [0, 1] of sorted `v` by linear interpolation between
/// order statistics at position q (n − 1) (Hyndman & Fan 1996, type 7,
/// numpy's default). Infinite entries stand for "beyond the span": a
/// quantile touching one is `BeyondSpan`.
pub fn quantile_years(sorted: &[f64], q: f64) -> Option<HorizonYears> {
    if sorted.is_empty() {
        return None;
    }
    let pos = q.clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let i = pos.floor() as usize;
    let f = pos - i as f64;
    let a = sorted[i];
    let b = sorted[(i + 1).min(sorted.len() - 1)];
    if !a.is_finite() || (f > 0.0 && !b.is_finite()) {
        return Some(HorizonYears::BeyondSpan);
    }
    Some(HorizonYears::Years(if f > 0.0 {
        a + f * (b - a)
    } else {
        a
    }))
}

/// The horizon for each posterior sample: pairs (Keplerian full vector,
/// dynamical full vector) of the two models, one pair per draw. The
/// threshold is fixed for all samples (the settings' or the median error).
pub fn horizon_over_samples(
    keplerian: &crate::fit::models::RvModel,
    dynamical: &crate::fit::models::RvModel,
    samples: &[(Vec<f64>, Vec<f64>)],
    settings: &HorizonSettings,
) -> Result<HorizonDistribution, CompareError> {
    validate(settings)?;
    if samples.is_empty() {
        return Err(CompareError::Setting("no posterior samples".into()));
    }
    let threshold = match settings.threshold_m_s {
        Some(v) => v,
        None => median_error(keplerian)?,
    };
    if let Some((k, d)) = samples
        .iter()
        .find(|(k, d)| k.len() != keplerian.params.len() || d.len() != dynamical.params.len())
    {
        return Err(CompareError::VectorLength {
            which: "posterior sample (Keplerian + dynamical)",
            expected: keplerian.params.len() + dynamical.params.len(),
            got: k.len() + d.len(),
        });
    }
    let per: Vec<Result<HorizonOutcome, CompareError>> = samples
        .par_iter()
        .map(|(k, d)| {
            let ka = ModelAt {
                model: keplerian,
                values: k,
            };
            let da = ModelAt {
                model: dynamical,
                values: d,
            };
            horizon_with_threshold(&ka, &da, settings, threshold).map(|h| h.outcome)
        })
        .collect();
    let per_sample_yr: Vec<Option<f64>> = per
        .iter()
        .map(|r| r.as_ref().ok().and_then(HorizonOutcome::years_after_last))
        .collect();
    let mut finite_or_inf: Vec<f64> = per
        .iter()
        .filter_map(|r| r.as_ref().ok())
        .map(|o| o.years_after_last().unwrap_or(f64::INFINITY))
        .collect();
    finite_or_inf.sort_by(f64::total_cmp);
    let evaluated = finite_or_inf.len();
    let beyond_span = finite_or_inf.iter().filter(|v| v.is_infinite()).count();
    let q = |p: f64| quantile_years(&finite_or_inf, p);
    let (Some(lo), Some(med), Some(hi)) = (q(0.16), q(0.5), q(0.84)) else {
        return Err(CompareError::Setting(
            "no posterior sample could be evaluated".into(),
        ));
    };
    Ok(HorizonDistribution {
        threshold_m_s: threshold,
        samples: samples.len(),
        evaluated,
        failed: samples.len() - evaluated,
        beyond_span,
        lower_68: lo,
        median: med,
        upper_68: hi,
        per_sample_yr,
    })
}

/// The series a picture of the divergence needs: v_dyn − v_kep on an even
/// grid from the first observation to past the horizon, with the threshold
/// and the horizon epoch.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DifferenceSeries {
    /// Epochs (d).
    pub t_d: Vec<f64>,
    /// v_dyn − v_kep at each epoch (m/s, signed).
    pub difference_m_s: Vec<f64>,
    /// The threshold (m/s).
    pub threshold_m_s: f64,
    /// First and last observed epochs (d).
    pub data_span_d: (f64, f64),
    /// Epoch of the horizon, `None` beyond the span.
    pub horizon_epoch_d: Option<f64>,
}

/// Build the [`DifferenceSeries`]: from the first observation to the
/// horizon plus half its distance from the last observation (at least one
/// year past the last observation; the end of the span when beyond it),
/// with at most `max_points` points (step: 1/20 of the inner period when
/// that fits).
pub fn difference_series(
    keplerian: &ModelAt<'_>,
    dynamical: &ModelAt<'_>,
    horizon: &Horizon,
    max_points: usize,
) -> Result<DifferenceSeries, CompareError> {
    let t = &keplerian.model.obs.t;
    if t.is_empty() {
        return Err(CompareError::NoData);
    }
    let first = t.iter().copied().fold(f64::INFINITY, f64::min);
    let last = horizon.last_epoch_d;
    let horizon_epoch_d = match horizon.outcome {
        HorizonOutcome::AtLastObservation { .. } => Some(last),
        HorizonOutcome::Reached { epoch_d, .. } => Some(epoch_d),
        HorizonOutcome::BeyondSpan { .. } => None,
    };
    let end = match horizon_epoch_d {
        Some(h) => (h + 0.5 * (h - last)).max(last + JULIAN_YEAR_D),
        None => last + horizon.max_span_d,
    };
    let step = 0.05 * inner_period(keplerian)?;
    let t_d = even_grid(first, end, step, max_points.max(2));
    let difference_m_s = velocity_difference(keplerian, dynamical, &t_d)?;
    Ok(DifferenceSeries {
        t_d,
        difference_m_s,
        threshold_m_s: horizon.threshold_m_s,
        data_span_d: (first, last),
        horizon_epoch_d,
    })
}

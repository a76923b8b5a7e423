//! Validation and preparation of an RV series for the periodogram.

use super::PeriodogramError;

/// Checks that `t` (d), `y` (m/s) and `sigma` (m/s) have equal lengths, at
/// least `needed` entries, finite values and strictly positive errors.
pub(crate) fn check_series(
    t: &[f64],
    y: &[f64],
    sigma: &[f64],
    needed: usize,
) -> Result<(), PeriodogramError> {
    if t.len() != y.len() || t.len() != sigma.len() {
        return Err(PeriodogramError::LengthMismatch {
            times: t.len(),
            values: y.len(),
            errors: sigma.len(),
        });
    }
    check_finite("velocity", y)?;
    check_epochs(t, sigma, needed)
}

/// Checks epochs (d) and errors (m/s): equal lengths, at least `needed`
/// entries, finite, errors > 0, and a non-zero baseline.
pub(crate) fn check_epochs(
    t: &[f64],
    sigma: &[f64],
    needed: usize,
) -> Result<(), PeriodogramError> {
    if t.len() != sigma.len() {
        return Err(PeriodogramError::LengthMismatch {
            times: t.len(),
            values: t.len(),
            errors: sigma.len(),
        });
    }
    if t.len() < needed {
        return Err(PeriodogramError::TooFewPoints {
            count: t.len(),
            needed,
        });
    }
    check_finite("epoch", t)?;
    check_finite("error", sigma)?;
    if let Some((index, &value)) = sigma.iter().enumerate().find(|(_, s)| **s <= 0.0) {
        return Err(PeriodogramError::NonPositiveError { index, value });
    }
    baseline(t).map(|_| ())
}

/// Checks that every value is finite.
pub(crate) fn check_finite(quantity: &'static str, v: &[f64]) -> Result<(), PeriodogramError> {
    match v.iter().position(|x| !x.is_finite()) {
        Some(index) => Err(PeriodogramError::NonFinite { quantity, index }),
        None => Ok(()),
    }
}

/// Time baseline max(t) − min(t) (d); an error if it is zero.
/// Assumes finite epochs and a non-empty slice.
pub(crate) fn baseline(t: &[f64]) -> Result<f64, PeriodogramError> {
    let (lo, hi) = min_max(t);
    let span = hi - lo;
    if span > 0.0 {
        Ok(span)
    } else {
        Err(PeriodogramError::ZeroBaseline)
    }
}

/// Smallest and largest value of a finite, non-empty slice.
pub(crate) fn min_max(t: &[f64]) -> (f64, f64) {
    t.iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        })
}

/// Reference epoch used internally: the middle of the baseline (d). Times
/// are shifted by it before any phase ω t is formed, so that absolute epochs
/// such as BJD ≈ 2.46 × 10⁶ d do not cost ten digits of phase.
pub(crate) fn reference_epoch(t: &[f64]) -> f64 {
    let (lo, hi) = min_max(t);
    0.5 * (lo + hi)
}

/// Inverse-variance weights w_i = σ_i⁻² / Σ_j σ_j⁻², summing to one
/// (the normalised weights of Zechmeister & Kürster 2009, §2).
pub(crate) fn normalised_weights(sigma: &[f64]) -> Vec<f64> {
    let raw: Vec<f64> = sigma.iter().map(|s| 1.0 / (s * s)).collect();
    let total: f64 = raw.iter().sum();
    raw.into_iter().map(|w| w / total).collect()
}

/// Weighted mean Σ w_i x_i with weights that sum to one.
pub(crate) fn weighted_mean(w: &[f64], x: &[f64]) -> f64 {
    w.iter().zip(x).map(|(w, x)| w * x).sum()
}

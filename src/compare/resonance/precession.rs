//! Apsidal precession rate dϖ/dt of a planet from its element history.
//!
//! ϖ is ill-defined when e → 0, and a producer computing it from a state
//! vector returns noise there. We therefore work with the eccentricity vector
//! (k, h) = (e cos ϖ, e sin ϖ) (the Laplace–Lagrange variables, Murray &
//! Dermott 1999, §7.1), which is smooth through e = 0, and take its phase
//! atan2(h, k): for e > 0 that is ϖ itself. Samples with
//! e < [`MIN_PHASE_ECCENTRICITY`] carry no usable phase and are skipped; the
//! phase of the remaining samples is unwrapped (steps in [−π, π)) and the
//! rate is the least-squares slope, with its standard error from the fit
//! residuals.
//!
//! Interpretation: the slope measures the mean winding rate of (k, h) about
//! the origin. When the free eccentricity is smaller than the forced one, the
//! vector circles the forced point without enclosing the origin and ϖ
//! librates: the measured rate is then ≈ 0, which is the true mean dϖ/dt.
//! A pass of (k, h) very close to the origin turns the phase by ≈ π between
//! two samples and its sense is ambiguous; sample densely there. The
//! standard error assumes independent residuals; periodic residuals (short-
//! period terms) are correlated, so it is a lower bound.

use super::error::ResonanceError;
use super::libration::Duration;
use super::numerics::{fit_line, unwrap};
use super::series::{check_series, check_times};
use crate::units::JULIAN_YEAR_D;
use std::f64::consts::TAU;

/// Eccentricity below which a sample's ϖ is treated as undefined: 10⁻¹⁰.
/// Osculating elements from a double-precision state carry an absolute
/// error in e of order 10⁻¹⁵–10⁻¹³ (round-off of the conversion, common
/// practice); below 10⁻¹⁰ the phase of (k, h) is dominated by it.
pub const MIN_PHASE_ECCENTRICITY: f64 = 1e-10;

/// A measured apsidal precession rate.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PrecessionRate {
    /// dϖ/dt in degrees per Julian year (signed; positive = prograde).
    pub rate_deg_per_yr: f64,
    /// Standard error of the rate (deg/yr), from the fit residuals.
    pub rate_std_err_deg_per_yr: f64,
    /// dϖ/dt in rad/d.
    pub rate_rad_per_d: f64,
    /// Apsidal period 2π/|dϖ/dt|, `None` if the rate is exactly zero.
    pub apsidal_period: Option<Duration>,
    /// Samples used in the fit.
    pub samples_used: usize,
    /// Samples skipped because e < [`MIN_PHASE_ECCENTRICITY`].
    pub samples_skipped: usize,
}

/// Outcome of [`apsidal_precession`].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum ApsidalPrecession {
    /// The rate was measured.
    Measured(PrecessionRate),
    /// Fewer than three samples have e ≥ [`MIN_PHASE_ECCENTRICITY`]: the orbit
    /// is circular to rounding and has no periastron to precess.
    Undefined {
        /// Samples with a usable phase.
        usable_samples: usize,
    },
}

impl ApsidalPrecession {
    /// The measured rate, if any.
    pub fn rate(&self) -> Option<&PrecessionRate> {
        match self {
            Self::Measured(r) => Some(r),
            Self::Undefined { .. } => None,
        }
    }
}

/// Apsidal precession rate of a planet from its epochs `times_d` (d),
/// eccentricities `e` and longitudes of periastron `varpi` (rad, any
/// wrapping); method in the module docs.
pub fn apsidal_precession(
    times_d: &[f64],
    e: &[f64],
    varpi: &[f64],
) -> Result<ApsidalPrecession, ResonanceError> {
    check_times(times_d)?;
    check_series("e", e, times_d.len())?;
    check_series("varpi", varpi, times_d.len())?;
    if let Some((index, &value)) = e
        .iter()
        .enumerate()
        .find(|(_, e)| !(**e >= 0.0 && **e < 1.0))
    {
        return Err(ResonanceError::InvalidEccentricity { index, value });
    }
    let mut t = Vec::with_capacity(times_d.len());
    let mut phase = Vec::with_capacity(times_d.len());
    for ((&ti, &ei), &wi) in times_d.iter().zip(e).zip(varpi) {
        if ei >= MIN_PHASE_ECCENTRICITY {
            t.push(ti);
            phase.push((ei * wi.sin()).atan2(ei * wi.cos()));
        }
    }
    let used = t.len();
    let (u, _) = unwrap(&phase);
    let Some(fit) = fit_line(&t, &u) else {
        return Ok(ApsidalPrecession::Undefined {
            usable_samples: used,
        });
    };
    let to_deg_yr = |r: f64| r.to_degrees() * JULIAN_YEAR_D;
    Ok(ApsidalPrecession::Measured(PrecessionRate {
        rate_deg_per_yr: to_deg_yr(fit.slope),
        rate_std_err_deg_per_yr: to_deg_yr(fit.slope_std_err),
        rate_rad_per_d: fit.slope,
        apsidal_period: (fit.slope != 0.0).then(|| Duration::from_days(TAU / fit.slope.abs())),
        samples_used: used,
        samples_skipped: times_d.len() - used,
    }))
}

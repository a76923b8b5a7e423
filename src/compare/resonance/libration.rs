//! Libration or circulation of an angle series, measured from the series.
//!
//! Method (all thresholds below are ours and documented here):
//!
//! 1. The series is unwrapped (each step taken in [−π, π)). If any step
//!    exceeds [`MAX_SAMPLE_STEP`] the sampling is too coarse for the
//!    unwrapping to be trusted and the outcome is
//!    [`UndecidedReason::Undersampled`].
//! 2. If the unwrapped angle spans less than a full circle (range < 2π) it
//!    may librate. An angle librating about a centre c with amplitude A < π
//!    stays in [c − A, c + A], so the unwrapped extremes give
//!    *centre* = midpoint of the extremes (wrapped to [0, 2π)) and
//!    *amplitude* = half the peak-to-peak range. Measured on the unwrapped
//!    series this is immune to wrapping at 0/2π and, unlike the circular
//!    mean, stays right for amplitudes above ~138°, where the mean resultant
//!    of a sinusoidal libration, J₀(A), changes sign and the circular mean
//!    points to the anti-centre.
//!    The *period* is measured from crossings of the centre: a crossing is
//!    counted when the deviation from the centre passes from below −h to
//!    above +h (upward) or back (downward), with the hysteresis
//!    h = [`CROSSING_HYSTERESIS`] × A so that noise near the centre is not
//!    counted; its time is the last zero of the linearly interpolated
//!    deviation before the band is left. The period is the mean interval
//!    between crossings of the same direction (upward and downward
//!    intervals pooled). At least two crossings of one direction, i.e. one
//!    full cycle, are needed; otherwise [`UndecidedReason::TooShort`].
//! 3. If the unwrapped angle covers the full circle and its net change over
//!    the series is at least 2π, it circulates; its period is
//!    2π / |mean rate|, the rate being the least-squares slope of the
//!    unwrapped angle. If it covers the full circle without one net turn it
//!    is [`UndecidedReason::FullCircleWithoutNetTurn`] (a short series, or
//!    motion near the separatrix alternating between libration and
//!    circulation).
//!
//! The caller should integrate longer whenever the outcome is undecided.

use super::error::ResonanceError;
use super::numerics::{fit_line, unwrap, wrap_two_pi};
use super::series::{check_series, check_times};
use crate::units::JULIAN_YEAR_D;
use std::f64::consts::{PI, TAU};

/// Largest accepted step of the angle between consecutive samples (rad):
/// a quarter turn. The unwrapping takes each step in [−π, π); a true step
/// near π is ambiguous, and with noise or a changing rate a quarter-turn
/// margin keeps the choice safe. Sample at least 4 times per
/// circulation period and per 2πA of libration phase (common practice for
/// phase unwrapping, our margin).
pub const MAX_SAMPLE_STEP: f64 = PI / 2.0;

/// Hysteresis of the centre crossings, as a fraction of the amplitude: a
/// crossing counts only once the deviation has gone beyond ±A/2. Noise below
/// A/2 cannot add crossings; a libration reaches ±A every cycle, so real
/// crossings are never lost.
pub const CROSSING_HYSTERESIS: f64 = 0.5;

/// Amplitude (rad) below which an angle is taken as constant (a fixed point
/// of the resonance, to rounding): no period is measurable.
pub const CONSTANT_ANGLE_AMPLITUDE: f64 = 1e-12;

/// A duration in days and in Julian years (365.25 d).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Duration {
    /// Duration in days.
    pub days: f64,
    /// Duration in Julian years.
    pub years: f64,
}

impl Duration {
    /// From a value in days.
    pub fn from_days(days: f64) -> Self {
        Self {
            days,
            years: days / JULIAN_YEAR_D,
        }
    }
}

/// A librating angle.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Libration {
    /// Centre: midpoint of the extremes (rad, in [0, 2π)).
    pub centre_rad: f64,
    /// Centre in degrees, in [0, 360).
    pub centre_deg: f64,
    /// Amplitude: half the peak-to-peak range (rad, in [0, π)).
    pub amplitude_rad: f64,
    /// Amplitude in degrees.
    pub amplitude_deg: f64,
    /// Root-mean-square deviation from the centre (rad).
    pub rms_deviation_rad: f64,
    /// Libration period from the centre crossings; `None` only for a
    /// constant angle (amplitude below [`CONSTANT_ANGLE_AMPLITUDE`]).
    pub period: Option<Duration>,
    /// Number of full libration cycles seen (same-direction crossing
    /// intervals, the larger of the upward and downward counts).
    pub cycles: usize,
}

/// A circulating angle.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Circulation {
    /// Circulation period 2π / |mean rate|.
    pub period: Duration,
    /// Mean rate dφ/dt (rad/d, signed): the least-squares slope.
    pub rate_rad_per_d: f64,
    /// Mean rate in degrees per Julian year (signed).
    pub rate_deg_per_yr: f64,
    /// Net number of turns over the series (signed).
    pub turns: f64,
}

/// Why the behaviour of an angle could not be decided.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum UndecidedReason {
    /// Less than one full cycle: the angle stays within less than a full
    /// circle but crosses its centre fewer than twice in the same direction.
    /// Integrate longer.
    TooShort,
    /// The angle covers the full circle without completing one net turn.
    /// Integrate longer; if it persists the motion is near a separatrix.
    FullCircleWithoutNetTurn,
    /// Some step between consecutive samples exceeds [`MAX_SAMPLE_STEP`]:
    /// sample more densely.
    Undersampled {
        /// The largest step met (rad, wrapped to [0, π]).
        max_step_rad: f64,
    },
}

/// Behaviour of an angle.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum AngleRegime {
    /// The angle librates.
    Librating(Libration),
    /// The angle circulates.
    Circulating(Circulation),
    /// The series does not decide; see the reason.
    Undecided(UndecidedReason),
}

/// Result of [`analyse_angle`]: the regime and the measured quantities it
/// was decided from.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct AngleAnalysis {
    /// Libration, circulation or undecided.
    pub regime: AngleRegime,
    /// Time span of the series.
    pub span: Duration,
    /// Number of samples.
    pub samples: usize,
    /// Range max − min of the unwrapped angle (rad).
    pub range_rad: f64,
    /// Net change last − first of the unwrapped angle (rad).
    pub net_change_rad: f64,
    /// Least-squares mean rate of the unwrapped angle (rad/d).
    pub mean_rate_rad_per_d: f64,
    /// Largest |step| between consecutive samples (rad).
    pub max_step_rad: f64,
}

impl AngleAnalysis {
    /// The libration, if the angle librates.
    pub fn libration(&self) -> Option<&Libration> {
        match &self.regime {
            AngleRegime::Librating(l) => Some(l),
            _ => None,
        }
    }

    /// The circulation, if the angle circulates.
    pub fn circulation(&self) -> Option<&Circulation> {
        match &self.regime {
            AngleRegime::Circulating(c) => Some(c),
            _ => None,
        }
    }
}

/// Decide whether the angle series `angle` (rad, any wrapping) sampled at
/// `times_d` (d, strictly increasing, at least
/// [`MIN_SAMPLES`](super::MIN_SAMPLES)) librates or circulates, and measure
/// centre, amplitude and period, or circulation period (module docs give
/// the method and thresholds).
pub fn analyse_angle(times_d: &[f64], angle: &[f64]) -> Result<AngleAnalysis, ResonanceError> {
    check_times(times_d)?;
    check_series("angle", angle, times_d.len())?;
    let n = times_d.len();
    let (u, max_step) = unwrap(angle);
    let (lo, hi) = u
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        });
    let range = hi - lo;
    let net = u[n - 1] - u[0];
    let fit = fit_line(times_d, &u).ok_or(ResonanceError::TooFewSamples {
        count: n,
        needed: 3,
    })?;
    let regime = if max_step > MAX_SAMPLE_STEP {
        AngleRegime::Undecided(UndecidedReason::Undersampled {
            max_step_rad: max_step,
        })
    } else if range < TAU {
        librating_or_short(times_d, &u, lo, hi)
    } else if net.abs() >= TAU && fit.slope != 0.0 {
        let period_d = TAU / fit.slope.abs();
        AngleRegime::Circulating(Circulation {
            period: Duration::from_days(period_d),
            rate_rad_per_d: fit.slope,
            rate_deg_per_yr: fit.slope.to_degrees() * JULIAN_YEAR_D,
            turns: net / TAU,
        })
    } else {
        AngleRegime::Undecided(UndecidedReason::FullCircleWithoutNetTurn)
    };
    Ok(AngleAnalysis {
        regime,
        span: Duration::from_days(times_d[n - 1] - times_d[0]),
        samples: n,
        range_rad: range,
        net_change_rad: net,
        mean_rate_rad_per_d: fit.slope,
        max_step_rad: max_step,
    })
}

/// Step 2 of the method: the unwrapped series `u` spans less than 2π.
fn librating_or_short(t: &[f64], u: &[f64], lo: f64, hi: f64) -> AngleRegime {
    let centre_u = 0.5 * (lo + hi);
    let amplitude = 0.5 * (hi - lo);
    let centre = wrap_two_pi(centre_u);
    let rms = (u.iter().map(|x| (x - centre_u).powi(2)).sum::<f64>() / u.len() as f64).sqrt();
    let make = |period: Option<Duration>, cycles: usize| Libration {
        centre_rad: centre,
        centre_deg: centre.to_degrees(),
        amplitude_rad: amplitude,
        amplitude_deg: amplitude.to_degrees(),
        rms_deviation_rad: rms,
        period,
        cycles,
    };
    if amplitude < CONSTANT_ANGLE_AMPLITUDE {
        return AngleRegime::Librating(make(None, 0));
    }
    let (up, down) = centre_crossings(t, u, centre_u, CROSSING_HYSTERESIS * amplitude);
    let intervals = |c: &[f64]| c.len().saturating_sub(1);
    let count = intervals(&up) + intervals(&down);
    if count == 0 {
        return AngleRegime::Undecided(UndecidedReason::TooShort);
    }
    let spread = |c: &[f64]| match (c.first(), c.last()) {
        (Some(a), Some(b)) => b - a,
        _ => 0.0,
    };
    let period_d = (spread(&up) + spread(&down)) / count as f64;
    let cycles = intervals(&up).max(intervals(&down));
    AngleRegime::Librating(make(Some(Duration::from_days(period_d)), cycles))
}

/// Times of upward and downward crossings of `centre` by `u`, with
/// hysteresis `h` (see the module docs).
fn centre_crossings(t: &[f64], u: &[f64], centre: f64, h: f64) -> (Vec<f64>, Vec<f64>) {
    let mut up = Vec::new();
    let mut down = Vec::new();
    // Some(true): last beyond +h; Some(false): last beyond −h.
    let mut state: Option<bool> = None;
    let mut last_zero: Option<f64> = None;
    for i in 1..u.len() {
        let d0 = u[i - 1] - centre;
        let d1 = u[i] - centre;
        if (d0 < 0.0) != (d1 < 0.0) {
            // Signs differ, so d0 − d1 ≠ 0.
            last_zero = Some(t[i - 1] + (t[i] - t[i - 1]) * d0 / (d0 - d1));
        }
        if d1 > h {
            if let (Some(false), Some(z)) = (state, last_zero) {
                up.push(z);
            }
            state = Some(true);
        } else if d1 < -h {
            if let (Some(true), Some(z)) = (state, last_zero) {
                down.push(z);
            }
            state = Some(false);
        }
    }
    (up, down)
}

//! A single sinusoidal signal: the unit the periodogram finds and removes.

use std::f64::consts::TAU;

/// The signal y(t) = `offset` + `amplitude` · cos(2π `frequency` (t − `reference_epoch`) − `phase`)
/// (m/s, t in d).
///
/// `phase` (rad, in [0, 2π)) puts a maximum at
/// t = `reference_epoch` + `phase` / (2π `frequency`). Equivalently
/// y = offset + a cos θ + b sin θ with θ = 2π f (t − t_ref),
/// a = amplitude · cos phase and b = amplitude · sin phase.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Sinusoid {
    /// Frequency (1/d).
    pub frequency: f64,
    /// Semi-amplitude (m/s, ≥ 0).
    pub amplitude: f64,
    /// Phase of the maximum (rad, in [0, 2π)).
    pub phase: f64,
    /// Constant offset (m/s).
    pub offset: f64,
    /// Epoch at which the phase is counted (d).
    pub reference_epoch: f64,
}

impl Sinusoid {
    /// From the cosine and sine coefficients `a`, `b` (m/s) and offset `c`
    /// (m/s) of y = c + a cos θ + b sin θ, θ = 2π `frequency` (t − `t_ref`).
    pub fn from_coefficients(frequency: f64, a: f64, b: f64, c: f64, t_ref: f64) -> Self {
        let phase = b.atan2(a).rem_euclid(TAU);
        Self {
            frequency,
            amplitude: a.hypot(b),
            phase: if phase < TAU { phase } else { 0.0 },
            offset: c,
            reference_epoch: t_ref,
        }
    }

    /// Period 1/f (d).
    pub fn period(&self) -> f64 {
        1.0 / self.frequency
    }

    /// Coefficient a of cos 2π f (t − t_ref) (m/s).
    pub fn cos_coefficient(&self) -> f64 {
        self.amplitude * self.phase.cos()
    }

    /// Coefficient b of sin 2π f (t − t_ref) (m/s).
    pub fn sin_coefficient(&self) -> f64 {
        self.amplitude * self.phase.sin()
    }

    /// The signal at epoch `t` (d), in m/s.
    ///
    /// ```
    /// use apsidal::periodogram::Sinusoid;
    /// let s = Sinusoid::from_coefficients(0.1, 0.0, 2.0, 1.0, 100.0);
    /// assert!((s.value_at(102.5) - 3.0).abs() < 1e-12); // a quarter period on
    /// ```
    pub fn value_at(&self, t: f64) -> f64 {
        self.offset
            + self.amplitude
                * (TAU * self.frequency * (t - self.reference_epoch) - self.phase).cos()
    }
}

//! Input of the resonance analysis: time series of osculating elements.
//!
//! The analysis never sees an integrator. A caller (normally a long N-body
//! integration, sampled at regular or irregular epochs) fills an
//! [`ElementHistory`]: epochs in days and, per planet ordered by period,
//! the osculating period P, eccentricity e, longitude of periastron ϖ and
//! mean longitude λ, optionally the inclination i and node Ω.
//!
//! Angles are those of the *planet's* orbit (ϖ = Ω + ω with the planet's own
//! ω, not ω⋆ of the star; DESIGN §3), in radians, wrapped or unwrapped as the
//! producer likes: every function here unwraps what it needs itself.

use super::error::ResonanceError;

/// Osculating elements of one planet, one value per epoch of the history.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlanetSeries {
    /// Osculating period P (d, > 0); the osculating mean motion is n = 2π/P.
    pub period_d: Vec<f64>,
    /// Osculating eccentricity e, 0 ≤ e < 1.
    pub e: Vec<f64>,
    /// Longitude of periastron ϖ = Ω + ω of the planet (rad, any wrapping).
    pub varpi: Vec<f64>,
    /// Mean longitude λ = M + ϖ (rad, any wrapping).
    pub lambda: Vec<f64>,
    /// Inclination i to the sky plane (rad), if the producer has it.
    #[serde(default)]
    pub inc: Option<Vec<f64>>,
    /// Longitude of the ascending node Ω (rad), if the producer has it.
    #[serde(default)]
    pub node: Option<Vec<f64>>,
}

/// Time series of osculating elements of all planets of one system.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ElementHistory {
    /// Epochs (d, any day count), strictly increasing.
    pub times_d: Vec<f64>,
    /// One series per planet, ordered by period (innermost first).
    pub planets: Vec<PlanetSeries>,
}

/// Smallest number of epochs any analysis here accepts: a linear fit with a
/// standard error needs three, and a libration period needs several samples
/// per cycle; eight is a floor, not a recommendation.
pub const MIN_SAMPLES: usize = 8;

impl ElementHistory {
    /// Check lengths, finiteness, strictly increasing epochs, P > 0 and
    /// 0 ≤ e < 1 for every planet.
    pub fn validate(&self) -> Result<(), ResonanceError> {
        check_times(&self.times_d)?;
        let n = self.times_d.len();
        for p in &self.planets {
            p.validate(n)?;
        }
        Ok(())
    }
}

impl PlanetSeries {
    /// Check that every series has `n` finite samples, P > 0 and 0 ≤ e < 1.
    pub fn validate(&self, n: usize) -> Result<(), ResonanceError> {
        check_series("period_d", &self.period_d, n)?;
        check_series("e", &self.e, n)?;
        check_series("varpi", &self.varpi, n)?;
        check_series("lambda", &self.lambda, n)?;
        if let Some(inc) = &self.inc {
            check_series("inc", inc, n)?;
        }
        if let Some(node) = &self.node {
            check_series("node", node, n)?;
        }
        if let Some((index, &value)) = self.period_d.iter().enumerate().find(|(_, p)| !(**p > 0.0))
        {
            return Err(ResonanceError::NonPositivePeriod { index, value });
        }
        if let Some((index, &value)) = self
            .e
            .iter()
            .enumerate()
            .find(|(_, e)| !(**e >= 0.0 && **e < 1.0))
        {
            return Err(ResonanceError::InvalidEccentricity { index, value });
        }
        Ok(())
    }
}

/// Check an epoch series: at least [`MIN_SAMPLES`], finite, strictly increasing.
pub(crate) fn check_times(t: &[f64]) -> Result<(), ResonanceError> {
    if t.len() < MIN_SAMPLES {
        return Err(ResonanceError::TooFewSamples {
            count: t.len(),
            needed: MIN_SAMPLES,
        });
    }
    check_finite("time", t)?;
    if let Some(index) = (1..t.len()).find(|&i| !(t[i] > t[i - 1])) {
        return Err(ResonanceError::TimesNotIncreasing { index });
    }
    Ok(())
}

/// Check that a series has `n` finite samples.
pub(crate) fn check_series(
    quantity: &'static str,
    x: &[f64],
    n: usize,
) -> Result<(), ResonanceError> {
    if x.len() != n {
        return Err(ResonanceError::LengthMismatch {
            quantity,
            expected: n,
            got: x.len(),
        });
    }
    check_finite(quantity, x)
}

fn check_finite(quantity: &'static str, x: &[f64]) -> Result<(), ResonanceError> {
    match x.iter().position(|v| !v.is_finite()) {
        Some(index) => Err(ResonanceError::NonFinite { quantity, index }),
        None => Ok(()),
    }
}

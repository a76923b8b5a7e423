//! Typed errors of the resonance analysis.

/// Everything that can go wrong in the resonance analysis: inconsistent or
/// non-finite input series, unphysical elements and bad settings. NaN never
/// leaves this module; a value that cannot be computed is one of these errors
/// or an explicit "undecided"/"undefined" outcome in the result types.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ResonanceError {
    /// Fewer samples than the computation needs.
    #[error("need at least {needed} samples, got {count}")]
    TooFewSamples {
        /// Number of samples given.
        count: usize,
        /// Minimum number the computation needs.
        needed: usize,
    },
    /// A series whose length differs from that of the time series.
    #[error("series {quantity} has {got} samples but there are {expected} epochs")]
    LengthMismatch {
        /// Which series.
        quantity: &'static str,
        /// Number of epochs.
        expected: usize,
        /// Length of the offending series.
        got: usize,
    },
    /// A NaN or infinite input value.
    #[error("non-finite {quantity} at sample {index}")]
    NonFinite {
        /// Which input series.
        quantity: &'static str,
        /// Index of the offending sample.
        index: usize,
    },
    /// Epochs that do not strictly increase.
    #[error("epochs must strictly increase: sample {index} is not later than sample {}", index - 1)]
    TimesNotIncreasing {
        /// Index of the first epoch not later than its predecessor.
        index: usize,
    },
    /// An osculating period that is zero or negative.
    #[error("osculating period {value} d at sample {index} must be > 0")]
    NonPositivePeriod {
        /// Index of the offending sample.
        index: usize,
        /// The value given (d).
        value: f64,
    },
    /// An eccentricity outside [0, 1).
    #[error("eccentricity {value} at sample {index} is outside [0, 1)")]
    InvalidEccentricity {
        /// Index of the offending sample.
        index: usize,
        /// The value given.
        value: f64,
    },
    /// A period ratio that is not finite or not above 1 (the outer planet
    /// must have the longer period).
    #[error("period ratio P_outer/P_inner = {value} must be finite and > 1")]
    InvalidRatio {
        /// The ratio given or computed.
        value: f64,
    },
    /// A planet index outside the history.
    #[error("planet index {index} out of range: the history holds {count} planets")]
    PlanetIndex {
        /// The index asked for.
        index: usize,
        /// Number of planets in the history.
        count: usize,
    },
    /// A commensurability or resonant-angle index that does not exist:
    /// it needs 1 ≤ k < j and 0 ≤ q ≤ k.
    #[error("no resonant angle j = {j}, k = {k}, q = {q}: need 1 <= k < j and q <= k")]
    InvalidAngle {
        /// Outer coefficient j.
        j: u32,
        /// Order k.
        k: u32,
        /// Index q.
        q: u32,
    },
    /// The mean longitude does not advance on average (the fitted mean
    /// motion dλ/dt is not positive), so no mean period exists.
    #[error("planet {planet}: mean motion from the λ(t) fit is {value} rad/d; it must be > 0")]
    NonPositiveMeanMotion {
        /// Index of the planet in the history.
        planet: usize,
        /// The fitted mean motion (rad/d).
        value: f64,
    },
    /// A setting or argument outside its allowed range.
    #[error("invalid {name} = {value}: {reason}")]
    InvalidSetting {
        /// Name of the setting.
        name: &'static str,
        /// The value given.
        value: f64,
        /// What is allowed.
        reason: &'static str,
    },
}

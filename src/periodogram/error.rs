//! Typed errors of the periodogram layer.

/// Everything that can go wrong in the periodogram layer: bad input series,
/// bad settings, degenerate fits and failed root finds. NaN never leaves this
/// layer; a value that cannot be computed is one of these errors instead.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PeriodogramError {
    /// Fewer epochs than the computation needs.
    #[error("need at least {needed} epochs, got {count}")]
    TooFewPoints {
        /// Number of epochs given.
        count: usize,
        /// Minimum number of epochs the computation needs.
        needed: usize,
    },
    /// The epoch, velocity and error slices have different lengths.
    #[error("length mismatch: {times} epochs, {values} velocities, {errors} errors")]
    LengthMismatch {
        /// Length of the epoch slice.
        times: usize,
        /// Length of the velocity slice.
        values: usize,
        /// Length of the error slice.
        errors: usize,
    },
    /// A NaN or infinite input value.
    #[error("non-finite {quantity} at index {index}")]
    NonFinite {
        /// Which input ("epoch", "velocity", "error").
        quantity: &'static str,
        /// Index of the offending value.
        index: usize,
    },
    /// A measurement error that is zero or negative.
    #[error("measurement error at index {index} is {value} m/s; it must be > 0")]
    NonPositiveError {
        /// Index of the offending error bar.
        index: usize,
        /// Its value (m/s).
        value: f64,
    },
    /// All epochs are equal, so there is no time baseline.
    #[error("all epochs coincide: the time baseline is zero")]
    ZeroBaseline,
    /// The velocities are constant: the weighted χ² about the mean is zero,
    /// so the normalised power (a ratio to that χ²) is undefined.
    #[error("the velocities are constant: χ² about the weighted mean is zero")]
    ConstantData,
    /// A frequency grid without any frequency in it.
    #[error("empty frequency grid: {reason}")]
    EmptyGrid {
        /// Why the grid is empty.
        reason: String,
    },
    /// A frequency grid too large to hold in memory.
    #[error("frequency grid of {len} frequencies exceeds the limit of {limit}")]
    GridTooLarge {
        /// Number of frequencies requested.
        len: usize,
        /// The largest number accepted.
        limit: usize,
    },
    /// A setting or argument outside its allowed range.
    #[error("invalid {name} = {value}: {reason}")]
    InvalidSetting {
        /// Name of the setting or argument.
        name: &'static str,
        /// The value given.
        value: f64,
        /// What is allowed.
        reason: &'static str,
    },
    /// At this frequency the cosine and sine columns are (numerically)
    /// linearly dependent on the given epochs together with the constant, so
    /// the sinusoid's coefficients are not determined.
    #[error("frequency {frequency} 1/d: the sinusoid is not determined by these epochs")]
    DegenerateFit {
        /// The frequency (1/d).
        frequency: f64,
    },
    /// A root finder or optimiser did not converge.
    #[error("numerical solver failed: {reason}")]
    SolverFailed {
        /// The solver's message.
        reason: String,
    },
}

//! Errors of the ensemble sampler, its initialisation, diagnostics and files.

use std::path::PathBuf;

use crate::atomic::AtomicWriteError;

/// Everything that can go wrong in [`crate::fit::sample`].
#[derive(Debug, thiserror::Error)]
pub enum SampleError {
    /// The parameter space has no dimension.
    #[error("the parameter vector is empty")]
    ZeroDimension,
    /// The stretch move needs an even number of walkers, at least twice the
    /// dimension (so that each half spans the space).
    #[error("{n_walkers} walkers for {dim} parameters: need an even number, at least {}", 2 * dim)]
    BadWalkerCount {
        /// Number of walkers asked for.
        n_walkers: usize,
        /// Number of parameters.
        dim: usize,
    },
    /// The stretch scale must be finite and greater than 1.
    #[error("stretch scale a = {0} must be finite and > 1")]
    BadStretchScale(f64),
    /// A vector or table has the wrong length.
    #[error("{what}: expected length {expected}, found {found}")]
    ShapeMismatch {
        /// Which quantity.
        what: &'static str,
        /// Expected length.
        expected: usize,
        /// Length found.
        found: usize,
    },
    /// A starting walker has a non-finite coordinate or log-probability.
    #[error("starting walker {walker} has a non-finite position or log-probability")]
    NonFiniteStart {
        /// Index of the walker.
        walker: usize,
    },
    /// A Gaussian-ball width or covariance is unusable.
    #[error("initial ball: {0}")]
    BadBall(&'static str),
    /// Initialisation drew too many impossible points for one walker.
    #[error("walker {walker}: no point with finite log-probability after {tries} draws")]
    InitRejected {
        /// Index of the walker.
        walker: usize,
        /// Number of draws made for it.
        tries: usize,
    },
    /// Burn-in and thinning leave nothing, or thinning is zero.
    #[error("burn-in {burn_in} and thinning {thin} leave no samples from {n_steps} steps")]
    NoSamples {
        /// Steps discarded at the start.
        burn_in: usize,
        /// Keep every `thin`-th step.
        thin: usize,
        /// Steps in the chain.
        n_steps: usize,
    },
    /// A series has zero variance, so its autocorrelation is undefined.
    #[error("series {index} has zero variance: autocorrelation time undefined")]
    ZeroVariance {
        /// Index of the parameter (or series).
        index: usize,
    },
    /// A series is too short (fewer than 2 points) or non-finite.
    #[error("series {index} is too short or non-finite for an autocorrelation estimate")]
    BadSeries {
        /// Index of the parameter (or series).
        index: usize,
    },
    /// A CSV column name is empty or contains a comma, quote or line break.
    #[error("column name {0:?} is empty or contains a comma, quote or line break")]
    BadColumnName(String),
    /// A derived quantity came out non-finite.
    #[error("derived column {column:?} is non-finite in sample row {row}")]
    NonFiniteDerived {
        /// Row of the samples table (0-based, without header).
        row: usize,
        /// Column name.
        column: String,
    },
    /// Writing a file failed.
    #[error(transparent)]
    Write(#[from] AtomicWriteError),
    /// Reading a checkpoint failed.
    #[error("reading checkpoint {path}: {source}")]
    Read {
        /// The checkpoint path.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// The chain file of a checkpoint could not be opened, read, cut or
    /// appended to.
    #[error("checkpoint chain file {path}: {source}")]
    ChainFile {
        /// The chain file.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// A checkpoint could not be encoded or decoded.
    #[error("checkpoint format: {0}")]
    Format(String),
    /// A checkpoint's contents are inconsistent.
    #[error("checkpoint is inconsistent: {0}")]
    BadCheckpoint(String),
    /// An observer asked to abort with an error.
    #[error("observer: {0}")]
    Observer(String),
}

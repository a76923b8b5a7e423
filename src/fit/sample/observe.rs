//! Observers: what hangs on the sampler from outside (progress display,
//! checkpoints, stopping rules). The algorithm never calls them itself;
//! [`EnsembleSampler::run`] calls each after every step.

use std::path::PathBuf;

use super::error::SampleError;
use super::stretch::EnsembleSampler;

/// Whether a run should go on after an observer has seen a step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Flow {
    /// Take the next step.
    Continue,
    /// Stop the run after this step.
    Stop,
}

/// Something that looks at the sampler after each step.
///
/// # Example
/// A progress line every 100 steps, and a stop after 300 steps:
/// ```
/// use apsidal::fit::sample::{
///     gaussian_ball, Ball, EnsembleSampler, Flow, LogTarget, Observer, SampleError,
/// };
/// use rand::SeedableRng;
///
/// struct Quadratic;
/// impl LogTarget for Quadratic {
///     fn ln_prob(&self, x: &[f64]) -> f64 {
///         -0.5 * x.iter().map(|v| v * v).sum::<f64>()
///     }
/// }
///
/// struct Progress {
///     lines: usize,
/// }
/// impl Observer for Progress {
///     fn observe(&mut self, s: &EnsembleSampler) -> Result<Flow, SampleError> {
///         if s.steps_done() % 100 == 0 {
///             eprintln!("step {}: acceptance {:.2}", s.steps_done(), s.overall_acceptance());
///             self.lines += 1;
///         }
///         Ok(if s.steps_done() >= 300 { Flow::Stop } else { Flow::Continue })
///     }
/// }
///
/// let mut rng = rand_chacha::ChaCha20Rng::seed_from_u64(1);
/// let w = gaussian_ball(&Quadratic, &[0.0; 3], &Ball::Diagonal(vec![0.1; 3]), 8, 5, &mut rng)?;
/// let mut sampler = EnsembleSampler::new(w, 2.0, 1)?;
/// let mut progress = Progress { lines: 0 };
/// let end = sampler.run(&Quadratic, 1000, &mut [&mut progress])?;
/// assert!(end.stopped_by_observer && end.steps_taken == 300 && progress.lines == 3);
/// # Ok::<(), SampleError>(())
/// ```
pub trait Observer {
    /// Called after every step with the sampler's complete state.
    ///
    /// # Errors
    /// Any error aborts the run and is returned by
    /// [`EnsembleSampler::run`].
    fn observe(&mut self, sampler: &EnsembleSampler) -> Result<Flow, SampleError>;
}

/// Writes an atomic checkpoint of the complete sampler state every
/// `every` steps (when the total step count is a multiple of `every`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Checkpointer {
    path: PathBuf,
    every: u64,
    written: u64,
}

impl Checkpointer {
    /// A checkpointer writing to `path` every `every` steps (`every` = 0 is
    /// taken as 1).
    pub fn new(path: impl Into<PathBuf>, every: u64) -> Self {
        Self {
            path: path.into(),
            every: every.max(1),
            written: 0,
        }
    }

    /// Number of checkpoints written so far.
    pub fn written(&self) -> u64 {
        self.written
    }
}

impl Observer for Checkpointer {
    fn observe(&mut self, sampler: &EnsembleSampler) -> Result<Flow, SampleError> {
        if sampler.steps_done() % self.every == 0 {
            sampler.save_checkpoint(&self.path)?;
            self.written += 1;
        }
        Ok(Flow::Continue)
    }
}

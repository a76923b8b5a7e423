//! Posterior sampling with the affine-invariant ensemble sampler.
//!
//! * [`LogTarget`] — the target: a log-probability in the unconstrained
//!   parameter space (−∞ for impossible points), `Sync`.
//! * [`gaussian_ball`] / [`Walkers::at_points`] — starting ensembles.
//! * [`EnsembleSampler`] — the stretch move of Goodman & Weare (2010,
//!   Comm. App. Math. Comp. Sci. 5, 65) with a = 2, parallelised by the
//!   red/blue split of Foreman-Mackey et al. (2013, PASP 125, 306, §3).
//!   One [`EnsembleSampler::step`] per call; [`Observer`]s (progress,
//!   [`Checkpointer`]) hang on [`EnsembleSampler::run`] from outside.
//! * Diagnostics — acceptance fractions, integrated autocorrelation times
//!   ([`Chain::autocorr_times`], Sokal 1997 windowing with c = 5) and a
//!   "chain longer than 50 τ" flag; [`suggest_burn_in_and_thin`].
//! * Output — [`Chain::samples`] (burn-in, thinning),
//!   [`write_samples_csv`], and checkpoints that resume bit-for-bit
//!   ([`EnsembleSampler::save_checkpoint`],
//!   [`EnsembleSampler::load_checkpoint`]): a small RON state replaced
//!   atomically and an append-only chain file ([`chain_path_for`]), so a
//!   checkpoint costs the same at step 100 and at step 4000.
//!
//! Results for a seed do not depend on the number of rayon threads.
//!
//! # Example
//! ```
//! use apsidal::fit::sample::{
//!     gaussian_ball, Ball, EnsembleSampler, LogTarget, DEFAULT_STRETCH_SCALE, DEFAULT_WINDOW_C,
//! };
//! use rand::SeedableRng;
//!
//! /// A unit Gaussian in two dimensions, centred on (1, −2).
//! struct Blob;
//! impl LogTarget for Blob {
//!     fn ln_prob(&self, x: &[f64]) -> f64 {
//!         -0.5 * ((x[0] - 1.0).powi(2) + (x[1] + 2.0).powi(2))
//!     }
//! }
//!
//! let mut rng = rand_chacha::ChaCha20Rng::seed_from_u64(7);
//! let start = gaussian_ball(&Blob, &[1.0, -2.0], &Ball::Diagonal(vec![0.1, 0.1]), 16, 10, &mut rng)?;
//! let mut sampler = EnsembleSampler::new(start, DEFAULT_STRETCH_SCALE, 42)?;
//! sampler.run(&Blob, 2000, &mut [])?;
//!
//! let acc = sampler.overall_acceptance();
//! assert!(acc > 0.2 && acc < 0.9);
//! let tau = sampler.chain().autocorr_times(200, DEFAULT_WINDOW_C)?;
//! let samples = sampler.chain().samples(200, 1)?;
//! let mean = samples.mean();
//! assert!((mean[0] - 1.0).abs() < 0.1 && (mean[1] + 2.0).abs() < 0.1);
//! assert!(tau.iter().all(|t| t.tau > 1.0 && t.reliable));
//! # Ok::<(), apsidal::fit::sample::SampleError>(())
//! ```

mod autocorr;
mod chain;
mod checkpoint;
mod csv;
mod error;
mod init;
mod observe;
mod stretch;
mod target;

pub use autocorr::{
    AutocorrTime, DEFAULT_WINDOW_C, RELIABLE_LENGTH_FACTOR, integrated_autocorr_time,
    suggest_burn_in_and_thin,
};
pub use chain::{Chain, Samples};
pub use checkpoint::chain_path_for;
pub use csv::{Derived, write_samples_csv};
pub use error::SampleError;
pub use init::{Ball, Walkers, check_shape, gaussian_ball};
pub use observe::{Checkpointer, Flow, Observer};
pub use stretch::{DEFAULT_STRETCH_SCALE, EnsembleSampler, RunEnd};
pub use target::LogTarget;

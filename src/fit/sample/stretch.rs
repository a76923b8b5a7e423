//! The affine-invariant ensemble sampler with the parallel stretch move.
//!
//! Method: Goodman & Weare (2010, Comm. App. Math. Comp. Sci. 5, 65), the
//! stretch move (their eqs. 7 and 9–10): a walker X_k moves to
//! Y = X_j + Z (X_k − X_j) towards or away from a partner X_j, with Z drawn
//! from g(z) ∝ 1/√z on [1/a, a], and is accepted with probability
//! min(1, Z^(d−1) π(Y)/π(X_k)). The ensemble is split into two halves and
//! each half moves using partners from the other half only, so the proposals
//! of one half are independent and are evaluated in parallel
//! (Foreman-Mackey et al. 2013, PASP 125, 306, §3, "parallel stretch move",
//! their Algorithm 3).
//!
//! Reproducibility: all random numbers of a half-step (Z, partner index,
//! acceptance uniform, in walker order) are drawn from one ChaCha20 stream
//! *before* the parallel evaluation; each evaluation writes into its own
//! slot and the accept/reject pass is sequential. The result for a seed is
//! therefore the same whatever the number of threads.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha20Rng;
use rayon::prelude::*;

use super::chain::Chain;
use super::error::SampleError;
use super::init::Walkers;
use super::observe::{Flow, Observer};
use super::target::LogTarget;

/// Default stretch scale a = 2 (Goodman & Weare 2010, §3).
pub const DEFAULT_STRETCH_SCALE: f64 = 2.0;

/// Buffers for one half-step, allocated once per sampler.
#[derive(Debug, Clone)]
struct Scratch {
    proposals: Vec<f64>,
    proposal_ln_probs: Vec<f64>,
    z: Vec<f64>,
    partner: Vec<usize>,
    ln_u: Vec<f64>,
}

impl Scratch {
    fn new(half: usize, dim: usize) -> Self {
        Self {
            proposals: vec![0.0; half * dim],
            proposal_ln_probs: vec![0.0; half],
            z: vec![0.0; half],
            partner: vec![0; half],
            ln_u: vec![0.0; half],
        }
    }
}

/// What one call of [`EnsembleSampler::run`] did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RunEnd {
    /// Steps taken in this call.
    pub steps_taken: usize,
    /// True if an observer asked to stop before `n_steps` were taken.
    pub stopped_by_observer: bool,
}

/// An ensemble of walkers driven by the parallel stretch move.
///
/// One [`step`](Self::step) moves both halves once and appends the ensemble
/// to the stored [`Chain`]. Progress display and checkpointing are
/// [`Observer`]s attached from outside in [`run`](Self::run).
#[derive(Debug, Clone)]
pub struct EnsembleSampler {
    pub(crate) n_walkers: usize,
    pub(crate) dim: usize,
    pub(crate) stretch_scale: f64,
    pub(crate) positions: Vec<f64>,
    pub(crate) ln_probs: Vec<f64>,
    pub(crate) rng: ChaCha20Rng,
    pub(crate) steps_done: u64,
    pub(crate) accepted: Vec<u64>,
    pub(crate) chain: Chain,
    scratch: Scratch,
}

impl EnsembleSampler {
    /// A sampler starting from `walkers`, with the stretch scale `a`
    /// (use [`DEFAULT_STRETCH_SCALE`]) and a random stream fixed by `seed`.
    ///
    /// # Errors
    /// [`SampleError::BadStretchScale`] if `a` is not finite or `a ≤ 1`.
    pub fn new(walkers: Walkers, stretch_scale: f64, seed: u64) -> Result<Self, SampleError> {
        let rng = ChaCha20Rng::seed_from_u64(seed);
        let (n_walkers, dim, positions, ln_probs) = walkers.into_parts();
        Self::from_parts(
            n_walkers,
            dim,
            stretch_scale,
            positions,
            ln_probs,
            rng,
            0,
            vec![0; n_walkers],
            Chain::new(n_walkers, dim),
        )
    }

    /// Assembles a sampler from its complete state (used by checkpoints).
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn from_parts(
        n_walkers: usize,
        dim: usize,
        stretch_scale: f64,
        positions: Vec<f64>,
        ln_probs: Vec<f64>,
        rng: ChaCha20Rng,
        steps_done: u64,
        accepted: Vec<u64>,
        chain: Chain,
    ) -> Result<Self, SampleError> {
        if !(stretch_scale.is_finite() && stretch_scale > 1.0) {
            return Err(SampleError::BadStretchScale(stretch_scale));
        }
        super::init::check_shape(n_walkers, dim)?;
        let check = |what, expected: usize, found: usize| {
            if expected == found {
                Ok(())
            } else {
                Err(SampleError::ShapeMismatch {
                    what,
                    expected,
                    found,
                })
            }
        };
        check("positions", n_walkers * dim, positions.len())?;
        check("log-probabilities", n_walkers, ln_probs.len())?;
        check("accept counts", n_walkers, accepted.len())?;
        check("chain walkers", n_walkers, chain.n_walkers())?;
        check("chain dimension", dim, chain.dim())?;
        for w in 0..n_walkers {
            let pos = &positions[w * dim..(w + 1) * dim];
            if !ln_probs[w].is_finite() || pos.iter().any(|x| !x.is_finite()) {
                return Err(SampleError::NonFiniteStart { walker: w });
            }
        }
        Ok(Self {
            n_walkers,
            dim,
            stretch_scale,
            positions,
            ln_probs,
            rng,
            steps_done,
            accepted,
            chain,
            scratch: Scratch::new(n_walkers / 2, dim),
        })
    }

    /// Moves every walker once (first half, then second half) and appends
    /// the new ensemble to the chain. Returns the number of accepted moves.
    ///
    /// Non-finite target values are rejected proposals.
    pub fn step<T: LogTarget + ?Sized>(&mut self, target: &T) -> usize {
        let half = self.n_walkers / 2;
        let mut n_acc = 0;
        for h in 0..2 {
            n_acc += self.half_step(target, h, half);
        }
        self.steps_done += 1;
        self.chain.push(&self.positions, &self.ln_probs);
        n_acc
    }

    /// Moves half `h` (0: walkers `0..half`, 1: walkers `half..n`) with
    /// partners from the other half.
    fn half_step<T: LogTarget + ?Sized>(&mut self, target: &T, h: usize, half: usize) -> usize {
        let dim = self.dim;
        let a = self.stretch_scale;
        let Scratch {
            proposals,
            proposal_ln_probs,
            z,
            partner,
            ln_u,
        } = &mut self.scratch;

        // 1. All random numbers of this half-step, sequentially, in walker
        //    order: Z ~ g(z) ∝ 1/√z on [1/a, a] by inversion,
        //    Z = ((a − 1) U + 1)² / a (Goodman & Weare 2010, eq. 10).
        for k in 0..half {
            let u: f64 = self.rng.random();
            z[k] = ((a - 1.0) * u + 1.0).powi(2) / a;
            partner[k] = self.rng.random_range(0..half);
            ln_u[k] = self.rng.random::<f64>().ln();
        }

        // 2. Proposals and their log-probabilities, in parallel, one slot
        //    per walker.
        let (first, second) = self.positions.split_at_mut(half * dim);
        let (active, other): (&mut [f64], &[f64]) = if h == 0 {
            (first, second)
        } else {
            (second, first)
        };
        {
            let active_ro: &[f64] = active;
            let (z, partner) = (&*z, &*partner);
            proposals
                .par_chunks_mut(dim)
                .zip(proposal_ln_probs.par_iter_mut())
                .enumerate()
                .for_each(|(k, (y, lp))| {
                    let xk = &active_ro[k * dim..(k + 1) * dim];
                    let j = partner[k];
                    let xj = &other[j * dim..(j + 1) * dim];
                    for ((yi, &xki), &xji) in y.iter_mut().zip(xk).zip(xj) {
                        *yi = xji + z[k] * (xki - xji);
                    }
                    *lp = target.ln_prob(y);
                });
        }

        // 3. Accept or reject, sequentially: ln q = (d − 1) ln Z + ln π(Y) −
        //    ln π(X_k) (Goodman & Weare 2010, eq. 9).
        let offset = h * half;
        let mut n_acc = 0;
        for k in 0..half {
            let lp_new = proposal_ln_probs[k];
            if !lp_new.is_finite() {
                continue;
            }
            let w = offset + k;
            let ln_q = (dim as f64 - 1.0) * z[k].ln() + lp_new - self.ln_probs[w];
            if ln_u[k] < ln_q {
                active[k * dim..(k + 1) * dim].copy_from_slice(&proposals[k * dim..(k + 1) * dim]);
                self.ln_probs[w] = lp_new;
                self.accepted[w] += 1;
                n_acc += 1;
            }
        }
        n_acc
    }

    /// Takes up to `n_steps` steps, calling every observer after each step;
    /// an observer may stop the run early or abort it with an error.
    ///
    /// # Errors
    /// The first error an observer returns (the step it follows is kept).
    pub fn run<T: LogTarget + ?Sized>(
        &mut self,
        target: &T,
        n_steps: usize,
        observers: &mut [&mut dyn Observer],
    ) -> Result<RunEnd, SampleError> {
        self.chain.reserve_steps(n_steps);
        for taken in 1..=n_steps {
            self.step(target);
            let mut stop = false;
            for obs in observers.iter_mut() {
                if obs.observe(self)? == Flow::Stop {
                    stop = true;
                }
            }
            if stop {
                return Ok(RunEnd {
                    steps_taken: taken,
                    stopped_by_observer: true,
                });
            }
        }
        Ok(RunEnd {
            steps_taken: n_steps,
            stopped_by_observer: false,
        })
    }

    /// Number of walkers.
    pub fn n_walkers(&self) -> usize {
        self.n_walkers
    }

    /// Number of parameters.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// The stretch scale a.
    pub fn stretch_scale(&self) -> f64 {
        self.stretch_scale
    }

    /// Steps taken since the start (including those before a resume).
    pub fn steps_done(&self) -> u64 {
        self.steps_done
    }

    /// Current positions, flat (walker-major).
    pub fn positions(&self) -> &[f64] {
        &self.positions
    }

    /// Current log-probabilities, one per walker.
    pub fn ln_probs(&self) -> &[f64] {
        &self.ln_probs
    }

    /// Accepted moves per walker since the start.
    pub fn accepted(&self) -> &[u64] {
        &self.accepted
    }

    /// The stored chain (every step since the start).
    pub fn chain(&self) -> &Chain {
        &self.chain
    }

    /// Acceptance fraction of each walker: accepted moves / steps.
    /// Zero before the first step.
    pub fn acceptance_fractions(&self) -> Vec<f64> {
        let n = self.steps_done.max(1) as f64;
        self.accepted.iter().map(|&a| a as f64 / n).collect()
    }

    /// Acceptance fraction of the whole ensemble. Zero before the first step.
    pub fn overall_acceptance(&self) -> f64 {
        let total: u64 = self.accepted.iter().sum();
        total as f64 / (self.steps_done.max(1) as f64 * self.n_walkers as f64)
    }
}

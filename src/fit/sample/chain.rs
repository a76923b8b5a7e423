//! Stored chain of an ensemble run and extraction of samples (burn-in,
//! thinning).

use serde::{Deserialize, Serialize};

use super::error::SampleError;

/// The positions and log-probabilities of every walker after every step.
///
/// Row `s` (0-based) holds the ensemble after step `s + 1`; within a row the
/// walkers are in index order and each position is `dim` contiguous values.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Chain {
    n_walkers: usize,
    dim: usize,
    positions: Vec<f64>,
    ln_probs: Vec<f64>,
}

impl Chain {
    /// An empty chain for `n_walkers` walkers in `dim` dimensions.
    pub fn new(n_walkers: usize, dim: usize) -> Self {
        Self {
            n_walkers,
            dim,
            positions: Vec::new(),
            ln_probs: Vec::new(),
        }
    }

    /// Rebuilds a chain from its flat arrays (as stored in a checkpoint).
    ///
    /// # Errors
    /// [`SampleError::ShapeMismatch`] if the lengths do not agree.
    pub fn from_parts(
        n_walkers: usize,
        dim: usize,
        positions: Vec<f64>,
        ln_probs: Vec<f64>,
    ) -> Result<Self, SampleError> {
        let chain = Self {
            n_walkers,
            dim,
            positions,
            ln_probs,
        };
        chain.validate()?;
        Ok(chain)
    }

    /// Checks that the flat arrays agree with the walker count and dimension.
    pub(crate) fn validate(&self) -> Result<(), SampleError> {
        let (n_walkers, dim) = (self.n_walkers, self.dim);
        let (positions, ln_probs) = (&self.positions, &self.ln_probs);
        if n_walkers == 0 || ln_probs.len() % n_walkers != 0 {
            return Err(SampleError::ShapeMismatch {
                what: "chain log-probabilities (multiple of walkers)",
                expected: n_walkers,
                found: ln_probs.len(),
            });
        }
        if positions.len() != ln_probs.len() * dim {
            return Err(SampleError::ShapeMismatch {
                what: "chain positions",
                expected: ln_probs.len() * dim,
                found: positions.len(),
            });
        }
        Ok(())
    }

    /// Reserves room for `extra` more steps (avoids reallocation in a run).
    pub fn reserve_steps(&mut self, extra: usize) {
        self.positions.reserve(extra * self.n_walkers * self.dim);
        self.ln_probs.reserve(extra * self.n_walkers);
    }

    /// Appends one ensemble state (all walkers).
    pub(crate) fn push(&mut self, positions: &[f64], ln_probs: &[f64]) {
        debug_assert_eq!(positions.len(), self.n_walkers * self.dim);
        debug_assert_eq!(ln_probs.len(), self.n_walkers);
        self.positions.extend_from_slice(positions);
        self.ln_probs.extend_from_slice(ln_probs);
    }

    /// Number of stored steps.
    pub fn n_steps(&self) -> usize {
        self.ln_probs.len() / self.n_walkers.max(1)
    }

    /// Number of walkers.
    pub fn n_walkers(&self) -> usize {
        self.n_walkers
    }

    /// Number of parameters.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Position of `walker` after step `row + 1`.
    ///
    /// # Panics
    /// If `row >= n_steps()` or `walker >= n_walkers()`.
    pub fn position(&self, row: usize, walker: usize) -> &[f64] {
        let start = (row * self.n_walkers + walker) * self.dim;
        &self.positions[start..start + self.dim]
    }

    /// Log-probability of `walker` after step `row + 1`.
    ///
    /// # Panics
    /// If `row >= n_steps()` or `walker >= n_walkers()`.
    pub fn ln_prob(&self, row: usize, walker: usize) -> f64 {
        self.ln_probs[row * self.n_walkers + walker]
    }

    /// All positions, flat (step-major, then walker, then parameter).
    pub fn positions_flat(&self) -> &[f64] {
        &self.positions
    }

    /// All log-probabilities, flat (step-major, then walker).
    pub fn ln_probs_flat(&self) -> &[f64] {
        &self.ln_probs
    }

    /// The walker-averaged series of parameter `param` from row `burn_in`
    /// on: element `s` is the mean over walkers of that parameter after step
    /// `burn_in + s + 1` (the series Goodman & Weare 2010, §6, use for the
    /// ensemble's autocorrelation time).
    ///
    /// # Panics
    /// If `param >= dim()`.
    pub fn walker_mean_series(&self, param: usize, burn_in: usize) -> Vec<f64> {
        assert!(param < self.dim, "parameter index out of range");
        let inv = 1.0 / self.n_walkers as f64;
        (burn_in..self.n_steps())
            .map(|row| {
                (0..self.n_walkers)
                    .map(|w| self.position(row, w)[param])
                    .sum::<f64>()
                    * inv
            })
            .collect()
    }

    /// Samples after discarding the first `burn_in` steps and keeping every
    /// `thin`-th step after that (all walkers of a kept step are kept).
    ///
    /// # Errors
    /// [`SampleError::NoSamples`] if `thin == 0` or nothing is left.
    pub fn samples(&self, burn_in: usize, thin: usize) -> Result<Samples, SampleError> {
        let n_steps = self.n_steps();
        if thin == 0 || burn_in >= n_steps {
            return Err(SampleError::NoSamples {
                burn_in,
                thin,
                n_steps,
            });
        }
        let rows: Vec<usize> = (burn_in..n_steps).step_by(thin).collect();
        let n = rows.len() * self.n_walkers;
        let mut out = Samples {
            dim: self.dim,
            walker: Vec::with_capacity(n),
            step: Vec::with_capacity(n),
            ln_prob: Vec::with_capacity(n),
            params: Vec::with_capacity(n * self.dim),
        };
        for &row in &rows {
            for w in 0..self.n_walkers {
                out.walker.push(w);
                out.step.push(row + 1);
                out.ln_prob.push(self.ln_prob(row, w));
                out.params.extend_from_slice(self.position(row, w));
            }
        }
        Ok(out)
    }
}

/// A flat table of posterior samples: one row per (kept step, walker).
#[derive(Debug, Clone, PartialEq)]
pub struct Samples {
    dim: usize,
    /// Walker index of each row.
    pub walker: Vec<usize>,
    /// Step number of each row (1 = after the first step).
    pub step: Vec<usize>,
    /// Log-probability of each row.
    pub ln_prob: Vec<f64>,
    /// Parameters, `dim` per row, row-major.
    pub params: Vec<f64>,
}

impl Samples {
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.ln_prob.len()
    }

    /// True if there are no rows.
    pub fn is_empty(&self) -> bool {
        self.ln_prob.is_empty()
    }

    /// Number of parameters per row.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// Parameters of row `i`.
    ///
    /// # Panics
    /// If `i >= len()`.
    pub fn row(&self, i: usize) -> &[f64] {
        &self.params[i * self.dim..(i + 1) * self.dim]
    }

    /// Sample mean of each parameter.
    pub fn mean(&self) -> Vec<f64> {
        let mut m = vec![0.0; self.dim];
        for i in 0..self.len() {
            for (mj, x) in m.iter_mut().zip(self.row(i)) {
                *mj += x;
            }
        }
        let n = self.len().max(1) as f64;
        m.iter_mut().for_each(|v| *v /= n);
        m
    }

    /// Sample covariance (divisor n − 1), row-major `dim × dim`.
    pub fn covariance(&self) -> Vec<f64> {
        let m = self.mean();
        let d = self.dim;
        let mut c = vec![0.0; d * d];
        for i in 0..self.len() {
            let r = self.row(i);
            for a in 0..d {
                let da = r[a] - m[a];
                for b in a..d {
                    c[a * d + b] += da * (r[b] - m[b]);
                }
            }
        }
        let n = (self.len().max(2) - 1) as f64;
        for a in 0..d {
            for b in a..d {
                c[a * d + b] /= n;
                c[b * d + a] = c[a * d + b];
            }
        }
        c
    }
}

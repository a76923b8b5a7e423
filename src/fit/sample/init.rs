//! Starting ensembles: walkers from given points, or in a small Gaussian
//! ball around a point (e.g. the optimum, with the optimiser's covariance).

use nalgebra::{DMatrix, DVector};
use rand::Rng;
use rand_distr::StandardNormal;
use rayon::prelude::*;

use super::error::SampleError;
use super::target::LogTarget;

/// Checks that `n_walkers` is even and at least `2 · dim`, and `dim > 0`.
///
/// # Errors
/// [`SampleError::ZeroDimension`] or [`SampleError::BadWalkerCount`].
pub fn check_shape(n_walkers: usize, dim: usize) -> Result<(), SampleError> {
    if dim == 0 {
        return Err(SampleError::ZeroDimension);
    }
    if n_walkers % 2 != 0 || n_walkers < 2 * dim {
        return Err(SampleError::BadWalkerCount { n_walkers, dim });
    }
    Ok(())
}

/// A starting ensemble: positions (walker-major, `dim` values each) and the
/// target's log-probability at each, all finite.
#[derive(Debug, Clone, PartialEq)]
pub struct Walkers {
    n_walkers: usize,
    dim: usize,
    positions: Vec<f64>,
    ln_probs: Vec<f64>,
}

impl Walkers {
    /// Walkers at given points; the target is evaluated at each (in
    /// parallel).
    ///
    /// # Errors
    /// Shape errors ([`check_shape`], [`SampleError::ShapeMismatch`]) and
    /// [`SampleError::NonFiniteStart`] if a point or its log-probability is
    /// not finite.
    pub fn at_points<T: LogTarget + ?Sized>(
        target: &T,
        n_walkers: usize,
        dim: usize,
        positions: Vec<f64>,
    ) -> Result<Self, SampleError> {
        check_shape(n_walkers, dim)?;
        if positions.len() != n_walkers * dim {
            return Err(SampleError::ShapeMismatch {
                what: "walker positions",
                expected: n_walkers * dim,
                found: positions.len(),
            });
        }
        let ln_probs: Vec<f64> = positions
            .par_chunks(dim)
            .map(|p| target.ln_prob(p))
            .collect();
        for (w, lp) in ln_probs.iter().enumerate() {
            let p = &positions[w * dim..(w + 1) * dim];
            if !lp.is_finite() || p.iter().any(|x| !x.is_finite()) {
                return Err(SampleError::NonFiniteStart { walker: w });
            }
        }
        Ok(Self {
            n_walkers,
            dim,
            positions,
            ln_probs,
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

    /// Positions, flat (walker-major).
    pub fn positions(&self) -> &[f64] {
        &self.positions
    }

    /// Log-probabilities, one per walker.
    pub fn ln_probs(&self) -> &[f64] {
        &self.ln_probs
    }

    pub(crate) fn into_parts(self) -> (usize, usize, Vec<f64>, Vec<f64>) {
        (self.n_walkers, self.dim, self.positions, self.ln_probs)
    }
}

/// Shape of the Gaussian ball the walkers start in.
#[derive(Debug, Clone, PartialEq)]
pub enum Ball {
    /// Independent offsets with these standard deviations (one per
    /// parameter, > 0).
    Diagonal(Vec<f64>),
    /// Offsets with this covariance matrix (symmetric positive definite,
    /// e.g. a scaled-down inverse Hessian from the optimiser), drawn as
    /// L·n with L its Cholesky factor and n standard normal.
    Covariance(DMatrix<f64>),
}

/// Draws `n_walkers` walkers from a Gaussian ball around `centre`; a point
/// whose log-probability is not finite is drawn again, at most
/// `max_draws` times per walker.
///
/// Order of draws (reproducible for a seeded `rng` whatever the thread
/// count): in each round, the walkers still without a valid point draw a
/// full vector of standard normals each, in walker order; then the round's
/// points are evaluated in parallel.
///
/// # Errors
/// Shape errors, [`SampleError::BadBall`] for a non-positive width or a
/// covariance that is not symmetric positive definite, and
/// [`SampleError::InitRejected`] when a walker runs out of draws.
pub fn gaussian_ball<T: LogTarget + ?Sized, R: Rng + ?Sized>(
    target: &T,
    centre: &[f64],
    ball: &Ball,
    n_walkers: usize,
    max_draws: usize,
    rng: &mut R,
) -> Result<Walkers, SampleError> {
    let dim = centre.len();
    check_shape(n_walkers, dim)?;
    if centre.iter().any(|x| !x.is_finite()) {
        return Err(SampleError::BadBall("centre is not finite"));
    }
    let chol = match ball {
        Ball::Diagonal(s) => {
            if s.len() != dim {
                return Err(SampleError::ShapeMismatch {
                    what: "ball widths",
                    expected: dim,
                    found: s.len(),
                });
            }
            if s.iter().any(|v| !(v.is_finite() && *v > 0.0)) {
                return Err(SampleError::BadBall("widths must be finite and > 0"));
            }
            DMatrix::from_diagonal(&DVector::from_column_slice(s))
        }
        Ball::Covariance(c) => {
            if c.nrows() != dim || c.ncols() != dim {
                return Err(SampleError::ShapeMismatch {
                    what: "ball covariance rows and columns",
                    expected: dim,
                    found: c.nrows().max(c.ncols()),
                });
            }
            if c.iter().any(|v| !v.is_finite()) || (c - c.transpose()).amax() > 1e-12 * c.amax() {
                return Err(SampleError::BadBall(
                    "covariance must be finite and symmetric",
                ));
            }
            c.clone()
                .cholesky()
                .ok_or(SampleError::BadBall("covariance is not positive definite"))?
                .unpack()
        }
    };

    let mut positions = vec![0.0; n_walkers * dim];
    let mut ln_probs = vec![f64::NEG_INFINITY; n_walkers];
    let mut pending: Vec<usize> = (0..n_walkers).collect();
    let mut normals = vec![0.0; dim];
    for _round in 0..max_draws {
        if pending.is_empty() {
            break;
        }
        for &w in &pending {
            for n in normals.iter_mut() {
                *n = rng.sample(StandardNormal);
            }
            let p = &mut positions[w * dim..(w + 1) * dim];
            for (i, pi) in p.iter_mut().enumerate() {
                // Lower-triangular product (L n)_i = Σ_{j ≤ i} L_ij n_j.
                *pi = centre[i] + (0..=i).map(|j| chol[(i, j)] * normals[j]).sum::<f64>();
            }
        }
        let round: Vec<f64> = pending
            .par_iter()
            .map(|&w| target.ln_prob(&positions[w * dim..(w + 1) * dim]))
            .collect();
        for (&w, lp) in pending.iter().zip(&round) {
            ln_probs[w] = *lp;
        }
        pending.retain(|&w| !ln_probs[w].is_finite());
    }
    if let Some(&walker) = pending.first() {
        return Err(SampleError::InitRejected {
            walker,
            tries: max_draws,
        });
    }
    Ok(Walkers {
        n_walkers,
        dim,
        positions,
        ln_probs,
    })
}

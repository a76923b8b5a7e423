//! Parameter covariance at a least-squares optimum.
//!
//! C = s²(JᵀJ)⁻¹ (Gauss–Newton approximation of the inverse Hessian of
//! χ²/2; e.g. Press et al. 2007, *Numerical Recipes* 3rd ed., §15.5,
//! eq. 15.5.15, and Bates & Watts 1988, §2.3). With residuals weighted by
//! their true errors the unscaled C (s² = 1) applies; otherwise s² = χ²/(m − n)
//! estimates the residual variance (the convention of NIST StRD certified
//! standard deviations). The inverse is formed from the SVD of the
//! column-equilibrated Jacobian, not from JᵀJ, so its accuracy and the
//! singularity test do not depend on parameter units.

use nalgebra::DMatrix;

use super::jacobian::{JacobianSource, jacobian_at};
use super::problem::{EvaluationError, ResidualProblem, checked_residuals};

/// Whether to scale (JᵀJ)⁻¹ by the residual variance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum CovarianceScaling {
    /// s² = χ²/(m − n): the residual weights are relative only.
    #[default]
    ResidualVariance,
    /// s² = 1: the residuals are already divided by their true errors.
    Unscaled,
}

/// Why no covariance could be computed.
#[derive(Debug, thiserror::Error)]
pub enum CovarianceError {
    /// JᵀJ is numerically singular (rank of the equilibrated Jacobian below n).
    #[error("JᵀJ is singular: numerical rank {rank} of {n}")]
    Singular {
        /// Numerical rank.
        rank: usize,
        /// Number of parameters.
        n: usize,
    },
    /// m ≤ n: no residual degrees of freedom for s².
    #[error("{m} residuals for {n} parameters leave no degrees of freedom")]
    NoDegreesOfFreedom {
        /// Residuals.
        m: usize,
        /// Parameters.
        n: usize,
    },
    /// χ² or the Jacobian is not finite.
    #[error("non-finite χ² or Jacobian")]
    NonFinite,
    /// The residuals or Jacobian could not be evaluated.
    #[error(transparent)]
    Evaluation(#[from] EvaluationError),
}

/// Covariance of the parameters at an optimum.
#[derive(Debug, Clone, PartialEq)]
pub struct Covariance {
    /// C (n × n), in the parameters' units squared.
    pub matrix: DMatrix<f64>,
    /// Standard errors √Cⱼⱼ.
    pub std_errors: Vec<f64>,
    /// Correlation matrix Cᵢⱼ / √(Cᵢᵢ Cⱼⱼ).
    pub correlation: DMatrix<f64>,
    /// The scale s² applied (1 when unscaled).
    pub residual_variance: f64,
    /// m − n.
    pub degrees_of_freedom: usize,
}

/// Relative singular-value threshold below which the equilibrated Jacobian
/// is treated as rank-deficient: max(m, n)·ε (common practice, as in
/// LAPACK-based pseudo-inverses).
fn rank_threshold(m: usize, n: usize) -> f64 {
    m.max(n) as f64 * f64::EPSILON
}

/// Covariance from the Jacobian `jac` (m × n) of the weighted residuals and
/// χ² = Σ rᵢ² at the optimum.
///
/// # Example
///
/// Straight line y = a + b x, unit weights: Var(b) = s²/Σ(x − x̄)².
///
/// ```
/// use apsidal::fit::optimise::{covariance, CovarianceScaling};
/// use nalgebra::DMatrix;
///
/// let x = [0.0, 1.0, 2.0, 3.0];
/// // residual r = y − a − b x, so ∂r/∂a = −1, ∂r/∂b = −x.
/// let jac = DMatrix::from_fn(4, 2, |i, j| if j == 0 { -1.0 } else { -x[i] });
/// let c = covariance(&jac, 2.0, CovarianceScaling::ResidualVariance).unwrap();
/// // s² = 2/(4 − 2) = 1; Σ(x − x̄)² = 5.
/// assert!((c.std_errors[1] - (1.0f64 / 5.0).sqrt()).abs() < 1e-14);
/// ```
pub fn covariance(
    jac: &DMatrix<f64>,
    chi2: f64,
    scaling: CovarianceScaling,
) -> Result<Covariance, CovarianceError> {
    let (m, n) = jac.shape();
    if !chi2.is_finite() || jac.iter().any(|v| !v.is_finite()) {
        return Err(CovarianceError::NonFinite);
    }
    let dof = m.saturating_sub(n);
    let s2 = match scaling {
        CovarianceScaling::Unscaled => 1.0,
        CovarianceScaling::ResidualVariance if dof == 0 => {
            return Err(CovarianceError::NoDegreesOfFreedom { m, n });
        }
        CovarianceScaling::ResidualVariance => chi2 / dof as f64,
    };
    // Equilibrate: J = Jₛ diag(c), ‖columns of Jₛ‖ = 1.
    let norms: Vec<f64> = jac.column_iter().map(|c| c.norm()).collect();
    // An all-zero column stays zero and is caught by the rank test below.
    let mut js = jac.clone();
    for (j, mut col) in js.column_iter_mut().enumerate() {
        if norms[j] > 0.0 {
            col /= norms[j];
        }
    }
    let svd = js.svd(false, true);
    let v_t = svd.v_t.as_ref().ok_or(CovarianceError::NonFinite)?;
    let sv = &svd.singular_values;
    let max = sv.iter().copied().fold(0.0, f64::max);
    let tol = rank_threshold(m, n) * max;
    let rank = sv.iter().filter(|&&s| s > tol && max > 0.0).count();
    if rank < n {
        return Err(CovarianceError::Singular { rank, n });
    }
    // (JₛᵀJₛ)⁻¹ = V Σ⁻² Vᵀ; C = s² diag(1/c) (JₛᵀJₛ)⁻¹ diag(1/c).
    let matrix = DMatrix::from_fn(n, n, |i, j| {
        let sum: f64 = (0..sv.len())
            .map(|k| v_t[(k, i)] * v_t[(k, j)] / (sv[k] * sv[k]))
            .sum();
        s2 * sum / (norms[i] * norms[j])
    });
    let std_errors: Vec<f64> = (0..n).map(|j| matrix[(j, j)].sqrt()).collect();
    let correlation = DMatrix::from_fn(n, n, |i, j| {
        if i == j {
            1.0
        } else {
            matrix[(i, j)] / (std_errors[i] * std_errors[j])
        }
    });
    if matrix
        .iter()
        .chain(correlation.iter())
        .any(|v| !v.is_finite())
    {
        return Err(CovarianceError::NonFinite);
    }
    Ok(Covariance {
        matrix,
        std_errors,
        correlation,
        residual_variance: s2,
        degrees_of_freedom: dof,
    })
}

/// Covariance of `problem` at `theta`, with the Jacobian from `source`.
pub fn covariance_at<P: ResidualProblem + ?Sized>(
    problem: &P,
    theta: &[f64],
    source: JacobianSource,
    scaling: CovarianceScaling,
) -> Result<Covariance, CovarianceError> {
    let mut r = vec![0.0; problem.n_residuals()];
    checked_residuals(problem, theta, &mut r)?;
    let chi2 = r.iter().map(|v| v * v).sum();
    let jac = jacobian_at(problem, theta, source)?;
    covariance(&jac, chi2, scaling)
}

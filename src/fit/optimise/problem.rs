//! The residual problem: what a least-squares fit needs from a model.

use nalgebra::DMatrix;

/// Why a residual or Jacobian evaluation failed.
#[derive(Debug, thiserror::Error)]
pub enum EvaluationError {
    /// The model could not be evaluated at these parameters (e.g. an
    /// integration failed); the source error is kept.
    #[error("model evaluation failed: {0}")]
    Model(Box<dyn std::error::Error + Send + Sync>),
    /// The problem returned a non-finite residual.
    #[error("residual {index} is not finite")]
    NonFiniteResidual {
        /// Index of the first non-finite residual.
        index: usize,
    },
    /// The Jacobian (analytic or finite-difference) has a non-finite entry.
    #[error("Jacobian entry ({row}, {col}) is not finite")]
    NonFiniteJacobian {
        /// Row (residual index).
        row: usize,
        /// Column (parameter index).
        col: usize,
    },
    /// An analytic Jacobian was requested but the problem does not provide one.
    #[error("the problem provides no analytic Jacobian")]
    NoAnalyticJacobian,
    /// A residual buffer of the wrong length was passed.
    #[error("expected {expected} residuals, got {got}")]
    ResidualCount {
        /// Number of residuals the problem has.
        expected: usize,
        /// Length of the buffer passed.
        got: usize,
    },
    /// A parameter vector of the wrong length was passed.
    #[error("expected {expected} parameters, got {got}")]
    ParameterCount {
        /// Number of parameters the problem has.
        expected: usize,
        /// Length of the vector passed.
        got: usize,
    },
}

/// A weighted nonlinear least-squares problem in an unconstrained space.
///
/// The problem maps parameters θ ∈ ℝⁿ to `m` weighted residuals
/// rᵢ(θ) = (yᵢ − fᵢ(θ)) / σᵢ; the optimisers minimise χ²(θ) = Σ rᵢ². Bounds
/// and other constraints are the caller's business: map them to an
/// unconstrained space before handing the problem over.
///
/// Implementations must be `Sync`: finite-difference Jacobian columns are
/// evaluated in parallel from shared references.
///
/// # Example
///
/// ```
/// use apsidal::fit::optimise::{EvaluationError, ResidualProblem};
///
/// /// y = a + b x through three points, unit weights.
/// struct Line;
/// impl ResidualProblem for Line {
///     fn n_params(&self) -> usize { 2 }
///     fn n_residuals(&self) -> usize { 3 }
///     fn residuals(&self, p: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
///         for (i, (x, y)) in [(0.0, 1.0), (1.0, 3.0), (2.0, 5.0)].iter().enumerate() {
///             out[i] = y - (p[0] + p[1] * x);
///         }
///         Ok(())
///     }
/// }
/// let mut r = [0.0; 3];
/// Line.residuals(&[1.0, 2.0], &mut r).unwrap();
/// assert_eq!(r, [0.0, 0.0, 0.0]);
/// ```
pub trait ResidualProblem: Sync {
    /// Number of free parameters n.
    fn n_params(&self) -> usize;

    /// Number of residuals m.
    fn n_residuals(&self) -> usize;

    /// Writes the `m` weighted residuals at `theta` (length n) into `out`
    /// (length m). Must not allocate in the hot path if it can be avoided.
    fn residuals(&self, theta: &[f64], out: &mut [f64]) -> Result<(), EvaluationError>;

    /// Whether [`ResidualProblem::jacobian`] is implemented analytically.
    fn has_jacobian(&self) -> bool {
        false
    }

    /// Writes the analytic Jacobian Jᵢⱼ = ∂rᵢ/∂θⱼ (m × n) at `theta` into
    /// `out`. The default returns [`EvaluationError::NoAnalyticJacobian`];
    /// the optimisers then use finite differences.
    fn jacobian(&self, _theta: &[f64], _out: &mut DMatrix<f64>) -> Result<(), EvaluationError> {
        Err(EvaluationError::NoAnalyticJacobian)
    }
}

impl<T: ResidualProblem + ?Sized> ResidualProblem for &T {
    fn n_params(&self) -> usize {
        (**self).n_params()
    }
    fn n_residuals(&self) -> usize {
        (**self).n_residuals()
    }
    fn residuals(&self, theta: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        (**self).residuals(theta, out)
    }
    fn has_jacobian(&self) -> bool {
        (**self).has_jacobian()
    }
    fn jacobian(&self, theta: &[f64], out: &mut DMatrix<f64>) -> Result<(), EvaluationError> {
        (**self).jacobian(theta, out)
    }
}

/// Evaluates the residuals and checks that every one is finite, so that NaN
/// never travels further.
pub(crate) fn checked_residuals<P: ResidualProblem + ?Sized>(
    problem: &P,
    theta: &[f64],
    out: &mut [f64],
) -> Result<(), EvaluationError> {
    if theta.len() != problem.n_params() {
        return Err(EvaluationError::ParameterCount {
            expected: problem.n_params(),
            got: theta.len(),
        });
    }
    if out.len() != problem.n_residuals() {
        return Err(EvaluationError::ResidualCount {
            expected: problem.n_residuals(),
            got: out.len(),
        });
    }
    problem.residuals(theta, out)?;
    match out.iter().position(|v| !v.is_finite()) {
        Some(index) => Err(EvaluationError::NonFiniteResidual { index }),
        None => Ok(()),
    }
}

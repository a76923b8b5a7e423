//! A general scalar minimiser (e.g. −ln L with jitter terms, which residuals
//! alone do not describe): argmin's Nelder–Mead simplex wrapped in our
//! interface. Meant as a polish step after least squares, not a global
//! search.
//!
//! Method: Nelder & Mead (1965), with argmin's standard coefficients
//! (reflection 1, expansion 2, contraction 1/2, shrink 1/2), stopping when
//! the standard deviation of the simplex values falls below a tolerance.

use argmin::core::{CostFunction, Error as ArgminError, Executor, State, TerminationReason};
use argmin::solver::neldermead::NelderMead;

use super::lm::OptimiseError;
use super::problem::EvaluationError;

/// A scalar function of θ ∈ ℝⁿ to be minimised.
pub trait ScalarObjective: Sync {
    /// Number of parameters n.
    fn n_params(&self) -> usize;
    /// The value at `theta` (e.g. −ln L). Errors and non-finite values are
    /// treated as +∞ by the minimiser (the point is rejected).
    fn value(&self, theta: &[f64]) -> Result<f64, EvaluationError>;
}

/// Settings of [`minimise_scalar`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScalarSettings {
    /// Maximum number of simplex iterations.
    pub max_iterations: u64,
    /// Initial simplex edge along θⱼ: `initial_step`·|θⱼ|, or `initial_step`
    /// itself where θⱼ = 0.
    pub initial_step: f64,
    /// Stop when the standard deviation of the simplex values is below this
    /// (in the objective's units).
    pub value_tolerance: f64,
}

impl Default for ScalarSettings {
    fn default() -> Self {
        Self {
            max_iterations: 5000,
            initial_step: 0.05,
            value_tolerance: 1e-12,
        }
    }
}

/// How a scalar minimisation ended.
#[derive(Debug, Clone, PartialEq)]
pub enum ScalarStatus {
    /// The simplex values' spread fell below the tolerance.
    Converged,
    /// The iteration limit was reached first.
    MaxIterations,
    /// The objective is not finite (or failed) at the start.
    NonFiniteStart,
    /// argmin stopped for another reason.
    Interrupted {
        /// argmin's reason, as text.
        detail: String,
    },
}

/// Result of [`minimise_scalar`].
#[derive(Debug, Clone, PartialEq)]
pub struct ScalarReport {
    /// How the run ended.
    pub status: ScalarStatus,
    /// Best parameters.
    pub theta: Vec<f64>,
    /// Objective value at `theta`.
    pub value: f64,
    /// Iterations performed.
    pub iterations: u64,
    /// Objective evaluations.
    pub evaluations: u64,
}

/// Adapter from [`ScalarObjective`] to argmin's `CostFunction`; failures
/// become +∞ so that NaN never enters the simplex.
struct Adapter<'a, S: ?Sized>(&'a S);

impl<S: ScalarObjective + ?Sized> CostFunction for Adapter<'_, S> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, p: &Vec<f64>) -> Result<f64, ArgminError> {
        Ok(match self.0.value(p) {
            Ok(v) if v.is_finite() => v,
            _ => f64::INFINITY,
        })
    }
}

/// Minimises `objective` from `start` with Nelder–Mead (argmin).
///
/// # Example
///
/// ```
/// use apsidal::fit::optimise::{minimise_scalar, EvaluationError, ScalarObjective, ScalarSettings};
///
/// /// Rosenbrock's function, minimum 0 at (1, 1).
/// struct Banana;
/// impl ScalarObjective for Banana {
///     fn n_params(&self) -> usize { 2 }
///     fn value(&self, t: &[f64]) -> Result<f64, EvaluationError> {
///         Ok((1.0 - t[0]).powi(2) + 100.0 * (t[1] - t[0] * t[0]).powi(2))
///     }
/// }
/// let r = minimise_scalar(&Banana, &[-1.2, 1.0], &ScalarSettings::default()).unwrap();
/// assert!((r.theta[0] - 1.0).abs() < 1e-4 && (r.theta[1] - 1.0).abs() < 1e-4);
/// ```
pub fn minimise_scalar<S: ScalarObjective + ?Sized>(
    objective: &S,
    start: &[f64],
    settings: &ScalarSettings,
) -> Result<ScalarReport, OptimiseError> {
    let n = objective.n_params();
    if start.len() != n {
        return Err(OptimiseError::StartLength {
            expected: n,
            got: start.len(),
        });
    }
    match objective.value(start) {
        Ok(v) if v.is_finite() => {}
        _ => {
            return Ok(ScalarReport {
                status: ScalarStatus::NonFiniteStart,
                theta: start.to_vec(),
                value: f64::INFINITY,
                iterations: 0,
                evaluations: 1,
            });
        }
    }
    let mut simplex = vec![start.to_vec()];
    for j in 0..n {
        let mut v = start.to_vec();
        v[j] += if start[j] == 0.0 {
            settings.initial_step
        } else {
            settings.initial_step * start[j].abs()
        };
        simplex.push(v);
    }
    let solver = NelderMead::new(simplex)
        .with_sd_tolerance(settings.value_tolerance)
        .map_err(|e| OptimiseError::Executor(e.to_string()))?;
    let result = Executor::new(Adapter(objective), solver)
        .configure(|s| s.max_iters(settings.max_iterations))
        .run()
        .map_err(|e| OptimiseError::Executor(e.to_string()))?;
    let evaluations = result
        .problem
        .counts
        .get("cost_count")
        .copied()
        .unwrap_or(0)
        + 1;
    let state = result.state;
    let status = match state.get_termination_reason() {
        Some(TerminationReason::SolverConverged) => ScalarStatus::Converged,
        Some(TerminationReason::MaxItersReached) => ScalarStatus::MaxIterations,
        other => ScalarStatus::Interrupted {
            detail: other.map_or_else(|| "unknown".into(), |r| r.text().to_string()),
        },
    };
    let theta = state
        .get_best_param()
        .cloned()
        .ok_or(OptimiseError::NotInitialised)?;
    Ok(ScalarReport {
        status,
        theta,
        value: state.get_best_cost(),
        iterations: state.get_iter(),
        evaluations,
    })
}

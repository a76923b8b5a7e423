//! Optimisers: Levenberg–Marquardt least squares on argmin, covariance at
//! the optimum, multi-start, and a Nelder–Mead minimiser for general −ln L.
//!
//! A problem is a type implementing [`ResidualProblem`] (weighted residuals
//! r(θ), θ ∈ ℝⁿ unconstrained; optional analytic Jacobian) or
//! [`ScalarObjective`] (any scalar to minimise). Drivers take the problem by
//! reference and return a report whose [`Status`] says honestly how the run
//! ended. Validated on NIST StRD nonlinear regression problems
//! (tests/optimise_nist.rs).

mod covariance;
mod jacobian;
mod lm;
mod multistart;
mod problem;
mod scalar;

pub use covariance::{Covariance, CovarianceError, CovarianceScaling, covariance, covariance_at};
pub use jacobian::{DifferenceScheme, FdJacobian, JacobianSource, jacobian_at};
pub use lm::{
    Convergence, LevenbergMarquardt, LmReport, LmSettings, LmState, OptimiseError, Status,
    least_squares,
};
pub use multistart::{MultiStart, multi_start};
pub use problem::{EvaluationError, ResidualProblem};
pub use scalar::{ScalarObjective, ScalarReport, ScalarSettings, ScalarStatus, minimise_scalar};

//! Jacobians of residual problems: analytic, or by finite differences
//! evaluated column by column in parallel.
//!
//! Each column j of a finite-difference Jacobian depends only on residuals
//! at θ ± hⱼ eⱼ and is written into its own slice, so the result is
//! bit-for-bit the same whatever the number of rayon threads: there is no
//! reduction whose order depends on scheduling.

use nalgebra::DMatrix;
use rayon::prelude::*;

use super::problem::{EvaluationError, ResidualProblem, checked_residuals};

/// Finite-difference formula for one Jacobian column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DifferenceScheme {
    /// (r(θ + h eⱼ) − r(θ)) / h, error O(h); one residual call per column.
    /// Step hⱼ = √ε·|θⱼ| (√ε if θⱼ = 0), as in MINPACK `fdjac2` (Moré,
    /// Garbow & Hillstrom 1980).
    Forward,
    /// (r(θ + h eⱼ) − r(θ − h eⱼ)) / 2h, error O(h²); two calls per column.
    /// Step hⱼ = ε^{1/3}·|θⱼ| (ε^{1/3} if θⱼ = 0), the step balancing
    /// truncation and rounding error (Press et al. 2007, *Numerical
    /// Recipes* 3rd ed., §5.7, eq. 5.7.8).
    Central,
}

impl DifferenceScheme {
    /// Relative step size for this scheme (√ε or ε^{1/3}).
    pub fn relative_step(self) -> f64 {
        match self {
            Self::Forward => f64::EPSILON.sqrt(),
            Self::Central => f64::EPSILON.cbrt(),
        }
    }

    /// Residual evaluations needed for one Jacobian of `n` columns.
    pub fn evaluations(self, n: usize) -> u64 {
        match self {
            Self::Forward => n as u64,
            Self::Central => 2 * n as u64,
        }
    }
}

/// Where an optimiser gets its Jacobian from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum JacobianSource {
    /// The analytic Jacobian if the problem has one, else central differences.
    #[default]
    Auto,
    /// The problem's analytic [`ResidualProblem::jacobian`].
    Analytic,
    /// Finite differences with the given scheme, even if an analytic
    /// Jacobian exists.
    FiniteDifference(DifferenceScheme),
}

/// Step actually used for parameter value `x`: relative step times |x|
/// (or the relative step itself at x = 0), rounded so that x + h is exactly
/// representable (common practice; Press et al. 2007, §5.7).
fn step_for(x: f64, rel: f64) -> f64 {
    let h = if x == 0.0 { rel } else { rel * x.abs() };
    let xp = x + h;
    xp - x
}

/// Finite-difference Jacobian evaluator holding its work space, allocated
/// once per run (no allocation per Jacobian).
///
/// # Example
///
/// ```
/// use apsidal::fit::optimise::{DifferenceScheme, EvaluationError, FdJacobian, ResidualProblem};
/// use nalgebra::DMatrix;
///
/// /// r = (θ₀², θ₀ θ₁): J = [[2θ₀, 0], [θ₁, θ₀]].
/// struct P;
/// impl ResidualProblem for P {
///     fn n_params(&self) -> usize { 2 }
///     fn n_residuals(&self) -> usize { 2 }
///     fn residuals(&self, t: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
///         out[0] = t[0] * t[0];
///         out[1] = t[0] * t[1];
///         Ok(())
///     }
/// }
/// let theta = [3.0, -2.0];
/// let r0 = [9.0, -6.0];
/// let mut fd = FdJacobian::new(DifferenceScheme::Central, 2, 2);
/// let mut jac = DMatrix::zeros(2, 2);
/// fd.evaluate(&P, &theta, &r0, &mut jac).unwrap();
/// assert!((jac[(0, 0)] - 6.0).abs() < 1e-8);
/// assert!((jac[(1, 0)] + 2.0).abs() < 1e-8);
/// assert!((jac[(1, 1)] - 3.0).abs() < 1e-8);
/// ```
pub struct FdJacobian {
    scheme: DifferenceScheme,
    n: usize,
    m: usize,
    /// One perturbed copy of θ per column (n × n, column-major).
    shifted: Vec<f64>,
    /// Residuals at θ − h eⱼ per column (central scheme only; m × n).
    minus: Vec<f64>,
    /// Outcome of each column's evaluation.
    status: Vec<Result<(), EvaluationError>>,
}

impl FdJacobian {
    /// Work space for a problem with `n` parameters and `m` residuals.
    pub fn new(scheme: DifferenceScheme, n: usize, m: usize) -> Self {
        let minus_len = match scheme {
            DifferenceScheme::Forward => 0,
            DifferenceScheme::Central => m * n,
        };
        Self {
            scheme,
            n,
            m,
            shifted: vec![0.0; n * n],
            minus: vec![0.0; minus_len],
            status: (0..n).map(|_| Ok(())).collect(),
        }
    }

    /// The difference scheme in use.
    pub fn scheme(&self) -> DifferenceScheme {
        self.scheme
    }

    /// Writes the finite-difference Jacobian ∂rᵢ/∂θⱼ at `theta` into `out`
    /// (m × n). `r0` must hold r(θ) (used by the forward scheme). Columns
    /// are evaluated in parallel with rayon; the result does not depend on
    /// the thread count. Returns the first failing column's error (lowest
    /// column index), or a non-finite entry error.
    pub fn evaluate<P: ResidualProblem + ?Sized>(
        &mut self,
        problem: &P,
        theta: &[f64],
        r0: &[f64],
        out: &mut DMatrix<f64>,
    ) -> Result<(), EvaluationError> {
        let (n, m) = (self.n, self.m);
        if theta.len() != n || problem.n_params() != n {
            return Err(EvaluationError::ParameterCount {
                expected: n,
                got: theta.len(),
            });
        }
        if out.nrows() != m || out.ncols() != n || r0.len() != m || problem.n_residuals() != m {
            return Err(EvaluationError::ResidualCount {
                expected: m,
                got: r0.len().min(out.nrows()),
            });
        }
        let scheme = self.scheme;
        let rel = scheme.relative_step();
        let cols = out.as_mut_slice().par_chunks_mut(m.max(1));
        let shifted = self.shifted.par_chunks_mut(n.max(1));
        let status = self.status.par_iter_mut();
        match scheme {
            DifferenceScheme::Forward => {
                cols.zip(shifted)
                    .zip(status)
                    .enumerate()
                    .for_each(|(j, ((col, t), st))| {
                        t.copy_from_slice(theta);
                        let h = step_for(theta[j], rel);
                        t[j] = theta[j] + h;
                        *st = checked_residuals(problem, t, col).map(|()| {
                            for (c, r) in col.iter_mut().zip(r0) {
                                *c = (*c - r) / h;
                            }
                        });
                    });
            }
            DifferenceScheme::Central => {
                let minus = self.minus.par_chunks_mut(m.max(1));
                cols.zip(shifted)
                    .zip(minus)
                    .zip(status)
                    .enumerate()
                    .for_each(|(j, (((col, t), mcol), st))| {
                        t.copy_from_slice(theta);
                        let h = step_for(theta[j], rel);
                        let hp = (theta[j] + h) - theta[j];
                        let hm = theta[j] - (theta[j] - h);
                        t[j] = theta[j] + hp;
                        *st = checked_residuals(problem, t, col).and_then(|()| {
                            t[j] = theta[j] - hm;
                            checked_residuals(problem, t, mcol)
                        });
                        if st.is_ok() {
                            let denom = hp + hm;
                            for (c, r) in col.iter_mut().zip(mcol.iter()) {
                                *c = (*c - r) / denom;
                            }
                        }
                    });
            }
        }
        for st in self.status.iter_mut() {
            std::mem::replace(st, Ok(()))?;
        }
        check_finite(out)
    }
}

/// Checks that every Jacobian entry is finite.
pub(crate) fn check_finite(jac: &DMatrix<f64>) -> Result<(), EvaluationError> {
    for (col, c) in jac.column_iter().enumerate() {
        if let Some(row) = c.iter().position(|v| !v.is_finite()) {
            return Err(EvaluationError::NonFiniteJacobian { row, col });
        }
    }
    Ok(())
}

/// A resolved Jacobian source with its work space.
pub(crate) enum JacobianEvaluator {
    Analytic,
    Fd(FdJacobian),
}

impl JacobianEvaluator {
    /// Resolves `source` for `problem` (Auto → analytic if available).
    pub(crate) fn new<P: ResidualProblem + ?Sized>(
        source: JacobianSource,
        problem: &P,
    ) -> Result<Self, EvaluationError> {
        let (n, m) = (problem.n_params(), problem.n_residuals());
        Ok(match source {
            JacobianSource::Auto if problem.has_jacobian() => Self::Analytic,
            JacobianSource::Auto => Self::Fd(FdJacobian::new(DifferenceScheme::Central, n, m)),
            JacobianSource::Analytic if problem.has_jacobian() => Self::Analytic,
            JacobianSource::Analytic => return Err(EvaluationError::NoAnalyticJacobian),
            JacobianSource::FiniteDifference(s) => Self::Fd(FdJacobian::new(s, n, m)),
        })
    }

    /// Evaluates J at `theta` into `out`; returns the number of residual
    /// evaluations spent (0 for analytic).
    pub(crate) fn evaluate<P: ResidualProblem + ?Sized>(
        &mut self,
        problem: &P,
        theta: &[f64],
        r0: &[f64],
        out: &mut DMatrix<f64>,
    ) -> Result<u64, EvaluationError> {
        match self {
            Self::Analytic => {
                problem.jacobian(theta, out)?;
                check_finite(out)?;
                Ok(0)
            }
            Self::Fd(fd) => {
                fd.evaluate(problem, theta, r0, out)?;
                Ok(fd.scheme().evaluations(theta.len()))
            }
        }
    }
}

/// Jacobian of `problem` at `theta` from `source`, allocated fresh (for
/// one-off use such as a covariance estimate at the optimum).
pub fn jacobian_at<P: ResidualProblem + ?Sized>(
    problem: &P,
    theta: &[f64],
    source: JacobianSource,
) -> Result<DMatrix<f64>, EvaluationError> {
    let (n, m) = (problem.n_params(), problem.n_residuals());
    let mut r0 = vec![0.0; m];
    checked_residuals(problem, theta, &mut r0)?;
    let mut jac = DMatrix::zeros(m, n);
    JacobianEvaluator::new(source, problem)?.evaluate(problem, theta, &r0, &mut jac)?;
    Ok(jac)
}

//! Levenberg–Marquardt least squares as an argmin [`Solver`].
//!
//! Method. Each iteration solves the damped normal equations
//! (JᵀJ + λ D) δ = −Jᵀr (Levenberg 1944; Marquardt 1963, eq. 2.5 ff.), with
//! Marquardt's scaling D = diag(JᵀJ). By default D keeps, per parameter, the
//! largest diagonal seen so far (Moré 1978, §6, eq. 6.3), which stops the
//! damping of a parameter collapsing when its column momentarily vanishes;
//! [`LmSettings::monotone_scaling`] = false uses the current diagonal only.
//! The system is solved by Cholesky; if the matrix is not numerically
//! positive definite, by a singular value decomposition (least-squares
//! solution). A written-by-hand driver: argmin 0.11 ships Gauss–Newton but
//! no Levenberg–Marquardt solver.
//!
//! Damping update: Nielsen's rule (Nielsen 1999, IMM-REP-1999-05; Madsen,
//! Nielsen & Tingleff 2004, *Methods for Non-Linear Least Squares
//! Problems*, eq. 3.16 and Algorithm 3.16): with the gain ratio
//! ρ = (χ²(θ) − χ²(θ+δ)) / (L(0) − L(δ)), a step with ρ > 0 is accepted and
//! λ ← λ·max(1/3, 1 − (2ρ − 1)³), ν ← 2; otherwise λ ← λ·ν, ν ← 2ν. The
//! predicted χ² reduction of the linear model is δᵀ(λDδ − Jᵀr).
//!
//! Stopping tests (those of MINPACK `lmder`, Moré, Garbow & Hillstrom 1980,
//! with one safeguard): relative actual and predicted χ² reductions of the
//! step both ≤ `cost_tolerance` — on a rejected step only if, in addition,
//! the reduction predicted by the undamped Gauss–Newton step at θ,
//! gᵀ(JᵀJ)⁺g, is ≤ `rounding_tolerance`·χ² (otherwise a large λ alone could
//! fake convergence); ‖δ‖ ≤ `step_tolerance`·(‖θ‖ + `step_tolerance`) on an
//! accepted step;
//! maxⱼ |Jⱼᵀr| / (‖Jⱼ‖‖r‖) ≤ `gradient_tolerance` (cosine of the angle
//! between r and each column of J); or χ² = 0. A point meeting a test whose
//! Jacobian (columns scaled by |θⱼ|) is numerically rank-deficient is
//! reported as [`Status::Degenerate`], not as converged: the parameters are
//! not determined there (an asymptote or a flat valley).
//!
//! Bounds are not handled: the caller maps them to an unconstrained space.

use argmin::core::{
    Error as ArgminError, Executor, IterState, KV, Problem, Solver, State, TerminationReason,
    TerminationStatus,
};
use nalgebra::{DMatrix, DVector};

use super::jacobian::{JacobianEvaluator, JacobianSource};
use super::problem::{EvaluationError, ResidualProblem, checked_residuals};

/// argmin state used by [`LevenbergMarquardt`]: parameters and gradient as
/// `DVector`, Jacobian as `DMatrix`, cost χ².
pub type LmState = IterState<DVector<f64>, DVector<f64>, DMatrix<f64>, (), DVector<f64>, f64>;

/// Settings of the Levenberg–Marquardt solver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LmSettings {
    /// Maximum number of iterations (trial steps, accepted or not).
    pub max_iterations: u64,
    /// Relative χ² reduction tolerance (MINPACK `ftol`).
    pub cost_tolerance: f64,
    /// Relative step-size tolerance (MINPACK `xtol`).
    pub step_tolerance: f64,
    /// Gradient cosine tolerance (MINPACK `gtol`).
    pub gradient_tolerance: f64,
    /// Initial damping λ₀, relative to the Marquardt scaling D (Madsen et
    /// al. 2004 suggest τ = 10⁻³ for a good start, larger for a poor one).
    pub initial_damping: f64,
    /// On a rejected step, the point counts as converged (χ² test) when the
    /// undamped Gauss–Newton gain gᵀ(JᵀJ)⁺g is ≤ this fraction of χ²: χ²
    /// can then no longer be lowered through its own rounding noise, which
    /// for unweighted data with large |y|/|r| reaches ~10⁻¹³ relative.
    pub rounding_tolerance: f64,
    /// Consecutive rejected steps after which the run is reported stalled.
    pub max_rejections: u32,
    /// Relative singular-value threshold for the numerical rank of the
    /// |θ|-scaled Jacobian at the end.
    pub rank_tolerance: f64,
    /// Keep the running maximum of diag(JᵀJ) as D (Moré 1978) instead of
    /// the current diagonal (Marquardt 1963).
    pub monotone_scaling: bool,
    /// Where the Jacobian comes from.
    pub jacobian: JacobianSource,
}

impl Default for LmSettings {
    fn default() -> Self {
        Self {
            max_iterations: 1000,
            cost_tolerance: 1e-15,
            step_tolerance: 1e-12,
            gradient_tolerance: 1e-12,
            initial_damping: 1e-3,
            rounding_tolerance: 1e-12,
            max_rejections: 60,
            rank_tolerance: 1e-10,
            monotone_scaling: true,
            jacobian: JacobianSource::Auto,
        }
    }
}

/// Which stopping test was met.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Convergence {
    /// Actual and predicted relative χ² reductions below tolerance.
    CostReduction,
    /// Relative step below tolerance.
    StepSize,
    /// Gradient cosine below tolerance.
    Gradient,
    /// χ² is exactly zero.
    ZeroCost,
}

/// How a least-squares run ended.
#[derive(Debug, Clone, PartialEq)]
pub enum Status {
    /// A stopping test was met at a point with a full-rank Jacobian.
    Converged {
        /// The test that was met.
        reason: Convergence,
    },
    /// A stopping test was met, but the |θ|-scaled Jacobian there has
    /// numerical rank `rank` < n: not an isolated minimum.
    Degenerate {
        /// The test that was met.
        reason: Convergence,
        /// Numerical rank of the scaled Jacobian.
        rank: usize,
    },
    /// The iteration limit was reached first.
    MaxIterations,
    /// Too many consecutive rejected steps, λ overflowed, or the damped
    /// step became too small to change θ, without meeting any test.
    Stalled {
        /// Consecutive rejections at the end.
        rejections: u32,
    },
    /// The residuals at the starting point are not finite.
    NonFiniteResidual,
    /// The model could not be evaluated at the starting point.
    EvaluationFailed {
        /// The evaluation error, as text.
        detail: String,
    },
    /// The Jacobian could not be evaluated (or was not finite) at an
    /// accepted point; the run stopped there.
    JacobianFailed {
        /// The evaluation error, as text.
        detail: String,
    },
    /// argmin stopped the run for another reason (interrupt, timeout).
    Interrupted {
        /// argmin's termination reason, as text.
        detail: String,
    },
}

impl Status {
    /// True only for [`Status::Converged`].
    pub fn is_converged(&self) -> bool {
        matches!(self, Status::Converged { .. })
    }
}

/// Result of a least-squares run.
#[derive(Debug, Clone, PartialEq)]
pub struct LmReport {
    /// How the run ended.
    pub status: Status,
    /// Best parameters found (the last accepted point; LM is monotone).
    pub theta: Vec<f64>,
    /// χ² = Σ rᵢ² at `theta`.
    pub cost: f64,
    /// Iterations performed (trial steps).
    pub iterations: u64,
    /// Residual evaluations, including those of finite differences.
    pub residual_evaluations: u64,
    /// Jacobian evaluations.
    pub jacobian_evaluations: u64,
    /// Final damping λ.
    pub damping: f64,
    /// maxⱼ |Jⱼᵀr| / (‖Jⱼ‖‖r‖) at `theta` (0 if r = 0).
    pub gradient_cosine: f64,
    /// χ² reduction the undamped Gauss–Newton step would still predict at
    /// `theta`, gᵀ(JᵀJ)⁺g with g = Jᵀr (∞ if it could not be computed).
    pub predicted_gain: f64,
    /// Jacobian J (m × n) at `theta`, for covariance estimates.
    pub jacobian: DMatrix<f64>,
}

/// Buffers and running quantities of one run, allocated once in `init`.
struct Work {
    evaluator: JacobianEvaluator,
    theta: DVector<f64>,
    trial: DVector<f64>,
    r: DVector<f64>,
    trial_r: DVector<f64>,
    jac: DMatrix<f64>,
    jtj: DMatrix<f64>,
    grad: DVector<f64>,
    scale: DVector<f64>,
    /// χ² reduction predicted by the undamped Gauss–Newton step at θ,
    /// gᵀ(JᵀJ)⁺g: what the local linear model could still gain at all.
    gn_reduction: f64,
    cost: f64,
    lambda: f64,
    nu: f64,
    rejections: u32,
    residual_evaluations: u64,
    jacobian_evaluations: u64,
}

impl Work {
    /// Recomputes J, JᵀJ, Jᵀr and the scaling D at the current θ.
    fn refresh_jacobian<O: ResidualProblem>(
        &mut self,
        problem: &mut Problem<O>,
        monotone: bool,
    ) -> Result<Result<(), EvaluationError>, ArgminError> {
        let (theta, r, jac, evaluator) = (&self.theta, &self.r, &mut self.jac, &mut self.evaluator);
        let out = problem.problem("jacobian", |p| {
            Ok(evaluator.evaluate(p, theta.as_slice(), r.as_slice(), jac))
        })?;
        let extra = match out {
            Ok(k) => k,
            Err(e) => return Ok(Err(e)),
        };
        self.residual_evaluations += extra;
        self.jacobian_evaluations += 1;
        self.jac.tr_mul_to(&self.jac, &mut self.jtj);
        self.jac.tr_mul_to(&self.r, &mut self.grad);
        for j in 0..self.scale.len() {
            let d = self.jtj[(j, j)];
            self.scale[j] = if monotone { self.scale[j].max(d) } else { d };
        }
        self.gn_reduction = damped_step(&self.jtj, &self.scale, 0.0, &self.grad)
            .map_or(f64::INFINITY, |d| -d.dot(&self.grad));
        Ok(Ok(()))
    }

    /// maxⱼ |Jⱼᵀr| / (‖Jⱼ‖‖r‖), skipping zero columns; 0 when r = 0.
    fn gradient_cosine(&self) -> f64 {
        let rn = self.cost.sqrt();
        if rn == 0.0 {
            return 0.0;
        }
        (0..self.grad.len())
            .filter_map(|j| {
                let cn = self.jtj[(j, j)].sqrt();
                (cn > 0.0).then(|| self.grad[j].abs() / (cn * rn))
            })
            .fold(0.0, f64::max)
    }
}

/// Numerical rank of J·diag(sⱼ), sⱼ = |θⱼ| (1 where θⱼ = 0): singular
/// values above `tol`·σ_max.
fn scaled_rank(jac: &DMatrix<f64>, theta: &DVector<f64>, tol: f64) -> usize {
    let mut scaled = jac.clone();
    for (j, mut col) in scaled.column_iter_mut().enumerate() {
        let s = if theta[j] == 0.0 { 1.0 } else { theta[j].abs() };
        col *= s;
    }
    let sv = scaled.singular_values();
    let max = sv.iter().copied().fold(0.0, f64::max);
    if max == 0.0 || !max.is_finite() {
        return 0;
    }
    sv.iter().filter(|&&s| s > tol * max).count()
}

/// Solves (JᵀJ + λD) δ = −g by Cholesky, falling back to an SVD
/// least-squares solve; `None` if no finite step results.
fn damped_step(
    jtj: &DMatrix<f64>,
    scale: &DVector<f64>,
    lambda: f64,
    grad: &DVector<f64>,
) -> Option<DVector<f64>> {
    let mut a = jtj.clone();
    for j in 0..scale.len() {
        // A parameter with an all-zero column gets unit damping (Moré 1978,
        // §6): otherwise the system would be singular in that direction.
        let d = if scale[j] > 0.0 { scale[j] } else { 1.0 };
        a[(j, j)] += lambda * d;
    }
    let rhs = -grad;
    let step = match a.clone().cholesky() {
        Some(ch) => ch.solve(&rhs),
        None => a.svd(true, true).solve(&rhs, f64::EPSILON).ok()?,
    };
    step.iter().all(|v| v.is_finite()).then_some(step)
}

/// The Levenberg–Marquardt solver (see the module documentation for the
/// method and its references). Drive it with argmin's [`Executor`] (so that
/// argmin observers can be attached from outside) or, more simply, with
/// [`least_squares`], which also builds an [`LmReport`].
///
/// # Example
///
/// ```
/// use apsidal::fit::optimise::{EvaluationError, LevenbergMarquardt, LmSettings, ResidualProblem};
/// use argmin::core::{Executor, State};
/// use nalgebra::DVector;
///
/// /// Rosenbrock as residuals: r = (10(θ₁ − θ₀²), 1 − θ₀), minimum (1, 1).
/// struct Rosen;
/// impl ResidualProblem for Rosen {
///     fn n_params(&self) -> usize { 2 }
///     fn n_residuals(&self) -> usize { 2 }
///     fn residuals(&self, t: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
///         out[0] = 10.0 * (t[1] - t[0] * t[0]);
///         out[1] = 1.0 - t[0];
///         Ok(())
///     }
/// }
/// let solver = LevenbergMarquardt::new(LmSettings::default());
/// let result = Executor::new(&Rosen, solver)
///     .configure(|s| s.param(DVector::from_vec(vec![-1.2, 1.0])).max_iters(100))
///     .run()
///     .unwrap();
/// let best = result.state.get_best_param().unwrap();
/// assert!((best[0] - 1.0).abs() < 1e-8 && (best[1] - 1.0).abs() < 1e-8);
/// ```
pub struct LevenbergMarquardt {
    settings: LmSettings,
    work: Option<Work>,
    stop: Option<Status>,
}

impl LevenbergMarquardt {
    /// A solver with the given settings.
    pub fn new(settings: LmSettings) -> Self {
        Self {
            settings,
            work: None,
            stop: None,
        }
    }

    /// Records a stopping test, downgraded to `Degenerate` when the scaled
    /// Jacobian is rank-deficient.
    fn converge(&mut self, reason: Convergence) {
        if let Some(w) = &self.work {
            let n = w.theta.len();
            let rank = scaled_rank(&w.jac, &w.theta, self.settings.rank_tolerance);
            self.stop = Some(if rank < n {
                Status::Degenerate { reason, rank }
            } else {
                Status::Converged { reason }
            });
        }
    }

    /// Builds the report after a run from the final argmin state.
    fn into_report(self, state: &LmState) -> Result<LmReport, OptimiseError> {
        let w = self.work.ok_or(OptimiseError::NotInitialised)?;
        let status = match self.stop {
            Some(s) => s,
            None => match state.get_termination_reason() {
                Some(TerminationReason::MaxItersReached) => Status::MaxIterations,
                other => Status::Interrupted {
                    detail: other.map_or_else(|| "unknown".into(), |r| r.text().to_string()),
                },
            },
        };
        let gradient_cosine = w.gradient_cosine();
        Ok(LmReport {
            status,
            theta: w.theta.as_slice().to_vec(),
            cost: w.cost,
            iterations: state.get_iter(),
            residual_evaluations: w.residual_evaluations,
            jacobian_evaluations: w.jacobian_evaluations,
            damping: w.lambda,
            gradient_cosine,
            predicted_gain: w.gn_reduction,
            jacobian: w.jac,
        })
    }
}

impl<O: ResidualProblem> Solver<O, LmState> for LevenbergMarquardt {
    fn name(&self) -> &str {
        "Levenberg-Marquardt (Nielsen damping)"
    }

    fn init(
        &mut self,
        problem: &mut Problem<O>,
        mut state: LmState,
    ) -> Result<(LmState, Option<KV>), ArgminError> {
        let theta = state
            .take_param()
            .ok_or_else(|| ArgminError::msg("Levenberg-Marquardt needs a starting point"))?;
        let (n, m) = problem.problem("dimensions", |p| Ok((p.n_params(), p.n_residuals())))?;
        if theta.len() != n {
            return Err(ArgminError::msg(format!(
                "starting point has {} parameters, the problem {n}",
                theta.len()
            )));
        }
        let evaluator = problem.problem("dimensions", |p| {
            JacobianEvaluator::new(self.settings.jacobian, p).map_err(ArgminError::from)
        })?;
        let mut w = Work {
            evaluator,
            trial: theta.clone(),
            theta,
            r: DVector::zeros(m),
            trial_r: DVector::zeros(m),
            jac: DMatrix::zeros(m, n),
            jtj: DMatrix::zeros(n, n),
            grad: DVector::zeros(n),
            scale: DVector::zeros(n),
            gn_reduction: f64::INFINITY,
            cost: f64::INFINITY,
            lambda: self.settings.initial_damping,
            nu: 2.0,
            rejections: 0,
            residual_evaluations: 1,
            jacobian_evaluations: 0,
        };
        let (theta, r) = (&w.theta, &mut w.r);
        let r0 = problem.problem("residuals", |p| {
            Ok(checked_residuals(p, theta.as_slice(), r.as_mut_slice()))
        })?;
        match r0 {
            Ok(()) => {}
            Err(EvaluationError::NonFiniteResidual { .. }) => {
                self.stop = Some(Status::NonFiniteResidual);
            }
            Err(e) => {
                self.stop = Some(Status::EvaluationFailed {
                    detail: e.to_string(),
                });
            }
        }
        if self.stop.is_none() {
            w.cost = w.r.norm_squared();
            if let Err(e) = w.refresh_jacobian(problem, self.settings.monotone_scaling)? {
                self.stop = Some(Status::JacobianFailed {
                    detail: e.to_string(),
                });
            }
        }
        let (param, cost) = (w.theta.clone(), w.cost);
        let zero = cost == 0.0;
        let flat = self.stop.is_none() && w.gradient_cosine() <= self.settings.gradient_tolerance;
        let spent = self.stop.is_none() && w.gn_reduction <= self.settings.cost_tolerance * w.cost;
        self.work = Some(w);
        if self.stop.is_none() && zero {
            self.converge(Convergence::ZeroCost);
        } else if spent {
            self.converge(Convergence::CostReduction);
        } else if flat {
            self.converge(Convergence::Gradient);
        }
        state = state.param(param).cost(cost);
        Ok((state, None))
    }

    fn next_iter(
        &mut self,
        problem: &mut Problem<O>,
        state: LmState,
    ) -> Result<(LmState, Option<KV>), ArgminError> {
        let settings = self.settings;
        let w = self
            .work
            .as_mut()
            .ok_or_else(|| ArgminError::msg("Levenberg-Marquardt was not initialised"))?;
        let step = damped_step(&w.jtj, &w.scale, w.lambda, &w.grad);
        let mut outcome = None;
        if let Some(delta) = &step {
            w.trial.copy_from(&w.theta);
            w.trial += delta;
            let (trial, trial_r) = (&w.trial, &mut w.trial_r);
            let ok = problem.problem("residuals", |p| {
                Ok(checked_residuals(p, trial.as_slice(), trial_r.as_mut_slice()).is_ok())
            })?;
            w.residual_evaluations += 1;
            if ok {
                let new_cost = w.trial_r.norm_squared();
                let actual = w.cost - new_cost;
                let damped: f64 = (0..delta.len())
                    .map(|j| {
                        let d = if w.scale[j] > 0.0 { w.scale[j] } else { 1.0 };
                        delta[j] * (w.lambda * d * delta[j] - w.grad[j])
                    })
                    .sum();
                let predicted = damped;
                let rho = if predicted > 0.0 {
                    actual / predicted
                } else {
                    f64::NEG_INFINITY
                };
                outcome = Some((new_cost, actual, predicted, rho, delta.norm()));
            }
        }
        let mut converged = None;
        match outcome {
            Some((new_cost, actual, predicted, rho, step_norm)) if rho > 0.0 => {
                let old_cost = w.cost;
                let theta_norm = w.theta.norm();
                std::mem::swap(&mut w.theta, &mut w.trial);
                std::mem::swap(&mut w.r, &mut w.trial_r);
                w.cost = new_cost;
                w.lambda *= (1.0 - (2.0 * rho - 1.0).powi(3)).max(1.0 / 3.0);
                w.nu = 2.0;
                w.rejections = 0;
                if let Err(e) = w.refresh_jacobian(problem, settings.monotone_scaling)? {
                    self.stop = Some(Status::JacobianFailed {
                        detail: e.to_string(),
                    });
                } else if new_cost == 0.0 {
                    converged = Some(Convergence::ZeroCost);
                } else if (actual / old_cost).abs() <= settings.cost_tolerance
                    && predicted / old_cost <= settings.cost_tolerance
                    && rho <= 2.0
                {
                    converged = Some(Convergence::CostReduction);
                } else if step_norm
                    <= settings.step_tolerance * (theta_norm + settings.step_tolerance)
                {
                    converged = Some(Convergence::StepSize);
                } else if w.gradient_cosine() <= settings.gradient_tolerance {
                    converged = Some(Convergence::Gradient);
                }
            }
            other => {
                // Rejected (or unusable) step: θ stays; raise the damping.
                // MINPACK also applies the χ² test to rejected steps; alone
                // that can claim convergence far from a minimum, because
                // with large λ the step and its predicted reduction shrink
                // whatever the gradient. Here it also needs the undamped
                // Gauss–Newton prediction at θ to be below tolerance.
                if let Some((_, actual, predicted, rho, _)) = other {
                    if (actual / w.cost).abs() <= settings.cost_tolerance
                        && predicted / w.cost <= settings.cost_tolerance
                        && rho <= 2.0
                        && w.gn_reduction <= settings.rounding_tolerance * w.cost
                    {
                        converged = Some(Convergence::CostReduction);
                    }
                }
                // Once the damped step no longer changes θ at all, nothing
                // more can happen: stalled.
                let vanished = step.is_some() && w.trial == w.theta;
                w.lambda *= w.nu;
                w.nu *= 2.0;
                w.rejections += 1;
                if converged.is_none()
                    && (vanished || w.rejections > settings.max_rejections || !w.lambda.is_finite())
                {
                    self.stop = Some(Status::Stalled {
                        rejections: w.rejections,
                    });
                }
            }
        }
        let (param, cost) = (w.theta.clone(), w.cost);
        if let Some(reason) = converged {
            self.converge(reason);
        }
        Ok((state.param(param).cost(cost), None))
    }

    fn terminate(&mut self, _state: &LmState) -> TerminationStatus {
        match &self.stop {
            None => TerminationStatus::NotTerminated,
            Some(Status::Converged { .. }) => {
                TerminationStatus::Terminated(TerminationReason::SolverConverged)
            }
            Some(other) => {
                TerminationStatus::Terminated(TerminationReason::SolverExit(format!("{other:?}")))
            }
        }
    }
}

/// Errors of the optimiser drivers (as opposed to outcomes, which are
/// reported in [`Status`]).
#[derive(Debug, thiserror::Error)]
pub enum OptimiseError {
    /// The starting point does not have n entries.
    #[error("starting point has {got} parameters, the problem has {expected}")]
    StartLength {
        /// n of the problem.
        expected: usize,
        /// Length of the starting point.
        got: usize,
    },
    /// An analytic Jacobian was requested but the problem has none.
    #[error("the problem provides no analytic Jacobian")]
    NoAnalyticJacobian,
    /// The argmin executor failed.
    #[error("optimiser failed: {0}")]
    Executor(String),
    /// The solver finished without being initialised (an internal error).
    #[error("solver state missing after the run")]
    NotInitialised,
}

/// Minimises χ²(θ) = Σ rᵢ(θ)² of `problem` by Levenberg–Marquardt from
/// `start`, run by argmin's [`Executor`].
///
/// # Example
///
/// Fit y = b₁(1 − e^{−b₂x}) to noiseless points (b₁ = 2, b₂ = 0.5):
///
/// ```
/// use apsidal::fit::optimise::{least_squares, EvaluationError, LmSettings, ResidualProblem};
///
/// struct Rise { x: Vec<f64>, y: Vec<f64> }
/// impl ResidualProblem for Rise {
///     fn n_params(&self) -> usize { 2 }
///     fn n_residuals(&self) -> usize { self.x.len() }
///     fn residuals(&self, b: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
///         for ((o, x), y) in out.iter_mut().zip(&self.x).zip(&self.y) {
///             *o = y - b[0] * (1.0 - (-b[1] * x).exp());
///         }
///         Ok(())
///     }
/// }
/// let x: Vec<f64> = (1..=8).map(f64::from).collect();
/// let y = x.iter().map(|x| 2.0 * (1.0 - (-0.5 * x).exp())).collect();
/// let report = least_squares(&Rise { x, y }, &[1.0, 1.0], &LmSettings::default()).unwrap();
/// assert!(report.cost < 1e-20);
/// assert!((report.theta[0] - 2.0).abs() < 1e-9 && (report.theta[1] - 0.5).abs() < 1e-9);
/// ```
pub fn least_squares<P: ResidualProblem + ?Sized>(
    problem: &P,
    start: &[f64],
    settings: &LmSettings,
) -> Result<LmReport, OptimiseError> {
    if start.len() != problem.n_params() {
        return Err(OptimiseError::StartLength {
            expected: problem.n_params(),
            got: start.len(),
        });
    }
    if settings.jacobian == JacobianSource::Analytic && !problem.has_jacobian() {
        return Err(OptimiseError::NoAnalyticJacobian);
    }
    let solver = LevenbergMarquardt::new(*settings);
    let start = DVector::from_column_slice(start);
    let result = Executor::new(problem, solver)
        .configure(|s| s.param(start).max_iters(settings.max_iterations))
        .run()
        .map_err(|e| OptimiseError::Executor(e.to_string()))?;
    let state = result.state;
    result.solver.into_report(&state)
}

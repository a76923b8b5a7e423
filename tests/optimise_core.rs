//! Optimiser building blocks against closed-form results.

use apsidal::fit::optimise::{
    CovarianceError, CovarianceScaling, DifferenceScheme, EvaluationError, JacobianSource,
    LmSettings, ResidualProblem, ScalarObjective, ScalarSettings, ScalarStatus, Status, covariance,
    covariance_at, jacobian_at, least_squares, minimise_scalar,
};
use nalgebra::DMatrix;

/// r(θ) = (sin θ₀ · e^{θ₁}, θ₀² θ₁, ln θ₁): analytic Jacobian for comparison.
struct Smooth;

impl ResidualProblem for Smooth {
    fn n_params(&self) -> usize {
        2
    }
    fn n_residuals(&self) -> usize {
        3
    }
    fn residuals(&self, t: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        out[0] = t[0].sin() * t[1].exp();
        out[1] = t[0] * t[0] * t[1];
        out[2] = t[1].ln();
        Ok(())
    }
    fn has_jacobian(&self) -> bool {
        true
    }
    fn jacobian(&self, t: &[f64], j: &mut DMatrix<f64>) -> Result<(), EvaluationError> {
        j[(0, 0)] = t[0].cos() * t[1].exp();
        j[(0, 1)] = t[0].sin() * t[1].exp();
        j[(1, 0)] = 2.0 * t[0] * t[1];
        j[(1, 1)] = t[0] * t[0];
        j[(2, 0)] = 0.0;
        j[(2, 1)] = 1.0 / t[1];
        Ok(())
    }
}

/// Finite differences against the analytic derivatives (calculus): forward
/// error O(√ε), central O(ε^{2/3}) relative.
#[test]
fn finite_differences_match_analytic_derivatives() {
    let t = [0.7, 1.3];
    let exact = jacobian_at(&Smooth, &t, JacobianSource::Analytic).unwrap();
    for (scheme, tol) in [
        (DifferenceScheme::Forward, 1e-6),
        (DifferenceScheme::Central, 1e-9),
    ] {
        let fd = jacobian_at(&Smooth, &t, JacobianSource::FiniteDifference(scheme)).unwrap();
        let err = (&fd - &exact).abs().max() / exact.abs().max();
        println!("{scheme:?}: max relative error {err:.2e}");
        assert!(err < tol, "{scheme:?}: {err}");
    }
}

/// Straight line y = a + b x: ordinary least squares in closed form
/// (e.g. Press et al. 2007, Numerical Recipes 3rd ed., §15.2, eqs. 15.2.6 and
/// 15.2.9): b = Sxy/Sxx, a = ȳ − b x̄, Var(b) = s²/Sxx,
/// Var(a) = s² Σx²/(N Sxx), Cov(a, b) = −s² x̄/Sxx.
struct Line {
    x: Vec<f64>,
    y: Vec<f64>,
}

impl ResidualProblem for Line {
    fn n_params(&self) -> usize {
        2
    }
    fn n_residuals(&self) -> usize {
        self.x.len()
    }
    fn residuals(&self, p: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        for ((o, x), y) in out.iter_mut().zip(&self.x).zip(&self.y) {
            *o = y - p[0] - p[1] * x;
        }
        Ok(())
    }
}

#[test]
fn line_fit_and_covariance_match_closed_form() {
    let x: Vec<f64> = (0..9).map(|i| f64::from(i) * 0.5).collect();
    let noise = [0.3, -0.2, 0.1, 0.4, -0.5, 0.2, -0.1, 0.0, -0.3];
    let y: Vec<f64> = x
        .iter()
        .zip(noise)
        .map(|(x, e)| 1.5 + 0.8 * x + e)
        .collect();
    let n = x.len() as f64;
    let xm = x.iter().sum::<f64>() / n;
    let ym = y.iter().sum::<f64>() / n;
    let sxx: f64 = x.iter().map(|x| (x - xm).powi(2)).sum();
    let sxy: f64 = x.iter().zip(&y).map(|(x, y)| (x - xm) * (y - ym)).sum();
    let b = sxy / sxx;
    let a = ym - b * xm;
    let chi2: f64 = x.iter().zip(&y).map(|(x, y)| (y - a - b * x).powi(2)).sum();
    let s2 = chi2 / (n - 2.0);
    let line = Line { x: x.clone(), y };
    let r = least_squares(&line, &[0.0, 0.0], &LmSettings::default()).unwrap();
    assert!(r.status.is_converged(), "{:?}", r.status);
    assert!((r.theta[0] - a).abs() < 1e-10 && (r.theta[1] - b).abs() < 1e-10);
    assert!((r.cost - chi2).abs() < 1e-12 * chi2);

    let c = covariance_at(
        &line,
        &r.theta,
        JacobianSource::Auto,
        CovarianceScaling::ResidualVariance,
    )
    .unwrap();
    let sum_x2: f64 = x.iter().map(|x| x * x).sum();
    let var_a = s2 * sum_x2 / (n * sxx);
    let var_b = s2 / sxx;
    let cov_ab = -s2 * xm / sxx;
    assert!((c.matrix[(0, 0)] - var_a).abs() < 1e-8 * var_a);
    assert!((c.matrix[(1, 1)] - var_b).abs() < 1e-8 * var_b);
    assert!((c.matrix[(0, 1)] - cov_ab).abs() < 1e-8 * cov_ab.abs());
    let rho = cov_ab / (var_a * var_b).sqrt();
    assert!((c.correlation[(0, 1)] - rho).abs() < 1e-8);
    assert!((c.residual_variance - s2).abs() < 1e-12 * s2);

    let u = covariance(&r.jacobian, r.cost, CovarianceScaling::Unscaled).unwrap();
    assert!((u.matrix[(1, 1)] - 1.0 / sxx).abs() < 1e-10 / sxx);
    assert_eq!(u.residual_variance, 1.0);
}

#[test]
fn singular_normal_matrix_is_a_typed_error() {
    // Two identical columns: JᵀJ has rank 1.
    let jac = DMatrix::from_fn(5, 2, |i, _| f64::from(i as u32) + 1.0);
    match covariance(&jac, 1.0, CovarianceScaling::ResidualVariance) {
        Err(CovarianceError::Singular { rank, n }) => assert_eq!((rank, n), (1, 2)),
        other => panic!("{other:?}"),
    }
    // A zero column.
    let jac = DMatrix::from_fn(5, 2, |i, j| if j == 0 { i as f64 } else { 0.0 });
    assert!(matches!(
        covariance(&jac, 1.0, CovarianceScaling::Unscaled),
        Err(CovarianceError::Singular { rank: 1, n: 2 })
    ));
    // No degrees of freedom.
    let jac = DMatrix::identity(2, 2);
    assert!(matches!(
        covariance(&jac, 1.0, CovarianceScaling::ResidualVariance),
        Err(CovarianceError::NoDegreesOfFreedom { m: 2, n: 2 })
    ));
}

/// r = √θ − 2 (fails for θ < 0, NaN-free by construction), minimum θ = 4.
struct Root;

impl ResidualProblem for Root {
    fn n_params(&self) -> usize {
        1
    }
    fn n_residuals(&self) -> usize {
        1
    }
    fn residuals(&self, t: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        if t[0] < 0.0 {
            return Err(EvaluationError::Model("negative argument".into()));
        }
        out[0] = t[0].sqrt() - 2.0;
        Ok(())
    }
}

#[test]
fn failed_trial_points_are_rejected_not_fatal() {
    // From θ = 100 the first Gauss-Newton step lands at θ < 0.
    let r = least_squares(&Root, &[100.0], &LmSettings::default()).unwrap();
    assert!(r.status.is_converged(), "{:?}", r.status);
    assert!((r.theta[0] - 4.0).abs() < 1e-8);
}

#[test]
fn bad_starts_are_reported() {
    let r = least_squares(&Root, &[-1.0], &LmSettings::default()).unwrap();
    assert!(matches!(r.status, Status::EvaluationFailed { .. }));
    let r = least_squares(&Smooth, &[0.5, -1.0], &LmSettings::default()).unwrap();
    assert_eq!(r.status, Status::NonFiniteResidual);
    assert!(least_squares(&Smooth, &[0.5], &LmSettings::default()).is_err());
    let analytic = LmSettings {
        jacobian: JacobianSource::Analytic,
        ..LmSettings::default()
    };
    assert!(least_squares(&Root, &[1.0], &analytic).is_err());
}

#[test]
fn iteration_limit_is_reported() {
    let settings = LmSettings {
        max_iterations: 2,
        ..LmSettings::default()
    };
    let r = least_squares(&Root, &[100.0], &settings).unwrap();
    assert_eq!(r.status, Status::MaxIterations);
    assert_eq!(r.iterations, 2);
}

/// −ln L of data yᵢ ~ N(μ, σᵢ² + s²) with equal σᵢ = σ₀ and a jitter s
/// (parameterised by ln s): the maximum is at μ = ȳ and
/// σ₀² + s² = (1/N)Σ(yᵢ − ȳ)² (maximum likelihood for a normal variance).
struct Jitter {
    y: Vec<f64>,
    sigma0: f64,
}

impl ScalarObjective for Jitter {
    fn n_params(&self) -> usize {
        2
    }
    fn value(&self, t: &[f64]) -> Result<f64, EvaluationError> {
        let var = self.sigma0.powi(2) + (2.0 * t[1]).exp();
        Ok(self
            .y
            .iter()
            .map(|y| 0.5 * ((y - t[0]).powi(2) / var + (2.0 * std::f64::consts::PI * var).ln()))
            .sum())
    }
}

#[test]
fn nelder_mead_finds_jitter_maximum_likelihood() {
    let y = vec![3.1, 2.4, 4.0, 1.7, 3.3, 2.9, 5.1, 2.2, 3.8, 2.6];
    let n = y.len() as f64;
    let mean = y.iter().sum::<f64>() / n;
    let v = y.iter().map(|y| (y - mean).powi(2)).sum::<f64>() / n;
    let sigma0 = 0.5;
    let ln_s = 0.5 * (v - sigma0 * sigma0).ln();
    let r = minimise_scalar(
        &Jitter { y, sigma0 },
        &[2.0, 0.0],
        &ScalarSettings::default(),
    )
    .unwrap();
    println!("{r:?}; expected μ = {mean}, ln s = {ln_s}");
    assert_eq!(r.status, ScalarStatus::Converged);
    assert!((r.theta[0] - mean).abs() < 1e-4);
    assert!((r.theta[1] - ln_s).abs() < 1e-4);
}

#[test]
fn nelder_mead_reports_non_finite_start() {
    let j = Jitter {
        y: vec![1.0],
        sigma0: 0.0,
    };
    let r = minimise_scalar(&j, &[0.0, f64::NAN], &ScalarSettings::default()).unwrap();
    assert_eq!(r.status, ScalarStatus::NonFiniteStart);
}

/// A model that can only be evaluated at its starting point: every trial
/// fails, so the run must end as stalled, not converged.
struct Stuck;

impl ResidualProblem for Stuck {
    fn n_params(&self) -> usize {
        1
    }
    fn n_residuals(&self) -> usize {
        1
    }
    fn residuals(&self, t: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        if t[0] != 3.0 {
            return Err(EvaluationError::Model("outside the valid region".into()));
        }
        out[0] = t[0] - 1.0;
        Ok(())
    }
    fn has_jacobian(&self) -> bool {
        true
    }
    fn jacobian(&self, _t: &[f64], j: &mut DMatrix<f64>) -> Result<(), EvaluationError> {
        j[(0, 0)] = 1.0;
        Ok(())
    }
}

#[test]
fn stalled_run_is_reported() {
    let settings = LmSettings::default();
    let r = least_squares(&Stuck, &[3.0], &settings).unwrap();
    println!("{r:?}");
    assert!(matches!(r.status, Status::Stalled { .. }), "{:?}", r.status);
    assert!((r.gradient_cosine - 1.0).abs() < 1e-15);
    assert_eq!(r.theta, vec![3.0]);
    assert_eq!(r.cost, 4.0);
}

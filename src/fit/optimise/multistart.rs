//! Multi-start least squares: the same problem from several starting points.

use rayon::prelude::*;

use super::lm::{LmReport, LmSettings, OptimiseError, least_squares};
use super::problem::ResidualProblem;

/// Outcomes of a multi-start run, in the order of the starting points.
#[derive(Debug)]
pub struct MultiStart {
    /// One outcome per starting point.
    pub outcomes: Vec<Result<LmReport, OptimiseError>>,
    /// Index of the best outcome: lowest finite χ², ties broken by the
    /// lower start index; `None` if no run produced a finite χ².
    pub best: Option<usize>,
}

impl MultiStart {
    /// The best report, if any.
    pub fn best_report(&self) -> Option<&LmReport> {
        self.best.and_then(|i| self.outcomes[i].as_ref().ok())
    }
}

/// Runs [`least_squares`] from every start in parallel (rayon) and picks the
/// best by χ². Each run is independent and results are collected in start
/// order, so the outcome does not depend on the thread count.
///
/// The best is chosen among all runs with a finite χ², whatever their
/// status: check `status` of the chosen report before trusting it.
///
/// # Example
///
/// ```
/// use apsidal::fit::optimise::{multi_start, EvaluationError, LmSettings, ResidualProblem};
///
/// /// r = θ² − 4: two minima, θ = ±2.
/// struct Root;
/// impl ResidualProblem for Root {
///     fn n_params(&self) -> usize { 1 }
///     fn n_residuals(&self) -> usize { 1 }
///     fn residuals(&self, t: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
///         out[0] = t[0] * t[0] - 4.0;
///         Ok(())
///     }
/// }
/// let starts = vec![vec![-3.0], vec![1.0]];
/// let ms = multi_start(&Root, &starts, &LmSettings::default());
/// assert_eq!(ms.outcomes.len(), 2);
/// let first = ms.outcomes[0].as_ref().unwrap();
/// assert!((first.theta[0] + 2.0).abs() < 1e-10);
/// // both reach χ² = 0 exactly or nearly; ties go to the lower index
/// assert!(ms.best.is_some());
/// ```
pub fn multi_start<P: ResidualProblem + ?Sized>(
    problem: &P,
    starts: &[Vec<f64>],
    settings: &LmSettings,
) -> MultiStart {
    let outcomes: Vec<Result<LmReport, OptimiseError>> = starts
        .par_iter()
        .map(|s| least_squares(problem, s, settings))
        .collect();
    let best = outcomes
        .iter()
        .enumerate()
        .filter_map(|(i, o)| o.as_ref().ok().map(|r| (i, r.cost)))
        .filter(|(_, c)| c.is_finite())
        .fold(None, |acc: Option<(usize, f64)>, (i, c)| match acc {
            Some((_, bc)) if bc <= c => acc,
            _ => Some((i, c)),
        })
        .map(|(i, _)| i);
    MultiStart { outcomes, best }
}

//! Maximum-likelihood fit of an [`RvModel`]: Levenberg–Marquardt on the
//! whitened residuals with the jitters held, alternated with a
//! one-dimensional maximisation of ln L over each free jitter, from several
//! starts in parallel, with a covariance estimate at the optimum.
//!
//! With jitter the likelihood is not a sum of squares (the ln(σ² + s²)
//! term), so the jitters cannot ride along inside the least-squares
//! solver. Holding them and then maximising over each one by Brent's
//! method (Brent 1973; argmin's `BrentOpt`) is a block-coordinate ascent
//! of ln L; it stops when a round raises ln L by less than a tolerance.
//! Gaussian priors on least-squares parameters enter as extra residual
//! rows (x − μ)/σ, so the result is then the MAP point for those priors;
//! uniform and log-uniform priors act through their bounds only.
//!
//! A dynamical model with the automatic Wisdom–Holman step is fitted with
//! that step resolved at the first start and held fixed
//! ([`RvModel::with_fixed_wh_step`]; the step is reported in
//! [`FitResult::wh_step`]): a step that follows the parameters makes the
//! likelihood jump by the size of the integration error whenever the
//! number of steps to an epoch changes, which stalled Levenberg–Marquardt
//! on the injection test (tests/fit_dynamical_injection.rs).
//!
//! By default ([`WhStepRule::Accuracy`]) that fit is a first stage: at its
//! optimum the step is chosen again as the longest multiple of the held
//! automatic step (from ½ to 3×, below the pericentre-passage time) whose
//! estimated RV error at the data epochs is ≤ 1 % of the smallest quoted
//! error with a whitened norm ≤ 0.1 ([`RvModel::accuracy_wh_step_from`]);
//! if that step differs, the fit is polished from the first optimum with
//! it, and that step is held and reported ([`FitResult::wh_step`], with
//! its estimated error in [`FitResult::wh_step_choice`]). The step is not
//! chosen at the start because a start can be far less benign than the
//! optimum: on the injection dataset (400 epochs over 4000 d) the
//! edge-on model at the Keplerian solution has an RV error of 0.1 m/s
//! even at half the automatic step, while at the optimum 1.5× the
//! automatic step gives 0.013 m/s. [`WhStepRule::Automatic`] keeps the
//! automatic step of the first start (the rule before).
//!
//! A bounded parameter whose optimum lies on its bound (sin i → 1 in the
//! coplanar model with free sin i is the common case) loses its derivative
//! in the logistic space and makes Levenberg–Marquardt stall. When a block
//! ends without converging, parameters within 1e-4 of the support's width
//! from a bound are set on it and held there for the following rounds
//! (listed in [`FitResult::held_at_bound`], without standard errors).
//! For the same reason a start on a bound is first moved 1 % of the width
//! inside, so that the optimiser can leave it. The orientation parameters
//! (sin i, inclinations, node differences) are held in the first round and
//! released from the second: started from a Keplerian solution of an
//! interacting system, freeing them at once let LM run to a poor local
//! optimum (ln L lower by 114 than the truth's on the injection test).

use argmin::core::{CostFunction, Executor, State};
use argmin::solver::brent::BrentOpt;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::likelihood::{aicc, bic};
use super::models::{ModelError, RvModel, StepAccuracy, WhStepChoice};
use super::optimise::{
    CovarianceScaling, EvaluationError, JacobianSource, LmSettings, ResidualProblem, covariance_at,
    least_squares,
};
use super::params::Prior;

/// Settings of the maximum-likelihood fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitSettings {
    /// Levenberg–Marquardt settings for the least-squares blocks.
    pub lm: LmSettings,
    /// Largest number of least-squares / jitter rounds.
    pub max_rounds: usize,
    /// Stop when a round raises ln L by less than this.
    pub ln_l_tolerance: f64,
    /// How the Wisdom–Holman step of a dynamical model with the automatic
    /// step is fixed for the fit (default: accuracy-driven).
    pub wh_step_rule: WhStepRule,
}

/// How [`fit_model`] fixes the Wisdom–Holman step of a dynamical model
/// whose step is automatic (resolved once, at the first valid start, then
/// held; see the module docs). A model with a given step or with
/// Gauss–Radau is fitted as it is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum WhStepRule {
    /// The integrator's automatic rule, P_min/20 scaled for the pericentre
    /// passage ([`RvModel::with_fixed_wh_step`]; the rule before the
    /// accuracy-driven one).
    Automatic,
    /// The longest step of a ladder whose estimated RV error at the data
    /// epochs meets the accuracy ([`RvModel::accuracy_wh_step`]).
    Accuracy(StepAccuracy),
}

impl Default for WhStepRule {
    fn default() -> Self {
        WhStepRule::Accuracy(StepAccuracy::default())
    }
}

impl Default for FitSettings {
    fn default() -> Self {
        FitSettings {
            lm: LmSettings {
                max_iterations: 300,
                // The undamped Gauss–Newton gain at an optimum is set by the
                // noise of finite-difference Jacobians of an integrated
                // model, not by χ²'s own rounding: measured 2.0e-12 of χ²
                // at the optimum of the injection fit (seed 4 of
                // tests/fit_dynamical_injection.rs), where no damped step
                // changed θ any more and the same optimum (ln L, BIC to all
                // printed digits) was reached with another Kepler solver. A
                // gain of 1e-10 χ² (Δχ² ≈ 2e-8 there) is far below any
                // statistical meaning.
                rounding_tolerance: 1e-10,
                ..LmSettings::default()
            },
            max_rounds: 12,
            ln_l_tolerance: 1e-7,
            wh_step_rule: WhStepRule::default(),
        }
    }
}

/// Why a fit could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// No start gave a finite likelihood.
    #[error("no starting point gave a finite likelihood ({0})")]
    NoValidStart(String),
    /// A start has the wrong length.
    #[error("a starting vector has {got} values, the model has {expected}")]
    StartLength {
        /// Expected.
        expected: usize,
        /// Given.
        got: usize,
    },
    /// The model failed.
    #[error(transparent)]
    Model(#[from] ModelError),
}

/// Outcome of a maximum-likelihood fit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitResult {
    /// Names of all parameters, in full-vector order.
    pub names: Vec<String>,
    /// Best full parameter vector.
    pub values: Vec<f64>,
    /// 1σ standard errors from the covariance at the optimum (delta method
    /// through the transforms), `None` for fixed parameters, jitters,
    /// parameters held at a bound and when the covariance is singular.
    pub std_errors: Vec<Option<f64>>,
    /// ln L at the optimum.
    pub ln_likelihood: f64,
    /// χ² with the fitted jitters.
    pub chi_square: f64,
    /// Number of free parameters k.
    pub n_free: usize,
    /// Number of data points n.
    pub n_points: usize,
    /// BIC = k ln n − 2 ln L.
    pub bic: f64,
    /// AICc (Hurvich & Tsai 1989); `None` when undefined (n ≤ k + 1).
    pub aicc: Option<f64>,
    /// Whether the last least-squares block reported convergence and the
    /// rounds settled below the tolerance.
    pub converged: bool,
    /// How the last least-squares block ended (for people).
    pub status: String,
    /// Rounds used.
    pub rounds: usize,
    /// Which start gave the optimum (index into the starts).
    pub best_start: usize,
    /// The Wisdom–Holman step (d) held fixed during the fit when the
    /// model's step is automatic (the accuracy-driven step, or with
    /// [`WhStepRule::Automatic`] the automatic step at the first start);
    /// `None` otherwise.
    #[serde(default)]
    pub wh_step: Option<f64>,
    /// With [`WhStepRule::Accuracy`]: the chosen step's rung and its
    /// estimated RV error at the data epochs (at the first-stage optimum
    /// where it was chosen); `None` otherwise.
    #[serde(default)]
    pub wh_step_choice: Option<WhStepChoice>,
    /// Parameters that the optimiser drove onto a bound of their prior's
    /// support and that were then held there (no standard error: the
    /// optimum is on the boundary, e.g. sin i = 1).
    #[serde(default)]
    pub held_at_bound: Vec<String>,
}

/// The least-squares block: the free, non-jitter parameters in their
/// unconstrained form, with everything else held at `base`.
struct Block<'a> {
    model: &'a RvModel,
    base: Vec<f64>,
    idx: Vec<usize>,
    gaussian_rows: Vec<(usize, usize, f64, f64)>,
    jitters: Vec<f64>,
    n_data: usize,
}

impl Block<'_> {
    fn full_of(&self, u: &[f64]) -> Vec<f64> {
        let mut full = self.base.clone();
        for (k, &i) in self.idx.iter().enumerate() {
            full[i] = self.model.params.forward_one(i, u[k]).0;
        }
        full
    }
}

impl ResidualProblem for Block<'_> {
    fn n_params(&self) -> usize {
        self.idx.len()
    }

    fn n_residuals(&self) -> usize {
        self.n_data + self.gaussian_rows.len()
    }

    fn residuals(&self, u: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        let full = self.full_of(u);
        let (data, prior) = out.split_at_mut(self.n_data);
        self.model
            .residuals(&full, data)
            .map_err(|e| EvaluationError::Model(Box::new(e)))?;
        let obs = &self.model.obs;
        for ((r, &s), &k) in data.iter_mut().zip(&obs.err).zip(&obs.inst) {
            let j = self.jitters[k];
            *r /= (s * s + j * j).sqrt();
        }
        for (row, &(_, i, mean, sigma)) in prior.iter_mut().zip(&self.gaussian_rows) {
            *row = (full[i] - mean) / sigma;
        }
        Ok(())
    }
}

/// −ln L as a function of one jitter.
struct JitterCost<'a> {
    model: &'a RvModel,
    full: &'a [f64],
    index: usize,
}

impl CostFunction for JitterCost<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, s: &f64) -> Result<f64, argmin::core::Error> {
        let mut full = self.full.to_vec();
        full[self.index] = *s;
        let l = self.model.ln_likelihood(&full);
        Ok(if l.is_finite() { -l } else { f64::MAX })
    }
}

/// Maximise ln L over jitter `index` (full-vector index) within its prior
/// support capped at `cap`.
fn best_jitter(model: &RvModel, full: &[f64], index: usize, cap: f64) -> f64 {
    let (lo, hi) = model.params.parameters()[index].prior.support();
    let lo = lo.max(0.0);
    let hi = hi.min(cap).max(lo + 1e-9);
    let solver = BrentOpt::new(lo, hi).set_tolerance(1e-10, 1e-9);
    let cost = JitterCost { model, full, index };
    let run = Executor::new(cost, solver)
        .configure(|s| s.max_iters(200))
        .run();
    let current = full[index];
    match run {
        Ok(res) => match res.state().get_best_param() {
            Some(&s) if s.is_finite() => {
                let mut trial = full.to_vec();
                trial[index] = s;
                if model.ln_likelihood(&trial) >= model.ln_likelihood(full) {
                    s
                } else {
                    current
                }
            }
            _ => current,
        },
        Err(_) => current,
    }
}

struct Single {
    full: Vec<f64>,
    ln_l: f64,
    held: Vec<usize>,
    converged: bool,
    status: String,
    rounds: usize,
}

/// Relative distance (of the support's width) within which a bounded,
/// non-periodic parameter counts as sitting on its bound.
const AT_BOUND: f64 = 1e-4;

/// The bound of parameter `i`'s support that `x` sits on (within
/// [`AT_BOUND`] of the width), if any.
fn nearest_bound(model: &RvModel, i: usize, x: f64) -> Option<f64> {
    let prior = model.params.parameters()[i].prior;
    if matches!(prior, Prior::Periodic { .. }) {
        return None;
    }
    let (lo, hi) = prior.support();
    let w = hi - lo;
    if !w.is_finite() {
        return None;
    }
    if (x - lo) <= AT_BOUND * w {
        Some(lo)
    } else if (hi - x) <= AT_BOUND * w {
        Some(hi)
    } else {
        None
    }
}

/// Whether a parameter sets the orbits' orientation (held in the first
/// round of a fit).
fn is_orientation(name: &str) -> bool {
    name == "sin_i" || name.ends_with(".inclination") || name.ends_with(".node_difference")
}

/// How far inside (of the support's width) a start on a bound is moved.
const START_INSIDE: f64 = 0.01;

fn fit_one(model: &RvModel, start: &[f64], settings: &FitSettings) -> Option<Single> {
    let params = model.params.parameters();
    let jitter_idx: Vec<usize> = model
        .obs
        .instruments
        .iter()
        .filter_map(|i| model.params.index_of(&format!("{i}.jitter")))
        .filter(|&i| !params[i].fixed)
        .collect();
    let mut idx: Vec<usize> = model
        .params
        .free_indices()
        .iter()
        .copied()
        .filter(|i| !jitter_idx.contains(i))
        .collect();
    let mut gaussian_rows: Vec<(usize, usize, f64, f64)> = idx
        .iter()
        .enumerate()
        .filter_map(|(k, &i)| match params[i].prior {
            Prior::Gaussian { mean, sigma, .. } => Some((k, i, mean, sigma)),
            _ => None,
        })
        .collect();
    let rms = {
        let n = model.obs.rv.len().max(1) as f64;
        let mean = model.obs.rv.iter().sum::<f64>() / n;
        (model
            .obs
            .rv
            .iter()
            .map(|v| (v - mean) * (v - mean))
            .sum::<f64>()
            / n)
            .sqrt()
    };
    let mut full = start.to_vec();
    // A start on a bound (sin i = 1 from an edge-on guess) has a zero
    // derivative in the logistic space, so LM could never move it: start
    // such parameters one per cent of the width inside.
    for &i in &idx {
        let (lo, hi) = params[i].prior.support();
        match nearest_bound(model, i, full[i]) {
            Some(b) if b == lo => full[i] = lo + START_INSIDE * (hi - lo),
            Some(_) => full[i] = hi - START_INSIDE * (hi - lo),
            None => {}
        }
    }
    let mut ln_l = model.ln_likelihood(&full);
    if !ln_l.is_finite() {
        return None;
    }
    let mut converged = false;
    let mut status = String::from("not run");
    let mut rounds = 0;
    let mut held: Vec<usize> = Vec::new();
    for round in 0..settings.max_rounds {
        rounds = round + 1;
        let jitters = model.jitters_of(&full);
        // First round of a model with orientation parameters: hold them
        // (sin i, inclinations, node differences) and fit the rest, so that
        // the osculating elements settle before the masses may move.
        let staged = round == 0 && idx.iter().any(|&i| is_orientation(&params[i].name));
        let block_idx: Vec<usize> = if staged {
            idx.iter()
                .copied()
                .filter(|&i| !is_orientation(&params[i].name))
                .collect()
        } else {
            idx.clone()
        };
        let block = Block {
            model,
            base: full.clone(),
            idx: block_idx.clone(),
            gaussian_rows: gaussian_rows.clone(),
            jitters,
            n_data: model.obs.len(),
        };
        let mut lsq_ok = true;
        if !block_idx.is_empty() {
            let u0: Vec<f64> = block_idx
                .iter()
                .map(|&i| model.params.inverse_one(i, full[i]))
                .collect();
            match least_squares(&block, &u0, &settings.lm) {
                Ok(rep) => {
                    let cand = block.full_of(&rep.theta);
                    let l = model.ln_likelihood(&cand);
                    if l.is_finite() && l >= ln_l - 1e-12 {
                        full = cand;
                    }
                    lsq_ok = rep.status.is_converged();
                    status = format!("{:?}", rep.status);
                }
                Err(e) => {
                    lsq_ok = false;
                    status = e.to_string();
                }
            }
        }
        // A parameter that LM drove onto a bound of its support (e.g.
        // sin i → 1) has lost its derivative in the logistic space, and LM
        // stalls there; hold it at the bound and fit the rest.
        let mut newly_held = false;
        if !lsq_ok && !staged {
            let stuck: Vec<usize> = idx
                .iter()
                .copied()
                .filter(|&i| nearest_bound(model, i, full[i]).is_some())
                .collect();
            for i in stuck {
                if let Some(b) = nearest_bound(model, i, full[i]) {
                    full[i] = b;
                }
                idx.retain(|&k| k != i);
                gaussian_rows.retain(|r| r.1 != i);
                held.push(i);
                newly_held = true;
            }
        }
        for &j in &jitter_idx {
            full[j] = best_jitter(model, &full, j, 10.0 * rms.max(1.0));
        }
        let new_l = model.ln_likelihood(&full);
        let gain = new_l - ln_l;
        ln_l = new_l;
        if !staged && !newly_held && gain.abs() < settings.ln_l_tolerance {
            converged = lsq_ok;
            break;
        }
    }
    if !held.is_empty() {
        let names: Vec<&str> = held.iter().map(|&i| params[i].name.as_str()).collect();
        status = format!("{status}; held at a bound: {}", names.join(", "));
    }
    Some(Single {
        full,
        ln_l,
        held,
        converged,
        status,
        rounds,
    })
}

/// Fit `model` by maximum likelihood from each full starting vector in
/// `starts` (in parallel; the best ln L wins, ties to the lower index, so
/// the result does not depend on the thread count).
pub fn fit_model(
    model: &RvModel,
    starts: &[Vec<f64>],
    settings: &FitSettings,
) -> Result<FitResult, FitError> {
    let n = model.params.len();
    if let Some(s) = starts.iter().find(|s| s.len() != n) {
        return Err(FitError::StartLength {
            expected: n,
            got: s.len(),
        });
    }
    // An automatic Wisdom–Holman step follows the parameters, which makes
    // the likelihood piecewise continuous (the step count to each epoch
    // jumps) and the finite-difference Jacobian noisy: LM then stalls near
    // the optimum. Resolve it once, at the first valid start, and hold it.
    let resolved = starts
        .iter()
        .find_map(|s| model.automatic_wh_step(s).ok().flatten().map(|h| (s, h)));
    // Stage 1: with the automatic step resolved at the first valid start
    // (both rules), or the model as it is.
    let fixed_model;
    let (stage_model, automatic_step) = match resolved {
        Some((s, h)) => {
            fixed_model = model.with_fixed_wh_step(s)?;
            (&fixed_model, Some(h))
        }
        None => (model, None),
    };
    let runs: Vec<Option<Single>> = starts
        .par_iter()
        .map(|s| fit_one(stage_model, s, settings))
        .collect();
    let mut best: Option<(usize, &Single)> = None;
    for (i, r) in runs.iter().enumerate() {
        if let Some(r) = r {
            if best.is_none_or(|(_, b)| r.ln_l > b.ln_l) {
                best = Some((i, r));
            }
        }
    }
    let Some((best_start, stage_single)) = best else {
        return Err(FitError::NoValidStart(format!(
            "{} starts tried",
            starts.len()
        )));
    };
    // Stage 2 (accuracy rule): choose the step at the stage-1 optimum and,
    // when it differs from the automatic one, polish from there with it.
    let accurate_model;
    let polished;
    let mut single = stage_single;
    let mut wh_step = automatic_step;
    let mut wh_step_choice = None;
    let mut final_model = stage_model;
    if let (Some(h_auto), WhStepRule::Accuracy(acc)) = (automatic_step, settings.wh_step_rule) {
        // The accuracy is judged with the step rule of the original model
        // (automatic), at the stage-1 optimum.
        // A failed choice (the model cannot be evaluated at any rung)
        // leaves the first-stage result with the automatic step.
        let choice = model
            .accuracy_wh_step_from(&stage_single.full, h_auto, &acc)
            .ok()
            .flatten();
        if let Some(c) = choice {
            if c.step == h_auto {
                wh_step_choice = Some(c);
            } else {
                accurate_model = model.with_wh_step(Some(c.step));
                if let Some(p) = fit_one(&accurate_model, &stage_single.full, settings) {
                    polished = p;
                    single = &polished;
                    final_model = &accurate_model;
                    wh_step = Some(c.step);
                    wh_step_choice = Some(c);
                }
            }
        }
    }
    let model = final_model;
    let std_errors = standard_errors(model, &single.full, &single.held);
    let n_free = model.params.n_free();
    let n_points = model.obs.len();
    Ok(FitResult {
        names: model
            .params
            .parameters()
            .iter()
            .map(|p| p.name.clone())
            .collect(),
        values: single.full.clone(),
        std_errors,
        ln_likelihood: single.ln_l,
        chi_square: model.chi_square(&single.full),
        n_free,
        n_points,
        bic: bic(single.ln_l, n_free, n_points),
        aicc: aicc(single.ln_l, n_free, n_points),
        converged: single.converged,
        status: single.status.clone(),
        rounds: single.rounds,
        best_start,
        wh_step,
        wh_step_choice,
        held_at_bound: single
            .held
            .iter()
            .map(|&i| model.params.parameters()[i].name.clone())
            .collect(),
    })
}

/// Standard errors of the least-squares parameters at `full` from the
/// unscaled covariance (the residuals are already whitened with the
/// fitted jitters), mapped to the constrained space by |dx/du|.
fn standard_errors(model: &RvModel, full: &[f64], held: &[usize]) -> Vec<Option<f64>> {
    let params = model.params.parameters();
    let jitter_idx: Vec<usize> = model
        .obs
        .instruments
        .iter()
        .filter_map(|i| model.params.index_of(&format!("{i}.jitter")))
        .collect();
    let idx: Vec<usize> = model
        .params
        .free_indices()
        .iter()
        .copied()
        .filter(|i| !jitter_idx.contains(i) && !held.contains(i))
        .collect();
    let mut out = vec![None; params.len()];
    if idx.is_empty() {
        return out;
    }
    let block = Block {
        model,
        base: full.to_vec(),
        idx: idx.clone(),
        gaussian_rows: Vec::new(),
        jitters: model.jitters_of(full),
        n_data: model.obs.len(),
    };
    let u: Vec<f64> = idx
        .iter()
        .map(|&i| model.params.inverse_one(i, full[i]))
        .collect();
    if let Ok(cov) = covariance_at(
        &block,
        &u,
        JacobianSource::Auto,
        CovarianceScaling::Unscaled,
    ) {
        for (k, &i) in idx.iter().enumerate() {
            let (_, ln_jac) = model.params.forward_one(i, u[k]);
            let se = cov.std_errors[k] * ln_jac.exp();
            if se.is_finite() {
                out[i] = Some(se);
            }
        }
    }
    out
}

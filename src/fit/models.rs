//! The RV models one can fit, and the map from a named parameter vector to
//! each model's RVs, the likelihood and the posterior.
//!
//! Parameter names (our own; the `config` layer builds them from a run
//! file). Per planet `p` (ordered by period): `p.period` (d),
//! `p.semi_amplitude` (m/s), `p.sqrt_e_cos_w` and `p.sqrt_e_sin_w`
//! (√e cos ω⋆, √e sin ω⋆), `p.mean_longitude` (deg; λ = M + ω_p + Ω with
//! the planet's ω_p = ω⋆ + 180° and Ω_1 = 0) at the reference epoch; for
//! the dynamical models `p.inclination` (deg, 90 = edge-on; one shared
//! `sin_i` in the coplanar model with free sin i) and, from the second
//! planet on in the three-dimensional model, `p.node_difference` (deg,
//! ΔΩ_k = Ω_k − Ω_1). Per instrument `i`: `i.offset` and `i.jitter` (m/s).
//! Optional trend: `trend.slope` (m/s/d) and `trend.curvature` (m/s/d²).

use serde::{Deserialize, Serialize};

use super::likelihood::{chi_square, ln_likelihood};
use super::params::{ParamError, ParameterSet, ecc_omega_from_sqrt_basis};
use crate::model::dynamical::{
    DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace, IntegratorChoice,
    Trend as DynTrend,
};
use crate::model::keplerian::{KeplerianParams, PlanetSignal, Trend, keplerian_model_rv};
use crate::nbody::wisdom_holman::{WhSettings, WisdomHolman};

/// Per-thread buffers of the dynamical evaluation: the model's workspace
/// and the decoded parameters, refilled in place on every call.
struct DynamicalScratch {
    ws: DynamicalWorkspace,
    params: DynamicalParams,
}

/// Per-thread buffers of [`RvModel::ln_likelihood`] and
/// [`RvModel::chi_square`]: residuals and jitters.
#[derive(Default)]
struct LikelihoodScratch {
    resid: Vec<f64>,
    jitter: Vec<f64>,
}

thread_local! {
    /// One dynamical-model workspace (and parameter buffer) per thread:
    /// repeated evaluations (optimiser, sampler, finite differences in
    /// parallel) then allocate nothing, and the result does not depend on
    /// which thread ran it.
    static DYNAMICAL_SCRATCH: std::cell::RefCell<DynamicalScratch> =
        std::cell::RefCell::new(DynamicalScratch {
            ws: DynamicalWorkspace::default(),
            params: DynamicalParams {
                star_mass: 1.0,
                planets: Vec::new(),
                offsets: Vec::new(),
                trend: DynTrend::default(),
            },
        });
    /// Residual and jitter buffers per thread (no allocation per call).
    static LIKELIHOOD_SCRATCH: std::cell::RefCell<LikelihoodScratch> =
        std::cell::RefCell::new(LikelihoodScratch::default());
}

/// One planet's decoded angles: (e, ω⋆, mean anomaly at t_ref,
/// inclination, node), radians.
type PlanetAngles = (f64, f64, f64, f64, f64);

/// Which RV model is fitted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ModelKind {
    /// A sum of independent Keplerian signals.
    Keplerian,
    /// N-body, all orbits coplanar and edge-on (i = 90°, ΔΩ = 0).
    CoplanarEdgeOn,
    /// N-body, coplanar (ΔΩ = 0) with one shared free sin i.
    CoplanarSinI,
    /// N-body, each planet with its own inclination and (from the second
    /// planet on) node difference ΔΩ.
    ThreeDimensional,
}

/// Polynomial trend of the RV about the reference epoch.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum TrendKind {
    /// No trend.
    #[default]
    None,
    /// Linear: `trend.slope`.
    Linear,
    /// Quadratic: `trend.slope` and `trend.curvature`.
    Quadratic,
}

/// RV measurements prepared for fitting: epochs (days), RVs and errors
/// (m/s) and an instrument index per point into `instruments`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Observations {
    /// Epochs in days.
    pub t: Vec<f64>,
    /// RVs in m/s.
    pub rv: Vec<f64>,
    /// 1σ errors in m/s.
    pub err: Vec<f64>,
    /// Instrument index of each point.
    pub inst: Vec<usize>,
    /// Instrument names.
    pub instruments: Vec<String>,
}

impl Observations {
    /// Number of points.
    pub fn len(&self) -> usize {
        self.t.len()
    }

    /// True when there are no points.
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }
}

/// Why a parameter vector could not be turned into a model.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelError {
    /// A parameter the model needs is absent from the set.
    #[error("the model needs parameter `{0}`, which is not defined")]
    MissingParameter(String),
    /// Eccentricity would be ≥ 1.
    #[error("planet `{0}`: eccentricity ≥ 1")]
    Eccentricity(String),
    /// The model could not be evaluated (reason given).
    #[error("model cannot be evaluated: {0}")]
    Evaluation(String),
    /// Parameter handling failed.
    #[error(transparent)]
    Param(#[from] ParamError),
}

/// Where each named quantity sits in the full parameter vector.
#[derive(Debug, Clone, PartialEq)]
struct PlanetSlots {
    name: String,
    period: usize,
    semi_amplitude: usize,
    sqrt_e_cos_w: usize,
    sqrt_e_sin_w: usize,
    mean_longitude: usize,
    inclination: Option<usize>,
    node_difference: Option<usize>,
}

/// A fittable RV model: the data, the model kind, the parameter set and
/// the layout of the parameter vector.
#[derive(Debug, Clone)]
pub struct RvModel {
    /// The data.
    pub obs: Observations,
    /// Which model.
    pub kind: ModelKind,
    /// Stellar mass in M☉ (for the dynamical models and derived masses).
    pub star_mass: f64,
    /// Reference epoch (days).
    pub t_ref: f64,
    /// The parameters.
    pub params: ParameterSet,
    /// Settings of the N-body integration (dynamical kinds only):
    /// integrator, step, stellar radius, events, post-Newtonian term.
    pub dynamics: DynamicalModel,
    trend: TrendKind,
    planets: Vec<PlanetSlots>,
    offsets: Vec<usize>,
    jitters: Vec<usize>,
    slope: Option<usize>,
    curvature: Option<usize>,
    sin_i: Option<usize>,
}

/// A parameter vector decoded into physical quantities.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DecodedPlanet {
    /// Planet name.
    pub name: String,
    /// Period in days.
    pub period: f64,
    /// Semi-amplitude in m/s.
    pub semi_amplitude: f64,
    /// Eccentricity.
    pub eccentricity: f64,
    /// ω⋆ in radians.
    pub omega_star: f64,
    /// Mean anomaly at t_ref in radians.
    pub mean_anomaly: f64,
    /// Inclination in radians (π/2 for the Keplerian and edge-on models).
    pub inclination: f64,
    /// Node difference ΔΩ in radians (0 for the innermost and coplanar).
    pub node: f64,
}

impl RvModel {
    /// Lay out a model over `params`, which must define every parameter
    /// the kind needs (see the module docs for names). `planet_names` in
    /// order of period.
    pub fn new(
        obs: Observations,
        kind: ModelKind,
        star_mass: f64,
        t_ref: f64,
        planet_names: &[String],
        trend: TrendKind,
        params: ParameterSet,
    ) -> Result<Self, ModelError> {
        let need = |name: String| {
            params
                .index_of(&name)
                .ok_or(ModelError::MissingParameter(name))
        };
        let mut planets = Vec::with_capacity(planet_names.len());
        for (k, p) in planet_names.iter().enumerate() {
            let inclination = match kind {
                ModelKind::ThreeDimensional => Some(need(format!("{p}.inclination"))?),
                _ => None,
            };
            let node_difference = match kind {
                ModelKind::ThreeDimensional if k > 0 => Some(need(format!("{p}.node_difference"))?),
                _ => None,
            };
            planets.push(PlanetSlots {
                name: p.clone(),
                period: need(format!("{p}.period"))?,
                semi_amplitude: need(format!("{p}.semi_amplitude"))?,
                sqrt_e_cos_w: need(format!("{p}.sqrt_e_cos_w"))?,
                sqrt_e_sin_w: need(format!("{p}.sqrt_e_sin_w"))?,
                mean_longitude: need(format!("{p}.mean_longitude"))?,
                inclination,
                node_difference,
            });
        }
        let offsets = obs
            .instruments
            .iter()
            .map(|i| need(format!("{i}.offset")))
            .collect::<Result<Vec<_>, _>>()?;
        let jitters = obs
            .instruments
            .iter()
            .map(|i| need(format!("{i}.jitter")))
            .collect::<Result<Vec<_>, _>>()?;
        let slope = match trend {
            TrendKind::None => None,
            _ => Some(need("trend.slope".into())?),
        };
        let curvature = match trend {
            TrendKind::Quadratic => Some(need("trend.curvature".into())?),
            _ => None,
        };
        let sin_i = match kind {
            ModelKind::CoplanarSinI => Some(need("sin_i".into())?),
            _ => None,
        };
        Ok(RvModel {
            obs,
            kind,
            star_mass,
            t_ref,
            params,
            dynamics: DynamicalModel::new(t_ref),
            trend,
            planets,
            offsets,
            jitters,
            slope,
            curvature,
            sin_i,
        })
    }

    /// Number of planets.
    pub fn n_planets(&self) -> usize {
        self.planets.len()
    }

    /// Planets' physical quantities from a full parameter vector.
    pub fn decode_planets(&self, full: &[f64]) -> Result<Vec<DecodedPlanet>, ModelError> {
        let shared_inc = self.shared_inclination(full);
        self.planets
            .iter()
            .map(|s| {
                let (e, w, mean_anomaly, inclination, node) =
                    self.planet_angles(s, full, shared_inc)?;
                Ok(DecodedPlanet {
                    name: s.name.clone(),
                    period: full[s.period],
                    semi_amplitude: full[s.semi_amplitude],
                    eccentricity: e,
                    omega_star: w,
                    mean_anomaly,
                    inclination,
                    node,
                })
            })
            .collect()
    }

    /// The shared inclination of the coplanar model with free sin i.
    fn shared_inclination(&self, full: &[f64]) -> Option<f64> {
        self.sin_i.map(|i| full[i].clamp(-1.0, 1.0).asin())
    }

    /// One planet's e, ω⋆, mean anomaly at t_ref, inclination and node
    /// (radians) from the full vector (the one decoding of
    /// [`Self::decode_planets`] and of the dynamical evaluation).
    fn planet_angles(
        &self,
        s: &PlanetSlots,
        full: &[f64],
        shared_inc: Option<f64>,
    ) -> Result<PlanetAngles, ModelError> {
        let edge_on = std::f64::consts::FRAC_PI_2;
        let (e, w) = ecc_omega_from_sqrt_basis(full[s.sqrt_e_cos_w], full[s.sqrt_e_sin_w])
            .ok_or_else(|| ModelError::Eccentricity(s.name.clone()))?;
        let node = s.node_difference.map_or(0.0, |i| full[i].to_radians());
        let inclination = s
            .inclination
            .map(|i| full[i].to_radians())
            .or(shared_inc)
            .unwrap_or(edge_on);
        // λ = M + ω_p + Ω with ω_p = ω⋆ + π.
        let omega_p = w + std::f64::consts::PI;
        let mean_anomaly = (full[s.mean_longitude].to_radians() - omega_p - node)
            .rem_euclid(std::f64::consts::TAU);
        Ok((e, w, mean_anomaly, inclination, node))
    }

    /// Refill `out` in place (no allocation once sized) with the
    /// dynamical-model parameters of a full vector; the same numbers as
    /// [`Self::decode_planets`] followed by the dynamical conversion.
    fn fill_dynamical_params(
        &self,
        full: &[f64],
        out: &mut DynamicalParams,
    ) -> Result<(), ModelError> {
        let shared_inc = self.shared_inclination(full);
        out.star_mass = self.star_mass;
        out.planets.clear();
        for s in &self.planets {
            let (e, w, mean_anomaly, inclination, node) =
                self.planet_angles(s, full, shared_inc)?;
            out.planets.push(DynamicalPlanet {
                period: full[s.period],
                k: full[s.semi_amplitude],
                e,
                omega_star: w,
                mean_anomaly,
                inc: inclination,
                delta_node: node,
            });
        }
        out.offsets.clear();
        out.offsets.extend(self.offsets.iter().map(|&i| full[i]));
        let (c1, c2) = self.trend_of(full).coefficients();
        out.trend = DynTrend {
            linear: c1,
            quadratic: c2,
        };
        Ok(())
    }

    /// The trend as the Keplerian model takes it.
    fn trend_of(&self, full: &[f64]) -> Trend {
        match self.trend {
            TrendKind::None => Trend::None,
            TrendKind::Linear => Trend::Linear {
                slope: self.slope.map_or(0.0, |i| full[i]),
            },
            TrendKind::Quadratic => Trend::Quadratic {
                slope: self.slope.map_or(0.0, |i| full[i]),
                curvature: self.curvature.map_or(0.0, |i| full[i]),
            },
        }
    }

    /// Offsets per instrument (m/s).
    pub fn offsets_of(&self, full: &[f64]) -> Vec<f64> {
        self.offsets.iter().map(|&i| full[i]).collect()
    }

    /// Jitters per instrument (m/s).
    pub fn jitters_of(&self, full: &[f64]) -> Vec<f64> {
        self.jitters.iter().map(|&i| full[i]).collect()
    }

    /// The model RV (m/s) at the observed epochs for a full parameter
    /// vector, written into `out`.
    pub fn model_rv(&self, full: &[f64], out: &mut [f64]) -> Result<(), ModelError> {
        self.model_rv_at(full, &self.obs.t, &self.obs.inst, out)
    }

    /// The model RV (m/s) at arbitrary epochs with instrument indices.
    pub fn model_rv_at(
        &self,
        full: &[f64],
        t: &[f64],
        inst: &[usize],
        out: &mut [f64],
    ) -> Result<(), ModelError> {
        match self.kind {
            ModelKind::Keplerian => {
                let planets = self.decode_planets(full)?;
                let params = KeplerianParams {
                    t_ref: self.t_ref,
                    planets: planets
                        .iter()
                        .map(|p| PlanetSignal {
                            period: p.period,
                            semi_amplitude: p.semi_amplitude,
                            eccentricity: p.eccentricity,
                            omega_star: p.omega_star,
                            mean_anomaly_ref: p.mean_anomaly,
                        })
                        .collect(),
                    offsets: self.offsets_of(full),
                    trend: self.trend_of(full),
                };
                keplerian_model_rv(&params, t, inst, out)
                    .map_err(|e| ModelError::Evaluation(e.to_string()))
            }
            _ => DYNAMICAL_SCRATCH.with(|scratch| {
                let scratch = &mut *scratch.borrow_mut();
                self.fill_dynamical_params(full, &mut scratch.params)?;
                self.dynamics
                    .star_rv(&scratch.params, t, inst, &mut scratch.ws, out)
                    .map_err(|e| ModelError::Evaluation(e.to_string()))
            }),
        }
    }

    /// For a dynamical model whose Wisdom–Holman step is automatic, the
    /// step (d) the integrator picks for the system at `full` (the
    /// integrator's default rule, [`crate::nbody::wisdom_holman`]); `None`
    /// for the Keplerian model, a given step or Gauss–Radau.
    pub fn automatic_wh_step(&self, full: &[f64]) -> Result<Option<f64>, ModelError> {
        let IntegratorChoice::WisdomHolman {
            step: None,
            corrector,
        } = self.dynamics.integrator
        else {
            return Ok(None);
        };
        if self.kind == ModelKind::Keplerian {
            return Ok(None);
        }
        let mut params = DynamicalParams {
            star_mass: self.star_mass,
            planets: Vec::with_capacity(self.planets.len()),
            offsets: Vec::with_capacity(self.offsets.len()),
            trend: DynTrend::default(),
        };
        self.fill_dynamical_params(full, &mut params)?;
        let eval = |e: String| ModelError::Evaluation(e);
        let mut ws = DynamicalWorkspace::default();
        self.dynamics
            .build_system(&params, &mut ws)
            .map_err(|e| eval(e.to_string()))?;
        let settings = WhSettings {
            step: None,
            corrector,
            events: self.dynamics.events,
            ..WhSettings::default()
        };
        let wh = WisdomHolman::new(ws.system(), settings).map_err(|e| eval(e.to_string()))?;
        Ok(Some(wh.step()))
    }

    /// A copy of the model whose automatic Wisdom–Holman step is resolved
    /// at `full` and then held fixed (unchanged copy otherwise). With the
    /// automatic rule the step follows the parameters, so the number of
    /// steps to an epoch jumps as they move and the likelihood is only
    /// piecewise continuous (jumps of the size of the integration error);
    /// a fixed step keeps it smooth for derivatives and optimisers.
    pub fn with_fixed_wh_step(&self, full: &[f64]) -> Result<RvModel, ModelError> {
        let mut out = self.clone();
        if let (Some(h), IntegratorChoice::WisdomHolman { corrector, .. }) =
            (self.automatic_wh_step(full)?, self.dynamics.integrator)
        {
            out.dynamics.integrator = IntegratorChoice::WisdomHolman {
                step: Some(h),
                corrector,
            };
        }
        Ok(out)
    }

    /// A copy of the model with the Wisdom–Holman step set to `step` (days)
    /// when it is `Some` and the model integrates with Wisdom–Holman: the
    /// way to evaluate a model exactly as a fit that held its step fixed
    /// did ([`crate::fit::best_fit::FitResult::wh_step`]).
    pub fn with_wh_step(&self, step: Option<f64>) -> RvModel {
        let mut out = self.clone();
        if let (Some(h), IntegratorChoice::WisdomHolman { corrector, .. }) =
            (step, self.dynamics.integrator)
        {
            out.dynamics.integrator = IntegratorChoice::WisdomHolman {
                step: Some(h),
                corrector,
            };
        }
        out
    }

    /// For a dynamical model whose Wisdom–Holman step is automatic, the
    /// longest step from the ladder [`STEP_LADDER`] (multiples of the
    /// automatic step h₀, [`Self::automatic_wh_step`]) whose RV error at the
    /// observed epochs, at the parameters `full`, meets `accuracy`; `None`
    /// when the model is Keplerian, integrates with Gauss–Radau or already
    /// has a given step.
    ///
    /// **Error estimate.** Each rung h is compared with a reference run of
    /// the same integrator (same corrector) at h_f = h₀/8, a quarter of the
    /// shortest rung. For a method whose error is e(h) = C h^p with p ≥ 2
    /// (the plain map's O(ε h²) error and its O(ε² h²) phase drift; higher p
    /// with correctors, Wisdom, Holman & Touma 1996), |v_h − v_f| ≥
    /// e(h) (1 − (h_f/h)^p) for errors of one sign, so the estimate
    /// |v_h − v_f| / (1 − (h_f/h)²) bounds e(h) for any p ≥ 2. This is a
    /// step-doubling (Richardson-type) estimate; the test
    /// tests/fit_wh_step.rs checks it against Gauss–Radau at round-off.
    ///
    /// **Rule.** Climbing the ladder from the shortest rung, a rung passes
    /// when (i) its largest estimated error over the epochs is at most
    /// [`StepAccuracy::error_fraction`] × the smallest quoted error and
    /// (ii) the whitened error norm √Σ(δ_i/σ_i)² is at most
    /// [`StepAccuracy::whitened_norm`]. (ii) bounds what the error can do to
    /// a least-squares fit: in the linear regime a residual perturbation w
    /// (whitened) shifts parameter j by (JᵀJ)⁻¹Jᵀw, whose size is at most
    /// σ_j ‖w‖ (Cauchy–Schwarz on the projection), so every fitted
    /// parameter moves by at most `whitened_norm` standard errors. The
    /// climb stops at the first rung that fails (WH errors need not be
    /// monotone near step resonances, Rauch & Holman 1999, from memory), and
    /// the last passing rung is taken. If even the shortest rung fails it
    /// is taken and [`WhStepChoice::meets_tolerance`] is false.
    ///
    /// **Cap.** Rungs above the pericentre-passage time of the innermost
    /// (most demanding) orbit, T_q = (P/2π)(1 − e)^{3/2}/(1 + e)^{1/2}
    /// (the time scale the automatic rule resolves with P/20 per circular
    /// orbit, i.e. h₀ = (2π/20) T_q), are never tried: the ladder stops at
    /// 3 h₀ < (10/π) h₀ = T_q. The Wisdom–Holman map loses accuracy
    /// abruptly and can become unstable once the step is not small against
    /// the pericentre passage (Wisdom 2015, AJ 150, 127; Rauch & Holman
    /// 1999, AJ 117, 1087 on step-size resonances; both from memory), and
    /// an RV error measured at one parameter vector would not protect a
    /// fit or a sampler that moves to higher eccentricity. The top rung,
    /// 3 h₀ = 0.94 T_q, is still shorter than one pericentre passage.
    pub fn accuracy_wh_step(
        &self,
        full: &[f64],
        accuracy: &StepAccuracy,
    ) -> Result<Option<WhStepChoice>, ModelError> {
        let Some(h0) = self.automatic_wh_step(full)? else {
            return Ok(None);
        };
        self.accuracy_wh_step_from(full, h0, accuracy)
    }

    /// [`Self::accuracy_wh_step`] with the ladder built on a given base
    /// step `h0` (days) instead of the automatic step at `full` (a fit
    /// passes the automatic step it held, so that rung 1 is that step).
    /// `None` for the Keplerian model and for Gauss–Radau; a given step of
    /// the model is overridden by the rungs.
    pub fn accuracy_wh_step_from(
        &self,
        full: &[f64],
        h0: f64,
        accuracy: &StepAccuracy,
    ) -> Result<Option<WhStepChoice>, ModelError> {
        if self.kind == ModelKind::Keplerian
            || !matches!(
                self.dynamics.integrator,
                IntegratorChoice::WisdomHolman { .. }
            )
        {
            return Ok(None);
        }
        if !(h0 > 0.0 && h0.is_finite()) {
            return Err(ModelError::Evaluation(format!(
                "step accuracy: base step {h0} d must be positive"
            )));
        }
        let bad = |s: &str| ModelError::Evaluation(s.to_string());
        if !(accuracy.error_fraction > 0.0 && accuracy.whitened_norm > 0.0) {
            return Err(bad(
                "step accuracy: the error fraction and the whitened norm must be positive",
            ));
        }
        let min_err = self.obs.err.iter().copied().fold(f64::INFINITY, f64::min);
        if !(min_err > 0.0 && min_err.is_finite()) {
            return Err(bad("step accuracy: the data need positive, finite errors"));
        }
        let tolerance = accuracy.error_fraction * min_err;
        let n = self.obs.len();
        let h_ref = STEP_LADDER[0] * h0 / 4.0;
        let mut reference = vec![0.0; n];
        self.with_wh_step(Some(h_ref))
            .model_rv(full, &mut reference)?;
        let mut trial = vec![0.0; n];
        let mut chosen: Option<WhStepChoice> = None;
        for &factor in STEP_LADDER {
            let h = factor * h0;
            if self
                .with_wh_step(Some(h))
                .model_rv(full, &mut trial)
                .is_err()
            {
                break;
            }
            let rho = h_ref / h;
            let inflate = 1.0 / (1.0 - rho * rho);
            let (mut max_err, mut norm2) = (0.0f64, 0.0);
            for ((a, b), s) in trial.iter().zip(&reference).zip(&self.obs.err) {
                let d = (a - b).abs() * inflate;
                max_err = max_err.max(d);
                norm2 += (d / s) * (d / s);
            }
            let whitened_error = norm2.sqrt();
            let meets = max_err <= tolerance && whitened_error <= accuracy.whitened_norm;
            if !meets && chosen.is_some() {
                break;
            }
            chosen = Some(WhStepChoice {
                step: h,
                automatic_step: h0,
                factor,
                max_rv_error: max_err,
                whitened_error,
                tolerance,
                meets_tolerance: meets,
            });
            if !meets {
                break;
            }
        }
        chosen
            .map(Some)
            .ok_or_else(|| bad("step accuracy: the model could not be evaluated at any rung"))
    }

    /// Residuals data − model (m/s) into `out`.
    pub fn residuals(&self, full: &[f64], out: &mut [f64]) -> Result<(), ModelError> {
        self.model_rv(full, out)?;
        for (o, &v) in out.iter_mut().zip(&self.obs.rv) {
            *o = v - *o;
        }
        Ok(())
    }

    /// ln L of a full parameter vector (−∞ when the model cannot be
    /// evaluated).
    pub fn ln_likelihood(&self, full: &[f64]) -> f64 {
        self.with_residuals(full, |r, jit| {
            if jit.iter().any(|&j| !(j >= 0.0)) {
                return f64::NEG_INFINITY;
            }
            ln_likelihood(r, &self.obs.err, &self.obs.inst, jit)
        })
        .unwrap_or(f64::NEG_INFINITY)
    }

    /// χ² of a full parameter vector with its jitters.
    pub fn chi_square(&self, full: &[f64]) -> f64 {
        self.with_residuals(full, |r, jit| {
            chi_square(r, &self.obs.err, &self.obs.inst, jit)
        })
        .unwrap_or(f64::INFINITY)
    }

    /// `f(residuals, jitters)` with both in this thread's buffers (no
    /// allocation once sized); `None` when the model cannot be evaluated.
    fn with_residuals(&self, full: &[f64], f: impl FnOnce(&[f64], &[f64]) -> f64) -> Option<f64> {
        LIKELIHOOD_SCRATCH.with(|scratch| {
            let scratch = &mut *scratch.borrow_mut();
            scratch.resid.resize(self.obs.len(), 0.0);
            self.residuals(full, &mut scratch.resid).ok()?;
            scratch.jitter.clear();
            scratch.jitter.extend(self.jitters.iter().map(|&i| full[i]));
            Some(f(&scratch.resid, &scratch.jitter))
        })
    }

    /// ln posterior (up to a constant) at an unconstrained free vector `u`:
    /// ln L + ln prior + ln |dx/du|. −∞ outside the support.
    pub fn ln_posterior_unconstrained(&self, u: &[f64]) -> f64 {
        let mut full = self.params.start_full();
        let Ok(ln_jac) = self.params.fill_full(u, &mut full) else {
            return f64::NEG_INFINITY;
        };
        let lp = self.params.ln_prior(&full);
        if !lp.is_finite() {
            return f64::NEG_INFINITY;
        }
        let ll = self.ln_likelihood(&full);
        if !ll.is_finite() {
            return f64::NEG_INFINITY;
        }
        ll + lp + ln_jac
    }
}

/// Multiples of the automatic Wisdom–Holman step tried by
/// [`RvModel::accuracy_wh_step`], shortest first. The top, 3, stays below
/// the pericentre-passage cap 10/π ≈ 3.18 (see that function).
pub const STEP_LADDER: &[f64] = &[0.5, 1.0, 1.25, 1.5, 1.75, 2.0, 2.5, 3.0];

/// The accuracy a fit asks of its fixed Wisdom–Holman step
/// ([`RvModel::accuracy_wh_step`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct StepAccuracy {
    /// Largest RV error at any epoch, as a fraction of the smallest quoted
    /// measurement error (default 0.01: 1 %, i.e. 2 cm/s for 2 m/s data).
    pub error_fraction: f64,
    /// Largest whitened error norm √Σ(δ_i/σ_i)² (default 0.1: no fitted
    /// parameter moves by more than 0.1 σ in the linear regime).
    pub whitened_norm: f64,
}

impl Default for StepAccuracy {
    fn default() -> Self {
        StepAccuracy {
            error_fraction: 0.01,
            whitened_norm: 0.1,
        }
    }
}

/// The Wisdom–Holman step chosen by [`RvModel::accuracy_wh_step`] and its
/// estimated RV error at the data epochs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct WhStepChoice {
    /// The chosen step (d).
    pub step: f64,
    /// The automatic step h₀ of the integrator's rule (d).
    pub automatic_step: f64,
    /// step / automatic_step (a rung of [`STEP_LADDER`]).
    pub factor: f64,
    /// Estimated largest RV error over the epochs (m/s).
    pub max_rv_error: f64,
    /// Estimated whitened error norm √Σ(δ_i/σ_i)².
    pub whitened_error: f64,
    /// The per-epoch tolerance (m/s): error fraction × smallest error.
    pub tolerance: f64,
    /// Whether the step meets both criteria (false only when even the
    /// shortest rung fails; that rung is then returned).
    pub meets_tolerance: bool,
}

/// A starting guess for one planet, used to lay out a parameter set with
/// default priors.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanetGuess {
    /// Planet name (used in parameter names).
    pub name: String,
    /// Period in days.
    pub period: f64,
    /// Semi-amplitude in m/s.
    pub semi_amplitude: f64,
    /// Eccentricity.
    pub eccentricity: f64,
    /// ω⋆ in degrees.
    pub omega_star_deg: f64,
    /// Mean longitude λ = M + ω_p + Ω at the reference epoch, degrees.
    pub mean_longitude_deg: f64,
    /// Inclination in degrees (90 = edge-on).
    pub inclination_deg: f64,
    /// Node difference ΔΩ in degrees (ignored for the innermost planet).
    pub node_difference_deg: f64,
}

/// The parameters of `kind` with default priors around the guesses:
/// period log-uniform on [P/2, 2P]; K uniform on [0, max(10 K, 100)] m/s;
/// √e cos ω⋆, √e sin ω⋆ uniform on [−1, 1] (e < 1 enforced by the model);
/// mean longitude periodic on [0°, 360°); inclination uniform on
/// [1°, 179°]; shared sin i uniform on [0.05, 1]; ΔΩ periodic on
/// [−180°, 180°); offsets uniform on ±(|mean RV| + 100 × RMS + 1000) m/s;
/// jitters uniform on [0, 10 × RMS + 10] m/s, starting at the median error
/// / 2; trend terms unbounded (Gaussian, wide). Planets must be given in
/// order of period.
pub fn default_parameters(
    kind: ModelKind,
    planets: &[PlanetGuess],
    obs: &Observations,
    trend: TrendKind,
) -> Result<ParameterSet, ParamError> {
    use super::params::{Parameter, Prior};
    let free = |name: String, value: f64, prior: Prior| Parameter {
        name,
        value,
        prior,
        fixed: false,
    };
    let n = obs.len().max(1) as f64;
    let mean = obs.rv.iter().sum::<f64>() / n;
    let rms = (obs.rv.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n).sqrt();
    let mut errs = obs.err.clone();
    errs.sort_by(f64::total_cmp);
    let med_err = errs.get(errs.len() / 2).copied().unwrap_or(1.0);
    let mut out = Vec::new();
    for (k, p) in planets.iter().enumerate() {
        let nm = &p.name;
        let (sc, ss) =
            super::params::sqrt_basis_from_ecc_omega(p.eccentricity, p.omega_star_deg.to_radians());
        out.push(free(
            format!("{nm}.period"),
            p.period,
            Prior::LogUniform {
                lower: 0.5 * p.period,
                upper: 2.0 * p.period,
            },
        ));
        out.push(free(
            format!("{nm}.semi_amplitude"),
            p.semi_amplitude,
            Prior::Uniform {
                lower: 0.0,
                upper: (10.0 * p.semi_amplitude).max(100.0),
            },
        ));
        out.push(free(
            format!("{nm}.sqrt_e_cos_w"),
            sc,
            Prior::Uniform {
                lower: -1.0,
                upper: 1.0,
            },
        ));
        out.push(free(
            format!("{nm}.sqrt_e_sin_w"),
            ss,
            Prior::Uniform {
                lower: -1.0,
                upper: 1.0,
            },
        ));
        out.push(free(
            format!("{nm}.mean_longitude"),
            p.mean_longitude_deg.rem_euclid(360.0),
            Prior::Periodic {
                lower: 0.0,
                upper: 360.0,
            },
        ));
        if kind == ModelKind::ThreeDimensional {
            out.push(free(
                format!("{nm}.inclination"),
                p.inclination_deg.clamp(1.0, 179.0),
                Prior::Uniform {
                    lower: 1.0,
                    upper: 179.0,
                },
            ));
            if k > 0 {
                out.push(free(
                    format!("{nm}.node_difference"),
                    (p.node_difference_deg + 180.0).rem_euclid(360.0) - 180.0,
                    Prior::Periodic {
                        lower: -180.0,
                        upper: 180.0,
                    },
                ));
            }
        }
    }
    if kind == ModelKind::CoplanarSinI {
        let s = planets
            .first()
            .map_or(1.0, |p| p.inclination_deg.to_radians().sin().abs());
        out.push(free(
            "sin_i".into(),
            s.clamp(0.05, 1.0),
            Prior::Uniform {
                lower: 0.05,
                upper: 1.0,
            },
        ));
    }
    let off = mean.abs() + 100.0 * rms + 1000.0;
    for (i, name) in obs.instruments.iter().enumerate() {
        let pts: Vec<f64> = obs
            .rv
            .iter()
            .zip(&obs.inst)
            .filter(|(_, k)| **k == i)
            .map(|(v, _)| *v)
            .collect();
        let m = if pts.is_empty() {
            0.0
        } else {
            pts.iter().sum::<f64>() / pts.len() as f64
        };
        out.push(free(
            format!("{name}.offset"),
            m,
            Prior::Uniform {
                lower: -off,
                upper: off,
            },
        ));
        out.push(free(
            format!("{name}.jitter"),
            0.5 * med_err,
            Prior::Uniform {
                lower: 0.0,
                upper: 10.0 * rms + 10.0,
            },
        ));
    }
    let wide = |name: &str, sigma: f64| {
        free(
            name.into(),
            0.0,
            Prior::Gaussian {
                mean: 0.0,
                sigma,
                lower: None,
                upper: None,
            },
        )
    };
    match trend {
        TrendKind::None => {}
        TrendKind::Linear => out.push(wide("trend.slope", 1e3)),
        TrendKind::Quadratic => {
            out.push(wide("trend.slope", 1e3));
            out.push(wide("trend.curvature", 1e3));
        }
    }
    ParameterSet::new(out)
}

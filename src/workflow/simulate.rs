//! Simulated RVs of a system from a run file's star and planets at chosen
//! epochs: the N-body model (default) or the sum of Keplerians, with
//! optional Gaussian noise from a seed, as an RV table.
//!
//! The planets' starting elements are read as osculating (Jacobi) elements
//! at the run file's reference epoch (DESIGN §3), masses and
//! semi-amplitudes converted through the exact mass function
//! ([`crate::config::planet_guesses`]). No instrument offset or trend is
//! added: the RVs are the star's barycentric velocity along +Z (positive:
//! receding), in m/s.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use serde::{Deserialize, Serialize};

use crate::config::{RunFile, SetupError, planet_guesses};
use crate::model::dynamical::{
    DynamicalError, DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace,
    IntegratorChoice, Trend as DynTrend,
};
use crate::model::keplerian::{
    KeplerianError, KeplerianParams, PlanetSignal, Trend, keplerian_model_rv,
};
use crate::units::R_SUN_AU;

/// Which model the RVs come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum SimulationModel {
    /// Sum of independent Keplerians with the run file's elements.
    Keplerian,
    /// N-body integration from the run file's elements at the reference epoch.
    #[default]
    Dynamical,
}

/// Settings of a simulation.
#[derive(Debug, Clone, PartialEq)]
pub struct SimulateSettings {
    /// The model.
    pub model: SimulationModel,
    /// Integrator of the dynamical model (default Gauss–Radau at
    /// tolerance 1e-9, which reaches round-off).
    pub integrator: IntegratorChoice,
    /// Gaussian noise σ (m/s) added to every RV; `None` for exact RVs.
    pub noise: Option<f64>,
    /// Seed of the noise (ChaCha8).
    pub seed: u64,
    /// Instrument label written in the table.
    pub instrument: String,
    /// Error column of exact RVs (m/s, > 0, so that the table can be read
    /// back and fitted); with noise the column holds the noise σ.
    pub nominal_error: f64,
}

impl Default for SimulateSettings {
    fn default() -> Self {
        SimulateSettings {
            model: SimulationModel::Dynamical,
            integrator: IntegratorChoice::GaussRadau { tolerance: 1e-9 },
            noise: None,
            seed: 1,
            instrument: "SIM".into(),
            nominal_error: 1.0,
        }
    }
}

/// Why a simulation failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SimulateError {
    /// The run file's planets could not be turned into elements.
    #[error(transparent)]
    Setup(#[from] SetupError),
    /// The run file lists no planets.
    #[error("the run file lists no planets to simulate")]
    NoPlanets,
    /// No epochs, or an epoch that is not finite.
    #[error("{0}")]
    Epochs(String),
    /// The noise σ or the nominal error is not positive and finite.
    #[error("noise sigma and nominal error must be positive and finite, got {0}")]
    Noise(f64),
    /// The instrument label is empty or holds white space or a comma.
    #[error("instrument label '{0}' must be non-empty without spaces, commas or '#'")]
    Instrument(String),
    /// The N-body model failed (e.g. a close encounter stopped it).
    #[error(transparent)]
    Dynamical(#[from] DynamicalError),
    /// The Keplerian model refused the parameters.
    #[error(transparent)]
    Keplerian(#[from] KeplerianError),
}

/// A simulated RV table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SimulatedRv {
    /// Epochs (days), as given.
    pub time: Vec<f64>,
    /// RVs (m/s), with noise if asked for.
    pub rv: Vec<f64>,
    /// Error column: the noise σ, or the nominal error for exact RVs.
    pub err: Vec<f64>,
    /// Instrument label.
    pub instrument: String,
    /// Reference epoch of the elements (days).
    pub reference_epoch: f64,
    /// Which model.
    pub model: SimulationModel,
}

/// Epochs from `start` to `end` (inclusive, days) every `step` days.
pub fn epochs_between(start: f64, end: f64, step: f64) -> Result<Vec<f64>, SimulateError> {
    let ok = start.is_finite() && end.is_finite() && step.is_finite() && step > 0.0;
    if !ok || end < start {
        return Err(SimulateError::Epochs(format!(
            "need finite start ≤ end and step > 0, got start {start}, end {end}, step {step}"
        )));
    }
    let n = ((end - start) / step + 1e-9).floor() as usize + 1;
    if n > 10_000_000 {
        return Err(SimulateError::Epochs(format!(
            "{n} epochs is more than 10^7; use a larger step"
        )));
    }
    Ok((0..n).map(|k| start + step * k as f64).collect())
}

/// Epochs from a text of one epoch (days) a line; `#` starts a comment,
/// blank lines are skipped. `name` names the text in messages.
pub fn parse_epochs(text: &str, name: &str) -> Result<Vec<f64>, SimulateError> {
    let mut out = Vec::new();
    for (k, line) in text.lines().enumerate() {
        let body = line.split('#').next().unwrap_or("").trim();
        if body.is_empty() {
            continue;
        }
        let t: f64 = body.parse().map_err(|_| {
            SimulateError::Epochs(format!("{name}:{}: '{body}' is not an epoch", k + 1))
        })?;
        if !t.is_finite() {
            return Err(SimulateError::Epochs(format!(
                "{name}:{}: epoch '{body}' is not finite",
                k + 1
            )));
        }
        out.push(t);
    }
    if out.is_empty() {
        return Err(SimulateError::Epochs(format!("{name}: no epochs")));
    }
    Ok(out)
}

/// RVs of the run file's star and planets at `epochs` (days; any order).
/// The reference epoch is the run file's, else the midpoint of the epochs
/// rounded to a whole day.
pub fn simulate(
    run: &RunFile,
    epochs: &[f64],
    settings: &SimulateSettings,
    file: &str,
) -> Result<SimulatedRv, SimulateError> {
    if run.planets.is_empty() {
        return Err(SimulateError::NoPlanets);
    }
    if epochs.is_empty() || epochs.iter().any(|t| !t.is_finite()) {
        return Err(SimulateError::Epochs(
            "epochs must be finite and at least one".into(),
        ));
    }
    for s in settings.noise.into_iter().chain([settings.nominal_error]) {
        if !(s > 0.0 && s.is_finite()) {
            return Err(SimulateError::Noise(s));
        }
    }
    let label = &settings.instrument;
    if label.is_empty() || label.contains(|c: char| c.is_whitespace() || c == ',' || c == '#') {
        return Err(SimulateError::Instrument(label.clone()));
    }
    let (lo, hi) = epochs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &t| {
            (a.min(t), b.max(t))
        });
    let t_ref = run.reference_epoch.unwrap_or((0.5 * (lo + hi)).round());
    let guesses = planet_guesses(run, t_ref, file)?;
    let inst = vec![0; epochs.len()];
    let mut rv = vec![0.0; epochs.len()];
    match settings.model {
        SimulationModel::Dynamical => {
            let params = DynamicalParams {
                star_mass: run.star.mass,
                planets: guesses
                    .iter()
                    .map(|g| DynamicalPlanet {
                        period: g.period,
                        k: g.semi_amplitude,
                        e: g.eccentricity,
                        omega_star: g.omega_star_deg.to_radians(),
                        mean_anomaly: mean_anomaly_of(g).to_radians(),
                        inc: g.inclination_deg.to_radians(),
                        delta_node: g.node_difference_deg.to_radians(),
                    })
                    .collect(),
                offsets: vec![0.0],
                trend: DynTrend::default(),
            };
            let mut model = DynamicalModel::new(t_ref);
            model.integrator = settings.integrator;
            model.star_radius = run.star.radius.map_or(0.0, |r| r * R_SUN_AU);
            model.star_rv(
                &params,
                epochs,
                &inst,
                &mut DynamicalWorkspace::default(),
                &mut rv,
            )?;
        }
        SimulationModel::Keplerian => {
            let params = KeplerianParams {
                t_ref,
                planets: guesses
                    .iter()
                    .map(|g| PlanetSignal {
                        period: g.period,
                        semi_amplitude: g.semi_amplitude,
                        eccentricity: g.eccentricity,
                        omega_star: g.omega_star_deg.to_radians(),
                        mean_anomaly_ref: mean_anomaly_of(g).to_radians(),
                    })
                    .collect(),
                offsets: vec![0.0],
                trend: Trend::None,
            };
            keplerian_model_rv(&params, epochs, &inst, &mut rv)?;
        }
    }
    let err = match settings.noise {
        Some(sigma) => {
            let mut rng = ChaCha8Rng::seed_from_u64(settings.seed);
            for v in &mut rv {
                let z: f64 = StandardNormal.sample(&mut rng);
                *v += sigma * z;
            }
            vec![sigma; epochs.len()]
        }
        None => vec![settings.nominal_error; epochs.len()],
    };
    Ok(SimulatedRv {
        time: epochs.to_vec(),
        rv,
        err,
        instrument: label.clone(),
        reference_epoch: t_ref,
        model: settings.model,
    })
}

/// Mean anomaly (deg) of a guess: M = λ − ω_p − ΔΩ with ω_p = ω⋆ + 180°.
fn mean_anomaly_of(g: &crate::fit::models::PlanetGuess) -> f64 {
    g.mean_longitude_deg - g.omega_star_deg - 180.0 - g.node_difference_deg
}

impl SimulatedRv {
    /// The table as text: a `#` comment, a header `time rv err instrument`
    /// and one line per epoch (time to 1e-6 d, RV and error to 1e-4 m/s).
    /// The table can be read back by [`crate::data::parse_table`].
    pub fn to_table(&self) -> String {
        let mut s = format!(
            "# simulated by apsidal ({:?} model, reference epoch {}); rv, err in m/s\n\
             time rv err instrument\n",
            self.model, self.reference_epoch
        );
        for k in 0..self.time.len() {
            s += &format!(
                "{:.6} {:.4} {:.4} {}\n",
                self.time[k], self.rv[k], self.err[k], self.instrument
            );
        }
        s
    }
}

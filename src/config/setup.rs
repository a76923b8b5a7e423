//! From a validated run file and its data to a fittable model.

use crate::data::Dataset;
use crate::fit::models::{
    ModelError, ModelKind, Observations, PlanetGuess, RvModel, default_parameters,
};
use crate::fit::params::{ParamError, Parameter, ParameterSet, Prior};
use crate::kepler::{periastron_from_conjunction, planet_mass, semi_amplitude};
use crate::units::{earth_to_sun, jupiter_to_sun};

use super::sections::IntegratorChoice;
use super::types::{Phase, PlanetStart, RunFile, Signal};
use crate::model::dynamical::IntegratorChoice as DynIntegrator;
use crate::nbody::wisdom_holman::Corrector;

/// Why a model could not be set up from a run file.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SetupError {
    /// A prior override names a parameter the model does not have.
    #[error(
        "{file}: fit.priors[{index}].parameter: the {kind:?} model has no parameter '{name}' (it has: {known})"
    )]
    UnknownParameter {
        /// Run file name.
        file: String,
        /// Index of the override.
        index: usize,
        /// The name given.
        name: String,
        /// The model.
        kind: ModelKind,
        /// The names it has.
        known: String,
    },
    /// A planet's mass and semi-amplitude could not be converted.
    #[error("{file}: planets: planet '{planet}': {why}")]
    Planet {
        /// Run file name.
        file: String,
        /// Planet name.
        planet: String,
        /// What failed.
        why: String,
    },
    /// A parameter or prior was refused.
    #[error("{file}: fit.priors: {source}")]
    Param {
        /// Run file name.
        file: String,
        /// The refusal.
        #[source]
        source: ParamError,
    },
    /// The model could not be laid out.
    #[error("{file}: {source}")]
    Model {
        /// Run file name.
        file: String,
        /// The refusal.
        #[source]
        source: ModelError,
    },
}

/// The dataset as the fitting layer takes it.
pub fn observations_of(data: &Dataset) -> Observations {
    Observations {
        t: data.time().to_vec(),
        rv: data.rv().to_vec(),
        err: data.err().to_vec(),
        inst: data.instrument_of().to_vec(),
        instruments: data
            .instruments()
            .iter()
            .map(|i| i.name().to_string())
            .collect(),
    }
}

/// Starting guesses of the planets (ordered by period) at `t_ref`, with
/// masses turned into semi-amplitudes through the exact mass function
/// with Jacobi interior masses, and every phase into a mean longitude
/// λ = M + ω_p + Ω (degrees).
pub fn planet_guesses(
    run: &RunFile,
    t_ref: f64,
    file: &str,
) -> Result<Vec<PlanetGuess>, SetupError> {
    let mut planets: Vec<&PlanetStart> = run.planets.iter().collect();
    planets.sort_by(|a, b| a.period.total_cmp(&b.period));
    let mut interior = run.star.mass;
    let mut out = Vec::with_capacity(planets.len());
    for (k, p) in planets.iter().enumerate() {
        let fail = |why: String| SetupError::Planet {
            file: file.to_string(),
            planet: p.name.clone(),
            why,
        };
        let inc = p.inclination.unwrap_or(90.0);
        let sin_i = inc.to_radians().sin();
        let node = if k == 0 {
            0.0
        } else {
            p.node_difference.unwrap_or(0.0)
        };
        let mass_of = |m: f64| {
            semi_amplitude(m, p.period, p.eccentricity, sin_i, interior)
                .map(|kk| (kk, m))
                .ok_or_else(|| fail(format!("cannot turn mass {m} M☉ into a semi-amplitude")))
        };
        let (k_m_s, mass) = match p.signal {
            Signal::SemiAmplitude(kk) => {
                let m = planet_mass(kk, p.period, p.eccentricity, sin_i.max(1e-6), interior)
                    .ok_or_else(|| {
                        fail(format!("cannot solve the mass function for K = {kk} m/s"))
                    })?;
                (kk, m)
            }
            Signal::MassJupiter(m) => mass_of(jupiter_to_sun(m))?,
            Signal::MassEarth(m) => mass_of(earth_to_sun(m))?,
        };
        interior += mass;
        let omega_p = p.omega_star + 180.0;
        let mean_anomaly = match p.phase {
            Phase::MeanAnomaly(m) => m,
            Phase::MeanLongitude(l) => l - omega_p - node,
            Phase::PeriastronTime(tp) => 360.0 * (t_ref - tp) / p.period,
            Phase::ConjunctionTime(tc) => {
                let tp = periastron_from_conjunction(
                    tc,
                    p.period,
                    p.eccentricity,
                    p.omega_star.to_radians(),
                );
                360.0 * (t_ref - tp) / p.period
            }
        };
        out.push(PlanetGuess {
            name: p.name.clone(),
            period: p.period,
            semi_amplitude: k_m_s,
            eccentricity: p.eccentricity,
            omega_star_deg: p.omega_star,
            mean_longitude_deg: (mean_anomaly + omega_p + node).rem_euclid(360.0),
            inclination_deg: inc,
            node_difference_deg: node,
        });
    }
    Ok(out)
}

/// The model `kind` for a run file and its data: default priors around
/// the run file's starting values, then the run file's prior overrides.
/// `file` names the run file in errors.
pub fn build_model(
    run: &RunFile,
    data: &Dataset,
    kind: ModelKind,
    file: &str,
) -> Result<RvModel, SetupError> {
    let obs = observations_of(data);
    let t_ref = run
        .reference_epoch
        .unwrap_or_else(|| data.suggested_reference_epoch());
    let guesses = planet_guesses(run, t_ref, file)?;
    let fit = run.fit.clone().unwrap_or_default();
    let defaults = default_parameters(kind, &guesses, &obs, fit.trend).map_err(|source| {
        SetupError::Param {
            file: file.to_string(),
            source,
        }
    })?;
    let mut params: Vec<Parameter> = defaults.parameters().to_vec();
    for (index, o) in fit.priors.iter().enumerate() {
        let Some(p) = params.iter_mut().find(|p| p.name == o.parameter) else {
            return Err(SetupError::UnknownParameter {
                file: file.to_string(),
                index,
                name: o.parameter.clone(),
                kind,
                known: defaults
                    .parameters()
                    .iter()
                    .map(|p| p.name.as_str())
                    .collect::<Vec<_>>()
                    .join(", "),
            });
        };
        if let Some(prior) = o.prior {
            p.prior = prior;
            let (lo, hi) = prior.support();
            let periodic = matches!(prior, Prior::Periodic { .. });
            let inside = p.value > lo && p.value < hi;
            if !periodic && !inside {
                // Start inside the new support: its middle, or the mean.
                p.value = match prior {
                    Prior::Gaussian { mean, .. } => mean.clamp(lo, hi),
                    Prior::LogUniform { lower, upper } => (lower * upper).sqrt(),
                    _ => 0.5 * (lo + hi),
                };
            }
        }
        if let Some(v) = o.fixed {
            p.value = v;
            p.fixed = true;
        }
    }
    let set = ParameterSet::new(params).map_err(|source| SetupError::Param {
        file: file.to_string(),
        source,
    })?;
    let names: Vec<String> = guesses.iter().map(|g| g.name.clone()).collect();
    let mut model = RvModel::new(obs, kind, run.star.mass, t_ref, &names, fit.trend, set).map_err(
        |source| SetupError::Model {
            file: file.to_string(),
            source,
        },
    )?;
    model.dynamics.star_radius = run.star.radius.map_or(0.0, |r| r * crate::units::R_SUN_AU);
    model.dynamics.integrator = match fit.integrator {
        IntegratorChoice::SymplecticAuto => DynIntegrator::WisdomHolman {
            step: None,
            corrector: Corrector::Off,
        },
        IntegratorChoice::Symplectic(h) => DynIntegrator::WisdomHolman {
            step: Some(h),
            corrector: Corrector::Off,
        },
        IntegratorChoice::GaussRadau(tolerance) => DynIntegrator::GaussRadau { tolerance },
    };
    Ok(model)
}

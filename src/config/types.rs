//! Serde types of a RON run file. Every struct refuses unknown keys.
//!
//! Later issues add sections (model choice, priors, integrator, sampler)
//! as new `Option` fields of [`RunFile`], so older run files stay valid.

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

/// A whole run file: what to read, the star, the planets' starting
/// elements, the reference epoch, where to write and the seed.
///
/// Units: days, m/s, degrees, solar masses and radii, Jupiter or Earth
/// masses (see each field). Relative paths are relative to the run file's
/// folder (resolved by [`super::load_run_file`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunFile {
    /// RV tables to read (at least one).
    pub data: Vec<DataFile>,
    /// If given, the only instrument labels the tables may use; any other
    /// label is an error (guards against typos such as `VESCA`).
    #[serde(default)]
    pub instruments: Option<Vec<String>>,
    /// The host star.
    pub star: Star,
    /// Starting elements of the planets (any order; the model orders them
    /// by period). May be empty, e.g. for a periodogram-only run.
    #[serde(default)]
    pub planets: Vec<PlanetStart>,
    /// Reference epoch of the elements, in days of the data's time scale.
    /// Default: a round epoch near the middle of the data
    /// ([`crate::data::Dataset::suggested_reference_epoch`]).
    #[serde(default)]
    pub reference_epoch: Option<f64>,
    /// Output folder. Default: chosen by the caller (the command line uses
    /// a folder next to the run file).
    #[serde(default)]
    pub output: Option<PathBuf>,
    /// Seed of every random choice of the run (results are reproducible
    /// for a seed whatever the thread count). Default: chosen by the caller.
    #[serde(default)]
    pub seed: Option<u64>,
    /// What to fit and how. Default: a Keplerian fit with default priors.
    #[serde(default)]
    pub fit: Option<super::sections::FitSection>,
    /// Posterior sampling. Default: no sampling.
    #[serde(default)]
    pub sampler: Option<super::sections::SamplerSection>,
}

/// One RV table and the instrument of its lines.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DataFile {
    /// Path of the table; relative paths are relative to the run file's folder.
    pub path: PathBuf,
    /// Where the instrument label comes from. Default: [`InstrumentChoice::FromColumn`].
    #[serde(default)]
    pub instrument: InstrumentChoice,
}

/// Where a table's instrument label comes from.
#[derive(Debug, Clone, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum InstrumentChoice {
    /// From the table's 4th column.
    #[default]
    FromColumn,
    /// Every line of the table belongs to this instrument, e.g. `Named("VESKA")`.
    Named(String),
}

/// The host star.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Star {
    /// Name, for reports.
    #[serde(default)]
    pub name: Option<String>,
    /// Mass in solar masses (> 0).
    pub mass: f64,
    /// 1σ uncertainty of the mass in solar masses (> 0), propagated to the
    /// planet masses when given.
    #[serde(default)]
    pub mass_uncertainty: Option<f64>,
    /// Radius in solar radii (> 0), for collision checks.
    #[serde(default)]
    pub radius: Option<f64>,
}

/// The size of a planet's signal: its RV semi-amplitude or its mass.
///
/// A mass is the true mass when the planet's inclination is given and the
/// minimum mass m sin i (i = 90°) otherwise.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum Signal {
    /// RV semi-amplitude K in m/s (> 0).
    SemiAmplitude(f64),
    /// Mass in Jupiter masses (IAU 2015 nominal), > 0.
    MassJupiter(f64),
    /// Mass in Earth masses (IAU 2015 nominal), > 0.
    MassEarth(f64),
}

impl Signal {
    /// The number given, whatever its unit.
    pub fn value(self) -> f64 {
        match self {
            Signal::SemiAmplitude(x) | Signal::MassJupiter(x) | Signal::MassEarth(x) => x,
        }
    }
}

/// Where the planet is on its orbit at the reference epoch.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum Phase {
    /// Mean anomaly M at the reference epoch, degrees.
    MeanAnomaly(f64),
    /// Mean longitude λ = M + ϖ at the reference epoch, degrees (ϖ of the
    /// planet's orbit, Ω + ω, as in the fit parameters of DESIGN §3).
    MeanLongitude(f64),
    /// A time of periastron passage, days.
    PeriastronTime(f64),
    /// A time of inferior conjunction of the planet (transit, if it
    /// transits), days.
    ConjunctionTime(f64),
}

impl Phase {
    /// The number given, whatever its meaning.
    pub fn value(self) -> f64 {
        match self {
            Phase::MeanAnomaly(x)
            | Phase::MeanLongitude(x)
            | Phase::PeriastronTime(x)
            | Phase::ConjunctionTime(x) => x,
        }
    }
}

/// Starting osculating elements of one planet at the reference epoch
/// (Jacobi elements in the dynamical model, DESIGN §3).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlanetStart {
    /// Name, e.g. `"b"` (unique within the run file).
    pub name: String,
    /// Orbital period in days (> 0).
    pub period: f64,
    /// Semi-amplitude or mass.
    pub signal: Signal,
    /// Eccentricity, in [0, 1).
    pub eccentricity: f64,
    /// Argument of periastron of the *star's* orbit ω⋆, degrees (the
    /// planet's ω is ω⋆ + 180°).
    pub omega_star: f64,
    /// Orbital phase at the reference epoch.
    pub phase: Phase,
    /// Inclination in degrees, in [0, 180] (90 = edge-on). Default: 90.
    #[serde(default)]
    pub inclination: Option<f64>,
    /// Node difference ΔΩ = Ω − Ω₁ in degrees, relative to the innermost
    /// planet (whose own is 0 by definition). Default: 0 (coplanar nodes).
    #[serde(default)]
    pub node_difference: Option<f64>,
}

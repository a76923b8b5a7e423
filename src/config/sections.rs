//! Run-file sections for fitting and sampling.

use serde::{Deserialize, Serialize};

use crate::fit::models::{ModelKind, TrendKind};
use crate::fit::params::Prior;

/// What to fit and how (`fit: (...)` in a run file).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitSection {
    /// Models to fit, in order; the first is the starting point of the
    /// others. Default: `[Keplerian]`.
    #[serde(default = "default_models")]
    pub models: Vec<ModelKind>,
    /// Polynomial trend about the reference epoch. Default: `None`.
    #[serde(default)]
    pub trend: TrendKind,
    /// Integrator of the dynamical models. Default: Wisdom–Holman with the
    /// automatic step.
    #[serde(default)]
    pub integrator: IntegratorChoice,
    /// Priors replacing the defaults, or parameters held fixed, by
    /// parameter name (e.g. `b.period`, `VESKA.jitter`, `sin_i`).
    #[serde(default)]
    pub priors: Vec<PriorOverride>,
}

fn default_models() -> Vec<ModelKind> {
    vec![ModelKind::Keplerian]
}

impl Default for FitSection {
    fn default() -> Self {
        FitSection {
            models: default_models(),
            trend: TrendKind::None,
            integrator: IntegratorChoice::default(),
            priors: Vec::new(),
        }
    }
}

/// Which integrator the dynamical models use.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub enum IntegratorChoice {
    /// Wisdom–Holman map with its automatic step.
    #[default]
    SymplecticAuto,
    /// Wisdom–Holman map with this step in days.
    Symplectic(f64),
    /// Adaptive Gauss–Radau with this relative tolerance (e.g. 1e-9).
    GaussRadau(f64),
}

/// A prior for one named parameter, or a value to hold it at.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PriorOverride {
    /// Parameter name, e.g. `c.inclination`.
    pub parameter: String,
    /// The prior to use (its support bounds the parameter).
    #[serde(default)]
    pub prior: Option<Prior>,
    /// Hold the parameter at this value instead of fitting it.
    #[serde(default)]
    pub fixed: Option<f64>,
}

/// Posterior sampling settings (`sampler: (...)` in a run file).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SamplerSection {
    /// Number of walkers (even, ≥ 2 × free parameters). Default: 4 × free
    /// parameters rounded up to an even number.
    #[serde(default)]
    pub walkers: Option<usize>,
    /// Steps to take.
    pub steps: usize,
    /// Steps discarded at the start when samples are written. Default: a
    /// quarter of the steps.
    #[serde(default)]
    pub burn_in: Option<usize>,
    /// Keep every n-th step. Default: 1.
    #[serde(default)]
    pub thin: Option<usize>,
    /// Write a checkpoint every this many steps. Default: 50.
    #[serde(default)]
    pub checkpoint_every: Option<usize>,
}

//! Maximum-likelihood fits of the models a run file asks for, each later
//! model started from the earlier solutions, with derived quantities and
//! per-instrument residual RMS.

use serde::{Deserialize, Serialize};

use crate::config::{RunFile, SetupError, build_model};
use crate::data::Dataset;
use crate::fit::best_fit::{FitError, FitResult, FitSettings, fit_model};
use crate::fit::derived::{PlanetDerived, derive_planets};
use crate::fit::models::{ModelError, ModelKind, RvModel};

/// Why a step of the job failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum WorkflowError {
    /// The run file could not be turned into a model.
    #[error(transparent)]
    Setup(#[from] SetupError),
    /// A fit failed.
    #[error("{kind:?} fit: {source}")]
    Fit {
        /// Which model.
        kind: ModelKind,
        /// Why.
        #[source]
        source: FitError,
    },
    /// A model could not be evaluated.
    #[error(transparent)]
    Model(#[from] ModelError),
}

/// One fitted model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelFit {
    /// Which model.
    pub kind: ModelKind,
    /// The optimum and its statistics.
    pub fit: FitResult,
    /// Derived quantities per planet.
    pub planets: Vec<PlanetDerived>,
    /// Residual RMS per instrument (m/s), by name.
    pub residual_rms: Vec<(String, f64)>,
}

/// All fits of a run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitReport {
    /// Stellar mass (M☉).
    pub star_mass: f64,
    /// Reference epoch (d).
    pub t_ref: f64,
    /// The fits, in the order of the run file's `fit.models`.
    pub fits: Vec<ModelFit>,
}

/// Residual RMS per instrument (m/s) of `model` at `full`.
pub fn residual_rms(model: &RvModel, full: &[f64]) -> Result<Vec<(String, f64)>, ModelError> {
    let mut r = vec![0.0; model.obs.len()];
    model.residuals(full, &mut r)?;
    Ok(model
        .obs
        .instruments
        .iter()
        .enumerate()
        .map(|(k, name)| {
            let v: Vec<f64> = r
                .iter()
                .zip(&model.obs.inst)
                .filter(|(_, i)| **i == k)
                .map(|(x, _)| *x)
                .collect();
            let rms = if v.is_empty() {
                0.0
            } else {
                (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt()
            };
            (name.clone(), rms)
        })
        .collect())
}

/// A start for `model` from the run file's values overwritten by every
/// same-named value of earlier fits (last fit wins).
fn start_from(model: &RvModel, earlier: &[ModelFit]) -> Vec<f64> {
    let mut start = model.params.start_full();
    for prev in earlier {
        for (name, &v) in prev.fit.names.iter().zip(&prev.fit.values) {
            if let Some(i) = model.params.index_of(name) {
                if !model.params.parameters()[i].fixed {
                    start[i] = v;
                }
            }
        }
    }
    start
}

/// Fit every model the run file lists (default: Keplerian only), each
/// from the run file's starting values and from the previous solutions.
pub fn fit_run(
    run: &RunFile,
    data: &Dataset,
    file: &str,
    settings: &FitSettings,
) -> Result<FitReport, WorkflowError> {
    let kinds = run
        .fit
        .as_ref()
        .map_or_else(|| vec![ModelKind::Keplerian], |f| f.models.clone());
    let mut fits: Vec<ModelFit> = Vec::new();
    let mut t_ref = f64::NAN;
    for kind in kinds {
        let model = build_model(run, data, kind, file)?;
        t_ref = model.t_ref;
        let mut starts = vec![model.params.start_full()];
        if !fits.is_empty() {
            starts.push(start_from(&model, &fits));
        }
        let fit = fit_model(&model, &starts, settings)
            .map_err(|source| WorkflowError::Fit { kind, source })?;
        let model = model.with_wh_step(fit.wh_step);
        let planets = derive_planets(&model, &fit.values)?;
        let residual_rms = residual_rms(&model, &fit.values)?;
        fits.push(ModelFit {
            kind,
            fit,
            planets,
            residual_rms,
        });
    }
    Ok(FitReport {
        star_mass: run.star.mass,
        t_ref,
        fits,
    })
}

//! Fitting: parameters and priors, the likelihood, the models to fit,
//! optimisers, the ensemble sampler.

pub mod best_fit;
pub mod derived;
pub mod likelihood;
pub mod models;
pub mod optimise;
pub mod params;
pub mod sample;

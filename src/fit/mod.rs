//! Fitting: parameters and priors, the likelihood, optimisers, the ensemble sampler.

pub mod likelihood;
pub mod params;

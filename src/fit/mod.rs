//! Fitting: parameters and priors, optimisers, the ensemble sampler.

pub mod sample;

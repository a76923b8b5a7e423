//! RV models: parameters → the star's radial velocity at epochs.

pub mod dynamical;
pub mod keplerian;

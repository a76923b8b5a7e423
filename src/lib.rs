//! # apsidal
//!
//! Dynamical (N-body) modelling of stellar radial velocities of
//! multi-planet systems: Keplerian and N-body RV models, fitting, posterior
//! sampling, Keplerian-versus-dynamical comparison and orbital stability.
//!
//! Layers (data flows down; lower layers never import higher ones):
//! [`data`] → [`kepler`] → [`nbody`] → [`model`] → [`periodogram`] →
//! [`fit`] → [`config`]. Conventions (units, frame, RV sign, ω⋆, Jacobi
//! elements) are those of the design notes and are pinned by tests.

#![deny(missing_docs)]

pub mod atomic;
pub mod compare;
pub mod config;
pub mod data;
pub mod demo;
pub mod fit;
pub mod kepler;
pub mod model;
pub mod nbody;
pub mod periodogram;
pub mod report;
pub mod stability;
pub mod units;
pub mod workflow;

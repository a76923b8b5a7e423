//! Keplerian-versus-dynamical comparison: resonance diagnosis of integrated solutions.

pub mod resonance;

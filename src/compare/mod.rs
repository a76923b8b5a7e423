//! Keplerian-versus-dynamical comparison: statistics, resonance diagnosis,
//! secular (long-term) predictions and flags.

pub mod resonance;
pub mod secular;

//! Keplerian-versus-dynamical comparison: statistics, resonance diagnosis,
//! secular (long-term) predictions and flags.

pub mod diagnosis;
pub mod history;
pub mod resonance;
pub mod secular;

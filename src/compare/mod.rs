//! Keplerian-versus-dynamical comparison: statistics, resonance diagnosis,
//! secular (long-term) predictions and flags.

pub mod diagnosis;
pub mod flag;
pub mod history;
pub mod horizon;
pub mod report;
pub mod resonance;
pub mod secular;
pub mod statistics;

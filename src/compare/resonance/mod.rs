//! Resonance diagnosis of a pair of planets from time series of osculating
//! elements (DESIGN §5): period ratios and nearest commensurabilities
//! j:(j−k) with k ≤ 3, resonant angles φ_q and the secular angle Δϖ, their
//! libration or circulation (centre, amplitude, period), and apsidal
//! precession rates.
//!
//! Everything is a pure function of plain series ([`ElementHistory`]):
//! epochs in days, angles in radians of the planet's own orbit. No
//! integrator is involved; a caller integrates and samples, then calls
//! [`summarise_pair`] or the individual analyses.

mod angles;
mod commensurability;
mod error;
mod libration;
mod numerics;
mod precession;
mod series;
mod summary;

pub use angles::{AngleCoefficients, AngleSpec, apsidal_difference, resonant_angle};
pub use commensurability::{
    Commensurability, DEFAULT_MAX_J, MAX_J_LIMIT, MAX_ORDER, NEAR_THRESHOLD, PeriodRatios,
    commensurabilities, mean_motion, nearest_of_order, period_ratios,
};
pub use error::ResonanceError;
pub use libration::{
    AngleAnalysis, AngleRegime, CONSTANT_ANGLE_AMPLITUDE, CROSSING_HYSTERESIS, Circulation,
    Duration, Libration, MAX_SAMPLE_STEP, UndecidedReason, analyse_angle,
};
pub use precession::{
    ApsidalPrecession, MIN_PHASE_ECCENTRICITY, PrecessionRate, apsidal_precession,
};
pub use series::{ElementHistory, MIN_SAMPLES, PlanetSeries};
pub use summary::{
    AngleReport, BestAngle, CommensurabilityReport, PairResonanceSummary, SummarySettings,
    best_librating_angle, summarise_pair,
};

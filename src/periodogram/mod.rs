//! Periodograms of RV series: the generalised Lomb–Scargle (GLS) with a
//! floating mean (Zechmeister & Kürster 2009), its false-alarm probability
//! (Baluev 2008), the spectral window of the sampling, and peeling of
//! sinusoidal signals to obtain starting periods for the fits.
//!
//! Everything works on plain slices: epochs `t` (d, any day count — they are
//! shifted internally to the middle of the baseline), velocities `y` (m/s)
//! and errors `sigma` (m/s). Frequencies are in cycles per day (1/d).
//! Weights are w_i = σ_i⁻²; jitter, if wanted, is to be added to σ in
//! quadrature by the caller.

mod error;
mod fap;
mod gls;
mod grid;
mod peel;
mod series;
mod sinusoid;
mod sweep;
mod window;

pub use error::PeriodogramError;
pub use fap::{BaluevFap, baluev_fap, baluev_power_level};
pub use gls::{GlsSeries, Spectrum, fit_sinusoid, gls_power};
pub use grid::{FrequencyGrid, GridSettings, MAX_GRID_LEN};
pub use peel::{Detection, PeelOutcome, PeelSettings, PeelStop, peel_signals, refine_peak};
pub use sinusoid::Sinusoid;
pub use window::spectral_window;

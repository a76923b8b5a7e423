//! Integrated autocorrelation time with automated windowing.
//!
//! Method: Sokal (1997, "Monte Carlo Methods in Statistical Mechanics:
//! Foundations and New Algorithms", §3) as recommended for ensemble samplers
//! by Goodman & Weare (2010, §6): τ̂(M) = 1 + 2 Σ_{t=1..M} ρ̂(t), with the
//! window M the smallest one satisfying M ≥ c τ̂(M), c = 5. For an ensemble
//! the series is the walker average of a parameter at each step
//! ([`Chain::walker_mean_series`]).
//!
//! The autocovariances are direct sums, not an FFT: the crate has no FFT
//! dependency, and because the sum stops at the window (≈ c τ lags) the cost
//! is O(N · c τ), a few million multiply-adds for our chain lengths
//! (N ~ 10⁴ steps, τ ~ 10²) — milliseconds per parameter.

use super::chain::Chain;
use super::error::SampleError;

/// Sokal's window constant c = 5 (Sokal 1997, §3; Goodman & Weare 2010, §6).
pub const DEFAULT_WINDOW_C: f64 = 5.0;

/// A chain is called long enough when it is longer than this many
/// autocorrelation times (common practice; 50 τ is the usual rule for
/// ensemble samplers).
pub const RELIABLE_LENGTH_FACTOR: f64 = 50.0;

/// An integrated autocorrelation time estimate (in steps).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AutocorrTime {
    /// τ̂ at the chosen window, in steps (1 for an uncorrelated series).
    pub tau: f64,
    /// The window M (lags summed).
    pub window: usize,
    /// False if no lag below the series length satisfied M ≥ c τ̂(M); τ̂ is
    /// then a lower bound at best.
    pub window_found: bool,
    /// Length of the series.
    pub n: usize,
    /// Approximate standard error of τ̂ from the variance of the windowed
    /// estimator, τ̂ √(2(2M + 1)/N) (Sokal 1997, eq. 3.19; from memory).
    pub std_error: f64,
    /// True if the window was found and the series is longer than
    /// [`RELIABLE_LENGTH_FACTOR`] × τ̂.
    pub reliable: bool,
}

/// Integrated autocorrelation time of one series with window constant `c`.
///
/// # Errors
/// [`SampleError::BadSeries`] (index 0) for fewer than 2 points or any
/// non-finite value, [`SampleError::ZeroVariance`] (index 0) for a constant
/// series.
///
/// # Example
/// ```
/// use apsidal::fit::sample::integrated_autocorr_time;
/// // An alternating series is anti-correlated at lag 1: τ < 1.
/// let x: Vec<f64> = (0..1000).map(|i| if i % 2 == 0 { 1.0 } else { -1.0 }).collect();
/// let t = integrated_autocorr_time(&x, 5.0).unwrap();
/// assert!(t.tau < 1.0);
/// ```
pub fn integrated_autocorr_time(series: &[f64], c: f64) -> Result<AutocorrTime, SampleError> {
    autocorr_indexed(series, c, 0)
}

fn autocorr_indexed(x: &[f64], c: f64, index: usize) -> Result<AutocorrTime, SampleError> {
    let n = x.len();
    if n < 2 || x.iter().any(|v| !v.is_finite()) || !(c.is_finite() && c > 0.0) {
        return Err(SampleError::BadSeries { index });
    }
    let mean = x.iter().sum::<f64>() / n as f64;
    // Autocovariance with divisor N (the usual biased estimator, Sokal 1997
    // eq. 3.15), computed lag by lag.
    let acov = |t: usize| -> f64 {
        x[..n - t]
            .iter()
            .zip(&x[t..])
            .map(|(a, b)| (a - mean) * (b - mean))
            .sum::<f64>()
            / n as f64
    };
    let c0 = acov(0);
    // A constant series leaves only rounding noise of the mean in c0.
    if c0 <= (4.0 * f64::EPSILON * mean.abs()).powi(2) {
        return Err(SampleError::ZeroVariance { index });
    }
    let mut tau = 1.0;
    let mut window = 0;
    let mut found = false;
    for m in 1..n {
        tau += 2.0 * acov(m) / c0;
        window = m;
        if m as f64 >= c * tau {
            found = true;
            break;
        }
    }
    let std_error = tau.abs() * (2.0 * (2 * window + 1) as f64 / n as f64).sqrt();
    Ok(AutocorrTime {
        tau,
        window,
        window_found: found,
        n,
        std_error,
        reliable: found && n as f64 > RELIABLE_LENGTH_FACTOR * tau,
    })
}

impl Chain {
    /// Integrated autocorrelation time of every parameter, on the
    /// walker-averaged series from row `burn_in` on, window constant `c`
    /// (use [`DEFAULT_WINDOW_C`]).
    ///
    /// # Errors
    /// [`SampleError::BadSeries`] or [`SampleError::ZeroVariance`] with the
    /// parameter index.
    pub fn autocorr_times(&self, burn_in: usize, c: f64) -> Result<Vec<AutocorrTime>, SampleError> {
        (0..self.dim())
            .map(|p| autocorr_indexed(&self.walker_mean_series(p, burn_in), c, p))
            .collect()
    }
}

/// Burn-in and thinning suggested by the autocorrelation times of all
/// parameters: burn-in = ⌈2 · max τ⌉ steps, thinning = max(1, ⌊min τ / 2⌋)
/// (common practice for ensemble samplers; from memory). Returns `(0, 1)`
/// for an empty slice.
pub fn suggest_burn_in_and_thin(times: &[AutocorrTime]) -> (usize, usize) {
    if times.is_empty() {
        return (0, 1);
    }
    let max = times
        .iter()
        .map(|t| t.tau)
        .fold(f64::NEG_INFINITY, f64::max);
    let min = times.iter().map(|t| t.tau).fold(f64::INFINITY, f64::min);
    let burn_in = (2.0 * max.max(0.0)).ceil() as usize;
    let thin = ((0.5 * min).floor() as usize).max(1);
    (burn_in, thin)
}

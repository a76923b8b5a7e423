//! Spectral window of the sampling.

use super::series::{baseline, check_epochs, check_finite, normalised_weights, reference_epoch};
use super::sweep::sweep;
use super::{FrequencyGrid, PeriodogramError};

/// Spectral window W(f) = |Σ_i w_i e^{−2πi f t_i}|² / (Σ_i w_i)² of epochs
/// `t` (d) on `grid` (Deeming 1975, Ap&SS 36, 137 — reference from memory —
/// the window of uneven sampling; normalised so that W(0) = 1 and 0 ≤ W ≤ 1).
///
/// With `sigma` = `Some(errors)` (m/s) the weights are w_i = σ_i⁻², the
/// weighting the GLS gives the data; with `None` all w_i = 1 (the classical
/// window). Peaks of W at f ≠ 0 mark the aliases the sampling imposes
/// (1 d, 1 yr, the lunar month, …): a GLS peak at f is echoed at f ± f_alias.
///
/// ```
/// use apsidal::periodogram::{spectral_window, FrequencyGrid};
/// // Nightly sampling: the window has a peak of 1 at 1 cycle per day.
/// let t: Vec<f64> = (0..60).map(|i| i as f64).collect();
/// let grid = FrequencyGrid::new(0.0, 0.5, 3).unwrap(); // 0, 0.5, 1 1/d
/// let w = spectral_window(&t, None, &grid).unwrap();
/// assert!((w[0] - 1.0).abs() < 1e-12 && w[1] < 1e-20 && (w[2] - 1.0).abs() < 1e-9);
/// ```
pub fn spectral_window(
    t: &[f64],
    sigma: Option<&[f64]>,
    grid: &FrequencyGrid,
) -> Result<Vec<f64>, PeriodogramError> {
    let weights = match sigma {
        Some(s) => {
            check_epochs(t, s, 2)?;
            normalised_weights(s)
        }
        None => {
            if t.len() < 2 {
                return Err(PeriodogramError::TooFewPoints {
                    count: t.len(),
                    needed: 2,
                });
            }
            check_finite("epoch", t)?;
            baseline(t)?;
            vec![1.0 / t.len() as f64; t.len()]
        }
    };
    // Shifting the epochs changes only the phase of the sum, not |·|².
    let t_ref = reference_epoch(t);
    let shifted: Vec<f64> = t.iter().map(|x| x - t_ref).collect();
    let mut out = vec![0.0; grid.len()];
    sweep(&shifted, grid, &mut out, |cos, sin| {
        let (mut re, mut im) = (0.0, 0.0);
        for i in 0..cos.len() {
            re += weights[i] * cos[i];
            im += weights[i] * sin[i];
        }
        (re * re + im * im).min(1.0)
    });
    Ok(out)
}

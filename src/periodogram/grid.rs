//! Equally spaced frequency grids chosen from the sampling of the data.

use super::PeriodogramError;
use super::series::{baseline, check_finite};

/// Largest number of frequencies a grid may hold (guards against a tiny
/// minimum period or a huge oversampling filling memory).
pub const MAX_GRID_LEN: usize = 50_000_000;

/// How to choose a frequency grid from the epochs.
///
/// With baseline T = max(t) − min(t) (d):
/// * spacing Δf = 1 / (`oversampling` · T) (1/d). A peak of the GLS has a
///   width of about 1/T, so the default `oversampling` of 10 puts ten grid
///   points across it (common practice; values of 5–10 are usual);
/// * lowest frequency f_min = 1 / `longest_period`, by default 1/T (one cycle
///   over the baseline);
/// * highest frequency f_max = 1 / `shortest_period`, by default
///   1 / (2 · median positive spacing of the sorted epochs), a
///   pseudo-Nyquist frequency of uneven sampling (common practice; for RV
///   data a user minimum period such as 1 d is often better, because the
///   median spacing of clumpy sampling can be much shorter than a night).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GridSettings {
    /// Grid points per 1/T, the natural peak width (> 0; default 10).
    pub oversampling: f64,
    /// Shortest period searched (d); `None`: twice the median epoch spacing.
    pub shortest_period: Option<f64>,
    /// Longest period searched (d); `None`: the baseline T.
    pub longest_period: Option<f64>,
}

impl Default for GridSettings {
    fn default() -> Self {
        Self {
            oversampling: 10.0,
            shortest_period: None,
            longest_period: None,
        }
    }
}

/// An equally spaced frequency grid f_k = `start` + k · `step`,
/// k = 0 … `len` − 1, in cycles per day (1/d). Built only through the
/// validating constructors, so step > 0 and len ≥ 1 always hold.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct FrequencyGrid {
    start: f64,
    step: f64,
    len: usize,
}

impl FrequencyGrid {
    /// A grid from its first frequency `start` ≥ 0 (1/d), spacing `step` > 0
    /// (1/d) and number of frequencies `len` ≥ 1.
    ///
    /// ```
    /// use apsidal::periodogram::FrequencyGrid;
    /// let grid = FrequencyGrid::new(0.01, 0.001, 5).unwrap();
    /// assert!((grid.last() - 0.014).abs() < 1e-15);
    /// assert!(FrequencyGrid::new(0.01, 0.0, 5).is_err());
    /// ```
    pub fn new(start: f64, step: f64, len: usize) -> Result<Self, PeriodogramError> {
        if !(start.is_finite() && start >= 0.0) {
            return Err(PeriodogramError::InvalidSetting {
                name: "grid start frequency",
                value: start,
                reason: "must be finite and ≥ 0",
            });
        }
        if !(step.is_finite() && step > 0.0) {
            return Err(PeriodogramError::InvalidSetting {
                name: "grid step",
                value: step,
                reason: "must be finite and > 0",
            });
        }
        if len == 0 {
            return Err(PeriodogramError::EmptyGrid {
                reason: "zero frequencies requested".into(),
            });
        }
        if len > MAX_GRID_LEN {
            return Err(PeriodogramError::GridTooLarge {
                len,
                limit: MAX_GRID_LEN,
            });
        }
        Ok(Self { start, step, len })
    }

    /// The grid for epochs `t` (d) chosen by `settings` (see
    /// [`GridSettings`] for the rules): from f_min, in steps of
    /// Δf = 1/(oversampling · T), up to the last grid frequency ≤ f_max.
    ///
    /// ```
    /// use apsidal::periodogram::{FrequencyGrid, GridSettings};
    /// let t: Vec<f64> = (0..50).map(|i| 3.0 * i as f64).collect(); // T = 147 d
    /// let settings = GridSettings { shortest_period: Some(2.0), ..Default::default() };
    /// let grid = FrequencyGrid::for_epochs(&t, &settings).unwrap();
    /// assert!((grid.start() - 1.0 / 147.0).abs() < 1e-15);
    /// assert!((grid.step() - 1.0 / 1470.0).abs() < 1e-15);
    /// assert!(grid.last() <= 0.5 && grid.last() > 0.5 - grid.step());
    /// ```
    pub fn for_epochs(t: &[f64], settings: &GridSettings) -> Result<Self, PeriodogramError> {
        if t.len() < 2 {
            return Err(PeriodogramError::TooFewPoints {
                count: t.len(),
                needed: 2,
            });
        }
        check_finite("epoch", t)?;
        let span = baseline(t)?;
        let over = settings.oversampling;
        if !(over.is_finite() && over > 0.0) {
            return Err(PeriodogramError::InvalidSetting {
                name: "oversampling",
                value: over,
                reason: "must be finite and > 0",
            });
        }
        let f_min = match settings.longest_period {
            Some(p) => 1.0 / positive_period("longest period", p)?,
            None => 1.0 / span,
        };
        let f_max = match settings.shortest_period {
            Some(p) => 1.0 / positive_period("shortest period", p)?,
            None => 0.5 / median_spacing(t)?,
        };
        let step = 1.0 / (over * span);
        if f_max < f_min {
            return Err(PeriodogramError::EmptyGrid {
                reason: format!("highest frequency {f_max} 1/d is below the lowest {f_min} 1/d"),
            });
        }
        // The tiny allowance keeps an f_max that is a whole number of steps
        // away from f_min (up to rounding) inside the grid.
        let steps = ((f_max - f_min) / step * (1.0 + 1e-12)).floor();
        if steps >= MAX_GRID_LEN as f64 {
            return Err(PeriodogramError::GridTooLarge {
                len: if steps < usize::MAX as f64 {
                    steps as usize + 1
                } else {
                    usize::MAX
                },
                limit: MAX_GRID_LEN,
            });
        }
        Self::new(f_min, step, steps as usize + 1)
    }

    /// First frequency (1/d).
    pub fn start(&self) -> f64 {
        self.start
    }

    /// Spacing between neighbouring frequencies (1/d).
    pub fn step(&self) -> f64 {
        self.step
    }

    /// Number of frequencies.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Always false: a grid holds at least one frequency.
    pub fn is_empty(&self) -> bool {
        false
    }

    /// Frequency number `k` (1/d): `start + k · step`.
    pub fn frequency(&self, k: usize) -> f64 {
        self.start + self.step * k as f64
    }

    /// Highest frequency of the grid (1/d).
    pub fn last(&self) -> f64 {
        self.frequency(self.len - 1)
    }

    /// All frequencies (1/d), lowest first.
    pub fn frequencies(&self) -> Vec<f64> {
        (0..self.len).map(|k| self.frequency(k)).collect()
    }
}

fn positive_period(name: &'static str, p: f64) -> Result<f64, PeriodogramError> {
    if p.is_finite() && p > 0.0 {
        Ok(p)
    } else {
        Err(PeriodogramError::InvalidSetting {
            name,
            value: p,
            reason: "must be finite and > 0 d",
        })
    }
}

/// Median of the positive spacings between sorted epochs (d); repeated
/// epochs are skipped.
fn median_spacing(t: &[f64]) -> Result<f64, PeriodogramError> {
    let mut sorted = t.to_vec();
    sorted.sort_by(f64::total_cmp);
    let mut gaps: Vec<f64> = sorted
        .windows(2)
        .map(|p| p[1] - p[0])
        .filter(|d| *d > 0.0)
        .collect();
    if gaps.is_empty() {
        return Err(PeriodogramError::ZeroBaseline);
    }
    gaps.sort_by(f64::total_cmp);
    let m = gaps.len();
    Ok(if m % 2 == 1 {
        gaps[m / 2]
    } else {
        0.5 * (gaps[m / 2 - 1] + gaps[m / 2])
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_rules_from_median_spacing() {
        // Spacings 1, 1, 2, 4, 4 d: median 2 d, so f_max = 1/4 1/d; T = 12 d.
        let t = [0.0, 1.0, 2.0, 4.0, 8.0, 12.0];
        let g = FrequencyGrid::for_epochs(&t, &GridSettings::default()).unwrap();
        assert_eq!(g.start(), 1.0 / 12.0);
        assert_eq!(g.step(), 1.0 / 120.0);
        // (1/4 − 1/12) / (1/120) = 20 steps exactly: 21 frequencies.
        assert_eq!(g.len(), 21);
        assert!((g.last() - 0.25).abs() < 1e-15);
    }

    #[test]
    fn bad_settings_are_refused() {
        let t = [0.0, 1.0, 3.0];
        let bad = GridSettings {
            oversampling: 0.0,
            ..Default::default()
        };
        assert!(FrequencyGrid::for_epochs(&t, &bad).is_err());
        let inverted = GridSettings {
            shortest_period: Some(10.0),
            longest_period: Some(5.0),
            ..Default::default()
        };
        assert!(matches!(
            FrequencyGrid::for_epochs(&t, &inverted),
            Err(PeriodogramError::EmptyGrid { .. })
        ));
        assert_eq!(
            FrequencyGrid::for_epochs(&[1.0, 1.0], &GridSettings::default()),
            Err(PeriodogramError::ZeroBaseline)
        );
    }
}

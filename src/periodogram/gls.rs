//! Generalised Lomb–Scargle periodogram with a floating mean
//! (Zechmeister & Kürster 2009, A&A 496, 577; "ZK09").

use super::series::{check_series, normalised_weights, reference_epoch, weighted_mean};
use super::sweep::sweep;
use super::{FrequencyGrid, PeriodogramError, Sinusoid};
use std::f64::consts::TAU;

/// Relative size below which the 2 × 2 normal matrix of the cosine and sine
/// columns counts as singular (numerical rank cut-off, common practice as in
/// least-squares solvers).
const RANK_CUTOFF: f64 = 1e-10;

/// An RV series prepared once for many GLS evaluations: validated, epochs
/// shifted to the middle of the baseline, weights w_i = σ_i⁻² normalised to
/// Σ w_i = 1 (as in ZK09 §2) and velocities centred on their weighted mean.
///
/// The power at frequency f (1/d), ω = 2π f, is that of ZK09 §2 (their eqs. 4–20; individual equation
/// numbers are not quoted here because they are from memory):
///
/// p(ω) = [SS·YC² + CC·YS² − 2 CS·YC·YS] / (YY · D),  D = CC·SS − CS²,
///
/// with the weighted, mean-removed sums YY = Σ w (y − ȳ)²,
/// YC = Σ w y cos ωt − Y·C, CC = Σ w cos² ωt − C², CS = Σ w cos ωt sin ωt − C·S,
/// etc. (the sums of ZK09 §2). This equals (χ²₀ − χ²(ω)) / χ²₀ with χ²₀ about
/// the weighted mean and χ²(ω) of the best offset + sinusoid at ω, so
/// 0 ≤ p ≤ 1. Where the cosine and sine columns are linearly dependent on the
/// epochs (D ≈ 0, e.g. at an exact alias of regular sampling) the power is
/// the exact least-squares projection onto the remaining column (rank cut-off
/// 10⁻¹⁰), and 0 where both columns are constant.
#[derive(Debug, Clone)]
pub struct GlsSeries {
    t_shifted: Vec<f64>,
    weights: Vec<f64>,
    y_centred: Vec<f64>,
    t_ref: f64,
    y_mean: f64,
    yy: f64,
}

/// Weighted sums of ZK09 §2 before mean removal (Y = 0 already).
#[derive(Debug, Clone, Copy, Default)]
struct Sums {
    c: f64,
    s: f64,
    yc: f64,
    ys: f64,
    cc: f64,
    ss: f64,
    cs: f64,
}

impl Sums {
    #[inline]
    fn add(&mut self, w: f64, y: f64, c: f64, s: f64) {
        let wc = w * c;
        let ws = w * s;
        self.c += wc;
        self.s += ws;
        self.yc += wc * y;
        self.ys += ws * y;
        self.cc += wc * c;
        self.ss += ws * s;
        self.cs += wc * s;
    }

    /// The mean-removed sums of ZK09 §2 (with Y = 0):
    /// (YC, YS, CC, SS, CS).
    #[inline]
    fn centred(&self) -> (f64, f64, f64, f64, f64) {
        (
            self.yc,
            self.ys,
            self.cc - self.c * self.c,
            self.ss - self.s * self.s,
            self.cs - self.c * self.s,
        )
    }
}

impl GlsSeries {
    /// Validates and prepares epochs `t` (d), velocities `y` (m/s) and
    /// errors `sigma` (m/s): at least 3 epochs, equal lengths, finite
    /// values, σ > 0, a non-zero baseline and non-constant velocities.
    ///
    /// ```
    /// use apsidal::periodogram::{GlsSeries, PeriodogramError};
    /// let t = [0.0, 1.0, 2.5];
    /// assert!(GlsSeries::new(&t, &[1.0, -1.0, 0.5], &[1.0, 1.0, 2.0]).is_ok());
    /// assert!(matches!(
    ///     GlsSeries::new(&t, &[1.0, -1.0, 0.5], &[1.0, 0.0, 2.0]),
    ///     Err(PeriodogramError::NonPositiveError { index: 1, .. })
    /// ));
    /// ```
    pub fn new(t: &[f64], y: &[f64], sigma: &[f64]) -> Result<Self, PeriodogramError> {
        check_series(t, y, sigma, 3)?;
        let t_ref = reference_epoch(t);
        let weights = normalised_weights(sigma);
        let y_mean = weighted_mean(&weights, y);
        let y_centred: Vec<f64> = y.iter().map(|v| v - y_mean).collect();
        let yy: f64 = weights.iter().zip(&y_centred).map(|(w, v)| w * v * v).sum();
        if yy.is_nan() || yy <= 0.0 {
            return Err(PeriodogramError::ConstantData);
        }
        if !yy.is_finite() {
            return Err(PeriodogramError::NonFinite {
                quantity: "velocity variance",
                index: 0,
            });
        }
        Ok(Self {
            t_shifted: t.iter().map(|x| x - t_ref).collect(),
            weights,
            y_centred,
            t_ref,
            y_mean,
            yy,
        })
    }

    /// Number of epochs.
    pub fn len(&self) -> usize {
        self.weights.len()
    }

    /// Always false: a series holds at least 3 epochs.
    pub fn is_empty(&self) -> bool {
        false
    }

    /// Internal reference epoch (d): the middle of the baseline.
    pub fn reference_epoch(&self) -> f64 {
        self.t_ref
    }

    /// Inverse-variance weighted mean velocity ȳ (m/s).
    pub fn weighted_mean(&self) -> f64 {
        self.y_mean
    }

    /// χ²₀ / Σ σ⁻²: the weighted variance of the velocities about ȳ (m²/s²).
    pub fn weighted_variance(&self) -> f64 {
        self.yy
    }

    fn sums_at(&self, frequency: f64) -> Sums {
        let omega = TAU * frequency;
        let mut sums = Sums::default();
        for ((t, w), y) in self
            .t_shifted
            .iter()
            .zip(&self.weights)
            .zip(&self.y_centred)
        {
            let (s, c) = (omega * t).sin_cos();
            sums.add(*w, *y, c, s);
        }
        sums
    }

    /// GLS power p ∈ [0, 1] at `frequency` (1/d), evaluated directly (one
    /// sin/cos per epoch). See [`GlsSeries`] for the formula.
    ///
    /// ```
    /// use apsidal::periodogram::GlsSeries;
    /// // A pure sinusoid of period 10 d: the power at 0.1 1/d is 1.
    /// let t: Vec<f64> = (0..30).map(|i| 1.7 * i as f64 + 0.3 * (i % 4) as f64).collect();
    /// let y: Vec<f64> = t.iter().map(|t| 5.0 * (std::f64::consts::TAU * t / 10.0).sin()).collect();
    /// let gls = GlsSeries::new(&t, &y, &vec![1.0; t.len()]).unwrap();
    /// assert!((gls.power(0.1).unwrap() - 1.0).abs() < 1e-12);
    /// ```
    pub fn power(&self, frequency: f64) -> Result<f64, PeriodogramError> {
        check_frequency(frequency)?;
        Ok(self.power_from(&self.sums_at(frequency)))
    }

    fn power_from(&self, sums: &Sums) -> f64 {
        let (yc, ys, cc, ss, cs) = sums.centred();
        let big = cc.max(ss);
        let d = cc * ss - cs * cs;
        let explained = if big <= f64::EPSILON * 16.0 {
            // Both columns constant on the data: nothing beyond the mean.
            0.0
        } else if d > RANK_CUTOFF * big * big {
            (ss * yc * yc + cc * ys * ys - 2.0 * cs * yc * ys) / d
        } else {
            // Rank one: project on the dominant eigenvector of
            // [[cc, cs], [cs, ss]] (eigenvalue λ).
            let half_diff = 0.5 * (cc - ss);
            let lambda = 0.5 * (cc + ss) + half_diff.hypot(cs);
            let (vx, vy) = if cc >= ss {
                (lambda - ss, cs)
            } else {
                (cs, lambda - cc)
            };
            let norm = vx.hypot(vy);
            if norm == 0.0 || lambda <= 0.0 {
                0.0
            } else {
                let proj = (vx * yc + vy * ys) / norm;
                proj * proj / lambda
            }
        };
        (explained / self.yy).clamp(0.0, 1.0)
    }

    /// GLS power at every frequency of `grid`, by trigonometric recurrence
    /// across the grid (see the `sweep` notes: sin/cos are evaluated once
    /// per epoch every 512 frequencies and rotated in between), in parallel
    /// over blocks of frequencies with results independent of thread count.
    ///
    /// ```
    /// use apsidal::periodogram::{FrequencyGrid, GlsSeries};
    /// let t: Vec<f64> = (0..40).map(|i| 2.3 * i as f64 + (i * i % 7) as f64).collect();
    /// let y: Vec<f64> = t.iter().map(|t| (std::f64::consts::TAU * t / 17.0).cos()).collect();
    /// let gls = GlsSeries::new(&t, &y, &vec![0.5; t.len()]).unwrap();
    /// let grid = FrequencyGrid::new(0.01, 0.0005, 400).unwrap();
    /// let spectrum = gls.spectrum(&grid);
    /// let (k, _) = spectrum.peak();
    /// assert!((grid.frequency(k) - 1.0 / 17.0).abs() < 0.001);
    /// ```
    pub fn spectrum(&self, grid: &FrequencyGrid) -> Spectrum {
        let mut power = vec![0.0; grid.len()];
        sweep(&self.t_shifted, grid, &mut power, |cos, sin| {
            let mut sums = Sums::default();
            for i in 0..cos.len() {
                sums.add(self.weights[i], self.y_centred[i], cos[i], sin[i]);
            }
            self.power_from(&sums)
        });
        Spectrum { grid: *grid, power }
    }

    /// Best-fitting offset + sinusoid at `frequency` (1/d) by weighted least
    /// squares: the normal equations of ZK09 §2, a = (YC·SS − YS·CS)/D,
    /// b = (YS·CC − YC·CS)/D, c = ȳ − a·C − b·S, for
    /// y(t) = c + a cos ω(t − t_ref) + b sin ω(t − t_ref).
    /// An error where the sinusoid is not determined (D ≈ 0).
    ///
    /// ```
    /// use apsidal::periodogram::GlsSeries;
    /// let t: Vec<f64> = (0..25).map(|i| 3.1 * i as f64 + 0.4 * (i % 3) as f64).collect();
    /// let f = 1.0 / 13.0;
    /// let y: Vec<f64> = t
    ///     .iter()
    ///     .map(|t| 2.0 + 4.0 * (std::f64::consts::TAU * f * (t - 7.0) - 1.0).cos())
    ///     .collect();
    /// let fit = GlsSeries::new(&t, &y, &vec![1.0; t.len()]).unwrap().fit(f).unwrap();
    /// assert!((fit.amplitude - 4.0).abs() < 1e-10 && (fit.offset - 2.0).abs() < 1e-10);
    /// assert!((fit.value_at(7.0 + 1.0 / (std::f64::consts::TAU * f)) - 6.0).abs() < 1e-9);
    /// ```
    pub fn fit(&self, frequency: f64) -> Result<Sinusoid, PeriodogramError> {
        check_frequency(frequency)?;
        let sums = self.sums_at(frequency);
        let (yc, ys, cc, ss, cs) = sums.centred();
        let big = cc.max(ss);
        let d = cc * ss - cs * cs;
        if big <= f64::EPSILON * 16.0 || d <= RANK_CUTOFF * big * big {
            return Err(PeriodogramError::DegenerateFit { frequency });
        }
        let a = (yc * ss - ys * cs) / d;
        let b = (ys * cc - yc * cs) / d;
        let c = self.y_mean - a * sums.c - b * sums.s;
        Ok(Sinusoid::from_coefficients(frequency, a, b, c, self.t_ref))
    }
}

fn check_frequency(frequency: f64) -> Result<(), PeriodogramError> {
    if frequency.is_finite() && frequency >= 0.0 {
        Ok(())
    } else {
        Err(PeriodogramError::InvalidSetting {
            name: "frequency",
            value: frequency,
            reason: "must be finite and ≥ 0 (1/d)",
        })
    }
}

/// GLS powers on a frequency grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Spectrum {
    /// The frequencies (1/d).
    pub grid: FrequencyGrid,
    /// Power p ∈ [0, 1] at each grid frequency.
    pub power: Vec<f64>,
}

impl Spectrum {
    /// Index and power of the highest grid point (the first one on ties).
    pub fn peak(&self) -> (usize, f64) {
        self.power
            .iter()
            .enumerate()
            .fold((0, f64::NEG_INFINITY), |(kb, pb), (k, &p)| {
                if p > pb { (k, p) } else { (kb, pb) }
            })
    }
}

/// GLS power p ∈ [0, 1] of epochs `t` (d), velocities `y` (m/s) and errors
/// `sigma` (m/s) at each frequency of `grid` (ZK09 §2, by
/// trigonometric recurrence; see [`GlsSeries`]).
///
/// ```
/// use apsidal::periodogram::{gls_power, FrequencyGrid};
/// let t = [0.0, 1.1, 2.9, 4.2, 5.0, 7.7];
/// let y = [1.0, 0.2, -0.8, 0.4, 0.9, -0.3];
/// let grid = FrequencyGrid::new(0.05, 0.01, 30).unwrap();
/// let p = gls_power(&t, &y, &[1.0; 6], &grid).unwrap();
/// assert_eq!(p.len(), 30);
/// assert!(p.iter().all(|p| (0.0..=1.0).contains(p)));
/// ```
pub fn gls_power(
    t: &[f64],
    y: &[f64],
    sigma: &[f64],
    grid: &FrequencyGrid,
) -> Result<Vec<f64>, PeriodogramError> {
    Ok(GlsSeries::new(t, y, sigma)?.spectrum(grid).power)
}

/// Best-fitting offset + sinusoid of `t` (d), `y` (m/s), `sigma` (m/s) at
/// `frequency` (1/d); see [`GlsSeries::fit`].
///
/// ```
/// use apsidal::periodogram::fit_sinusoid;
/// let t = [0.0, 1.0, 2.0, 3.5, 5.0];
/// let y: Vec<f64> = t.iter().map(|t| 3.0 * (std::f64::consts::TAU * t / 4.0).sin()).collect();
/// let s = fit_sinusoid(&t, &y, &[1.0; 5], 0.25).unwrap();
/// assert!((s.amplitude - 3.0).abs() < 1e-12 && s.offset.abs() < 1e-12);
/// ```
pub fn fit_sinusoid(
    t: &[f64],
    y: &[f64],
    sigma: &[f64],
    frequency: f64,
) -> Result<Sinusoid, PeriodogramError> {
    GlsSeries::new(t, y, sigma)?.fit(frequency)
}

//! False-alarm probability of the highest GLS peak (Baluev 2008).

use super::PeriodogramError;
use super::series::{check_epochs, normalised_weights, weighted_mean};
use argmin::core::{CostFunction, Executor, State};
use argmin::solver::brent::BrentRoot;
use std::f64::consts::PI;

/// Baluev's (2008, MNRAS 385, 1279) analytic false-alarm probability of the
/// highest peak of a GLS with floating mean, in the normalisation of
/// [`GlsSeries`](super::GlsSeries) (p = (χ²₀ − χ²)/χ²₀), searched over
/// frequencies up to f_max, for white Gaussian noise as null hypothesis.
///
/// With N epochs, N_H = N − 1 and N_K = N − 3 degrees of freedom of the
/// constant and the offset + sinusoid models (Baluev 2008, Table 1):
///
/// * single-frequency tail FAP₁(z) = (1 − z)^{N_K/2};
/// * effective width W = f_max · √(4π D_t), D_t the σ⁻²-weighted variance
///   of the epochs (an effective baseline √(4π D_t));
/// * τ(z) = γ(N_H) · W · (1 − z)^{(N_K − 1)/2} · √(N_H z / 2), with
///   γ(n) = √(2/n) · Γ(n/2) / Γ((n − 1)/2) (the "Davies bound" term, Baluev
///   2008 eq. 5, equation numbers as cited by astropy's implementation);
/// * alias-free approximation (Baluev 2008 eq. 6):
///   FAP(z) = 1 − (1 − FAP₁(z)) e^{−τ(z)}.
///
/// This is the same computation as the `baluev` method of the astropy
/// library's Lomb–Scargle false-alarm probability for its `standard`
/// normalisation with a floating mean (checked against it to ≤ 10⁻⁸ in
/// `tests/periodogram_astropy.rs`). Only f_max enters, not f_min. Note that
/// astropy does not use its `maximum_frequency` argument as given: it first
/// snaps it onto its own frequency grid (5 samples per 1/T from
/// `minimum_frequency`), so its numbers equal ours for that snapped f_max.
/// The approximation is an upper bound, good for small FAP (≲ 0.1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BaluevFap {
    count: usize,
    f_max: f64,
    width: f64,
    gamma: f64,
}

/// Γ(n/2) / Γ((n − 1)/2) for integer n ≥ 2, by the exact recurrence
/// r(n + 2) = r(n) · n / (n − 1) from r(2) = 1/√π and r(3) = √π / 2
/// (from Γ(x + 1) = x Γ(x)). Written by hand: the standard library has no
/// stable log-gamma, and the recurrence is exact to rounding (≈ n/2
/// multiplications, each rounding 10⁻¹⁶ relative).
fn gamma_ratio(n: usize) -> f64 {
    let (mut r, mut k) = if n % 2 == 0 {
        (1.0 / PI.sqrt(), 2usize)
    } else {
        (0.5 * PI.sqrt(), 3usize)
    };
    while k < n {
        r *= k as f64 / (k - 1) as f64;
        k += 2;
    }
    r
}

impl BaluevFap {
    /// Prepares the FAP for epochs `t` (d) with errors `sigma` (m/s) and a
    /// search up to `f_max` (1/d, > 0). Needs at least 4 epochs (N_K ≥ 1).
    ///
    /// ```
    /// use apsidal::periodogram::BaluevFap;
    /// let t: Vec<f64> = (0..40).map(|i| 10.0 * i as f64 + (i % 3) as f64).collect();
    /// let fap = BaluevFap::new(&t, &vec![2.0; 40], 0.5).unwrap();
    /// let high = fap.probability(0.6).unwrap();
    /// let low = fap.probability(0.3).unwrap();
    /// assert!(high < low && high > 0.0 && low <= 1.0);
    /// ```
    pub fn new(t: &[f64], sigma: &[f64], f_max: f64) -> Result<Self, PeriodogramError> {
        check_epochs(t, sigma, 4)?;
        if !(f_max.is_finite() && f_max > 0.0) {
            return Err(PeriodogramError::InvalidSetting {
                name: "highest frequency",
                value: f_max,
                reason: "must be finite and > 0 (1/d)",
            });
        }
        let w = normalised_weights(sigma);
        // Two-pass weighted variance: no cancellation for absolute epochs.
        let mean = weighted_mean(&w, t);
        let var: f64 = w.iter().zip(t).map(|(w, t)| w * (t - mean).powi(2)).sum();
        let count = t.len();
        let n_h = count - 1;
        let gamma = (2.0 / n_h as f64).sqrt() * gamma_ratio(n_h);
        Ok(Self {
            count,
            f_max,
            width: f_max * (4.0 * PI * var).sqrt(),
            gamma,
        })
    }

    /// Number of epochs N.
    pub fn count(&self) -> usize {
        self.count
    }

    /// Highest searched frequency f_max (1/d).
    pub fn highest_frequency(&self) -> f64 {
        self.f_max
    }

    /// Effective width W = f_max · √(4π D_t) (dimensionless).
    pub fn effective_width(&self) -> f64 {
        self.width
    }

    /// Single-frequency false-alarm probability FAP₁(z) = (1 − z)^{(N−3)/2}:
    /// the chance that noise alone exceeds power `z` at one given frequency.
    pub fn single_frequency(&self, power: f64) -> Result<f64, PeriodogramError> {
        check_power(power)?;
        Ok(self.single_unchecked(power))
    }

    /// The Davies term τ(z) of Baluev 2008 (Table 1, standard normalisation).
    pub fn tau(&self, power: f64) -> Result<f64, PeriodogramError> {
        check_power(power)?;
        Ok(self.tau_unchecked(power))
    }

    /// Davies upper bound FAP₁(z) + τ(z) (Baluev 2008 eq. 5): the first
    /// term of the upcrossing expansion, not clipped, so it can exceed 1 for
    /// weak peaks.
    pub fn davies_bound(&self, power: f64) -> Result<f64, PeriodogramError> {
        check_power(power)?;
        Ok(self.single_unchecked(power) + self.tau_unchecked(power))
    }

    /// False-alarm probability of a highest peak of power `power` ∈ [0, 1]
    /// (Baluev 2008 eq. 6; see [`BaluevFap`]), in [0, 1].
    pub fn probability(&self, power: f64) -> Result<f64, PeriodogramError> {
        check_power(power)?;
        Ok(self.probability_unchecked(power))
    }

    fn single_unchecked(&self, z: f64) -> f64 {
        let n_k = (self.count - 3) as f64;
        (1.0 - z).powf(0.5 * n_k)
    }

    fn tau_unchecked(&self, z: f64) -> f64 {
        let n_h = (self.count - 1) as f64;
        let n_k = (self.count - 3) as f64;
        self.gamma * self.width * (1.0 - z).powf(0.5 * (n_k - 1.0)) * (0.5 * n_h * z).sqrt()
    }

    fn probability_unchecked(&self, z: f64) -> f64 {
        let single = self.single_unchecked(z);
        let tau = self.tau_unchecked(z);
        // 1 − (1 − FAP₁) e^{−τ}, written to keep digits when both are small.
        (-(-tau).exp_m1() + single * (-tau).exp()).clamp(0.0, 1.0)
    }

    /// The power level whose FAP is `fap` ∈ (0, 1), e.g. 0.01 for the 1 %
    /// line: the root of FAP(z) = `fap` by Brent's method (argmin
    /// `BrentRoot`, absolute tolerance 10⁻¹⁵ in z). FAP(z) falls strictly on
    /// [1/N_K, 1], where τ falls; the root is sought there, and in [0, 1/N_K]
    /// only for a `fap` so close to 1 that it lies beyond.
    ///
    /// ```
    /// use apsidal::periodogram::BaluevFap;
    /// let t: Vec<f64> = (0..60).map(|i| 7.0 * i as f64 + (i % 5) as f64).collect();
    /// let fap = BaluevFap::new(&t, &vec![1.0; 60], 1.0).unwrap();
    /// let level = fap.power_level(0.01).unwrap();
    /// assert!((fap.probability(level).unwrap() - 0.01).abs() < 1e-12);
    /// ```
    pub fn power_level(&self, fap: f64) -> Result<f64, PeriodogramError> {
        if !(fap.is_finite() && fap > 0.0 && fap < 1.0) {
            return Err(PeriodogramError::InvalidSetting {
                name: "false-alarm probability",
                value: fap,
                reason: "must lie strictly between 0 and 1",
            });
        }
        let n_k = (self.count - 3) as f64;
        let turn = (1.0 / n_k).min(1.0);
        let (lo, hi) = if turn < 1.0 && self.probability_unchecked(turn) >= fap {
            (turn, 1.0)
        } else {
            (0.0, turn)
        };
        let problem = LevelProblem {
            fap: *self,
            target: fap,
        };
        let solver = BrentRoot::new(lo, hi, 1e-15);
        let result = Executor::new(problem, solver)
            .configure(|s| s.param(0.5 * (lo + hi)).max_iters(300))
            .run()
            .map_err(|e| PeriodogramError::SolverFailed {
                reason: e.to_string(),
            })?;
        let z = result.state().get_best_param().copied().unwrap_or(f64::NAN);
        if !z.is_finite() {
            return Err(PeriodogramError::SolverFailed {
                reason: "FAP level root: no estimate".into(),
            });
        }
        let residual = (self.probability_unchecked(z) - fap).abs();
        if residual <= 1e-9 * fap {
            Ok(z)
        } else {
            Err(PeriodogramError::SolverFailed {
                reason: format!("FAP level root: residual {residual:e} at z = {z}"),
            })
        }
    }
}

/// FAP(z) − target on z ∈ [0, 1], for the root find.
struct LevelProblem {
    fap: BaluevFap,
    target: f64,
}

impl CostFunction for LevelProblem {
    type Param = f64;
    type Output = f64;
    fn cost(&self, z: &f64) -> Result<f64, argmin::core::Error> {
        Ok(self.fap.probability_unchecked(z.clamp(0.0, 1.0)) - self.target)
    }
}

fn check_power(power: f64) -> Result<(), PeriodogramError> {
    if power.is_finite() && (0.0..=1.0).contains(&power) {
        Ok(())
    } else {
        Err(PeriodogramError::InvalidSetting {
            name: "power",
            value: power,
            reason: "must lie in [0, 1]",
        })
    }
}

/// Baluev (2008) false-alarm probability of a highest GLS peak of `power`
/// for epochs `t` (d), errors `sigma` (m/s) and a search up to `f_max`
/// (1/d); see [`BaluevFap`].
///
/// ```
/// use apsidal::periodogram::baluev_fap;
/// let t: Vec<f64> = (0..50).map(|i| 13.0 * i as f64 + (i % 4) as f64).collect();
/// let p = baluev_fap(0.5, &t, &vec![3.0; 50], 0.8).unwrap();
/// assert!(p > 0.0 && p < 1e-3);
/// ```
pub fn baluev_fap(
    power: f64,
    t: &[f64],
    sigma: &[f64],
    f_max: f64,
) -> Result<f64, PeriodogramError> {
    BaluevFap::new(t, sigma, f_max)?.probability(power)
}

/// The GLS power whose Baluev (2008) FAP is `fap` for epochs `t` (d),
/// errors `sigma` (m/s) and a search up to `f_max` (1/d); see
/// [`BaluevFap::power_level`].
///
/// ```
/// use apsidal::periodogram::{baluev_fap, baluev_power_level};
/// let t: Vec<f64> = (0..50).map(|i| 13.0 * i as f64 + (i % 4) as f64).collect();
/// let s = vec![3.0; 50];
/// let z = baluev_power_level(0.001, &t, &s, 0.8).unwrap();
/// assert!((baluev_fap(z, &t, &s, 0.8).unwrap() - 0.001).abs() < 1e-14);
/// ```
pub fn baluev_power_level(
    fap: f64,
    t: &[f64],
    sigma: &[f64],
    f_max: f64,
) -> Result<f64, PeriodogramError> {
    BaluevFap::new(t, sigma, f_max)?.power_level(fap)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gamma_ratio_small_values() {
        // Γ(2)/Γ(3/2) = 1/(√π/2) and Γ(5/2)/Γ(2) = 3√π/4 (exact, Γ(x+1) = xΓ(x)).
        assert!((gamma_ratio(4) - 2.0 / PI.sqrt()).abs() < 1e-15);
        assert!((gamma_ratio(5) - 0.75 * PI.sqrt()).abs() < 1e-15);
        // For large n, γ(n) = √(2/n) Γ(n/2)/Γ((n−1)/2) ≈ 1 − 3/(4n) (the
        // large-n form noted beside astropy's _gamma).
        let n = 10_000;
        let g = (2.0 / n as f64).sqrt() * gamma_ratio(n);
        assert!((g - (1.0 - 0.75 / n as f64)).abs() < 1e-8);
        // γ(79) to 30 digits with mpmath (Python, `mp.dps = 30`:
        // sqrt(2/79)·gamma(79/2)/gamma(39)) = 0.990471136789456606365….
        // astropy's `_statistics._gamma(79)` (exp of a scipy gammaln
        // difference) gives 0.9904711367894679, 1.2e-14 off: that is the
        // whole of the FAP difference seen in tests/periodogram_astropy.rs.
        let g79 = (2.0f64 / 79.0).sqrt() * gamma_ratio(79);
        assert!((g79 - 0.990_471_136_789_456_6).abs() < 2e-15, "{g79}");
    }
}

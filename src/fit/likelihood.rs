//! The Gaussian likelihood with per-instrument jitter (DESIGN §3):
//!
//! ln L = −½ Σ_i [ r_i² / (σ_i² + s_{k(i)}²) + ln 2π (σ_i² + s_{k(i)}²) ],
//!
//! with r_i the residual (m/s), σ_i the stated error (m/s) and s_k the
//! jitter of point i's instrument k (m/s), added in quadrature.

use std::f64::consts::TAU;

/// ln L of residuals `resid` with errors `err`, instrument indices `inst`
/// and per-instrument jitters `jitter` (all m/s). Returns −∞ when any
/// input is non-finite or a variance is not positive (never NaN).
///
/// ```
/// use apsidal::fit::likelihood::ln_likelihood;
/// let l = ln_likelihood(&[0.0], &[1.0], &[0], &[0.0]);
/// assert!((l + 0.5 * (2.0 * std::f64::consts::PI).ln()).abs() < 1e-15);
/// ```
///
/// The logarithm ln 2π(σ² + s²) is taken once per run of points with the
/// same variance (consecutive points of one instrument with equal errors,
/// the usual case) and reused: the same value to the bit, without a
/// logarithm per point.
pub fn ln_likelihood(resid: &[f64], err: &[f64], inst: &[usize], jitter: &[f64]) -> f64 {
    let mut sum = 0.0;
    // (variance, ln 2π variance) of the last point; NaN matches nothing.
    let mut last = (f64::NAN, 0.0);
    for ((&r, &s), &k) in resid.iter().zip(err).zip(inst) {
        let Some(&j) = jitter.get(k) else {
            return f64::NEG_INFINITY;
        };
        let var = s * s + j * j;
        if !(var > 0.0) || !r.is_finite() || !var.is_finite() {
            return f64::NEG_INFINITY;
        }
        if var != last.0 {
            last = (var, (TAU * var).ln());
        }
        sum += r * r / var + last.1;
    }
    -0.5 * sum
}

/// χ² = Σ r² / (σ² + s²) with the same inputs as [`ln_likelihood`]
/// (`f64::INFINITY` for invalid input).
pub fn chi_square(resid: &[f64], err: &[f64], inst: &[usize], jitter: &[f64]) -> f64 {
    let mut sum = 0.0;
    for ((&r, &s), &k) in resid.iter().zip(err).zip(inst) {
        let Some(&j) = jitter.get(k) else {
            return f64::INFINITY;
        };
        let var = s * s + j * j;
        if !(var > 0.0) || !r.is_finite() {
            return f64::INFINITY;
        }
        sum += r * r / var;
    }
    sum
}

/// Whitened residuals r_i / √(σ_i² + s_k²) written into `out`, for
/// least-squares solvers at fixed jitter.
pub fn whitened_residuals(
    resid: &[f64],
    err: &[f64],
    inst: &[usize],
    jitter: &[f64],
    out: &mut [f64],
) {
    for (((o, &r), &s), &k) in out.iter_mut().zip(resid).zip(err).zip(inst) {
        let j = jitter.get(k).copied().unwrap_or(0.0);
        *o = r / (s * s + j * j).sqrt();
    }
}

/// Bayesian information criterion BIC = k ln n − 2 ln L (Schwarz 1978).
pub fn bic(ln_l: f64, n_params: usize, n_points: usize) -> f64 {
    n_params as f64 * (n_points as f64).ln() - 2.0 * ln_l
}

/// Akaike information criterion with the small-sample correction,
/// AICc = 2k − 2 ln L + 2k(k+1)/(n − k − 1) (Hurvich & Tsai 1989);
/// `None` (undefined) when n ≤ k + 1 or ln L is not finite.
pub fn aicc(ln_l: f64, n_params: usize, n_points: usize) -> Option<f64> {
    let k = n_params as f64;
    let n = n_points as f64;
    if n <= k + 1.0 {
        return None;
    }
    Some(2.0 * k - 2.0 * ln_l + 2.0 * k * (k + 1.0) / (n - k - 1.0)).filter(|a| a.is_finite())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reused_logarithm_gives_the_plain_sum_to_the_bit() {
        // Mixed instruments and errors, repeated and alternating variances:
        // the result must equal the sum with one logarithm per point.
        let resid: Vec<f64> = (0..40).map(|i| (i as f64 * 0.7).sin() * 3.0).collect();
        let err: Vec<f64> = (0..40).map(|i| [2.0, 2.0, 3.5, 1.25][i % 4]).collect();
        let inst: Vec<usize> = (0..40).map(|i| usize::from(i % 3 == 0)).collect();
        let jitter = [1.5, 3.0];
        let mut plain = 0.0;
        for i in 0..40 {
            let var = err[i] * err[i] + jitter[inst[i]] * jitter[inst[i]];
            plain += resid[i] * resid[i] / var + (TAU * var).ln();
        }
        let l = ln_likelihood(&resid, &err, &inst, &jitter);
        assert_eq!(l.to_bits(), (-0.5 * plain).to_bits());
    }

    #[test]
    fn jitter_adds_in_quadrature() {
        // One point, r = 3, σ = 3, s = 4: variance 25 (3-4-5 triangle).
        let l = ln_likelihood(&[3.0], &[3.0], &[0], &[4.0]);
        let expect = -0.5 * (9.0 / 25.0 + (TAU * 25.0).ln());
        assert!((l - expect).abs() < 1e-15);
        assert_eq!(chi_square(&[3.0], &[3.0], &[0], &[4.0]), 9.0 / 25.0);
        assert_eq!(
            ln_likelihood(&[f64::NAN], &[1.0], &[0], &[0.0]),
            f64::NEG_INFINITY
        );
        assert_eq!(
            ln_likelihood(&[1.0], &[1.0], &[3], &[0.0]),
            f64::NEG_INFINITY
        );
    }
}

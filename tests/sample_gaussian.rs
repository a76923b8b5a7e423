//! The ensemble sampler on a target with known answers: a correlated
//! 10-dimensional Gaussian (reference: its own analytic mean and covariance)
//! and the autocorrelation-time estimator on AR(1) series, whose integrated
//! autocorrelation time τ = (1 + ρ)/(1 − ρ) is known analytically (Sokal
//! 1997, §3; from memory: ρ(t) = ρ^|t| so 1 + 2 Σ ρ^t = (1 + ρ)/(1 − ρ)).

use apsidal::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, DEFAULT_WINDOW_C, EnsembleSampler, LogTarget, gaussian_ball,
    integrated_autocorr_time, suggest_burn_in_and_thin,
};
use nalgebra::DMatrix;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha20Rng;
use rand_distr::StandardNormal;

const D: usize = 10;

/// Multivariate normal N(μ, Σ): ln p = −½ (x − μ)ᵀ Σ⁻¹ (x − μ).
struct Gaussian {
    mean: Vec<f64>,
    precision: Vec<f64>,
}

impl LogTarget for Gaussian {
    fn ln_prob(&self, x: &[f64]) -> f64 {
        let mut q = 0.0;
        for i in 0..D {
            let di = x[i] - self.mean[i];
            let row = &self.precision[i * D..(i + 1) * D];
            let mut s = 0.0;
            for j in 0..D {
                s += row[j] * (x[j] - self.mean[j]);
            }
            q += di * s;
        }
        -0.5 * q
    }
}

/// Fixed test covariance: scales from 3e-3 to 100, correlations up to ±0.9.
fn covariance() -> DMatrix<f64> {
    let sigma = [0.01, 0.1, 1.0, 10.0, 100.0, 0.5, 2.0, 3e-3, 50.0, 7.0];
    let mut r = DMatrix::<f64>::identity(D, D);
    let pairs = [
        (0, 1, 0.9),
        (2, 3, -0.9),
        (4, 5, 0.6),
        (5, 6, 0.6),
        (4, 6, 0.36),
        (7, 8, -0.5),
        (8, 9, 0.4),
        (7, 9, -0.2),
        (1, 4, 0.3),
        (3, 9, 0.25),
    ];
    for (i, j, rho) in pairs {
        r[(i, j)] = rho;
        r[(j, i)] = rho;
    }
    DMatrix::from_fn(D, D, |i, j| r[(i, j)] * sigma[i] * sigma[j])
}

#[test]
fn correlated_gaussian_moments_within_monte_carlo_error() {
    let cov = covariance();
    assert!(
        cov.clone().cholesky().is_some(),
        "test covariance must be positive definite"
    );
    let mean = vec![1.0, -2.0, 0.5, 100.0, -30.0, 0.0, 3.0, 1e-2, 7.0, -5.0];
    let precision = cov.clone().try_inverse().unwrap();
    let target = Gaussian {
        mean: mean.clone(),
        precision: (0..D * D).map(|k| precision[(k / D, k % D)]).collect(),
    };

    // Start away from the mode (+3σ in every coordinate), in a tiny ball,
    // so that burn-in has something to do.
    let centre: Vec<f64> = (0..D).map(|i| mean[i] + 3.0 * cov[(i, i)].sqrt()).collect();
    let widths: Vec<f64> = (0..D).map(|i| 1e-3 * cov[(i, i)].sqrt()).collect();
    let n_walkers = 40;
    let mut rng = ChaCha20Rng::seed_from_u64(2010);
    let start = gaussian_ball(
        &target,
        &centre,
        &Ball::Diagonal(widths),
        n_walkers,
        10,
        &mut rng,
    )
    .unwrap();
    let mut sampler = EnsembleSampler::new(start, DEFAULT_STRETCH_SCALE, 65).unwrap();
    let n_steps = 30_000;
    let burn_in = 4_000;
    sampler.run(&target, n_steps, &mut []).unwrap();

    let chain = sampler.chain();
    let taus = chain.autocorr_times(burn_in, DEFAULT_WINDOW_C).unwrap();
    let tau_max = taus.iter().map(|t| t.tau).fold(0.0, f64::max);
    let kept = n_steps - burn_in;
    println!(
        "walkers {n_walkers}, steps {n_steps}, burn-in {burn_in}, acceptance {:.3}",
        sampler.overall_acceptance()
    );
    for (i, t) in taus.iter().enumerate() {
        println!(
            "param {i}: tau = {:.1} ± {:.1} (window {}), N_eff = {:.0}, reliable {}",
            t.tau,
            t.std_error,
            t.window,
            (kept * n_walkers) as f64 / t.tau,
            t.reliable
        );
        assert!(
            t.reliable,
            "chain too short for parameter {i}: tau {}",
            t.tau
        );
    }
    assert!(
        burn_in as f64 > 10.0 * tau_max,
        "burn-in shorter than 10 tau"
    );
    let (b, t) = suggest_burn_in_and_thin(&taus);
    println!("suggested burn-in {b}, thinning {t}");
    assert!(b <= burn_in && b as f64 >= 2.0 * tau_max && t >= 1);
    let acc = sampler.overall_acceptance();
    assert!(acc > 0.1 && acc < 0.7, "acceptance {acc}");

    let samples = chain.samples(burn_in, 1).unwrap();
    let m_hat = samples.mean();
    let c_hat = samples.covariance();

    // Monte Carlo error of the mean of a stationary series y_s (here the
    // walker average at step s): σ²_MC = Var(y) · τ_y / T (Sokal 1997, §3;
    // common practice). Using the walker-averaged series keeps any
    // correlation between walkers in Var(y).
    let mc_sigma = |y: &[f64]| -> (f64, f64) {
        let n = y.len() as f64;
        let mu = y.iter().sum::<f64>() / n;
        let var = y.iter().map(|v| (v - mu).powi(2)).sum::<f64>() / (n - 1.0);
        let tau = integrated_autocorr_time(y, DEFAULT_WINDOW_C)
            .unwrap()
            .tau
            .max(1.0);
        ((var * tau / n).sqrt(), tau)
    };

    let mut worst: f64 = 0.0;
    for i in 0..D {
        let y = chain.walker_mean_series(i, burn_in);
        let (s, _) = mc_sigma(&y);
        let z = (m_hat[i] - mean[i]) / s;
        println!(
            "mean {i}: est {:.6e} true {:.6e} sigma_MC {:.2e} z {:+.2}",
            m_hat[i], mean[i], s, z
        );
        worst = worst.max(z.abs());
        assert!(
            z.abs() < 5.0,
            "mean of parameter {i} off by {z:.2} sigma_MC"
        );
    }
    // Covariance entry (i, j): mean over the chain of the walker-averaged
    // products (x_i − m̂_i)(x_j − m̂_j); its MC error from the same formula.
    let mut y = vec![0.0; kept];
    for i in 0..D {
        for j in i..D {
            for (s, ys) in y.iter_mut().enumerate() {
                let row = burn_in + s;
                *ys = (0..n_walkers)
                    .map(|w| {
                        let p = chain.position(row, w);
                        (p[i] - m_hat[i]) * (p[j] - m_hat[j])
                    })
                    .sum::<f64>()
                    / n_walkers as f64;
            }
            let (s, tau) = mc_sigma(&y);
            let z = (c_hat[i * D + j] - cov[(i, j)]) / s;
            let rel = s / (cov[(i, i)] * cov[(j, j)]).sqrt();
            println!(
                "cov ({i},{j}): est {:+.5e} true {:+.5e} sigma_MC/(s_i s_j) {rel:.1e} tau {tau:.0} z {z:+.2}",
                c_hat[i * D + j],
                cov[(i, j)]
            );
            worst = worst.max(z.abs());
            assert!(z.abs() < 5.0, "covariance ({i},{j}) off by {z:.2} sigma_MC");
        }
    }
    println!(
        "largest deviation: {worst:.2} sigma_MC over {} checks",
        D + D * (D + 1) / 2
    );
}

/// AR(1): x_t = ρ x_{t−1} + √(1 − ρ²) ε_t with unit stationary variance.
fn ar1(rho: f64, n: usize, seed: u64) -> Vec<f64> {
    let mut rng = ChaCha20Rng::seed_from_u64(seed);
    let mut x: f64 = rng.sample(StandardNormal);
    let k = (1.0 - rho * rho).sqrt();
    (0..n)
        .map(|_| {
            let e: f64 = rng.sample(StandardNormal);
            x = rho * x + k * e;
            x
        })
        .collect()
}

#[test]
fn autocorrelation_time_of_ar1_series_matches_analytic_value() {
    for (k, &rho) in [0.0, 0.5, 0.9, 0.98].iter().enumerate() {
        let x = ar1(rho, 200_000, 100 + k as u64);
        let t = integrated_autocorr_time(&x, DEFAULT_WINDOW_C).unwrap();
        let exact = (1.0 + rho) / (1.0 - rho);
        let z = (t.tau - exact) / t.std_error;
        println!(
            "rho {rho}: tau_hat {:.3} ± {:.3} (window {}), exact {exact:.3}, z {z:+.2}",
            t.tau, t.std_error, t.window
        );
        assert!(t.window_found && t.reliable);
        assert!(z.abs() < 5.0, "rho {rho}: tau_hat {} vs {exact}", t.tau);
    }
}

#[test]
fn short_series_is_flagged_unreliable() {
    // τ = 19 for ρ = 0.9: 500 points is fewer than 50 τ.
    let x = ar1(0.9, 500, 7);
    let t = integrated_autocorr_time(&x, DEFAULT_WINDOW_C).unwrap();
    println!("short: tau_hat {:.2}, n {}", t.tau, t.n);
    assert!(!t.reliable);
    // A constant series has no autocorrelation time.
    assert!(integrated_autocorr_time(&[3.0; 100], DEFAULT_WINDOW_C).is_err());
}

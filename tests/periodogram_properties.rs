//! Identities, invariances, limits and bad input of the periodogram layer.

use apsidal::periodogram::{
    BaluevFap, FrequencyGrid, GlsSeries, PeelSettings, PeelStop, PeriodogramError, fit_sinusoid,
    gls_power, peel_signals, spectral_window,
};
use nalgebra::{DMatrix, DVector};
use proptest::prelude::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use std::f64::consts::{PI, TAU};

/// χ² of the weighted least-squares fit of offset + cos + sin at `f`, by an
/// independent route: nalgebra SVD solve of the whitened design matrix.
fn chi2_sinusoid(t: &[f64], y: &[f64], s: &[f64], f: f64) -> f64 {
    let n = t.len();
    let a = DMatrix::from_fn(n, 3, |i, j| {
        let w = TAU * f * t[i];
        [1.0, w.cos(), w.sin()][j] / s[i]
    });
    let b = DVector::from_fn(n, |i, _| y[i] / s[i]);
    let x = a.clone().svd(true, true).solve(&b, 1e-14).unwrap();
    (a * x - b).norm_squared()
}

fn chi2_mean(y: &[f64], s: &[f64]) -> f64 {
    let sw: f64 = s.iter().map(|s| s.powi(-2)).sum();
    let m: f64 = y.iter().zip(s).map(|(y, s)| y / (s * s)).sum::<f64>() / sw;
    y.iter().zip(s).map(|(y, s)| ((y - m) / s).powi(2)).sum()
}

fn series(seed: u64, n: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..900.0)).collect();
    t.sort_by(f64::total_cmp);
    let s: Vec<f64> = (0..n).map(|_| rng.random_range(0.5..5.0)).collect();
    let y: Vec<f64> = t
        .iter()
        .zip(&s)
        .map(|(t, s)| {
            let e: f64 = StandardNormal.sample(&mut rng);
            4.0 * (TAU * t / 31.0).sin() + s * e
        })
        .collect();
    (t, y, s)
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 64,
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    /// ZK09 eq. 4: p = (χ²₀ − χ²(ω)) / χ²₀, checked against a generic
    /// least-squares solve at random frequencies.
    #[test]
    fn power_is_the_chi2_reduction(seed in 0u64..1000, f in 0.0011f64..1.0) {
        let (t, y, s) = series(seed, 25);
        let p = GlsSeries::new(&t, &y, &s).unwrap().power(f).unwrap();
        let c0 = chi2_mean(&y, &s);
        let expected = (c0 - chi2_sinusoid(&t, &y, &s, f)) / c0;
        prop_assert!((p - expected).abs() < 1e-10, "{p} vs {expected}");
    }

    /// Shifting the epochs (e.g. to BJD), adding a constant to the
    /// velocities, scaling velocities, or scaling all errors by one factor
    /// leaves the power unchanged.
    #[test]
    fn power_invariances(seed in 0u64..1000, f in 0.002f64..0.5, shift in -3.0e6f64..3.0e6,
                         scale in 0.01f64..100.0) {
        let (t, y, s) = series(seed, 20);
        let p = GlsSeries::new(&t, &y, &s).unwrap().power(f).unwrap();
        let t2: Vec<f64> = t.iter().map(|t| t + shift).collect();
        let y2: Vec<f64> = y.iter().map(|y| scale * y + 17.0).collect();
        let s2: Vec<f64> = s.iter().map(|s| 3.0 * s).collect();
        let q = GlsSeries::new(&t2, &y2, &s2).unwrap().power(f).unwrap();
        // A shift of 3e6 d rounds the epochs at 5e-10 d: phase errors
        // 2π f · 5e-10 ≲ 2e-9 rad.
        prop_assert!((p - q).abs() < 1e-7, "{p} vs {q}");
    }

    /// The fitted sinusoid leaves residuals orthogonal (weighted) to the
    /// constant, cos and sin columns: the least-squares condition.
    #[test]
    fn fit_residuals_are_orthogonal(seed in 0u64..1000, f in 0.002f64..0.5) {
        let (t, y, s) = series(seed, 30);
        let fit = fit_sinusoid(&t, &y, &s, f).unwrap();
        let mut dots = [0.0f64; 3];
        let mut scale = 0.0f64;
        for i in 0..t.len() {
            let r = (y[i] - fit.value_at(t[i])) / (s[i] * s[i]);
            let w = TAU * f * t[i];
            dots[0] += r;
            dots[1] += r * w.cos();
            dots[2] += r * w.sin();
            scale += y[i].abs() / (s[i] * s[i]);
        }
        for d in dots {
            prop_assert!(d.abs() < 1e-10 * scale);
        }
    }
}

#[test]
fn spectrum_recurrence_agrees_with_direct_power() {
    let (t, y, s) = series(7, 60);
    let t: Vec<f64> = t.iter().map(|t| t + 2_460_000.0).collect(); // BJD-like epochs
    let gls = GlsSeries::new(&t, &y, &s).unwrap();
    let grid = FrequencyGrid::new(1.0 / 900.0, 1.0 / 9000.0, 9000).unwrap();
    let spectrum = gls.spectrum(&grid);
    for k in (0..grid.len()).step_by(13) {
        let direct = gls.power(grid.frequency(k)).unwrap();
        assert!((spectrum.power[k] - direct).abs() < 1e-12, "k = {k}");
    }
}

#[test]
fn window_of_regular_sampling_is_the_fejer_kernel() {
    // N epochs every Δ days, equal weights: W(f) = [sin(πfNΔ) / (N sin(πfΔ))]²
    // (the Fejér kernel; textbook Fourier analysis, e.g. Bracewell, from memory).
    let (n, dt) = (37usize, 1.3);
    let t: Vec<f64> = (0..n).map(|i| 500.0 + dt * i as f64).collect();
    let grid = FrequencyGrid::new(0.0013, 0.0017, 900).unwrap();
    let w = spectral_window(&t, None, &grid).unwrap();
    // Equal errors give the same window as no weights.
    let w2 = spectral_window(&t, Some(&vec![2.5; n]), &grid).unwrap();
    for k in 0..grid.len() {
        let f = grid.frequency(k);
        let x = PI * f * dt;
        let expected = ((n as f64 * x).sin() / (n as f64 * x.sin())).powi(2);
        assert!(
            (w[k] - expected).abs() < 1e-12,
            "f = {f}: {} vs {expected}",
            w[k]
        );
        assert!((w[k] - w2[k]).abs() < 1e-14);
    }
}

#[test]
fn aliased_frequency_gives_zero_power_not_nan() {
    // Epochs every 2 d: at f = 0.5 1/d every cos/sin is the same constant,
    // so the sinusoid explains nothing beyond the mean.
    let t = [0.0, 2.0, 4.0, 6.0];
    let y = [1.0, -2.0, 0.5, 3.0];
    let s = [1.0; 4];
    let gls = GlsSeries::new(&t, &y, &s).unwrap();
    assert_eq!(gls.power(0.5).unwrap(), 0.0);
    assert_eq!(gls.power(0.0).unwrap(), 0.0);
    assert!(matches!(
        gls.fit(0.5),
        Err(PeriodogramError::DegenerateFit { .. })
    ));
    // At f = 0.25 1/d, sin is 0 on every epoch: one column left, and the
    // power is that of the cos column alone, cos = (1, −1, 1, −1).
    let p = gls.power(0.25).unwrap();
    let alone = {
        let c = [1.0, -1.0, 1.0, -1.0];
        let m = y.iter().sum::<f64>() / 4.0;
        let yc: f64 = y.iter().zip(&c).map(|(y, c)| (y - m) * c).sum();
        let yy: f64 = y.iter().map(|y| (y - m).powi(2)).sum();
        yc * yc / 4.0 / yy
    };
    assert!((p - alone).abs() < 1e-12, "{p} vs {alone}");
}

#[test]
fn bad_input_is_refused_with_typed_errors() {
    let grid = FrequencyGrid::new(0.01, 0.01, 10).unwrap();
    let ok_t = [0.0, 1.0, 2.0, 3.5];
    let ok_y = [1.0, 2.0, 0.0, -1.0];
    let ok_s = [1.0; 4];
    assert_eq!(
        gls_power(&ok_t[..2], &ok_y[..2], &ok_s[..2], &grid),
        Err(PeriodogramError::TooFewPoints {
            count: 2,
            needed: 3
        })
    );
    assert!(matches!(
        gls_power(&ok_t, &ok_y[..3], &ok_s, &grid),
        Err(PeriodogramError::LengthMismatch {
            times: 4,
            values: 3,
            errors: 4
        })
    ));
    let nan_y = [1.0, f64::NAN, 0.0, -1.0];
    assert_eq!(
        gls_power(&ok_t, &nan_y, &ok_s, &grid),
        Err(PeriodogramError::NonFinite {
            quantity: "velocity",
            index: 1
        })
    );
    let inf_t = [0.0, 1.0, f64::INFINITY, 3.0];
    assert_eq!(
        gls_power(&inf_t, &ok_y, &ok_s, &grid),
        Err(PeriodogramError::NonFinite {
            quantity: "epoch",
            index: 2
        })
    );
    let neg_s = [1.0, 1.0, 1.0, -0.1];
    assert!(matches!(
        gls_power(&ok_t, &ok_y, &neg_s, &grid),
        Err(PeriodogramError::NonPositiveError { index: 3, .. })
    ));
    assert_eq!(
        gls_power(&[5.0; 4], &ok_y, &ok_s, &grid),
        Err(PeriodogramError::ZeroBaseline)
    );
    assert_eq!(
        gls_power(&ok_t, &[2.0; 4], &ok_s, &grid),
        Err(PeriodogramError::ConstantData)
    );
    assert!(matches!(
        FrequencyGrid::new(0.1, 0.01, 0),
        Err(PeriodogramError::EmptyGrid { .. })
    ));
    let gls = GlsSeries::new(&ok_t, &ok_y, &ok_s).unwrap();
    assert!(gls.power(f64::NAN).is_err());
    assert!(gls.power(-1.0).is_err());
    assert!(BaluevFap::new(&ok_t[..3], &ok_s[..3], 1.0).is_err());
    let fap = BaluevFap::new(&ok_t, &ok_s, 1.0).unwrap();
    assert!(fap.probability(1.5).is_err());
    assert!(fap.probability(f64::NAN).is_err());
    assert!(fap.power_level(0.0).is_err());
    assert!(fap.power_level(1.0).is_err());
    let bad_peel = PeelSettings {
        fap_threshold: 0.0,
        ..Default::default()
    };
    assert!(peel_signals(&ok_t, &ok_y, &ok_s, &grid, &bad_peel).is_err());
}

#[test]
fn peeling_honours_the_signal_limit() {
    let (t, y, s) = series(11, 50);
    let grid = FrequencyGrid::new(1.0 / 900.0, 1.0 / 9000.0, 4000).unwrap();
    let settings = PeelSettings {
        max_signals: 1,
        fap_threshold: 0.5,
    };
    let out = peel_signals(&t, &y, &s, &grid, &settings).unwrap();
    assert_eq!(out.detections.len(), 1);
    assert_eq!(out.stop, PeelStop::SignalLimit);
    assert!((out.detections[0].period - 31.0).abs() < 0.5);
}

#[test]
fn baluev_fap_bounds_the_noise_only_rate() {
    // Null hypothesis check by simulation (seeded): white Gaussian noise,
    // 40 uneven epochs, 400 realisations. Baluev's FAP is an upper bound that
    // is close for small FAP, so the fraction of realisations whose highest
    // grid peak exceeds the 10 % level must be near, and not far above, 0.1
    // (binomial σ = 0.015).
    let mut rng = ChaCha8Rng::seed_from_u64(2008);
    let n = 40;
    let mut t: Vec<f64> = (0..n).map(|_| rng.random_range(0.0..400.0)).collect();
    t.sort_by(f64::total_cmp);
    let s: Vec<f64> = (0..n).map(|_| rng.random_range(1.0..3.0)).collect();
    let grid = FrequencyGrid::new(1.0 / 400.0, 1.0 / 4000.0, 2000).unwrap();
    let level = BaluevFap::new(&t, &s, grid.last())
        .unwrap()
        .power_level(0.1)
        .unwrap();
    let trials = 400;
    let mut above = 0;
    let mut y = vec![0.0; n];
    for _ in 0..trials {
        for (yi, si) in y.iter_mut().zip(&s) {
            let e: f64 = StandardNormal.sample(&mut rng);
            *yi = si * e;
        }
        let p = gls_power(&t, &y, &s, &grid).unwrap();
        if p.iter().cloned().fold(0.0, f64::max) > level {
            above += 1;
        }
    }
    let rate = above as f64 / trials as f64;
    println!("noise-only rate above the 10 % Baluev level: {rate}");
    assert!((0.05..=0.14).contains(&rate), "rate {rate}");
}

#[test]
fn fap_levels_invert_the_fap_across_its_range() {
    // Narrow and wide searches, FAP targets from near 1 down to 1e-12: each
    // level must give back its FAP, and levels fall as the FAP rises.
    let (t, _, s) = series(3, 30);
    for f_max in [1e-4, 0.01, 2.0] {
        let fap = BaluevFap::new(&t, &s, f_max).unwrap();
        let mut previous = 1.0;
        for target in [1e-12, 1e-6, 1e-3, 0.1, 0.5, 0.9, 0.999] {
            let z = fap.power_level(target).unwrap();
            let back = fap.probability(z).unwrap();
            assert!(
                (back - target).abs() <= 1e-9 * target,
                "f_max {f_max}, target {target}: z {z}, FAP {back}"
            );
            assert!(z < previous);
            previous = z;
        }
    }
}

//! Injection–recovery of a two-planet Keplerian system observed by two
//! instruments. The outside reference is the injected truth with Gaussian
//! noise: the maximum-likelihood fit must reach the optimum from a
//! perturbed start, and its pulls (fit − truth)/σ over many noise
//! realisations must be close to standard normal.

use apsidal::fit::best_fit::{FitSettings, fit_model};
use apsidal::fit::models::{
    ModelKind, Observations, PlanetGuess, RvModel, TrendKind, default_parameters,
};
use apsidal::model::keplerian::{KeplerianParams, PlanetSignal, Trend, keplerian_model_rv};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

const T_REF: f64 = 2_460_000.0;

fn synthetic(seed: u64) -> (Observations, KeplerianParams, [f64; 2]) {
    let truth = KeplerianParams {
        t_ref: T_REF,
        planets: vec![
            PlanetSignal {
                period: 45.3,
                semi_amplitude: 25.0,
                eccentricity: 0.2,
                omega_star: 60f64.to_radians(),
                mean_anomaly_ref: 1.0,
            },
            PlanetSignal {
                period: 312.0,
                semi_amplitude: 12.0,
                eccentricity: 0.08,
                omega_star: 200f64.to_radians(),
                mean_anomaly_ref: 4.0,
            },
        ],
        offsets: vec![-12.0, 30.0],
        trend: Trend::None,
    };
    let jitter = [2.0, 4.0];
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = 140;
    let mut t: Vec<f64> = (0..n)
        .map(|_| T_REF - 750.0 + 1500.0 * rng.random::<f64>())
        .collect();
    t.sort_by(f64::total_cmp);
    let inst: Vec<usize> = (0..n).map(|i| usize::from(i % 3 == 0)).collect();
    let err: Vec<f64> = inst
        .iter()
        .map(|&k| if k == 0 { 1.5 } else { 3.0 })
        .collect();
    let mut rv = vec![0.0; n];
    keplerian_model_rv(&truth, &t, &inst, &mut rv).unwrap();
    for i in 0..n {
        let s = (err[i] * err[i] + jitter[inst[i]] * jitter[inst[i]]).sqrt();
        rv[i] += Normal::new(0.0, s).unwrap().sample(&mut rng);
    }
    let obs = Observations {
        t,
        rv,
        err,
        inst,
        instruments: vec!["ORLA".into(), "BRENN".into()],
    };
    (obs, truth, jitter)
}

#[test]
fn keplerian_fit_recovers_injected_system() {
    let (obs, truth, jitter) = synthetic(7);
    let lam =
        |p: &PlanetSignal| (p.mean_anomaly_ref + p.omega_star + std::f64::consts::PI).to_degrees();
    // Start away from the truth: periods off by 0.5 %, K by 20 %, phases by 15°.
    let guesses = vec![
        PlanetGuess {
            name: "b".into(),
            period: 45.3 * 1.005,
            semi_amplitude: 20.0,
            eccentricity: 0.1,
            omega_star_deg: 90.0,
            mean_longitude_deg: lam(&truth.planets[0]) + 15.0,
            inclination_deg: 90.0,
            node_difference_deg: 0.0,
        },
        PlanetGuess {
            name: "c".into(),
            period: 312.0 * 0.995,
            semi_amplitude: 14.0,
            eccentricity: 0.1,
            omega_star_deg: 180.0,
            mean_longitude_deg: lam(&truth.planets[1]) - 15.0,
            inclination_deg: 90.0,
            node_difference_deg: 0.0,
        },
    ];
    let params = default_parameters(ModelKind::Keplerian, &guesses, &obs, TrendKind::None).unwrap();
    let names = vec!["b".to_string(), "c".to_string()];
    let model = RvModel::new(
        obs,
        ModelKind::Keplerian,
        0.8,
        T_REF,
        &names,
        TrendKind::None,
        params,
    )
    .unwrap();
    let start = model.params.start_full();
    let fit = fit_model(&model, &[start], &FitSettings::default()).unwrap();
    println!(
        "status {} rounds {} lnL {:.3} chi2 {:.2}",
        fit.status, fit.rounds, fit.ln_likelihood, fit.chi_square
    );
    assert!(fit.converged, "fit did not converge: {}", fit.status);
    let get = |n: &str| {
        let i = fit.names.iter().position(|x| x == n).unwrap();
        (fit.values[i], fit.std_errors[i])
    };
    // Jitters are recovered roughly (no error bar: maximum-likelihood
    // jitter is biased low for few points).
    let (j0, _) = get("ORLA.jitter");
    let (j1, _) = get("BRENN.jitter");
    println!("jitters {j0:.2} {j1:.2} (truth {jitter:?})");
    assert!(j0 > 0.5 && j0 < 4.0 && j1 > 1.0 && j1 < 8.0);
}

/// Pull statistics over independent noise realisations: (fit − truth)/σ
/// should be close to standard normal if the fit is unbiased and its
/// covariance errors are right (the maximum-likelihood jitters are biased
/// low for finite samples, which widens the pulls slightly).
#[test]
fn pulls_are_close_to_standard_normal() {
    let mut pulls = Vec::new();
    for seed in 1..=24u64 {
        let (obs, truth, _) = synthetic(seed);
        let g = |p: &PlanetSignal, n: &str| PlanetGuess {
            name: n.into(),
            period: p.period,
            semi_amplitude: p.semi_amplitude,
            eccentricity: p.eccentricity,
            omega_star_deg: p.omega_star.to_degrees(),
            mean_longitude_deg: (p.mean_anomaly_ref + p.omega_star + std::f64::consts::PI)
                .to_degrees(),
            inclination_deg: 90.0,
            node_difference_deg: 0.0,
        };
        let guesses = vec![g(&truth.planets[0], "b"), g(&truth.planets[1], "c")];
        let params =
            default_parameters(ModelKind::Keplerian, &guesses, &obs, TrendKind::None).unwrap();
        let names = vec!["b".to_string(), "c".to_string()];
        let model = RvModel::new(
            obs,
            ModelKind::Keplerian,
            0.8,
            T_REF,
            &names,
            TrendKind::None,
            params,
        )
        .unwrap();
        let fit = fit_model(
            &model,
            &[model.params.start_full()],
            &FitSettings::default(),
        )
        .unwrap();
        assert!(fit.converged);
        for (name, want) in [
            ("b.period", 45.3),
            ("b.semi_amplitude", 25.0),
            ("c.period", 312.0),
            ("c.semi_amplitude", 12.0),
            ("ORLA.offset", -12.0),
            ("BRENN.offset", 30.0),
        ] {
            let i = fit.names.iter().position(|x| x == name).unwrap();
            pulls.push((fit.values[i] - want) / fit.std_errors[i].unwrap());
        }
    }
    let n = pulls.len() as f64;
    let mean = pulls.iter().sum::<f64>() / n;
    let rms = (pulls.iter().map(|p| p * p).sum::<f64>() / n).sqrt();
    let beyond3 = pulls.iter().filter(|p| p.abs() > 3.0).count();
    println!(
        "{} pulls: mean {mean:.3}, rms {rms:.3}, beyond 3σ: {beyond3}",
        pulls.len()
    );
    // For 144 standard-normal pulls the mean has σ ≈ 0.08 and the rms
    // σ ≈ 0.06; allow the small finite-sample widening.
    assert!(mean.abs() < 0.3, "mean pull {mean}");
    assert!(rms > 0.8 && rms < 1.35, "rms pull {rms}");
    assert!(beyond3 <= 6);
}

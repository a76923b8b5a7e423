//! The multi-planet Keplerian RV model against an independent computation
//! with SciPy (tests/fixtures/keplerian_rv.py → keplerian_rv.json: Kepler's
//! equation by scipy.optimize.brentq, ν by the half-angle formula), plus
//! the model's own checks (validation, sign of the trend and offsets).

use apsidal::model::keplerian::{
    KeplerianError, KeplerianParams, PlanetSignal, Trend, add_planet_signal, keplerian_model_rv,
    keplerian_rv,
};
use serde_json::Value;

fn fixture() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/keplerian_rv.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

fn f(v: &Value) -> f64 {
    v.as_f64().unwrap()
}

#[test]
fn matches_scipy_reference() {
    let fx = fixture();
    let base = f(&fx["epoch_base"]);
    let ticks_per_day = f(&fx["ticks_per_day"]);
    let mut worst_rel: f64 = 0.0;
    for case in fx["cases"].as_array().unwrap() {
        let planets: Vec<PlanetSignal> = case["planets"]
            .as_array()
            .unwrap()
            .iter()
            .map(|p| PlanetSignal {
                period: f(&p["period"]),
                semi_amplitude: f(&p["semi_amplitude"]),
                eccentricity: f(&p["eccentricity"]),
                omega_star: f(&p["omega_star"]),
                mean_anomaly_ref: f(&p["mean_anomaly_ref"]),
            })
            .collect();
        let k_sum: f64 = planets.iter().map(|p| p.semi_amplitude).sum();
        let params = KeplerianParams {
            t_ref: f(&case["t_ref"]),
            planets,
            offsets: case["offsets"].as_array().unwrap().iter().map(f).collect(),
            trend: Trend::Quadratic {
                slope: f(&case["slope"]),
                curvature: f(&case["curvature"]),
            },
        };
        // Epochs are stored exactly as integers: t = base + ticks / 65536.
        let epochs: Vec<f64> = case["epoch_ticks"]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| base + t.as_i64().unwrap() as f64 / ticks_per_day)
            .collect();
        let inst: Vec<usize> = case["instruments"]
            .as_array()
            .unwrap()
            .iter()
            .map(|i| i.as_u64().unwrap() as usize)
            .collect();
        let expected: Vec<f64> = case["rv"].as_array().unwrap().iter().map(f).collect();
        assert_eq!(epochs.len(), expected.len());
        let mut out = vec![0.0; epochs.len()];
        keplerian_model_rv(&params, &epochs, &inst, &mut out).unwrap();
        let mut max_abs: f64 = 0.0;
        for (got, want) in out.iter().zip(&expected) {
            max_abs = max_abs.max((got - want).abs());
        }
        let rel = max_abs / k_sum;
        worst_rel = worst_rel.max(rel);
        println!(
            "{:>18}: {} epochs, max |Δv| = {max_abs:.3e} m/s, max |Δv|/ΣK = {rel:.3e}",
            case["name"].as_str().unwrap(),
            epochs.len()
        );
        // Measured ≈ 1.2e-13 of ΣK at worst (2026-12-01); required: 1e-11 of
        // ΣK, i.e. ≤ 1e-9 m/s for ΣK ≤ 100 m/s.
        assert!(
            rel <= 1e-11,
            "case {} differs by {max_abs} m/s",
            case["name"]
        );
    }
    println!("worst relative difference {worst_rel:.3e}");
}

fn one_planet(e: f64) -> PlanetSignal {
    PlanetSignal {
        period: 17.0,
        semi_amplitude: 12.0,
        eccentricity: e,
        omega_star: 0.4,
        mean_anomaly_ref: 2.0,
    }
}

#[test]
fn model_is_sum_of_signals_offsets_and_trend() {
    // Linearity of the model: the sum of add_planet_signal outputs plus
    // offsets and trend equals the full model (its own definition, checked
    // through two code paths), and keplerian_rv agrees epoch by epoch.
    let params = KeplerianParams {
        t_ref: 100.0,
        planets: vec![one_planet(0.2), {
            let mut p = one_planet(0.6);
            p.period = 230.0;
            p.omega_star = -2.0;
            p
        }],
        offsets: vec![1.5, -4.0, 10.0],
        trend: Trend::Quadratic {
            slope: 0.01,
            curvature: 1e-4,
        },
    };
    let epochs: Vec<f64> = (0..40).map(|i| 37.0 + 6.1 * i as f64).collect();
    let inst: Vec<usize> = (0..40).map(|i| i % 3).collect();
    let mut full = vec![0.0; 40];
    keplerian_model_rv(&params, &epochs, &inst, &mut full).unwrap();
    let mut parts = vec![0.0; 40];
    for p in &params.planets {
        add_planet_signal(p, params.t_ref, &epochs, &mut parts).unwrap();
    }
    for i in 0..40 {
        let dt = epochs[i] - 100.0;
        let single: f64 = params
            .planets
            .iter()
            .map(|p| {
                keplerian_rv(
                    epochs[i],
                    p.period,
                    p.semi_amplitude,
                    p.eccentricity,
                    p.omega_star,
                    p.mean_anomaly_ref,
                    params.t_ref,
                )
                .unwrap()
            })
            .sum();
        let expect = parts[i] + params.offsets[inst[i]] + 0.01 * dt + 1e-4 * dt * dt;
        assert!((full[i] - expect).abs() < 1e-12);
        assert!((parts[i] - single).abs() < 1e-12);
    }
}

#[test]
fn circular_orbit_at_reference_epoch() {
    // e = 0, ω⋆ = 0, M_ref = 0: ν = 0 at t_ref, v = K; a quarter period
    // later ν = 90°, v = K cos 90° = 0 (the formula of DESIGN §3).
    let p = PlanetSignal {
        period: 8.0,
        semi_amplitude: 3.0,
        eccentricity: 0.0,
        omega_star: 0.0,
        mean_anomaly_ref: 0.0,
    };
    let mut out = [0.0; 2];
    add_planet_signal(&p, 50.0, &[50.0, 52.0], &mut out).unwrap();
    assert!((out[0] - 3.0).abs() < 1e-14);
    assert!(out[1].abs() < 1e-14);
}

#[test]
fn sqrt_e_parametrisation() {
    let p = PlanetSignal::from_sqrt_e(5.0, 1.0, 0.3, -0.4, 0.0);
    assert!((p.eccentricity - 0.25).abs() < 1e-15);
    assert!((p.omega_star - (-0.4f64).atan2(0.3)).abs() < 1e-15);
    let c = PlanetSignal::from_sqrt_e(5.0, 1.0, 0.0, 0.0, 0.0);
    assert_eq!((c.eccentricity, c.omega_star), (0.0, 0.0));
}

#[test]
fn bad_parameters_are_refused() {
    let good = KeplerianParams {
        t_ref: 0.0,
        planets: vec![one_planet(0.1)],
        offsets: vec![0.0],
        trend: Trend::Linear { slope: 0.0 },
    };
    let mut out = [0.0; 2];
    let ep = [1.0, 2.0];
    assert!(keplerian_model_rv(&good, &ep, &[0, 0], &mut out).is_ok());
    let with = |f: &dyn Fn(&mut PlanetSignal)| {
        let mut p = good.clone();
        f(&mut p.planets[0]);
        keplerian_model_rv(&p, &ep, &[0, 0], &mut [0.0; 2]).unwrap_err()
    };
    assert!(matches!(
        with(&|p| p.eccentricity = 1.0),
        KeplerianError::Eccentricity { planet: 0, .. }
    ));
    assert!(matches!(
        with(&|p| p.eccentricity = -0.01),
        KeplerianError::Eccentricity { .. }
    ));
    assert!(matches!(
        with(&|p| p.eccentricity = f64::NAN),
        KeplerianError::Eccentricity { .. }
    ));
    assert!(matches!(
        with(&|p| p.period = 0.0),
        KeplerianError::Period { .. }
    ));
    assert!(matches!(
        with(&|p| p.period = f64::INFINITY),
        KeplerianError::Period { .. }
    ));
    assert!(matches!(
        with(&|p| p.semi_amplitude = -1.0),
        KeplerianError::SemiAmplitude { .. }
    ));
    assert!(matches!(
        with(&|p| p.omega_star = f64::NAN),
        KeplerianError::NotFinite { .. }
    ));
    assert!(matches!(
        with(&|p| p.mean_anomaly_ref = f64::INFINITY),
        KeplerianError::NotFinite { .. }
    ));
    assert!(matches!(
        keplerian_model_rv(&good, &ep, &[0, 1], &mut out).unwrap_err(),
        KeplerianError::Instrument {
            index: 1,
            instrument: 1,
            n_offsets: 1
        }
    ));
    assert!(matches!(
        keplerian_model_rv(&good, &ep, &[0], &mut out).unwrap_err(),
        KeplerianError::Lengths { .. }
    ));
    assert!(matches!(
        keplerian_model_rv(&good, &[1.0, f64::NAN], &[0, 0], &mut out).unwrap_err(),
        KeplerianError::Epoch { index: 1 }
    ));
    assert!(matches!(
        keplerian_model_rv(&good, &[1.0, 2e9], &[0, 0], &mut out).unwrap_err(),
        KeplerianError::Epoch { index: 1 }
    ));
    let mut bad = good.clone();
    bad.offsets[0] = f64::NAN;
    assert!(matches!(
        keplerian_model_rv(&bad, &ep, &[0, 0], &mut out).unwrap_err(),
        KeplerianError::Offset { instrument: 0 }
    ));
    let mut bad = good.clone();
    bad.trend = Trend::Quadratic {
        slope: 0.0,
        curvature: f64::INFINITY,
    };
    assert!(matches!(
        keplerian_model_rv(&bad, &ep, &[0, 0], &mut out).unwrap_err(),
        KeplerianError::TrendOrReference
    ));
    assert!(keplerian_rv(1.0, 10.0, 1.0, 1.0, 0.0, 0.0, 0.0).is_none());
}

/// Finite but enormous parameters must give a typed error, not ±∞
/// (the case the hardening property test found: P = K = γ = f64::MAX).
#[test]
fn enormous_parameters_are_refused_not_infinite() {
    use apsidal::model::keplerian::{
        KeplerianError, KeplerianParams, PlanetSignal, Trend, keplerian_model_rv,
    };
    let params = KeplerianParams {
        t_ref: 2_460_000.0,
        planets: vec![PlanetSignal {
            period: f64::MAX,
            semi_amplitude: f64::MAX,
            eccentricity: 0.0,
            omega_star: 0.0,
            mean_anomaly_ref: 0.0,
        }],
        offsets: vec![f64::MAX],
        trend: Trend::None,
    };
    let mut out = [0.0];
    let r = keplerian_model_rv(&params, &[0.0], &[0], &mut out);
    assert!(
        matches!(r, Err(KeplerianError::Overflow { index: 0 })),
        "{r:?}"
    );
}

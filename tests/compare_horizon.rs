//! Divergence horizon on synthetic parameters of the project's models (no
//! fitting). Outside references: a brute-force scan of both predictions
//! ten times finer than the search's step; numpy.percentile (type 7) for
//! the posterior quantiles (tests/fixtures/horizon_quantiles.py).

mod compare_support;

use apsidal::compare::horizon::{
    HorizonOutcome, HorizonSettings, HorizonYears, divergence_horizon, horizon_over_samples,
    quantile_years,
};
use apsidal::compare::statistics::{
    GridSettings, ModelAt, compare_statistics, velocity_difference,
};
use apsidal::fit::models::ModelKind;
use compare_support::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

#[test]
fn horizon_agrees_with_a_brute_force_scan() {
    let planets = near_two_to_one();
    let obs = observations(&planets, 40, 300.0, 11);
    let pair = Pair::new(&planets, &obs);
    let (k, d) = (pair.keplerian(), pair.dynamical());
    // Threshold: twice the largest difference over the data span, so the
    // crossing lies after the data.
    let s = compare_statistics(&k, &d, &GridSettings::default()).unwrap();
    let threshold = 2.0 * s.velocity.max_on_grid_m_s.max(s.velocity.max_at_data_m_s);
    let settings = HorizonSettings {
        threshold_m_s: Some(threshold),
        ..HorizonSettings::default()
    };
    let h = divergence_horizon(&k, &d, &settings).unwrap();
    let HorizonOutcome::Reached {
        epoch_d,
        after_last_yr,
        ..
    } = h.outcome
    else {
        panic!("expected a crossing, got {:?}", h.outcome);
    };
    assert!((h.step_d - 1.5).abs() < 1e-12); // 0.05 × 30 d
    // Brute force: |Δv| on a grid of step/10 from the last observation.
    let fine_step = h.step_d / 10.0;
    let n = ((epoch_d - h.last_epoch_d) / fine_step).ceil() as usize + 40;
    let t: Vec<f64> = (0..=n)
        .map(|i| h.last_epoch_d + i as f64 * fine_step)
        .collect();
    let dv = velocity_difference(&k, &d, &t).unwrap();
    let first = t[dv.iter().position(|x| x.abs() > threshold).unwrap()];
    println!(
        "threshold {threshold:.3} m/s: horizon {after_last_yr:.4} yr after the data (epoch {epoch_d:.4}), brute force {first:.4}, step {:.2} d",
        h.step_d
    );
    assert!((epoch_d - first).abs() <= h.step_d, "{epoch_d} vs {first}");
    // Bisection: above the threshold at the epoch, not above one tolerance
    // earlier.
    let at = velocity_difference(&k, &d, &[epoch_d, epoch_d - h.tolerance_d]).unwrap();
    assert!(at[0].abs() > threshold);
    assert!(at[1].abs() <= threshold * (1.0 + 1e-9));

    // Default threshold (median error, 1 m/s): the interacting pair has
    // diverged by more than that already during the data or shortly after.
    let h1 = divergence_horizon(&k, &d, &HorizonSettings::default()).unwrap();
    println!(
        "default threshold {:.3} m/s: {}",
        h1.threshold_m_s,
        h1.outcome.describe()
    );
    assert_eq!(h1.threshold_m_s, 1.0);
    assert!(h1.outcome.years_after_last().unwrap() < 1.0);
}

#[test]
fn non_interacting_pair_has_a_late_or_no_horizon() {
    let planets = far_apart();
    let obs = observations(&planets, 40, 600.0, 12);
    let pair = Pair::new(&planets, &obs);
    let (k, d) = (pair.keplerian(), pair.dynamical());
    let h = divergence_horizon(&k, &d, &HorizonSettings::default()).unwrap();
    println!("ratio 7, K = 1 m/s: {}", h.outcome.describe());
    match h.outcome {
        HorizonOutcome::BeyondSpan {
            span_d,
            max_difference_m_s,
        } => {
            assert!((span_d - 36_525.0).abs() < 1e-9);
            assert!(max_difference_m_s <= h.threshold_m_s);
        }
        HorizonOutcome::Reached { after_last_yr, .. } => assert!(after_last_yr > 50.0),
        HorizonOutcome::AtLastObservation { .. } => panic!("diverged at once"),
    }
}

#[test]
fn quantiles_match_numpy() {
    let text = std::fs::read_to_string("tests/fixtures/horizon_quantiles.json").unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    let mut x: Vec<f64> = v["values"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a.as_f64().unwrap())
        .collect();
    x.sort_by(f64::total_cmp);
    for (p, q) in v["percent"]
        .as_array()
        .unwrap()
        .iter()
        .zip(v["quantiles"].as_array().unwrap())
    {
        let got = quantile_years(&x, p.as_f64().unwrap() / 100.0).unwrap();
        let HorizonYears::Years(g) = got else {
            panic!()
        };
        assert!((g - q.as_f64().unwrap()).abs() < 1e-12, "{g} vs {q}");
    }
    // Beyond-span entries sort last: the upper quantile becomes BeyondSpan.
    let with_inf = [1.0, 2.0, 3.0, f64::INFINITY, f64::INFINITY];
    assert_eq!(
        quantile_years(&with_inf, 0.5),
        Some(HorizonYears::Years(3.0))
    );
    assert_eq!(
        quantile_years(&with_inf, 0.84),
        Some(HorizonYears::BeyondSpan)
    );
}

#[test]
fn horizon_over_samples_is_deterministic() {
    let planets = near_two_to_one();
    let obs = observations(&planets, 40, 300.0, 11);
    let (km, kv) = model(ModelKind::Keplerian, &planets, &obs);
    let (dm, dv) = model(ModelKind::CoplanarEdgeOn, &planets, &obs);
    let mut rng = ChaCha8Rng::seed_from_u64(99);
    let ik: Vec<usize> = ["b.semi_amplitude", "c.semi_amplitude"]
        .iter()
        .map(|n| km.params.index_of(n).unwrap())
        .collect();
    let id: Vec<usize> = ["b.semi_amplitude", "c.semi_amplitude"]
        .iter()
        .map(|n| dm.params.index_of(n).unwrap())
        .collect();
    // Draws: both models' K scaled by the same factor in [0.8, 1.2].
    let samples: Vec<(Vec<f64>, Vec<f64>)> = (0..12)
        .map(|_| {
            let (mut a, mut b) = (kv.clone(), dv.clone());
            for (i, j) in ik.iter().zip(&id) {
                let f = 0.8 + 0.4 * rng.random::<f64>();
                a[*i] *= f;
                b[*j] *= f;
            }
            (a, b)
        })
        .collect();
    let settings = HorizonSettings {
        threshold_m_s: Some(20.0),
        ..HorizonSettings::default()
    };
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| horizon_over_samples(&km, &dm, &samples, &settings).unwrap())
    };
    let one = run(1);
    let two = run(2);
    assert_eq!(one, two);
    assert_eq!(one.samples, 12);
    assert_eq!(one.failed, 0);
    let mut yrs: Vec<f64> = one
        .per_sample_yr
        .iter()
        .map(|y| y.unwrap_or(f64::INFINITY))
        .collect();
    yrs.sort_by(f64::total_cmp);
    assert_eq!(Some(one.median), quantile_years(&yrs, 0.5));
    // Each sample's horizon equals the single-sample search.
    let (a, b) = &samples[3];
    let h = divergence_horizon(
        &ModelAt {
            model: &km,
            values: a,
        },
        &ModelAt {
            model: &dm,
            values: b,
        },
        &settings,
    )
    .unwrap();
    assert_eq!(h.outcome.years_after_last(), one.per_sample_yr[3]);
    println!(
        "posterior horizon (20 m/s): median {:?}, 68 % [{:?}, {:?}], beyond {}",
        one.median, one.lower_68, one.upper_68, one.beyond_span
    );
    if let (HorizonYears::Years(lo), HorizonYears::Years(m)) = (one.lower_68, one.median) {
        assert!(lo <= m);
    }
    // A draw that cannot be evaluated (e = 1.25) is counted and left out.
    let mut bad = samples.clone();
    let i = dm.params.index_of("b.sqrt_e_cos_w").unwrap();
    bad[0].1[i] = 1.0;
    bad[0].1[dm.params.index_of("b.sqrt_e_sin_w").unwrap()] = 0.5;
    let with_bad = horizon_over_samples(&km, &dm, &bad, &settings).unwrap();
    assert_eq!(with_bad.failed, 1);
    assert_eq!(with_bad.evaluated, 11);
    assert_eq!(with_bad.per_sample_yr[0], None);
    assert_eq!(with_bad.per_sample_yr[1..], one.per_sample_yr[1..]);
    // A vector of the wrong length is an error, not a failed draw.
    let mut short = samples.clone();
    short[2].0.pop();
    assert!(horizon_over_samples(&km, &dm, &short, &settings).is_err());
}

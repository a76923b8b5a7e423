//! The fit driver's handling of bounds and of the automatic Wisdom–Holman
//! step (src/fit/best_fit.rs). Reference: the injected truth of a
//! noise-free one-planet Keplerian signal, whose least-squares optimum is
//! known exactly (the truth, χ² = 0) when it lies inside the bounds, and is
//! on the bound when the prior excludes the truth.

use apsidal::fit::best_fit::{FitSettings, WhStepRule, fit_model};
use apsidal::fit::models::STEP_LADDER;
use apsidal::fit::models::{
    ModelKind, Observations, PlanetGuess, RvModel, TrendKind, default_parameters,
};
use apsidal::fit::params::{Parameter, ParameterSet, Prior};
use apsidal::model::keplerian::keplerian_rv;

const T_REF: f64 = 2_460_000.0;

fn data() -> Observations {
    let t: Vec<f64> = (0..60)
        .map(|i| T_REF - 300.0 + 10.0 * i as f64 + 0.37 * (i % 7) as f64)
        .collect();
    let rv = t
        .iter()
        .map(|&t| keplerian_rv(t, 23.0, 30.0, 0.1, 1.0, 0.5, T_REF).unwrap() + 5.0)
        .collect();
    Observations {
        t,
        rv,
        err: vec![1.0; 60],
        inst: vec![0; 60],
        instruments: vec!["LORNE".into()],
    }
}

fn model(kind: ModelKind, k_upper: f64, k_start: f64) -> RvModel {
    let obs = data();
    let g = PlanetGuess {
        name: "b".into(),
        period: 23.0,
        semi_amplitude: k_start,
        eccentricity: 0.1,
        omega_star_deg: 1f64.to_degrees(),
        mean_longitude_deg: (0.5f64 + 1.0 + std::f64::consts::PI).to_degrees(),
        inclination_deg: 90.0,
        node_difference_deg: 0.0,
    };
    let defaults = default_parameters(kind, &[g], &obs, TrendKind::None).unwrap();
    let params: Vec<Parameter> = defaults
        .parameters()
        .iter()
        .cloned()
        .map(|mut p| {
            if p.name == "b.semi_amplitude" {
                p.prior = Prior::Uniform {
                    lower: 0.0,
                    upper: k_upper,
                };
            }
            if p.name == "LORNE.jitter" {
                p.value = 0.0;
                p.fixed = true;
            }
            p
        })
        .collect();
    RvModel::new(
        obs,
        kind,
        1.0,
        T_REF,
        &["b".to_string()],
        TrendKind::None,
        ParameterSet::new(params).unwrap(),
    )
    .unwrap()
}

#[test]
fn start_on_a_bound_is_moved_inside_and_reaches_the_truth() {
    // K starts exactly on its upper bound 40 (logistic u = 27.6, zero
    // derivative): without the nudge LM could not move it.
    let m = model(ModelKind::Keplerian, 40.0, 40.0);
    let f = fit_model(&m, &[m.params.start_full()], &FitSettings::default()).unwrap();
    let k = f.values[m.params.index_of("b.semi_amplitude").unwrap()];
    println!("K = {k} ({}), χ² = {}", f.status, f.chi_square);
    assert!(f.converged, "{}", f.status);
    assert!((k - 30.0).abs() < 1e-6, "K = {k}");
    assert!(f.held_at_bound.is_empty());
    assert_eq!(f.wh_step, None);
}

#[test]
fn optimum_beyond_a_bound_is_held_on_it() {
    // True K = 30 m/s, prior K ≤ 25: the constrained optimum has K = 25.
    let m = model(ModelKind::Keplerian, 25.0, 20.0);
    let f = fit_model(&m, &[m.params.start_full()], &FitSettings::default()).unwrap();
    let i = m.params.index_of("b.semi_amplitude").unwrap();
    println!(
        "K = {} ({}), held {:?}",
        f.values[i], f.status, f.held_at_bound
    );
    assert!(f.converged, "{}", f.status);
    assert!(
        (f.values[i] - 25.0).abs() < 25.0 * 1e-4,
        "K = {}",
        f.values[i]
    );
    if f.held_at_bound.iter().any(|n| n == "b.semi_amplitude") {
        assert_eq!(f.values[i], 25.0);
        assert_eq!(f.std_errors[i], None);
    }
}

#[test]
fn automatic_wh_step_is_resolved_and_reported() {
    let m = model(ModelKind::CoplanarEdgeOn, 100.0, 30.0);
    let start = m.params.start_full();
    let h = m.automatic_wh_step(&start).unwrap().unwrap();
    // The integrator's rule: P/20 · (1 − e)^{3/2} / √(1 + e) for the
    // innermost orbit (src/nbody/wisdom_holman.rs), here P = 23 d, e = 0.1.
    let rule = 23.0 / 20.0 * 0.9f64.powf(1.5) / 1.1f64.sqrt();
    assert!((h - rule).abs() < 1e-6 * rule, "h = {h}, rule {rule}");
    let fixed = m.with_fixed_wh_step(&start).unwrap();
    assert_eq!(fixed.automatic_wh_step(&start).unwrap(), None);
    // With the step held, ln L is the same at the start as with the
    // automatic rule (same step there).
    assert_eq!(fixed.ln_likelihood(&start), m.ln_likelihood(&start));
    // The automatic rule (the default before the accuracy-driven step).
    let automatic = FitSettings {
        wh_step_rule: WhStepRule::Automatic,
        ..FitSettings::default()
    };
    let f = fit_model(&m, std::slice::from_ref(&start), &automatic).unwrap();
    assert_eq!(f.wh_step, Some(h));
    assert_eq!(f.wh_step_choice, None);
    assert!(f.converged, "{}", f.status);
    // The default: a rung of the ladder on h, reported with its estimate.
    let d = fit_model(&m, &[start], &FitSettings::default()).unwrap();
    let c = d.wh_step_choice.unwrap();
    println!("default rule: {c:?}");
    assert!(d.converged, "{}", d.status);
    assert_eq!(c.automatic_step, h);
    assert!(STEP_LADDER.contains(&c.factor));
    assert_eq!(d.wh_step, Some(c.factor * h));
    assert!(c.meets_tolerance && c.max_rv_error <= c.tolerance);
    assert!(m.automatic_wh_step(&f.values).unwrap().is_some());
    assert_eq!(
        model(ModelKind::Keplerian, 100.0, 30.0)
            .automatic_wh_step(&f.values)
            .unwrap(),
        None
    );
}

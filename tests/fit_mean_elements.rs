//! Baseline-mean elements (`compare::history::mean_orbits`) and the
//! element series at given epochs (`record_at_epochs`) that they rest on.
//!
//! Outside references: the two-body problem (in the limit of vanishing
//! planet masses the orbits are fixed Keplerian ellipses, so the mean
//! elements must be the osculating ones, Kepler's laws), the project's
//! osculating-element conversion at t₀ (`System::osculating_elements`,
//! itself tested against published examples), and two independent
//! integrators (Wisdom–Holman map and Gauss–Radau) on the interacting
//! injection system of tests/injection_support.
mod injection_support;

use apsidal::compare::history::{
    ElementFrame, HistoryError, SpanIntegrator, mean_orbits, record_at_epochs,
};
use apsidal::model::dynamical::{DynamicalModel, DynamicalParams, DynamicalWorkspace};
use apsidal::nbody::system::Primary;
use apsidal::nbody::wisdom_holman::Corrector;
use apsidal::nbody::{EventSettings, System};
use injection_support as inj;
use std::f64::consts::{PI, TAU};

fn system_of(params: &DynamicalParams) -> System {
    let mut ws = DynamicalWorkspace::default();
    DynamicalModel::new(inj::T_REF)
        .build_system(params, &mut ws)
        .unwrap();
    ws.system().clone()
}

fn angle_diff(a: f64, b: f64) -> f64 {
    ((a - b + PI).rem_euclid(TAU) - PI).abs()
}

const GR: SpanIntegrator = SpanIntegrator::GaussRadau { tolerance: 1e-9 };

#[test]
fn weak_planets_have_their_osculating_elements_as_means() {
    // K = 0.01 mm/s: planet-to-star mass ratios ≈ 2e-10, 3e-7 of the
    // injected giants', whose osculating P and e vary by ≈ 1.5 % and 0.02
    // over the span: here by ≈ 1e-8 (two-body limit), so P, K, e, ω⋆ and
    // λ must come back as injected.
    let mut params = inj::true_params();
    for p in &mut params.planets {
        p.k = 1e-5;
    }
    let sys = system_of(&params);
    let mean = mean_orbits(
        &sys,
        inj::T_REF - 800.0,
        inj::T_REF + 800.0,
        3201,
        GR,
        EventSettings::default(),
    )
    .unwrap();
    for (m, p) in mean.iter().zip(&inj::PLANETS) {
        println!("{}: {m:?}", p.name);
        assert!(
            (m.period_d / p.period - 1.0).abs() < 1e-6,
            "P {}",
            m.period_d
        );
        assert!((m.semi_amplitude_m_s / 1e-5 - 1.0).abs() < 1e-6);
        assert!((m.e - p.e).abs() < 1e-6, "e {}", m.e);
        assert!(angle_diff(m.omega_star, p.omega_star_deg.to_radians()) < 1e-5);
        assert!(angle_diff(m.mean_longitude, p.mean_longitude_deg().to_radians()) < 1e-5);
        assert!(m.omega_star_change.abs() < 1e-5);
        assert!(m.phase_rms < 1e-5);
    }
}

#[test]
fn epochs_on_both_sides_start_from_the_system() {
    // The sample at t₀ is the system's own osculating Jacobi elements;
    // samples either side come from the two runs outwards.
    let sys = system_of(&inj::true_params());
    let t = [
        inj::T_REF - 300.0,
        inj::T_REF - 0.5,
        inj::T_REF,
        inj::T_REF + 250.0,
    ];
    let h = record_at_epochs(
        &sys,
        &t,
        GR,
        ElementFrame::Reference,
        EventSettings::default(),
    )
    .unwrap();
    assert_eq!(h.times_d, t);
    for (k, series) in h.planets.iter().enumerate() {
        let el = sys
            .osculating_elements(&sys.state, k + 1, Primary::Jacobi)
            .unwrap();
        assert!((series.e[2] - el.e).abs() < 1e-14);
        assert!(angle_diff(series.varpi[2], el.node + el.omega) < 1e-12);
        assert!(angle_diff(series.lambda[2], el.node + el.omega + el.mean_anomaly) < 1e-12);
        // The injected period at t_ref (set_jacobi_elements uses μ_k).
        assert!((series.period_d[2] / inj::PLANETS[k].period - 1.0).abs() < 1e-12);
        // Half a day earlier: λ smaller by about n · 0.5 d.
        let n = TAU / inj::PLANETS[k].period;
        let back = (series.lambda[2] - series.lambda[1]).rem_euclid(TAU);
        assert!((back - 0.5 * n).abs() < 0.01 * n, "planet {k}: Δλ {back}");
    }
}

#[test]
fn wisdom_holman_and_gauss_radau_give_the_same_means() {
    // The fit's integrator (WH, default step; its RV error at the truth is
    // 1.5e-3 m/s, tests/fit_dynamical_injection.rs) against the reference.
    let sys = system_of(&inj::true_params());
    let wh = SpanIntegrator::WisdomHolman {
        step: None,
        corrector: Corrector::Off,
    };
    let (a, b) = (inj::T_REF - 800.0, inj::T_REF + 800.0);
    let ev = EventSettings::default();
    let m_wh = mean_orbits(&sys, a, b, 6401, wh, ev).unwrap();
    let m_gr = mean_orbits(&sys, a, b, 6401, GR, ev).unwrap();
    for (w, g) in m_wh.iter().zip(&m_gr) {
        let dp = (w.period_d / g.period_d - 1.0).abs();
        let dk = (w.semi_amplitude_m_s - g.semi_amplitude_m_s).abs();
        let de = (w.e - g.e).abs();
        let dw = angle_diff(w.omega_star, g.omega_star);
        println!("WH − GR: P {dp:.2e} (rel), K {dk:.2e} m/s, e {de:.2e}, ω⋆ {dw:.2e} rad");
        // An RV error of 1.5e-3 m/s in 35 or 22 m/s is ≈ 1e-4 relative: the
        // mean elements must agree far inside the fit's error bars (σ(P)/P
        // ≈ 1.5e-4, σ(K) ≈ 0.4 m/s, σ(e) ≈ 0.01).
        assert!(dp < 1e-6 && dk < 1e-3 && de < 1e-4 && dw < 1e-3);
    }
}

#[test]
fn bad_spans_and_epochs_are_refused() {
    let sys = system_of(&inj::true_params());
    let ev = EventSettings::default();
    fn bad<T>(r: Result<T, HistoryError>) -> bool {
        matches!(r, Err(HistoryError::InvalidSetting { .. }))
    }
    assert!(bad(mean_orbits(&sys, 10.0, 10.0, 100, GR, ev)));
    assert!(bad(mean_orbits(&sys, 0.0, f64::NAN, 100, GR, ev)));
    assert!(bad(mean_orbits(&sys, 0.0, 10.0, 3, GR, ev)));
    let r = |t: &[f64]| record_at_epochs(&sys, t, GR, ElementFrame::Reference, ev);
    assert!(bad(r(&[1.0, 1.0])));
    assert!(bad(r(&[2.0, 1.0])));
    assert!(bad(r(&[f64::INFINITY])));
}

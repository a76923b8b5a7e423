//! Pair summary on a constructed librating 2:1 pair: the answer is known by
//! construction (φ₀ = 2λ₂ − λ₁ − ϖ₁ = c + A sin(2πt/T)).

use apsidal::compare::resonance::{
    ElementHistory, PlanetSeries, SummarySettings, best_librating_angle, summarise_pair,
};
use std::f64::consts::TAU;

#[test]
fn librating_two_to_one_pair_is_found() {
    let (n1, g1, g2) = (TAU / 30.0, TAU / 9000.0, -TAU / 13_000.0);
    let (c, a, period) = (3.0_f64, 0.4_f64, 1500.0);
    let t: Vec<f64> = (0..4000).map(|i| 2.0 * i as f64).collect();
    let w1: Vec<f64> = t.iter().map(|&x| g1 * x + 0.5).collect();
    let l1: Vec<f64> = t.iter().map(|&x| n1 * x).collect();
    // λ₂ chosen so that φ₀ = 2λ₂ − λ₁ − ϖ₁ = c + A sin(2πt/T).
    let l2: Vec<f64> = (0..t.len())
        .map(|i| 0.5 * (c + a * (TAU * t[i] / period).sin() + l1[i] + w1[i]))
        .collect();
    let n2 = 0.5 * (n1 + g1);
    let planet = |n: f64, lam: Vec<f64>, w: Vec<f64>| PlanetSeries {
        period_d: vec![TAU / n; t.len()],
        e: vec![0.05; t.len()],
        varpi: w,
        lambda: lam,
        inc: None,
        node: None,
    };
    let w2: Vec<f64> = t.iter().map(|&x| g2 * x + 1.0).collect();
    let h = ElementHistory {
        times_d: t.clone(),
        planets: vec![planet(n1, l1, w1), planet(n2, l2, w2)],
    };
    let s = summarise_pair(&h, 0, 1, &SummarySettings::default()).unwrap();
    // Mean ratio n₁/n₂ = 2n₁/(n₁ + g₁) (construction). The term (A/2) sin ωt
    // in λ₂ moves the least-squares slope by at most ~6(A/2)/(S²ω) =
    // 4.5e-6 rad/d over the span S = 8000 d, i.e. 4e-5 of n₂.
    assert!((s.ratios.mean / (2.0 * n1 / (n1 + g1)) - 1.0).abs() < 1e-4);
    assert_eq!(s.nearest[0].label(), "2:1");
    let best = best_librating_angle(&s).unwrap();
    assert_eq!(best.label, "2:1 φ0");
    assert!((best.libration.amplitude_rad / a - 1.0).abs() < 0.01);
    assert!((best.libration.centre_rad - c).abs() < 0.01 * a);
    assert!((best.libration.period.unwrap().days / period - 1.0).abs() < 0.01);
    assert!(
        (best.relative_amplitude - best.libration.amplitude_rad / std::f64::consts::PI).abs()
            < 1e-15
    );
    // φ₁ = φ₀ + Δϖ circulates with Δϖ (rate g₁ − g₂, period 5318 d < span).
    let two_one = &s.analysed[0];
    assert!(two_one.angles[1].analysis.circulation().is_some());
    let dw = s.apsidal_difference.analysis.circulation().unwrap();
    assert!((dw.rate_rad_per_d / (g1 - g2) - 1.0).abs() < 1e-9);
    let g = s.precession_inner.rate().unwrap().rate_rad_per_d;
    assert!((g / g1 - 1.0).abs() < 1e-9);
    // Wrong order of the pair is refused.
    assert!(summarise_pair(&h, 1, 0, &SummarySettings::default()).is_err());
    assert!(summarise_pair(&h, 0, 2, &SummarySettings::default()).is_err());
}

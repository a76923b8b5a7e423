//! The resonance analysis on the real Jupiter–Saturn pair, with elements
//! from the VSOP87 planetary theory (Bretagnon & Francou 1988) through the
//! `vsop87` crate: heliocentric ecliptic elements of J2000.
//!
//! Expected values: the VSOP87 mean motions of λ (the constant terms of the
//! L1 series, 529.690 965 094 6 rad/millennium for Jupiter and
//! 213.299 095 438 for Saturn, read from the VSOP87 tables shipped in the
//! crate) and the period of the great inequality that follows,
//! 2π / (5 n_S − 2 n_J) = 883.3 yr ("about 900 years", Murray & Dermott
//! 1999, §8.1, from memory).

use apsidal::compare::resonance::{
    AngleCoefficients, ElementHistory, PlanetSeries, SummarySettings, analyse_angle,
    apsidal_precession, summarise_pair,
};
use std::f64::consts::TAU;

const N_JUP: f64 = 529.690_965_094_6 / 365_250.0; // rad/d
const N_SAT: f64 = 213.299_095_438 / 365_250.0; // rad/d

fn planet(t: &[f64], f: fn(f64) -> vsop87::VSOP87Elements) -> PlanetSeries {
    let mut s = PlanetSeries {
        period_d: Vec::new(),
        e: Vec::new(),
        varpi: Vec::new(),
        lambda: Vec::new(),
        inc: None,
        node: None,
    };
    for &jd in t {
        let el = f(jd);
        s.period_d
            .push(TAU * el.a.powf(1.5) / apsidal::units::GAUSS_K);
        s.e.push(el.k.hypot(el.h));
        s.varpi.push(el.h.atan2(el.k));
        s.lambda.push(el.l);
    }
    s
}

#[test]
fn jupiter_saturn_from_vsop87() {
    // J2000 ± 1500 yr every 600 d (VSOP87 keeps Jupiter and Saturn to
    // about an arcsecond over a few thousand years, from memory).
    let t: Vec<f64> = (0..1827)
        .map(|i| 2_451_545.0 - 547_875.0 + 600.0 * i as f64)
        .collect();
    let history = ElementHistory {
        times_d: t.clone(),
        planets: vec![planet(&t, vsop87::jupiter), planet(&t, vsop87::saturn)],
    };
    let s = summarise_pair(&history, 0, 1, &SummarySettings::default()).unwrap();
    // The summary is serialisable as is.
    let json = serde_json::to_string(&s).unwrap();
    let back: apsidal::compare::resonance::PairResonanceSummary =
        serde_json::from_str(&json).unwrap();
    assert_eq!(back.nearest[0].label(), "5:2");
    assert_eq!(back.analysed.len(), s.analysed.len());

    // Mean ratio = n_J / n_S = 2.483 32 (VSOP87 L1 constants). The periodic
    // terms (great inequality, ~0.3° in λ_J over 883 yr) move a 3000-yr slope
    // by ~1e-5 relative.
    let ratio = N_JUP / N_SAT;
    assert!((s.ratios.mean / ratio - 1.0).abs() < 1e-4, "{:?}", s.ratios);
    assert!((s.ratios.mean_motion_inner_rad_per_d / N_JUP - 1.0).abs() < 1e-4);

    // The nearest commensurability is 5:2 at Δ = ratio/2.5 − 1 = −0.67 %.
    let near = s.nearest[0];
    assert_eq!(near.label(), "5:2");
    assert!((near.delta - (ratio / 2.5 - 1.0)).abs() < 1e-4);

    // The great inequality 5λ_S − 2λ_J circulates with period 883 yr.
    let gi = AngleCoefficients {
        lambda_inner: -2,
        lambda_outer: 5,
        varpi_inner: 0,
        varpi_outer: 0,
    }
    .series(&history.planets[0], &history.planets[1])
    .unwrap();
    let a = analyse_angle(&t, &gi).unwrap();
    let c = a.circulation().unwrap();
    let expect_yr = TAU / (5.0 * N_SAT - 2.0 * N_JUP) / 365.25;
    assert!((expect_yr - 883.3).abs() < 0.5);
    assert!(
        (c.period.years / expect_yr - 1.0).abs() < 0.01,
        "{c:?} vs {expect_yr}"
    );

    // Every 5:2 angle circulates, at the linear combination of the fitted
    // rates of λ_J, λ_S, ϖ_J, ϖ_S (a least-squares slope is linear in the
    // data, so this holds to rounding).
    let gj = apsidal_precession(&t, &history.planets[0].e, &history.planets[0].varpi)
        .unwrap()
        .rate()
        .unwrap()
        .rate_rad_per_d;
    let gs = apsidal_precession(&t, &history.planets[1].e, &history.planets[1].varpi)
        .unwrap()
        .rate()
        .unwrap()
        .rate_rad_per_d;
    let n1 = s.ratios.mean_motion_inner_rad_per_d;
    let n2 = s.ratios.mean_motion_outer_rad_per_d;
    let five_two = s
        .analysed
        .iter()
        .find(|r| r.commensurability.label() == "5:2")
        .unwrap();
    assert_eq!(five_two.angles.len(), 4);
    for ang in &five_two.angles {
        let c = ang.analysis.circulation().unwrap();
        let rate = ang.coefficients.rate(n1, n2, gj, gs);
        assert!(
            (c.rate_rad_per_d / rate - 1.0).abs() < 1e-6,
            "{}",
            ang.label
        );
    }
}

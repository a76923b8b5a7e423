//! The resonance diagnosis fed by long Wisdom–Holman integrations
//! (`compare::history`, `compare::diagnosis`), checked against outside
//! references: the Neptune–Pluto 3:2 resonance, the Jupiter–Saturn great
//! inequality, Laplace–Lagrange secular theory for a hierarchical pair, and
//! synthetic systems in and far from resonance.
//!
//! Solar-system starting states: the giant planets at J2000 from the VSOP87
//! planetary theory (Bretagnon & Francou 1988, A&A 202, 309) through the
//! `vsop87` crate (VSOP87A heliocentric ecliptic J2000 positions; velocities
//! by a five-point central difference as in tests/nbody_solar_system.rs),
//! the Sun at the heliocentric origin with the terrestrial planets' masses
//! folded into it, all shifted to the barycentre of the bodies integrated.

use apsidal::compare::diagnosis::{
    DiagnosisSettings, PairVerdict, ResonanceDiagnosis, diagnose, diagnose_run,
};
use apsidal::compare::history::{
    ElementFrame, HistorySettings, RunEnd, default_output_interval, record_history,
};
use apsidal::compare::resonance::{AngleSpec, analyse_angle, resonant_angle};
use apsidal::kepler::{Elements, elements_to_state};
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::{Snapshot, System};
use apsidal::units::{G, deg};
use nalgebra::Vector3;
use std::f64::consts::PI;
use vsop87::{RectangularCoordinates, vsop87a};

/// J2000.0 (JD 2451545.0 TDB).
const J2000: f64 = 2_451_545.0;

/// Sun/planet mass ratios, IAU 2009 system (Luzum et al. 2011, CeMDA 110,
/// 293, Table 1; from memory): Mercury, Venus, Earth+Moon, Mars, Jupiter,
/// Saturn, Uranus, Neptune.
const SUN_OVER_PLANET: [f64; 8] = [
    6_023_597.400,
    408_523.719,
    328_900.559_6,
    3_098_703.59,
    1_047.348_644,
    3_497.901_8,
    22_902.98,
    19_412.26,
];

/// Sun/(Pluto + Charon) mass ratio, IAU 2009 (from memory): 1.365 66 × 10⁸.
const SUN_OVER_PLUTO: f64 = 1.365_66e8;

fn v3(c: RectangularCoordinates) -> Vector3<f64> {
    Vector3::new(c.x, c.y, c.z)
}

fn giants_helio(jd: f64) -> [Vector3<f64>; 4] {
    [
        v3(vsop87a::jupiter(jd)),
        v3(vsop87a::saturn(jd)),
        v3(vsop87a::uranus(jd)),
        v3(vsop87a::neptune(jd)),
    ]
}

/// Heliocentric positions (au) and velocities (au/d) of the giants at J2000;
/// velocities by the five-point difference with h = 1/16 d.
fn giants_state() -> ([Vector3<f64>; 4], [Vector3<f64>; 4]) {
    let h = 0.0625;
    let p = giants_helio(J2000);
    let p1 = giants_helio(J2000 + h);
    let m1 = giants_helio(J2000 - h);
    let p2 = giants_helio(J2000 + 2.0 * h);
    let m2 = giants_helio(J2000 - 2.0 * h);
    let mut v = [Vector3::zeros(); 4];
    for i in 0..4 {
        v[i] = ((p1[i] - m1[i]) * 8.0 - (p2[i] - m2[i])) / (12.0 * h);
    }
    (p, v)
}

/// Mass of the Sun with Mercury, Venus, Earth+Moon and Mars folded in (M☉).
fn inner_sun() -> f64 {
    1.0 + SUN_OVER_PLANET[..4].iter().map(|r| 1.0 / r).sum::<f64>()
}

/// Pluto's approximate mean elements at J2000, ecliptic and equinox J2000:
/// Standish, "Keplerian elements for approximate positions of the major
/// planets" (JPL Solar System Dynamics, Table 1, 1800–2050 AD; values from
/// memory): a = 39.482 116 75 au, e = 0.248 827 30, I = 17.140 012 06°,
/// L = 238.929 038 33°, ϖ = 224.068 916 29°, Ω = 110.303 936 84°.
/// Treated as Jacobi elements about the barycentre of the Sun and the four
/// giants (mean elements taken as heliocentric osculating ones would shift
/// Pluto's mean motion enough to break the libration; see the brief of the
/// test below).
fn pluto_elements() -> Elements {
    let (varpi, node, l) = (
        deg(224.068_916_29),
        deg(110.303_936_84),
        deg(238.929_038_33),
    );
    Elements {
        a: 39.482_116_75,
        e: 0.248_827_30,
        inc: deg(17.140_012_06),
        node,
        omega: varpi - node,
        mean_anomaly: l - varpi,
    }
}

/// The Sun (with the terrestrial planets), the four giants from VSOP87 and
/// optionally Pluto, barycentric, ecliptic J2000, t = 0 at J2000.
fn outer_solar_system(with_pluto: bool) -> System {
    let (hp, hv) = giants_state();
    let mut masses = vec![inner_sun()];
    masses.extend(SUN_OVER_PLANET[4..].iter().map(|r| 1.0 / r));
    let mut pos = vec![Vector3::zeros()];
    let mut vel = vec![Vector3::zeros()];
    pos.extend(hp);
    vel.extend(hv);
    if with_pluto {
        let m_in: f64 = masses.iter().sum();
        let com = (0..5).map(|i| pos[i] * masses[i]).sum::<Vector3<f64>>() / m_in;
        let vcom = (0..5).map(|i| vel[i] * masses[i]).sum::<Vector3<f64>>() / m_in;
        let m_p = 1.0 / SUN_OVER_PLUTO;
        let rel = elements_to_state(&pluto_elements(), G * (m_in + m_p)).unwrap();
        pos.push(com + rel.pos);
        vel.push(vcom + rel.vel);
        masses.push(m_p);
    }
    let mt: f64 = masses.iter().sum();
    let n = masses.len();
    let com = (0..n).map(|i| pos[i] * masses[i]).sum::<Vector3<f64>>() / mt;
    let vcom = (0..n).map(|i| vel[i] * masses[i]).sum::<Vector3<f64>>() / mt;
    let state = Snapshot {
        t: 0.0,
        pos: pos.iter().map(|p| p - com).collect(),
        vel: vel.iter().map(|v| v - vcom).collect(),
    };
    System::new(masses, vec![0.0; n], state).unwrap()
}

fn within(x: f64, reference: f64, frac: f64) -> bool {
    (x / reference - 1.0).abs() <= frac
}

fn print_pairs(d: &ResonanceDiagnosis) {
    for p in &d.pairs {
        let s = p.summary.as_ref().unwrap();
        eprintln!(
            "pair {}-{}: ratio {:.5} nearest {:?} Δ {:+.4} verdict {:?} best {:?}",
            p.inner,
            p.outer,
            s.ratios.mean,
            p.nearest_label,
            s.nearest[0].delta,
            p.verdict,
            p.best.as_ref().map(|b| (
                b.label.clone(),
                b.libration.centre_deg,
                b.libration.amplitude_deg
            ))
        );
    }
    for q in &d.precession {
        eprintln!(
            "planet {}: N-body {:?} deg/yr, LL mean {:?} now {:?}",
            q.planet,
            q.nbody.rate().map(|r| r.rate_deg_per_yr),
            q.laplace_lagrange_mean_deg_per_yr,
            q.laplace_lagrange_now_deg_per_yr
        );
    }
}

/// Neptune–Pluto 3:2 resonance. Reference: Cohen & Hubbard (1965, AJ 70,
/// 10; values from memory): φ = 3λ_P − 2λ_N − ϖ_P librates about 180° with
/// an amplitude of about 80° and a period of about 2 × 10⁴ yr. (An
/// independent integration from these Jacobi starts gives ≈ 179°, ≈ 83°,
/// ≈ 19 800 yr.) Bodies: Sun (+ terrestrial planets), Jupiter, Saturn,
/// Uranus, Neptune, Pluto; 240 Pluto orbits ≈ 59.5 kyr, WH default step
/// (≈ 197 d, Jupiter's P/20 scaled for its pericentre), ecliptic elements.
#[test]
fn neptune_pluto_three_to_two() {
    let sys = outer_solar_system(true);
    let settings = DiagnosisSettings {
        history: HistorySettings {
            frame: ElementFrame::Reference,
            initial_outer_orbits: 240.0,
            max_outer_orbits: 240.0,
            apsidal_difference_of_interest: false,
            ..HistorySettings::default()
        },
    };
    let d = diagnose(&sys, &settings, |_| {}).unwrap();
    eprintln!(
        "span {:.0} yr, {} samples every {:.1} d, step {:.1} d, end {:?}",
        d.span.years, d.samples, d.output_interval_d, d.step_d, d.end
    );
    print_pairs(&d);
    assert_eq!(d.pairs.len(), 4);
    let np = &d.pairs[3];
    assert_eq!(np.nearest_label.as_deref(), Some("3:2"));
    assert_eq!(np.verdict, PairVerdict::Resonant);
    let best = np.best.as_ref().unwrap();
    // 3:2 φ0 = 3λ_P − 2λ_N − ϖ_N, φ1 = 3λ_P − 2λ_N − ϖ_P.
    assert_eq!(best.spec, AngleSpec::new(3, 1, 1).unwrap());
    let lib = best.libration;
    let period = lib.period.unwrap().years;
    eprintln!(
        "3:2 φ1: centre {:.1}°, amplitude {:.1}°, period {:.0} yr, {} cycles",
        lib.centre_deg, lib.amplitude_deg, period, lib.cycles
    );
    assert!(within(lib.centre_deg, 180.0, 0.2), "{lib:?}");
    assert!(within(lib.amplitude_deg, 80.0, 0.2), "{lib:?}");
    assert!(within(period, 2.0e4, 0.2), "{lib:?}");
    // The default frame (invariable plane, 1.6° from the ecliptic) gives the
    // same diagnosis.
    let inv = diagnose(
        &sys,
        &DiagnosisSettings {
            history: HistorySettings {
                frame: ElementFrame::Invariable,
                ..settings.history
            },
        },
        |_| {},
    )
    .unwrap();
    let b = inv.pairs[3].best.as_ref().unwrap();
    let li = b.libration;
    eprintln!(
        "invariable frame, {}: centre {:.1}°, amplitude {:.1}°, period {:.0} yr",
        b.label,
        li.centre_deg,
        li.amplitude_deg,
        li.period.unwrap().years
    );
    assert_eq!(b.spec, best.spec);
    assert!(within(li.centre_deg, 180.0, 0.2), "{li:?}");
    assert!(within(li.amplitude_deg, 80.0, 0.2), "{li:?}");
    assert!(within(li.period.unwrap().years, 2.0e4, 0.2), "{li:?}");
    // The diagnosis serialises and reads back unchanged.
    let json = serde_json::to_string(&d).unwrap();
    let back: ResonanceDiagnosis = serde_json::from_str(&json).unwrap();
    assert_eq!(back.pairs[3].verdict, PairVerdict::Resonant);
}

/// Jupiter and Saturn: the great inequality. Bodies: Sun (+ terrestrial
/// planets), Jupiter, Saturn, Uranus, Neptune (all four giants), VSOP87
/// starts; 12 kyr. Reference: the period ratio is within 0.7 % of 5:2 and
/// 5λ_S − 2λ_J circulates with a period of about 900 yr (Murray & Dermott
/// 1999, §8.1, from memory; VSOP87's mean motions give 883 yr). The 5:2
/// angles φ_q = 5λ_S − 2λ_J − (3−q)ϖ_J − qϖ_S circulate with nearly that
/// period (the ϖ rates of Jupiter and Saturn, 4″ and 28″/yr from memory,
/// change it by < 6 %): near-resonant, not resonant.
#[test]
fn jupiter_saturn_great_inequality() {
    let sys = outer_solar_system(false);
    let settings = DiagnosisSettings {
        history: HistorySettings {
            frame: ElementFrame::Reference,
            initial_outer_orbits: 72.0,
            max_outer_orbits: 72.0,
            apsidal_difference_of_interest: false,
            ..HistorySettings::default()
        },
    };
    let d = diagnose(&sys, &settings, |_| {}).unwrap();
    eprintln!("span {:.0} yr, {} samples", d.span.years, d.samples);
    print_pairs(&d);
    let js = &d.pairs[0];
    let s = js.summary.as_ref().unwrap();
    assert_eq!(js.nearest_label.as_deref(), Some("5:2"));
    let delta = s.nearest[0].delta;
    assert!(within(delta.abs(), 0.007, 0.2), "Δ = {delta}");
    assert_eq!(js.verdict, PairVerdict::NearResonant);
    assert!(js.best.is_none());
    let five_two = s
        .analysed
        .iter()
        .find(|c| c.commensurability.label() == "5:2")
        .unwrap();
    assert_eq!(five_two.angles.len(), 4);
    for a in &five_two.angles {
        let c = a.analysis.circulation().unwrap();
        eprintln!("{}: period {:.1} yr", a.label, c.period.years);
        assert!(within(c.period.years, 900.0, 0.2), "{}: {c:?}", a.label);
    }
}

/// A planet on a Jacobi orbit for [`System::from_jacobi_elements`]: mass
/// (M☉), period (d), e, ϖ and λ (deg), edge-on coplanar in the sky frame
/// (i = 90°, Ω = 0, so ϖ = ω).
fn planet(mass: f64, period: f64, e: f64, varpi: f64, lambda: f64) -> JacobiPlanet {
    JacobiPlanet {
        mass,
        radius: 0.0,
        size: OrbitSize::Period(period),
        e,
        // The planet's ω = ω⋆ + π.
        omega_star: deg(varpi) - PI,
        phase: OrbitPhase::MeanLongitude(deg(lambda)),
        inc: deg(90.0),
        node: 0.0,
    }
}

/// A hierarchical, low-eccentricity pair far from any commensurability of
/// order ≤ 3 (P₂/P₁ = 5.3, e = 0.05 and 0.02, one Jupiter mass each about a
/// solar-mass star, edge-on): the apsidal precession rates of the
/// integration agree with the Laplace–Lagrange theory (Murray & Dermott
/// 1999, ch. 7; our `compare::secular`, itself checked against scipy in
/// tests/secular_modes.rs) within 5 %. Default settings: the run extends
/// until Δϖ has made a full turn.
#[test]
fn hierarchical_pair_precession_matches_laplace_lagrange() {
    let m = 1e-3;
    let sys = System::from_jacobi_elements(
        1.0,
        0.0,
        &[
            planet(m, 100.0, 0.05, 30.0, 0.0),
            planet(m, 530.0, 0.02, 250.0, 120.0),
        ],
        0.0,
    )
    .unwrap();
    let d = diagnose(&sys, &DiagnosisSettings::default(), |_| {}).unwrap();
    eprintln!(
        "span {:.0} yr, {} samples, {} stages, end {:?}",
        d.span.years, d.samples, d.stages, d.end
    );
    print_pairs(&d);
    assert_eq!(d.end, RunEnd::Decided);
    assert_eq!(d.pairs[0].verdict, PairVerdict::NotNear);
    for q in &d.precession {
        let nb = q.nbody.rate().unwrap().rate_deg_per_yr;
        let ll = q.laplace_lagrange_mean_deg_per_yr.unwrap();
        eprintln!("planet {}: N-body {nb:.6} LL {ll:.6} deg/yr", q.planet);
        assert!(within(nb, ll, 0.05), "planet {}: {nb} vs {ll}", q.planet);
    }
}

/// Two Jupiter-mass planets deep in the 2:1 resonance: P₂/P₁ = 2, e₁ = 0.1,
/// e₂ = 0.01, started at a conjunction at the inner planet's periastron
/// (λ₁ = λ₂ = ϖ₁ = 0, ϖ₂ = 180°), the stable fixed point of
/// φ₀ = 2λ₂ − λ₁ − ϖ₁ = 0 for an interior planet (Murray & Dermott 1999,
/// §8.8, from memory). The angle must librate about 0 and the diagnosis say
/// "2:1, resonant".
#[test]
fn synthetic_two_to_one_librates() {
    let m = 1e-3;
    let sys = System::from_jacobi_elements(
        1.0,
        0.0,
        &[
            planet(m, 100.0, 0.1, 0.0, 0.0),
            planet(m, 200.0, 0.01, 180.0, 0.0),
        ],
        0.0,
    )
    .unwrap();
    let settings = DiagnosisSettings {
        history: HistorySettings {
            max_outer_orbits: 8000.0,
            ..HistorySettings::default()
        },
    };
    let d = diagnose(&sys, &settings, |_| {}).unwrap();
    eprintln!("span {:.0} yr, {} samples", d.span.years, d.samples);
    print_pairs(&d);
    let p = &d.pairs[0];
    assert_eq!(p.nearest_label.as_deref(), Some("2:1"));
    assert_eq!(p.verdict, PairVerdict::Resonant);
    let best = p.best.as_ref().unwrap();
    assert_eq!(best.spec, AngleSpec::new(2, 1, 0).unwrap());
    let lib = best.libration;
    eprintln!(
        "2:1 φ0: centre {:.2}°, amplitude {:.2}°, period {:?}",
        lib.centre_deg, lib.amplitude_deg, lib.period
    );
    let centre = if lib.centre_deg > 180.0 {
        lib.centre_deg - 360.0
    } else {
        lib.centre_deg
    };
    assert!(centre.abs() < 10.0, "{lib:?}");
    assert!(lib.amplitude_deg < 45.0, "{lib:?}");
    // The same angle computed directly from the history agrees.
    let run = record_history(&sys, &settings.history, |_| {}).unwrap();
    let phi = resonant_angle(
        &run.history.planets[0],
        &run.history.planets[1],
        AngleSpec::new(2, 1, 0).unwrap(),
    )
    .unwrap();
    let a = analyse_angle(&run.history.times_d, &phi).unwrap();
    assert_eq!(a.libration().unwrap(), &lib);
    assert_eq!(diagnose_run(&run).pairs[0].best, p.best);
}

/// A pair at P₂/P₁ = 7.3: the nearest commensurability of order ≤ 3 is 4:1,
/// 82 % away; every resonant angle analysed circulates and nothing librates.
#[test]
fn synthetic_wide_pair_is_not_resonant() {
    let m = 1e-3;
    let sys = System::from_jacobi_elements(
        1.0,
        0.0,
        &[
            planet(m, 50.0, 0.05, 10.0, 0.0),
            planet(m, 365.0, 0.03, 200.0, 90.0),
        ],
        0.0,
    )
    .unwrap();
    let settings = DiagnosisSettings {
        history: HistorySettings {
            max_outer_orbits: 4000.0,
            ..HistorySettings::default()
        },
    };
    // The output interval resolves the fastest analysed angle, 2λ₂ − λ₁
    // (period 1/(1/50 − 2/365) d = 68.9 d), with 8 samples.
    let dt = default_output_interval(&[50.0, 365.0], &settings.history).unwrap();
    assert!(
        (dt - 1.0 / (1.0 / 50.0 - 2.0 / 365.0) / 8.0).abs() < 1e-9,
        "{dt}"
    );
    let mut fractions = Vec::new();
    let d = diagnose(&sys, &settings, |f| fractions.push(f)).unwrap();
    eprintln!(
        "span {:.0} yr, {} samples, {} stages, end {:?}",
        d.span.years, d.samples, d.stages, d.end
    );
    print_pairs(&d);
    // Progress: fractions in [0, 1], ending at 1.
    assert!(fractions.iter().all(|f| (0.0..=1.0).contains(f)));
    assert_eq!(fractions.last(), Some(&1.0));
    let p = &d.pairs[0];
    let s = p.summary.as_ref().unwrap();
    assert_eq!(p.verdict, PairVerdict::NotNear);
    assert!(p.best.is_none());
    assert!(!s.nearest[0].near);
    assert_eq!(p.nearest_label.as_deref(), Some("4:1"));
    for c in &s.analysed {
        for a in &c.angles {
            assert!(
                a.analysis.circulation().is_some(),
                "{}: {:?}",
                a.label,
                a.analysis
            );
        }
    }
}

/// Two Jupiter-mass planets at P₂/P₁ = 1.05, far inside the Hill-stability
/// limit (Δ > 2√3 mutual Hill radii, Gladman 1993, from memory): a close
/// encounter within one mutual Hill radius stops the run, and the history
/// ends before it with a typed [`RunEnd::Stopped`].
#[test]
fn close_encounter_stops_the_run() {
    let m = 1e-3;
    let sys = System::from_jacobi_elements(
        1.0,
        0.0,
        &[
            planet(m, 100.0, 0.0, 0.0, 0.0),
            planet(m, 105.0, 0.0, 0.0, 180.0),
        ],
        0.0,
    )
    .unwrap();
    let run = record_history(&sys, &HistorySettings::default(), |_| {}).unwrap();
    let RunEnd::Stopped(event) = run.end else {
        panic!("not stopped: {:?}", run.end);
    };
    eprintln!("{event:?} after {} samples", run.history.times_d.len());
    assert!(matches!(
        event,
        apsidal::nbody::Event::CloseEncounter { i: 1, j: 2, .. }
    ));
    let last = *run.history.times_d.last().unwrap();
    assert!(last <= event.time() && event.time() < last + run.output_interval_d);
    assert!(run.pair_summaries.is_empty());
    let d = diagnose_run(&run);
    assert_eq!(d.end, run.end);
    assert_eq!(d.pairs.len(), 1);
}

//! Stability runs of circular coplanar planet pairs against the Hill
//! criterion of Gladman (1993, Icarus 106, 247): two planets on circular
//! coplanar orbits separated by more than 2√3 mutual Hill radii can never
//! have a close encounter (eq. 3, a sufficient condition, so a run must
//! show none), while pairs well inside it are not protected and, in
//! Gladman's numerical experiments (his §4 and Fig. 4), do encounter
//! within a few hundred synodic periods. The runs here check both sides
//! with the Wisdom–Holman integrator; the times found are printed.

use apsidal::nbody::System;
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::stability::criteria::CIRCULAR_HILL_SPACING;
use apsidal::stability::run::{EventKind, RunSettings, StabilityError, Verdict, run_stability};

const M: f64 = 1e-5; // planet masses in M☉ (≈ 3.3 Earth masses)

/// A circular coplanar pair about a 1 M☉ star, the inner at 1 au, the
/// outer `spacing` mutual Hill radii further out (Chambers et al. 1996
/// eq. 2: a₂ − a₁ = Δ [(m₁+m₂)/3M⋆]^{1/3} (a₁+a₂)/2).
fn pair(spacing: f64) -> System {
    let h = (2.0 * M / 3.0).cbrt() * 0.5 * spacing;
    let a2 = (1.0 + h) / (1.0 - h);
    let planet = |a: f64, lambda: f64| JacobiPlanet {
        mass: M,
        radius: 0.0,
        size: OrbitSize::SemiMajorAxis(a),
        e: 0.0,
        omega_star: 0.0,
        phase: OrbitPhase::MeanLongitude(lambda),
        inc: std::f64::consts::FRAC_PI_2,
        node: 0.0,
    };
    System::from_jacobi_elements(1.0, 0.0, &[planet(1.0, 0.0), planet(a2, 2.0)], 0.0).unwrap()
}

fn settings(orbits: f64) -> RunSettings {
    RunSettings {
        orbits,
        ..RunSettings::default()
    }
}

#[test]
fn spacing_inside_gladman_gives_close_encounters() {
    for spacing in [2.0, 2.5, 3.0] {
        let r = run_stability(&pair(spacing), &settings(1e4)).unwrap();
        let ev = r.event.as_ref().expect("an encounter");
        println!(
            "spacing {spacing}: {} after {:.1} outer orbits ({:.0} d), max e {:?}",
            ev.kind.label(),
            ev.orbits,
            ev.time,
            r.max_eccentricity
        );
        assert_eq!(r.verdict, Verdict::Unstable(EventKind::CloseEncounter));
        assert_eq!(ev.bodies, vec![1, 2]);
        assert!(ev.value < 1.0);
        let c = r.criteria.as_ref().unwrap();
        assert!((c.hill[0].spacing_mutual_hill - spacing).abs() < 1e-6 * spacing);
        assert!(!c.hill[0].circular_hill_stable);
        assert!(!c.hill[0].hill_stable);
        assert!(r.survival_orbits < 1e4 && r.survival_orbits > 0.0);
    }
}

#[test]
fn spacing_beyond_gladman_has_no_encounter() {
    for spacing in [4.0, 5.0] {
        assert!(spacing > CIRCULAR_HILL_SPACING);
        let r = run_stability(&pair(spacing), &settings(1e4)).unwrap();
        println!(
            "spacing {spacing}: {} over {:.0} outer orbits, max e {:?}, max |Δa|/a {:?}, energy error {:.1e}",
            r.verdict.label(),
            r.survival_orbits,
            r.max_eccentricity,
            r.max_axis_drift,
            r.energy_error
        );
        assert_eq!(r.verdict, Verdict::Stable);
        assert!(r.event.is_none());
        assert!((r.survival_orbits - 1e4).abs() < 1e-3 * 1e4 + 1.0);
        let c = r.criteria.as_ref().unwrap();
        assert!(c.hill[0].hill_stable && c.hill[0].circular_hill_stable);
        // Hill stable pairs exchange little: the forced eccentricity of
        // planets this light stays small and a barely moves (conservation
        // of energy and angular momentum bound the exchange).
        assert!(r.max_eccentricity.iter().all(|e| *e < 0.05));
        assert!(r.max_axis_drift.iter().all(|d| *d < 1e-2));
        assert!(r.energy_error < 1e-6);
        assert_eq!(r.megno, None);
    }
}

#[test]
fn bounded_work_and_megno() {
    let s = RunSettings {
        max_steps: 1000,
        ..settings(1e4)
    };
    assert!(matches!(
        run_stability(&pair(5.0), &s),
        Err(StabilityError::TooManySteps { .. })
    ));
    // With MEGNO on, a well-separated pair (5 mutual Hill radii) is
    // quasi-periodic: ⟨Y⟩ close to 2 (Cincotta & Simó 2000), here over a
    // short run of 300 outer orbits.
    let s = RunSettings {
        megno: true,
        ..settings(300.0)
    };
    let r = run_stability(&pair(5.0), &s).unwrap();
    let y = r.megno.expect("MEGNO computed");
    println!("MEGNO of the 5 R_H pair over 300 orbits: {y}");
    assert!((y - 2.0).abs() < 0.3, "⟨Y⟩ = {y}");
    let s = RunSettings {
        orbits: f64::NAN,
        ..settings(10.0)
    };
    assert!(matches!(
        run_stability(&pair(5.0), &s),
        Err(StabilityError::BadSettings(_))
    ));
}

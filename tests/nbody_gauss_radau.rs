//! Gauss–Radau (IAS15-type) integrator: conservation laws, time
//! reversibility, the two-body limit against the analytic Keplerian RV,
//! dense output, and pathological systems (events, never NaN).

#[path = "nbody_support/mod.rs"]
mod support;

use apsidal::kepler::{Elements, a_from_period, elements_to_state, semi_amplitude};
use apsidal::model::keplerian::keplerian_rv;
use apsidal::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
use apsidal::nbody::{Event, EventSettings, Integrator, NbodyError, Snapshot, System};
use apsidal::units::{G, M_JUPITER_IN_SUN, R_SUN_AU, au_per_day_to_m_s, deg};
use nalgebra::Vector3;
use std::f64::consts::PI;

fn no_stop() -> EventSettings {
    EventSettings {
        stop_on_event: false,
        ..EventSettings::default()
    }
}

fn settings() -> GaussRadauSettings {
    GaussRadauSettings {
        events: no_stop(),
        ..GaussRadauSettings::default()
    }
}

fn system_at(sys: &System, snap: &Snapshot) -> System {
    System {
        state: snap.clone(),
        ..sys.clone()
    }
}

#[test]
fn energy_and_angular_momentum_conserved_over_ten_thousand_orbits() {
    // Conservation law: total energy and angular momentum of an isolated
    // Newtonian system are constant. IAS15 at ε = 1e-9 keeps them at the
    // round-off level (Rein & Spiegel 2015, Fig. 4 and §5: Brouwer's law).
    let sys = support::two_giants(0.0);
    let e0 = sys.energy();
    let l0 = sys.angular_momentum();
    let mut gr = GaussRadau::new(sys.clone(), settings()).unwrap();
    let mut snap = Snapshot::zeros(3, 0.0);
    let mut worst_e: f64 = 0.0;
    let mut worst_l: f64 = 0.0;
    // 10^4 orbits of the inner planet (P = 100 d).
    for k in 1..=20 {
        let t = k as f64 * 50_000.0;
        gr.advance_to(t, &mut snap).unwrap();
        let s = system_at(&sys, &snap);
        worst_e = worst_e.max(((s.energy() - e0) / e0).abs());
        worst_l = worst_l.max((s.angular_momentum() - l0).norm() / l0.norm());
    }
    println!(
        "10^4 orbits: max |dE/E| = {worst_e:.3e}, max |dL|/|L| = {worst_l:.3e}, steps = {}, rejected = {}, iterations/step = {:.2}",
        gr.steps(),
        gr.rejected_steps(),
        gr.iterations() as f64 / gr.steps() as f64
    );
    assert!(
        gr.events().is_empty(),
        "benchmark system should stay regular: {:?}",
        gr.events()
    );
    assert!(worst_e <= 1e-13, "energy error {worst_e:e}");
    assert!(worst_l <= 1e-13, "angular momentum error {worst_l:e}");
}

fn max_rel_diff(a: &Snapshot, b: &Snapshot) -> (f64, f64) {
    let pscale = a.pos.iter().map(|p| p.norm()).fold(0.0, f64::max);
    let vscale = a.vel.iter().map(|v| v.norm()).fold(0.0, f64::max);
    let dp = a
        .pos
        .iter()
        .zip(&b.pos)
        .map(|(x, y)| (x - y).norm())
        .fold(0.0, f64::max);
    let dv = a
        .vel
        .iter()
        .zip(&b.vel)
        .map(|(x, y)| (x - y).norm())
        .fold(0.0, f64::max);
    (dp / pscale, dv / vscale)
}

#[test]
fn forward_and_back_returns_to_the_start() {
    // Time reversibility of Newton's equations: integrating 1000 d forward
    // and back must return the initial state up to the integration error.
    let sys = support::two_giants(0.0);
    let start = sys.state.clone();
    let mut gr = GaussRadau::new(sys, settings()).unwrap();
    let mut snap = Snapshot::zeros(3, 0.0);
    gr.advance_to(1000.0, &mut snap).unwrap();
    gr.advance_to(0.0, &mut snap).unwrap();
    let (dp, dv) = max_rel_diff(&start, &snap);
    println!("reversibility over 1000 d: position {dp:.3e}, velocity {dv:.3e} (relative)");
    assert!(dp <= 1e-11 && dv <= 1e-11, "dp = {dp:e}, dv = {dv:e}");
}

#[test]
fn one_planet_star_rv_equals_the_analytic_keplerian() {
    // Two-body problem: the star's barycentric v_z is exactly the
    // Keplerian v = K [cos(ν + ω⋆) + e cos ω⋆] with ω⋆ = ω_planet + π and
    // K = (2πG/P)^{1/3} m sin i / (M⋆ + m)^{2/3} / √(1 − e²) (Murray &
    // Dermott 1999, §2.8; the mass function of e.g. Murray & Correia 2010).
    let m_star = 0.9;
    let m = 1.2 * M_JUPITER_IN_SUN;
    let (period, e, inc, omega, m0) = (50.0, 0.3, deg(60.0), deg(70.0), deg(30.0));
    let el = Elements {
        a: 0.0,
        e,
        inc,
        node: deg(15.0),
        omega,
        mean_anomaly: m0,
    };
    let sys = support::from_jacobi(
        m_star,
        &[support::PlanetSpec {
            mass: m,
            period,
            el,
        }],
        0.0,
    );
    let k = semi_amplitude(m, period, e, inc.sin(), m_star).unwrap();
    // Independent cross-check of K from the two-body relative orbit:
    // K = (m/M) n a sin i / √(1 − e²).
    let mu = G * (m_star + m);
    let a = a_from_period(period, mu);
    let k_direct = au_per_day_to_m_s(
        m / (m_star + m) * (2.0 * PI / period) * a * inc.sin() / (1.0 - e * e).sqrt(),
    );
    assert!((k - k_direct).abs() < 1e-12 * k);
    let mut gr = GaussRadau::new(sys, settings()).unwrap();
    let mut snap = Snapshot::zeros(2, 0.0);
    let mut worst: f64 = 0.0;
    // 100 orbits, 1000 epochs at an awkward spacing.
    for i in 1..=1000 {
        let t = i as f64 * 5.0 * 1.0001 - 0.37;
        gr.advance_to(t, &mut snap).unwrap();
        let v_nbody = au_per_day_to_m_s(snap.vel[0].z);
        let v_kep = keplerian_rv(t, period, k, e, omega + PI, m0, 0.0).unwrap();
        worst = worst.max((v_nbody - v_kep).abs());
    }
    println!(
        "one planet, 100 orbits: max |v_GR − v_Kep| = {worst:.3e} m/s (K = {k:.3} m/s) = {:.3e} K",
        worst / k
    );
    assert!(worst <= 1e-9 * k, "worst = {worst:e} m/s");
    // Also the relative orbit from elements_to_state at the last epoch.
    let mut el_t = el;
    el_t.a = a;
    el_t.mean_anomaly = m0 + 2.0 * PI * snap.t / period;
    let rel = elements_to_state(&el_t, mu).unwrap();
    let rel_nb = snap.pos[1] - snap.pos[0];
    assert!(
        (rel.pos - rel_nb).norm() < 1e-10 * a,
        "{:e}",
        (rel.pos - rel_nb).norm()
    );
}

#[test]
fn dense_output_does_not_change_the_trajectory() {
    // The step sequence must not depend on the requested epochs (DESIGN
    // §4): the same epoch asked in two runs with different grids gives the
    // same state to the bit.
    let sys = support::two_giants(0.0);
    let mut a = GaussRadau::new(sys.clone(), settings()).unwrap();
    let mut b = GaussRadau::new(sys, settings()).unwrap();
    let mut sa = Snapshot::zeros(3, 0.0);
    let mut sb = Snapshot::zeros(3, 0.0);
    let mut common = Vec::new();
    for i in 1..=300 {
        let t = i as f64 * 3.7;
        a.advance_to(t, &mut sa).unwrap();
        if i % 10 == 0 {
            common.push((t, sa.clone()));
        }
    }
    for (t, want) in &common {
        b.advance_to(*t, &mut sb).unwrap();
        assert_eq!(&sb, want);
    }
    assert_eq!(a.steps(), b.steps());
}

#[test]
fn backward_integration_matches_forward() {
    // Starting at t = 0 from the state that a forward run reached, a
    // backward run must come back to the initial state (reversibility from
    // the other side, with a start in mid-run).
    let sys = support::two_giants(0.0);
    let mut fwd = GaussRadau::new(sys.clone(), settings()).unwrap();
    let mut s = Snapshot::zeros(3, 0.0);
    fwd.advance_to(-700.0, &mut s).unwrap();
    let back = System {
        state: s.clone(),
        ..sys.clone()
    };
    let mut gr = GaussRadau::new(back, settings()).unwrap();
    let mut out = Snapshot::zeros(3, 0.0);
    gr.advance_to(0.0, &mut out).unwrap();
    let (dp, dv) = max_rel_diff(&sys.state, &out);
    assert!(dp <= 1e-11 && dv <= 1e-11, "dp = {dp:e}, dv = {dv:e}");
}

fn finite(s: &Snapshot) -> bool {
    s.pos
        .iter()
        .chain(&s.vel)
        .all(|v| v.iter().all(|c| c.is_finite()))
}

#[test]
fn crossing_orbits_give_a_close_encounter() {
    // Two Jupiters whose orbits cross (outer pericentre inside the inner
    // orbit) must meet within a mutual Hill radius sooner or later.
    let planets = [
        support::PlanetSpec {
            mass: M_JUPITER_IN_SUN,
            period: 100.0,
            el: Elements {
                a: 0.0,
                e: 0.05,
                inc: deg(90.0),
                node: 0.0,
                omega: 0.0,
                mean_anomaly: 0.0,
            },
        },
        support::PlanetSpec {
            mass: M_JUPITER_IN_SUN,
            period: 130.0,
            el: Elements {
                a: 0.0,
                e: 0.5,
                inc: deg(89.0),
                node: 0.0,
                omega: deg(100.0),
                mean_anomaly: deg(180.0),
            },
        },
    ];
    let sys = support::from_jacobi(1.0, &planets, 0.0);
    let mut gr = GaussRadau::new(sys, GaussRadauSettings::default()).unwrap();
    let mut snap = Snapshot::zeros(3, 0.0);
    let res = gr.advance_to(1.0e5, &mut snap);
    match res {
        Err(NbodyError::Stopped(Event::CloseEncounter {
            i,
            j,
            hill_separation,
            t,
        })) => {
            println!("close encounter at t = {t:.2} d, {hill_separation:.3} Hill radii");
            assert_eq!((i, j), (1, 2));
            assert!(hill_separation < 1.0);
        }
        other => panic!("expected a close encounter, got {other:?}"),
    }
    assert!(finite(&gr.snapshot()));
    // The run stays stopped.
    assert!(matches!(
        gr.advance_to(2.0e5, &mut snap),
        Err(NbodyError::Stopped(_))
    ));
}

#[test]
fn grazing_pericentre_gives_a_star_collision() {
    // e = 0.99 and a = 0.3 au: pericentre q = 0.003 au ≈ 0.65 R☉, inside
    // the Sun-sized star (IAU 2015 nominal R☉). Started at apocentre.
    let el = Elements {
        a: 0.0,
        e: 0.99,
        inc: deg(90.0),
        node: 0.0,
        omega: 0.0,
        mean_anomaly: PI,
    };
    let period = apsidal::kepler::period_from_a(0.3, G * (1.0 + M_JUPITER_IN_SUN));
    let mut sys = support::from_jacobi(
        1.0,
        &[support::PlanetSpec {
            mass: M_JUPITER_IN_SUN,
            period,
            el,
        }],
        0.0,
    );
    sys.radii = vec![R_SUN_AU, 0.0];
    let mut gr = GaussRadau::new(sys.clone(), GaussRadauSettings::default()).unwrap();
    let mut snap = Snapshot::zeros(2, 0.0);
    match gr.advance_to(period, &mut snap) {
        Err(NbodyError::Stopped(Event::StarCollision { body, distance, t })) => {
            println!(
                "collision at t = {t:.4} d (P/2 = {:.4}), distance {distance:.3e} au",
                period / 2.0
            );
            assert_eq!(body, 1);
            assert!(distance < R_SUN_AU);
            assert!((t - period / 2.0).abs() < 0.05 * period);
        }
        other => panic!("expected a collision, got {other:?}"),
    }
    // Without stopping, the point-mass orbit goes on through pericentre,
    // finite, with the event recorded once per passage.
    let mut gr = GaussRadau::new(sys, settings()).unwrap();
    gr.advance_to(2.9 * period, &mut snap).unwrap();
    assert!(finite(&snap));
    let n_coll = gr
        .events()
        .iter()
        .filter(|e| matches!(e, Event::StarCollision { .. }))
        .count();
    assert_eq!(n_coll, 3, "{:?}", gr.events());
}

#[test]
fn unbound_planet_gives_an_ejection() {
    // A planet at 1 au moving at 1.5 times the escape speed √(2GM/r).
    let mut sys = support::two_giants(0.0);
    let v_esc = (2.0 * G * 0.8 / 1.0f64).sqrt();
    sys.state.pos[2] = sys.state.pos[0] + Vector3::new(1.0, 0.0, 0.0);
    sys.state.vel[2] = sys.state.vel[0] + Vector3::new(0.0, 1.5 * v_esc, 0.0);
    let mut gr = GaussRadau::new(sys, GaussRadauSettings::default()).unwrap();
    let mut snap = Snapshot::zeros(3, 0.0);
    match gr.advance_to(100.0, &mut snap) {
        Err(NbodyError::Stopped(Event::Ejection { body, .. })) => assert_eq!(body, 2),
        other => panic!("expected an ejection, got {other:?}"),
    }
}

#[test]
fn radial_infall_of_point_masses_stops_without_nan() {
    // Zero angular momentum: the planet falls straight into the star and
    // the acceleration diverges. No radii, no collision check: the run
    // must end with a typed error (step underflow or non-finite), never a
    // NaN state.
    let sys = System {
        masses: vec![1.0, 1e-3],
        radii: vec![0.0, 0.0],
        state: Snapshot {
            t: 0.0,
            pos: vec![Vector3::zeros(), Vector3::new(1.0, 0.0, 0.0)],
            vel: vec![Vector3::zeros(), Vector3::zeros()],
        },
        post_newtonian: false,
    };
    let st = GaussRadauSettings {
        events: EventSettings {
            star_collisions: false,
            ..EventSettings::default()
        },
        ..GaussRadauSettings::default()
    };
    let mut gr = GaussRadau::new(sys, st).unwrap();
    let mut snap = Snapshot::zeros(2, 0.0);
    let res = gr.advance_to(200.0, &mut snap);
    println!("radial infall: {res:?}");
    assert!(matches!(
        res,
        Err(NbodyError::Stopped(Event::StepUnderflow { .. })) | Err(NbodyError::NonFinite { .. })
    ));
    assert!(finite(&gr.snapshot()));
}

#[test]
fn bad_requests_are_refused() {
    let sys = support::two_giants(0.0);
    let mut gr = GaussRadau::new(sys.clone(), settings()).unwrap();
    let mut snap = Snapshot::zeros(3, 0.0);
    assert!(matches!(
        gr.advance_to(f64::NAN, &mut snap),
        Err(NbodyError::InvalidRequest(_))
    ));
    let mut small = Snapshot::zeros(2, 0.0);
    assert!(matches!(
        gr.advance_to(1.0, &mut small),
        Err(NbodyError::InvalidRequest(_))
    ));
    let mut bad = sys.clone();
    bad.masses[1] = -1.0;
    assert!(matches!(
        GaussRadau::new(bad, settings()),
        Err(NbodyError::InvalidSystem(_))
    ));
    let mut bad = sys.clone();
    bad.state.vel[1].x = f64::NAN;
    assert!(matches!(
        GaussRadau::new(bad, settings()),
        Err(NbodyError::InvalidSystem(_))
    ));
    let st = GaussRadauSettings {
        tolerance: 0.0,
        ..settings()
    };
    assert!(matches!(
        GaussRadau::new(sys, st),
        Err(NbodyError::InvalidRequest(_))
    ));
}

#[test]
fn coincident_bodies_give_a_typed_error() {
    // Two point masses at the same place: the force is infinite. The run
    // must end with NbodyError::NonFinite, the state left finite.
    let mut sys = support::two_giants(0.0);
    sys.state.pos[2] = sys.state.pos[1];
    let mut gr = GaussRadau::new(sys, settings()).unwrap();
    let mut snap = Snapshot::zeros(3, 0.0);
    assert!(matches!(
        gr.advance_to(10.0, &mut snap),
        Err(NbodyError::NonFinite { .. })
    ));
    assert!(finite(&gr.snapshot()));
}

//! One test per convention of DESIGN §3 that the two-body layer carries:
//! the sign of the RV, ω⋆ of the star versus the planet's ω, transit at
//! periastron for ω⋆ = 90°, the ascending node, and the inclination.
//! Each checks the Keplerian RV formula or the anomaly helpers against the
//! Cartesian two-body state from `elements_to_state` (Murray & Dermott
//! 1999, eq. 2.122), an independent code path.

use apsidal::kepler::{
    Elements, RelativeState, elements_to_state, jacobi_semi_major_axis,
    mean_anomaly_at_conjunction, mean_from_true, omega_planet_from_star, omega_star_from_planet,
    orbit_rotation, semi_amplitude, time_of_conjunction, wrap_pi,
};
use apsidal::model::keplerian::keplerian_rv;
use apsidal::units::{G, au_per_day_to_m_s};
use std::f64::consts::{FRAC_PI_2, PI, TAU};

const M_STAR: f64 = 1.1;
const M_PLANET: f64 = 0.003;
const PERIOD: f64 = 50.0;

fn planet_state(e: f64, inc: f64, node: f64, omega_star: f64, m: f64) -> RelativeState {
    let el = Elements {
        a: jacobi_semi_major_axis(PERIOD, M_PLANET, M_STAR),
        e,
        inc,
        node,
        omega: omega_planet_from_star(omega_star),
        mean_anomaly: m,
    };
    elements_to_state(&el, G * (M_STAR + M_PLANET)).unwrap()
}

#[test]
fn rv_sign_star_recedes_is_positive() {
    // The star's barycentric velocity is −(m/(M⋆+m)) v_planet; +Z points
    // away from the observer, so its Z component is the RV (positive:
    // receding). It must equal K [cos(ν + ω⋆) + e cos ω⋆] with K from the
    // mass function, sign included, at every phase.
    for &(e, inc, node, w) in &[
        (0.4, 1.0, 0.8, 1.2),
        (0.0, 1.4, 3.0, 0.0),
        (0.9, 2.5, 5.0, 4.0),
    ] {
        let k = semi_amplitude(M_PLANET, PERIOD, e, f64::sin(inc), M_STAR).unwrap();
        let mut seen_towards = false;
        for j in 0..97 {
            let m = TAU * j as f64 / 97.0 - PI;
            let s = planet_state(e, inc, node, w, m);
            let rv_star = au_per_day_to_m_s(-M_PLANET / (M_STAR + M_PLANET) * s.vel.z);
            let rv_formula = keplerian_rv(0.0, PERIOD, k, e, w, m, 0.0).unwrap();
            assert!(
                (rv_star - rv_formula).abs() < 1e-11 * k,
                "e={e} M={m}: state {rv_star} formula {rv_formula}"
            );
            // Planet moving towards the observer (ż < 0) ⇔ star receding (RV > 0).
            if s.vel.z < -1e-12 {
                seen_towards = true;
                assert!(rv_formula > 0.0);
            }
        }
        assert!(seen_towards);
    }
}

#[test]
fn omega_star_is_the_star_and_planet_omega_is_opposite() {
    // ω_p = ω⋆ + π. At periastron (M = 0) the star's position −(m/M) r_p
    // points to the periastron of the star's orbit, the direction P of
    // orbit_rotation(i, Ω, ω⋆); the planet's points along P(i, Ω, ω_p).
    for &w in &[0.0, 0.3, 2.0, 4.5] {
        assert!((wrap_pi(omega_planet_from_star(w) - w - PI)).abs() < 1e-15);
        assert!((wrap_pi(omega_star_from_planet(omega_planet_from_star(w)) - w)).abs() < 1e-15);
        let (inc, node) = (1.1, 0.4);
        let s = planet_state(0.3, inc, node, w, 0.0);
        let star_dir = -s.pos.normalize();
        let (p_star, _) = orbit_rotation(inc, node, w);
        let (p_planet, _) = orbit_rotation(inc, node, omega_planet_from_star(w));
        assert!((star_dir - p_star).norm() < 1e-14);
        assert!((s.pos.normalize() - p_planet).norm() < 1e-14);
    }
}

#[test]
fn transit_at_periastron_for_omega_star_90_degrees() {
    // ω⋆ = 90°: the planet is nearest the observer (z most negative) at
    // ν = 0, so a transiting planet transits at periastron, and the
    // conjunction helper puts the conjunction at the periastron epoch.
    for &e in &[0.0, 0.2, 0.7] {
        let inc = 89.5f64.to_radians();
        let z0 = planet_state(e, inc, 0.3, FRAC_PI_2, 0.0).pos.z;
        assert!(z0 < 0.0);
        for j in 1..400 {
            let m = TAU * j as f64 / 400.0;
            assert!(planet_state(e, inc, 0.3, FRAC_PI_2, m).pos.z > z0);
        }
        assert!(mean_anomaly_at_conjunction(e, FRAC_PI_2).abs() < 1e-15);
        assert_eq!(
            time_of_conjunction(2_460_000.0, PERIOD, e, FRAC_PI_2),
            2_460_000.0
        );
    }
    // Any ω⋆: at the conjunction's mean anomaly the planet lies on the line
    // of sight side nearest the observer: no offset along the line of
    // nodes and z < 0 (inferior conjunction).
    for &(e, w) in &[(0.0, 0.0), (0.3, 1.0), (0.6, 3.5), (0.9, 5.9)] {
        let node = 0.7;
        let s = planet_state(e, 1.2, node, w, mean_anomaly_at_conjunction(e, w));
        let along_node = s.pos.x * node.cos() + s.pos.y * node.sin();
        assert!(along_node.abs() < 1e-14 * s.pos.norm(), "e={e} ω⋆={w}");
        assert!(s.pos.z < 0.0);
    }
}

#[test]
fn ascending_node_moves_away_from_observer() {
    // The ascending node (ν + ω_p = 0) is where the body crosses the sky
    // plane moving away from the observer: z = 0, ż > 0, and it lies in
    // the direction (cos Ω, sin Ω, 0).
    for &(e, inc, node, w) in &[
        (0.0, 0.5, 0.0, 0.0),
        (0.5, 1.3, 2.0, 1.0),
        (0.8, 2.8, 4.0, 3.0),
    ] {
        let w_p = omega_planet_from_star(w);
        let m = mean_from_true(-w_p, e);
        let s = planet_state(e, inc, node, w, m);
        assert!(s.pos.z.abs() < 1e-14 * s.pos.norm());
        assert!(s.vel.z > 0.0);
        let dir = s.pos.normalize();
        assert!((dir.x - node.cos()).abs() < 1e-13 && (dir.y - node.sin()).abs() < 1e-13);
    }
}

#[test]
fn inclination_is_measured_from_the_sky_plane() {
    // i = 90°: edge-on, the orbit normal lies in the sky plane and the
    // semi-amplitude is the full one. i = 0: face-on, no RV at all.
    let s = planet_state(0.2, FRAC_PI_2, 1.0, 0.5, 0.3);
    let h = s.pos.cross(&s.vel);
    assert!(h.z.abs() < 1e-14 * h.norm());
    for j in 0..20 {
        let s = planet_state(0.2, 0.0, 1.0, 0.5, j as f64 * 0.3);
        assert!(s.pos.z == 0.0 && s.vel.z == 0.0);
    }
}

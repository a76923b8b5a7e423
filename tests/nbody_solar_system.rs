//! The Sun and eight planets from the VSOP87 planetary theory (Bretagnon &
//! Francou 1988, A&A 202, 309) through the `vsop87` crate, integrated for a
//! century with Gauss–Radau and compared with VSOP87; Mercury's perihelion
//! advance from the planets and from general relativity.

use apsidal::kepler::{Elements, elements_to_state, state_to_elements, wrap_pi};
use apsidal::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
use apsidal::nbody::{EventSettings, Integrator, Snapshot, System};
use apsidal::units::{G, deg};
use nalgebra::Vector3;
use std::f64::consts::PI;
use vsop87::{RectangularCoordinates, vsop87a, vsop87e};

/// J2000.0 (JD 2451545.0 TDB), the VSOP87 reference epoch.
const J2000: f64 = 2_451_545.0;
/// Julian century in days.
const CENTURY: f64 = 36_525.0;
/// One arcsecond in radians.
const ARCSEC: f64 = PI / (180.0 * 3600.0);

/// Sun/planet mass ratios of the IAU 2009 system of astronomical constants
/// (Luzum et al. 2011, Celest. Mech. Dyn. Astr. 110, 293, Table 1; from
/// memory): Mercury, Venus, Earth+Moon, Mars, Jupiter, Saturn, Uranus,
/// Neptune. The Earth–Moon entry is the Earth + Moon system, because the
/// body integrated for the Earth is the Earth–Moon barycentre (see
/// [`vsop_bodies`]).
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

fn v3(c: RectangularCoordinates) -> Vector3<f64> {
    Vector3::new(c.x, c.y, c.z)
}

/// Barycentric ecliptic-J2000 positions (au) of the Sun and the eight
/// planets at `jd` (TDB) from VSOP87E. For the Earth the Earth–Moon
/// barycentre is taken (VSOP87E gives the Earth itself, whose monthly
/// wobble of ≈ 4700 km about the EMB is not a point-mass orbit): it is the
/// heliocentric EMB of VSOP87A plus the barycentric Sun of VSOP87E.
fn vsop_bodies(jd: f64) -> [Vector3<f64>; 9] {
    let sun = v3(vsop87e::sun(jd));
    [
        sun,
        v3(vsop87e::mercury(jd)),
        v3(vsop87e::venus(jd)),
        v3(vsop87a::earth_moon(jd)) + sun,
        v3(vsop87e::mars(jd)),
        v3(vsop87e::jupiter(jd)),
        v3(vsop87e::saturn(jd)),
        v3(vsop87e::uranus(jd)),
        v3(vsop87e::neptune(jd)),
    ]
}

/// Step of the velocity finite difference, days (a power of two, so that
/// J2000 ± h and ± 2h are exact in f64).
const FD_STEP: f64 = 0.0625;

/// Velocities (au/d) at `jd` by the five-point central difference
/// v ≈ [8(f(t+h) − f(t−h)) − (f(t+2h) − f(t−2h))] / (12h), the Richardson
/// extrapolation of two central differences (truncation error O(h⁴ f⁽⁵⁾)),
/// with h = [`FD_STEP`]. Also returns an estimate of its largest relative
/// truncation error: the same formula with step 2h has a 16 times larger
/// error, so their difference is ≈ 15 times the error of the step h.
/// (Round-off: VSOP87 positions to ~1e-15 au over 12h give ~1e-15 au/d,
/// ~1e-13 relative.)
fn vsop_velocities(jd: f64) -> ([Vector3<f64>; 9], f64) {
    let h = FD_STEP;
    let p1 = vsop_bodies(jd + h);
    let m1 = vsop_bodies(jd - h);
    let p2 = vsop_bodies(jd + 2.0 * h);
    let m2 = vsop_bodies(jd - 2.0 * h);
    let p4 = vsop_bodies(jd + 4.0 * h);
    let m4 = vsop_bodies(jd - 4.0 * h);
    let mut v = [Vector3::zeros(); 9];
    let mut worst: f64 = 0.0;
    for i in 0..9 {
        v[i] = ((p1[i] - m1[i]) * 8.0 - (p2[i] - m2[i])) / (12.0 * h);
        // The same five-point formula with step 2h: the difference
        // estimates its error, which is 16 times that of the step h.
        let v2 = ((p2[i] - m2[i]) * 8.0 - (p4[i] - m4[i])) / (24.0 * h);
        worst = worst.max((v2 - v[i]).norm() / v[i].norm() / 15.0);
    }
    (v, worst)
}

fn masses() -> Vec<f64> {
    let mut m = vec![1.0];
    m.extend(SUN_OVER_PLANET.iter().map(|r| 1.0 / r));
    m
}

/// The solar system at J2000 from VSOP87, shifted to the barycentre of the
/// nine bodies with our masses (VSOP87E's barycentre includes bodies and
/// mass values we do not have; the shift is of order 1e-6 au).
fn solar_system() -> (System, f64) {
    let pos = vsop_bodies(J2000);
    let (vel, fd_err) = vsop_velocities(J2000);
    let m = masses();
    let mt: f64 = m.iter().sum();
    let com: Vector3<f64> = (0..9).map(|i| pos[i] * m[i]).sum::<Vector3<f64>>() / mt;
    let vcom: Vector3<f64> = (0..9).map(|i| vel[i] * m[i]).sum::<Vector3<f64>>() / mt;
    let sys = System {
        masses: m,
        radii: vec![0.0; 9],
        state: Snapshot {
            t: 0.0,
            pos: pos.iter().map(|p| p - com).collect(),
            vel: vel.iter().map(|v| v - vcom).collect(),
        },
        post_newtonian: false,
    };
    (sys, fd_err)
}

fn quiet() -> GaussRadauSettings {
    GaussRadauSettings {
        events: EventSettings {
            hill_radii: None,
            stop_on_event: false,
            ..EventSettings::default()
        },
        ..GaussRadauSettings::default()
    }
}

/// Least-squares slope of y(t).
fn slope(t: &[f64], y: &[f64]) -> f64 {
    let n = t.len() as f64;
    let tm = t.iter().sum::<f64>() / n;
    let ym = y.iter().sum::<f64>() / n;
    let sxy: f64 = t.iter().zip(y).map(|(a, b)| (a - tm) * (b - ym)).sum();
    let sxx: f64 = t.iter().map(|a| (a - tm) * (a - tm)).sum();
    sxy / sxx
}

/// Longitude of perihelion ϖ = Ω + ω (rad) of body `k`'s heliocentric
/// osculating orbit.
fn varpi(s: &Snapshot, m: &[f64], k: usize) -> f64 {
    let el = state_to_elements(
        &(s.pos[k] - s.pos[0]),
        &(s.vel[k] - s.vel[0]),
        G * (m[0] + m[k]),
    )
    .unwrap();
    el.node + el.omega
}

/// Unwrapped samples of an angle.
fn unwrap(a: &mut [f64]) {
    for i in 1..a.len() {
        a[i] = a[i - 1] + wrap_pi(a[i] - a[i - 1]);
    }
}

const NAMES: [&str; 8] = [
    "Mercury", "Venus", "EMB", "Mars", "Jupiter", "Saturn", "Uranus", "Neptune",
];

#[test]
fn century_of_the_solar_system_agrees_with_vsop87() {
    let (sys, fd_err) = solar_system();
    println!("VSOP87 finite-difference velocity error estimate (relative): {fd_err:.2e}");
    // The five-point difference with h = 1/16 d: truncation error below
    // 1e-9 relative even for Mercury (its error estimate is checked here).
    assert!(fd_err < 1e-9);
    let m = sys.masses.clone();
    let mut gr = GaussRadau::new(sys, quiet()).unwrap();
    let mut snap = Snapshot::zeros(9, 0.0);
    // Mercury's ϖ sampled through the century.
    let n_s = 2000;
    let mut ts = Vec::with_capacity(n_s + 1);
    let mut w = Vec::with_capacity(n_s + 1);
    for i in 0..=n_s {
        let t = CENTURY * i as f64 / n_s as f64;
        gr.advance_to(t, &mut snap).unwrap();
        ts.push(t);
        w.push(varpi(&snap, &m, 1));
    }
    println!(
        "century: {} steps, {} rejected",
        gr.steps(),
        gr.rejected_steps()
    );
    // Positions after a century, heliocentric (the Sun's own VSOP87E
    // position and our barycentre shift cancel).
    let vs = vsop_bodies(J2000 + CENTURY);
    let mut errs = [0.0; 8];
    for k in 1..9 {
        let ours = snap.pos[k] - snap.pos[0];
        let theirs = vs[k] - vs[0];
        errs[k - 1] = (ours - theirs).norm();
        println!(
            "{:8}: |Δr| after 100 yr = {:.3e} au ({:.3e} relative)",
            NAMES[k - 1],
            errs[k - 1],
            errs[k - 1] / theirs.norm()
        );
    }
    // Mercury's perihelion advance in the fixed J2000 ecliptic frame.
    unwrap(&mut w);
    let rate = slope(&ts, &w) * CENTURY / ARCSEC;
    println!("Mercury: dϖ/dt from planetary perturbations = {rate:.2}″ per century");
    // From the raw start (VSOP87 position and finite-difference velocity
    // at J2000) the century error is dominated by the VSOP87 velocities
    // (measured 2e-4 to 8e-4 au for the giants; the fitted test below
    // shows the dynamics agree to ≤ 1.5e-5 au). Here only a gross-error
    // check: a wrong mass or force would give errors of 1e-2 au or more.
    for k in 0..8 {
        assert!(errs[k] <= 2e-3, "{}: {:e} au", NAMES[k], errs[k]);
    }
    // The classical planetary part of Mercury's perihelion advance,
    // ≈ 532″ per century in a fixed frame (textbook value, e.g. Clemence
    // 1947, Rev. Mod. Phys. 19, 361; from memory), within 5 %.
    assert!((rate - 532.0).abs() <= 0.05 * 532.0, "rate = {rate}″/cy");
}

/// Mercury about the Sun alone, with the first post-Newtonian term: the
/// relativistic perihelion advance.
fn mercury_alone(post_newtonian: bool) -> f64 {
    // J2000 osculating-like mean elements of Mercury (Standish, "Keplerian
    // elements for approximate positions of the major planets", JPL, table
    // 1; from memory): a = 0.38709927 au, e = 0.20563593, i = 7.00497902°,
    // Ω = 48.33076593°, ϖ = 77.45779628°, L = 252.25032350°.
    let m = 1.0 / SUN_OVER_PLANET[0];
    let (node, varpi0, lambda) = (deg(48.330_765_93), deg(77.457_796_28), deg(252.250_323_5));
    let el = Elements {
        a: 0.387_099_27,
        e: 0.205_635_93,
        inc: deg(7.004_979_02),
        node,
        omega: varpi0 - node,
        mean_anomaly: lambda - varpi0,
    };
    let rel = elements_to_state(&el, G * (1.0 + m)).unwrap();
    let f = m / (1.0 + m);
    let sys = System {
        masses: vec![1.0, m],
        radii: vec![0.0; 2],
        state: Snapshot {
            t: 0.0,
            pos: vec![-rel.pos * f, rel.pos * (1.0 - f)],
            vel: vec![-rel.vel * f, rel.vel * (1.0 - f)],
        },
        post_newtonian,
    };
    let masses = sys.masses.clone();
    let mut gr = GaussRadau::new(sys, quiet()).unwrap();
    let mut snap = Snapshot::zeros(2, 0.0);
    let n_s = 1000;
    let mut ts = Vec::new();
    let mut w = Vec::new();
    for i in 0..=n_s {
        let t = CENTURY * i as f64 / n_s as f64;
        gr.advance_to(t, &mut snap).unwrap();
        ts.push(t);
        w.push(varpi(&snap, &masses, 1));
    }
    unwrap(&mut w);
    slope(&ts, &w) * CENTURY / ARCSEC
}

#[test]
fn relativistic_perihelion_advance_of_mercury() {
    let with = mercury_alone(true);
    let without = mercury_alone(false);
    println!("Mercury alone: dϖ/dt = {with:.4}″/cy with 1PN, {without:.2e}″/cy without");
    // Newtonian two-body orbit: no advance (to the integration error).
    assert!(without.abs() < 1e-3, "{without}");
    // Einstein (1915): 42.98″ per century (common practice), within 1 %.
    assert!((with - 42.98).abs() <= 0.01 * 42.98, "{with}″/cy");
    // The same from the formula Δϖ = 6πGM/(c² a (1 − e²)) per orbit, for
    // these elements.
    let (a, e) = (0.387_099_27, 0.205_635_93);
    let c = apsidal::units::C_AU_PER_DAY;
    let per_orbit = 6.0 * PI * G / (c * c * a * (1.0 - e * e));
    let orbits = CENTURY / apsidal::kepler::period_from_a(a, G * (1.0 + 1.0 / SUN_OVER_PLANET[0]));
    let formula = per_orbit * orbits / ARCSEC;
    println!("formula: {formula:.4}″/cy");
    assert!((with - formula).abs() <= 0.002 * formula);
}

/// Heliocentric two-body propagation of a state over `dt` days (μ in
/// au³/d²): elements, mean anomaly advanced, back to a state.
fn kepler_propagate(x: &[f64; 6], mu: f64, dt: f64) -> Vector3<f64> {
    let el = state_to_elements(
        &Vector3::new(x[0], x[1], x[2]),
        &Vector3::new(x[3], x[4], x[5]),
        mu,
    )
    .unwrap();
    let n = (mu / el.a.powi(3)).sqrt();
    let el2 = Elements {
        mean_anomaly: el.mean_anomaly + n * dt,
        ..el
    };
    elements_to_state(&el2, mu).unwrap().pos
}

/// Differential correction of the initial heliocentric states of the
/// planets to VSOP87 positions at `epochs` (days from J2000): one
/// Gauss–Newton step per call, each planet's 6 × 6 normal equations with
/// the two-body state-transition matrix (by central differences of
/// [`kepler_propagate`]) as the approximate Jacobian. Returns the
/// corrected system and the largest residual (au) per planet before the
/// correction.
fn correct_initial_state(sys: &System, epochs: &[f64]) -> (System, [f64; 8]) {
    let m = sys.masses.clone();
    let mut gr = GaussRadau::new(sys.clone(), quiet()).unwrap();
    let mut snap = Snapshot::zeros(9, 0.0);
    let mut resid = vec![[Vector3::zeros(); 8]; epochs.len()];
    let mut worst = [0.0f64; 8];
    for (j, &t) in epochs.iter().enumerate() {
        gr.advance_to(t, &mut snap).unwrap();
        let vs = vsop_bodies(J2000 + t);
        for k in 1..9 {
            resid[j][k - 1] = (vs[k] - vs[0]) - (snap.pos[k] - snap.pos[0]);
            worst[k - 1] = worst[k - 1].max(resid[j][k - 1].norm());
        }
    }
    let mut out = sys.clone();
    let s0 = &sys.state;
    for k in 1..9 {
        let mu = G * (m[0] + m[k]);
        let r = s0.pos[k] - s0.pos[0];
        let v = s0.vel[k] - s0.vel[0];
        let x0 = [r.x, r.y, r.z, v.x, v.y, v.z];
        let mut ata = nalgebra::Matrix6::<f64>::zeros();
        let mut atb = nalgebra::Vector6::<f64>::zeros();
        for (j, &t) in epochs.iter().enumerate() {
            let mut jac = nalgebra::Matrix3x6::<f64>::zeros();
            for p in 0..6 {
                let h = if p < 3 {
                    1e-6 * r.norm()
                } else {
                    1e-6 * v.norm()
                };
                let mut xp = x0;
                let mut xm = x0;
                xp[p] += h;
                xm[p] -= h;
                let d = (kepler_propagate(&xp, mu, t) - kepler_propagate(&xm, mu, t)) / (2.0 * h);
                jac.set_column(p, &d);
            }
            ata += jac.transpose() * jac;
            atb += jac.transpose() * resid[j][k - 1];
        }
        let delta = ata.lu().solve(&atb).unwrap();
        out.state.pos[k] += Vector3::new(delta[0], delta[1], delta[2]);
        out.state.vel[k] += Vector3::new(delta[3], delta[4], delta[5]);
    }
    // Back to the barycentre of the nine bodies.
    let mt: f64 = m.iter().sum();
    let com: Vector3<f64> = (0..9)
        .map(|i| out.state.pos[i] * m[i])
        .sum::<Vector3<f64>>()
        / mt;
    let vcom: Vector3<f64> = (0..9)
        .map(|i| out.state.vel[i] * m[i])
        .sum::<Vector3<f64>>()
        / mt;
    for i in 0..9 {
        out.state.pos[i] -= com;
        out.state.vel[i] -= vcom;
    }
    (out, worst)
}

/// Residuals (au, largest over the check epochs, per planet) after one
/// differential correction of the initial state, with or without the 1PN
/// term; also the raw-start residuals at the fit epochs.
fn fitted_residuals(post_newtonian: bool) -> ([f64; 8], [f64; 8]) {
    let (mut sys, _) = solar_system();
    sys.post_newtonian = post_newtonian;
    // 37 epochs: their spacing (987 d) is commensurate with no planet's
    // period, so every orbit is sampled at many phases.
    let fit_epochs: Vec<f64> = (1..=37).map(|i| CENTURY * i as f64 / 37.0).collect();
    let (fitted, before) = correct_initial_state(&sys, &fit_epochs);
    let check_epochs: Vec<f64> = (0..37).map(|i| CENTURY * (i as f64 + 0.5) / 37.0).collect();
    let mut gr = GaussRadau::new(fitted, quiet()).unwrap();
    let mut snap = Snapshot::zeros(9, 0.0);
    let mut worst = [0.0f64; 8];
    for &t in &check_epochs {
        gr.advance_to(t, &mut snap).unwrap();
        let vs = vsop_bodies(J2000 + t);
        for k in 1..9 {
            let d = (vs[k] - vs[0]) - (snap.pos[k] - snap.pos[0]);
            worst[k - 1] = worst[k - 1].max(d.norm());
        }
    }
    (before, worst)
}

#[test]
fn fitted_century_of_the_solar_system_agrees_with_vsop87() {
    // The VSOP87 derivative at J2000 is not the theory's own dynamical
    // velocity to better than ~1e-7 relative (the series' residuals
    // against DE200, to which VSOP87 was fitted; Bretagnon & Francou 1988),
    // and a velocity error drifts the mean longitude linearly. Classical
    // ephemeris comparison fits the initial conditions instead: one
    // differential correction of the 6 initial heliocentric coordinates of
    // every planet to VSOP87 positions at 37 epochs over the century
    // (48 parameters, 888 data). The dynamics are then judged by the
    // residuals at 37 other epochs, midway between the fit epochs. With the
    // Sun's first post-Newtonian term on (DE200 includes relativity).
    let (before, worst) = fitted_residuals(true);
    let (_, newtonian) = fitted_residuals(false);
    for k in 0..8 {
        println!(
            "{:8}: max |Δr| over 100 yr: raw start {:.2e} au; fitted start {:.2e} au with 1PN, {:.2e} au Newtonian",
            NAMES[k], before[k], worst[k], newtonian[k]
        );
    }
    // Target: giant planets ≤ 1e-4 au over the century.
    for k in 4..8 {
        assert!(worst[k] <= 1e-4, "{}: {:e} au", NAMES[k], worst[k]);
    }
    // The terrestrial planets (measured ≤ 6e-7 au) within 1e-5 au.
    for k in 0..4 {
        assert!(worst[k] <= 1e-5, "{}: {:e} au", NAMES[k], worst[k]);
    }
    // Without relativity Mercury cannot follow VSOP87/DE200: its 43″ per
    // century of extra perihelion advance shows as a residual ≫ the 1PN one.
    assert!(
        newtonian[0] > 30.0 * worst[0],
        "{:e} vs {:e}",
        newtonian[0],
        worst[0]
    );
}

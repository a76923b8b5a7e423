//! Property and grid tests of two-body mechanics: round trips (elements ↔
//! state, anomalies, epochs), the Kepler solver's residual, and the mass
//! function solved both ways.

use apsidal::kepler::{
    Elements, KeplerSolver, conjunction_from_mean_anomaly, eccentric_from_true, elements_to_state,
    jacobi_planet_masses, mass_function, mean_anomaly_at, mean_anomaly_at_conjunction,
    mean_anomaly_from_conjunction, mean_anomaly_from_longitude, mean_from_eccentric,
    mean_from_true, mean_longitude, periastron_from_conjunction, planet_mass, semi_amplitude,
    solve_kepler, state_to_elements, time_of_conjunction, time_of_periastron, true_from_eccentric,
    true_from_mean, wrap_pi,
};
use apsidal::units::G;
use proptest::prelude::*;
use std::f64::consts::{PI, TAU};

/// Angular distance modulo 2π, in [0, π].
fn ang_diff(a: f64, b: f64) -> f64 {
    wrap_pi(a - b).abs()
}

fn state_close(a: &Elements, b: &Elements, mu: f64) -> (f64, f64) {
    let sa = elements_to_state(a, mu).unwrap();
    let sb = elements_to_state(b, mu).unwrap();
    (
        (sa.pos - sb.pos).norm() / sa.pos.norm(),
        (sa.vel - sb.vel).norm() / sa.vel.norm(),
    )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, .. ProptestConfig::default() })]

    #[test]
    fn elements_state_elements_round_trip(
        a in 0.01f64..100.0,
        e in 0.0f64..0.99,
        cos_i in -1.0f64..1.0,
        node in 0.0f64..TAU,
        omega in 0.0f64..TAU,
        m in -10.0f64..10.0,
        mu_scale in 0.1f64..3.0,
    ) {
        let mu = G * mu_scale;
        let inc = cos_i.acos();
        let el = Elements { a, e, inc, node, omega, mean_anomaly: m };
        let s = elements_to_state(&el, mu).unwrap();
        let back = state_to_elements(&s.pos, &s.vel, mu).unwrap();
        // Always well conditioned: a, e, i, and the state itself.
        prop_assert!((back.a / a - 1.0).abs() < 1e-11, "a {} vs {}", back.a, a);
        prop_assert!((back.e - e).abs() < 1e-11, "e {} vs {}", back.e, e);
        prop_assert!((back.inc - inc).abs() < 1e-9 , "i {} vs {}", back.inc, inc);
        let (dp, dv) = state_close(&el, &back, mu);
        prop_assert!(dp < 1e-11 && dv < 1e-11, "state differs: {dp:e} {dv:e}");
        // Angles where they are well defined (error of each ~ ε / e or
        // ε / sin i): compare modulo 2π.
        let sin_i = inc.sin();
        if sin_i > 1e-3 {
            prop_assert!(ang_diff(back.node, node) < 1e-9, "node {} vs {}", back.node, node);
            if e > 1e-3 {
                prop_assert!(ang_diff(back.omega, omega) < 1e-8, "ω {} vs {}", back.omega, omega);
                prop_assert!(ang_diff(back.mean_anomaly, m) < 1e-8, "M {} vs {}", back.mean_anomaly, m);
            }
        }
        // The mean longitude is always defined for prograde orbits.
        if cos_i > 1e-3 {
            let l0 = mean_longitude(m, omega, node);
            let l1 = mean_longitude(back.mean_anomaly, back.omega, back.node);
            prop_assert!(ang_diff(l0, l1) < 1e-9);
        }
    }

    #[test]
    fn mass_round_trips(
        log_m in -8.0f64..-0.5,
        log_p in -0.5f64..4.5,
        e in 0.0f64..0.99,
        sin_i in 0.02f64..1.0,
        m_inner in 0.08f64..3.0,
    ) {
        let m = 10f64.powf(log_m);
        let p = 10f64.powf(log_p);
        // m → K → m.
        let k = semi_amplitude(m, p, e, sin_i, m_inner).unwrap();
        let m2 = planet_mass(k, p, e, sin_i, m_inner).unwrap();
        prop_assert!((m2 / m - 1.0).abs() < 1e-12, "m {m} → K {k} → m {m2}");
        // The mass solves the defining equation m³ sin³ i / (M + m)² = f
        // (DESIGN §3) exactly, not its small-planet approximation.
        let f = mass_function(p, k, e);
        let lhs = (m2 * sin_i).powi(3) / (m_inner + m2).powi(2);
        prop_assert!((lhs / f - 1.0).abs() < 1e-12);
        // K → m → K.
        let k2 = semi_amplitude(m2, p, e, sin_i, m_inner).unwrap();
        prop_assert!((k2 / k - 1.0).abs() < 1e-12);
    }

    #[test]
    fn anomaly_round_trips(nu in -20.0f64..20.0, e in 0.0f64..0.999) {
        // ν → E → ν in the same turn, and ν → M → ν.
        let ecc = eccentric_from_true(nu, e);
        prop_assert!((ecc - nu).abs() < PI);
        prop_assert!((true_from_eccentric(ecc, e) - nu).abs() < 1e-9 * (1.0 + nu.abs()));
        let m = mean_from_true(nu, e);
        prop_assert!((mean_from_eccentric(ecc, e) - m).abs() < 1e-15 * (1.0 + m.abs()));
        let nu2 = true_from_mean(m, e).unwrap();
        // dν/dM ≤ (1+e)²/(1−e²)^{3/2}: allow the conditioning.
        let cond = (1.0 + e).powi(2) / (1.0 - e * e).powf(1.5);
        prop_assert!((nu2 - nu).abs() < 1e-14 * cond * (1.0 + nu.abs()), "{nu} → {m} → {nu2}");
    }

    #[test]
    fn epoch_round_trips(
        t_p in 2_450_000.0f64..2_470_000.0,
        period in 0.3f64..5000.0,
        e in 0.0f64..0.95,
        omega_star in -7.0f64..7.0,
        dt in -3000.0f64..3000.0,
    ) {
        let epoch = t_p + dt;
        // T_p → M(epoch) → T_p (modulo whole periods).
        let m = mean_anomaly_at(epoch, t_p, period);
        let t_p2 = time_of_periastron(epoch, m, period);
        prop_assert!((t_p2 - t_p).abs() < 1e-6, "{t_p} vs {t_p2}");
        // T_p → T_c → T_p.
        let t_c = time_of_conjunction(t_p, period, e, omega_star);
        prop_assert!(t_c >= t_p && t_c < t_p + period);
        let t_p3 = periastron_from_conjunction(t_c, period, e, omega_star);
        prop_assert!((t_p3 - t_p).abs() < 1e-6);
        // M(epoch) → T_c → M(epoch), modulo 2π.
        let t_c2 = conjunction_from_mean_anomaly(epoch, m, period, e, omega_star);
        prop_assert!(((t_c2 - t_c) / period - ((t_c2 - t_c) / period).round()).abs() < 1e-9);
        let m2 = mean_anomaly_from_conjunction(epoch, t_c2, period, e, omega_star);
        prop_assert!(ang_diff(m2, m) < 1e-9 * (1.0 + dt.abs() / period));
        // At the conjunction the mean anomaly is the conjunction's one.
        let mc = mean_anomaly_from_conjunction(t_c, t_c, period, e, omega_star);
        prop_assert!(ang_diff(mc, mean_anomaly_at_conjunction(e, omega_star)) < 1e-12);
        // λ → M → λ.
        let lam = mean_longitude(m, omega_star + PI, 0.3);
        prop_assert!(ang_diff(mean_anomaly_from_longitude(lam, omega_star + PI, 0.3), m) < 1e-9);
    }
}

#[test]
fn kepler_residual_over_dense_grid() {
    // |E − e sin E − M| ≤ 1e-14 rad over e ∈ [0, 0.999] (with 0.9999 and
    // 1 − 1e-9 too) and M over a full turn, a log grid down to 1e-12 rad
    // near M = 0 (the hard corner for e → 1), and large |M| (range
    // reduction). sin E and cos E returned must be those of E.
    let mut es: Vec<f64> = (0..=200).map(|i| i as f64 / 200.0 * 0.999).collect();
    es.extend([0.9999, 0.99999, 1.0 - 1e-9]);
    let mut ms: Vec<f64> = (0..=4000).map(|i| -PI + TAU * i as f64 / 4000.0).collect();
    for j in 0..=240 {
        let x = 10f64.powf(-12.0 + 12.0 * j as f64 / 240.0);
        ms.extend([x, -x, PI - x, -PI + x]);
    }
    let mut worst: f64 = 0.0;
    let mut worst_sc: f64 = 0.0;
    let mut max_corr = 0;
    let mut n = 0usize;
    for &e in &es {
        for &m in &ms {
            let s = solve_kepler(m, e).unwrap();
            let r = (s.e_anom - e * s.sin_e - m).abs();
            worst = worst.max(r);
            max_corr = max_corr.max(s.corrections);
            assert!(r <= 1e-14, "e = {e}, M = {m}: residual {r:e}");
            let ds = (s.sin_e - s.e_anom.sin()).abs();
            let dc = (s.cos_e - s.e_anom.cos()).abs();
            worst_sc = worst_sc.max(ds).max(dc);
            // Half an ulp of E (≤ 2.2e-16 for |E| ≤ π: E is rounded after
            // the last correction, sin/cos are not) plus ~3 roundings of
            // the angle addition: ≤ 1e-15.
            assert!(
                ds <= 1e-15 && dc <= 1e-15,
                "e={e} M={m}: Δsin {ds:e} Δcos {dc:e}"
            );
            n += 1;
        }
    }
    println!(
        "{n} solves: worst residual {worst:e} rad, worst |sin/cos E − returned| {worst_sc:e}, \
         at most {max_corr} correction(s)"
    );
    // Large |M|: the answer is that of the reduced M, shifted by the same
    // number of turns; the residual is bounded by the rounding of M itself.
    for &e in &[0.0, 0.3, 0.9, 0.999] {
        for &k in &[1.0, -1.0, 17.0, -1e3, 1e6, -1e6] {
            for &m0 in &[-3.0, -0.5, 1e-6, 0.7, 3.1] {
                let m = m0 + TAU * k;
                let s = solve_kepler(m, e).unwrap();
                let r = (s.e_anom - e * s.sin_e - m).abs();
                let ulp = f64::EPSILON * m.abs();
                assert!(r <= 1e-14 + 4.0 * ulp, "e={e} M={m}: residual {r:e}");
                assert!((s.e_anom - m).abs() <= PI, "E in another turn than M");
                let red = solve_kepler(wrap_pi(m), e).unwrap();
                assert!((s.sin_e - red.sin_e).abs() < 1e-15);
                assert!((s.cos_e - red.cos_e).abs() < 1e-15);
            }
        }
    }
}

#[test]
fn kepler_accuracy_in_e_near_parabolic_corner() {
    // Near e → 1, M → 0 a small residual does not imply a small error in E
    // (f′ = 1 − e cos E → 0). Compare with bisection on f(E) in f64, which
    // is monotonic; the bracket shrinks to adjacent floats. Both are limited
    // by the rounding of f (≈ ε E) divided by f′: relative error ≈ ε / f′,
    // so the bound is 8 ε / f′ (2e-12 at e = 0.9999, 2e-8 at 1 − 1e-8).
    for &e in &[0.99, 0.999, 0.9999, 1.0 - 1e-8] {
        for &m in &[1e-12, 1e-9, 1e-6, 1e-3, 0.05] {
            let f = |x: f64| x - e * x.sin() - m;
            let (mut lo, mut hi) = (0.0f64, PI);
            for _ in 0..200 {
                let mid = 0.5 * (lo + hi);
                if mid == lo || mid == hi {
                    break;
                }
                if f(mid) > 0.0 { hi = mid } else { lo = mid }
            }
            let s = solve_kepler(m, e).unwrap();
            let rel = (s.e_anom - lo).abs() / lo;
            let bound = 8.0 * f64::EPSILON / (1.0 - e * lo.cos());
            assert!(
                rel < bound,
                "e={e} M={m}: E={} bisection {lo} (rel {rel:e})",
                s.e_anom
            );
        }
    }
}

#[test]
fn special_orientations_follow_documented_rules() {
    // e = 0 and/or i = 0: undefined angles are set by the rules of
    // state_to_elements (Ω = 0 when i ∈ {0, π}; ω = 0 when e = 0, M then
    // the argument of latitude / true longitude) and the state is kept.
    let mu = G;
    for &(e, inc) in &[(0.0, 0.0), (0.0, 0.7), (0.3, 0.0), (0.0, PI), (0.4, PI)] {
        for &(node, omega, m) in &[(1.0, 2.0, 3.0), (5.5, 0.1, -2.0), (0.0, 0.0, 0.0)] {
            let el = Elements {
                a: 1.7,
                e,
                inc,
                node,
                omega,
                mean_anomaly: m,
            };
            let s = elements_to_state(&el, mu).unwrap();
            let b = state_to_elements(&s.pos, &s.vel, mu).unwrap();
            let (dp, dv) = state_close(&el, &b, mu);
            assert!(dp < 1e-12 && dv < 1e-12, "{el:?} -> {b:?}");
            if inc == 0.0 || inc == PI {
                assert_eq!(b.node, 0.0);
                assert_eq!(b.inc, inc);
            }
            if e == 0.0 {
                assert_eq!(b.omega, 0.0);
                assert_eq!(b.e, 0.0);
            }
            if e == 0.0 && inc == 0.0 {
                // True longitude Ω + ω + M, measured from +X.
                assert!(ang_diff(b.mean_anomaly, node + omega + m) < 1e-12);
            }
        }
    }
}

#[test]
fn jacobi_masses_use_growing_interior_mass() {
    // Each planet's mass is solved with M⋆ plus the planets inside it:
    // semi_amplitude with that interior mass returns the K given.
    let m_star = 0.9;
    let signals = [
        (55.0, 10.0, 0.1, 1.0),
        (30.0, 80.0, 0.3, 0.8),
        (12.0, 900.0, 0.05, 0.6),
    ];
    let mut masses = [0.0; 3];
    jacobi_planet_masses(m_star, &signals, &mut masses).unwrap();
    let mut inner = m_star;
    for (&(k, p, e, si), &m) in signals.iter().zip(&masses) {
        let k2 = semi_amplitude(m, p, e, si, inner).unwrap();
        assert!((k2 / k - 1.0).abs() < 1e-12);
        inner += m;
    }
    // Unordered periods are refused.
    let bad = [signals[1], signals[0]];
    assert!(jacobi_planet_masses(m_star, &bad, &mut [0.0; 2]).is_none());
}

#[test]
fn batched_solver_matches_scalar() {
    // KeplerSolver::solve_slice (four interleaved lanes, fallback to the
    // iterating solver) gives the scalar results to rounding, with the same
    // residual bound, over the dense grid, large |M| and a remainder that
    // is not a multiple of four.
    let mut ms: Vec<f64> = (0..=4001).map(|i| -PI + TAU * i as f64 / 4001.0).collect();
    for j in 0..=120 {
        let x = 10f64.powf(-12.0 + 12.0 * j as f64 / 120.0);
        ms.extend([x, -x, PI - x, -PI + x, x + 1e5 * TAU, -x - 3.0 * TAU]);
    }
    ms.push(0.0);
    assert!(ms.len() % 4 != 0);
    let mut out = vec![Default::default(); ms.len()];
    let mut worst: f64 = 0.0;
    for &e in &[0.0, 1e-9, 0.05, 0.3, 0.6, 0.9, 0.99, 0.999, 0.9999] {
        let solver = KeplerSolver::new(e).unwrap();
        solver.solve_slice(&ms, &mut out).unwrap();
        for (&m, b) in ms.iter().zip(&out) {
            let s = solver.solve(m).unwrap();
            let de = (b.e_anom - s.e_anom).abs();
            worst = worst.max(de);
            assert!(
                de <= 4.0 * f64::EPSILON * s.e_anom.abs().max(1.0),
                "e={e} M={m}"
            );
            assert!((b.sin_e - s.sin_e).abs() <= 1e-15 && (b.cos_e - s.cos_e).abs() <= 1e-15);
            let r = (b.e_anom - e * b.sin_e - m).abs();
            assert!(
                r <= 1e-14 + 4.0 * f64::EPSILON * m.abs(),
                "e={e} M={m}: residual {r:e}"
            );
        }
    }
    println!("batched vs scalar: worst |ΔE| = {worst:e}");
    // Bad input is refused.
    assert!(
        KeplerSolver::new(0.5)
            .unwrap()
            .solve4([0.0, f64::NAN, 1.0, 2.0])
            .is_none()
    );
    assert!(
        KeplerSolver::new(0.5)
            .unwrap()
            .solve_slice(&[1.0], &mut [])
            .is_none()
    );
    assert!(KeplerSolver::new(1.0).is_none());
}

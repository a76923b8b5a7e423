//! Hill stability (Gladman 1993) and mutual Hill spacing (Chambers et al. 1996).

use apsidal::stability::criteria::{
    CIRCULAR_HILL_SPACING, PlanetOrbit, PlanetarySystem, assess, gladman_hill, mutual_hill_radius,
};

fn orbit(mass: f64, a: f64, e: f64) -> PlanetOrbit {
    PlanetOrbit {
        mass,
        a,
        e,
        inc: 0.0,
        node: 0.0,
    }
}

#[test]
fn equal_masses_circular_worked_case() {
    // Worked by hand: m1 = m2 = 1e-3 M☉, M⋆ = 1 M☉, circular, coplanar.
    // Gladman (1993) eq. 21: rhs = 1 + 3^{4/3} μ²/(2μ)^{4/3}
    //   = 1 + 4.326749 × 1e-6 / 2.519842e-4 = 1.0171707136.
    // lhs(λ) = (1 + λ^{-2})(1 + λ)²/8 = 1 + (3/4)(λ − 1)² + O((λ − 1)³), so to
    // leading order λ − 1 = √(4 × 0.0171707/3) = 0.15131 and
    // Δ/a1 = λ² − 1 ≈ 0.3026, which is Gladman's eq. 3
    // 2√3 (2μ/3)^{1/3} = 0.3026171 (computed: 2 × 1.7320508 × 0.0873580).
    // The full root (scipy.optimize.brentq on the same eq. 21, run by the
    // author for this test) is λ = 1.1628555472509556, a2/a1 = 1.3522330237723.
    let p1 = orbit(1e-3, 1.0, 0.0);
    let p2 = orbit(1e-3, 1.4, 0.0);
    let h = gladman_hill(1.0, &p1, &p2).unwrap();
    assert!((h.gladman_rhs - 1.0171707136383).abs() < 1e-12);
    let crit = h.critical_axis_ratio.unwrap();
    assert!((crit - 1.352_233_023_772_319_5).abs() < 1e-12, "{crit}");
    assert!(h.hill_stable);
    // Mutual Hill radius (Chambers et al. 1996 eq. 2): (2e-3/3)^{1/3} × 1.2.
    let rh = (2e-3f64 / 3.0).cbrt() * 1.2;
    assert!((h.mutual_hill_radius_au - rh).abs() < 1e-15);
    assert!((h.spacing_mutual_hill - 0.4 / rh).abs() < 1e-12);
    let inside = gladman_hill(1.0, &p1, &orbit(1e-3, 1.34, 0.0)).unwrap();
    assert!(!inside.hill_stable);
}

#[test]
fn eccentric_unequal_masses_reference_root() {
    // e1 = 0.05, e2 = 0.1, m1 = 1e-3, m2 = 3e-4: root of Gladman eq. 21 by
    // scipy.optimize.brentq (author's run): a2/a1 = 1.3827989145863817,
    // rhs = 1.0091486804362402.
    let h = gladman_hill(1.0, &orbit(1e-3, 1.0, 0.05), &orbit(3e-4, 2.0, 0.1)).unwrap();
    assert!((h.gladman_rhs - 1.0091486804362402).abs() < 1e-13);
    assert!((h.critical_axis_ratio.unwrap() - 1.3827989145863817).abs() < 1e-12);
}

#[test]
fn eccentric_form_tends_to_circular_limit() {
    // Gladman eq. 21 at e = 0 agrees with eq. 3 (Δ_c = 2√3 R_H) to leading
    // order. Measured in mutual Hill radii with the *mean* a (Chambers et al.
    // 1996) the first correction cancels (by hand: with x = λ − 1,
    // Δ/a1 = 2x + x² and (a1 + a2)/2a1 = 1 + x + x²/2, while the cubic term
    // of lhs(λ) = 1 + (3/4)x² − (3/4)x³ + … gives x = x0(1 + x0/2)), so the
    // difference falls like μ^{2/3}: a factor 100 per factor 1000 in μ.
    // (μ = 1e-12 would sit on the rounding floor of lhs − rhs ~ 1e-8.)
    let mut diffs = Vec::new();
    for mu in [1e-3, 1e-6, 1e-9] {
        let h = gladman_hill(1.0, &orbit(mu, 1.0, 0.0), &orbit(mu, 2.0, 0.0)).unwrap();
        let crit = h.critical_axis_ratio.unwrap();
        // Critical spacing in mutual Hill radii.
        let rh = mutual_hill_radius(1.0, mu, mu, 1.0, crit).unwrap();
        let k = (crit - 1.0) / rh;
        diffs.push((k / CIRCULAR_HILL_SPACING - 1.0).abs());
    }
    println!("{diffs:?}");
    for w in diffs.windows(2) {
        let r = w[0] / w[1];
        assert!(r > 70.0 && r < 140.0, "{diffs:?}");
    }
    assert!(diffs[2] < 2e-6);
}

#[test]
fn higher_eccentricity_is_less_stable() {
    let mut last = 0.0;
    for i in 0..20 {
        let e = 0.02 * i as f64;
        let h = gladman_hill(1.0, &orbit(5e-4, 1.0, e), &orbit(8e-4, 1.5, e)).unwrap();
        let c = h.critical_axis_ratio.unwrap();
        assert!(c > last, "e={e}: {c} ≤ {last}");
        last = c;
        // Outer alone too.
        let h2 = gladman_hill(1.0, &orbit(5e-4, 1.0, 0.0), &orbit(8e-4, 1.5, e)).unwrap();
        let h3 = gladman_hill(1.0, &orbit(5e-4, 1.0, 0.0), &orbit(8e-4, 1.5, e + 0.01)).unwrap();
        assert!(h3.gladman_lhs < h2.gladman_lhs);
    }
    // Verdict flips: stable at e = 0, unstable at e = 0.3 for a2/a1 = 1.5.
    assert!(
        gladman_hill(1.0, &orbit(5e-4, 1.0, 0.0), &orbit(8e-4, 1.5, 0.0))
            .unwrap()
            .hill_stable
    );
    assert!(
        !gladman_hill(1.0, &orbit(5e-4, 1.0, 0.3), &orbit(8e-4, 1.5, 0.3))
            .unwrap()
            .hill_stable
    );
}

#[test]
fn mutual_inclination_lowers_stability() {
    let p1 = orbit(1e-3, 1.0, 0.05);
    let mut p2 = orbit(1e-3, 1.5, 0.05);
    let flat = gladman_hill(1.0, &p1, &p2).unwrap();
    p2.inc = 30f64.to_radians();
    p2.node = 1.0;
    let tilted = gladman_hill(1.0, &p1, &p2).unwrap();
    assert!((tilted.mutual_inclination - 30f64.to_radians()).abs() < 1e-14);
    assert!(tilted.gladman_lhs < flat.gladman_lhs);
    assert!(tilted.critical_axis_ratio.unwrap() > flat.critical_axis_ratio.unwrap());
}

#[test]
fn assess_every_adjacent_pair_and_serialise() {
    let sys = PlanetarySystem {
        star_mass: 0.9,
        planets: vec![
            orbit(1e-5, 0.1, 0.01),
            orbit(2e-3, 0.3, 0.1),
            orbit(5e-4, 1.0, 0.2),
        ],
    };
    let r = assess(&sys).unwrap();
    assert_eq!(r.hill.len(), 2);
    assert_eq!((r.hill[1].inner, r.hill[1].outer), (1, 2));
    let text = serde_json::to_string(&r).unwrap();
    let back: apsidal::stability::criteria::CriteriaReport = serde_json::from_str(&text).unwrap();
    // serde_json's default float parser may differ in the last bit.
    assert_eq!(back.hill.len(), 2);
    assert_eq!(back.amd.pairs.len(), 2);
    assert_eq!(back.hill[0].hill_stable, r.hill[0].hill_stable);
    assert!((back.amd.pairs[1].beta / r.amd.pairs[1].beta - 1.0).abs() < 1e-15);
    // Bad input is a typed error, never NaN.
    let mut bad = sys.clone();
    bad.planets[1].e = 1.0;
    assert!(assess(&bad).is_err());
    let mut bad = sys.clone();
    bad.planets.swap(0, 1);
    assert!(assess(&bad).is_err());
    let mut bad = sys;
    bad.planets[0].mass = f64::NAN;
    assert!(assess(&bad).is_err());
}

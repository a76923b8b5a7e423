//! AMD stability (Laskar & Petit 2017): critical AMD against closed-form
//! limits and a direct minimisation, invariance of the AMD, verdicts.

use apsidal::stability::criteria::{
    PlanetOrbit, PlanetarySystem, amd_stability, critical_relative_amd, mmr_overlap_alpha,
};

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn inner_test_particle_limit() {
    // γ → 0 (massless inner planet), α > 1/2: the root of F(e) tends to the
    // collision condition of a test particle, α(1 + e) = 1, so
    // e_c = (1 − α)/α and C_c = γ √α (1 − √(1 − e_c²)) + O(γ²)
    //     = γ √α (1 − √(2α − 1)/α)
    // (derived here from Laskar & Petit 2017 eq. 35 form of F; their §3.2
    // gives the γ → 0 limit, from memory). Corrections are O(γ) relative.
    let gamma = 1e-11;
    for alpha in [0.6, 0.8, 0.95] {
        let c = critical_relative_amd(alpha, gamma).unwrap();
        let limit = gamma * alpha.sqrt() * (1.0 - (2.0 * alpha - 1.0).sqrt() / alpha);
        assert!(
            rel(c.value, limit) < 1e-10,
            "α={alpha}: {} vs {limit}",
            c.value
        );
        assert!(rel(c.e_inner, (1.0 - alpha) / alpha) < 1e-10);
    }
}

#[test]
fn outer_test_particle_limit() {
    // γ → ∞ (massless outer planet): the inner orbit stays circular and the
    // outer one must reach it, e' = 1 − α, so C_c → 1 − √(1 − (1 − α)²)
    // = 1 − √(α(2 − α)); corrections O(1/γ).
    let gamma = 1e11;
    for alpha in [0.2, 0.5, 0.9] {
        let c = critical_relative_amd(alpha, gamma).unwrap();
        let limit = 1.0 - (alpha * (2.0 - alpha)).sqrt();
        assert!(
            rel(c.value, limit) < 1e-10,
            "α={alpha}: {} vs {limit}",
            c.value
        );
    }
}

#[test]
fn close_pair_limit() {
    // α → 1: small eccentricities, C ≈ γ√α e²/2 + e'²/2 on α e + e' = ε = 1 − α.
    // Lagrange's method gives e = ε√α/(γ + α^{3/2}) and
    // C_c = γ ε² / (2 (γ + α^{3/2})) with relative error O(ε²) (derived here);
    // at leading order C_c = γ (1 − α)² / (2 (1 + γ)) (Laskar & Petit 2017,
    // §3.2, α → 1 limit, from memory), relative error O(ε).
    for gamma in [0.01, 1.0, 30.0] {
        let eps = 2f64.powi(-20);
        let alpha = 1.0 - eps; // exact in binary
        let c = critical_relative_amd(alpha, gamma).unwrap();
        let quad = gamma * eps * eps / (2.0 * (gamma + alpha.powf(1.5)));
        assert!(
            rel(c.value, quad) < 1e-10,
            "γ={gamma}: {} vs {quad}",
            c.value
        );
        let eps = 2f64.powi(-40);
        let alpha = 1.0 - eps;
        let c = critical_relative_amd(alpha, gamma).unwrap();
        let lead = gamma * eps * eps / (2.0 * (1.0 + gamma));
        assert!(
            rel(c.value, lead) < 1e-10,
            "γ={gamma}: {} vs {lead}",
            c.value
        );
    }
}

#[test]
fn root_is_the_minimum_on_the_collision_line() {
    // Independent of the Lagrange derivation: minimise the relative AMD
    // g(e) = γ√α (1 − √(1 − e²)) + 1 − √(1 − (1 − α − αe)²) along the
    // collision line by golden-section search and compare.
    for (alpha, gamma) in [
        (0.3, 0.2),
        (0.5, 1.0),
        (0.7, 5.0),
        (0.9, 0.05),
        (0.45, 0.01),
    ] {
        let g = |e: f64| {
            let ep: f64 = 1.0 - alpha - alpha * e;
            gamma * alpha.sqrt() * (1.0 - (1.0 - e * e).sqrt()) + 1.0 - (1.0 - ep * ep).sqrt()
        };
        let (mut lo, mut hi) = (0.0f64, ((1.0 - alpha) / alpha).min(1.0));
        let r = 0.5 * (5f64.sqrt() - 1.0);
        for _ in 0..200 {
            let x1 = hi - r * (hi - lo);
            let x2 = lo + r * (hi - lo);
            if g(x1) < g(x2) {
                hi = x2;
            } else {
                lo = x1;
            }
        }
        let e_min = 0.5 * (lo + hi);
        let c = critical_relative_amd(alpha, gamma).unwrap();
        assert!(
            rel(c.value, g(e_min)) < 1e-12,
            "α={alpha} γ={gamma}: {} vs {}",
            c.value,
            g(e_min)
        );
        assert!((c.e_inner - e_min).abs() < 1e-6, "{} vs {e_min}", c.e_inner);
        assert!((c.e_outer - (1.0 - alpha - alpha * c.e_inner)).abs() < 1e-14);
    }
}

#[test]
fn bad_ratios_refused() {
    assert!(critical_relative_amd(1.0, 1.0).is_err());
    assert!(critical_relative_amd(0.0, 1.0).is_err());
    assert!(critical_relative_amd(0.5, 0.0).is_err());
    assert!(critical_relative_amd(0.5, f64::NAN).is_err());
    assert!(critical_relative_amd(f64::NAN, 1.0).is_err());
}

fn sky_system() -> PlanetarySystem {
    // Invented system, angles relative to the sky plane.
    PlanetarySystem {
        star_mass: 1.05,
        planets: vec![
            PlanetOrbit {
                mass: 3e-5,
                a: 0.08,
                e: 0.03,
                inc: 1.40,
                node: 0.0,
            },
            PlanetOrbit {
                mass: 1.1e-3,
                a: 0.7,
                e: 0.15,
                inc: 1.45,
                node: 0.2,
            },
            PlanetOrbit {
                mass: 4e-4,
                a: 2.3,
                e: 0.1,
                inc: 1.30,
                node: -0.1,
            },
        ],
    }
}

#[test]
fn amd_is_independent_of_the_reference_plane() {
    // The AMD uses inclinations to the invariable plane; rotating the
    // reference frame (here by expressing the orbit normals in a tilted frame)
    // must not change it.
    use nalgebra::{Rotation3, Vector3};
    let sys = sky_system();
    let base = amd_stability(&sys).unwrap();
    let rot = Rotation3::from_euler_angles(0.3, -0.7, 1.1);
    let mut turned = sys.clone();
    for p in &mut turned.planets {
        let (si, ci) = p.inc.sin_cos();
        let (so, co) = p.node.sin_cos();
        let n = rot * Vector3::new(si * so, -si * co, ci);
        p.inc = n.z.clamp(-1.0, 1.0).acos();
        p.node = n.x.atan2(-n.y);
    }
    let t = amd_stability(&turned).unwrap();
    assert!(rel(t.total_amd, base.total_amd) < 1e-12);
    for k in 0..3 {
        assert!((t.invariable_inclinations[k] - base.invariable_inclinations[k]).abs() < 1e-12);
    }
    for (a, b) in t.pairs.iter().zip(&base.pairs) {
        assert!(rel(a.beta, b.beta) < 1e-12);
    }
}

#[test]
fn coplanar_system_amd_is_eccentricity_part() {
    // All orbits in one plane (tilted 80° to the sky): invariable
    // inclinations vanish and AMD = Σ Λ (1 − √(1 − e²)) (Laskar & Petit 2017 eq. 1).
    let mut sys = sky_system();
    for p in &mut sys.planets {
        p.inc = 80f64.to_radians();
        p.node = 0.4;
    }
    let r = amd_stability(&sys).unwrap();
    let g = apsidal::units::G * sys.star_mass;
    let expect: f64 = sys
        .planets
        .iter()
        .map(|p| p.mass * (g * p.a).sqrt() * (1.0 - (1.0 - p.e * p.e).sqrt()))
        .sum();
    assert!(rel(r.total_amd, expect) < 1e-13);
    assert!(r.invariable_inclinations.iter().all(|i| i.abs() < 1e-7));
    // β by hand for the outer pair.
    let p = &r.pairs[1];
    let c = expect / r.lambdas[2];
    let cc = critical_relative_amd(0.7 / 2.3, 1.1e-3 / 4e-4)
        .unwrap()
        .value;
    assert!(rel(p.beta, c / cc) < 1e-12);
    assert!(p.stable);
}

#[test]
fn verdicts_follow_beta_and_overlap() {
    // A compact pair beyond the overlap limit α_R = 1 − 1.46 ε^{2/7}.
    let star = 1.0;
    let (m1, m2) = (1e-3, 1e-3);
    let a_r = mmr_overlap_alpha(star, m1, m2);
    // ε = 2e-3: ln ε = −6.214608, × 2/7 = −1.775602, ε^{2/7} = 0.169381,
    // α_R = 1 − 1.46 × 0.169381 = 0.752703 (by hand).
    assert!((a_r - (1.0 - 1.46 * 2e-3f64.powf(2.0 / 7.0))).abs() < 1e-15);
    assert!((a_r - 0.752703).abs() < 1e-6);
    let close = PlanetarySystem {
        star_mass: star,
        planets: vec![
            PlanetOrbit {
                mass: m1,
                a: 1.0,
                e: 0.0,
                inc: 0.0,
                node: 0.0,
            },
            PlanetOrbit {
                mass: m2,
                a: 1.2,
                e: 0.001,
                inc: 0.0,
                node: 0.0,
            },
        ],
    };
    let r = amd_stability(&close).unwrap();
    assert!(r.pairs[0].beta < 1.0);
    assert!(r.pairs[0].mmr_overlap && !r.pairs[0].stable && !r.amd_stable);
    // Orbits that cross (apocentre 1.45 > pericentre 1.4) lie beyond the
    // collision line, so their AMD must exceed the critical one: β > 1.
    let wild = PlanetarySystem {
        star_mass: star,
        planets: vec![
            PlanetOrbit {
                mass: m1,
                a: 1.0,
                e: 0.45,
                inc: 0.0,
                node: 0.0,
            },
            PlanetOrbit {
                mass: m2,
                a: 2.0,
                e: 0.3,
                inc: 0.0,
                node: 0.0,
            },
        ],
    };
    let r = amd_stability(&wild).unwrap();
    assert!(
        r.pairs[0].beta > 1.0 && !r.pairs[0].stable,
        "{:?}",
        r.pairs[0]
    );
    // Touching orbits (1.4 = 1.4) sit on the collision line: β ≥ 1 to rounding.
    let mut touch = wild.clone();
    touch.planets[0].e = 0.4;
    let r = amd_stability(&touch).unwrap();
    assert!(r.pairs[0].beta > 1.0 - 1e-12, "{}", r.pairs[0].beta);
}

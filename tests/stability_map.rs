//! Stability maps with MEGNO (Cincotta & Simó 2000, A&AS 147, 205, §2:
//! ⟨Y⟩ → 2 for quasi-periodic orbits, growing as (λ/2) t for chaotic
//! ones): a row of cells across the spacing of two Jupiter-mass planets,
//! agreement of each cell with a standalone run, thread-count
//! independence, and the SVG heat map.

use apsidal::nbody::System;
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::variational::VariationalIntegrator;
use apsidal::nbody::wisdom_holman::WhSettings;
use apsidal::stability::map::{
    Axis, BaseSolution, Element, Indicator, MapSettings, StabilityMap, map_csv, stability_map,
};
use apsidal::stability::megno::{MegnoSettings, megno_run};
use apsidal::stability::run::{RunSettings, run_stability};
use apsidal::workflow::pictures::map_picture;

fn planet(mass: f64, per: f64, e: f64, w: f64, m: f64) -> JacobiPlanet {
    JacobiPlanet {
        mass,
        radius: 0.0,
        size: OrbitSize::Period(per),
        e,
        omega_star: w,
        phase: OrbitPhase::MeanAnomaly(m),
        inc: std::f64::consts::FRAC_PI_2,
        node: 0.0,
    }
}

/// Invented pair of Jupiter masses about a solar-mass star: inner at
/// 100 d (e = 0.02), outer at 200 d (e = 0.1; the map moves its period).
fn base() -> BaseSolution {
    BaseSolution {
        star_mass: 1.0,
        star_radius: 0.0,
        planets: vec![
            planet(1e-3, 100.0, 0.02, 0.0, 0.0),
            planet(1e-3, 200.0, 0.1, 1.5, 3.0),
        ],
        t_ref: 0.0,
    }
}

/// One row: outer period `start`, `start` + 20 d, … (n cells), outer
/// eccentricity 0.1, `orbits` outer orbits per cell.
fn row_settings(start: f64, n: usize, orbits: f64) -> MapSettings {
    MapSettings {
        x: Axis {
            planet: 1,
            element: Element::Period,
            min: start,
            max: start + 20.0 * (n - 1) as f64,
            n,
        },
        y: Axis {
            planet: 1,
            element: Element::Eccentricity,
            min: 0.1,
            max: 0.1,
            n: 1,
        },
        indicator: Indicator::Megno,
        run: RunSettings {
            orbits,
            ..RunSettings::default()
        },
    }
}

fn system_of(base: &BaseSolution, p_out: f64, e_out: f64) -> System {
    let mut planets = base.planets.clone();
    planets[1].size = OrbitSize::Period(p_out);
    planets[1].e = e_out;
    System::from_jacobi_elements(base.star_mass, base.star_radius, &planets, base.t_ref).unwrap()
}

#[test]
fn megno_row_across_spacing() {
    let b = base();
    let s = row_settings(155.0, 30, 600.0);
    let m = stability_map(&b, &s, &|_| {}).unwrap();
    for c in &m.cells {
        eprintln!(
            "P_out {:6.1} (ratio {:.2}): <Y> {:?} {}",
            c.x,
            c.x / 100.0,
            c.value,
            c.verdict
        );
    }
    // The map turned MEGNO on for its runs.
    assert!(m.settings.run.megno);
    // Ratio 1.55: a close encounter within the run (inside Gladman's 1993
    // 2√3 mutual Hill radii), an empty ⟨Y⟩ and its own verdict.
    let c0 = &m.cells[0];
    assert!(c0.disrupted(), "{c0:?}");
    assert_eq!(c0.verdict, "close-encounter");
    assert_eq!(c0.value, None);
    // Ratio 1.75: closely packed, survives, ⟨Y⟩ ≫ 2 (chaotic).
    let c1 = &m.cells[1];
    assert_eq!(c1.verdict, "stable");
    assert!(c1.value.unwrap() > 8.0, "{c1:?}");
    // Widely spaced (ratio ≥ 4): quasi-periodic, ⟨Y⟩ within 0.05 of 2
    // (found: within 0.004 after 600 orbits; cells near low-order
    // commensurabilities in between, e.g. 11:4 at 275 d with ⟨Y⟩ ≈ 1.52,
    // converge more slowly and are not asserted on).
    for c in m.cells.iter().filter(|c| c.x >= 400.0) {
        assert_eq!(c.verdict, "stable");
        let y = c.value.unwrap();
        assert!((y - 2.0).abs() < 0.05, "P_out {}: <Y> {y}", c.x);
    }
    // The CSV carries the verdict and an empty megno field for the
    // disrupted cell.
    let csv = map_csv(&m);
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "ix,iy,p2.period,p2.eccentricity,megno,verdict,survival_orbits"
    );
    let first: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(first[4], "");
    assert_eq!(first[5], "close-encounter");
}

#[test]
fn cells_equal_standalone_runs_and_threads_do_not_matter() {
    let b = base();
    let s = row_settings(150.0, 4, 150.0);
    let pool = |n| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .unwrap()
    };
    let one: StabilityMap = pool(1).install(|| stability_map(&b, &s, &|_| {}).unwrap());
    let two: StabilityMap = pool(2).install(|| stability_map(&b, &s, &|_| {}).unwrap());
    assert_eq!(one, two);
    assert_eq!(map_csv(&one), map_csv(&two));
    for c in &one.cells {
        let sys = system_of(&b, c.x, c.y);
        // The map's own settings: MEGNO turned on by the indicator.
        assert!(one.settings.run.megno && !s.run.megno);
        let r = run_stability(&sys, &one.settings.run).unwrap();
        assert_eq!(c.verdict, r.verdict.label());
        assert_eq!(c.survival_orbits, Some(r.survival_orbits));
        assert_eq!(c.value.map(f64::to_bits), r.megno.map(f64::to_bits));
        if r.verdict.is_stable() {
            // …and MEGNO of the same length and step, computed directly.
            let direct = megno_run(
                &sys,
                VariationalIntegrator::WisdomHolman(WhSettings {
                    step: Some(r.step),
                    ..WhSettings::default()
                }),
                s.run.orbits,
                &MegnoSettings::default(),
            )
            .unwrap();
            assert_eq!(c.value.unwrap().to_bits(), direct.mean_y.to_bits());
        }
    }
}

#[test]
fn megno_column_with_another_indicator() {
    let b = base();
    let mut s = row_settings(150.0, 3, 100.0);
    s.indicator = Indicator::SurvivalOrbits;
    s.run.megno = true;
    let m = stability_map(&b, &s, &|_| {}).unwrap();
    let csv = map_csv(&m);
    assert!(
        csv.lines()
            .next()
            .unwrap()
            .ends_with(",survival,verdict,survival_orbits,megno")
    );
    let rows: Vec<Vec<&str>> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect())
        .collect();
    assert_eq!(rows[0][7], ""); // disrupted: no ⟨Y⟩
    assert!(rows[1][7].parse::<f64>().unwrap() > 2.0);
    // Without MEGNO there is no megno column.
    s.run.megno = false;
    let csv = map_csv(&stability_map(&b, &s, &|_| {}).unwrap());
    assert!(!csv.contains("megno"));
}

#[test]
fn heat_map_svg_is_labelled() {
    let b = base();
    let mut s = row_settings(150.0, 8, 100.0);
    s.y = Axis {
        planet: 1,
        element: Element::Eccentricity,
        min: 0.0,
        max: 0.3,
        n: 5,
    };
    let m = stability_map(&b, &s, &|_| {}).unwrap();
    let svg = map_picture(&m, "Test pair").unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let texts: Vec<String> = doc
        .descendants()
        .filter(|n| n.is_text())
        .filter_map(|n| n.text().map(str::to_string))
        .collect();
    let has = |t: &str| texts.iter().any(|x| x.contains(t));
    assert!(
        has("Test pair: MEGNO map, 100 outer orbits per cell"),
        "{texts:?}"
    );
    assert!(has("period P_2 [d]"), "{texts:?}");
    assert!(has("eccentricity e_2 [1]"), "{texts:?}");
    assert!(has("⟨Y⟩ (MEGNO), clipped to [1.5, 8]"), "{texts:?}");
    assert!(has("disrupted"), "{texts:?}");
    let dir = std::env::temp_dir().join(format!("apsidal-map-svg-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("megno-map.svg"), &svg).unwrap();
    eprintln!("wrote {}", dir.join("megno-map.svg").display());
    // A one-value axis cannot be drawn as a heat map: an error, no panic.
    assert!(
        map_picture(
            &stability_map(&b, &row_settings(150.0, 2, 10.0), &|_| {}).unwrap(),
            "x"
        )
        .is_err()
    );
}

//! The embedded demo data: reproducible from the seed, parseable, shaped
//! like a real RV campaign, and showing the intended contrast between an
//! interacting system (Tellan) and a kinematic-adequate one (Verrow),
//! measured with the project's own models.

use std::path::Path;

use apsidal::demo::{DEMO_SEED, SYSTEMS, Truth, file, files, generate, load_demo, truth};
use apsidal::model::dynamical::DynamicalWorkspace;
use apsidal::model::keplerian::keplerian_model_rv;

#[test]
fn generator_reproduces_committed_files_byte_for_byte() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    let made = generate(DEMO_SEED).unwrap();
    assert_eq!(made.len(), SYSTEMS.len());
    for sys in &made {
        let embedded = files(&sys.name).unwrap();
        assert_eq!(embedded.len(), sys.files.len());
        for ((name, text), e) in sys.files.iter().zip(embedded) {
            assert_eq!(name, e.name);
            assert!(
                text == e.text,
                "{}/{name} differs from the embedded file",
                sys.name
            );
            let on_disk = std::fs::read_to_string(root.join(&sys.name).join(name)).unwrap();
            assert!(
                text == &on_disk,
                "{}/{name} differs from the committed file",
                sys.name
            );
        }
    }
    // Another seed gives other data (the seed is really used).
    let other = generate(DEMO_SEED + 1).unwrap();
    assert_ne!(other[0].files[0].1, made[0].files[0].1);
}

#[test]
fn embedded_data_parse_and_look_like_a_campaign() {
    for system in SYSTEMS {
        let (run, data) = load_demo(system).unwrap();
        assert_eq!(data.instruments().len(), 2, "{system}");
        assert_eq!(run.planets.len(), 2);
        let n = data.len();
        assert!((120..=170).contains(&n), "{system}: {n} epochs");
        let years = data.baseline() / 365.25;
        assert!(years >= 11.5, "{system}: baseline {years} yr");
        // Seasonal gaps: every year a gap of several months, the largest
        // about five months (the season lasts about seven).
        let t: Vec<f64> = data.iter_by_time().map(|m| m.time).collect();
        let gaps: Vec<f64> = t.windows(2).map(|w| w[1] - w[0]).collect();
        let largest = gaps.iter().copied().fold(0.0, f64::max);
        let long = gaps.iter().filter(|&&g| g > 100.0).count();
        assert!(
            (130.0..=200.0).contains(&largest),
            "{system}: largest gap {largest} d"
        );
        assert!(long >= 10, "{system}: only {long} seasonal gaps");
        // Nights cluster in runs: many consecutive epochs 1–3 days apart.
        let close = gaps.iter().filter(|&&g| g < 3.5).count();
        assert!(close * 4 > n, "{system}: only {close} gaps under 3.5 d");
        // The truth file loads and matches the tables.
        let tr = truth(system).unwrap();
        assert_eq!(tr.system, system);
        assert_eq!(tr.planets.len(), 2);
        for (k, inst) in tr.instruments.iter().enumerate() {
            let d = data
                .instruments()
                .iter()
                .find(|i| i.name() == inst.name)
                .unwrap();
            assert_eq!(d.len(), inst.epochs, "{system} {}", inst.name);
            let _ = k;
        }
        // Every table says the system is invented.
        for f in files(system).unwrap() {
            assert!(f.text.contains("INVENTED"), "{system}/{}", f.name);
        }
        // The run file's starting values are not the truth.
        assert_ne!(run.planets[0].period, tr.planets[0].period);
    }
    assert_eq!(load_demo("tellan").unwrap().1.len(), 150);
    assert!(apsidal::demo::load_demo("nowhere").is_err());
    assert!(file("tellan", "missing.txt").is_err());
}

/// Largest |v_dyn − v_kep| (m/s) over the baseline on a half-day grid:
/// the N-body RV (Gauss–Radau at tolerance 1e-9) against the sum of
/// Keplerians with the same osculating elements at the reference epoch.
fn max_dyn_kep(tr: &Truth, t0: f64, t1: f64) -> f64 {
    let n = ((t1 - t0) / 0.5) as usize + 1;
    let t: Vec<f64> = (0..n).map(|k| t0 + 0.5 * k as f64).collect();
    let inst = vec![0; n];
    let (mut d, mut k) = (vec![0.0; n], vec![0.0; n]);
    tr.dynamical_model()
        .star_rv(
            &tr.dynamical_params(),
            &t,
            &inst,
            &mut DynamicalWorkspace::default(),
            &mut d,
        )
        .unwrap();
    keplerian_model_rv(&tr.keplerian_params(), &t, &inst, &mut k).unwrap();
    // At the reference epoch the two agree to rounding (DESIGN §3), which
    // pins that both models read the same elements the same way.
    let mut at_ref = [0.0];
    let mut kep_ref = [0.0];
    tr.dynamical_model()
        .star_rv(
            &tr.dynamical_params(),
            &[tr.reference_epoch],
            &[0],
            &mut DynamicalWorkspace::default(),
            &mut at_ref,
        )
        .unwrap();
    keplerian_model_rv(
        &tr.keplerian_params(),
        &[tr.reference_epoch],
        &[0],
        &mut kep_ref,
    )
    .unwrap();
    assert!(
        (at_ref[0] - kep_ref[0]).abs() < 1e-6,
        "{at_ref:?} {kep_ref:?}"
    );
    d.iter()
        .zip(&k)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max)
}

#[test]
fn tellan_interacts_and_verrow_does_not() {
    let (_, tellan) = load_demo("tellan").unwrap();
    let tr = truth("tellan").unwrap();
    let diff = max_dyn_kep(&tr, tellan.first_epoch(), tellan.last_epoch());
    let med = tellan.median_error();
    assert!(
        diff > 10.0 * med,
        "Tellan: {diff} m/s vs median error {med}"
    );

    let (_, verrow) = load_demo("verrow").unwrap();
    let tr = truth("verrow").unwrap();
    let diff = max_dyn_kep(&tr, verrow.first_epoch(), verrow.last_epoch());
    let med = verrow.median_error();
    assert!(diff < med, "Verrow: {diff} m/s vs median error {med}");
}

#[test]
fn write_demo_writes_loadable_files() {
    let dir = std::env::temp_dir().join(format!("apsidal-demo-test-{}", std::process::id()));
    let written = apsidal::demo::write_demo("verrow", &dir).unwrap();
    assert_eq!(written.len(), 4);
    let run = apsidal::config::load_run_file(dir.join("run.ron")).unwrap();
    let data = run.read_data().unwrap();
    assert_eq!(data.len(), load_demo("verrow").unwrap().1.len());
    std::fs::remove_dir_all(&dir).unwrap();
}

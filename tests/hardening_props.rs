//! Property-based hardening (proptest): random bytes and random
//! well-typed-but-wrong values to the table reader, the run-file loader
//! and the model builders. Each must give a typed error or finite values:
//! no panic, no NaN.

use apsidal::config::{build_model, parse_run_str, validate};
use apsidal::data::{InstrumentLabel, parse_table};
use apsidal::fit::models::ModelKind;
use apsidal::model::dynamical::{
    DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace, Trend,
};
use apsidal::model::keplerian::{KeplerianParams, PlanetSignal, keplerian_model_rv};
use apsidal::nbody::System;
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use proptest::prelude::*;

/// Numbers a careless or hostile input may hold.
fn nasty() -> impl Strategy<Value = f64> {
    prop_oneof![
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(f64::NEG_INFINITY),
        Just(0.0),
        Just(-0.0),
        Just(-1.0),
        Just(1.0),
        Just(f64::MIN_POSITIVE),
        Just(f64::MAX),
        Just(-f64::MAX),
        Just(1e-300),
        Just(1e300),
        -1e6..1e6f64,
        -10.0..10.0f64,
    ]
}

/// Text of a number as a table or run file might hold it.
fn number_text() -> impl Strategy<Value = String> {
    prop_oneof![
        nasty().prop_map(|x| format!("{x}")),
        nasty().prop_map(|x| format!("{x:e}")),
        Just("nan".to_string()),
        Just("-inf".to_string()),
        Just("1e999".to_string()),
        Just("12.o2".to_string()),
        Just("".to_string()),
        Just("0x1F".to_string()),
        Just("1,5".to_string()),
        "[0-9eE+.-]{1,12}",
    ]
}

fn all_finite(x: &[f64]) -> bool {
    x.iter().all(|v| v.is_finite())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    /// Any bytes: a typed error or a dataset of finite values with positive errors.
    #[test]
    fn table_reader_takes_any_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        for label in [InstrumentLabel::FromColumn, InstrumentLabel::Given("VESKA".into())] {
            if let Ok(d) = parse_table(&bytes, "fuzz.txt", &label) {
                prop_assert!(all_finite(d.time()) && all_finite(d.rv()) && all_finite(d.err()));
                prop_assert!(d.err().iter().all(|&e| e > 0.0));
            }
        }
    }

    /// Lines of table-like text with wrong values.
    #[test]
    fn table_reader_takes_wrong_values(
        rows in proptest::collection::vec(
            (number_text(), number_text(), number_text(),
             prop_oneof![Just(""), Just(" VESKA"), Just(" MIRRAL"), Just(" #x"), Just(" A B")]),
            1..12),
        comma in any::<bool>(),
    ) {
        let sep = if comma { "," } else { " " };
        let mut text = String::new();
        for (t, v, e, i) in &rows {
            let inst = if comma { i.replace(' ', ",") } else { i.to_string() };
            text += &format!("{t}{sep}{v}{sep}{e}{inst}\n");
        }
        for label in [InstrumentLabel::FromColumn, InstrumentLabel::Given("VESKA".into())] {
            match parse_table(text.as_bytes(), "fuzz.txt", &label) {
                Ok(d) => {
                    prop_assert!(all_finite(d.time()) && all_finite(d.rv()) && all_finite(d.err()));
                    prop_assert!(d.err().iter().all(|&e| e > 0.0));
                }
                Err(e) => {
                    let msg = e.to_string();
                    prop_assert!(msg.starts_with("fuzz.txt"), "{msg}");
                }
            }
        }
    }

    /// Any text: the run-file loader gives a typed error naming the file,
    /// or a run file that passes validation.
    #[test]
    fn run_loader_takes_any_text(text in "\\PC{0,200}") {
        match parse_run_str(&text, "fuzz.ron", None) {
            Ok(run) => prop_assert!(validate(&run).is_empty()),
            Err(e) => prop_assert!(e.to_string().starts_with("fuzz.ron"), "{e}"),
        }
    }

    /// A well-formed run file with wrong numbers: refused with the field
    /// named, or accepted with values in range.
    #[test]
    fn run_loader_takes_wrong_values(
        mass in nasty(), period in nasty(), k in nasty(), e in nasty(),
        w in nasty(), inc in nasty(), lo in nasty(), hi in nasty(),
    ) {
        let fmt = |x: f64| if x.is_nan() { "NaN".to_string() } else if x.is_infinite() {
            if x > 0.0 { "inf".into() } else { "-inf".into() } } else { format!("{x:?}") };
        let text = format!(
            "(data: [(path: \"v.txt\", instrument: Named(\"VESKA\"))], star: (mass: {}),
              planets: [(name: \"b\", period: {}, signal: SemiAmplitude({}), eccentricity: {},
                         omega_star: {}, phase: MeanAnomaly(1.0), inclination: {})],
              fit: (priors: [(parameter: \"b.period\", prior: Uniform(lower: {}, upper: {}))]))",
            fmt(mass), fmt(period), fmt(k), fmt(e), fmt(w), fmt(inc), fmt(lo), fmt(hi));
        match parse_run_str(&text, "fuzz.ron", None) {
            Ok(run) => {
                prop_assert!(run.star.mass > 0.0 && run.star.mass.is_finite());
                let p = &run.planets[0];
                prop_assert!(p.period > 0.0 && p.period.is_finite());
                prop_assert!((0.0..1.0).contains(&p.eccentricity));
                prop_assert!(p.inclination.is_some_and(|i| (0.0..=180.0).contains(&i)));
                prop_assert!(lo < hi);
            }
            Err(err) => {
                let m = err.to_string();
                prop_assert!(m.starts_with("fuzz.ron:"), "{m}");
                prop_assert!(err.line().is_some(), "{m}");
            }
        }
    }

    /// Keplerian model: any parameters give an error or finite RVs.
    #[test]
    fn keplerian_model_never_nan(
        p in nasty(), k in nasty(), e in nasty(), w in nasty(), m in nasty(),
        g in nasty(), t in proptest::collection::vec(nasty(), 1..6),
    ) {
        let params = KeplerianParams {
            t_ref: 2_460_000.0,
            planets: vec![PlanetSignal { period: p, semi_amplitude: k, eccentricity: e,
                                         omega_star: w, mean_anomaly_ref: m }],
            offsets: vec![g],
            trend: Default::default(),
        };
        let inst = vec![0; t.len()];
        let mut out = vec![0.0; t.len()];
        if keplerian_model_rv(&params, &t, &inst, &mut out).is_ok() {
            prop_assert!(all_finite(&out), "{params:?} {t:?} -> {out:?}");
        }
    }

    /// System from Jacobi elements: an error or a finite state.
    #[test]
    fn system_from_jacobi_elements_never_nan(
        mstar in nasty(), m in nasty(), p in nasty(), e in nasty(), inc in nasty(),
        w in nasty(), ma in nasty(), node in nasty(), semi in any::<bool>(),
    ) {
        let planets = [
            JacobiPlanet { mass: 1e-3, radius: 0.0, size: OrbitSize::Period(10.0), e: 0.1,
                           omega_star: 0.3, phase: OrbitPhase::MeanAnomaly(0.2),
                           inc: 1.5, node: 0.0 },
            JacobiPlanet { mass: m, radius: 0.0,
                           size: if semi { OrbitSize::SemiMajorAxis(p) } else { OrbitSize::Period(p) },
                           e, omega_star: w, phase: OrbitPhase::MeanLongitude(ma), inc, node },
        ];
        if let Ok(sys) = System::from_jacobi_elements(mstar, 0.0, &planets, 0.0) {
            for (r, v) in sys.state.pos.iter().zip(&sys.state.vel) {
                prop_assert!(r.iter().chain(v.iter()).all(|x| x.is_finite()));
            }
            prop_assert!(all_finite(&sys.masses));
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    /// Dynamical model: any parameters give a typed error or finite RVs.
    #[test]
    fn dynamical_model_never_nan(
        p2 in prop_oneof![nasty(), 0.5..500.0f64], k in nasty(), e in nasty(),
        inc in nasty(), node in nasty(), ma in nasty(),
        t in proptest::collection::vec(2_459_800.0..2_460_200.0f64, 1..8),
    ) {
        let model = DynamicalModel::new(2_460_000.0);
        let params = DynamicalParams {
            star_mass: 0.74,
            planets: vec![
                DynamicalPlanet { period: 41.3, k: 23.0, e: 0.08, omega_star: 1.9,
                                  mean_anomaly: 0.6, inc: 1.5, delta_node: 0.0 },
                DynamicalPlanet { period: p2, k, e, omega_star: 0.4, mean_anomaly: ma, inc,
                                  delta_node: node },
            ],
            offsets: vec![0.0],
            trend: Trend::default(),
        };
        let inst = vec![0; t.len()];
        let mut out = vec![0.0; t.len()];
        let mut ws = DynamicalWorkspace::default();
        if model.star_rv(&params, &t, &inst, &mut ws, &mut out).is_ok() {
            prop_assert!(all_finite(&out), "{params:?} -> {out:?}");
        }
    }

    /// RvModel built from a run file: any full vector gives a typed error
    /// or finite RVs, and the posterior is never NaN.
    #[test]
    fn rv_model_never_nan(
        values in proptest::collection::vec(nasty(), 16),
        kind in prop_oneof![Just(ModelKind::Keplerian), Just(ModelKind::CoplanarEdgeOn),
                            Just(ModelKind::ThreeDimensional)],
    ) {
        let (run, data) = orrin_run();
        let model = build_model(&run, &data, kind, "orrin.ron").unwrap();
        let n = model.params.len();
        let full: Vec<f64> = (0..n).map(|i| values[i % values.len()]).collect();
        let mut out = vec![0.0; data.len()];
        if model.model_rv(&full, &mut out).is_ok() {
            prop_assert!(all_finite(&out), "{full:?} -> {out:?}");
        }
        let lp = model.ln_posterior_unconstrained(&full[..model.params.free_indices().len()]);
        prop_assert!(!lp.is_nan());
    }
}

fn orrin_run() -> (apsidal::config::RunFile, apsidal::data::Dataset) {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/orrin442/run.ron"
    );
    let run = apsidal::config::load_run_file(path).unwrap();
    let data = run.read_data().unwrap();
    (run, data)
}

/// 300 years of epochs with a 1-day inner planet: refused with the typed
/// step-budget error before any integration; a 20-day inner planet over
/// the same span stays under the budget and gives finite RVs.
#[test]
fn dynamical_work_per_evaluation_is_bounded() {
    use apsidal::model::dynamical::{DynamicalError, MAX_STEPS_PER_EVALUATION};
    let t_ref = 2_460_000.0;
    let t: Vec<f64> = (0..50)
        .map(|i| t_ref - 150.0 * 365.25 + i as f64 * 2236.0)
        .collect();
    let inst = vec![0; t.len()];
    let planet = |period: f64| DynamicalPlanet {
        period,
        k: 10.0,
        e: 0.05,
        omega_star: 0.5,
        mean_anomaly: 0.1,
        inc: 1.5,
        delta_node: 0.0,
    };
    let mut out = vec![0.0; t.len()];
    let mut ws = DynamicalWorkspace::default();
    let mut model = DynamicalModel::new(t_ref);
    let short = DynamicalParams {
        star_mass: 0.9,
        planets: vec![planet(1.0), planet(30.0)],
        offsets: vec![0.0],
        trend: Trend::default(),
    };
    let start = std::time::Instant::now();
    match model.star_rv(&short, &t, &inst, &mut ws, &mut out) {
        Err(DynamicalError::TooMuchWork { steps, limit, .. }) => {
            assert!(steps > limit && limit == MAX_STEPS_PER_EVALUATION);
        }
        other => panic!("expected the step budget error, got {other:?}"),
    }
    assert!(start.elapsed().as_secs_f64() < 1.0);
    model.integrator = apsidal::model::dynamical::IntegratorChoice::GaussRadau { tolerance: 1e-9 };
    assert!(matches!(
        model.star_rv(&short, &t, &inst, &mut ws, &mut out),
        Err(DynamicalError::TooMuchWork { .. })
    ));
    let model = DynamicalModel::new(t_ref);
    let long = DynamicalParams {
        planets: vec![planet(20.0), planet(300.0)],
        ..short
    };
    model.star_rv(&long, &t, &inst, &mut ws, &mut out).unwrap();
    assert!(all_finite(&out));
}

//! The run file's `fit.priors` section: impossible priors and unknown
//! names are refused with the file, the line and the field in the message,
//! and `build_model` refuses an override naming a parameter the chosen
//! model lacks (the run-file check accepts any name a model could have).

use std::path::PathBuf;

use apsidal::config::{RunFileError, SetupError, build_model, load_run_file, parse_run_str};
use apsidal::fit::models::ModelKind;
use apsidal::fit::params::Prior;

/// A run file whose `fit.priors` list holds `entry` alone, on line 13.
fn run_text(entry: &str) -> String {
    format!(
        r#"(
    data: [(path: "veska.txt", instrument: Named("VESKA")),
           (path: "mirral.csv")],
    instruments: ["VESKA", "MIRRAL"],
    star: (name: "Orrin-442", mass: 0.74),
    planets: [
        (name: "b", period: 41.3, signal: SemiAmplitude(23.0), eccentricity: 0.08,
         omega_star: 112.0, phase: MeanAnomaly(35.0)),
        (name: "c", period: 83.9, signal: MassJupiter(0.9), eccentricity: 0.12,
         omega_star: 250.0, phase: MeanAnomaly(200.0)),
    ],
    fit: (models: [Keplerian, CoplanarSinI], priors: [
        {entry},
    ]),
)"#
    )
}

/// Parse the run file with `entry`; the error must start with
/// `priors.ron:13:` and name `field` and every fragment.
fn refused(entry: &str, field: &str, fragments: &[&str]) -> RunFileError {
    let text = run_text(entry);
    let e = parse_run_str(&text, "priors.ron", None).expect_err("must be refused");
    let msg = e.to_string();
    assert!(
        msg.starts_with("priors.ron:13:"),
        "message {msg:?} must start with priors.ron:13:"
    );
    assert!(msg.contains(field), "message {msg:?} must name {field:?}");
    for f in fragments {
        assert!(msg.contains(f), "message {msg:?} must contain {f:?}");
    }
    assert_eq!(e.line(), Some(13), "{msg}");
    assert_eq!(
        e.field().map(|f| f.to_string()).as_deref(),
        Some(field),
        "{msg}"
    );
    e
}

#[test]
fn acceptable_priors_load() {
    let text = run_text(
        r#"(parameter: "b.period", prior: Uniform(lower: 40.0, upper: 43.0)),
        (parameter: "MIRRAL.offset", prior: Uniform(lower: -50.0, upper: 50.0)),
        (parameter: "sin_i", prior: Uniform(lower: 0.2, upper: 1.0)),
        (parameter: "c.sqrt_e_cos_w", fixed: 0.0)"#,
    );
    let run = parse_run_str(&text, "priors.ron", None).unwrap();
    let fit = run.fit.unwrap();
    assert_eq!(fit.priors.len(), 4);
    assert_eq!(
        fit.priors[0].prior,
        Some(Prior::Uniform {
            lower: 40.0,
            upper: 43.0
        })
    );
    assert_eq!(fit.priors[3].fixed, Some(0.0));
}

#[test]
fn lower_bound_above_upper() {
    let e = refused(
        r#"(parameter: "b.period", prior: Uniform(lower: 45.0, upper: 40.0))"#,
        "fit.priors[0].prior",
        &["lower bound 45", "not below upper bound 40", "b.period"],
    );
    assert!(matches!(e, RunFileError::Invalid { .. }));
}

#[test]
fn log_uniform_needs_positive_lower_bound() {
    refused(
        r#"(parameter: "c.period", prior: LogUniform(lower: 0.0, upper: 100.0))"#,
        "fit.priors[0].prior",
        &["positive lower bound"],
    );
}

#[test]
fn eccentricity_basis_outside_unit_interval() {
    // √e cos ω⋆ beyond ±1 would allow e ≥ 1.
    refused(
        r#"(parameter: "b.sqrt_e_cos_w", prior: Uniform(lower: -1.2, upper: 1.0))"#,
        "fit.priors[0].prior",
        &["within [−1, 1]", "e < 1", "found [-1.2, 1]"],
    );
    refused(
        r#"(parameter: "c.sqrt_e_sin_w", prior: Gaussian(mean: 0.0, sigma: 0.3))"#,
        "fit.priors[0].prior",
        &["within [−1, 1]", "found [-inf, inf]"],
    );
}

#[test]
fn unknown_instrument_offset() {
    refused(
        r#"(parameter: "KELDA.offset", prior: Uniform(lower: -10.0, upper: 10.0))"#,
        "fit.priors[0].parameter",
        &[
            "unknown parameter 'KELDA.offset'",
            "instruments: VESKA, MIRRAL",
        ],
    );
}

#[test]
fn unknown_parameter() {
    refused(
        r#"(parameter: "b.argument", prior: Uniform(lower: 0.0, upper: 1.0))"#,
        "fit.priors[0].parameter",
        &["unknown parameter 'b.argument'", "planets: b, c"],
    );
    refused(
        r#"(parameter: "d.period", fixed: 10.0)"#,
        "fit.priors[0].parameter",
        &["unknown parameter 'd.period'"],
    );
}

#[test]
fn inclination_outside_0_180() {
    refused(
        r#"(parameter: "c.inclination", prior: Uniform(lower: 10.0, upper: 190.0))"#,
        "fit.priors[0].prior",
        &["within [0, 180] degrees", "found [10, 190]"],
    );
    refused(
        r#"(parameter: "b.inclination", prior: Uniform(lower: -5.0, upper: 90.0))"#,
        "fit.priors[0].prior",
        &["found [-5, 90]"],
    );
}

#[test]
fn sin_i_outside_0_1() {
    refused(
        r#"(parameter: "sin_i", prior: Uniform(lower: 0.0, upper: 1.0))"#,
        "fit.priors[0].prior",
        &["sin i must lie within (0, 1]", "found [0, 1]"],
    );
    refused(
        r#"(parameter: "sin_i", prior: Uniform(lower: 0.5, upper: 1.5))"#,
        "fit.priors[0].prior",
        &["found [0.5, 1.5]"],
    );
}

#[test]
fn neither_prior_nor_fixed() {
    refused(
        r#"(parameter: "b.period")"#,
        "fit.priors[0]",
        &["give a prior, a fixed value, or both"],
    );
}

#[test]
fn unknown_key_in_override() {
    let e = refused(
        r#"(parameter: "b.period", priro: Uniform(lower: 40.0, upper: 43.0))"#,
        "fit.priors[0].priro",
        &["Unexpected field named `priro`"],
    );
    assert!(matches!(e, RunFileError::Syntax { .. }));
}

#[test]
fn build_model_refuses_a_parameter_the_model_lacks() {
    // `c.inclination` can exist (three-dimensional model), so the run file
    // passes; the Keplerian and coplanar models have no such parameter.
    let fixture = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/orrin442");
    let mut run = load_run_file(fixture.join("run.ron")).unwrap();
    let data = run.read_data().unwrap();
    let text =
        run_text(r#"(parameter: "c.inclination", prior: Uniform(lower: 30.0, upper: 150.0))"#);
    run.fit = parse_run_str(&text, "priors.ron", None).unwrap().fit;
    for kind in [ModelKind::Keplerian, ModelKind::CoplanarSinI] {
        let e = build_model(&run, &data, kind, "priors.ron").expect_err("must be refused");
        let msg = e.to_string();
        assert!(
            matches!(e, SetupError::UnknownParameter { index: 0, .. }),
            "{msg}"
        );
        assert!(
            msg.starts_with("priors.ron: fit.priors[0].parameter:"),
            "{msg}"
        );
        assert!(msg.contains("has no parameter 'c.inclination'"), "{msg}");
        assert!(msg.contains("b.period"), "{msg}");
    }
    // The three-dimensional model has it, and takes the prior.
    let m = build_model(&run, &data, ModelKind::ThreeDimensional, "priors.ron").unwrap();
    let i = m.params.index_of("c.inclination").unwrap();
    assert_eq!(
        m.params.parameters()[i].prior,
        Prior::Uniform {
            lower: 30.0,
            upper: 150.0
        }
    );
    // `sin_i` exists only in the coplanar model with free sin i.
    let text = run_text(r#"(parameter: "sin_i", prior: Uniform(lower: 0.3, upper: 1.0))"#);
    run.fit = parse_run_str(&text, "priors.ron", None).unwrap().fit;
    assert!(build_model(&run, &data, ModelKind::CoplanarSinI, "priors.ron").is_ok());
    let e = build_model(&run, &data, ModelKind::Keplerian, "priors.ron").unwrap_err();
    assert!(e.to_string().contains("no parameter 'sin_i'"), "{e}");
}

//! Run-file loading: the Orrin-442 example loads, and every file of the
//! bad-input corpus tests/bad-input/runs/ is refused with a message naming
//! the file, the line and the field.

use std::path::PathBuf;

use apsidal::config::{
    InstrumentChoice, Phase, RunFileError, Signal, load_run_file, parse_run_str,
};
use proptest::prelude::*;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/orrin442")
        .join(name)
}

fn corpus(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/bad-input/runs")
        .join(name)
}

#[test]
fn example_run_file_loads() {
    let run = load_run_file(fixture("run.ron")).unwrap();
    assert_eq!(run.data.len(), 2);
    // Relative paths resolve against the run file's folder.
    assert_eq!(run.data[0].path, fixture("veska.txt"));
    assert_eq!(
        run.data[0].instrument,
        InstrumentChoice::Named("VESKA".into())
    );
    assert_eq!(run.data[1].instrument, InstrumentChoice::FromColumn);
    assert_eq!(run.output, Some(fixture("out")));
    assert_eq!(
        run.instruments.as_deref(),
        Some(&["VESKA".to_string(), "MIRRAL".to_string()][..])
    );
    assert_eq!(run.star.mass, 0.74);
    assert_eq!(run.star.mass_uncertainty, Some(0.03));
    assert_eq!(run.star.radius, Some(0.71));
    assert_eq!(run.planets.len(), 2);
    let (b, c) = (&run.planets[0], &run.planets[1]);
    assert_eq!(b.signal, Signal::SemiAmplitude(23.0));
    assert_eq!(b.phase, Phase::MeanAnomaly(35.0));
    assert_eq!(b.inclination, None);
    assert_eq!(c.signal, Signal::MassJupiter(0.9));
    assert_eq!(c.phase, Phase::ConjunctionTime(2459803.2));
    // `Some(86.0)` and bare `4.0` both read as Some (implicit_some).
    assert_eq!(c.inclination, Some(86.0));
    assert_eq!(c.node_difference, Some(4.0));
    assert_eq!(run.reference_epoch, Some(2460000.0));
    assert_eq!(run.seed, Some(20260101));

    // The data it names can be read, restricted to the declared instruments.
    let data = run.read_data().unwrap();
    assert_eq!(data.len(), 19);
    assert_eq!(data.instruments().len(), 2);
}

#[test]
fn run_file_round_trips_through_ron() {
    let run = load_run_file(fixture("run.ron")).unwrap();
    let text = ron::ser::to_string_pretty(&run, ron::ser::PrettyConfig::default()).unwrap();
    let back = parse_run_str(&text, "round-trip", None).unwrap();
    assert_eq!(run, back);
}

/// Load a corpus file; check the message starts with `path:line:` and
/// contains the field and every fragment.
fn refused(name: &str, line: usize, field: &str, fragments: &[&str]) -> RunFileError {
    let e = load_run_file(corpus(name)).expect_err("corpus file must be refused");
    let msg = e.to_string();
    let prefix = format!("{}:{}:", corpus(name).display(), line);
    assert!(
        msg.starts_with(&prefix),
        "message {msg:?} must start with {prefix:?}"
    );
    assert!(
        msg.contains(field),
        "message {msg:?} must name field {field:?}"
    );
    for f in fragments {
        assert!(msg.contains(f), "message {msg:?} must contain {f:?}");
    }
    assert_eq!(e.line(), Some(line));
    if !field.is_empty() {
        assert_eq!(e.field().map(|f| f.to_string()).as_deref(), Some(field));
    }
    e
}

#[test]
fn unknown_key() {
    let e = refused(
        "unknown_key.ron",
        6,
        "planets[0].inclinaton",
        &["(planet 'b')", "Unexpected field named `inclinaton`"],
    );
    assert!(matches!(e, RunFileError::Syntax { .. }));
}

#[test]
fn wrong_type() {
    refused(
        "wrong_type.ron",
        8,
        "planets[1].period",
        &["(planet 'c')", "Expected float"],
    );
}

#[test]
fn missing_field() {
    // ron reports a missing field at the closer of its struct (line 11).
    refused(
        "missing_field.ron",
        11,
        "planets[0].eccentricity",
        &["(planet 'b')", "missing field named `eccentricity`"],
    );
}

#[test]
fn unknown_variant() {
    refused(
        "unknown_variant.ron",
        5,
        "planets[0].signal",
        &["`Amplitude`", "SemiAmplitude"],
    );
}

#[test]
fn syntax_error() {
    // A missing comma after `eccentricity: 0.08` is noticed at the next key.
    refused(
        "syntax_error.ron",
        6,
        "planets[0].eccentricity",
        &["Expected comma"],
    );
}

#[test]
fn eccentricity_one() {
    let e = refused(
        "eccentricity_one.ron",
        11,
        "planets[1].eccentricity",
        &["(planet 'c')", "must be in [0, 1), found 1"],
    );
    assert!(matches!(e, RunFileError::Invalid { .. }));
}

#[test]
fn period_zero() {
    refused(
        "period_zero.ron",
        6,
        "planets[0].period",
        &["(planet 'b')", "> 0 (days), found 0"],
    );
}

#[test]
fn period_negative() {
    refused(
        "period_negative.ron",
        6,
        "planets[1].period",
        &["(planet 'c')", "found -83.9"],
    );
}

#[test]
fn negative_star_mass() {
    refused(
        "negative_star_mass.ron",
        5,
        "star.mass",
        &["> 0 (solar masses), found -0.74"],
    );
}

#[test]
fn negative_planet_mass() {
    refused(
        "negative_planet_mass.ron",
        8,
        "planets[1].signal",
        &["(planet 'c')", "> 0 (Jupiter masses), found -0.9"],
    );
}

#[test]
fn inclination_above_180() {
    refused(
        "inclination_above_180.ron",
        7,
        "planets[0].inclination",
        &["in [0, 180]", "found 181.5"],
    );
}

#[test]
fn inclination_negative() {
    refused(
        "inclination_negative.ron",
        8,
        "planets[0].inclination",
        &["in [0, 180]", "found -5"],
    );
}

#[test]
fn nan_value() {
    refused(
        "nan_value.ron",
        6,
        "planets[0].omega_star",
        &["finite number, found NaN"],
    );
}

#[test]
fn undeclared_instrument() {
    refused(
        "undeclared_instrument.ron",
        4,
        "data[1].instrument",
        &["'KESTRA'", "VESKA, MIRRAL"],
    );
}

#[test]
fn node_difference_of_the_innermost_planet() {
    // "b" (41.3 d) is the innermost although listed second.
    refused(
        "node_difference_innermost.ron",
        9,
        "planets[1].node_difference",
        &["(planet 'b')", "innermost", "found 3"],
    );
}

#[test]
fn duplicate_planet_name() {
    refused(
        "duplicate_planet.ron",
        7,
        "planets[1].name",
        &["used twice"],
    );
}

#[test]
fn not_utf8() {
    let e = refused("not_utf8.ron", 3, "", &["invalid UTF-8"]);
    // `    star: (mass: 0.74, name: "Orr` is 33 characters: the bad byte is column 34.
    assert!(
        matches!(e, RunFileError::NotUtf8 { column: 34, .. }),
        "{e:?}"
    );
}

#[test]
fn missing_run_file() {
    let e = load_run_file(corpus("no_such_file.ron")).unwrap_err();
    assert!(matches!(e, RunFileError::Io { .. }));
    assert!(e.to_string().contains("no_such_file.ron"));
}

#[test]
fn missing_top_level_section() {
    let e = parse_run_str("(\n data: [(path: \"a\")],\n)", "mem.ron", None).unwrap_err();
    assert_eq!(e.field().map(|f| f.to_string()).as_deref(), Some("star"));
    assert!(e.to_string().starts_with("mem.ron:3:"), "{e}");
}

#[test]
fn exact_messages() {
    let e = parse_run_str(
        "(\n data: [(path: \"a\")],\n star: (mass: 0.8, radius: \"big\"),\n)",
        "m.ron",
        None,
    )
    .unwrap_err();
    assert_eq!(e.to_string(), "m.ron:3:27: star.radius: Expected float");
    let e = parse_run_str(
        "(\n data: [(path: \"a\")],\n star: (mass: 0.0),\n)",
        "m.ron",
        None,
    )
    .unwrap_err();
    assert_eq!(
        e.to_string(),
        "m.ron:3:9: star.mass: must be > 0 (solar masses), found 0"
    );
}

#[test]
fn empty_text() {
    let e = parse_run_str("", "mem.ron", None).unwrap_err();
    assert!(e.to_string().starts_with("mem.ron:1:1:"), "{e}");
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 1000, ..ProptestConfig::default() })]

    /// Arbitrary strings never make the loader panic.
    #[test]
    fn random_strings_never_panic(text in "\\PC{0,300}") {
        let _ = parse_run_str(&text, "random", None);
    }

    /// RON-flavoured strings (brackets, keys, numbers) never make it panic.
    #[test]
    fn ron_like_strings_never_panic(text in "[(){}\\[\\]:,\"#!r/* a-z0-9.\\-\n]{0,200}") {
        let _ = parse_run_str(&text, "random", None);
    }

    /// The example run file with one character deleted or inserted never
    /// makes the loader panic; when refused, the message names a line.
    #[test]
    fn mutated_example_never_panics(pos in 0usize..2000, c in any::<char>(), delete in any::<bool>()) {
        let good = std::fs::read_to_string(fixture("run.ron")).unwrap();
        let chars: Vec<char> = good.chars().collect();
        let pos = pos % (chars.len() + 1);
        let mut m = chars.clone();
        if delete && pos < m.len() { m.remove(pos); } else { m.insert(pos, c); }
        let text: String = m.into_iter().collect();
        if let Err(e) = parse_run_str(&text, "mutated", None) {
            prop_assert!(e.line().is_some(), "{}", e);
        }
    }
}

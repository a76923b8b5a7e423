//! Bad-input corpus for the RV table reader (DESIGN §9): one file per
//! breakage under tests/bad-input/tables/. Each case checks the error
//! variant and that the message names the file, the line and the field.

use std::path::PathBuf;

use apsidal::data::{Column, DatasetBuilder, InstrumentLabel, TableError};
use proptest::prelude::*;

fn corpus(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/bad-input/tables")
        .join(name)
}

fn read(name: &str, label: InstrumentLabel, allowed: Option<&[&str]>) -> TableError {
    let mut b = DatasetBuilder::new();
    if let Some(a) = allowed {
        b = b.allow_only(a.iter().copied());
    }
    let added = b.add_file(corpus(name), &label).map(|_| ());
    match added {
        Err(e) => e,
        Ok(()) => b.finish().expect_err("corpus file must be refused"),
    }
}

fn given(name: &str) -> InstrumentLabel {
    InstrumentLabel::Given(name.to_string())
}

/// Assert the message starts with `path:line:` and contains every fragment.
fn check(e: &TableError, name: &str, line: usize, fragments: &[&str]) {
    let msg = e.to_string();
    let prefix = format!("{}:{}:", corpus(name).display(), line);
    assert!(
        msg.starts_with(&prefix),
        "message {msg:?} must start with {prefix:?}"
    );
    for f in fragments {
        assert!(msg.contains(f), "message {msg:?} must contain {f:?}");
    }
    let loc = e.location().expect("error has a location");
    assert_eq!(loc.line, line);
    assert_eq!(loc.file, corpus(name).display().to_string());
}

#[test]
fn wrong_column_count() {
    let e = read("wrong_column_count.txt", InstrumentLabel::FromColumn, None);
    assert!(matches!(
        e,
        TableError::ColumnCount {
            found: 5,
            expected: 4,
            first_line: 2,
            ..
        }
    ));
    check(
        &e,
        "wrong_column_count.txt",
        5,
        &["extra column 5", "first data line (line 2) has 4"],
    );
    assert_eq!(e.column(), None);
}

#[test]
fn missing_column() {
    let e = read("missing_column.txt", InstrumentLabel::FromColumn, None);
    assert!(matches!(
        e,
        TableError::ColumnCount {
            found: 3,
            expected: 4,
            ..
        }
    ));
    check(
        &e,
        "missing_column.txt",
        6,
        &["missing column 4 (instrument)"],
    );
    assert_eq!(e.column(), Some(Column::Instrument));
}

#[test]
fn missing_value_between_commas() {
    let e = read("missing_value.csv", InstrumentLabel::FromColumn, None);
    assert!(matches!(
        e,
        TableError::EmptyField {
            column: Column::Rv,
            ..
        }
    ));
    check(
        &e,
        "missing_value.csv",
        3,
        &["column 2 (rv)", "missing value"],
    );
}

#[test]
fn too_few_fields_on_first_data_line() {
    let e = read("too_few_fields.txt", given("VESKA"), None);
    assert!(matches!(e, TableError::BadFieldCount { found: 2, .. }));
    check(&e, "too_few_fields.txt", 1, &["missing column 3 (error)"]);
    assert_eq!(e.column(), Some(Column::Error));
}

#[test]
fn text_in_a_number() {
    let e = read("text_in_number.txt", given("VESKA"), None);
    assert!(matches!(
        e,
        TableError::NotANumber {
            column: Column::Rv,
            ..
        }
    ));
    check(
        &e,
        "text_in_number.txt",
        3,
        &["column 2 (rv)", "'12.o2' is not a number"],
    );
}

#[test]
fn nan() {
    let e = read("nan.txt", given("VESKA"), None);
    assert!(matches!(
        e,
        TableError::NotANumberValue {
            column: Column::Error,
            ..
        }
    ));
    check(&e, "nan.txt", 7, &["column 3 (error)", "NaN"]);
}

#[test]
fn inf() {
    let e = read("inf.txt", given("VESKA"), None);
    assert!(matches!(
        e,
        TableError::Infinite {
            column: Column::Time,
            ..
        }
    ));
    check(&e, "inf.txt", 2, &["column 1 (time)", "infinite"]);
}

#[test]
fn overflow_is_infinite() {
    let e = read("overflow.txt", given("VESKA"), None);
    assert!(matches!(
        e,
        TableError::Infinite {
            column: Column::Rv,
            ..
        }
    ));
    check(
        &e,
        "overflow.txt",
        2,
        &["column 2 (rv)", "'1e999'", "infinite"],
    );
}

#[test]
fn negative_error() {
    let e = read("negative_error.txt", given("VESKA"), None);
    assert!(matches!(e, TableError::NonPositiveError { value, .. } if value == -1.75));
    check(
        &e,
        "negative_error.txt",
        3,
        &["column 3 (error)", "> 0 m/s", "-1.75"],
    );
}

#[test]
fn zero_error() {
    let e = read("zero_error.csv", given("VESKA"), None);
    assert!(matches!(e, TableError::NonPositiveError { value, .. } if value == 0.0));
    check(&e, "zero_error.csv", 2, &["column 3 (error)", "found 0"]);
}

#[test]
fn duplicate_epoch_within_an_instrument() {
    let e = read("duplicate_epoch.txt", InstrumentLabel::FromColumn, None);
    match &e {
        TableError::DuplicateEpoch {
            first,
            instrument,
            time,
            ..
        } => {
            assert_eq!(first.line, 4);
            assert_eq!(instrument, "VESKA");
            assert_eq!(*time, 2459001.498);
        }
        other => panic!("wrong error {other:?}"),
    }
    // Line 8 repeats line 4's epoch; line 3 shares line 2's epoch but is
    // another instrument, which is allowed.
    let first = format!("{}:4", corpus("duplicate_epoch.txt").display());
    check(
        &e,
        "duplicate_epoch.txt",
        8,
        &["column 1 (time)", "VESKA", &first],
    );
}

#[test]
fn duplicate_epoch_across_files_of_one_instrument() {
    let mut b = DatasetBuilder::new();
    b.add_bytes(
        b"2459000.5 1.0 1.0\n2459001.5 2.0 1.0\n",
        "a.txt",
        &given("VESKA"),
    )
    .unwrap();
    b.add_bytes(b"# more\n2459001.5 2.5 1.0\n", "b.txt", &given("VESKA"))
        .unwrap();
    let e = b.finish().unwrap_err();
    assert_eq!(
        e.to_string(),
        "b.txt:2: column 1 (time): epoch 2459001.5 appears twice for instrument 'VESKA' (first at a.txt:2)"
    );
}

#[test]
fn empty_file() {
    let e = read("empty.txt", given("VESKA"), None);
    assert!(matches!(e, TableError::NoData { lines: 0, .. }));
    let msg = e.to_string();
    assert!(
        msg.starts_with(&format!("{}:", corpus("empty.txt").display())),
        "{msg}"
    );
    assert!(msg.contains("no data lines"), "{msg}");
}

#[test]
fn only_comments() {
    let e = read("only_comments.txt", given("VESKA"), None);
    assert!(matches!(e, TableError::NoData { lines: 5, .. }));
    assert!(e.to_string().contains("no data lines (5 line(s)"), "{e}");
    assert_eq!(
        e.file(),
        Some(corpus("only_comments.txt").display().to_string().as_str())
    );
}

#[test]
fn header_only() {
    let e = read("header_only.txt", given("VESKA"), None);
    assert!(matches!(e, TableError::NoData { lines: 2, .. }));
}

#[test]
fn binary_garbage() {
    let e = read("binary_garbage.bin", given("VESKA"), None);
    // The file starts with 0x89, never valid as the first byte of UTF-8.
    assert!(
        matches!(e, TableError::InvalidUtf8 { byte: 1, .. }),
        "{e:?}"
    );
    check(
        &e,
        "binary_garbage.bin",
        1,
        &["not text", "UTF-8", "binary"],
    );
}

#[test]
fn invalid_utf8_inside_a_line() {
    let e = read("invalid_utf8.txt", InstrumentLabel::FromColumn, None);
    // "2459002.503   " is 14 bytes, so 0xFF is byte 15.
    assert!(
        matches!(e, TableError::InvalidUtf8 { byte: 15, .. }),
        "{e:?}"
    );
    check(&e, "invalid_utf8.txt", 3, &["invalid UTF-8 at byte 15"]);
}

#[test]
fn nul_bytes() {
    let e = read("nul_bytes.txt", given("VESKA"), None);
    assert!(
        matches!(
            e,
            TableError::ControlCharacter {
                code: 0,
                position: 13,
                ..
            }
        ),
        "{e:?}"
    );
    check(&e, "nul_bytes.txt", 3, &["U+0000", "binary"]);
}

#[test]
fn header_names_more_columns_than_the_data_have() {
    let e = read("header_mismatch.txt", given("VESKA"), None);
    assert!(matches!(
        e,
        TableError::HeaderMismatch {
            header_fields: 4,
            data_fields: 3,
            data_line: 2,
            ..
        }
    ));
    check(
        &e,
        "header_mismatch.txt",
        1,
        &["header names 4 column(s)", "(line 2) has 3"],
    );
}

#[test]
fn unknown_instrument() {
    let e = read(
        "unknown_instrument.txt",
        InstrumentLabel::FromColumn,
        Some(&["VESKA", "MIRRAL"]),
    );
    check(
        &e,
        "unknown_instrument.txt",
        2,
        &["column 4 (instrument)", "'KESTRA'", "VESKA, MIRRAL"],
    );
}

#[test]
fn unknown_instrument_assigned_to_a_file() {
    let e = read(
        "no_instrument.txt",
        given("KESTRA"),
        Some(&["VESKA", "MIRRAL"]),
    );
    assert!(matches!(e, TableError::UnknownFileInstrument { .. }));
    assert!(e.to_string().contains("'KESTRA'"));
    assert!(
        e.to_string()
            .starts_with(&corpus("no_instrument.txt").display().to_string())
    );
}

#[test]
fn label_disagrees_with_the_run_file() {
    let e = read("instrument_mismatch.txt", given("VESKA"), None);
    check(
        &e,
        "instrument_mismatch.txt",
        2,
        &["column 4 (instrument)", "'MIRRAL'", "'VESKA'"],
    );
}

#[test]
fn three_columns_and_no_instrument() {
    let e = read("no_instrument.txt", InstrumentLabel::FromColumn, None);
    assert!(matches!(e, TableError::MissingInstrument { .. }));
    check(
        &e,
        "no_instrument.txt",
        1,
        &["column 4 (instrument)", "run file"],
    );
}

#[test]
fn missing_file() {
    let e = read("does_not_exist.txt", given("VESKA"), None);
    assert!(matches!(e, TableError::Io { .. }));
    assert!(e.to_string().contains("does_not_exist.txt"));
}

#[test]
fn bad_label_given_by_the_caller() {
    let mut b = DatasetBuilder::new();
    let e = b.add_bytes(b"1 2 3\n", "x.txt", &given("A#B")).unwrap_err();
    assert!(matches!(e, TableError::UnknownFileInstrument { .. }));
}

#[test]
fn nothing_given() {
    assert!(matches!(
        DatasetBuilder::new().finish(),
        Err(TableError::NoTables)
    ));
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]

    /// Arbitrary bytes never make the reader panic, and whatever it accepts
    /// satisfies the dataset invariants.
    #[test]
    fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let mut b = DatasetBuilder::new();
        if b.add_bytes(&bytes, "random", &InstrumentLabel::Given("X".into())).is_ok() {
            if let Ok(d) = b.finish() {
                prop_assert!(!d.is_empty());
                prop_assert!(d.err().iter().all(|&e| e > 0.0 && e.is_finite()));
                prop_assert!(d.time().iter().chain(d.rv()).all(|v| v.is_finite()));
            }
        }
    }

    /// Text built from table-like pieces (numbers, labels, separators,
    /// comments, odd characters) never makes the reader panic.
    #[test]
    fn table_like_text_never_panics(
        pieces in proptest::collection::vec(
            prop_oneof![
                Just("2459000.5".to_string()), Just("-3.2".to_string()), Just("0".to_string()),
                Just("nan".to_string()), Just("inf".to_string()), Just("1e999".to_string()),
                Just("VESKA".to_string()), Just(" ".to_string()), Just(",".to_string()),
                Just("\t".to_string()), Just("\n".to_string()), Just("\r\n".to_string()),
                Just("#".to_string()), Just("é".to_string()), Just("\u{0}".to_string()),
                any::<f64>().prop_map(|x| x.to_string()),
                "[a-z]{1,4}",
            ],
            0..60,
        )
    ) {
        let text: String = pieces.concat();
        let _ = apsidal::data::parse_table(text.as_bytes(), "pieces", &InstrumentLabel::FromColumn);
        let _ = apsidal::data::parse_table(text.as_bytes(), "pieces", &InstrumentLabel::Given("X".into()));
    }
}

#[test]
fn typo_in_first_epoch_is_not_taken_for_a_header() {
    // Mixed text and numbers: a data line, so the typo is reported.
    let e = apsidal::data::parse_table(
        b"# c\n2459OOO.5 1.0 1.0\n2459001.5 1.0 1.0\n",
        "typo.txt",
        &given("VESKA"),
    )
    .unwrap_err();
    assert_eq!(
        e.to_string(),
        "typo.txt:2: column 1 (time): '2459OOO.5' is not a number"
    );
}

#[test]
fn second_text_line_is_not_a_header() {
    let e = apsidal::data::parse_table(
        b"time rv err\n2459000.5 1.0 1.0\ntime rv err\n",
        "twice.txt",
        &given("VESKA"),
    )
    .unwrap_err();
    assert_eq!(
        e.to_string(),
        "twice.txt:3: column 1 (time): 'time' is not a number"
    );
}

#[test]
fn long_text_is_shortened_in_messages() {
    let long = "x".repeat(500);
    let text = format!("2459000.5 {long} 1.0\n");
    let e = apsidal::data::parse_table(text.as_bytes(), "long.txt", &given("VESKA")).unwrap_err();
    assert!(e.to_string().len() < 120, "{e}");
    assert!(e.to_string().contains('…'));
}

#[test]
fn carriage_return_inside_a_line_is_refused() {
    let e =
        apsidal::data::parse_table(b"2459000.5 1.0\r1.0\n", "cr.txt", &given("VESKA")).unwrap_err();
    assert!(
        matches!(e, TableError::ControlCharacter { code: 13, .. }),
        "{e:?}"
    );
}

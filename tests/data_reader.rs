//! Good RV tables of each shape: whitespace, comma, header, comments, 3 and
//! 4 columns, CRLF, several files, several instruments in one file.
//!
//! Expected summary values (medians, baseline, reference epoch) come from
//! tests/fixtures/orrin442/expected.json, written by make_tables.py next to
//! it with numpy (np.median) and an independent Python implementation of
//! the documented reference-epoch rule.

use std::path::PathBuf;

use apsidal::data::{DatasetBuilder, InstrumentLabel, TableSource, parse_table, read_tables};
use serde_json::Value;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/orrin442")
        .join(name)
}

fn expected() -> Value {
    let text = std::fs::read_to_string(fixture("expected.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn num(v: &Value, key: &str) -> f64 {
    v[key].as_f64().unwrap()
}

fn list(v: &Value, key: &str) -> Vec<f64> {
    v[key]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn given(name: &str) -> InstrumentLabel {
    InstrumentLabel::Given(name.to_string())
}

fn two_files() -> apsidal::data::Dataset {
    read_tables(
        &[
            TableSource {
                path: fixture("veska.txt"),
                instrument: given("VESKA"),
            },
            TableSource {
                path: fixture("mirral.csv"),
                instrument: InstrumentLabel::FromColumn,
            },
        ],
        None,
    )
    .unwrap()
}

#[test]
fn whitespace_three_columns_header_comments_unsorted() {
    let d = read_tables(
        &[TableSource {
            path: fixture("veska.txt"),
            instrument: given("VESKA"),
        }],
        None,
    )
    .unwrap();
    let x = expected();
    assert_eq!(d.len(), 12);
    assert_eq!(d.instruments().len(), 1);
    let v = d.instrument_data(0).unwrap();
    assert_eq!(v.name, "VESKA");
    // The file is out of time order; the dataset is sorted (values exact:
    // the same decimal text parsed by Python and Rust gives the same f64).
    assert_eq!(v.time, list(&x, "veska_time_sorted").as_slice());
    assert_eq!(v.rv, list(&x, "veska_rv_sorted").as_slice());
    assert_eq!(v.median_error(), num(&x, "median_error_veska"));
    // Source lines: the earliest epoch 2459157.89547 is on line 6 of the file.
    assert_eq!(d.location(0).unwrap().line, 6);
    assert!(d.location(0).unwrap().file.ends_with("veska.txt"));
}

#[test]
fn comma_four_columns_header_crlf() {
    let d = read_tables(
        &[TableSource {
            path: fixture("mirral.csv"),
            instrument: InstrumentLabel::FromColumn,
        }],
        None,
    )
    .unwrap();
    let x = expected();
    assert_eq!(d.len(), 7);
    assert_eq!(d.instruments()[0].name(), "MIRRAL");
    assert_eq!(d.time(), list(&x, "mirral_time").as_slice());
    assert_eq!(d.median_error(), num(&x, "median_error_mirral"));
    // Header on line 1, data from line 2.
    assert_eq!(d.sources()[0].line, 2);
}

#[test]
fn four_column_file_may_repeat_the_given_label() {
    let d = read_tables(
        &[TableSource {
            path: fixture("mirral.csv"),
            instrument: given("MIRRAL"),
        }],
        None,
    )
    .unwrap();
    assert_eq!(d.len(), 7);
}

#[test]
fn several_files() {
    let d = two_files();
    let x = expected();
    assert_eq!(d.len(), num(&x, "n") as usize);
    assert_eq!(d.files().len(), 2);
    let names: Vec<&str> = d.instruments().iter().map(|i| i.name()).collect();
    assert_eq!(names, ["VESKA", "MIRRAL"]);
    assert_eq!(d.instruments()[0].range(), 0..12);
    assert_eq!(d.instruments()[1].range(), 12..19);
    assert_eq!(d.first_epoch(), num(&x, "first_epoch"));
    assert_eq!(d.last_epoch(), num(&x, "last_epoch"));
    assert!((d.baseline() - num(&x, "baseline")).abs() < 1e-9);
    assert_eq!(d.median_error(), num(&x, "median_error"));
    assert_eq!(d.suggested_reference_epoch(), num(&x, "reference_epoch"));
    // Every MIRRAL point comes from file 1.
    for i in d.instruments()[1].range() {
        assert_eq!(d.sources()[i].file, 1);
        assert_eq!(d.instrument_of()[i], 1);
    }
}

#[test]
fn several_instruments_in_one_file_equals_two_files() {
    let one = read_tables(
        &[TableSource {
            path: fixture("both.txt"),
            instrument: InstrumentLabel::FromColumn,
        }],
        None,
    )
    .unwrap();
    let two = two_files();
    assert_eq!(one.len(), two.len());
    // both.txt starts with VESKA, so the instrument order is the same.
    for k in 0..2 {
        let (a, b) = (
            one.instrument_data(k).unwrap(),
            two.instrument_data(k).unwrap(),
        );
        assert_eq!(a.name, b.name);
        assert_eq!(a.time, b.time);
        assert_eq!(a.rv, b.rv);
        assert_eq!(a.err, b.err);
    }
    let by_time_one: Vec<_> = one.iter_by_time().collect();
    let by_time_two: Vec<_> = two.iter_by_time().collect();
    assert_eq!(by_time_one, by_time_two);
}

#[test]
fn time_order_is_sorted_and_a_permutation() {
    let d = two_files();
    let order = d.time_order();
    let mut seen = order.to_vec();
    seen.sort_unstable();
    assert_eq!(seen, (0..d.len()).collect::<Vec<_>>());
    let t: Vec<f64> = d.iter_by_time().map(|m| m.time).collect();
    assert!(t.windows(2).all(|w| w[0] <= w[1]));
    assert_eq!(t[0], d.first_epoch());
}

#[test]
fn restricted_instruments_accept_known_labels() {
    let allowed = ["VESKA".to_string(), "MIRRAL".to_string()];
    let d = read_tables(
        &[TableSource {
            path: fixture("both.txt"),
            instrument: InstrumentLabel::FromColumn,
        }],
        Some(&allowed),
    )
    .unwrap();
    assert_eq!(d.instruments().len(), 2);
}

#[test]
fn trailing_comments_tabs_and_bom() {
    let text = "\u{feff}# c\n\t2459000.5\t1.5\t0.5\t# trailing\n  2459001.5   -2.5   0.7 # x\n";
    let d = parse_table(text.as_bytes(), "mem", &given("K")).unwrap();
    assert_eq!(d.time(), [2459000.5, 2459001.5]);
    assert_eq!(d.rv(), [1.5, -2.5]);
    assert_eq!(d.err(), [0.5, 0.7]);
    assert_eq!(d.sources()[1].line, 3);
}

#[test]
fn comma_labels_may_hold_spaces_and_numbers_forms() {
    let text = "2459000.5, +1.5e1, .5, Big Scope\n2459001, -2., 7E-1, Big Scope\n";
    let d = parse_table(text.as_bytes(), "mem", &InstrumentLabel::FromColumn).unwrap();
    assert_eq!(d.instruments()[0].name(), "Big Scope");
    assert_eq!(d.rv(), [15.0, -2.0]);
    assert_eq!(d.err(), [0.5, 0.7]);
}

#[test]
fn same_epoch_on_two_instruments_is_allowed() {
    let text = "2459000.5 1 1 A\n2459000.5 2 1 B\n";
    let d = parse_table(text.as_bytes(), "mem", &InstrumentLabel::FromColumn).unwrap();
    assert_eq!(d.len(), 2);
    assert_eq!(d.baseline(), 0.0);
    // Single distinct epoch: the reference epoch is that epoch.
    assert_eq!(d.suggested_reference_epoch(), 2459000.5);
    // Ties in time keep instrument order.
    assert_eq!(d.time_order(), [0, 1]);
}

#[test]
fn reference_epoch_rule() {
    // Hand-worked: epochs 2459000.0 and 2459003.0 → mid 2459001.5, baseline 3 d,
    // step = 10^floor(log10(0.3)) = 0.1 → 2459001.5.
    let d = parse_table(b"2459000 0 1\n2459003 0 1\n", "m", &given("A")).unwrap();
    assert_eq!(d.suggested_reference_epoch(), 2459001.5);
    // 2459000.0 and 2459000.38: mid 2459000.19, step 0.01 → 2459000.19 (closest f64).
    let d = parse_table(b"2459000 0 1\n2459000.38 0 1\n", "m", &given("A")).unwrap();
    assert_eq!(d.suggested_reference_epoch(), 2459000.19);
    // 2455123.4 .. 2459876.5: mid 2457499.95, baseline 4753.1 → step 100 → 2457500.
    let d = parse_table(b"2455123.4 0 1\n2459876.5 0 1\n", "m", &given("A")).unwrap();
    assert_eq!(d.suggested_reference_epoch(), 2457500.0);
}

#[test]
fn builder_mixes_files_and_memory() {
    let mut b = DatasetBuilder::new().allow_only(["VESKA", "MIRRAL"]);
    b.add_file(fixture("veska.txt"), &given("VESKA")).unwrap();
    b.add_bytes(
        b"2461000.5 3.0 2.0 MIRRAL\n",
        "extra",
        &InstrumentLabel::FromColumn,
    )
    .unwrap();
    let d = b.finish().unwrap();
    assert_eq!(d.len(), 13);
    assert_eq!(d.files()[1], "extra");
    assert_eq!(d.instrument_index("MIRRAL"), Some(1));
    assert_eq!(d.measurement(12).unwrap().rv, 3.0);
    assert!(d.measurement(13).is_none());
    assert!(d.instrument_data(2).is_none());
}

//! Any bytes into the RV-table reader: a typed error naming the file, or a
//! dataset of finite values with positive errors. Never a panic.
#![no_main]

use apsidal::data::{InstrumentLabel, parse_table};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    for label in [
        InstrumentLabel::FromColumn,
        InstrumentLabel::Given("VESKA".into()),
    ] {
        match parse_table(bytes, "fuzz.txt", &label) {
            Ok(d) => {
                assert!(d.time().iter().chain(d.rv()).chain(d.err()).all(|x| x.is_finite()));
                assert!(d.err().iter().all(|&e| e > 0.0));
            }
            Err(e) => assert!(e.to_string().starts_with("fuzz.txt"), "{e}"),
        }
    }
});

//! Any text into the run-file loader: a typed error naming the file, or a
//! run file that passes validation. Never a panic.
#![no_main]

use apsidal::config::{parse_run_str, validate};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    let Ok(text) = std::str::from_utf8(bytes) else {
        return;
    };
    match parse_run_str(text, "fuzz.ron", None) {
        Ok(run) => assert!(validate(&run).is_empty()),
        Err(e) => assert!(e.to_string().starts_with("fuzz.ron"), "{e}"),
    }
});

//! The bad-input corpus (tests/bad-input/, see its README) run through the
//! command line: each broken table through `apsidal periodogram TABLE`,
//! each broken run file through `apsidal fit RUN` (and a few through
//! `apsidal sample RUN`). Every case must exit with code 2, print a message
//! on standard error naming the file, the line and the field, print nothing
//! on standard output, not panic, and leave no output files.
//!
//! To cover a new subcommand, add a `Case` whose `args` start with it; the
//! harness (`run_case`) does the rest.

use std::path::{Path, PathBuf};
use std::process::Command;

fn corpus(sub: &str, name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/bad-input")
        .join(sub)
        .join(name)
}

/// One refused input: the subcommand and its arguments (the output folder
/// is added by the harness), and fragments the message must contain
/// (besides the file name, which is always checked).
struct Case {
    /// Short name, for messages and the scratch folder.
    id: &'static str,
    /// Subcommand and arguments, e.g. `["fit", <run file>]`.
    args: Vec<String>,
    /// The file the message must name.
    file: PathBuf,
    /// The line the message must name as `file:line:` (`None`: the whole
    /// file is at fault, e.g. empty).
    line: Option<usize>,
    /// Fragments naming the field and the problem.
    fragments: &'static [&'static str],
}

fn table(
    id: &'static str,
    name: &str,
    instrument: Option<&str>,
    line: Option<usize>,
    fragments: &'static [&'static str],
) -> Case {
    let file = corpus("tables", name);
    let mut args = vec!["periodogram".to_string(), file.display().to_string()];
    if let Some(i) = instrument {
        args.push("--instrument".into());
        args.push(i.into());
    }
    Case {
        id,
        args,
        file,
        line,
        fragments,
    }
}

fn run(
    id: &'static str,
    sub: &str,
    name: &str,
    line: Option<usize>,
    fragments: &'static [&'static str],
) -> Case {
    let file = corpus("runs", name);
    Case {
        id,
        args: vec![sub.to_string(), file.display().to_string()],
        file,
        line,
        fragments,
    }
}

/// Scratch folder unique to this test process and case.
fn scratch(id: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("apsidal-cli-bad-{}-{id}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Files anywhere under `dir`.
fn files_under(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    if let Ok(rd) = std::fs::read_dir(dir) {
        for e in rd.flatten() {
            let p = e.path();
            if p.is_dir() {
                out.extend(files_under(&p));
            } else {
                out.push(p);
            }
        }
    }
    out
}

/// Run one case; return a description of every failed expectation.
fn run_case(c: &Case) -> Vec<String> {
    let dir = scratch(c.id);
    let out = dir.join("out");
    let result = Command::new(env!("CARGO_BIN_EXE_apsidal"))
        .args(&c.args)
        .arg("--out")
        .arg(&out)
        .current_dir(&dir)
        .output()
        .expect("the binary starts");
    let stderr = String::from_utf8_lossy(&result.stderr).to_string();
    let stdout = String::from_utf8_lossy(&result.stdout).to_string();
    let mut bad = Vec::new();
    let mut fail = |s: String| bad.push(format!("[{}] {s}\n    stderr: {stderr}", c.id));
    if result.status.code() != Some(2) {
        fail(format!("exit code {:?}, expected 2", result.status.code()));
    }
    if stderr.contains("panicked") || stderr.contains("RUST_BACKTRACE") {
        fail("panicked".into());
    }
    if !stdout.trim().is_empty() {
        fail(format!("stdout not empty: {stdout:?}"));
    }
    let name = c.file.display().to_string();
    let prefix = match c.line {
        Some(l) => format!("{name}:{l}:"),
        None => format!("{name}:"),
    };
    if !stderr.contains(&prefix) {
        fail(format!("message does not name {prefix:?}"));
    }
    for f in c.fragments {
        if !stderr.contains(f) {
            fail(format!("message lacks {f:?}"));
        }
    }
    let written = files_under(&dir);
    if !written.is_empty() {
        fail(format!("files written: {written:?}"));
    }
    let _ = std::fs::remove_dir_all(&dir);
    bad
}

fn check_all(cases: &[Case]) {
    let failures: Vec<String> = cases.iter().flat_map(run_case).collect();
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n")
    );
}

#[test]
fn broken_tables_through_periodogram() {
    let v = Some("VESKA");
    check_all(&[
        table(
            "t_columns",
            "wrong_column_count.txt",
            None,
            Some(5),
            &["extra column 5"],
        ),
        table(
            "t_missing_column",
            "missing_column.txt",
            None,
            Some(6),
            &["column 4 (instrument)"],
        ),
        table(
            "t_missing_value",
            "missing_value.csv",
            None,
            Some(3),
            &["column 2 (rv)"],
        ),
        table(
            "t_few_fields",
            "too_few_fields.txt",
            v,
            Some(1),
            &["column 3 (error)"],
        ),
        table(
            "t_text",
            "text_in_number.txt",
            v,
            Some(3),
            &["column 2 (rv)", "12.o2"],
        ),
        table("t_nan", "nan.txt", v, Some(7), &["column 3 (error)", "NaN"]),
        table(
            "t_inf",
            "inf.txt",
            v,
            Some(2),
            &["column 1 (time)", "infinite"],
        ),
        table(
            "t_overflow",
            "overflow.txt",
            v,
            Some(2),
            &["column 2 (rv)", "1e999"],
        ),
        table(
            "t_negative_error",
            "negative_error.txt",
            v,
            Some(3),
            &["column 3 (error)", "-1.75"],
        ),
        table(
            "t_zero_error",
            "zero_error.csv",
            v,
            Some(2),
            &["column 3 (error)", "found 0"],
        ),
        table(
            "t_duplicate",
            "duplicate_epoch.txt",
            None,
            Some(8),
            &["column 1 (time)", "VESKA"],
        ),
        table("t_empty", "empty.txt", v, None, &["no data"]),
        table("t_comments", "only_comments.txt", v, None, &["no data"]),
        table("t_header_only", "header_only.txt", v, None, &["no data"]),
        table("t_binary", "binary_garbage.bin", v, Some(1), &["UTF-8"]),
        table("t_utf8", "invalid_utf8.txt", v, Some(3), &["UTF-8"]),
        table("t_nul", "nul_bytes.txt", v, Some(3), &["U+0000"]),
        table("t_header", "header_mismatch.txt", v, Some(1), &["header"]),
        table(
            "t_instrument_mismatch",
            "instrument_mismatch.txt",
            v,
            Some(2),
            &["column 4 (instrument)", "MIRRAL"],
        ),
        table(
            "t_no_instrument",
            "no_instrument.txt",
            None,
            Some(1),
            &["column 4 (instrument)"],
        ),
    ]);
}

#[test]
fn broken_run_files_through_fit() {
    check_all(&[
        run(
            "r_unknown_key",
            "fit",
            "unknown_key.ron",
            Some(6),
            &["planets[0].inclinaton"],
        ),
        run(
            "r_wrong_type",
            "fit",
            "wrong_type.ron",
            Some(8),
            &["planets[1].period"],
        ),
        run(
            "r_missing",
            "fit",
            "missing_field.ron",
            Some(11),
            &["planets[0].eccentricity"],
        ),
        run(
            "r_variant",
            "fit",
            "unknown_variant.ron",
            Some(5),
            &["planets[0].signal"],
        ),
        run(
            "r_syntax",
            "fit",
            "syntax_error.ron",
            Some(6),
            &["planets[0].eccentricity"],
        ),
        run(
            "r_e_one",
            "fit",
            "eccentricity_one.ron",
            Some(11),
            &["planets[1].eccentricity", "[0, 1)"],
        ),
        run(
            "r_p_zero",
            "fit",
            "period_zero.ron",
            Some(6),
            &["planets[0].period", "> 0"],
        ),
        run(
            "r_p_negative",
            "fit",
            "period_negative.ron",
            Some(6),
            &["planets[1].period", "> 0"],
        ),
        run(
            "r_star_mass",
            "fit",
            "negative_star_mass.ron",
            Some(5),
            &["star.mass"],
        ),
        run(
            "r_planet_mass",
            "fit",
            "negative_planet_mass.ron",
            Some(8),
            &["planets[1].signal", "Jupiter masses"],
        ),
        run(
            "r_i_above",
            "fit",
            "inclination_above_180.ron",
            Some(7),
            &["planets[0].inclination", "[0, 180]"],
        ),
        run(
            "r_i_negative",
            "fit",
            "inclination_negative.ron",
            Some(8),
            &["planets[0].inclination", "[0, 180]"],
        ),
        run(
            "r_nan",
            "fit",
            "nan_value.ron",
            Some(6),
            &["planets[0].omega_star", "finite"],
        ),
        run(
            "r_inf",
            "fit",
            "infinite_value.ron",
            Some(5),
            &["planets[0].period", "finite"],
        ),
        run(
            "r_undeclared",
            "fit",
            "undeclared_instrument.ron",
            Some(4),
            &["data[1].instrument", "KESTRA"],
        ),
        run(
            "r_node",
            "fit",
            "node_difference_innermost.ron",
            Some(9),
            &["planets[1].node_difference"],
        ),
        run(
            "r_duplicate_planet",
            "fit",
            "duplicate_planet.ron",
            Some(7),
            &["planets[1].name"],
        ),
        run("r_not_utf8", "fit", "not_utf8.ron", Some(3), &["UTF-8"]),
        run("r_empty", "fit", "empty.ron", Some(1), &["RunFile"]),
        run("r_binary", "fit", "binary_garbage.ron", Some(1), &["UTF-8"]),
        run(
            "r_prior_bounds",
            "fit",
            "prior_bounds_reversed.ron",
            Some(11),
            &[
                "fit.priors[0].prior",
                "lower bound 50 is not below upper bound 30",
            ],
        ),
        run(
            "r_prior_instrument",
            "fit",
            "prior_unknown_instrument.ron",
            Some(12),
            &["fit.priors[1].parameter", "FOO.offset"],
        ),
        run(
            "r_prior_instrument_model",
            "fit",
            "prior_unknown_instrument_undeclared.ron",
            Some(10),
            &["fit.priors[0].parameter", "FOO.offset"],
        ),
    ]);
}

/// A table that uses an instrument the run file does not declare: the
/// message names the table (not the run file), its line and column.
#[test]
fn run_file_with_a_table_using_an_undeclared_instrument() {
    let mut c = run(
        "r_table_instrument",
        "fit",
        "table_undeclared_instrument.ron",
        Some(2),
        &["column 4 (instrument)", "KESTRA"],
    );
    c.file = corpus("runs", "../tables/unknown_instrument.txt");
    check_all(&[c]);
}

/// `sample` refuses the same inputs before it creates the output folder.
#[test]
fn broken_run_files_through_sample() {
    check_all(&[
        run(
            "s_e_one",
            "sample",
            "eccentricity_one.ron",
            Some(11),
            &["planets[1].eccentricity"],
        ),
        run(
            "s_prior_bounds",
            "sample",
            "prior_bounds_reversed.ron",
            Some(11),
            &["fit.priors[0].prior"],
        ),
        run(
            "s_prior_instrument_model",
            "sample",
            "prior_unknown_instrument_undeclared.ron",
            Some(10),
            &["fit.priors[0].parameter"],
        ),
    ]);
}

/// Bad command-line values: exit code 2 and nothing written.
#[test]
fn bad_arguments_exit_2() {
    for args in [
        vec!["fit"],
        vec!["sample", "x.ron", "--steps", "many"],
        vec!["frobnicate"],
        vec!["fit", "does-not-exist.ron"],
        vec!["periodogram", "does-not-exist.txt"],
    ] {
        let dir = scratch("args");
        let r = Command::new(env!("CARGO_BIN_EXE_apsidal"))
            .args(&args)
            .arg("--out")
            .arg(dir.join("out"))
            .current_dir(&dir)
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&r.stderr);
        assert_eq!(r.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
        assert!(files_under(&dir).is_empty(), "{args:?}");
        let _ = std::fs::remove_dir_all(&dir);
    }
}

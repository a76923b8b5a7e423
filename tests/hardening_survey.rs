//! Hardening of the stability survey through the binary: a survey killed
//! (SIGKILL) at several moments and resumed each time ends with the table
//! and summary of an uninterrupted run, byte for byte; after every kill the
//! table on disk is absent or whole (no torn row) and holds only rows of
//! the uninterrupted run; the journal of finished rows may end in a torn
//! line, which the resume drops. Stale temporary files of killed runs are
//! removed.

mod stability_support;

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use apsidal::fit::sample::Flow;
use apsidal::stability::run::RunSettings;
use apsidal::stability::survey::{
    SurveySettings, SurveyTable, journal_path, parse_samples_csv, run_survey,
};
use stability_support::{model, run_file, samples_csv, scratch};

const BIN: &str = env!("CARGO_BIN_EXE_apsidal");
const ROWS: usize = 24;
const ORBITS: &str = "3000";

fn survey_args<'a>(run: &'a str, csv: &'a str, out: &'a str) -> Vec<&'a str> {
    vec![
        "stability",
        run,
        "--samples",
        csv,
        "--orbits",
        ORBITS,
        "--threads",
        "2",
        "--quiet",
        "--out",
        out,
    ]
}

fn read_outputs(dir: &Path) -> Vec<Vec<u8>> {
    ["survey.csv", "survey-summary.ron", "survey-summary.json"]
        .iter()
        .map(|f| std::fs::read(dir.join(f)).unwrap())
        .collect()
}

/// Start a resumable survey into `out`, kill it with SIGKILL after `delay`.
/// Returns whether it was still running when killed.
fn start_and_kill(args: &[&str], delay: Duration) -> bool {
    let mut child = Command::new(BIN)
        .args(args)
        .arg("--resume")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let start = Instant::now();
    while start.elapsed() < delay {
        if child.try_wait().unwrap().is_some() {
            return false;
        }
        std::thread::sleep(Duration::from_millis(5));
    }
    let running = child.try_wait().unwrap().is_none();
    child.kill().unwrap();
    child.wait().unwrap();
    running
}

#[test]
fn killed_survey_resumes_to_the_same_table_and_summary() {
    let d = scratch("harden-kill");
    let csv = d.join("samples.csv");
    std::fs::write(&csv, samples_csv(&model(), ROWS)).unwrap();
    let run = run_file();
    let (run, csv) = (run.to_str().unwrap(), csv.to_str().unwrap());
    let whole = d.join("whole");
    let t0 = Instant::now();
    let o = Command::new(BIN)
        .args(survey_args(run, csv, whole.to_str().unwrap()))
        .output()
        .unwrap();
    let full_time = t0.elapsed();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let expected = read_outputs(&whole);
    let whole_table = SurveyTable::read(&whole.join("survey.csv")).unwrap();
    assert_eq!(whole_table.rows.len(), ROWS);
    assert!(!journal_path(&whole.join("survey.csv")).exists());

    let cut: PathBuf = d.join("cut");
    let cut_s = cut.to_str().unwrap().to_string();
    let args = survey_args(run, csv, &cut_s);
    let table = cut.join("survey.csv");
    let mut kills = 0;
    let mut rows_seen = Vec::new();
    // Kill the same (resumed) survey again and again, at growing delays.
    for frac in [0.1, 0.15, 0.2, 0.3, 0.3] {
        let delay = full_time.mul_f64(frac).max(Duration::from_millis(30));
        if !start_and_kill(&args, delay) {
            break;
        }
        kills += 1;
        // The table: absent, or whole, with rows of the uninterrupted run.
        let mut done = 0;
        if table.exists() {
            let text = std::fs::read_to_string(&table).unwrap();
            assert!(text.ends_with('\n'), "torn table");
            let t = SurveyTable::parse(&text, &table).expect("table left by SIGKILL parses");
            assert_eq!(t.header, whole_table.header);
            for (k, l) in &t.rows {
                assert_eq!(Some(l), whole_table.rows.get(k), "row {k}");
            }
            done += t.rows.len();
        }
        // The journal: complete lines of the uninterrupted run, except
        // perhaps a torn last one.
        let journal = journal_path(&table);
        if let Ok(text) = std::fs::read_to_string(&journal) {
            let whole_lines = text.rfind('\n').map_or("", |i| &text[..=i]);
            for l in whole_lines.lines().skip(1) {
                let k: usize = l.split(',').next().unwrap().parse().unwrap();
                assert_eq!(
                    Some(&l.to_string()),
                    whole_table.rows.get(&k),
                    "journal row {k}"
                );
            }
            done += whole_lines.lines().count().saturating_sub(1);
        }
        rows_seen.push(done);
    }
    println!("uninterrupted {full_time:?}; rows kept after each kill: {rows_seen:?}");
    assert!(kills >= 2, "only {kills} kills landed mid-run");
    // Finished rows are kept across kills: the work does not start over.
    assert!(
        rows_seen.iter().any(|&n| n > 0),
        "no finished row survived a kill: {rows_seen:?}"
    );
    let o = Command::new(BIN)
        .args(&args)
        .arg("--resume")
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(read_outputs(&cut) == expected, "resumed survey differs");
    assert!(!journal_path(&table).exists());
    let leftovers: Vec<String> = std::fs::read_dir(&cut)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
    let _ = std::fs::remove_dir_all(&d);
}

/// A kill leaves table rows, journal rows and a torn journal line; resume
/// keeps them all, runs only the others, and ends with the uninterrupted
/// table. A stale temporary file of a dead process is removed, one of a
/// live process (this one) is not.
#[test]
fn resume_takes_rows_from_the_journal_and_drops_a_torn_line() {
    let d = scratch("harden-journal");
    let m = model();
    let table = parse_samples_csv(&samples_csv(&m, 12), Path::new("synthetic.csv")).unwrap();
    let base = m.params.start_full();
    let s = SurveySettings {
        run: RunSettings {
            orbits: 300.0,
            ..RunSettings::default()
        },
        chunk: 4,
        ..SurveySettings::default()
    };
    let whole = d.join("whole.csv");
    run_survey(&m, &table, &base, &s, &whole, false, &|_| Flow::Continue).unwrap();
    let w = SurveyTable::read(&whole).unwrap();
    let lines: Vec<&String> = w.rows.values().collect();

    let out = d.join("cut.csv");
    let mut t = format!("{}\n", w.header);
    for l in &lines[..3] {
        t += &format!("{l}\n");
    }
    std::fs::write(&out, &t).unwrap();
    // Journal: one row also in the table, three new ones, a torn line.
    let mut j = format!("{}\n{}\n", w.header, lines[2]);
    for l in &lines[5..8] {
        j += &format!("{l}\n");
    }
    j += &lines[9][..lines[9].len() / 2];
    std::fs::write(journal_path(&out), &j).unwrap();
    // Stale temporaries: pid 4194305 is above Linux's largest pid (2^22).
    let stale = d.join(".cut.csv.4194305.0.tmp");
    let live = d.join(format!(".cut.csv.{}.999.tmp", std::process::id()));
    std::fs::write(&stale, "half").unwrap();
    std::fs::write(&live, "half").unwrap();

    let first = std::sync::atomic::AtomicUsize::new(usize::MAX);
    let r = run_survey(&m, &table, &base, &s, &out, true, &|p| {
        first.fetch_min(p.done, std::sync::atomic::Ordering::SeqCst);
        Flow::Continue
    })
    .unwrap();
    assert!(r.complete);
    // 3 table rows + 3 new journal rows were kept: the first row run is the 7th.
    assert_eq!(first.into_inner(), 7);
    assert_eq!(std::fs::read(&out).unwrap(), std::fs::read(&whole).unwrap());
    assert!(!journal_path(&out).exists());
    if Path::new("/proc/self").exists() {
        assert!(!stale.exists(), "stale temporary file left");
    }
    assert!(live.exists(), "a live process's temporary file was removed");

    // A journal line that disagrees with the table is refused, not mixed in.
    std::fs::write(&out, &t).unwrap();
    let bad =
        lines[1]
            .replacen(",stable,", ",ejection,", 1)
            .replacen(",close-encounter,", ",stable,", 1);
    std::fs::write(journal_path(&out), format!("{}\n{bad}\n", w.header)).unwrap();
    let r = run_survey(&m, &table, &base, &s, &out, true, &|_| Flow::Continue);
    assert!(r.is_err(), "{r:?}");
    let _ = std::fs::remove_dir_all(&d);
}

//! Stability surveys: determinism whatever the thread count, sharding and
//! merge byte for byte, resume after an interruption, the samples-table
//! parser's errors, and the Clopper–Pearson interval against SciPy
//! (tests/fixtures/binomial_ci.py → binomial_ci.json, SciPy's
//! `binomtest(k, n).proportion_ci(method='exact')`).

mod stability_support;

use std::path::Path;

use apsidal::fit::sample::Flow;
use apsidal::stability::run::RunSettings;
use apsidal::stability::survey::{
    Shard, SurveyError, SurveySettings, clopper_pearson, merge_tables, parse_samples_csv,
    run_survey, select_rows, shard_rows,
};
use stability_support::{model, samples_csv, scratch};

fn settings() -> SurveySettings {
    SurveySettings {
        run: RunSettings {
            orbits: 300.0,
            ..RunSettings::default()
        },
        chunk: 4,
        ..SurveySettings::default()
    }
}

const N: usize = 18;

fn survey_in_pool(threads: usize, s: &SurveySettings, out: &Path) -> String {
    let m = model();
    let table = parse_samples_csv(&samples_csv(&m, N), Path::new("synthetic.csv")).unwrap();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    pool.install(|| {
        run_survey(&m, &table, &m.params.start_full(), s, out, false, &|_| {
            Flow::Continue
        })
        .unwrap()
    });
    std::fs::read_to_string(out).unwrap()
}

#[test]
fn same_table_with_one_and_two_threads_and_sharded_merge_equals_whole() {
    let d = scratch("threads");
    let one = survey_in_pool(1, &settings(), &d.join("one.csv"));
    let two = survey_in_pool(2, &settings(), &d.join("two.csv"));
    assert_eq!(one, two);
    let lines: Vec<&str> = one.lines().collect();
    assert_eq!(lines.len(), N + 1);
    // The sweep crosses from unstable (outer period near the inner's) to
    // stable: both verdicts must occur.
    assert!(one.contains(",stable,") && one.contains(",close-encounter,"));
    println!("{one}");
    let mut paths = Vec::new();
    for k in 0..3 {
        let s = SurveySettings {
            shard: Shard { index: k, count: 3 },
            ..settings()
        };
        let p = d.join(format!("shard{k}.csv"));
        let t = survey_in_pool(2, &s, &p);
        assert_eq!(t.lines().count(), N / 3 + 1);
        paths.push(p);
    }
    let merged = merge_tables(&paths).unwrap().to_csv();
    assert_eq!(merged.as_bytes(), one.as_bytes());
    // A shard missing makes a smaller table, never a wrong one.
    assert_eq!(merge_tables(&paths[..2]).unwrap().rows.len(), 2 * N / 3);
}

#[test]
fn resume_after_interruption_equals_an_uninterrupted_survey() {
    let d = scratch("resume");
    let m = model();
    let table = parse_samples_csv(&samples_csv(&m, N), Path::new("synthetic.csv")).unwrap();
    let base = m.params.start_full();
    let whole = d.join("whole.csv");
    let s = settings();
    let full = run_survey(&m, &table, &base, &s, &whole, false, &|_| Flow::Continue).unwrap();
    assert!(full.complete);
    let out = d.join("part.csv");
    // Interrupt: stop once 5 rows are done (the chunk of 4 in flight ends).
    let part = run_survey(&m, &table, &base, &s, &out, false, &|p| {
        if p.done >= 5 {
            Flow::Stop
        } else {
            Flow::Continue
        }
    })
    .unwrap();
    assert!(!part.complete);
    let partial = std::fs::read_to_string(&out).unwrap();
    assert!(partial.lines().count() < N + 1 && partial.lines().count() > 1);
    let seen = std::sync::atomic::AtomicUsize::new(usize::MAX);
    let resumed = run_survey(&m, &table, &base, &s, &out, true, &|p| {
        seen.fetch_min(p.done, std::sync::atomic::Ordering::SeqCst);
        Flow::Continue
    })
    .unwrap();
    assert!(resumed.complete);
    // The resumed run started from the rows already done.
    assert!(seen.into_inner() > partial.lines().count() - 1);
    assert_eq!(std::fs::read(&out).unwrap(), std::fs::read(&whole).unwrap());
    assert_eq!(resumed, full);
    // Resuming with another selection is refused.
    let other = SurveySettings {
        max_samples: Some(5),
        seed: 99,
        ..s
    };
    std::fs::write(&out, &partial).unwrap();
    let r = run_survey(&m, &table, &base, &other, &out, true, &|_| Flow::Continue);
    assert!(matches!(r, Err(SurveyError::Mismatch { .. })), "{r:?}");
}

#[test]
fn subsampling_is_seeded_and_shards_partition_it() {
    let a = select_rows(1000, Some(37), 5);
    assert_eq!(a, select_rows(1000, Some(37), 5));
    assert_ne!(a, select_rows(1000, Some(37), 6));
    assert_eq!(a.len(), 37);
    assert!(a.windows(2).all(|w| w[0] < w[1]));
    let mut all: Vec<usize> = (0..4)
        .flat_map(|k| shard_rows(&a, Shard { index: k, count: 4 }))
        .collect();
    all.sort_unstable();
    assert_eq!(all, a);
    assert_eq!(select_rows(10, Some(50), 1), (0..10).collect::<Vec<_>>());
    assert!("3/3".parse::<Shard>().is_err());
    assert!("x/3".parse::<Shard>().is_err());
    assert_eq!(
        "2/3".parse::<Shard>().unwrap(),
        Shard { index: 2, count: 3 }
    );
}

#[test]
fn samples_parser_names_line_and_column() {
    let p = Path::new("s.csv");
    let e = parse_samples_csv("walker,step,ln_prob,b.period\n0,0,-1,41.3\n1,0,-2,abc\n", p)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("s.csv:3") && e.contains("column 4") && e.contains("b.period"),
        "{e}"
    );
    let e = parse_samples_csv("walker,step,ln_prob,b.period\n0,0,-1\n", p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("s.csv:2") && e.contains("3 fields"), "{e}");
    let e = parse_samples_csv("walk,step,ln_prob\n", p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("s.csv:1") && e.contains("column 1"), "{e}");
    let e = parse_samples_csv("walker,step,ln_prob,x\n-1,0,0,1\n", p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("column 1") && e.contains("walker"), "{e}");
    let e = parse_samples_csv("walker,step,ln_prob,x\n0,0,0,NaN\n", p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("finite"), "{e}");
    // A samples table without a free parameter's column is refused by name.
    let m = model();
    let t = parse_samples_csv("walker,step,ln_prob,b.period\n0,0,-1,41.3\n", p).unwrap();
    let r = apsidal::stability::survey::parameter_vectors(&m, &t, &m.params.start_full());
    assert!(matches!(r, Err(SurveyError::MissingColumn { .. })));
}

#[test]
fn clopper_pearson_matches_scipy() {
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/binomial_ci.json"),
    )
    .unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    let cases = v["cases"].as_array().unwrap();
    assert!(cases.len() >= 9);
    for c in cases {
        let (k, n, cl) = (
            c["k"].as_u64().unwrap(),
            c["n"].as_u64().unwrap(),
            c["confidence"].as_f64().unwrap(),
        );
        let ci = clopper_pearson(k, n, cl).unwrap();
        let (lo, hi) = (c["lower"].as_f64().unwrap(), c["upper"].as_f64().unwrap());
        assert!(
            (ci.lower - lo).abs() <= 1e-10 + 1e-9 * lo,
            "{k}/{n}: {} vs {lo}",
            ci.lower
        );
        assert!(
            (ci.upper - hi).abs() <= 1e-10 + 1e-9 * hi,
            "{k}/{n}: {} vs {hi}",
            ci.upper
        );
    }
    assert!(clopper_pearson(3, 2, 0.95).is_err());
    assert!(clopper_pearson(1, 2, 1.0).is_err());
    let e = clopper_pearson(0, 0, 0.95).unwrap();
    assert_eq!((e.lower, e.upper), (0.0, 1.0));
}

//! Files written by the sampler: the atomic writer (a reader sees the old or
//! the new content, never a partial file; no temporary files remain) and
//! the samples CSV (round-trips the chain's numbers exactly).

use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

use apsidal::atomic::write_atomic;
use apsidal::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, Derived, EnsembleSampler, LogTarget, SampleError, gaussian_ball,
    write_samples_csv,
};
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;

fn scratch_dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("apsidal-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn entries(dir: &std::path::Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    v.sort();
    v
}

#[test]
fn concurrent_reader_sees_old_or_new_file_never_partial() {
    let dir = scratch_dir("atomic");
    let path = dir.join("table.txt");
    // Two versions of different lengths and contents (1 MiB and 3 MiB): a
    // torn or truncated read would match neither.
    let old = vec![b'a'; 1 << 20];
    let new = vec![b'b'; 3 << 20];
    write_atomic(&path, &old).unwrap();

    let done = Arc::new(AtomicBool::new(false));
    let reader = {
        let (path, done, old, new) = (path.clone(), done.clone(), old.clone(), new.clone());
        std::thread::spawn(move || {
            let mut reads = 0usize;
            while !done.load(Ordering::Acquire) || reads == 0 {
                let got = std::fs::read(&path).unwrap();
                assert!(
                    got == old || got == new,
                    "partial file of {} bytes",
                    got.len()
                );
                reads += 1;
            }
            reads
        })
    };
    for i in 0..40 {
        write_atomic(&path, if i % 2 == 0 { &new } else { &old }).unwrap();
    }
    write_atomic(&path, &new).unwrap();
    done.store(true, Ordering::Release);
    let reads = reader.join().unwrap();
    println!("reader made {reads} complete reads during 41 replacements");
    assert_eq!(std::fs::read(&path).unwrap(), new);
    assert_eq!(entries(&dir), vec!["table.txt".to_string()]);
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn failed_write_leaves_old_state_and_no_temporary_file() {
    let dir = scratch_dir("atomic-fail");
    // The target is a non-empty folder: the final rename must fail.
    let target = dir.join("occupied");
    std::fs::create_dir(&target).unwrap();
    std::fs::write(target.join("keep.txt"), b"keep").unwrap();
    assert!(write_atomic(&target, b"new").is_err());
    assert_eq!(std::fs::read(target.join("keep.txt")).unwrap(), b"keep");
    assert_eq!(entries(&dir), vec!["occupied".to_string()]);
    // A missing folder is an error too.
    assert!(write_atomic(&dir.join("missing").join("x.txt"), b"x").is_err());
    assert_eq!(entries(&dir), vec!["occupied".to_string()]);
    std::fs::remove_dir_all(&dir).unwrap();
}

struct Bowl;
impl LogTarget for Bowl {
    fn ln_prob(&self, x: &[f64]) -> f64 {
        -0.5 * (x[0] * x[0] + (x[1] - 2.0).powi(2) / 4.0)
    }
}

fn short_run() -> EnsembleSampler {
    let mut rng = ChaCha20Rng::seed_from_u64(3);
    let w = gaussian_ball(
        &Bowl,
        &[0.0, 2.0],
        &Ball::Diagonal(vec![0.1, 0.1]),
        8,
        5,
        &mut rng,
    )
    .unwrap();
    let mut s = EnsembleSampler::new(w, DEFAULT_STRETCH_SCALE, 9).unwrap();
    s.run(&Bowl, 30, &mut []).unwrap();
    s
}

#[test]
fn samples_csv_round_trips_with_burn_in_thinning_and_derived_columns() {
    let s = short_run();
    let samples = s.chain().samples(10, 4).unwrap();
    // Steps 11, 15, 19, 23, 27 are kept (1-based), 8 walkers each.
    assert_eq!(samples.len(), 5 * 8);
    assert_eq!(samples.step[0], 11);
    assert_eq!(*samples.step.last().unwrap(), 27);

    let dir = scratch_dir("csv");
    let path = dir.join("samples.csv");
    let sum = |p: &[f64], out: &mut [f64]| out[0] = p[0] + p[1];
    write_samples_csv(
        &path,
        &["alpha", "beta"],
        &samples,
        Some(Derived {
            names: &["alpha_plus_beta"],
            compute: &sum,
        }),
    )
    .unwrap();
    let text = std::fs::read_to_string(&path).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap(),
        "walker,step,ln_prob,alpha,beta,alpha_plus_beta"
    );
    let mut n = 0;
    for (i, line) in lines.enumerate() {
        let f: Vec<&str> = line.split(',').collect();
        assert_eq!(f.len(), 6);
        let walker: usize = f[0].parse().unwrap();
        let step: usize = f[1].parse().unwrap();
        assert_eq!((walker, step), (samples.walker[i], samples.step[i]));
        // Exact round trip of every number, checked against the chain.
        let p = s.chain().position(step - 1, walker);
        assert_eq!(
            f[2].parse::<f64>().unwrap().to_bits(),
            s.chain().ln_prob(step - 1, walker).to_bits()
        );
        assert_eq!(f[3].parse::<f64>().unwrap().to_bits(), p[0].to_bits());
        assert_eq!(f[4].parse::<f64>().unwrap().to_bits(), p[1].to_bits());
        assert_eq!(
            f[5].parse::<f64>().unwrap().to_bits(),
            (p[0] + p[1]).to_bits()
        );
        n += 1;
    }
    assert_eq!(n, samples.len());

    // Errors: non-finite derived value (file untouched), bad names, no rows.
    let bad = |_: &[f64], out: &mut [f64]| out[0] = f64::NAN;
    let other = dir.join("other.csv");
    assert!(matches!(
        write_samples_csv(
            &other,
            &["a", "b"],
            &samples,
            Some(Derived {
                names: &["m"],
                compute: &bad
            })
        ),
        Err(SampleError::NonFiniteDerived { row: 0, .. })
    ));
    assert!(!other.exists());
    assert!(matches!(
        write_samples_csv(&other, &["a,b", "c"], &samples, None),
        Err(SampleError::BadColumnName(_))
    ));
    assert!(matches!(
        write_samples_csv(&other, &["a"], &samples, None),
        Err(SampleError::ShapeMismatch { .. })
    ));
    assert!(matches!(
        s.chain().samples(30, 1),
        Err(SampleError::NoSamples { .. })
    ));
    assert!(matches!(
        s.chain().samples(0, 0),
        Err(SampleError::NoSamples { .. })
    ));
    assert_eq!(entries(&dir), vec!["samples.csv".to_string()]);
    std::fs::remove_dir_all(&dir).unwrap();
}

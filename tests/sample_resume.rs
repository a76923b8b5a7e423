//! Reproducibility of the ensemble sampler: checkpoint + resume equals an
//! uninterrupted run bit for bit, and 1 and 2 threads give the same chain.
//! (Reference: the uninterrupted, single-threaded run itself.)

use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};

use apsidal::fit::sample::{
    Ball, Checkpointer, DEFAULT_STRETCH_SCALE, EnsembleSampler, Flow, LogTarget, Observer,
    SampleError, gaussian_ball,
};
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;

/// A correlated 4-D Gaussian truncated to x₀ > 0 (−∞ elsewhere), so that
/// runs contain rejections of impossible points. The counter of impossible
/// calls does not influence the value.
struct HalfGaussian;

static IMPOSSIBLE_CALLS: AtomicUsize = AtomicUsize::new(0);

impl LogTarget for HalfGaussian {
    fn ln_prob(&self, x: &[f64]) -> f64 {
        if x[0] <= 0.0 {
            IMPOSSIBLE_CALLS.fetch_add(1, Ordering::Relaxed);
            return f64::NEG_INFINITY;
        }
        let u = x[1] - 0.8 * x[0];
        -0.5 * (x[0] * x[0] + u * u / 0.36 + (x[2] / 3.0).powi(2) + (x[3] - 1.0).powi(2) * 100.0)
    }
}

fn start(seed: u64) -> EnsembleSampler {
    let mut rng = ChaCha20Rng::seed_from_u64(seed);
    let walkers = gaussian_ball(
        &HalfGaussian,
        &[0.5, 0.4, 0.0, 1.0],
        &Ball::Diagonal(vec![0.3, 0.3, 0.3, 0.03]),
        12,
        20,
        &mut rng,
    )
    .unwrap();
    EnsembleSampler::new(walkers, DEFAULT_STRETCH_SCALE, seed ^ 0xabcdef).unwrap()
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

fn assert_same(a: &EnsembleSampler, b: &EnsembleSampler) {
    assert_eq!(a.steps_done(), b.steps_done());
    assert_eq!(
        bits(a.chain().positions_flat()),
        bits(b.chain().positions_flat())
    );
    assert_eq!(
        bits(a.chain().ln_probs_flat()),
        bits(b.chain().ln_probs_flat())
    );
    assert_eq!(bits(a.positions()), bits(b.positions()));
    assert_eq!(bits(a.ln_probs()), bits(b.ln_probs()));
    assert_eq!(a.accepted(), b.accepted());
    // Same text means the same random-stream position too.
    assert_eq!(
        a.checkpoint_string().unwrap(),
        b.checkpoint_string().unwrap()
    );
}

fn scratch_dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("apsidal-{name}-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Stops the run after a fixed total step count (an "interruption").
struct StopAt(u64);
impl Observer for StopAt {
    fn observe(&mut self, s: &EnsembleSampler) -> Result<Flow, SampleError> {
        Ok(if s.steps_done() >= self.0 {
            Flow::Stop
        } else {
            Flow::Continue
        })
    }
}

#[test]
fn checkpoint_and_resume_equals_uninterrupted_run() {
    let mut whole = start(11);
    whole.run(&HalfGaussian, 200, &mut []).unwrap();
    let acc = whole.overall_acceptance();
    println!("uninterrupted: 200 steps, acceptance {acc:.3}");
    assert!(acc > 0.0 && acc < 1.0);
    // The truncation was hit, and no impossible state was ever accepted.
    assert!(IMPOSSIBLE_CALLS.load(Ordering::Relaxed) > 0);
    assert!(whole.chain().ln_probs_flat().iter().all(|l| l.is_finite()));

    let dir = scratch_dir("resume");
    let path = dir.join("state.ron");
    {
        let mut first = start(11);
        let mut ck = Checkpointer::new(&path, 40);
        let mut stop = StopAt(120);
        let end = first
            .run(&HalfGaussian, 1000, &mut [&mut ck, &mut stop])
            .unwrap();
        assert_eq!(end.steps_taken, 120);
        assert!(end.stopped_by_observer);
        assert_eq!(ck.written(), 3);
        // `first` is dropped here: only the file survives.
    }
    let mut resumed = EnsembleSampler::load_checkpoint(&path).unwrap();
    assert_eq!(resumed.steps_done(), 120);
    resumed.run(&HalfGaussian, 80, &mut []).unwrap();
    assert_same(&whole, &resumed);

    // Only the checkpoint's two files are in the folder (no temporary files).
    let mut names: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    names.sort();
    assert_eq!(
        names,
        vec![
            std::ffi::OsString::from("state.chain"),
            std::ffi::OsString::from("state.ron")
        ]
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// The chain file grows by one line per step and the state stays small;
/// a kill after the chain append (extra lines, a torn line) or a state
/// from another run never corrupts a resume.
#[test]
fn chain_file_is_append_only_and_cut_back_to_the_state() {
    let mut whole = start(31);
    whole.run(&HalfGaussian, 60, &mut []).unwrap();

    let dir = scratch_dir("append");
    let path = dir.join("ck.ron");
    let chain = apsidal::fit::sample::chain_path_for(&path);
    assert_eq!(chain, dir.join("ck.chain"));
    let mut s = start(31);
    let mut ck = Checkpointer::new(&path, 10);
    let mut stop = StopAt(20);
    s.run(&HalfGaussian, 100, &mut [&mut ck, &mut stop])
        .unwrap();
    let state_20 = std::fs::metadata(&path).unwrap().len();
    let chain_20 = std::fs::read_to_string(&chain).unwrap();
    assert_eq!(chain_20.lines().count(), 21, "header + one line per step");
    let mut stop = StopAt(40);
    s.run(&HalfGaussian, 100, &mut [&mut ck, &mut stop])
        .unwrap();
    let chain_40 = std::fs::read_to_string(&chain).unwrap();
    // Append-only: the first 20 steps are untouched.
    assert!(chain_40.starts_with(&chain_20));
    assert_eq!(chain_40.lines().count(), 41);
    // The state does not grow with the chain.
    // (The same fields; only the digits of the numbers differ.)
    let state_40_len = std::fs::metadata(&path).unwrap().len();
    assert!(
        state_40_len.abs_diff(state_20) * 20 < state_20,
        "{state_20} → {state_40_len} bytes"
    );

    // A kill after appending steps 41–43 and half of 44, before the state
    // was replaced: the state (40 steps) rules, the extra bytes are cut.
    let state_40 = std::fs::read(&path).unwrap();
    let mut later = s.clone();
    later.run(&HalfGaussian, 4, &mut []).unwrap();
    later.save_checkpoint(&path).unwrap();
    let chain_44 = std::fs::read_to_string(&chain).unwrap();
    let torn = &chain_44[..chain_44.len() - 40];
    std::fs::write(&chain, torn).unwrap();
    std::fs::write(&path, &state_40).unwrap();
    let mut resumed = EnsembleSampler::load_checkpoint(&path).unwrap();
    assert_eq!(resumed.steps_done(), 40);
    assert_eq!(std::fs::read_to_string(&chain).unwrap(), chain_40);
    // Resume with checkpoints: the chain file ends as the uninterrupted one.
    let mut ck = Checkpointer::new(&path, 10);
    resumed.run(&HalfGaussian, 20, &mut [&mut ck]).unwrap();
    assert_same(&whole, &resumed);
    assert_same(&whole, &EnsembleSampler::load_checkpoint(&path).unwrap());

    // A fresh run of another seed over these files rewrites the chain
    // (no rows of the old run are kept) and reads back as itself.
    let mut other = start(32);
    other.run(&HalfGaussian, 10, &mut []).unwrap();
    other.save_checkpoint(&path).unwrap();
    assert_eq!(std::fs::read_to_string(&chain).unwrap().lines().count(), 11);
    assert_same(&other, &EnsembleSampler::load_checkpoint(&path).unwrap());

    // A chain shorter than the state vouches for, or of another run, is a
    // typed error, never a silently different chain.
    std::fs::write(&chain, &chain_20).unwrap();
    assert!(matches!(
        EnsembleSampler::load_checkpoint(&path),
        Err(SampleError::BadCheckpoint(_))
    ));
    std::fs::write(&chain, &chain_40).unwrap();
    assert!(matches!(
        EnsembleSampler::load_checkpoint(&path),
        Err(SampleError::BadCheckpoint(_))
    ));
    std::fs::remove_file(&chain).unwrap();
    assert!(matches!(
        EnsembleSampler::load_checkpoint(&path),
        Err(SampleError::ChainFile { .. })
    ));
    // The single-string form (format 1) still loads from a file.
    std::fs::write(&path, whole.checkpoint_string().unwrap()).unwrap();
    assert_same(&whole, &EnsembleSampler::load_checkpoint(&path).unwrap());
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn one_and_two_threads_give_identical_chains() {
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| {
            assert_eq!(rayon::current_num_threads(), threads);
            let mut s = start(23);
            s.run(&HalfGaussian, 150, &mut []).unwrap();
            s
        })
    };
    let one = run(1);
    let two = run(2);
    assert_same(&one, &two);
}

#[test]
fn different_seeds_give_different_chains() {
    // Guards the two tests above against a sampler that ignores its seed.
    let mut a = start(1);
    let mut b = start(2);
    a.run(&HalfGaussian, 10, &mut []).unwrap();
    b.run(&HalfGaussian, 10, &mut []).unwrap();
    assert_ne!(
        bits(a.chain().positions_flat()),
        bits(b.chain().positions_flat())
    );
}

#[test]
fn damaged_checkpoints_are_typed_errors() {
    let mut s = start(5);
    s.run(&HalfGaussian, 3, &mut []).unwrap();
    let text = s.checkpoint_string().unwrap();
    assert!(matches!(
        EnsembleSampler::from_checkpoint_str(&text[..text.len() / 2]),
        Err(SampleError::Format(_))
    ));
    let wrong = text.replacen("steps_done:3", "steps_done:4", 1);
    assert_ne!(wrong, text, "checkpoint layout changed: update this test");
    assert!(matches!(
        EnsembleSampler::from_checkpoint_str(&wrong),
        Err(SampleError::BadCheckpoint(_))
    ));
    assert!(matches!(
        EnsembleSampler::load_checkpoint(std::path::Path::new("/nonexistent/apsidal/state.ron")),
        Err(SampleError::Read { .. })
    ));
}

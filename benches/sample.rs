//! Ensemble-sampler throughput: steps per second for 32 walkers on a cheap
//! 10-D Gaussian and on an artificial target costing about 0.5 ms per call,
//! with 1 and 2 rayon threads. The parallel efficiency is
//! t(1 thread) / (2 · t(2 threads)) from the same run; the sampler's own
//! overhead on the costly target is t(1 thread) / (steps · 32 · t(call)).
//!
//! `sample_checkpoint`: the cost of one checkpoint written 50 steps after
//! the previous one, with 100 and with 4000 steps in the chain (32 walkers,
//! 10 parameters), for the two-file layout (`append`) and for the old
//! single-file layout that rewrote the whole chain (`whole`, the RON text
//! of `checkpoint_string` written atomically). The ratio 4000/100 of
//! `append` shows whether the cost grows with the chain.

use std::hint::black_box;
use std::time::Duration;

use apsidal::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, EnsembleSampler, LogTarget, gaussian_ball,
};
use criterion::{BatchSize, Criterion, Throughput, criterion_group, criterion_main};
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;

const D: usize = 10;
const WALKERS: usize = 32;

/// A correlated 10-D Gaussian with a fixed tridiagonal precision matrix.
struct Cheap;
impl LogTarget for Cheap {
    fn ln_prob(&self, x: &[f64]) -> f64 {
        let mut q = 0.0;
        for i in 0..D {
            q += 2.0 * x[i] * x[i];
            if i + 1 < D {
                q -= 1.8 * x[i] * x[i + 1];
            }
        }
        -0.5 * q
    }
}

/// The cheap Gaussian plus a fixed amount of busy work (`spins` sine
/// evaluations), standing in for an N-body likelihood.
struct Costly {
    spins: usize,
}
impl LogTarget for Costly {
    fn ln_prob(&self, x: &[f64]) -> f64 {
        let mut acc = 0.0;
        for i in 0..self.spins {
            acc += (x[i % D] + i as f64 * 1e-7).sin();
        }
        Cheap.ln_prob(x) + 1e-300 * black_box(acc)
    }
}

/// Sine evaluations per costly call: about 0.5 ms on the development
/// machine (≈ 10 ns each, measured when it was lightly loaded). The work is
/// fixed rather than calibrated by wall time, because on a shared machine
/// wall time measures the load; the `call` benchmark measures one call in
/// the same run, so step times can be compared with 32 × t(call).
const COSTLY_SPINS: usize = 50_000;

fn sampler<T: LogTarget>(t: &T) -> EnsembleSampler {
    let mut rng = ChaCha20Rng::seed_from_u64(1);
    let w = gaussian_ball(
        t,
        &[0.0; D],
        &Ball::Diagonal(vec![0.5; D]),
        WALKERS,
        10,
        &mut rng,
    )
    .expect("start");
    EnsembleSampler::new(w, DEFAULT_STRETCH_SCALE, 2).expect("sampler")
}

fn bench_target<T: LogTarget>(c: &mut Criterion, name: &str, t: &T, steps: usize, samples: usize) {
    let mut group = c.benchmark_group(format!("sample_{name}"));
    group.sample_size(samples);
    group.throughput(Throughput::Elements(steps as u64));
    let start = sampler(t);
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool");
        group.bench_function(format!("{threads}_thread"), |b| {
            b.iter_batched(
                || start.clone(),
                |mut s| {
                    pool.install(|| {
                        for _ in 0..steps {
                            s.step(t);
                        }
                    });
                    s
                },
                BatchSize::SmallInput,
            )
        });
    }
    group.finish();
}

fn bench_checkpoint(c: &mut Criterion) {
    let dir = std::env::temp_dir().join(format!("apsidal-bench-ck-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    let mut group = c.benchmark_group("sample_checkpoint");
    group.sample_size(20);
    for steps in [100usize, 4000] {
        let mut s = sampler(&Cheap);
        s.run(&Cheap, steps - 50, &mut []).expect("run");
        let path = dir.join(format!("ck{steps}.ron"));
        let chain = apsidal::fit::sample::chain_path_for(&path);
        s.save_checkpoint(&path).expect("checkpoint");
        let (state_before, chain_len) = (
            std::fs::read(&path).expect("state"),
            std::fs::metadata(&chain).expect("chain").len(),
        );
        s.run(&Cheap, 50, &mut []).expect("run");
        group.bench_function(format!("append_{steps}_steps"), |b| {
            b.iter_batched(
                || {
                    // Back to the checkpoint 50 steps ago.
                    std::fs::write(&path, &state_before).expect("state");
                    let f = std::fs::OpenOptions::new()
                        .write(true)
                        .open(&chain)
                        .expect("chain");
                    f.set_len(chain_len).expect("cut");
                },
                |()| s.save_checkpoint(&path).expect("checkpoint"),
                BatchSize::PerIteration,
            )
        });
        let whole = dir.join(format!("whole{steps}.ron"));
        group.bench_function(format!("whole_{steps}_steps"), |b| {
            b.iter(|| {
                let text = s.checkpoint_string().expect("text");
                apsidal::atomic::write_atomic(&whole, text.as_bytes()).expect("write");
            })
        });
    }
    group.finish();
    let _ = std::fs::remove_dir_all(&dir);
}

fn benches(c: &mut Criterion) {
    bench_checkpoint(c);
    bench_target(c, "gauss10", &Cheap, 100, 30);
    let costly = Costly {
        spins: COSTLY_SPINS,
    };
    let x = [0.1; D];
    c.benchmark_group("sample_costly_call")
        .sample_size(50)
        .bench_function("one_call", |b| b.iter(|| costly.ln_prob(black_box(&x))));
    bench_target(c, "costly", &costly, 5, 10);
}

criterion_group! {
    name = sample;
    config = Criterion::default()
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(4));
    targets = benches
}
criterion_main!(sample);

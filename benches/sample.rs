//! Ensemble-sampler throughput: steps per second for 32 walkers on a cheap
//! 10-D Gaussian and on an artificial target costing about 0.5 ms per call,
//! with 1 and 2 rayon threads. The parallel efficiency is
//! t(1 thread) / (2 · t(2 threads)) from the same run.

use std::hint::black_box;
use std::time::{Duration, Instant};

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

/// Shortest time of `reps` rounds of 5 calls (the minimum is the least
/// disturbed by other load on a shared machine).
fn min_call_time(c: &Costly, reps: usize) -> f64 {
    let x = [0.1; D];
    (0..reps)
        .map(|_| {
            let t0 = Instant::now();
            for _ in 0..5 {
                black_box(c.ln_prob(black_box(&x)));
            }
            t0.elapsed().as_secs_f64() / 5.0
        })
        .fold(f64::INFINITY, f64::min)
}

/// Chooses `spins` so that one call takes about `target` on this machine.
fn calibrate(target: Duration) -> Costly {
    let probe = Costly { spins: 100_000 };
    let per_spin = min_call_time(&probe, 10) / probe.spins as f64;
    let spins = (target.as_secs_f64() / per_spin).round() as usize;
    let c = Costly { spins };
    eprintln!(
        "costly target: {spins} spins, {:.3} ms per call (fastest of 10 rounds)",
        min_call_time(&c, 10) * 1e3
    );
    c
}

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

fn benches(c: &mut Criterion) {
    bench_target(c, "gauss10", &Cheap, 100, 30);
    let costly = calibrate(Duration::from_micros(500));
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

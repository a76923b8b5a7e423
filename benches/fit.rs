//! Fitting throughput on the injection dataset (tests/injection_support)
//! at the benchmark size, 400 epochs over 4000 d: ln L evaluations per
//! second for the Keplerian and the dynamical (Wisdom–Holman, default step)
//! model; ensemble-sampler steps (32 walkers) on the dynamical posterior
//! with 1 and 2 rayon threads (parallel efficiency t₁ / (2 t₂) from the
//! same run); and the wall time of the dynamical fit from the Keplerian
//! solution, timed once in the setup and printed (one fit is too long for
//! repeated sampling).

use std::hint::black_box;
use std::time::{Duration, Instant};

#[path = "../tests/injection_support/mod.rs"]
mod inj;

use apsidal::fit::best_fit::{FitResult, FitSettings, fit_model};
use apsidal::fit::models::{ModelKind, Observations, RvModel, TrendKind, default_parameters};
use apsidal::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, EnsembleSampler, LogTarget, gaussian_ball,
};
use criterion::{BatchSize, Criterion, Throughput, criterion_group, criterion_main};
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;

fn model_of(kind: ModelKind, obs: &Observations) -> RvModel {
    let params = default_parameters(kind, &inj::guesses(0.003, 0.15, 10.0), obs, TrendKind::None)
        .expect("parameters");
    RvModel::new(
        obs.clone(),
        kind,
        inj::STAR_MASS,
        inj::T_REF,
        &inj::planet_names(),
        TrendKind::None,
        params,
    )
    .expect("model")
}

fn start_from(model: &RvModel, prev: &FitResult) -> Vec<f64> {
    let mut s = model.params.start_full();
    for (n, &v) in prev.names.iter().zip(&prev.values) {
        if let Some(i) = model.params.index_of(n) {
            s[i] = v;
        }
    }
    s
}

struct Posterior<'a>(&'a RvModel);
impl LogTarget for Posterior<'_> {
    fn ln_prob(&self, u: &[f64]) -> f64 {
        self.0.ln_posterior_unconstrained(u)
    }
}

fn bench_fit(c: &mut Criterion) {
    let obs = inj::synthetic(20_260, 400, 4000.0);
    let km = model_of(ModelKind::Keplerian, &obs);
    let dm = model_of(ModelKind::CoplanarEdgeOn, &obs);

    // The fits, timed once.
    let t0 = Instant::now();
    let kf = fit_model(&km, &[km.params.start_full()], &FitSettings::default()).expect("fit");
    let t_kep = t0.elapsed();
    let t0 = Instant::now();
    let df = fit_model(&dm, &[start_from(&dm, &kf)], &FitSettings::default()).expect("fit");
    let t_dyn = t0.elapsed();
    println!(
        "fit (400 epochs / 4000 d): Keplerian {:.3?} (lnL {:.2}); dynamical edge-on WH from the Keplerian solution {:.3?} (lnL {:.2}, converged {}, {} rounds, ΔBIC {:.1})",
        t_kep,
        kf.ln_likelihood,
        t_dyn,
        df.ln_likelihood,
        df.converged,
        df.rounds,
        kf.bic - df.bic
    );

    let mut g = c.benchmark_group("fit_lnl_400");
    g.throughput(Throughput::Elements(1));
    let kv = kf.values.clone();
    g.bench_function("keplerian", |b| {
        b.iter(|| black_box(km.ln_likelihood(black_box(&kv))))
    });
    let dv = df.values.clone();
    g.bench_function("dynamical_wh", |b| {
        b.iter(|| black_box(dm.ln_likelihood(black_box(&dv))))
    });
    g.finish();

    // Sampler: 32 walkers around the dynamical optimum, 2 steps per sample.
    let target = Posterior(&dm);
    let centre = dm
        .params
        .unconstrained_from_full(&df.values)
        .expect("centre");
    let widths = vec![1e-4; centre.len()];
    let mut rng = ChaCha20Rng::seed_from_u64(3);
    let walkers =
        gaussian_ball(&target, &centre, &Ball::Diagonal(widths), 32, 100, &mut rng).expect("ball");
    let start = EnsembleSampler::new(walkers, DEFAULT_STRETCH_SCALE, 4).expect("sampler");
    let steps = 2;
    let mut g = c.benchmark_group("fit_sampler_dynamical_32_walkers");
    g.sample_size(10);
    g.throughput(Throughput::Elements(steps as u64));
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool");
        g.bench_function(format!("{threads}_thread"), |b| {
            b.iter_batched(
                || start.clone(),
                |mut s| {
                    pool.install(|| {
                        for _ in 0..steps {
                            s.step(&target);
                        }
                    });
                    s
                },
                BatchSize::LargeInput,
            )
        });
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().measurement_time(Duration::from_secs(3));
    targets = bench_fit
}
criterion_main!(benches);

//! Fitting throughput on the injection dataset (tests/injection_support)
//! at the benchmark size, 400 epochs over 4000 d:
//!
//! * ln L evaluations per second for the Keplerian and the dynamical
//!   (Wisdom–Holman) model, the latter with the step following the
//!   parameters (automatic rule per call), with the old fixed step (the
//!   automatic step at the optimum) and with the fit's accuracy-driven step
//!   (`FitResult::wh_step`); the ratio old/new is the gain of the new rule;
//! * the integration alone for the last of those rows (the Wisdom–Holman
//!   runs of `DynamicalModel::star_rv` over the same epochs, system built
//!   once): the ratio of the two is the cost of everything around the
//!   integrator (parameter decoding, system construction, validation,
//!   residuals, likelihood);
//! * a batch of 64 dynamical parameter vectors near the optimum (Gaussian
//!   scatter of 0.1 standard error per parameter, ChaCha20 seed 5)
//!   evaluated with rayon in local pools of 1 and 2 threads, for the old
//!   and the new step: t₁ / t₂ is the parallel speed-up (target ≥ 1.7);
//! * ensemble-sampler steps (32 walkers) on the dynamical posterior with the
//!   fit's step, with 1 and 2 rayon threads;
//! * the wall time of the Keplerian and of the dynamical fit from the
//!   Keplerian solution, timed once in the setup and printed (one fit is
//!   too long for repeated sampling).

#[path = "support/cpu.rs"]
mod cpu;
use cpu::cpu_report;

use std::hint::black_box;
use std::time::{Duration, Instant};

#[path = "../tests/injection_support/mod.rs"]
mod inj;

use apsidal::fit::best_fit::{FitResult, FitSettings, fit_model};
use apsidal::fit::models::{ModelKind, Observations, RvModel, TrendKind, default_parameters};
use apsidal::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, EnsembleSampler, LogTarget, gaussian_ball,
};
use apsidal::model::dynamical::{
    DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace, sample_star_vz,
};
use apsidal::nbody::wisdom_holman::{Corrector, WhSettings, WisdomHolman};
use apsidal::nbody::{EventSettings, Snapshot};
use criterion::{BatchSize, Criterion, Throughput, criterion_group, criterion_main};
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;
use rand_distr::{Distribution, StandardNormal};
use rayon::prelude::*;

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

    let old_step = dm.automatic_wh_step(&df.values).expect("step");
    let dm_old = dm.with_wh_step(old_step);
    let dm_new = dm.with_wh_step(df.wh_step);
    println!(
        "steps: old (automatic at the optimum) {:?} d, new (fit) {:?} d, choice {:?}",
        old_step, df.wh_step, df.wh_step_choice
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
    g.bench_function("dynamical_wh_old_step", |b| {
        b.iter(|| black_box(dm_old.ln_likelihood(black_box(&dv))))
    });
    g.bench_function("dynamical_wh_new_step", |b| {
        b.iter(|| black_box(dm_new.ln_likelihood(black_box(&dv))))
    });
    // The integration alone, as `DynamicalModel::star_rv` runs it for the
    // row above (same system, step and epochs; two resets and the two runs
    // outwards from t_ref), with the system built once: the ratio of the
    // row above to this one is the cost of everything around the
    // integrator per evaluation.
    {
        let planets = dm.decode_planets(&dv).expect("planets");
        let params = DynamicalParams {
            star_mass: inj::STAR_MASS,
            planets: planets
                .iter()
                .map(|p| DynamicalPlanet {
                    period: p.period,
                    k: p.semi_amplitude,
                    e: p.eccentricity,
                    omega_star: p.omega_star,
                    mean_anomaly: p.mean_anomaly,
                    inc: p.inclination,
                    delta_node: p.node,
                })
                .collect(),
            offsets: vec![0.0; 2],
            trend: Default::default(),
        };
        let mut ws = DynamicalWorkspace::default();
        DynamicalModel::new(inj::T_REF)
            .build_system(&params, &mut ws)
            .expect("system");
        let sys = ws.system().clone();
        let step = df.wh_step;
        let mut wh = WisdomHolman::new(
            &sys,
            WhSettings {
                step,
                corrector: Corrector::Off,
                events: EventSettings::default(),
                ..WhSettings::default()
            },
        )
        .expect("wh");
        let mut order: Vec<usize> = (0..obs.len()).collect();
        order.sort_by(|&a, &b| obs.t[a].total_cmp(&obs.t[b]));
        let split = order.partition_point(|&i| obs.t[i] < inj::T_REF);
        let mut snap = Snapshot::zeros(sys.len(), inj::T_REF);
        let mut out = vec![0.0; obs.len()];
        g.bench_function("integrator_only_new_step", |b| {
            b.iter(|| {
                wh.reset(&sys, step).expect("reset");
                sample_star_vz(&mut wh, &obs.t, &order[split..], &mut snap, &mut out)
                    .expect("forward");
                wh.reset(&sys, step).expect("reset");
                sample_star_vz(
                    &mut wh,
                    &obs.t,
                    order[..split].iter().rev(),
                    &mut snap,
                    &mut out,
                )
                .expect("backward");
                black_box(&out);
            })
        });
    }
    g.finish();

    // A batch of 64 vectors near the optimum, 1 and 2 threads.
    let mut rng = ChaCha20Rng::seed_from_u64(5);
    let batch: Vec<Vec<f64>> = (0..64)
        .map(|_| {
            df.values
                .iter()
                .zip(&df.std_errors)
                .map(|(&v, s)| {
                    let z: f64 = StandardNormal.sample(&mut rng);
                    v + s.map_or(0.0, |s| 0.1 * s * z)
                })
                .collect()
        })
        .collect();
    for (label, model) in [("old step", &dm_old), ("new step", &dm_new)] {
        for threads in [1usize, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .expect("pool");
            cpu_report(label, &pool, batch.len(), 20, &|| {
                black_box(
                    batch
                        .par_iter()
                        .map(|v| model.ln_likelihood(v))
                        .sum::<f64>(),
                );
            });
        }
    }
    let mut g = c.benchmark_group("fit_lnl_batch_64");
    g.sample_size(20);
    g.throughput(Throughput::Elements(batch.len() as u64));
    for (label, model) in [("old_step", &dm_old), ("new_step", &dm_new)] {
        for threads in [1usize, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .expect("pool");
            g.bench_function(format!("{label}_{threads}_thread"), |b| {
                b.iter(|| {
                    pool.install(|| {
                        black_box(
                            batch
                                .par_iter()
                                .map(|v| model.ln_likelihood(v))
                                .sum::<f64>(),
                        )
                    })
                })
            });
        }
    }
    g.finish();

    // Sampler: 32 walkers around the dynamical optimum, 2 steps per sample,
    // with the fit's step (as the posterior workflow runs it).
    let target = Posterior(&dm_new);
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

//! Survey throughput (posterior samples per second) with 1 and 2 rayon
//! threads in the same run; the ratio t₁ / t₂ is the parallel speed-up
//! (target ≥ 1.8, issue 6).
//!
//! Posterior: 32 samples of the coplanar model with free sin i around the
//! injected truth of tests/injection_support (0.95 M☉, P = 42.0 d and
//! 86.5 d near 2:1), drawn with ChaCha20 (seed 11) as independent Gaussian
//! scatter of about the size of that system's posterior (relative 1e-4 in
//! P, 1 % in K, 0.01 in √e cos ω⋆ and √e sin ω⋆, 0.5° in λ, 0.02 in
//! sin i, 0.3 m/s in the offsets); a stand-in for a sampler's table, built
//! in memory in the sampler's column layout. Each sample runs
//! `stability::survey::run_survey` with 100 orbits of the outer planet
//! (≈ 5 300 Wisdom–Holman steps at the default step), elements every 4
//! steps, no MEGNO; the table is written to a temporary file (one chunk of
//! 32 rows, one write) exactly as the command does.

use std::path::PathBuf;
use std::time::Duration;

#[path = "support/cpu.rs"]
mod cpu;
#[path = "../tests/injection_support/mod.rs"]
mod inj;
use cpu::cpu_report;

use apsidal::fit::models::{ModelKind, RvModel, TrendKind, default_parameters};
use apsidal::fit::sample::Flow;
use apsidal::stability::run::RunSettings;
use apsidal::stability::survey::{SampleRow, SamplesTable, SurveySettings, run_survey};
use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;
use rand_distr::{Distribution, StandardNormal};

const N_SAMPLES: usize = 32;

fn bench_survey(c: &mut Criterion) {
    let obs = inj::synthetic(20_260, 400, 4000.0);
    let kind = ModelKind::CoplanarSinI;
    let params = default_parameters(kind, &inj::guesses(0.0, 0.0, 0.0), &obs, TrendKind::None)
        .expect("parameters");
    let model = RvModel::new(
        obs,
        kind,
        inj::STAR_MASS,
        inj::T_REF,
        &inj::planet_names(),
        TrendKind::None,
        params,
    )
    .expect("model");
    // The truth as a full vector, and the scatter of each parameter.
    let mut truth = model.params.start_full();
    let mut width = vec![0.0; truth.len()];
    let mut set = |name: String, v: f64, w: f64| {
        let i = model.params.index_of(&name).expect("name");
        truth[i] = v;
        width[i] = w;
    };
    for p in &inj::PLANETS {
        let (sc, ss) = p.sqrt_basis();
        set(format!("{}.period", p.name), p.period, 1e-4 * p.period);
        set(format!("{}.semi_amplitude", p.name), p.k, 0.01 * p.k);
        set(format!("{}.sqrt_e_cos_w", p.name), sc, 0.01);
        set(format!("{}.sqrt_e_sin_w", p.name), ss, 0.01);
        set(
            format!("{}.mean_longitude", p.name),
            p.mean_longitude_deg(),
            0.5,
        );
    }
    for (k, i) in inj::INSTRUMENTS.iter().enumerate() {
        set(format!("{i}.offset"), inj::OFFSETS[k], 0.3);
        set(format!("{i}.jitter"), inj::JITTERS[k], 0.0);
    }
    set("sin_i".into(), inj::SIN_I, 0.02);
    let free = model.params.free_indices().to_vec();
    let columns: Vec<String> = free
        .iter()
        .map(|&i| model.params.parameters()[i].name.clone())
        .collect();
    let mut rng = ChaCha20Rng::seed_from_u64(11);
    let rows: Vec<SampleRow> = (0..N_SAMPLES)
        .map(|k| SampleRow {
            line: k + 2,
            walker: k as u64,
            step: 0,
            ln_prob: 0.0,
            values: free
                .iter()
                .map(|&i| {
                    let z: f64 = StandardNormal.sample(&mut rng);
                    truth[i] + width[i] * z
                })
                .collect(),
        })
        .collect();
    let table = SamplesTable {
        source: PathBuf::from("in-memory"),
        columns,
        rows,
    };
    let settings = SurveySettings {
        run: RunSettings {
            orbits: 100.0,
            ..RunSettings::default()
        },
        ..SurveySettings::default()
    };
    let dir = std::env::temp_dir();
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool");
        let out = dir.join(format!(
            "apsidal-survey-cpu-{}-{threads}.csv",
            std::process::id()
        ));
        cpu_report("survey", &pool, N_SAMPLES, 5, &|| {
            run_survey(&model, &table, &truth, &settings, &out, false, &|_| {
                Flow::Continue
            })
            .expect("survey");
        });
        let _ = std::fs::remove_file(&out);
    }
    let mut g = c.benchmark_group("survey_32_samples_100_orbits");
    g.sample_size(10);
    g.throughput(Throughput::Elements(N_SAMPLES as u64));
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("pool");
        let out = dir.join(format!(
            "apsidal-survey-bench-{}-{threads}.csv",
            std::process::id()
        ));
        g.bench_function(format!("{threads}_thread"), |b| {
            b.iter(|| {
                pool.install(|| {
                    run_survey(&model, &table, &truth, &settings, &out, false, &|_| {
                        Flow::Continue
                    })
                    .expect("survey")
                })
            })
        });
        let _ = std::fs::remove_file(&out);
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().measurement_time(Duration::from_secs(4));
    targets = bench_survey
}
criterion_main!(benches);

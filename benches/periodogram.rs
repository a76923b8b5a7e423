//! GLS spectrum by trigonometric recurrence against the baseline of direct
//! sin/cos evaluation at every frequency, measured in the same run.
//! `cargo bench --bench periodogram`

use apsidal::periodogram::{FrequencyGrid, GlsSeries, GridSettings};
use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

fn series(n: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    // Deterministic uneven epochs over ~1500 d, two signals.
    let t: Vec<f64> = (0..n)
        .map(|i| {
            let x = i as f64;
            1500.0 * x / n as f64 + 3.0 * (x * 1.618).fract()
        })
        .collect();
    let y: Vec<f64> = t
        .iter()
        .map(|t| 7.0 * (t / 23.7 * std::f64::consts::TAU).cos() + 3.0 * (t / 400.0).sin())
        .collect();
    let s: Vec<f64> = (0..n).map(|i| 1.5 + (i % 5) as f64 * 0.5).collect();
    (t, y, s)
}

fn bench_gls(c: &mut Criterion) {
    let (t, y, s) = series(100);
    let gls = GlsSeries::new(&t, &y, &s).unwrap();
    let grid = FrequencyGrid::for_epochs(
        &t,
        &GridSettings {
            shortest_period: Some(1.5),
            ..Default::default()
        },
    )
    .unwrap();
    let mut group = c.benchmark_group("gls_100_epochs_10k_freqs");
    group.sample_size(20);
    group.bench_function("direct_sin_cos (baseline)", |b| {
        b.iter(|| {
            let mut best = 0.0f64;
            for k in 0..grid.len() {
                best = best.max(gls.power(grid.frequency(k)).unwrap());
            }
            black_box(best)
        })
    });
    group.bench_function("recurrence_spectrum", |b| {
        b.iter(|| black_box(gls.spectrum(&grid).peak()))
    });
    group.bench_function("recurrence_spectrum_1_thread", |b| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap();
        b.iter(|| pool.install(|| black_box(gls.spectrum(&grid).peak())))
    });
    group.finish();
}

criterion_group!(benches, bench_gls);
criterion_main!(benches);

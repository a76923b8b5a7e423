//! Speed of Kepler's equation and of the Keplerian RV model, each against a
//! plain Newton–Raphson baseline measured in the same run.
//!
//! - `kepler_solve/<method>/e=<e>`: one solve per mean anomaly over a grid
//!   of 1024 values of M in (−π, π]; criterion reports time per solve
//!   (throughput in elements). `markley` is `apsidal::kepler::solve_kepler`
//!   (Markley 1995 starter + one fifth-order correction, residual ≤ 1e-15);
//!   `markley_prepared` the same with a `KeplerSolver` built once per e;
//!   `markley_slice` `KeplerSolver::solve_slice` (four interleaved lanes,
//!   as the RV model uses); `newton` is Newton's method from E₀ = M,
//!   iterated until
//!   |E − e sin E − M| ≤ 1e-14 (a looser stop, so the comparison favours
//!   the baseline), returning E, sin E and cos E like the solver.
//! - `kepler_rv/<method>`: a two-planet Keplerian RV model at 1000 epochs
//!   (time per epoch, i.e. two solves), `model` = `keplerian_model_rv`,
//!   `newton` the same formula and phase arithmetic with the Newton solver.
//!
//! Before the criterion runs, an interleaved best-of-200 A/B timing of the
//! same cases is printed (see `interleaved_report`): less sensitive to
//! other jobs on a shared machine.
//!
//! Run: `cargo bench --bench kepler -- --warm-up-time 1 --measurement-time 3`.

use std::f64::consts::{PI, TAU};
use std::hint::black_box;
use std::time::Instant;

use apsidal::kepler::{EccentricAnomaly, KeplerSolver, solve_kepler};
use apsidal::model::keplerian::{KeplerianParams, PlanetSignal, Trend, keplerian_model_rv};

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group};

/// Plain Newton–Raphson on f(E) = E − e sin E − M from E₀ = M (|M| ≤ π),
/// stopping at |f| ≤ 1e-14 or after 100 iterations. Returns (E, sin E, cos E).
#[inline]
fn newton_kepler(m: f64, e: f64) -> (f64, f64, f64) {
    let mut ecc = m;
    for _ in 0..100 {
        let (s, c) = ecc.sin_cos();
        let f = ecc - e * s - m;
        if f.abs() <= 1e-14 {
            return (ecc, s, c);
        }
        ecc -= f / (1.0 - e * c);
    }
    let (s, c) = ecc.sin_cos();
    (ecc, s, c)
}

fn m_grid() -> Vec<f64> {
    (0..1024)
        .map(|i| -PI + TAU * (i as f64 + 0.5) / 1024.0)
        .collect()
}

fn bench_solve(c: &mut Criterion) {
    let ms = m_grid();
    let mut g = c.benchmark_group("kepler_solve");
    g.throughput(Throughput::Elements(ms.len() as u64));
    for &e in &[0.0, 0.1, 0.5, 0.9, 0.99] {
        g.bench_with_input(
            BenchmarkId::new("markley", format!("e={e}")),
            &e,
            |b, &e| {
                b.iter(|| {
                    let mut acc = 0.0;
                    for &m in &ms {
                        if let Some(s) = solve_kepler(black_box(m), black_box(e)) {
                            acc += s.e_anom + s.sin_e + s.cos_e;
                        }
                    }
                    acc
                })
            },
        );
        let solver = KeplerSolver::new(e).unwrap();
        g.bench_with_input(
            BenchmarkId::new("markley_prepared", format!("e={e}")),
            &solver,
            |b, solver| {
                b.iter(|| {
                    let mut acc = 0.0;
                    for &m in &ms {
                        if let Some(s) = black_box(solver).solve(black_box(m)) {
                            acc += s.e_anom + s.sin_e + s.cos_e;
                        }
                    }
                    acc
                })
            },
        );
        let mut buf = vec![EccentricAnomaly::default(); ms.len()];
        g.bench_with_input(
            BenchmarkId::new("markley_slice", format!("e={e}")),
            &solver,
            |b, solver| {
                b.iter(|| {
                    black_box(solver)
                        .solve_slice(black_box(&ms), &mut buf)
                        .unwrap();
                    buf.iter()
                        .map(|s| s.e_anom + s.sin_e + s.cos_e)
                        .sum::<f64>()
                })
            },
        );
        g.bench_with_input(BenchmarkId::new("newton", format!("e={e}")), &e, |b, &e| {
            b.iter(|| {
                let mut acc = 0.0;
                for &m in &ms {
                    let (ecc, s, c) = newton_kepler(black_box(m), black_box(e));
                    acc += ecc + s + c;
                }
                acc
            })
        });
    }
    g.finish();
}

fn two_planets() -> KeplerianParams {
    KeplerianParams {
        t_ref: 2_460_000.0,
        planets: vec![
            PlanetSignal {
                period: 9.3,
                semi_amplitude: 14.0,
                eccentricity: 0.15,
                omega_star: 1.0,
                mean_anomaly_ref: 0.3,
            },
            PlanetSignal {
                period: 611.0,
                semi_amplitude: 40.0,
                eccentricity: 0.6,
                omega_star: 4.0,
                mean_anomaly_ref: 2.0,
            },
        ],
        offsets: vec![0.0, 5.0],
        trend: Trend::Linear { slope: 1e-3 },
    }
}

/// Round to nearest by the 1.5·2^52 trick, as the model does (|x| < 2^51).
#[inline]
fn round_small(x: f64) -> f64 {
    const MAGIC: f64 = 6_755_399_441_055_744.0;
    (x + MAGIC) - MAGIC
}

/// The same model as `keplerian_model_rv` with the Newton baseline solver.
fn newton_model(p: &KeplerianParams, epochs: &[f64], inst: &[usize], out: &mut [f64]) {
    let (c1, _) = p.trend.coefficients();
    for ((o, &t), &i) in out.iter_mut().zip(epochs).zip(inst) {
        *o = p.offsets[i] + c1 * (t - p.t_ref);
    }
    for pl in &p.planets {
        let e = pl.eccentricity;
        let (sw, cw) = pl.omega_star.sin_cos();
        let b = (1.0 - e * e).sqrt();
        let k = pl.semi_amplitude;
        let inv_p = 1.0 / pl.period;
        let m_turns = pl.mean_anomaly_ref / TAU;
        for (o, &t) in out.iter_mut().zip(epochs) {
            // Same phase arithmetic as the model, so only the solver differs.
            let phase = (t - p.t_ref) * inv_p + m_turns;
            let m = TAU * (phase - round_small(phase));
            let (_, s, c) = newton_kepler(m, e);
            let den = 1.0 - e * c;
            *o += k * (((c - e) * cw - b * s * sw) / den + e * cw);
        }
    }
}

/// The two-planet model, 1000 epochs over ~1000 d, two instruments.
fn rv_setup() -> (KeplerianParams, Vec<f64>, Vec<usize>) {
    let n = 1000;
    let epochs: Vec<f64> = (0..n)
        .map(|i| 2_459_500.0 + 1000.0 * i as f64 / n as f64 + 0.37 * ((i * 7919) % 13) as f64)
        .collect();
    let inst: Vec<usize> = (0..n).map(|i| i % 2).collect();
    (two_planets(), epochs, inst)
}

fn bench_rv(c: &mut Criterion) {
    let (params, epochs, inst) = rv_setup();
    let n = epochs.len();
    let mut out = vec![0.0; n];
    let mut out2 = vec![0.0; n];
    // The two paths compute the same RVs.
    keplerian_model_rv(&params, &epochs, &inst, &mut out).unwrap();
    newton_model(&params, &epochs, &inst, &mut out2);
    let diff = out
        .iter()
        .zip(&out2)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    assert!(diff < 1e-10, "model and baseline differ by {diff} m/s");
    let mut g = c.benchmark_group("kepler_rv");
    g.throughput(Throughput::Elements(n as u64));
    g.bench_function("model", |b| {
        b.iter(|| {
            keplerian_model_rv(black_box(&params), black_box(&epochs), &inst, &mut out).unwrap();
            out[n / 2]
        })
    });
    g.bench_function("newton", |b| {
        b.iter(|| {
            newton_model(black_box(&params), black_box(&epochs), &inst, &mut out2);
            out2[n / 2]
        })
    });
    g.finish();
}

/// Time per item (ns) of one run of `f` over `items` items.
fn best_ns(items: usize, mut f: impl FnMut() -> f64) -> f64 {
    let t0 = Instant::now();
    black_box(f());
    t0.elapsed().as_nanos() as f64 / items as f64
}

/// Interleaved A/B timing, printed before the criterion runs: on a machine
/// shared with other jobs, criterion's per-benchmark medians are taken
/// seconds apart under changing load, so here each method is timed in
/// alternation, 200 rounds, and the minimum (the least disturbed run) is
/// reported with the ratio.
fn interleaved_report() {
    let ms = m_grid();
    println!("interleaved best-of-200 (ns per solve):");
    println!(
        "  e      markley  prepared  slice  newton  newton/markley  newton/prepared  newton/slice"
    );
    for &e in &[0.0, 0.1, 0.5, 0.9, 0.99] {
        let solver = KeplerSolver::new(e).unwrap();
        let (mut a, mut p, mut n) = (f64::INFINITY, f64::INFINITY, f64::INFINITY);
        let mut sl = f64::INFINITY;
        let mut buf = vec![EccentricAnomaly::default(); ms.len()];
        for _ in 0..200 {
            sl = sl.min(best_ns(ms.len(), || {
                black_box(&solver)
                    .solve_slice(black_box(&ms), &mut buf)
                    .unwrap();
                buf.iter().map(|s| s.e_anom + s.sin_e + s.cos_e).sum()
            }));
            a = a.min(best_ns(ms.len(), || {
                ms.iter()
                    .filter_map(|&m| solve_kepler(black_box(m), black_box(e)))
                    .map(|s| s.e_anom + s.sin_e + s.cos_e)
                    .sum()
            }));
            p = p.min(best_ns(ms.len(), || {
                ms.iter()
                    .filter_map(|&m| black_box(&solver).solve(black_box(m)))
                    .map(|s| s.e_anom + s.sin_e + s.cos_e)
                    .sum()
            }));
            n = n.min(best_ns(ms.len(), || {
                ms.iter()
                    .map(|&m| newton_kepler(black_box(m), black_box(e)))
                    .map(|(x, s, c)| x + s + c)
                    .sum()
            }));
        }
        // Newton from E₀ = M does not always converge for e near 1 (it
        // cycles for some M near 0 and stops at the iteration cap): count.
        let stuck = ms
            .iter()
            .filter(|&&m| {
                let (x, s, _) = newton_kepler(m, e);
                (x - e * s - m).abs() > 1e-14
            })
            .count();
        if stuck > 0 {
            println!(
                "  (newton at e = {e}: {stuck} of {} M not converged in 100 steps)",
                ms.len()
            );
        }
        println!(
            "  {e:<5}  {a:7.1}  {p:8.1}  {sl:5.1}  {n:6.1}  {:14.2}  {:15.2}  {:12.2}",
            n / a,
            n / p,
            n / sl
        );
    }
    let (params, epochs, inst) = rv_setup();
    let mut out = vec![0.0; epochs.len()];
    let (mut a, mut n) = (f64::INFINITY, f64::INFINITY);
    for _ in 0..200 {
        a = a.min(best_ns(epochs.len(), || {
            keplerian_model_rv(black_box(&params), &epochs, &inst, &mut out).unwrap();
            out[0]
        }));
        n = n.min(best_ns(epochs.len(), || {
            newton_model(black_box(&params), &epochs, &inst, &mut out);
            out[0]
        }));
    }
    println!(
        "interleaved best-of-200, 2-planet RV (ns per epoch): model {a:.1}, newton {n:.1}, newton/model {:.2}",
        n / a
    );
}

criterion_group!(benches, bench_solve, bench_rv);

fn main() {
    // `cargo bench` passes --bench; `cargo test --benches` does not, and
    // then only criterion's quick test mode runs.
    if std::env::args().any(|a| a == "--bench") {
        interleaved_report();
    }
    benches();
    Criterion::default().configure_from_args().final_summary();
}

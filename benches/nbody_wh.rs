//! Wisdom–Holman speed: time per step for 1–8 planets, against the cost of
//! one universal-variable Kepler drift measured in the same run, and the
//! time of a full dynamical RV evaluation of the fitting case (two giants
//! near 2:1, 400 epochs over 4000 d, step 2 d = P₁/50, which
//! tests/dynamical_model.rs `second_order_convergence_and_bench_step_accuracy`
//! shows to be within 1 mm/s of a 64× finer step).
//!
//! Measured in **CPU time of the benchmarking thread** (Linux
//! `/proc/thread-self/schedstat`, nanoseconds on CPU) rather than wall
//! time, because the build machine is shared and heavily loaded: wall time
//! there swings by 2× between runs, CPU time does not. Falls back to wall
//! time where the file does not exist.

#[path = "support/cpu.rs"]
mod cpu;
use cpu::CpuTime;

use std::f64::consts::FRAC_PI_2;
use std::hint::black_box;
use std::time::Duration;

use apsidal::model::dynamical::{
    DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace, IntegratorChoice, Trend,
};
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::universal::{f_and_g, f_and_g_lanes, f_and_g_with, kepler_drift};
use apsidal::nbody::wisdom_holman::{Corrector, DriftKernel, WhSettings, WisdomHolman};
use apsidal::nbody::{Integrator, Snapshot, System};
use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use nalgebra::Vector3;

const STEPS: u64 = 1000;

/// A star with `n` planets at periods 10·2^k d (invented, widely spaced).
fn system(n: usize) -> System {
    let planets: Vec<JacobiPlanet> = (0..n)
        .map(|k| JacobiPlanet {
            mass: 3e-5 * (1.0 + k as f64),
            radius: 0.0,
            size: OrbitSize::Period(10.0 * 2f64.powi(k as i32)),
            e: 0.05 + 0.01 * k as f64,
            omega_star: 0.7 * k as f64,
            phase: OrbitPhase::MeanAnomaly(1.3 * k as f64),
            inc: FRAC_PI_2 - 0.02 * k as f64,
            node: 0.03 * k as f64,
        })
        .collect();
    System::from_jacobi_elements(1.0, 0.0, &planets, 0.0).unwrap()
}

fn wh_step(c: &mut Criterion<CpuTime>) {
    let mut g = c.benchmark_group("wh_step");
    g.sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2));
    // Baseline: one Kepler drift of a mildly eccentric orbit by P/20 with
    // the universal-variable solver alone; then the same drift as the
    // integrator does it (ΔE solver for bound orbits, src/nbody/elliptic.rs).
    g.throughput(Throughput::Elements(1));
    g.bench_function("baseline_universal_drift", |b| {
        let (mut r, mut v) = (
            Vector3::new(0.09, 0.02, 0.0),
            Vector3::new(-0.004, 0.017, 0.001),
        );
        b.iter(|| {
            let fg = f_and_g_with(&r, &v, black_box(2.96e-4), black_box(0.5), None, false).unwrap();
            (r, v) = (r * fg.f + v * fg.g, r * fg.fdot + v * fg.gdot);
        })
    });
    g.bench_function("kepler_drift", |b| {
        let (mut r, mut v) = (
            Vector3::new(0.09, 0.02, 0.0),
            Vector3::new(-0.004, 0.017, 0.001),
        );
        b.iter(|| {
            kepler_drift(&mut r, &mut v, black_box(2.96e-4), black_box(0.5), None).unwrap();
        })
    });
    // Two drifts of the 2-planet system's orbits, solved one after the
    // other (scalar) and interleaved (lanes): the solver alone.
    let sys2 = system(2);
    let mu2: [f64; 2] =
        std::array::from_fn(|l| apsidal::units::G * sys2.masses[..=l + 1].iter().sum::<f64>());
    let pos2: [Vector3<f64>; 2] =
        std::array::from_fn(|l| sys2.state.pos[l + 1] - sys2.state.pos[0]);
    let vel2: [Vector3<f64>; 2] =
        std::array::from_fn(|l| sys2.state.vel[l + 1] - sys2.state.vel[0]);
    g.throughput(Throughput::Elements(2));
    g.bench_function("two_drift_solves_scalar", |b| {
        b.iter(|| {
            let p = black_box(&pos2);
            let v = black_box(&vel2);
            let a = f_and_g(&p[0], &v[0], mu2[0], black_box(0.5), None).unwrap();
            let c = f_and_g(&p[1], &v[1], mu2[1], black_box(0.5), None).unwrap();
            black_box((a, c))
        })
    });
    g.bench_function("two_drift_solves_interleaved", |b| {
        b.iter(|| {
            black_box(f_and_g_lanes(
                black_box(&pos2),
                black_box(&vel2),
                &mu2,
                black_box(0.5),
            ))
        })
    });
    g.throughput(Throughput::Elements(STEPS));
    for n in [1usize, 2, 3, 5, 8] {
        let sys = system(n);
        let settings = WhSettings {
            step: Some(0.5),
            ..WhSettings::default()
        };
        for (name, kernel) in [
            ("universal", DriftKernel::Universal),
            ("scalar", DriftKernel::Scalar),
            ("interleaved", DriftKernel::Interleaved),
        ] {
            if n == 1 && kernel == DriftKernel::Interleaved {
                continue; // one planet: the same scalar drift
            }
            let mut wh = WisdomHolman::new(&sys, settings).unwrap();
            wh.set_drift_kernel(kernel);
            let mut out = Snapshot::zeros(n + 1, 0.0);
            g.bench_function(format!("{n}_planets_{name}_x{STEPS}_steps"), |b| {
                b.iter(|| {
                    let t = wh.time() + STEPS as f64 * 0.5;
                    wh.advance_to(black_box(t), &mut out).unwrap();
                })
            });
        }
    }
    g.finish();
}

fn dynamical_rv(c: &mut Criterion<CpuTime>) {
    let pl = |period, k, e, w, m, inc, dn| DynamicalPlanet {
        period,
        k,
        e,
        omega_star: w,
        mean_anomaly: m,
        inc,
        delta_node: dn,
    };
    // Same system as tests/dynamical_model.rs `two_giants`.
    let params = DynamicalParams {
        star_mass: 0.8,
        planets: vec![
            pl(100.0, 38.0, 0.1, 0.4, 1.0, 1.3, 0.0),
            pl(205.0, 45.0, 0.1, 2.0, 4.0, 1.4, 0.2),
        ],
        offsets: vec![0.0],
        trend: Trend::default(),
    };
    let epochs: Vec<f64> = (0..400)
        .map(|i| {
            let j = (i * 173) % 400;
            j as f64 * 10.0 + 3.7 * ((j as f64) * 0.61).sin()
        })
        .collect();
    let inst = vec![0usize; 400];
    let model = DynamicalModel {
        integrator: IntegratorChoice::WisdomHolman {
            step: Some(2.0),
            corrector: Corrector::Off,
        },
        ..DynamicalModel::new(2000.0)
    };
    let mut ws = DynamicalWorkspace::default();
    let mut out = vec![0.0; 400];
    let mut g = c.benchmark_group("wh_dynamical_rv");
    g.sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(3));
    g.bench_function("two_giants_400_epochs_4000_d_step_2d", |b| {
        b.iter(|| {
            model
                .star_rv(black_box(&params), &epochs, &inst, &mut ws, &mut out)
                .unwrap();
        })
    });
    g.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().with_measurement(CpuTime);
    targets = wh_step, dynamical_rv
}
criterion_main!(benches);

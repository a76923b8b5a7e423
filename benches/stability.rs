//! Stability speed: ns per Wisdom–Holman step without and with tangent
//! vectors (2 and 3 planets; the ratio is the cost of the variational
//! equations), and a MEGNO run of the two-giant benchmark system of
//! benches/nbody_wh.rs (0.8 M☉ star, P = 100 d and 205 d) over 1000 inner
//! orbits at three steps: 2 d = P₁/50, the integrator's default step
//! (≈ 4.07 d) and twice it (the MEGNO default step of
//! `stability::megno`), from which the time for 10⁶ inner orbits is
//! extrapolated (the cost is linear in the length).
//!
//! CPU time of the benchmarking thread, as in benches/nbody_wh.rs (the
//! build machine is shared).

#[path = "support/cpu.rs"]
mod cpu;
use cpu::CpuTime;

use std::f64::consts::FRAC_PI_2;
use std::hint::black_box;
use std::time::Duration;

use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::variational::{InitialFrame, Variational, VariationalIntegrator, unit_tangent};
use apsidal::nbody::wisdom_holman::{DriftKernel, WhSettings, WisdomHolman};
use apsidal::nbody::{Integrator, Snapshot, System};
use apsidal::stability::megno::{MegnoSettings, megno_run};
use criterion::{Criterion, Throughput, criterion_group, criterion_main};

const STEPS: u64 = 1000;

/// A star with `n` planets at periods 10·2^k d (invented, widely spaced).
/// The two giants of benches/nbody_wh.rs (masses invented for K ≈ 40 m/s),
/// plus a third planet at 450 d for `n` = 3.
fn system(n: usize) -> System {
    let p = |mass, per, e, w, m, inc, node| JacobiPlanet {
        mass,
        radius: 0.0,
        size: OrbitSize::Period(per),
        e,
        omega_star: w,
        phase: OrbitPhase::MeanAnomaly(m),
        inc,
        node,
    };
    let all = [
        p(1.5e-3, 100.0, 0.1, 0.4, 1.0, 1.3, 0.0),
        p(2.2e-3, 205.0, 0.1, 2.0, 4.0, 1.4, 0.2),
        p(1.0e-3, 450.0, 0.05, 1.0, 2.0, FRAC_PI_2, 0.1),
    ];
    System::from_jacobi_elements(0.8, 0.0, &all[..n], 0.0).unwrap()
}

fn settings() -> WhSettings {
    // Events recorded, not stopping: the bench runs far past the 3-planet
    // system's first close encounter.
    WhSettings {
        step: Some(2.0),
        events: apsidal::nbody::EventSettings {
            stop_on_event: false,
            ..Default::default()
        },
        ..WhSettings::default()
    }
}

fn wh_step_variational(c: &mut Criterion<CpuTime>) {
    let mut g = c.benchmark_group("wh_step_variational");
    g.sample_size(20)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(2));
    g.throughput(Throughput::Elements(STEPS));
    for n in [2, 3] {
        let sys = system(n);
        for (ntan, kernel) in [0usize, 1, 6 * n].into_iter().flat_map(|t| {
            [
                (t, DriftKernel::Universal),
                (t, DriftKernel::Scalar),
                (t, DriftKernel::Interleaved),
            ]
        }) {
            let mut wh = WisdomHolman::new(&sys, settings()).unwrap();
            wh.set_drift_kernel(kernel);
            let kname = match kernel {
                DriftKernel::Universal => "universal",
                DriftKernel::Scalar => "scalar",
                DriftKernel::Interleaved => "interleaved",
            };
            let tans: Vec<_> = (0..ntan)
                .map(|j| unit_tangent(&sys, InitialFrame::Jacobi, 1 + (j / 6) % n, j % 6))
                .collect();
            wh.set_tangents(&tans).unwrap();
            let mut out = Snapshot::zeros(n + 1, 0.0);
            g.bench_function(
                format!("{n}_planets_{ntan}_tangents_{kname}_x{STEPS}_steps"),
                |b| {
                    b.iter(|| {
                        let t = wh.time() + STEPS as f64 * 2.0;
                        wh.advance_to(black_box(t), &mut out).unwrap();
                        // Keep the tangent vector finite over long benches.
                        if ntan > 0 {
                            let norm = wh.output_tangents()[0].pos[1].norm().max(1e-300);
                            if norm > 1e50 {
                                for i in 0..ntan {
                                    wh.scale_tangent(i, 1e-50);
                                }
                            }
                        }
                    })
                },
            );
        }
    }
    g.finish();
}

fn megno_two_giants(c: &mut Criterion<CpuTime>) {
    let sys = system(2);
    let mut g = c.benchmark_group("megno_two_giants");
    g.sample_size(10)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(3));
    // 1000 inner orbits = 1000 × 100 d / 205 d outer orbits.
    let outer = 1000.0 * 100.0 / 205.0;
    // The integrator's default step (≈ 4.07 d = P₁/24.6) and twice it
    // (the MEGNO default step, stability::megno), given explicitly so
    // that every build runs the same steps.
    let h0 = WisdomHolman::new(&sys, WhSettings::default())
        .unwrap()
        .step();
    for (name, h) in [
        ("wh_step_2d", 2.0),
        ("default_step", h0),
        ("twice_default_step", 2.0 * h0),
    ] {
        let integ = VariationalIntegrator::WisdomHolman(WhSettings {
            step: Some(h),
            ..settings()
        });
        g.bench_function(format!("{name}_1000_inner_orbits"), |b| {
            b.iter(|| megno_run(black_box(&sys), integ, outer, &MegnoSettings::default()).unwrap())
        });
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().with_measurement(CpuTime);
    targets = wh_step_variational, megno_two_giants
}
criterion_main!(benches);

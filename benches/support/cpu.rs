//! CPU-time measurement for the benches: a criterion `Measurement` of the
//! benchmarking thread's CPU time (benches/nbody_wh.rs, stability.rs) and
//! process CPU time beside wall time for the 1- and 2-thread benches
//! (benches/fit.rs, survey.rs). Each bench uses part of it.
#![allow(dead_code)]

use criterion::Throughput;
use criterion::measurement::{Measurement, ValueFormatter};

/// CPU time (user + system, s) of the whole process so far, all threads,
/// from /proc/self/stat (fields 14 and 15, in clock ticks of 1/100 s:
/// `getconf CLK_TCK` = 100 on the build machine); 0 when unreadable.
pub fn process_cpu_s() -> f64 {
    std::fs::read_to_string("/proc/self/stat")
        .ok()
        .and_then(|s| {
            let rest = s.rsplit_once(')')?.1;
            let f: Vec<&str> = rest.split_whitespace().collect();
            let u: f64 = f.get(11)?.parse().ok()?;
            let k: f64 = f.get(12)?.parse().ok()?;
            Some((u + k) / 100.0)
        })
        .unwrap_or(0.0)
}

/// Run `f` `reps` times in `pool`; print wall time and process CPU time
/// per item and the cores obtained (CPU / wall). CPU per item that does
/// not grow from 1 to 2 threads means no contention inside the program
/// (allocator, shared buffers, memory bandwidth): a wall-time speed-up
/// below 2 is then the machine's other load.
pub fn cpu_report(
    label: &str,
    pool: &rayon::ThreadPool,
    items: usize,
    reps: usize,
    f: &(dyn Fn() + Sync),
) {
    let c0 = process_cpu_s();
    let t0 = std::time::Instant::now();
    pool.install(|| {
        for _ in 0..reps {
            f();
        }
    });
    let wall = t0.elapsed().as_secs_f64();
    let cpu = process_cpu_s() - c0;
    let n = (items * reps) as f64;
    println!(
        "{label}: {} threads, wall {:.3} ms/item, CPU {:.3} ms/item, cores obtained {:.2}",
        pool.current_num_threads(),
        1e3 * wall / n,
        1e3 * cpu / n,
        cpu / wall
    );
}

/// Criterion measurement: CPU time of the benchmarking thread in ns
/// (Linux `/proc/thread-self/schedstat`; wall time where unreadable), so
/// other jobs on a shared machine inflate the figures less than wall time.
pub struct CpuTime;

fn cpu_ns() -> u64 {
    static START: std::sync::OnceLock<std::time::Instant> = std::sync::OnceLock::new();
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()
        .and_then(|s| s.split_whitespace().next().and_then(|v| v.parse().ok()))
        .unwrap_or_else(|| {
            START
                .get_or_init(std::time::Instant::now)
                .elapsed()
                .as_nanos() as u64
        })
}

impl Measurement for CpuTime {
    type Intermediate = u64;
    type Value = u64;
    fn start(&self) -> u64 {
        cpu_ns()
    }
    fn end(&self, i: u64) -> u64 {
        cpu_ns().saturating_sub(i)
    }
    fn add(&self, a: &u64, b: &u64) -> u64 {
        a + b
    }
    fn zero(&self) -> u64 {
        0
    }
    fn to_f64(&self, v: &u64) -> f64 {
        *v as f64
    }
    fn formatter(&self) -> &dyn ValueFormatter {
        &CpuFormatter
    }
}

/// Units of [`CpuTime`] for criterion's report.
pub struct CpuFormatter;

impl ValueFormatter for CpuFormatter {
    fn scale_values(&self, ns: f64, values: &mut [f64]) -> &'static str {
        let (factor, unit) = if ns < 1e3 {
            (1.0, "ns cpu")
        } else if ns < 1e6 {
            (1e-3, "µs cpu")
        } else {
            (1e-6, "ms cpu")
        };
        values.iter_mut().for_each(|v| *v *= factor);
        unit
    }
    fn scale_throughputs(&self, _typical: f64, t: &Throughput, values: &mut [f64]) -> &'static str {
        // Nanoseconds of CPU per element (per step); criterion prints the
        // bounds of this column in reverse order.
        let n = match *t {
            Throughput::Elements(n) | Throughput::Bytes(n) | Throughput::BytesDecimal(n) => n,
            Throughput::Bits(n) => n,
        } as f64;
        values.iter_mut().for_each(|v| *v /= n);
        "ns cpu per element"
    }
    fn scale_for_machines(&self, _values: &mut [f64]) -> &'static str {
        "ns"
    }
}

//! Process CPU time beside wall time for the 1- and 2-thread benches
//! (benches/fit.rs, benches/survey.rs).

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

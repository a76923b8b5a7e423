//! Hardening of the command line on good input: killed runs (SIGKILL)
//! leave the old or the complete new file, never a partial one; a killed
//! sampling run resumes to the same chain as an uninterrupted one;
//! outputs do not depend on the thread count; integrator pathologies end
//! in typed errors or finite results, within bounded time.

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

use apsidal::fit::sample::EnsembleSampler;

const BIN: &str = env!("CARGO_BIN_EXE_apsidal");

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/orrin442")
        .join(name)
}

/// A fresh scratch folder with the Orrin-442 tables and a one-planet
/// Keplerian run file sampling `steps` steps, checkpointing every 5.
fn sampling_folder(id: &str, steps: usize) -> PathBuf {
    let d = std::env::temp_dir().join(format!("apsidal-harden-{}-{id}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    for f in ["veska.txt", "mirral.csv"] {
        std::fs::copy(fixture(f), d.join(f)).unwrap();
    }
    let run = format!(
        r#"(
    data: [(path: "veska.txt", instrument: Named("VESKA")), (path: "mirral.csv")],
    instruments: ["VESKA", "MIRRAL"],
    star: (name: "Orrin-442", mass: 0.74),
    planets: [
        (name: "b", period: 41.3, signal: SemiAmplitude(23.0), eccentricity: 0.08,
         omega_star: 112.0, phase: MeanAnomaly(35.0)),
    ],
    reference_epoch: 2460000.0,
    seed: 7,
    fit: (models: [Keplerian]),
    sampler: (steps: {steps}, walkers: 18, checkpoint_every: 5),
)"#
    );
    std::fs::write(d.join("run.ron"), run).unwrap();
    d
}

fn apsidal(dir: &Path, args: &[&str]) -> Output {
    let out = Command::new(BIN)
        .args(args)
        .arg("-q")
        .current_dir(dir)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
    out
}

fn ok(dir: &Path, args: &[&str]) {
    let out = apsidal(dir, args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn temp_files(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".tmp"))
        .collect()
}

/// Start `sample`, wait until a checkpoint exists and then `delay` more,
/// kill it with SIGKILL. Returns whether it was still running when killed.
fn start_and_kill(dir: &Path, out: &str, extra: &[&str], delay: Duration) -> bool {
    let mut child = Command::new(BIN)
        .args(["sample", "run.ron", "--out", out, "-q"])
        .args(extra)
        .current_dir(dir)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let ck = dir.join(out).join("checkpoint.ron");
    let start = Instant::now();
    while !ck.exists() && start.elapsed() < Duration::from_secs(60) {
        if child.try_wait().unwrap().is_some() {
            return false;
        }
        std::thread::sleep(Duration::from_millis(2));
    }
    std::thread::sleep(delay);
    let running = child.try_wait().unwrap().is_none();
    child.kill().unwrap();
    child.wait().unwrap();
    running
}

/// Kill → resume gives the same samples.csv as an uninterrupted run, and
/// each checkpoint left by a kill parses and holds fewer steps than asked.
#[test]
fn killed_sampling_run_resumes_to_the_same_chain() {
    let steps = 240;
    let dir = sampling_folder("resume", steps);
    ok(&dir, &["sample", "run.ron", "--out", "whole"]);
    assert!(temp_files(&dir.join("whole")).is_empty());
    let whole = std::fs::read(dir.join("whole/samples.csv")).unwrap();

    let mut interrupted = false;
    for delay_ms in [0, 20, 80] {
        let _ = std::fs::remove_dir_all(dir.join("cut"));
        if !start_and_kill(&dir, "cut", &[], Duration::from_millis(delay_ms)) {
            continue;
        }
        // Killed while running: the checkpoint is whole and mid-way.
        let s = EnsembleSampler::load_checkpoint(&dir.join("cut/checkpoint.ron"))
            .expect("the checkpoint left by SIGKILL parses");
        if (s.steps_done() as usize) < steps {
            interrupted = true;
            assert!(!dir.join("cut/posterior.ron").exists());
            ok(&dir, &["sample", "run.ron", "--out", "cut", "--resume"]);
            let resumed = std::fs::read(dir.join("cut/samples.csv")).unwrap();
            assert!(
                resumed == whole,
                "resumed chain differs (killed after {} steps)",
                s.steps_done()
            );
            break;
        }
    }
    assert!(interrupted, "no kill landed mid-run");
    let _ = std::fs::remove_dir_all(&dir);
}

/// Repeated SIGKILLs at different moments of a run that writes large
/// checkpoints: each time the checkpoint is the old complete one or the new
/// complete one (it parses, its step count is a multiple of the interval
/// or the final count), never partial. A clean run leaves no temporary
/// files.
#[test]
fn sigkill_never_leaves_a_partial_checkpoint() {
    let dir = sampling_folder("atomic", 300);
    let mut kills = 0;
    for k in 0..6u64 {
        let out = format!("k{k}");
        if start_and_kill(&dir, &out, &[], Duration::from_millis(15 * k)) {
            kills += 1;
        }
        let ck = dir.join(&out).join("checkpoint.ron");
        let s = EnsembleSampler::load_checkpoint(&ck).expect("checkpoint parses after SIGKILL");
        assert!(s.steps_done() % 5 == 0 || s.steps_done() == 300);
        assert_eq!(s.chain().n_steps() as u64, s.steps_done());
        // Anything left is a whole file or a temporary one, nothing else.
        for e in std::fs::read_dir(dir.join(&out)).unwrap().flatten() {
            let n = e.file_name().to_string_lossy().to_string();
            assert!(
                n == "checkpoint.ron"
                    || n == "checkpoint.chain"
                    || n.ends_with(".tmp")
                    || n == "samples.csv"
                    || n.starts_with("posterior."),
                "unexpected file {n}"
            );
        }
        if dir.join(&out).join("samples.csv").exists() {
            let text = std::fs::read_to_string(dir.join(&out).join("samples.csv")).unwrap();
            assert!(text.ends_with('\n'));
        }
    }
    assert!(kills >= 3, "only {kills} kills landed mid-run");
    ok(
        &dir,
        &["sample", "run.ron", "--out", "clean", "--steps", "40"],
    );
    assert!(temp_files(&dir.join("clean")).is_empty());
    assert!(temp_files(&dir).is_empty());
    let _ = std::fs::remove_dir_all(&dir);
}

fn read_all(dir: &Path, names: &[&str]) -> Vec<Vec<u8>> {
    names
        .iter()
        .map(|n| std::fs::read(dir.join(n)).unwrap())
        .collect()
}

/// `fit` and `sample` outputs byte-identical for 1 and 2 threads and for
/// two runs with the same seed.
#[test]
fn outputs_do_not_depend_on_threads_or_run() {
    let dir = sampling_folder("determinism", 60);
    let fits = ["fit.ron", "fit.json"];
    let samples = ["samples.csv", "posterior.ron", "posterior.json"];
    for (out, threads) in [("a", "1"), ("b", "2"), ("c", "2")] {
        ok(
            &dir,
            &["fit", "run.ron", "--out", out, "--threads", threads],
        );
        ok(
            &dir,
            &["sample", "run.ron", "--out", out, "--threads", threads],
        );
    }
    let a = [
        read_all(&dir.join("a"), &fits),
        read_all(&dir.join("a"), &samples),
    ];
    for other in ["b", "c"] {
        let b = [
            read_all(&dir.join(other), &fits),
            read_all(&dir.join(other), &samples),
        ];
        assert!(a[0] == b[0], "fit outputs differ between a and {other}");
        assert!(a[1] == b[1], "sample outputs differ between a and {other}");
    }
    // The same run file with the two-planet dynamical fit of Orrin-442.
    let orrin = fixture("run.ron");
    let orrin = orrin.to_str().unwrap();
    for (out, threads) in [("d1", "1"), ("d2", "2")] {
        let out = dir.join(out);
        ok(
            &dir,
            &[
                "fit",
                orrin,
                "--out",
                out.to_str().unwrap(),
                "--threads",
                threads,
            ],
        );
    }
    assert!(read_all(&dir.join("d1"), &fits) == read_all(&dir.join("d2"), &fits));
    let _ = std::fs::remove_dir_all(&dir);
}

/// A table of `n` epochs over `span` days for instrument VESKA, RVs of a
/// 25 m/s sinusoid of period 41.3 d plus a deterministic ripple.
fn write_table(path: &Path, n: usize, t0: f64, span: f64) {
    let mut s = String::from("# synthetic\n");
    for i in 0..n {
        let t = t0 + span * i as f64 / (n - 1) as f64;
        let v =
            25.0 * (std::f64::consts::TAU * t / 41.3).sin() + 3.0 * ((i * 7919) % 13) as f64 / 13.0;
        s += &format!("{t:.5} {v:.3} 2.0\n");
    }
    std::fs::write(path, s).unwrap();
}

fn planet(name: &str, period: f64, signal: &str, e: f64) -> String {
    format!(
        "(name: \"{name}\", period: {period:?}, signal: {signal}, eccentricity: {e:?}, omega_star: 40.0, phase: MeanAnomaly(10.0)),"
    )
}

/// Run `fit` on a run file with these planets and models; it must end in
/// bounded time with exit 0 (finite results) or 1/2 (typed message), never
/// a panic or NaN in anything written or printed.
fn pathological_fit(id: &str, planets: &[String], models: &str, span_days: f64) -> (i32, String) {
    let dir = std::env::temp_dir().join(format!("apsidal-harden-{}-{id}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    write_table(&dir.join("v.txt"), 40, 2_460_000.0, span_days);
    let run = format!(
        "(data: [(path: \"v.txt\", instrument: Named(\"VESKA\"))], star: (mass: 0.9, radius: 0.9),
          planets: [{}], reference_epoch: 2460000.0, fit: (models: {models}))",
        planets.join("\n")
    );
    std::fs::write(dir.join("run.ron"), run).unwrap();
    let start = Instant::now();
    let out = apsidal(&dir, &["fit", "run.ron", "--out", "o"]);
    let took = start.elapsed();
    let code = out.status.code().unwrap_or(-1);
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(took < Duration::from_secs(60), "{id}: {took:?}");
    assert!([0, 1, 2].contains(&code), "{id}: exit {code}: {stderr}");
    if code == 0 {
        for f in ["fit.json", "fit.ron"] {
            let text = std::fs::read_to_string(dir.join("o").join(f)).unwrap();
            // (AICc is +inf, written `inf`/`null`, when parameters ≥ points − 1.)
            assert!(!text.contains("NaN"), "{id}: {f} has NaN");
        }
    } else {
        assert!(stderr.starts_with("apsidal: "), "{id}: {stderr}");
        assert!(
            !dir.join("o/fit.json").exists(),
            "{id}: output after failure"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
    (code, stderr)
}

#[test]
fn fit_pathologies_end_typed_and_finite() {
    let dynamical = "[Keplerian, CoplanarEdgeOn]";
    // Orbits that cross: a = 0.2 au at e = 0.6 inside a = 0.25 au at e = 0.5.
    pathological_fit(
        "crossing",
        &[
            planet("b", 30.0, "MassJupiter(3.0)", 0.6),
            planet("c", 42.0, "MassJupiter(3.0)", 0.5),
        ],
        dynamical,
        400.0,
    );
    // Near-parabolic.
    pathological_fit(
        "parabolic",
        &[planet("b", 41.3, "SemiAmplitude(20.0)", 0.999)],
        dynamical,
        400.0,
    );
    // Zero mass in effect (K tiny).
    pathological_fit(
        "tiny_k",
        &[planet("b", 41.3, "SemiAmplitude(1e-9)", 0.1)],
        dynamical,
        400.0,
    );
    // One planet.
    let (code, err) = pathological_fit(
        "one",
        &[planet("b", 41.3, "SemiAmplitude(25.0)", 0.05)],
        dynamical,
        400.0,
    );
    assert_eq!(code, 0, "{err}");
    // Eight planets, well spaced.
    let eight: Vec<String> = (0..8)
        .map(|k| {
            planet(
                &format!("p{k}"),
                5.0 * 2.2f64.powi(k),
                "SemiAmplitude(3.0)",
                0.02,
            )
        })
        .collect();
    pathological_fit("eight", &eight, dynamical, 400.0);
}

/// Epochs over 300 years with an inner period of 1 d: the dynamical model
/// refuses the evaluation (typed, bounded) instead of integrating for ever;
/// the Keplerian fit of the same data still works.
#[test]
fn centuries_of_epochs_are_bounded() {
    let span = 300.0 * 365.25;
    let (code, err) = pathological_fit(
        "centuries_dyn",
        &[
            planet("b", 1.0, "SemiAmplitude(20.0)", 0.0),
            planet("c", 41.3, "SemiAmplitude(20.0)", 0.0),
        ],
        "[Keplerian, CoplanarEdgeOn]",
        span,
    );
    // The fit layer reports that no start had a finite likelihood; the
    // step-budget reason itself is checked through the API in
    // hardening_props.rs (dynamical_work_per_evaluation_is_bounded).
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("CoplanarEdgeOn fit"), "{err}");
    let (code, err) = pathological_fit(
        "centuries_kep",
        &[
            planet("b", 1.0, "SemiAmplitude(20.0)", 0.0),
            planet("c", 41.3, "SemiAmplitude(20.0)", 0.0),
        ],
        "[Keplerian]",
        span,
    );
    assert_eq!(code, 0, "{err}");
}

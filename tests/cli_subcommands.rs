//! End-to-end runs of the binary on the committed demo files
//! (`demo-data/`), one test per subcommand not already run that way
//! elsewhere (`demo`: tests/cli_demo.rs; `sample --resume`:
//! tests/hardening_cli.rs): each must exit 0, write its files, the files
//! must parse back (RON, JSON, CSV, SVG as XML), and a key number must be
//! sane against the demo's injected values (`demo-data/*/truth.ron`, made by
//! examples/make_demo_data.rs). Settings are kept small (two models instead
//! of three, short runs) so that the file stays well under a minute.

use std::path::{Path, PathBuf};
use std::process::Command;

use apsidal::compare::flag::Flag;
use apsidal::compare::report::ComparisonReport;
use apsidal::fit::models::ModelKind;
use apsidal::stability::megno::MegnoResult;
use apsidal::stability::run::StabilityReport;
use apsidal::stability::survey::{SurveySummary, read_samples_csv};
use apsidal::workflow::fitting::FitReport;
use apsidal::workflow::posterior::PosteriorSummary;
use apsidal::workflow::search::SearchReport;

/// The committed demo files.
fn demo(system: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data")
        .join(system)
}

/// A fresh, empty folder for one test.
fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!(
        "apsidal-cli-subcommands-{name}-{}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Run the binary in `dir` (quiet) and return its stdout; panics with its
/// stderr unless it exits 0.
fn apsidal(dir: &Path, args: &[&str]) -> String {
    let o = Command::new(env!("CARGO_BIN_EXE_apsidal"))
        .current_dir(dir)
        .args(args)
        .arg("--quiet")
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "apsidal {args:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8(o.stdout).unwrap()
}

/// The demo run file of `system` with its tables as absolute paths and
/// `models` in place of its model list, written into `dir`.
fn run_file(dir: &Path, system: &str, models: &str) -> PathBuf {
    let text = std::fs::read_to_string(demo(system).join("run.ron")).unwrap();
    let tables = demo(system);
    let text = text
        .replace(
            "(path: \"korva.txt\")",
            &format!("(path: {:?})", tables.join("korva.txt")),
        )
        .replace(
            "(path: \"lisse.txt\")",
            &format!("(path: {:?})", tables.join("lisse.txt")),
        )
        .replace(
            "models: [Keplerian, CoplanarEdgeOn, CoplanarSinI]",
            &format!("models: [{models}]"),
        );
    assert!(text.contains(&format!("models: [{models}]")), "{text}");
    let path = dir.join(format!("{system}.ron"));
    std::fs::write(&path, text).unwrap();
    path
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// `stem.ron` and `stem.json` parse into the same value.
fn ron_and_json<T>(dir: &Path, stem: &str) -> T
where
    T: serde::de::DeserializeOwned + PartialEq + std::fmt::Debug,
{
    let r: T = ron::from_str(&read(&dir.join(format!("{stem}.ron")))).unwrap();
    let j: T = serde_json::from_str(&read(&dir.join(format!("{stem}.json")))).unwrap();
    assert_eq!(r, j, "{stem}.ron and {stem}.json differ");
    j
}

/// The SVG file is well-formed XML with an `svg` root and some text.
fn svg(path: &Path) {
    let text = read(path);
    let doc = roxmltree::Document::parse(&text)
        .unwrap_or_else(|e| panic!("{}: not XML: {e}", path.display()));
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    assert!(
        doc.descendants().any(|n| n.has_tag_name("text")),
        "{}: no labels",
        path.display()
    );
}

#[test]
fn help_of_every_subcommand_shows_a_worked_example() {
    let dir = scratch("help");
    for sub in [
        "demo",
        "periodogram",
        "fit",
        "sample",
        "compare",
        "stability",
        "map",
        "merge",
        "simulate",
    ] {
        let text = apsidal(&dir, &[sub, "--help"]);
        assert!(text.contains("Example"), "{sub} --help: {text}");
        assert!(
            text.contains(&format!("apsidal {sub} ")) || text.contains(&format!("apsidal {sub}\n")),
            "{sub} --help shows no command line: {text}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn periodogram_finds_the_inner_planet() {
    let dir = scratch("periodogram");
    let t = demo("tellan");
    let (k, l) = (t.join("korva.txt"), t.join("lisse.txt"));
    apsidal(
        &dir,
        &[
            "periodogram",
            k.to_str().unwrap(),
            l.to_str().unwrap(),
            "--shortest-period",
            "2",
            "--out",
            "pg",
        ],
    );
    let out = dir.join("pg");
    let report: SearchReport = ron_and_json(&out, "periodogram");
    svg(&out.join("periodogram.svg"));
    assert_eq!(report.n_points, 150);
    // Injected: P_b = 60.2 d (osculating at the reference epoch) with
    // K = 129.5 m/s, the strongest signal (demo-data/tellan/truth.ron). The
    // periastra precess by ~8°/yr, so the peak is the apparent period of a
    // precessing orbit: it must lie within one frequency resolution 1/T of
    // 1/60.2 d⁻¹, i.e. |ΔP| < P²/T (0.83 d here).
    let top = report.detections.first().expect("a detection");
    let resolution = 60.2f64.powi(2) / report.baseline;
    assert!(
        (top.period - 60.2).abs() < resolution,
        "top peak at {} d (resolution {resolution} d)",
        top.period
    );
    assert!(top.fap < 1e-10, "FAP {}", top.fap);
    assert!(
        (top.sinusoid.amplitude - 129.5).abs() < 25.0,
        "amplitude {}",
        top.sinusoid.amplitude
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn fit_recovers_the_injected_system() {
    let dir = scratch("fit");
    let run = run_file(&dir, "tellan", "Keplerian, CoplanarEdgeOn");
    apsidal(&dir, &["fit", run.to_str().unwrap(), "--out", "fits"]);
    let out = dir.join("fits");
    let report: FitReport = ron_and_json(&out, "fit");
    for name in ["rv.svg", "phase-b.svg", "phase-c.svg"] {
        svg(&out.join(name));
    }
    assert_eq!(report.fits.len(), 2);
    let (kep, dynf) = (&report.fits[0], &report.fits[1]);
    assert_eq!(kep.kind, ModelKind::Keplerian);
    assert_eq!(dynf.kind, ModelKind::CoplanarEdgeOn);
    assert!(dynf.fit.converged, "{}", dynf.fit.status);
    // With the fitted jitters χ²/dof of a good fit is near 1.
    let dof = (dynf.fit.n_points - dynf.fit.n_free) as f64;
    let reduced = dynf.fit.chi_square / dof;
    assert!((0.8..1.3).contains(&reduced), "χ²/dof = {reduced}");
    // Injected periods 60.2 and 125.1 d (osculating, truth.ron).
    assert!((dynf.planets[0].period - 60.2).abs() < 0.2);
    assert!((dynf.planets[1].period - 125.1).abs() < 0.5);
    // KORVA: errors 1.2–2.0 m/s and jitter 2 m/s injected, so residuals of
    // about 2.6 m/s RMS; the Keplerian model cannot follow the precession.
    let rms = |f: &apsidal::workflow::fitting::ModelFit| {
        f.residual_rms.iter().find(|(n, _)| n == "KORVA").unwrap().1
    };
    assert!(rms(dynf) < 4.0, "dynamical RMS {}", rms(dynf));
    assert!(rms(kep) > 10.0, "Keplerian RMS {}", rms(kep));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn compare_flags_tellan_resonant() {
    let dir = scratch("compare");
    let run = run_file(&dir, "tellan", "Keplerian, CoplanarEdgeOn");
    apsidal(&dir, &["compare", run.to_str().unwrap(), "--out", "cmp"]);
    let out = dir.join("cmp");
    let r = ComparisonReport::from_json(&read(&out.join("comparison.json"))).unwrap();
    let r2 = ComparisonReport::from_ron(&read(&out.join("comparison.ron"))).unwrap();
    assert_eq!(r, r2);
    let _: (StabilityReport, Option<MegnoResult>) = ron_and_json(&out, "stability");
    let _: apsidal::compare::diagnosis::ResonanceDiagnosis = ron_and_json(&out, "diagnosis");
    svg(&out.join("divergence.svg"));
    svg(&out.join("angles-1.svg"));
    // The injected pair has P_c/P_b = 2.078 with a librating 2:1 angle.
    assert_eq!(r.flag(), Flag::Resonant, "{:?}", r.decision.reasons);
    let text = read(&out.join("comparison.txt"));
    assert!(text.contains("2:1"), "{text}");
    // BIC(dynamical) − BIC(Keplerian): strongly negative (README: −671).
    assert!(r.statistics.difference.bic < -10.0);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn stability_of_the_fit_and_a_small_map() {
    let dir = scratch("stability");
    let run = run_file(&dir, "tellan", "CoplanarEdgeOn");
    let run = run.to_str().unwrap();
    apsidal(
        &dir,
        &[
            "stability",
            run,
            "--orbits",
            "1500",
            "--megno",
            "--out",
            "sol",
        ],
    );
    let r: StabilityReport = ron_and_json(&dir.join("sol"), "stability");
    assert!(r.verdict.is_stable(), "{:?}", r.verdict);
    // 1500 outer orbits of ~125 d, ended on the first step past the length.
    assert!((r.outer_period - 125.0).abs() < 3.0, "{}", r.outer_period);
    assert!((r.length_days - 1500.0 * r.outer_period).abs() < 1e-6);
    assert!(r.survival_time >= r.length_days);
    assert!(r.survival_time - r.length_days <= r.step);
    // Wisdom–Holman energy error ~ (m/M⋆)(h/P_b)² ≈ 2.6e-3 × (2.2/60)² ≈
    // 3e-6 (Wisdom & Holman 1991, error of order ε h²); allow a factor 10
    // for the eccentricities.
    assert!(r.energy_error < 3e-5, "energy error {}", r.energy_error);
    // MEGNO ⟨Y⟩ of a quasi-periodic orbit tends to 2 (from below here, its
    // time average lagging by ~1/t), while chaos makes it grow ∝ t
    // (Cincotta, Giordano & Simó 2003). The demo's 10 000-orbit run gives
    // 2.004 (README).
    let y = r.megno.expect("MEGNO asked for");
    assert!((1.5..2.2).contains(&y), "MEGNO ⟨Y⟩ = {y}");

    apsidal(
        &dir,
        &[
            "map",
            run,
            "--x",
            "2.eccentricity:0.1:0.8:2",
            "--y",
            "2.period:124:126:2",
            "--orbits",
            "200",
            "--out",
            "map",
        ],
    );
    let text = read(&dir.join("map").join("map.csv"));
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(
        &header[..6],
        &[
            "ix",
            "iy",
            "p2.eccentricity",
            "p2.period",
            "survival",
            "verdict"
        ]
    );
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 4);
    for row in &rows {
        assert_eq!(row.len(), header.len());
        let e: f64 = row[2].parse().unwrap();
        // e_c = 0.1 is the fitted neighbourhood (stable); e_c = 0.8 brings
        // planet c's pericentre (0.09 au) inside planet b's orbit (0.28 au).
        let survival: f64 = row[4].parse().unwrap();
        if e < 0.5 {
            assert_eq!(row[5], "stable", "{row:?}");
            assert!(survival >= 200.0, "{row:?}");
        } else {
            assert_ne!(row[5], "stable", "{row:?}");
            assert!(survival < 200.0, "{row:?}");
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sample_then_survey_in_shards_merges_to_the_whole() {
    let dir = scratch("survey");
    let run = run_file(&dir, "tellan", "CoplanarEdgeOn");
    let run = run.to_str().unwrap();
    apsidal(
        &dir,
        &[
            "sample",
            run,
            "--steps",
            "24",
            "--walkers",
            "28",
            "--out",
            "post",
        ],
    );
    let post = dir.join("post");
    let summary: PosteriorSummary = ron_and_json(&post, "posterior");
    assert_eq!(summary.steps, 24);
    assert_eq!(summary.walkers, 28);
    assert!(summary.acceptance > 0.0 && summary.acceptance < 1.0);
    svg(&post.join("posterior-histograms.svg"));
    svg(&post.join("posterior-pairs.svg"));
    let samples = post.join("samples.csv");
    let table = read_samples_csv(&samples).unwrap();
    assert_eq!(table.rows.len(), summary.n_samples);
    assert!(table.columns.iter().any(|c| c == "b.period"));

    let csv = samples.to_str().unwrap();
    let common = [
        "stability",
        run,
        "--samples",
        csv,
        "--max-samples",
        "6",
        "--orbits",
        "150",
        "--seed",
        "5",
    ];
    let mut whole = common.to_vec();
    whole.extend(["--out", "whole"]);
    apsidal(&dir, &whole);
    for shard in ["0/2", "1/2"] {
        let mut a = common.to_vec();
        a.extend(["--shard", shard, "--out", "parts"]);
        apsidal(&dir, &a);
    }
    apsidal(
        &dir,
        &[
            "merge",
            "--out",
            "merged",
            "parts/survey-shard-0-of-2.csv",
            "parts/survey-shard-1-of-2.csv",
        ],
    );
    // Resuming a finished shard keeps its table as it is.
    let before = read(&dir.join("parts/survey-shard-1-of-2.csv"));
    let mut again = common.to_vec();
    again.extend(["--shard", "1/2", "--resume", "--out", "parts"]);
    apsidal(&dir, &again);
    assert_eq!(before, read(&dir.join("parts/survey-shard-1-of-2.csv")));
    let a = read(&dir.join("whole/survey.csv"));
    let b = read(&dir.join("merged/survey.csv"));
    assert_eq!(a, b, "merged shards differ from the unsplit survey");
    assert_eq!(a.lines().count(), 7);
    let s1: SurveySummary = ron_and_json(&dir.join("whole"), "survey-summary");
    let s2: SurveySummary = ron_and_json(&dir.join("merged"), "survey-summary");
    assert_eq!(s1, s2);
    // Samples next to a stable best fit (tests/stability_*): all stable,
    // so the Clopper–Pearson 95 % interval is [(0.025)^(1/6), 1] =
    // [0.5407, 1] (exact: the lower bound solves p^6 = 0.025).
    assert_eq!((s1.n_samples, s1.n_stable), (6, 6));
    assert!((s1.interval.lower - 0.025f64.powf(1.0 / 6.0)).abs() < 1e-6);
    assert_eq!(s1.interval.upper, 1.0);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn simulate_reproduces_the_demo_data() {
    let dir = scratch("simulate");
    // A run file holding the injected values (demo-data/tellan/truth.ron).
    let run = dir.join("truth.ron");
    let korva_path = demo("tellan").join("korva.txt");
    std::fs::write(
        &run,
        format!(
            r#"(
    data: [(path: {korva_path:?})],
    instruments: ["KORVA"],
    star: (name: "Tellan", mass: 0.78, radius: 0.75),
    planets: [
        (name: "b", period: 60.2, signal: MassJupiter(2.1), eccentricity: 0.17,
         omega_star: 112.0, phase: MeanAnomaly(35.0), inclination: Some(84.0)),
        (name: "c", period: 125.1, signal: MassJupiter(1.75), eccentricity: 0.12,
         omega_star: 286.0, phase: MeanAnomaly(250.0), inclination: Some(84.0)),
    ],
    reference_epoch: 2457250.0,
)"#
        ),
    )
    .unwrap();
    let korva = read(&demo("tellan").join("korva.txt"));
    let rows: Vec<[f64; 3]> = korva
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("time"))
        .map(|l| {
            let f: Vec<f64> = l
                .split_whitespace()
                .take(3)
                .map(|x| x.parse().unwrap())
                .collect();
            [f[0], f[1], f[2]]
        })
        .collect();
    assert_eq!(rows.len(), 100);
    let epochs: String = rows.iter().map(|r| format!("{}\n", r[0])).collect();
    std::fs::write(dir.join("epochs.txt"), epochs).unwrap();
    let r = run.to_str().unwrap();
    apsidal(
        &dir,
        &["simulate", r, "--epochs", "epochs.txt", "--out", "sim"],
    );
    let sim = apsidal::data::read_tables(
        &[apsidal::data::TableSource {
            path: dir.join("sim/simulated.txt"),
            instrument: apsidal::data::InstrumentLabel::FromColumn,
        }],
        None,
    )
    .unwrap();
    assert_eq!(sim.len(), rows.len());
    // The demo's KORVA RVs are these N-body RVs + offset −15 m/s + noise of
    // variance err² + (2 m/s)² (truth.ron): the residual RMS must match.
    let mut sum = 0.0;
    let mut var = 0.0;
    for (k, row) in rows.iter().enumerate() {
        assert!((sim.time()[k] - row[0]).abs() < 1e-5);
        let d = row[1] - (sim.rv()[k] - 15.0);
        sum += d * d;
        var += row[2] * row[2] + 4.0;
    }
    let (rms, expected) = ((sum / 100.0).sqrt(), (var / 100.0).sqrt());
    assert!(
        (rms / expected - 1.0).abs() < 0.2,
        "RMS {rms} m/s, expected {expected} m/s"
    );

    // Keplerian with seeded noise: reproducible, and the noise has the σ asked.
    for out in ["k1", "k2"] {
        apsidal(
            &dir,
            &[
                "simulate",
                r,
                "--epochs",
                "epochs.txt",
                "--model",
                "keplerian",
                "--noise",
                "3",
                "--seed",
                "7",
                "--out",
                out,
            ],
        );
    }
    assert_eq!(
        read(&dir.join("k1/simulated.txt")),
        read(&dir.join("k2/simulated.txt"))
    );
    apsidal(
        &dir,
        &[
            "simulate",
            r,
            "--epochs",
            "epochs.txt",
            "--model",
            "keplerian",
            "--out",
            "k0",
        ],
    );
    let col = |out: &str| -> Vec<f64> {
        read(&dir.join(out).join("simulated.txt"))
            .lines()
            .filter(|l| !l.starts_with('#') && !l.starts_with("time"))
            .map(|l| l.split_whitespace().nth(1).unwrap().parse().unwrap())
            .collect()
    };
    let (noisy, exact) = (col("k1"), col("k0"));
    let s = (noisy
        .iter()
        .zip(&exact)
        .map(|(a, b)| (a - b).powi(2))
        .sum::<f64>()
        / 100.0)
        .sqrt();
    assert!((2.3..3.7).contains(&s), "noise RMS {s}");
    let _ = std::fs::remove_dir_all(&dir);
}

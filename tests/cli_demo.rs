//! End-to-end runs of the command line on the embedded demo systems: the
//! whole job completes, flags the interacting system (two giants near 2:1)
//! as resonant or near-resonant with the librating angle named and the
//! contrast system (period ratio 7.3) as kinematic-adequate; every result
//! file parses back and every picture is well-formed XML with its title.
//! The outside reference is the injected truth of the demo systems
//! (demo-data/*/truth.ron): the first is built in 2:1 libration, the
//! second far from any commensurability.

use std::path::Path;
use std::process::Command;

use apsidal::workflow::job::JobReport;

fn run_demo(system: &str, out: &Path, threads: &str) -> (String, JobReport) {
    let o = Command::new(env!("CARGO_BIN_EXE_apsidal"))
        .args(["--threads", threads, "--out"])
        .arg(out)
        .args([
            "demo", "--system", system, "--steps", "120", "--survey", "12",
        ])
        .output()
        .expect("run the binary");
    let stdout = String::from_utf8_lossy(&o.stdout).to_string();
    let stderr = String::from_utf8_lossy(&o.stderr).to_string();
    assert!(
        o.status.success(),
        "demo {system} failed: {stderr}\n{stdout}"
    );
    assert!(!stderr.contains("panicked"));
    let text = std::fs::read_to_string(out.join("job.ron")).expect("job.ron");
    let report: JobReport = ron::from_str(&text).expect("job.ron parses back");
    let json = std::fs::read_to_string(out.join("job.json")).expect("job.json");
    let again: JobReport = serde_json::from_str(&json).expect("job.json parses back");
    assert_eq!(report.fits.fits.len(), again.fits.fits.len());
    (stdout, report)
}

fn check_files(out: &Path, report: &JobReport) {
    for f in &report.files {
        let path = out.join(f);
        let bytes = std::fs::read(&path).unwrap_or_else(|_| panic!("{f} missing"));
        assert!(!bytes.is_empty(), "{f} is empty");
        if f.ends_with(".svg") {
            let text = String::from_utf8(bytes).expect("SVG is UTF-8");
            let doc =
                roxmltree::Document::parse(&text).unwrap_or_else(|e| panic!("{f}: not XML: {e}"));
            let texts: Vec<&str> = doc.descendants().filter_map(|n| n.text()).collect();
            assert!(
                texts.iter().any(|t| t.contains('[') || t.contains("power")),
                "{f}: no labelled axis"
            );
            assert!(!text.contains("NaN"), "{f} holds NaN");
        }
        if f.ends_with(".json") {
            let _: serde_json::Value =
                serde_json::from_slice(&std::fs::read(&path).unwrap()).expect("JSON");
        }
    }
}

#[test]
fn demo_flags_the_resonant_and_the_kinematic_system() {
    let dir = std::env::temp_dir().join(format!("apsidal-demo-test-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);

    let out = dir.join("tellan");
    let (stdout, report) = run_demo("tellan", &out, "2");
    println!("{stdout}");
    let a = report.assessment.as_ref().expect("an assessment");
    let flag = serde_json::to_string(&a.comparison.decision.flag).unwrap();
    assert!(flag.contains("resonant"), "Tellan flagged {flag}");
    assert!(stdout.contains("2:1"), "the librating angle is named");
    assert!(a.stability.verdict.is_stable());
    for name in [
        "rv.svg",
        "periodogram.svg",
        "divergence.svg",
        "angles-1.svg",
        "posterior-histograms.svg",
        "posterior-pairs.svg",
        "megno-map.csv",
        "megno-map.svg",
    ] {
        assert!(report.files.iter().any(|f| f == name), "{name} not written");
    }
    // The MEGNO map about the best fit: 15 × 10 cells, every one counted
    // once, and one line in the summary.
    let m = report.megno_map.as_ref().expect("a MEGNO map");
    assert_eq!(m.cells, 150);
    assert_eq!(m.regular + m.irregular + m.disrupted + m.missing, 150);
    assert!(m.regular > 0, "{m:?}");
    assert!(stdout.contains("MEGNO map (15×10 cells"), "{stdout}");
    let csv = std::fs::read_to_string(out.join("megno-map.csv")).unwrap();
    assert_eq!(csv.lines().count(), 151);
    assert!(csv.starts_with("ix,iy,p2.period,p2.eccentricity,megno,verdict,survival_orbits\n"));
    let svg = std::fs::read_to_string(out.join("megno-map.svg")).unwrap();
    assert!(svg.contains("Tellan: MEGNO map, 300 outer orbits per cell"));
    assert!(svg.contains("⟨Y⟩ (MEGNO), clipped to [1.5, 8]"));
    check_files(&out, &report);

    // Determinism (issue: results fixed by the seed whatever the thread
    // count): the same demo with one thread writes byte-identical files.
    let out1 = dir.join("tellan-1-thread");
    let (_, report1) = run_demo("tellan", &out1, "1");
    assert_eq!(report.files, report1.files);
    for f in &report.files {
        let a = std::fs::read(out.join(f)).unwrap();
        let b = std::fs::read(out1.join(f)).unwrap();
        assert!(a == b, "{f} differs between 2 threads and 1 thread");
    }

    let out = dir.join("verrow");
    let (stdout, report) = run_demo("verrow", &out, "2");
    println!("{stdout}");
    let a = report.assessment.as_ref().expect("an assessment");
    let flag = serde_json::to_string(&a.comparison.decision.flag).unwrap();
    assert_eq!(flag, "\"kinematic-adequate\"");
    check_files(&out, &report);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn every_subcommand_has_help_with_an_example() {
    for sub in [
        "demo",
        "periodogram",
        "fit",
        "sample",
        "simulate",
        "stability",
        "map",
        "merge",
    ] {
        let o = Command::new(env!("CARGO_BIN_EXE_apsidal"))
            .args([sub, "--help"])
            .output()
            .unwrap();
        assert!(o.status.success(), "{sub} --help");
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(
            text.contains("apsidal "),
            "{sub} --help has no worked example"
        );
    }
}

//! End-to-end runs of the `stability`, `map` and `merge` subcommands on the
//! Orrin-442 fixture and a small synthetic samples CSV, and their `--help`.

mod stability_support;

use std::process::Command;

use stability_support::{model, run_file, samples_csv, scratch};

fn apsidal(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_apsidal"))
        .args(args)
        .output()
        .unwrap()
}

#[test]
fn help_of_each_subcommand() {
    for sub in ["stability", "map", "merge"] {
        let o = apsidal(&[sub, "--help"]);
        assert!(o.status.success(), "{sub}");
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(text.contains("Example"), "{sub}: {text}");
    }
}

#[test]
fn survey_shards_merge_to_the_whole_and_map_runs() {
    let d = scratch("cli");
    let csv = d.join("samples.csv");
    std::fs::write(&csv, samples_csv(&model(), 9)).unwrap();
    let run = run_file();
    let (run, csv) = (run.to_str().unwrap(), csv.to_str().unwrap());
    let whole = d.join("whole");
    let parts = d.join("parts");
    let o = apsidal(&[
        "stability",
        run,
        "--samples",
        csv,
        "--orbits",
        "200",
        "--quiet",
        "--out",
        whole.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for k in 0..2 {
        let shard = format!("{k}/2");
        let o = apsidal(&[
            "stability",
            run,
            "--samples",
            csv,
            "--orbits",
            "200",
            "--shard",
            &shard,
            "--quiet",
            "--out",
            parts.to_str().unwrap(),
        ]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let merged = d.join("merged");
    let o = apsidal(&[
        "merge",
        "--out",
        merged.to_str().unwrap(),
        parts.join("survey-shard-0-of-2.csv").to_str().unwrap(),
        parts.join("survey-shard-1-of-2.csv").to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let a = std::fs::read(whole.join("survey.csv")).unwrap();
    let b = std::fs::read(merged.join("survey.csv")).unwrap();
    assert_eq!(a, b);
    assert_eq!(String::from_utf8_lossy(&a).lines().count(), 10);
    assert!(whole.join("survey-summary.json").exists());

    // Bad input: a malformed samples file names its line, exit code 2.
    let bad = d.join("bad.csv");
    std::fs::write(&bad, "walker,step,ln_prob,b.period\n0,0,-1,x\n").unwrap();
    let o = apsidal(&[
        "stability",
        run,
        "--samples",
        bad.to_str().unwrap(),
        "--quiet",
        "--out",
        d.join("bad").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("bad.csv:2"));

    // The fitted solution and a 3 × 2 map. The Keplerian fit of this
    // fixture has e_b close to 1, whose default step (resolving the
    // pericentre) would exceed --max-steps: a fixed step keeps it short.
    let sol = d.join("sol");
    let o = apsidal(&[
        "stability",
        run,
        "--orbits",
        "200",
        "--step",
        "1.5",
        "--quiet",
        "--out",
        sol.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(sol.join("stability.ron").exists());
    let mp = d.join("map");
    let o = apsidal(&[
        "map",
        run,
        "--x",
        "2.period:45:84:3",
        "--y",
        "2.eccentricity:0:0.3:2",
        "--orbits",
        "100",
        "--step",
        "1.5",
        "--quiet",
        "--out",
        mp.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(mp.join("map.csv")).unwrap();
    assert_eq!(text.lines().count(), 7);
    assert!(text.starts_with("ix,iy,p2.period,p2.eccentricity,survival,verdict,survival_orbits"));
    // The heat map beside it, for every indicator.
    let svg = std::fs::read_to_string(mp.join("map.svg")).unwrap();
    roxmltree::Document::parse(&svg).unwrap();
    assert!(svg.contains("survival [outer orbits], clipped to [0, 100]"));
    let o = apsidal(&[
        "map",
        run,
        "--x",
        "9.period:1:2:2",
        "--y",
        "2.eccentricity:0:0.3:2",
        "--quiet",
    ]);
    assert_eq!(o.status.code(), Some(2));
}

/// `map --indicator megno` on the demo system Tellan (invented K dwarf
/// with two giants near 2:1): a 4 × 3 grid of the outer planet's period
/// and eccentricity, 100 outer orbits per cell. Without --quiet, so that
/// the progress bar is seen to stay off a stderr that is not a terminal.
#[test]
fn megno_map_of_the_demo_system() {
    let d = scratch("megno-map");
    let run = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/tellan/run.ron");
    let o = apsidal(&[
        "map",
        run.to_str().unwrap(),
        "--indicator",
        "megno",
        "--x",
        "2.period:110:140:4",
        "--y",
        "2.eccentricity:0:0.4:3",
        "--orbits",
        "100",
        "--out",
        d.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(
        o.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(stdout.contains("of 12 cells stable"), "{stdout}");
    let csv = std::fs::read_to_string(d.join("map.csv")).unwrap();
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "ix,iy,p2.period,p2.eccentricity,megno,verdict,survival_orbits"
    );
    let rows: Vec<Vec<String>> = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    assert_eq!(rows.len(), 12);
    for r in &rows {
        // A value exactly when the cell survived; else the event names it.
        if r[5] == "stable" {
            assert!(r[4].parse::<f64>().unwrap() > 0.0, "{r:?}");
        } else {
            assert_eq!(r[4], "", "{r:?}");
            assert!(
                [
                    "close-encounter",
                    "star-collision",
                    "ejection",
                    "integration-failure"
                ]
                .contains(&r[5].as_str()),
                "{r:?}"
            );
        }
    }
    eprintln!("{csv}");
    let svg = std::fs::read_to_string(d.join("map.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let text: String = doc
        .descendants()
        .filter_map(|n| n.text())
        .collect::<Vec<_>>()
        .join("|");
    for want in [
        "Tellan: MEGNO map, 100 outer orbits per cell",
        "period P_2 [d]",
        "eccentricity e_2 [1]",
        "⟨Y⟩ (MEGNO), clipped to [1.5, 8]",
    ] {
        assert!(text.contains(want), "{want}: {text}");
    }
    // An unknown indicator is bad input.
    let o = apsidal(&[
        "map",
        run.to_str().unwrap(),
        "--indicator",
        "lyapunov",
        "--x",
        "2.period:110:140:4",
        "--y",
        "2.eccentricity:0:0.4:3",
        "--quiet",
    ]);
    assert_eq!(o.status.code(), Some(2));
}

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

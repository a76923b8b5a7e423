//! The comparison report: RON and JSON files parse back into the same
//! report (round trip), and the text summary carries the flag and the
//! numbers. Models at synthetic parameters; the pair summary from a
//! constructed librating 2:1 history (tests/compare_support).

mod compare_support;

use apsidal::compare::flag::Flag;
use apsidal::compare::horizon::{HorizonSettings, horizon_over_samples};
use apsidal::compare::report::{ComparisonReport, ReportSettings, build_report};
use apsidal::compare::resonance::{SummarySettings, summarise_pair};
use apsidal::compare::statistics::ModelAt;
use apsidal::fit::models::ModelKind;
use compare_support::*;

#[test]
fn report_round_trips_and_reads() {
    let planets = near_two_to_one();
    let obs = observations(&planets, 60, 1200.0, 21);
    let pair = Pair::new(&planets, &obs);
    let Pair { km, kv, dm, dv } = &pair;
    let (k, d) = (pair.keplerian(), pair.dynamical());
    let pair = summarise_pair(&pair_history(true, 2.0), 0, 1, &SummarySettings::default()).unwrap();
    let samples = vec![(kv.clone(), dv.clone()); 3];
    let post = horizon_over_samples(km, dm, &samples, &HorizonSettings::default()).unwrap();
    let settings = ReportSettings {
        series_points: 500,
        ..ReportSettings::default()
    };
    let report = build_report(&k, &d, vec![pair], Some(post), &settings).unwrap();
    assert_eq!(report.flag(), Flag::Resonant);
    assert!(report.decision.criteria.evidence_requires_dynamics);
    let series = &report.difference_series;
    assert_eq!(series.t_d.len(), series.difference_m_s.len());
    assert!(series.t_d.len() <= 500);
    assert_eq!(series.threshold_m_s, 1.0);

    let dir = std::env::temp_dir().join(format!("apsidal-compare-report-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let [ron_path, json_path, txt_path] = report.write(&dir.join("comparison")).unwrap();
    let from_ron =
        ComparisonReport::from_ron(&std::fs::read_to_string(&ron_path).unwrap()).unwrap();
    let from_json =
        ComparisonReport::from_json(&std::fs::read_to_string(&json_path).unwrap()).unwrap();
    assert_eq!(from_ron, report);
    assert_eq!(from_json, report);
    assert!(
        std::fs::read_to_string(&json_path)
            .unwrap()
            .contains("\"resonant\"")
    );

    let text = std::fs::read_to_string(&txt_path).unwrap();
    assert_eq!(text, report.text_summary());
    println!("{text}");
    assert!(text.contains("flag: resonant"));
    let s = &report.statistics;
    assert!(text.contains(&format!("{:.3}", -s.difference.bic)));
    assert!(text.contains(&format!("{:.3}", s.difference.ln_likelihood)));
    assert!(text.contains(&format!("{:.3}", s.velocity.max_on_grid_m_s)));
    assert!(text.contains("2:1 φ0 (22.9)"));
    assert!(text.contains(&format!("{:.4}", report.pairs[0].ratios.mean)));
    let g1 = report.pairs[0]
        .precession_inner
        .rate()
        .unwrap()
        .rate_deg_per_yr;
    assert!(text.contains(&format!("{g1:.4}")));
    assert!(text.contains(&report.horizon.outcome.describe()));
    std::fs::remove_dir_all(&dir).unwrap();
}

/// End to end on fitted models: both models fitted by maximum likelihood to
/// data drawn from the dynamical model (near 2:1, Jupiter masses) from
/// starts 0.3 % off in period; the report from the fit results must find
/// strong evidence for the dynamical model and flag the system interacting
/// (no pair summaries given here).
#[test]
fn report_from_fits_flags_interaction() {
    use apsidal::fit::best_fit::{FitSettings, fit_model};
    let planets = near_two_to_one();
    let obs = observations(&planets, 60, 1200.0, 8);
    let (km, kv) = model(ModelKind::Keplerian, &planets, &obs);
    let (dm, dv) = model(ModelKind::CoplanarEdgeOn, &planets, &obs);
    let nudge = |m: &apsidal::fit::models::RvModel, v: &[f64]| {
        let mut s = v.to_vec();
        for p in ["b.period", "c.period"] {
            s[m.params.index_of(p).unwrap()] *= 1.003;
        }
        s
    };
    let kf = fit_model(&km, &[nudge(&km, &kv)], &FitSettings::default()).unwrap();
    let df = fit_model(&dm, &[nudge(&dm, &dv)], &FitSettings::default()).unwrap();
    // Evaluate each model as its fit did (the fit holds the WH step fixed).
    let km = km.with_wh_step(kf.wh_step);
    let dm = dm.with_wh_step(df.wh_step);
    let k = ModelAt::from_fit(&km, &kf, "Keplerian").unwrap();
    let d = ModelAt::from_fit(&dm, &df, "dynamical").unwrap();
    let report = build_report(&k, &d, Vec::new(), None, &ReportSettings::default()).unwrap();
    let s = &report.statistics;
    println!("{}", report.text_summary());
    // The statistics agree with the fit results' own.
    assert!((s.keplerian.ln_likelihood - kf.ln_likelihood).abs() < 1e-9 * kf.ln_likelihood.abs());
    assert!((s.dynamical.bic - df.bic).abs() < 1e-9 * df.bic.abs());
    assert!(-s.difference.bic > 10.0);
    assert_eq!(report.flag(), Flag::Interacting);
    assert!(report.decision.reasons[0].starts_with("ΔBIC(Keplerian − dynamical)"));
    // A fit result whose names differ from the model's is refused.
    let mut wrong = kf.clone();
    wrong.names[0] = "b.periodd".into();
    assert!(matches!(
        ModelAt::from_fit(&km, &wrong, "Keplerian"),
        Err(apsidal::compare::statistics::CompareError::NamesDiffer(_))
    ));
}

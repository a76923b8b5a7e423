//! The flag and its reasons on constructed inputs: resonance summaries of
//! constructed element histories whose answer is known by construction
//! (a librating 2:1 angle of amplitude 0.4 rad = 22.9°; a circulating pair
//! 2 % wide of 2:1; a pair at ratio 2.75, 10 % from 5:2 and 8 % from 3:1),
//! and evidence numbers placed either side of each threshold.

mod compare_support;

use apsidal::compare::flag::{Flag, FlagEvidence, FlagThresholds, decide_flag};
use apsidal::compare::horizon::HorizonOutcome;
use apsidal::compare::resonance::{SummarySettings, summarise_pair};
use compare_support::pair_history;

fn evidence(delta_bic: f64, dv: f64, horizon: HorizonOutcome) -> FlagEvidence {
    FlagEvidence {
        delta_bic_kep_minus_dyn: delta_bic,
        delta_ln_likelihood: 0.5 * delta_bic,
        max_velocity_difference_m_s: dv,
        median_error_m_s: 1.5,
        horizon,
        horizon_threshold_m_s: 1.5,
    }
}

const BEYOND: HorizonOutcome = HorizonOutcome::BeyondSpan {
    span_d: 36_525.0,
    max_difference_m_s: 0.8,
};

fn reached(yr: f64) -> HorizonOutcome {
    HorizonOutcome::Reached {
        epoch_d: 2_460_500.0 + yr * 365.25,
        after_last_d: yr * 365.25,
        after_last_yr: yr,
    }
}

#[test]
fn flags_follow_their_thresholds() {
    let th = FlagThresholds::default();
    let settings = SummarySettings::default();
    let resonant = summarise_pair(&pair_history(true, 2.0), 0, 1, &settings).unwrap();
    let near = summarise_pair(&pair_history(false, 2.04), 0, 1, &settings).unwrap();
    let far = summarise_pair(&pair_history(false, 2.75), 0, 1, &settings).unwrap();

    let d = decide_flag(
        &evidence(3.0, 0.5, BEYOND),
        std::slice::from_ref(&resonant),
        &th,
    );
    assert_eq!(d.flag, Flag::Resonant);
    assert!(d.reasons[0].contains("2:1 φ0"), "{:?}", d.reasons);
    assert!(d.reasons[0].contains("22.9°"), "{:?}", d.reasons);
    assert!(
        d.reasons
            .iter()
            .any(|r| r.contains("ΔBIC(Keplerian − dynamical) = 3.00"))
    );
    assert_eq!(d.criteria.resonant_pairs, vec![0]);

    // An amplitude limit below 22.9° makes the same pair only near.
    let tight = FlagThresholds {
        libration_amplitude_deg: 20.0,
        ..th
    };
    let d = decide_flag(
        &evidence(3.0, 0.5, BEYOND),
        std::slice::from_ref(&resonant),
        &tight,
    );
    assert_eq!(d.flag, Flag::NearResonant);

    let d = decide_flag(
        &evidence(3.0, 0.5, BEYOND),
        std::slice::from_ref(&near),
        &th,
    );
    assert_eq!(d.flag, Flag::NearResonant, "{:?}", d.reasons);
    assert!(
        d.reasons[0].contains("2:1") && d.reasons[0].contains("+2.000 %"),
        "{:?}",
        d.reasons
    );

    // Far from any commensurability: decided by evidence, velocity, horizon.
    let d = decide_flag(&evidence(3.0, 0.5, BEYOND), std::slice::from_ref(&far), &th);
    assert_eq!(d.flag, Flag::KinematicAdequate, "{:?}", d.reasons);
    assert!(d.reasons.iter().any(|r| r.contains("0.500 m/s")));
    // ΔBIC exactly 10 is not strong evidence (strict >); 10.01 is.
    assert_eq!(
        decide_flag(
            &evidence(10.0, 0.5, BEYOND),
            std::slice::from_ref(&far),
            &th
        )
        .flag,
        Flag::KinematicAdequate
    );
    let d = decide_flag(
        &evidence(10.01, 0.5, BEYOND),
        std::slice::from_ref(&far),
        &th,
    );
    assert_eq!(d.flag, Flag::Interacting);
    assert!(
        d.reasons[0].starts_with("ΔBIC(Keplerian − dynamical) = 10.01 (> 10)"),
        "{:?}",
        d.reasons
    );
    // Velocity: 3 × 1.5 = 4.5 m/s.
    assert_eq!(
        decide_flag(&evidence(0.0, 4.5, BEYOND), std::slice::from_ref(&far), &th).flag,
        Flag::KinematicAdequate
    );
    let d = decide_flag(&evidence(0.0, 4.6, BEYOND), std::slice::from_ref(&far), &th);
    assert_eq!(d.flag, Flag::Interacting);
    assert!(d.criteria.velocity_requires_dynamics);
    // Horizon: 9.9 yr is within the 10 yr, 10.1 yr is not.
    let d = decide_flag(
        &evidence(0.0, 0.5, reached(9.9)),
        std::slice::from_ref(&far),
        &th,
    );
    assert_eq!(d.flag, Flag::Interacting);
    assert!(d.reasons[0].contains("9.900 yr"), "{:?}", d.reasons);
    assert_eq!(
        decide_flag(
            &evidence(0.0, 0.5, reached(10.1)),
            std::slice::from_ref(&far),
            &th
        )
        .flag,
        Flag::KinematicAdequate
    );
    let at_last = HorizonOutcome::AtLastObservation {
        difference_m_s: 2.0,
    };
    assert_eq!(
        decide_flag(
            &evidence(0.0, 0.5, at_last),
            std::slice::from_ref(&far),
            &th
        )
        .flag,
        Flag::Interacting
    );
    // No pairs at all (one planet): still decided.
    assert_eq!(
        decide_flag(&evidence(0.0, 0.5, BEYOND), &[], &th).flag,
        Flag::KinematicAdequate
    );
    // Several pairs: the strongest flag wins and every pair is reported.
    let d = decide_flag(&evidence(0.0, 0.5, BEYOND), &[far, resonant], &th);
    assert_eq!(d.flag, Flag::Resonant);
    assert_eq!(d.criteria.resonant_pairs, vec![1]);
    assert!(d.reasons.iter().any(|r| r.contains("2.7500")));
}

#[test]
fn flag_names_are_kebab_case() {
    for (f, s) in [
        (Flag::KinematicAdequate, "kinematic-adequate"),
        (Flag::Interacting, "interacting"),
        (Flag::NearResonant, "near-resonant"),
        (Flag::Resonant, "resonant"),
    ] {
        assert_eq!(serde_json::to_string(&f).unwrap(), format!("\"{s}\""));
        let r = ron::to_string(&f).unwrap();
        assert_eq!(ron::from_str::<Flag>(&r).unwrap(), f);
        assert_eq!(f.to_string(), s);
        let back: Flag = serde_json::from_str(&format!("\"{s}\"")).unwrap();
        assert_eq!(back, f);
    }
}

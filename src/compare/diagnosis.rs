//! Resonance diagnosis of a planetary system from a long N-body integration.
//!
//! [`diagnose`] integrates the system ([`super::history::record_history`]),
//! then for every adjacent pair of planets (any number of planets) reports
//! the period ratios, the nearest commensurabilities with their distances,
//! the analyses of the resonant angles and of Δϖ
//! ([`super::resonance::summarise_pair`]), the best librating angle
//! ([`super::resonance::best_librating_angle`]) and a verdict; and for every
//! planet the apsidal precession rate dϖ/dt measured from the integration
//! (deg/yr) beside the Laplace–Lagrange prediction
//! ([`super::secular::solve_secular`], Murray & Dermott 1999, ch. 7) from
//! the osculating Jacobi elements at the start, in the frame of the history
//! (by default the invariable plane).
//!
//! The secular prediction is linear in the masses and quadratic in e and i
//! and ignores mean-motion terms: it should match the N-body rates of
//! low-eccentricity pairs far from resonance to a few per cent, and differ
//! near or in resonance — the difference is itself a diagnostic.

use super::history::{HistoryError, HistoryRun, HistorySettings, RunEnd, record_history};
use super::resonance::{
    ApsidalPrecession, BestAngle, Duration, MIN_SAMPLES, PairResonanceSummary, apsidal_precession,
    best_librating_angle, summarise_pair,
};
use super::secular::{SecularPlanet, SecularSummary, SecularSystem, solve_secular};
use crate::nbody::System;
use crate::units::JULIAN_YEAR_D;

/// Settings of [`diagnose`].
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct DiagnosisSettings {
    /// Integration and sampling (its `summary` settings are used for the
    /// pair summaries too).
    pub history: HistorySettings,
}

/// Verdict on one pair.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum PairVerdict {
    /// A resonant angle librates: in mean-motion resonance.
    Resonant,
    /// The mean period ratio is near a commensurability (within the near
    /// threshold) and all its angles circulate.
    NearResonant,
    /// Near a commensurability, but some of its angles are undecided.
    Undecided,
    /// Near no commensurability of order ≤ 3, and no resonant angle librates.
    NotNear,
    /// The pair could not be analysed (see the note).
    Failed,
}

/// Diagnosis of one adjacent pair.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PairDiagnosis {
    /// Index of the inner planet (0 = innermost).
    pub inner: usize,
    /// Index of the outer planet (inner + 1).
    pub outer: usize,
    /// The verdict.
    pub verdict: PairVerdict,
    /// Label of the nearest commensurability, e.g. "3:2".
    pub nearest_label: Option<String>,
    /// The librating resonant angle of smallest relative amplitude.
    pub best: Option<BestAngle>,
    /// Full summary (ratios, commensurabilities, angle analyses).
    pub summary: Option<PairResonanceSummary>,
    /// Why the pair could not be analysed, if it could not.
    pub note: Option<String>,
}

/// Apsidal precession of one planet: N-body and secular theory.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PlanetPrecession {
    /// Planet index (0 = innermost).
    pub planet: usize,
    /// dϖ/dt measured from the integration.
    pub nbody: ApsidalPrecession,
    /// Long-term mean dϖ/dt of the Laplace–Lagrange solution (deg/yr).
    pub laplace_lagrange_mean_deg_per_yr: Option<f64>,
    /// Laplace–Lagrange dϖ/dt at the start (deg/yr).
    pub laplace_lagrange_now_deg_per_yr: Option<f64>,
}

/// Resonance diagnosis of a system.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ResonanceDiagnosis {
    /// Span of the integration.
    pub span: Duration,
    /// Number of samples.
    pub samples: usize,
    /// Output interval (d).
    pub output_interval_d: f64,
    /// Integrator step (d).
    pub step_d: f64,
    /// Number of integration stages (1 + doublings).
    pub stages: usize,
    /// How the run ended.
    pub end: RunEnd,
    /// One entry per adjacent pair, innermost first.
    pub pairs: Vec<PairDiagnosis>,
    /// One entry per planet, innermost first.
    pub precession: Vec<PlanetPrecession>,
    /// The Laplace–Lagrange summary (frequencies and per-planet rates).
    pub secular: Option<SecularSummary>,
    /// Why the secular prediction is missing, if it is.
    pub secular_note: Option<String>,
}

/// Errors of [`diagnose`].
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DiagnosisError {
    /// The integration or its sampling failed.
    #[error(transparent)]
    History(#[from] HistoryError),
}

fn verdict(summary: &PairResonanceSummary, best: &Option<BestAngle>) -> PairVerdict {
    if best.is_some() {
        return PairVerdict::Resonant;
    }
    let near: Vec<_> = summary
        .analysed
        .iter()
        .filter(|c| c.commensurability.near)
        .collect();
    if near.is_empty() {
        return PairVerdict::NotNear;
    }
    let all_circulate = near
        .iter()
        .flat_map(|c| &c.angles)
        .all(|a| a.analysis.circulation().is_some());
    if all_circulate {
        PairVerdict::NearResonant
    } else {
        PairVerdict::Undecided
    }
}

fn pair(run: &HistoryRun, i: usize) -> PairDiagnosis {
    let stored = run.pair_summaries.get(i).cloned();
    let result = match stored {
        Some(s) => Ok(s),
        None if run.history.times_d.len() >= MIN_SAMPLES => {
            summarise_pair(&run.history, i, i + 1, &run.summary)
        }
        None => Err(super::resonance::ResonanceError::TooFewSamples {
            count: run.history.times_d.len(),
            needed: MIN_SAMPLES,
        }),
    };
    match result {
        Ok(summary) => {
            let best = best_librating_angle(&summary);
            PairDiagnosis {
                inner: i,
                outer: i + 1,
                verdict: verdict(&summary, &best),
                nearest_label: summary.nearest.first().map(|c| c.label()),
                best,
                summary: Some(summary),
                note: None,
            }
        }
        Err(e) => PairDiagnosis {
            inner: i,
            outer: i + 1,
            verdict: PairVerdict::Failed,
            nearest_label: None,
            best: None,
            summary: None,
            note: Some(e.to_string()),
        },
    }
}

/// The Laplace–Lagrange solution for the starting orbits of `run`.
fn secular(run: &HistoryRun) -> Result<SecularSummary, String> {
    let system = SecularSystem {
        star_mass: run.star_mass,
        planets: run
            .start
            .iter()
            .map(|s| SecularPlanet {
                mass: s.mass,
                a: s.a_au,
                e: s.e,
                varpi: s.varpi,
                inc: s.inc,
                node: s.node,
            })
            .collect(),
    };
    let span_yr = match (run.history.times_d.first(), run.history.times_d.last()) {
        (Some(a), Some(b)) if b > a => (b - a) / JULIAN_YEAR_D,
        _ => 1.0,
    };
    solve_secular(&system)
        .and_then(|s| s.summary(span_yr))
        .map_err(|e| e.to_string())
}

/// Diagnose the resonances and apsidal precession of `system` (module docs).
/// `progress` receives the fraction of the current integration stage done.
pub fn diagnose(
    system: &System,
    settings: &DiagnosisSettings,
    progress: impl FnMut(f64),
) -> Result<ResonanceDiagnosis, DiagnosisError> {
    let run = record_history(system, &settings.history, progress)?;
    Ok(diagnose_run(&run))
}

/// Diagnosis of an already recorded run (see [`diagnose`]).
pub fn diagnose_run(run: &HistoryRun) -> ResonanceDiagnosis {
    let n = run.history.planets.len();
    let pairs = (0..n.saturating_sub(1)).map(|i| pair(run, i)).collect();
    let t = &run.history.times_d;
    let precession_of = |p: usize| {
        let s = &run.history.planets[p];
        if t.len() < MIN_SAMPLES {
            return ApsidalPrecession::Undefined {
                usable_samples: t.len(),
            };
        }
        apsidal_precession(t, &s.e, &s.varpi)
            .unwrap_or(ApsidalPrecession::Undefined { usable_samples: 0 })
    };
    let (secular, secular_note) = if n >= 2 {
        match secular(run) {
            Ok(s) => (Some(s), None),
            Err(e) => (None, Some(e)),
        }
    } else {
        (None, Some("secular theory needs two planets".to_string()))
    };
    let precession = (0..n)
        .map(|p| {
            let ll = secular.as_ref().and_then(|s| s.planets.get(p));
            PlanetPrecession {
                planet: p,
                nbody: precession_of(p),
                laplace_lagrange_mean_deg_per_yr: ll.and_then(|x| x.mean_varpi_rate_deg_per_yr),
                laplace_lagrange_now_deg_per_yr: ll.and_then(|x| x.varpi_rate_now_deg_per_yr),
            }
        })
        .collect();
    let span_d = match (t.first(), t.last()) {
        (Some(a), Some(b)) => b - a,
        _ => 0.0,
    };
    ResonanceDiagnosis {
        span: Duration::from_days(span_d),
        samples: t.len(),
        output_interval_d: run.output_interval_d,
        step_d: run.step_d,
        stages: run.stages,
        end: run.end,
        pairs,
        precession,
        secular,
        secular_note,
    }
}

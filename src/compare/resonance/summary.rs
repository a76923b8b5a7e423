//! Resonance summary of a pair of planets from their element histories.
//!
//! For planets `inner` and `outer`: osculating and mean period ratios, the
//! nearest commensurabilities j:(j−k) with k ≤ 3, and for the nearest one of
//! each order (plus any other within the *near* threshold) every resonant
//! angle φ_q with its libration analysis; the secular angle Δϖ; and both
//! apsidal precession rates. [`best_librating_angle`] picks the librating
//! resonant angle with the smallest amplitude relative to π.

use super::angles::{AngleCoefficients, AngleSpec, apsidal_difference, resonant_angle};
use super::commensurability::{
    Commensurability, DEFAULT_MAX_J, MAX_ORDER, NEAR_THRESHOLD, PeriodRatios, commensurabilities,
    period_ratios,
};
use super::error::ResonanceError;
use super::libration::{AngleAnalysis, Libration, analyse_angle};
use super::precession::{ApsidalPrecession, apsidal_precession};
use super::series::ElementHistory;
use std::f64::consts::PI;

/// Settings of [`summarise_pair`].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SummarySettings {
    /// Bound on j of the commensurabilities searched.
    pub max_j: u32,
    /// Threshold on |Δ| of the *near* flag.
    pub near_threshold: f64,
    /// How many of the nearest commensurabilities (all orders) to list.
    pub listed: usize,
}

impl Default for SummarySettings {
    fn default() -> Self {
        Self {
            max_j: DEFAULT_MAX_J,
            near_threshold: NEAR_THRESHOLD,
            listed: 5,
        }
    }
}

/// One angle and its libration analysis.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct AngleReport {
    /// Label, e.g. "5:2 φ1" or "Δϖ".
    pub label: String,
    /// Which resonant angle; `None` for the secular angle Δϖ.
    pub spec: Option<AngleSpec>,
    /// Coefficients of λ₁, λ₂, ϖ₁, ϖ₂.
    pub coefficients: AngleCoefficients,
    /// Libration analysis of the angle series.
    pub analysis: AngleAnalysis,
}

/// The resonant angles of one commensurability.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct CommensurabilityReport {
    /// The commensurability and the distance of the mean ratio from it.
    pub commensurability: Commensurability,
    /// φ_0 … φ_k with their analyses.
    pub angles: Vec<AngleReport>,
}

/// Resonance summary of one pair of planets.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PairResonanceSummary {
    /// Index of the inner planet in the history.
    pub inner: usize,
    /// Index of the outer planet in the history.
    pub outer: usize,
    /// Osculating and mean period ratios.
    pub ratios: PeriodRatios,
    /// The nearest commensurabilities to the mean ratio, all orders ≤ 3,
    /// sorted by |Δ|.
    pub nearest: Vec<Commensurability>,
    /// For the nearest commensurability of each order, and any other that
    /// is near, the resonant angles (sorted by |Δ|).
    pub analysed: Vec<CommensurabilityReport>,
    /// The secular angle Δϖ = ϖ₁ − ϖ₂.
    pub apsidal_difference: AngleReport,
    /// Apsidal precession of the inner planet.
    pub precession_inner: ApsidalPrecession,
    /// Apsidal precession of the outer planet.
    pub precession_outer: ApsidalPrecession,
}

/// Build the resonance summary of planets `inner` and `outer` (indices into
/// `history.planets`; the mean period of `outer` must be the longer).
pub fn summarise_pair(
    history: &ElementHistory,
    inner: usize,
    outer: usize,
    settings: &SummarySettings,
) -> Result<PairResonanceSummary, ResonanceError> {
    history.validate()?;
    let ratios = period_ratios(history, inner, outer)?;
    let all = commensurabilities(ratios.mean, settings.max_j, settings.near_threshold)?;
    let chosen: Vec<Commensurability> = all
        .iter()
        .enumerate()
        .filter(|(i, c)| c.near || !all[..*i].iter().any(|d| d.k == c.k))
        .map(|(_, c)| *c)
        .collect();
    debug_assert!(chosen.iter().all(|c| c.k <= MAX_ORDER));
    let (p1, p2) = (&history.planets[inner], &history.planets[outer]);
    let t = &history.times_d;
    let mut analysed = Vec::with_capacity(chosen.len());
    for c in chosen {
        let mut angles = Vec::with_capacity(c.k as usize + 1);
        for spec in AngleSpec::family(c.j, c.k)? {
            let series = resonant_angle(p1, p2, spec)?;
            angles.push(AngleReport {
                label: spec.label(),
                spec: Some(spec),
                coefficients: spec.coefficients(),
                analysis: analyse_angle(t, &series)?,
            });
        }
        analysed.push(CommensurabilityReport {
            commensurability: c,
            angles,
        });
    }
    let dw = apsidal_difference(p1, p2)?;
    Ok(PairResonanceSummary {
        inner,
        outer,
        ratios,
        nearest: all.into_iter().take(settings.listed).collect(),
        analysed,
        apsidal_difference: AngleReport {
            label: "Δϖ".to_string(),
            spec: None,
            coefficients: AngleCoefficients::APSIDAL_DIFFERENCE,
            analysis: analyse_angle(t, &dw)?,
        },
        precession_inner: apsidal_precession(t, &p1.e, &p1.varpi)?,
        precession_outer: apsidal_precession(t, &p2.e, &p2.varpi)?,
    })
}

/// The librating resonant angle with the smallest amplitude relative to π.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct BestAngle {
    /// Label of the angle, e.g. "2:1 φ0".
    pub label: String,
    /// Which angle.
    pub spec: AngleSpec,
    /// Distance Δ of the mean ratio from its commensurability.
    pub delta: f64,
    /// Its libration.
    pub libration: Libration,
    /// Amplitude / π, in [0, 1): 0 at the fixed point, → 1 at the separatrix.
    pub relative_amplitude: f64,
}

/// Among the resonant angles φ_q of the summary that librate, the one with
/// the smallest amplitude relative to π (ties: first in the summary's order,
/// i.e. smaller |Δ|, then smaller q). `None` if no resonant angle librates.
/// The secular angle Δϖ is not considered: its libration is an apsidal
/// alignment, not a mean-motion resonance.
pub fn best_librating_angle(summary: &PairResonanceSummary) -> Option<BestAngle> {
    let mut best: Option<BestAngle> = None;
    for c in &summary.analysed {
        for a in &c.angles {
            let (Some(spec), Some(lib)) = (a.spec, a.analysis.libration()) else {
                continue;
            };
            let rel = lib.amplitude_rad / PI;
            if best.as_ref().is_none_or(|b| rel < b.relative_amplitude) {
                best = Some(BestAngle {
                    label: a.label.clone(),
                    spec,
                    delta: c.commensurability.delta,
                    libration: *lib,
                    relative_amplitude: rel,
                });
            }
        }
    }
    best
}

//! The flag of a system with its reasons: `kinematic-adequate`,
//! `interacting`, `near-resonant` or `resonant` (our own names), each
//! defined by the thresholds of [`FlagThresholds`].
//!
//! Criteria, evaluated on the comparison statistics, the divergence horizon
//! and one resonance summary per adjacent pair of planets:
//!
//! * **evidence**: ΔBIC(Keplerian − dynamical) = BIC_kep − BIC_dyn exceeds
//!   [`FlagThresholds::strong_evidence_delta_bic`];
//! * **velocity**: the largest |v_dyn − v_kep| over the data span (grid or
//!   data epochs) exceeds [`FlagThresholds::velocity_multiple`] × the
//!   median RV error;
//! * **horizon soon**: the divergence horizon lies within
//!   [`FlagThresholds::adequate_horizon_yr`] after the last observation;
//! * a pair is **resonant** when one of its resonant angles φ_q librates
//!   with amplitude below [`FlagThresholds::libration_amplitude_deg`]
//!   ([`best_librating_angle`]);
//! * a pair is **near** when its nearest commensurability of order ≤ 3 is
//!   within the fractional distance [`FlagThresholds::near_fraction`] and
//!   it is not resonant.
//!
//! The flag is the first that holds of: `resonant` (some pair resonant),
//! `near-resonant` (some pair near), `interacting` (evidence, velocity or
//! horizon soon), else `kinematic-adequate`. A resonance is a property of
//! the dynamical solution; the reasons always state too whether the data
//! require the dynamical model, so a `resonant` flag on weak evidence reads
//! as such.

use serde::{Deserialize, Serialize};

use super::horizon::{Horizon, HorizonOutcome};
use super::resonance::{NEAR_THRESHOLD, PairResonanceSummary, best_librating_angle};
use super::statistics::ComparisonStatistics;

/// The flag of a system.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Flag {
    /// A sum of Keplerians describes the data and predicts them for a
    /// stated time after the data.
    KinematicAdequate,
    /// The data or the predictions require the planet–planet interaction.
    Interacting,
    /// A pair lies near a commensurability of order ≤ 3 without a
    /// librating resonant angle.
    NearResonant,
    /// A resonant angle of some pair librates.
    Resonant,
}

impl Flag {
    /// The name as written in files: "kinematic-adequate", "interacting",
    /// "near-resonant", "resonant".
    pub fn name(&self) -> &'static str {
        match self {
            Self::KinematicAdequate => "kinematic-adequate",
            Self::Interacting => "interacting",
            Self::NearResonant => "near-resonant",
            Self::Resonant => "resonant",
        }
    }
}

impl std::fmt::Display for Flag {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// All thresholds of the flag, with their defaults and rationale.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct FlagThresholds {
    /// ΔBIC(Keplerian − dynamical) above which the data are taken to
    /// require the dynamical model. Default 10: −ΔBIC approximates
    /// 2 ln B (Schwarz 1978), and 2 ln B > 10 is "very strong" evidence on
    /// the Kass & Raftery (1995) scale (their table, from memory: 0–2 not
    /// worth more than a mention, 2–6 positive, 6–10 strong, > 10 very
    /// strong).
    pub strong_evidence_delta_bic: f64,
    /// Multiple of the median RV error that the largest |v_dyn − v_kep|
    /// over the data span must exceed to call the system interacting.
    /// Default 3: a 3σ difference at a single epoch is detectable by one
    /// measurement (common practice for a single-point detection).
    pub velocity_multiple: f64,
    /// The divergence horizon must lie at least this many years after the
    /// last observation for `kinematic-adequate`. Default 10 yr: about the
    /// span of a follow-up programme; a Keplerian ephemeris that holds
    /// for a decade serves scheduling.
    pub adequate_horizon_yr: f64,
    /// Fractional distance |Δ| below which a commensurability is *near*.
    /// Default 0.05, the resonance module's [`NEAR_THRESHOLD`] (see its
    /// rationale).
    pub near_fraction: f64,
    /// Largest libration amplitude (deg, half the peak-to-peak range about
    /// the centre) for a resonant angle to count as librating. Default
    /// 150°: beyond that the angle spends most of its time near the
    /// separatrix and an apparent libration over a finite integration is
    /// not a secure resonance (our choice; amplitudes up to ~120° are
    /// common among resonant RV pairs).
    pub libration_amplitude_deg: f64,
}

impl Default for FlagThresholds {
    fn default() -> Self {
        Self {
            strong_evidence_delta_bic: 10.0,
            velocity_multiple: 3.0,
            adequate_horizon_yr: 10.0,
            near_fraction: NEAR_THRESHOLD,
            libration_amplitude_deg: 150.0,
        }
    }
}

/// The numbers the flag is decided from, apart from the pairs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FlagEvidence {
    /// ΔBIC(Keplerian − dynamical) = BIC_kep − BIC_dyn.
    pub delta_bic_kep_minus_dyn: f64,
    /// Δ ln L (dynamical − Keplerian).
    pub delta_ln_likelihood: f64,
    /// Largest |v_dyn − v_kep| over the data span (grid or data epochs), m/s.
    pub max_velocity_difference_m_s: f64,
    /// Median stated RV error, m/s.
    pub median_error_m_s: f64,
    /// The divergence horizon.
    pub horizon: HorizonOutcome,
    /// The horizon threshold, m/s.
    pub horizon_threshold_m_s: f64,
}

impl FlagEvidence {
    /// Gather the evidence from the statistics and the horizon.
    pub fn new(stats: &ComparisonStatistics, horizon: &Horizon) -> Self {
        Self {
            delta_bic_kep_minus_dyn: -stats.difference.bic,
            delta_ln_likelihood: stats.difference.ln_likelihood,
            max_velocity_difference_m_s: stats
                .velocity
                .max_on_grid_m_s
                .max(stats.velocity.max_at_data_m_s),
            median_error_m_s: stats.median_error_m_s,
            horizon: horizon.outcome,
            horizon_threshold_m_s: horizon.threshold_m_s,
        }
    }
}

/// Which criteria held.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlagCriteria {
    /// ΔBIC(Keplerian − dynamical) above the strong-evidence threshold.
    pub evidence_requires_dynamics: bool,
    /// |v_dyn − v_kep| over the data span above the multiple of the error.
    pub velocity_requires_dynamics: bool,
    /// The horizon lies within the adequate span after the data.
    pub horizon_within_adequate_span: bool,
    /// Indices (into the pairs) of the resonant pairs.
    pub resonant_pairs: Vec<usize>,
    /// Indices of the near-resonant pairs.
    pub near_resonant_pairs: Vec<usize>,
}

/// The flag, its reasons and the criteria behind it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlagDecision {
    /// The flag.
    pub flag: Flag,
    /// Reasons for people, with the numbers; the first says why this flag.
    pub reasons: Vec<String>,
    /// Which criteria held.
    pub criteria: FlagCriteria,
    /// The thresholds used.
    pub thresholds: FlagThresholds,
}

fn pair_name(p: &PairResonanceSummary) -> String {
    format!("pair {}–{}", p.inner + 1, p.outer + 1)
}

/// Decide the flag from the evidence and one resonance summary per
/// adjacent pair (module docs give the rules).
pub fn decide_flag(
    evidence: &FlagEvidence,
    pairs: &[PairResonanceSummary],
    thresholds: &FlagThresholds,
) -> FlagDecision {
    let th = thresholds;
    let evidence_req = evidence.delta_bic_kep_minus_dyn > th.strong_evidence_delta_bic;
    let vel_limit = th.velocity_multiple * evidence.median_error_m_s;
    let velocity_req = evidence.max_velocity_difference_m_s > vel_limit;
    let horizon_soon = evidence
        .horizon
        .years_after_last()
        .is_some_and(|y| y < th.adequate_horizon_yr);

    let mut pair_reasons = Vec::new();
    let mut resonant_pairs = Vec::new();
    let mut near_pairs = Vec::new();
    for (i, p) in pairs.iter().enumerate() {
        let name = pair_name(p);
        let nearest = p.nearest.first();
        let best = best_librating_angle(p)
            .filter(|b| b.libration.amplitude_deg < th.libration_amplitude_deg);
        if let Some(b) = &best {
            resonant_pairs.push(i);
            let period = b.libration.period.map_or_else(
                || "period not measured".to_string(),
                |d| format!("period {:.2} yr", d.years),
            );
            pair_reasons.push(format!(
                "{name}: resonant angle {} librates about {:.1}° with amplitude {:.1}° (< {:.0}°), {period}; Δ = {:+.3} %",
                b.label,
                b.libration.centre_deg,
                b.libration.amplitude_deg,
                th.libration_amplitude_deg,
                100.0 * b.delta
            ));
        } else if let Some(c) = nearest.filter(|c| c.delta.abs() < th.near_fraction) {
            near_pairs.push(i);
            pair_reasons.push(format!(
                "{name}: mean period ratio {:.4} is {:+.3} % from {} (within {:.1} %), no resonant angle librates with amplitude < {:.0}°",
                p.ratios.mean,
                100.0 * c.delta,
                c.label(),
                100.0 * th.near_fraction,
                th.libration_amplitude_deg
            ));
        } else if let Some(c) = nearest {
            pair_reasons.push(format!(
                "{name}: mean period ratio {:.4}, nearest commensurability {} at {:+.3} % (beyond {:.1} %)",
                p.ratios.mean,
                c.label(),
                100.0 * c.delta,
                100.0 * th.near_fraction
            ));
        }
        let undecided = p
            .analysed
            .iter()
            .flat_map(|c| &c.angles)
            .filter(|a| {
                matches!(
                    a.analysis.regime,
                    super::resonance::AngleRegime::Undecided(_)
                )
            })
            .count();
        if undecided > 0 {
            pair_reasons.push(format!(
                "{name}: {undecided} resonant angle(s) undecided (integrate longer or sample more densely)"
            ));
        }
        if let Some(l) = p.apsidal_difference.analysis.libration() {
            pair_reasons.push(format!(
                "{name}: Δϖ librates about {:.1}° with amplitude {:.1}° (apsidal alignment, not a mean-motion resonance)",
                l.centre_deg, l.amplitude_deg
            ));
        }
    }

    let ev_text = format!(
        "ΔBIC(Keplerian − dynamical) = {:.2} ({} {:.0}); Δ ln L = {:.2}",
        evidence.delta_bic_kep_minus_dyn,
        if evidence_req { ">" } else { "≤" },
        th.strong_evidence_delta_bic,
        evidence.delta_ln_likelihood
    );
    let vel_text = format!(
        "largest |v_dyn − v_kep| over the data span = {:.3} m/s ({} {:.1} × median error {:.3} m/s = {:.3} m/s)",
        evidence.max_velocity_difference_m_s,
        if velocity_req { ">" } else { "≤" },
        th.velocity_multiple,
        evidence.median_error_m_s,
        vel_limit
    );
    let hor_text = format!(
        "divergence horizon (|Δv| > {:.3} m/s): {} ({} {:.1} yr)",
        evidence.horizon_threshold_m_s,
        evidence.horizon.describe(),
        if horizon_soon { "within" } else { "not within" },
        th.adequate_horizon_yr
    );

    let flag = if !resonant_pairs.is_empty() {
        Flag::Resonant
    } else if !near_pairs.is_empty() {
        Flag::NearResonant
    } else if evidence_req || velocity_req || horizon_soon {
        Flag::Interacting
    } else {
        Flag::KinematicAdequate
    };
    let mut reasons = Vec::new();
    match flag {
        Flag::Resonant | Flag::NearResonant => {
            reasons.extend(pair_reasons);
            reasons.push(ev_text);
            reasons.push(vel_text);
            reasons.push(hor_text);
        }
        Flag::Interacting => {
            let mut first = Vec::new();
            let mut rest = Vec::new();
            for (held, text) in [
                (evidence_req, ev_text),
                (velocity_req, vel_text),
                (horizon_soon, hor_text),
            ] {
                if held {
                    first.push(text)
                } else {
                    rest.push(text)
                }
            }
            reasons.extend(first);
            reasons.extend(rest);
            reasons.extend(pair_reasons);
        }
        Flag::KinematicAdequate => {
            reasons.push(format!(
                "the data do not require the dynamical model and the Keplerian prediction holds for at least {:.1} yr",
                th.adequate_horizon_yr
            ));
            reasons.push(ev_text);
            reasons.push(vel_text);
            reasons.push(hor_text);
            reasons.extend(pair_reasons);
        }
    }
    FlagDecision {
        flag,
        reasons,
        criteria: FlagCriteria {
            evidence_requires_dynamics: evidence_req,
            velocity_requires_dynamics: velocity_req,
            horizon_within_adequate_span: horizon_soon,
            resonant_pairs,
            near_resonant_pairs: near_pairs,
        },
        thresholds: *thresholds,
    }
}

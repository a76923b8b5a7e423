//! The comparison report: statistics, divergence horizon (and its posterior
//! distribution when given), one resonance summary per adjacent pair, the
//! flag with its reasons, and the v_dyn − v_kep series for pictures;
//! written as RON and JSON (atomically) and as a short fixed-width text
//! summary for people.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::flag::{Flag, FlagDecision, FlagEvidence, FlagThresholds, decide_flag};
use super::horizon::{
    DifferenceSeries, Horizon, HorizonDistribution, HorizonSettings, HorizonYears,
    difference_series, divergence_horizon,
};
use super::resonance::{AngleRegime, PairResonanceSummary, best_librating_angle};
use super::statistics::{
    CompareError, ComparisonStatistics, GridSettings, ModelAt, compare_statistics,
};
use crate::atomic::{AtomicWriteError, write_atomic};

/// Everything the comparison found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ComparisonReport {
    /// Statistics of both fits and their differences.
    pub statistics: ComparisonStatistics,
    /// The divergence horizon of the best fits.
    pub horizon: Horizon,
    /// The horizon over posterior samples, when given.
    pub horizon_posterior: Option<HorizonDistribution>,
    /// One resonance summary per adjacent pair (inner to outer).
    pub pairs: Vec<PairResonanceSummary>,
    /// The flag, its reasons, criteria and thresholds.
    pub decision: FlagDecision,
    /// v_dyn − v_kep over time with the threshold and horizon epoch.
    pub difference_series: DifferenceSeries,
}

/// Settings of [`build_report`].
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields, default)]
pub struct ReportSettings {
    /// Grid of the data-span comparison.
    pub grid: GridSettings,
    /// Horizon search.
    pub horizon: HorizonSettings,
    /// Flag thresholds.
    pub thresholds: FlagThresholds,
    /// Largest number of points of the difference series (0: 4000).
    pub series_points: usize,
}

/// Why a report could not be built or written.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// The comparison failed.
    #[error(transparent)]
    Compare(#[from] CompareError),
    /// Serialising failed.
    #[error("could not serialise the comparison report as {format}: {message}")]
    Serialise {
        /// "RON" or "JSON".
        format: &'static str,
        /// Why.
        message: String,
    },
    /// Parsing failed.
    #[error("could not read the comparison report as {format}: {message}")]
    Parse {
        /// "RON" or "JSON".
        format: &'static str,
        /// Why.
        message: String,
    },
    /// Writing failed.
    #[error(transparent)]
    Write(#[from] AtomicWriteError),
}

/// Build the report from the two models at their best fits and one
/// resonance summary per adjacent pair (from the dynamical solution).
pub fn build_report(
    keplerian: &ModelAt<'_>,
    dynamical: &ModelAt<'_>,
    pairs: Vec<PairResonanceSummary>,
    horizon_posterior: Option<HorizonDistribution>,
    settings: &ReportSettings,
) -> Result<ComparisonReport, CompareError> {
    let statistics = compare_statistics(keplerian, dynamical, &settings.grid)?;
    let horizon = divergence_horizon(keplerian, dynamical, &settings.horizon)?;
    let points = if settings.series_points == 0 {
        4000
    } else {
        settings.series_points
    };
    let difference_series = difference_series(keplerian, dynamical, &horizon, points)?;
    let evidence = FlagEvidence::new(&statistics, &horizon);
    let decision = decide_flag(&evidence, &pairs, &settings.thresholds);
    Ok(ComparisonReport {
        statistics,
        horizon,
        horizon_posterior,
        pairs,
        decision,
        difference_series,
    })
}

impl ComparisonReport {
    /// The flag.
    pub fn flag(&self) -> Flag {
        self.decision.flag
    }

    /// The report as pretty RON.
    pub fn to_ron(&self) -> Result<String, ReportError> {
        ron::ser::to_string_pretty(self, ron::ser::PrettyConfig::default()).map_err(|e| {
            ReportError::Serialise {
                format: "RON",
                message: e.to_string(),
            }
        })
    }

    /// The report as pretty JSON.
    pub fn to_json(&self) -> Result<String, ReportError> {
        serde_json::to_string_pretty(self).map_err(|e| ReportError::Serialise {
            format: "JSON",
            message: e.to_string(),
        })
    }

    /// Parse a report from RON.
    pub fn from_ron(text: &str) -> Result<Self, ReportError> {
        ron::from_str(text).map_err(|e| ReportError::Parse {
            format: "RON",
            message: e.to_string(),
        })
    }

    /// Parse a report from JSON.
    pub fn from_json(text: &str) -> Result<Self, ReportError> {
        serde_json::from_str(text).map_err(|e| ReportError::Parse {
            format: "JSON",
            message: e.to_string(),
        })
    }

    /// Write `<stem>.ron`, `<stem>.json` and `<stem>.txt` (the text
    /// summary), each atomically; returns the three paths.
    pub fn write(&self, stem: &Path) -> Result<[PathBuf; 3], ReportError> {
        let with = |ext: &str| {
            let mut p = stem.as_os_str().to_owned();
            p.push(".");
            p.push(ext);
            PathBuf::from(p)
        };
        let (ron_path, json_path, txt_path) = (with("ron"), with("json"), with("txt"));
        let ron_text = self.to_ron()?;
        let json_text = self.to_json()?;
        write_atomic(&ron_path, ron_text.as_bytes())?;
        write_atomic(&json_path, json_text.as_bytes())?;
        write_atomic(&txt_path, self.text_summary().as_bytes())?;
        Ok([ron_path, json_path, txt_path])
    }

    /// A short plain-text summary for people (fixed-width table).
    pub fn text_summary(&self) -> String {
        use std::fmt::Write;
        let s = &self.statistics;
        let mut o = String::new();
        let _ = writeln!(o, "Keplerian versus dynamical comparison");
        let _ = writeln!(o, "flag: {}", self.decision.flag);
        for r in &self.decision.reasons {
            let _ = writeln!(o, "  - {r}");
        }
        let _ = writeln!(o);
        let _ = writeln!(
            o,
            "{:<24} {:>14} {:>14} {:>14}",
            "statistic", "Keplerian", "dynamical", "dyn − kep"
        );
        let row = |o: &mut String, name: &str, a: f64, b: f64| {
            let _ = writeln!(o, "{name:<24} {a:>14.3} {b:>14.3} {:>14.3}", b - a);
        };
        row(
            &mut o,
            "chi-square",
            s.keplerian.chi_square,
            s.dynamical.chi_square,
        );
        row(
            &mut o,
            "ln L",
            s.keplerian.ln_likelihood,
            s.dynamical.ln_likelihood,
        );
        row(&mut o, "BIC", s.keplerian.bic, s.dynamical.bic);
        let fmt_opt =
            |v: Option<f64>| v.map_or_else(|| "undefined".to_string(), |x| format!("{x:.3}"));
        let _ = writeln!(
            o,
            "{:<24} {:>14} {:>14} {:>14}",
            "AICc",
            fmt_opt(s.keplerian.aicc),
            fmt_opt(s.dynamical.aicc),
            fmt_opt(s.difference.aicc)
        );
        let _ = writeln!(
            o,
            "{:<24} {:>14} {:>14} {:>14}",
            "free parameters", s.keplerian.n_free, s.dynamical.n_free, s.difference.n_free
        );
        for (a, b) in s
            .keplerian
            .residual_rms
            .iter()
            .zip(&s.dynamical.residual_rms)
        {
            row(
                &mut o,
                &format!("RMS {} (m/s)", a.instrument),
                a.rms_m_s,
                b.rms_m_s,
            );
        }
        let _ = writeln!(o);
        let _ = writeln!(
            o,
            "{:<40} {:>12.3}",
            "ΔBIC (Keplerian − dynamical)", -s.difference.bic
        );
        let _ = writeln!(
            o,
            "{:<40} {:>12.3}",
            "Δ ln L (dynamical − Keplerian)", s.difference.ln_likelihood
        );
        let _ = writeln!(
            o,
            "{:<40} {:>12.3}",
            "max |v_dyn − v_kep| on grid (m/s)", s.velocity.max_on_grid_m_s
        );
        let _ = writeln!(
            o,
            "{:<40} {:>12.3}",
            "max |v_dyn − v_kep| at data (m/s)", s.velocity.max_at_data_m_s
        );
        let _ = writeln!(
            o,
            "{:<40} {:>12.3}",
            "median RV error (m/s)", s.median_error_m_s
        );
        let _ = writeln!(
            o,
            "horizon (|Δv| > {:.3} m/s): {}",
            self.horizon.threshold_m_s,
            self.horizon.outcome.describe()
        );
        if let Some(p) = &self.horizon_posterior {
            let y = |v: HorizonYears| match v {
                HorizonYears::Years(x) => format!("{x:.3} yr"),
                HorizonYears::BeyondSpan => "beyond span".to_string(),
            };
            let _ = writeln!(
                o,
                "horizon over {} samples: median {}, 68 % interval [{}, {}] ({} beyond span, {} failed)",
                p.samples,
                y(p.median),
                y(p.lower_68),
                y(p.upper_68),
                p.beyond_span,
                p.failed
            );
        }
        if !self.pairs.is_empty() {
            let _ = writeln!(o);
            let _ = writeln!(
                o,
                "{:<6} {:>9} {:>7} {:>9}  {:<28} {:>12} {:>12}",
                "pair",
                "P2/P1",
                "nearest",
                "Δ (%)",
                "librating angles (amp deg)",
                "ϖ1 (deg/yr)",
                "ϖ2 (deg/yr)"
            );
            for p in &self.pairs {
                let (label, delta) = p.nearest.first().map_or(("-".to_string(), f64::NAN), |c| {
                    (c.label(), 100.0 * c.delta)
                });
                let mut lib: Vec<String> = p
                    .analysed
                    .iter()
                    .flat_map(|c| &c.angles)
                    .chain(std::iter::once(&p.apsidal_difference))
                    .filter_map(|a| match &a.analysis.regime {
                        AngleRegime::Librating(l) => {
                            Some(format!("{} ({:.1})", a.label, l.amplitude_deg))
                        }
                        _ => None,
                    })
                    .collect();
                if lib.is_empty() {
                    lib.push("none".into());
                }
                let rate =
                    |r: Option<f64>| r.map_or_else(|| "undefined".into(), |x| format!("{x:.4}"));
                let delta_s = if delta.is_finite() {
                    format!("{delta:+.3}")
                } else {
                    "-".into()
                };
                let _ = writeln!(
                    o,
                    "{:<6} {:>9.4} {:>7} {:>9}  {:<28} {:>12} {:>12}",
                    format!("{}-{}", p.inner + 1, p.outer + 1),
                    p.ratios.mean,
                    label,
                    delta_s,
                    lib.join(", "),
                    rate(p.precession_inner.rate().map(|r| r.rate_deg_per_yr)),
                    rate(p.precession_outer.rate().map(|r| r.rate_deg_per_yr)),
                );
                if let Some(b) = best_librating_angle(p) {
                    let _ = writeln!(
                        o,
                        "       best librating angle {}: amplitude {:.1}° ({:.2} of π)",
                        b.label, b.libration.amplitude_deg, b.relative_amplitude
                    );
                }
            }
        }
        o
    }
}

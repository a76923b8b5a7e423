//! Assessment of a fitted dynamical solution: the Keplerian-versus-
//! dynamical comparison with its flag, the resonance diagnosis from a long
//! integration, the stability of the best fit (with MEGNO), and a
//! stability survey of posterior samples, with their pictures.

use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::compare::diagnosis::{ResonanceDiagnosis, diagnose_run};
use crate::compare::history::{HistorySettings, record_history};
use crate::compare::report::{ComparisonReport, ReportSettings, build_report};
use crate::compare::resonance::{AngleSpec, apsidal_difference, resonant_angle};
use crate::compare::statistics::ModelAt;
use crate::fit::models::RvModel;
use crate::fit::sample::Flow;
use crate::nbody::variational::VariationalIntegrator;
use crate::nbody::wisdom_holman::WhSettings;
use crate::report::plot::{
    AnglePlot, AngleRange, AngleSeries, DivergencePlot, PlotSize, angle_plot, divergence_plot,
};
use crate::stability::megno::{MegnoResult, MegnoSettings, megno_run};
use crate::stability::run::{RunSettings, StabilityReport, run_solution, solution_system};
use crate::stability::survey::{SurveySettings, SurveySummary, read_samples_csv, run_survey};
use crate::units::JULIAN_YEAR_D;

use super::job::{JobError, write_file, write_ron_json};

/// Settings of the assessment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AssessSettings {
    /// Long integration of the resonance diagnosis.
    pub history: HistorySettings,
    /// Stability run of the best fit and of each surveyed sample.
    pub run: RunSettings,
    /// Length of the MEGNO run (outer orbits).
    pub megno_orbits: f64,
    /// Posterior samples surveyed.
    pub survey_samples: usize,
    /// Length of each surveyed sample's run (outer orbits).
    pub survey_orbits: f64,
    /// Seed of the survey's choice of samples and of MEGNO's tangent vector.
    pub seed: u64,
}

impl Default for AssessSettings {
    fn default() -> Self {
        AssessSettings {
            history: HistorySettings {
                initial_outer_orbits: 2000.0,
                max_outer_orbits: 2e4,
                ..HistorySettings::default()
            },
            run: RunSettings {
                orbits: 1e4,
                ..RunSettings::default()
            },
            megno_orbits: 2000.0,
            survey_samples: 100,
            survey_orbits: 2000.0,
            seed: 1,
        }
    }
}

/// What the assessment found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Assessment {
    /// Comparison of the two models with the flag and its reasons.
    pub comparison: ComparisonReport,
    /// Resonances and precession from a long integration of the solution.
    pub diagnosis: ResonanceDiagnosis,
    /// Stability run of the best fit.
    pub stability: StabilityReport,
    /// MEGNO of the best fit (`None` if it could not be run; see the note).
    pub megno: Option<MegnoResult>,
    /// Why MEGNO is missing, if it is.
    pub megno_note: Option<String>,
    /// Survey of posterior samples, when a samples table was given.
    pub survey: Option<SurveySummary>,
}

fn fail(out: &Path, what: &str, e: impl std::fmt::Display) -> JobError {
    JobError::Write {
        path: out.join(what),
        why: e.to_string(),
    }
}

/// Assess `dynamical` (at `dyn_values`) against `keplerian` (at
/// `kep_values`), writing `comparison.*`, `diagnosis.*`, `stability.*`,
/// `survey.csv`, `survey-summary.*` and the pictures into `out`.
/// `samples_csv` (the posterior of `posterior_model`) is surveyed when given.
#[allow(clippy::too_many_arguments)]
pub fn assess(
    keplerian: &RvModel,
    kep_values: &[f64],
    dynamical: &RvModel,
    dyn_values: &[f64],
    posterior: Option<(&RvModel, &[f64], &Path)>,
    settings: &AssessSettings,
    out: &Path,
    files: &mut Vec<String>,
) -> Result<Assessment, JobError> {
    assess_observed(
        keplerian,
        kep_values,
        dynamical,
        dyn_values,
        posterior,
        settings,
        out,
        files,
        &mut |_| {},
    )
}

/// [`assess`] reporting the progress of its long integration (the element
/// history of [`record_history`]) as a fraction in [0, 1] to `progress`,
/// called on the calling thread; the results are those of [`assess`].
///
/// # Errors
/// As [`assess`].
#[allow(clippy::too_many_arguments)]
pub fn assess_observed(
    keplerian: &RvModel,
    kep_values: &[f64],
    dynamical: &RvModel,
    dyn_values: &[f64],
    posterior: Option<(&RvModel, &[f64], &Path)>,
    settings: &AssessSettings,
    out: &Path,
    files: &mut Vec<String>,
    progress: &mut dyn FnMut(f64),
) -> Result<Assessment, JobError> {
    let system = solution_system(dynamical, dyn_values).map_err(|e| fail(out, "diagnosis", e))?;
    let run = record_history(&system, &settings.history, progress)
        .map_err(|e| fail(out, "diagnosis", e))?;
    let diagnosis = diagnose_run(&run);
    write_ron_json(out, "diagnosis", &diagnosis, files)?;
    let pairs = diagnosis
        .pairs
        .iter()
        .filter_map(|p| p.summary.clone())
        .collect();
    let comparison = build_report(
        &ModelAt {
            model: keplerian,
            values: kep_values,
        },
        &ModelAt {
            model: dynamical,
            values: dyn_values,
        },
        pairs,
        None,
        &ReportSettings::default(),
    )
    .map_err(|e| fail(out, "comparison", e))?;
    write_ron_json(out, "comparison", &comparison, files)?;
    write_file(
        out,
        "comparison.txt",
        comparison.text_summary().as_bytes(),
        files,
    )?;

    // Pictures: v_dyn − v_kep with the horizon, and the angles of each pair.
    let d = &comparison.difference_series;
    let svg = divergence_plot(&DivergencePlot {
        title: "Dynamical minus Keplerian prediction",
        time_scale: "BJD",
        time: &d.t_d,
        delta_v: &d.difference_m_s,
        threshold: d.threshold_m_s,
        horizon: d.horizon_epoch_d,
        data_span: Some(d.data_span_d),
        size: PlotSize::default(),
    })
    .map_err(|e| fail(out, "divergence.svg", e))?;
    write_file(out, "divergence.svg", svg.as_bytes(), files)?;
    let h = &run.history;
    let t0 = h.times_d.first().copied().unwrap_or(0.0);
    let stride = (h.times_d.len() / 3000).max(1);
    let years: Vec<f64> = h
        .times_d
        .iter()
        .step_by(stride)
        .map(|t| (t - t0) / JULIAN_YEAR_D)
        .collect();
    for (i, pd) in diagnosis.pairs.iter().enumerate() {
        let (inner, outer) = (&h.planets[pd.inner], &h.planets[pd.outer]);
        let mut names = Vec::new();
        let mut values = Vec::new();
        if let Some(best) = &pd.best {
            if let Ok(a) = resonant_angle(inner, outer, best.spec) {
                names.push(format!("{} (librating)", best.label));
                values.push(a);
            }
        } else if let Some(s) = &pd.summary {
            if let Some(c) = s.nearest.first() {
                if let Ok(spec) = AngleSpec::new(c.j, c.k, 0) {
                    if let Ok(a) = resonant_angle(inner, outer, spec) {
                        names.push(format!("{}:{} φ0", c.j, c.j - c.k));
                        values.push(a);
                    }
                }
            }
        }
        if let Ok(a) = apsidal_difference(inner, outer) {
            names.push("Δϖ = ϖ_inner − ϖ_outer".into());
            values.push(a);
        }
        let degs: Vec<Vec<f64>> = values
            .iter()
            .map(|v| v.iter().step_by(stride).map(|x| x.to_degrees()).collect())
            .collect();
        let series: Vec<AngleSeries> = names
            .iter()
            .zip(&degs)
            .map(|(n, a)| AngleSeries {
                name: n,
                time: &years,
                angle_deg: a,
            })
            .collect();
        if series.is_empty() {
            continue;
        }
        let title = format!("Angles of pair {} – {}", pd.inner + 1, pd.outer + 1);
        let svg = angle_plot(&AnglePlot {
            title: &title,
            time_label: "time since the reference epoch",
            series: &series,
            range: AngleRange::ZeroTo360,
            size: PlotSize::default(),
        })
        .map_err(|e| fail(out, "angles.svg", e))?;
        write_file(out, &format!("angles-{}.svg", i + 1), svg.as_bytes(), files)?;
    }

    // Stability of the best fit, MEGNO, and the posterior survey.
    let stability = run_solution(dynamical, dyn_values, &settings.run)
        .map_err(|e| fail(out, "stability", e))?;
    let (megno, megno_note) = match megno_run(
        &system,
        VariationalIntegrator::WisdomHolman(WhSettings {
            step: Some(stability.step),
            ..WhSettings::default()
        }),
        settings.megno_orbits,
        &MegnoSettings {
            seed: settings.seed,
            ..MegnoSettings::default()
        },
    ) {
        Ok(m) => (Some(m), None),
        Err(e) => (None, Some(e.to_string())),
    };
    let survey = match posterior {
        Some((model, base, csv)) => {
            let table = read_samples_csv(csv).map_err(|e| fail(out, "survey", e))?;
            let s = SurveySettings {
                run: RunSettings {
                    orbits: settings.survey_orbits,
                    step: Some(stability.step),
                    ..settings.run
                },
                max_samples: Some(settings.survey_samples),
                seed: settings.seed,
                ..SurveySettings::default()
            };
            let summary = run_survey(
                model,
                &table,
                base,
                &s,
                &out.join("survey.csv"),
                false,
                &|_| Flow::Continue,
            )
            .map_err(|e| fail(out, "survey", e))?;
            files.push("survey.csv".into());
            write_ron_json(out, "survey-summary", &summary, files)?;
            Some(summary)
        }
        None => None,
    };
    let assessment = Assessment {
        comparison,
        diagnosis,
        stability,
        megno,
        megno_note,
        survey,
    };
    write_ron_json(
        out,
        "stability",
        &(&assessment.stability, &assessment.megno),
        files,
    )?;
    Ok(assessment)
}

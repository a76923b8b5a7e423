//! The whole job on one system, as one library call: periodogram →
//! Keplerian fit → dynamical fit → a short posterior run → pictures →
//! comparison, diagnosis and stability → a small MEGNO map about the best
//! fit, with every result written atomically into an output folder, and a
//! summary for people. Each step's report is also available on its own.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::atomic::write_atomic;
use crate::config::{RunFile, build_model};
use crate::data::Dataset;
use crate::fit::best_fit::FitSettings;
use crate::fit::models::{ModelKind, RvModel};
use crate::fit::sample::Observer;
use crate::periodogram::GridSettings;

use super::fitting::{FitReport, WorkflowError, fit_run};
use super::pictures::{
    periodogram_picture, phase_pictures, posterior_pictures, read_sample_columns, rv_picture,
};
use super::posterior::{PosteriorSettings, PosteriorSummary, sample_posterior};
use super::search::{SearchReport, SearchSettings, search};

/// Settings of the whole job.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JobSettings {
    /// Periodogram search.
    pub search: SearchSettings,
    /// Maximum-likelihood fits.
    pub fit: FitSettings,
    /// Posterior run (of the last model of the run file).
    pub posterior: PosteriorSettings,
    /// Comparison, diagnosis and stability.
    pub assess: super::assess::AssessSettings,
    /// The MEGNO map about the best fit (`None`: no map).
    pub megno_map: Option<MegnoMapSettings>,
}

/// The job's MEGNO map: the outermost planet's period × eccentricity about
/// the best fit (the last dynamical model, else the last model), every
/// other element held, each cell a [`crate::stability::run::run_stability`]
/// run with MEGNO ([`crate::stability::map`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MegnoMapSettings {
    /// Number of periods, from (1 − `period_span`) to (1 + `period_span`)
    /// times the best-fit period.
    pub periods: usize,
    /// Half-width of the period range as a fraction of the best-fit period.
    pub period_span: f64,
    /// Number of eccentricities, from 0 to `max_eccentricity`.
    pub eccentricities: usize,
    /// Largest eccentricity of the grid.
    pub max_eccentricity: f64,
    /// Length of each cell's run in orbits of the outermost planet.
    pub orbits: f64,
}

impl Default for MegnoMapSettings {
    /// 15 periods within ±8 % of the best fit × 10 eccentricities from 0 to
    /// 0.45, 300 outer orbits per cell (a demo-sized map: regular cells
    /// reach ⟨Y⟩ ≈ 2 within about 0.1 in that time, chaotic ones of
    /// Lyapunov times below ~50 orbits clearly exceed it).
    fn default() -> Self {
        MegnoMapSettings {
            periods: 15,
            period_span: 0.08,
            eccentricities: 10,
            max_eccentricity: 0.45,
            orbits: 300.0,
        }
    }
}

/// What the job's MEGNO map found (the cells are in `megno-map.csv`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MegnoMapSummary {
    /// Settings it was made with.
    pub settings: MegnoMapSettings,
    /// Period range of the outermost planet (days).
    pub period_range: (f64, f64),
    /// Cells in the map.
    pub cells: usize,
    /// Cells with ⟨Y⟩ ≤ 2 + [`crate::stability::megno::REGULAR_MARGIN`].
    pub regular: usize,
    /// Surviving cells with a larger ⟨Y⟩ (chaotic or undecided).
    pub irregular: usize,
    /// Cells disrupted by an event before the end of their run.
    pub disrupted: usize,
    /// Cells without a value (impossible systems, failed MEGNO).
    pub missing: usize,
}

impl JobSettings {
    /// Defaults for a run file: its sampler section (or a short run of
    /// 600 steps) and its seed.
    pub fn for_run(run: &RunFile, seed: u64) -> Self {
        let s = run.sampler;
        JobSettings {
            search: SearchSettings {
                grid: GridSettings {
                    shortest_period: Some(2.0),
                    ..GridSettings::default()
                },
                ..SearchSettings::default()
            },
            fit: FitSettings::default(),
            posterior: PosteriorSettings {
                walkers: s.and_then(|s| s.walkers),
                steps: s.map_or(600, |s| s.steps),
                burn_in: s.and_then(|s| s.burn_in),
                thin: s.and_then(|s| s.thin).unwrap_or(1),
                checkpoint_every: s.and_then(|s| s.checkpoint_every).unwrap_or(50),
                seed,
            },
            assess: super::assess::AssessSettings {
                seed,
                ..Default::default()
            },
            megno_map: Some(MegnoMapSettings::default()),
        }
    }
}

/// Why the job failed, with the step.
#[derive(Debug, thiserror::Error)]
pub enum JobError {
    /// The periodogram failed.
    #[error("periodogram: {0}")]
    Search(#[from] crate::periodogram::PeriodogramError),
    /// A fit failed.
    #[error(transparent)]
    Fit(#[from] WorkflowError),
    /// The posterior run failed.
    #[error("posterior: {0}")]
    Posterior(#[from] crate::fit::sample::SampleError),
    /// The MEGNO map could not be made.
    #[error("MEGNO map: {0}")]
    Map(#[from] crate::stability::run::StabilityError),
    /// A file could not be written.
    #[error("{path}: {why}")]
    Write {
        /// The file.
        path: PathBuf,
        /// Why.
        why: String,
    },
}

/// Everything the job produced.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct JobReport {
    /// Name of the system (the star's, or the run file's).
    pub system: String,
    /// The periodogram search.
    pub search: SearchReport,
    /// The fits.
    pub fits: FitReport,
    /// The posterior summary of the last model.
    pub posterior: PosteriorSummary,
    /// Comparison, resonance diagnosis and stability (when the run file
    /// fits both a Keplerian and a dynamical model).
    pub assessment: Option<super::assess::Assessment>,
    /// The MEGNO map about the best fit, when one was asked for.
    pub megno_map: Option<MegnoMapSummary>,
    /// Files written, relative to the output folder.
    pub files: Vec<String>,
}

/// Write `value` as `<stem>.ron` and `<stem>.json` in `dir`.
pub fn write_ron_json<T: Serialize>(
    dir: &Path,
    stem: &str,
    value: &T,
    files: &mut Vec<String>,
) -> Result<(), JobError> {
    let fail = |path: PathBuf, why: String| JobError::Write { path, why };
    let ron = ron::ser::to_string_pretty(value, ron::ser::PrettyConfig::default())
        .map_err(|e| fail(dir.join(format!("{stem}.ron")), e.to_string()))?;
    let json = serde_json::to_string_pretty(value)
        .map_err(|e| fail(dir.join(format!("{stem}.json")), e.to_string()))?;
    for (ext, text) in [("ron", ron), ("json", json)] {
        let name = format!("{stem}.{ext}");
        write_file(dir, &name, text.as_bytes(), files)?;
    }
    Ok(())
}

/// Write one file atomically and remember its name.
pub fn write_file(
    dir: &Path,
    name: &str,
    bytes: &[u8],
    files: &mut Vec<String>,
) -> Result<(), JobError> {
    let path = dir.join(name);
    write_atomic(&path, bytes).map_err(|e| JobError::Write {
        path: path.clone(),
        why: e.to_string(),
    })?;
    files.push(name.to_string());
    Ok(())
}

/// Run the whole job on `run` and its `data`, writing into `out`.
/// `observers` watch the posterior run (progress display).
pub fn run_job(
    run: &RunFile,
    data: &Dataset,
    name: &str,
    out: &Path,
    settings: &JobSettings,
    observers: &mut [&mut dyn Observer],
) -> Result<JobReport, JobError> {
    std::fs::create_dir_all(out).map_err(|e| JobError::Write {
        path: out.to_path_buf(),
        why: e.to_string(),
    })?;
    let mut files = Vec::new();
    let search_report = search(data, &settings.search)?;
    write_ron_json(out, "periodogram", &search_report, &mut files)?;
    let svg = periodogram_picture(&search_report).map_err(|e| JobError::Write {
        path: out.join("periodogram.svg"),
        why: e.to_string(),
    })?;
    write_file(out, "periodogram.svg", svg.as_bytes(), &mut files)?;

    let fits = fit_run(run, data, name, &settings.fit)?;
    write_ron_json(out, "fit", &fits, &mut files)?;
    let models: Vec<(RvModel, Vec<f64>)> = fits
        .fits
        .iter()
        .map(|f| {
            build_model(run, data, f.kind, name)
                .map(|m| (m.with_wh_step(f.fit.wh_step), f.fit.values.clone()))
        })
        .collect::<Result<_, _>>()
        .map_err(WorkflowError::from)?;
    let pairs: Vec<(&RvModel, &[f64])> = models.iter().map(|(m, v)| (m, v.as_slice())).collect();
    let picture_err = |n: &str, e: String| JobError::Write {
        path: out.join(n),
        why: e,
    };
    let svg = rv_picture(&pairs, "BJD").map_err(|e| picture_err("rv.svg", e.to_string()))?;
    write_file(out, "rv.svg", svg.as_bytes(), &mut files)?;
    if let Some((m, v)) = models.iter().find(|(m, _)| m.kind == ModelKind::Keplerian) {
        for (planet, svg) in
            phase_pictures(m, v).map_err(|e| picture_err("phase", e.to_string()))?
        {
            write_file(
                out,
                &format!("phase-{planet}.svg"),
                svg.as_bytes(),
                &mut files,
            )?;
        }
    }

    let (last_model, _) = models
        .last()
        .ok_or_else(|| picture_err("fit", "no model fitted".into()))?;
    let last_fit = &fits.fits[fits.fits.len() - 1].fit;
    let posterior = sample_posterior(
        last_model,
        last_fit,
        &settings.posterior,
        &out.join("checkpoint.ron"),
        &out.join("samples.csv"),
        false,
        observers,
    )?;
    files.push("checkpoint.ron".into());
    files.push("checkpoint.chain".into());
    files.push("samples.csv".into());
    write_ron_json(out, "posterior", &posterior, &mut files)?;
    let csv = std::fs::read_to_string(out.join("samples.csv"))
        .map_err(|e| picture_err("samples.csv", e.to_string()))?;
    let wanted: Vec<&str> = posterior
        .autocorrelation_times
        .iter()
        .map(|(n, _)| n.as_str())
        .collect();
    let cols: Vec<(String, String, Vec<f64>)> = read_sample_columns(&csv, &wanted)
        .into_iter()
        .map(|(n, v)| {
            let u = super::pictures::parameter_unit(&n).to_string();
            (n, u, v)
        })
        .collect();
    let (hist, pairs_svg) =
        posterior_pictures(&cols).map_err(|e| picture_err("posterior", e.to_string()))?;
    write_file(out, "posterior-histograms.svg", hist.as_bytes(), &mut files)?;
    write_file(out, "posterior-pairs.svg", pairs_svg.as_bytes(), &mut files)?;

    let kep = fits
        .fits
        .iter()
        .position(|f| f.kind == ModelKind::Keplerian);
    let dynf = fits
        .fits
        .iter()
        .rposition(|f| f.kind != ModelKind::Keplerian);
    let assessment = match (kep, dynf) {
        (Some(k), Some(d)) => Some(super::assess::assess(
            &models[k].0,
            &models[k].1,
            &models[d].0,
            &models[d].1,
            Some((last_model, &last_fit.values, &out.join("samples.csv"))),
            &settings.assess,
            out,
            &mut files,
        )?),
        _ => None,
    };
    let system = run.star.name.clone().unwrap_or_else(|| name.to_string());
    let megno_map = match &settings.megno_map {
        Some(ms) => {
            let (m, v) = &models[dynf.unwrap_or(models.len() - 1)];
            Some(megno_map(m, v, ms, &system, out, &mut files)?)
        }
        None => None,
    };
    let report = JobReport {
        system,
        search: search_report,
        fits,
        posterior,
        assessment,
        megno_map,
        files: files.clone(),
    };
    let mut dummy = Vec::new();
    write_ron_json(out, "job", &report, &mut dummy)?;
    Ok(report)
}

/// The MEGNO map of `settings` about the solution `values` of `model`,
/// written as `megno-map.csv` and `megno-map.svg` into `out`.
///
/// # Errors
/// A solution that cannot be mapped (no planet, a run refused for its
/// length) or a file that cannot be written.
pub fn megno_map(
    model: &RvModel,
    values: &[f64],
    settings: &MegnoMapSettings,
    system: &str,
    out: &Path,
    files: &mut Vec<String>,
) -> Result<MegnoMapSummary, JobError> {
    use crate::nbody::system::OrbitSize;
    use crate::stability::map::{
        Axis, BaseSolution, Element, Indicator, MapSettings, map_csv, stability_map,
    };
    use crate::stability::run::{
        RunSettings, StabilityError, settings_for_model, solution_planets,
    };
    let (star_mass, star_radius, planets, t_ref) = solution_planets(model, values)?;
    let outer = planets
        .len()
        .checked_sub(1)
        .ok_or_else(|| StabilityError::BadSystem("the solution has no planet".into()))?;
    let p = match planets[outer].size {
        OrbitSize::Period(p) => p,
        OrbitSize::SemiMajorAxis(_) => {
            return Err(StabilityError::BadSystem("outer planet given by its axis".into()).into());
        }
    };
    let period_range = (
        p * (1.0 - settings.period_span),
        p * (1.0 + settings.period_span),
    );
    let map_settings = MapSettings {
        x: Axis {
            planet: outer,
            element: Element::Period,
            min: period_range.0,
            max: period_range.1,
            n: settings.periods,
        },
        y: Axis {
            planet: outer,
            element: Element::Eccentricity,
            min: 0.0,
            max: settings.max_eccentricity,
            n: settings.eccentricities,
        },
        indicator: Indicator::Megno,
        run: settings_for_model(
            model,
            RunSettings {
                orbits: settings.orbits,
                megno: true,
                ..RunSettings::default()
            },
        ),
    };
    let base = BaseSolution {
        star_mass,
        star_radius,
        planets,
        t_ref,
    };
    let map = stability_map(&base, &map_settings, &|_| {})?;
    write_file(out, "megno-map.csv", map_csv(&map).as_bytes(), files)?;
    let svg = super::pictures::map_picture(&map, system).map_err(|e| JobError::Write {
        path: out.join("megno-map.svg"),
        why: e.to_string(),
    })?;
    write_file(out, "megno-map.svg", svg.as_bytes(), files)?;
    let limit = 2.0 + crate::stability::megno::REGULAR_MARGIN;
    let count = |f: &dyn Fn(&crate::stability::map::MapCell) -> bool| {
        map.cells.iter().filter(|c| f(c)).count()
    };
    Ok(MegnoMapSummary {
        settings: *settings,
        period_range,
        cells: map.cells.len(),
        regular: count(&|c| c.value.is_some_and(|y| y <= limit)),
        irregular: count(&|c| c.value.is_some_and(|y| y > limit)),
        disrupted: count(&|c| c.disrupted()),
        missing: count(&|c| c.value.is_none() && !c.disrupted()),
    })
}

/// A concise summary of the job for people.
pub fn job_summary(r: &JobReport) -> String {
    let mut s = format!("system {}\n", r.system);
    s += &format!(
        "periodogram: {} signal(s): {}\n",
        r.search.detections.len(),
        r.search
            .detections
            .iter()
            .map(|d| format!("{:.3} d", d.period))
            .collect::<Vec<_>>()
            .join(", ")
    );
    for f in &r.fits.fits {
        s += &format!(
            "{:<18} ln L {:>10.2}  BIC {:>9.2}  {}\n",
            super::pictures::kind_label(f.kind),
            f.fit.ln_likelihood,
            f.fit.bic,
            if f.fit.converged {
                "converged"
            } else {
                "not converged"
            }
        );
    }
    let p = &r.posterior;
    s += &format!(
        "posterior ({}): {} walkers × {} steps, acceptance {:.2}{}\n",
        super::pictures::kind_label(p.kind),
        p.walkers,
        p.steps,
        p.acceptance,
        if p.converged {
            ""
        } else {
            ", shorter than 50 τ (a demo-length run)"
        }
    );
    for i in p.intervals.iter().filter(|i| {
        i.name.ends_with("mass_jupiter")
            || i.name == "sin_i"
            || i.name.ends_with("mutual_inclination_deg")
    }) {
        s += &format!(
            "  {:<28} {:.4} (+{:.4} / −{:.4})\n",
            i.name,
            i.median,
            i.upper_68 - i.median,
            i.median - i.lower_68
        );
    }
    if matches!(p.kind, ModelKind::CoplanarEdgeOn | ModelKind::CoplanarSinI) {
        s += "  mutual inclination           0 (fixed by the coplanar model; the ThreeDimensional model frees i and ΔΩ of each planet)\n";
    }
    if let Some(a) = &r.assessment {
        let dec = &a.comparison.decision;
        let flag = serde_json::to_string(&dec.flag).unwrap_or_default();
        s += &format!("flag: {}\n", flag.trim_matches('"'));
        for reason in &dec.reasons {
            s += &format!("  - {reason}\n");
        }
        s += &format!(
            "divergence horizon: {}\n",
            horizon_text(&a.comparison.horizon.outcome)
        );
        for p in &a.diagnosis.precession {
            let nb = p
                .nbody
                .rate()
                .map_or("undefined".into(), |r| format!("{:+.4}", r.rate_deg_per_yr));
            let ll = p
                .laplace_lagrange_mean_deg_per_yr
                .map_or("–".into(), |v| format!("{v:+.4}"));
            s += &format!(
                "dϖ/dt planet {}: N-body {nb} deg/yr, Laplace–Lagrange {ll} deg/yr\n",
                p.planet + 1
            );
        }
        s += &format!(
            "best fit over {:.0} outer orbits: {:?}",
            a.stability.survival_orbits, a.stability.verdict
        );
        if let Some(m) = &a.megno {
            s += &format!(", MEGNO ⟨Y⟩ = {:.3} ({:?})", m.mean_y, m.classification);
        }
        s += "\n";
        if let Some(sv) = &a.survey {
            s += &format!(
                "posterior survey: {}/{} samples stable ({:.0} %, 95 % interval {:.0}–{:.0} %)\n",
                sv.n_stable,
                sv.n_samples,
                100.0 * sv.stable_fraction.unwrap_or(0.0),
                100.0 * sv.interval.lower,
                100.0 * sv.interval.upper
            );
        }
    }
    if let Some(m) = &r.megno_map {
        s += &format!(
            "MEGNO map ({}×{} cells, outer P {:.1}–{:.1} d × e 0–{}, {} orbits each): {} regular, {} chaotic or undecided, {} disrupted\n",
            m.settings.periods,
            m.settings.eccentricities,
            m.period_range.0,
            m.period_range.1,
            m.settings.max_eccentricity,
            m.settings.orbits,
            m.regular,
            m.irregular,
            m.disrupted
        );
    }
    s.trim_end().to_string()
}

/// The horizon in words.
fn horizon_text(h: &crate::compare::horizon::HorizonOutcome) -> String {
    use crate::compare::horizon::HorizonOutcome as H;
    match *h {
        H::AtLastObservation { difference_m_s } => {
            format!("already at the last observation (|Δv| = {difference_m_s:.2} m/s)")
        }
        H::Reached {
            epoch_d,
            after_last_yr,
            ..
        } => {
            format!("{after_last_yr:.2} yr after the last observation (BJD {epoch_d:.1})")
        }
        H::BeyondSpan {
            span_d,
            max_difference_m_s,
        } => format!(
            "beyond {:.0} yr after the data (largest |Δv| {max_difference_m_s:.3} m/s)",
            span_d / crate::units::JULIAN_YEAR_D
        ),
    }
}

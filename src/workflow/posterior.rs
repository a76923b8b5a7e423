//! Posterior sampling of a fitted model with the ensemble sampler:
//! walkers start in a small ball around the optimum, checkpoints are
//! written atomically, a run can be resumed, and the samples are written
//! with derived quantities (masses, semi-major axes, mutual inclinations).

use std::path::Path;

use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;
use serde::{Deserialize, Serialize};

use crate::fit::best_fit::FitResult;
use crate::fit::derived::{derive_planets, mutual_inclination};
use crate::fit::models::{ModelKind, RvModel};
use crate::fit::params::Prior;
use crate::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, DEFAULT_WINDOW_C, Derived, EnsembleSampler, LogTarget, Observer,
    SampleError, gaussian_ball, write_samples_csv,
};

/// Settings of a posterior run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PosteriorSettings {
    /// Walkers (even); `None`: 4 × free parameters rounded up to even.
    pub walkers: Option<usize>,
    /// Total steps (a resumed run continues up to this count).
    pub steps: usize,
    /// Steps discarded as burn-in; `None`: a quarter.
    pub burn_in: Option<usize>,
    /// Keep every n-th step.
    pub thin: usize,
    /// Checkpoint interval in steps.
    pub checkpoint_every: usize,
    /// Seed of the sampler and of the starting ball.
    pub seed: u64,
}

/// Median and central 68 % and 95 % intervals of one quantity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Interval {
    /// Name of the quantity.
    pub name: String,
    /// Median.
    pub median: f64,
    /// 15.87th percentile.
    pub lower_68: f64,
    /// 84.13th percentile.
    pub upper_68: f64,
    /// 2.5th percentile.
    pub lower_95: f64,
    /// 97.5th percentile.
    pub upper_95: f64,
}

/// What a posterior run produced.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PosteriorSummary {
    /// Model sampled.
    pub kind: ModelKind,
    /// Walkers.
    pub walkers: usize,
    /// Steps taken in total.
    pub steps: u64,
    /// Burn-in used for the summary.
    pub burn_in: usize,
    /// Thinning used.
    pub thin: usize,
    /// Overall acceptance fraction.
    pub acceptance: f64,
    /// Integrated autocorrelation time per free parameter (steps).
    pub autocorrelation_times: Vec<(String, f64)>,
    /// True when the chain is longer than 50 τ for every parameter.
    pub converged: bool,
    /// Intervals of the free parameters and derived quantities.
    pub intervals: Vec<Interval>,
    /// Number of samples kept.
    pub n_samples: usize,
}

/// ln posterior of a model in the unconstrained space, for the sampler.
struct Target<'a>(&'a RvModel);

impl LogTarget for Target<'_> {
    fn ln_prob(&self, u: &[f64]) -> f64 {
        self.0.ln_posterior_unconstrained(u)
    }
}

/// Names of the derived columns for `model`.
pub fn derived_names(model: &RvModel) -> Vec<String> {
    let mut names = Vec::new();
    let planets: Vec<String> = model
        .params
        .parameters()
        .iter()
        .filter_map(|p| p.name.strip_suffix(".period").map(str::to_string))
        .collect();
    for p in &planets {
        names.push(format!("{p}.eccentricity"));
        names.push(format!("{p}.omega_star_deg"));
        names.push(format!("{p}.min_mass_jupiter"));
        names.push(format!("{p}.mass_jupiter"));
        names.push(format!("{p}.semi_major_axis_au"));
    }
    if model.kind == ModelKind::ThreeDimensional {
        for w in planets.windows(2) {
            names.push(format!("{}-{}.mutual_inclination_deg", w[0], w[1]));
        }
    }
    names
}

/// Derived values for one full vector, in the order of [`derived_names`]
/// (NaN-free: a failed derivation gives zeros and is never written since
/// such a point has ln L = −∞ and is never in the chain).
fn derived_values(model: &RvModel, full: &[f64], out: &mut [f64]) {
    out.iter_mut().for_each(|v| *v = 0.0);
    let Ok(d) = derive_planets(model, full) else {
        return;
    };
    let mut k = 0;
    for p in &d {
        out[k] = p.eccentricity;
        out[k + 1] = p.omega_star_deg;
        out[k + 2] = p.min_mass_jupiter;
        out[k + 3] = p.mass_jupiter;
        out[k + 4] = p.semi_major_axis;
        k += 5;
    }
    if model.kind == ModelKind::ThreeDimensional {
        if let Ok(dec) = model.decode_planets(full) {
            for w in dec.windows(2) {
                if k < out.len() {
                    out[k] = mutual_inclination(
                        w[0].inclination,
                        w[1].inclination,
                        w[1].node - w[0].node,
                    )
                    .to_degrees();
                    k += 1;
                }
            }
        }
    }
}

/// The percentile `q` ∈ [0, 1] of sorted values (linear interpolation).
fn percentile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return 0.0;
    }
    let x = q * (sorted.len() - 1) as f64;
    let i = x.floor() as usize;
    let j = (i + 1).min(sorted.len() - 1);
    sorted[i] + (x - i as f64) * (sorted[j] - sorted[i])
}

fn interval(name: String, mut v: Vec<f64>) -> Interval {
    v.sort_by(f64::total_cmp);
    Interval {
        name,
        median: percentile(&v, 0.5),
        lower_68: percentile(&v, 0.158_655_25),
        upper_68: percentile(&v, 0.841_344_75),
        lower_95: percentile(&v, 0.025),
        upper_95: percentile(&v, 0.975),
    }
}

/// Sample the posterior of `model` from the optimum `fit`, writing
/// checkpoints to `checkpoint` and the samples table to `samples_csv`.
/// With `resume` and an existing checkpoint the run continues from it
/// (bit-for-bit the same chain as an uninterrupted run). `observers`
/// (e.g. a progress display) are called after every step.
pub fn sample_posterior(
    model: &RvModel,
    fit: &FitResult,
    settings: &PosteriorSettings,
    checkpoint: &Path,
    samples_csv: &Path,
    resume: bool,
    observers: &mut [&mut dyn Observer],
) -> Result<PosteriorSummary, SampleError> {
    let target = Target(model);
    let free = model.params.free_indices().to_vec();
    let dim = free.len();
    let mut sampler = if resume && checkpoint.exists() {
        EnsembleSampler::load_checkpoint(checkpoint)?
    } else {
        let n_walkers = settings.walkers.unwrap_or((4 * dim).max(8).div_ceil(2) * 2);
        let centre = model
            .params
            .unconstrained_from_full(&fit.values)
            .map_err(|_| SampleError::BadBall("optimum outside the parameter space"))?;
        let widths: Vec<f64> = free
            .iter()
            .zip(&centre)
            .map(|(&i, &u)| {
                let (_, ln_jac) = model.params.forward_one(i, u);
                let se = fit.std_errors[i].unwrap_or(0.0);
                let w = 0.1 * se / ln_jac.exp();
                if w.is_finite() && w > 0.0 {
                    w.min(0.1)
                } else {
                    1e-3
                }
            })
            .collect();
        let mut rng = ChaCha20Rng::seed_from_u64(settings.seed);
        let walkers = gaussian_ball(
            &target,
            &centre,
            &Ball::Diagonal(widths),
            n_walkers,
            100,
            &mut rng,
        )?;
        EnsembleSampler::new(
            walkers,
            DEFAULT_STRETCH_SCALE,
            settings.seed.wrapping_add(1),
        )?
    };
    let mut checkpointer =
        crate::fit::sample::Checkpointer::new(checkpoint, settings.checkpoint_every as u64);
    let remaining = settings.steps.saturating_sub(sampler.steps_done() as usize);
    {
        let mut all: Vec<&mut dyn Observer> = vec![&mut checkpointer];
        for o in observers.iter_mut() {
            all.push(&mut **o);
        }
        sampler.run(&target, remaining, &mut all)?;
    }
    sampler.save_checkpoint(checkpoint)?;
    let total = sampler.steps_done() as usize;
    let burn_in = settings
        .burn_in
        .unwrap_or(total / 4)
        .min(total.saturating_sub(1));
    let thin = settings.thin.max(1);
    let samples = sampler.chain().samples(burn_in, thin)?;
    // Free parameters in the constrained space; periodic ones unwrapped
    // about the optimum so that intervals do not straddle the seam.
    let params = model.params.parameters();
    let mut full_rows: Vec<Vec<f64>> = Vec::with_capacity(samples.len());
    for r in 0..samples.len() {
        let mut full = fit.values.clone();
        model
            .params
            .fill_full(samples.row(r), &mut full)
            .map_err(|_| SampleError::BadBall("sample outside the space"))?;
        for &i in &free {
            if let Prior::Periodic { lower, upper } = params[i].prior {
                let w = upper - lower;
                let d = (full[i] - fit.values[i] + 0.5 * w).rem_euclid(w) - 0.5 * w;
                full[i] = fit.values[i] + d;
            }
        }
        full_rows.push(full);
    }
    let names: Vec<&str> = free.iter().map(|&i| params[i].name.as_str()).collect();
    let dnames = derived_names(model);
    let dname_refs: Vec<&str> = dnames.iter().map(String::as_str).collect();
    let mut table = samples.clone();
    for (r, full) in full_rows.iter().enumerate() {
        for (k, &i) in free.iter().enumerate() {
            table.params[r * dim + k] = full[i];
        }
    }
    let compute = |row: &[f64], out: &mut [f64]| {
        let mut full = fit.values.clone();
        for (k, &i) in free.iter().enumerate() {
            full[i] = row[k];
        }
        derived_values(model, &full, out);
    };
    write_samples_csv(
        samples_csv,
        &names,
        &table,
        Some(Derived {
            names: &dname_refs,
            compute: &compute,
        }),
    )?;
    let mut intervals = Vec::new();
    for (k, name) in names.iter().enumerate() {
        intervals.push(interval(
            name.to_string(),
            (0..table.len()).map(|r| table.row(r)[k]).collect(),
        ));
    }
    let mut dvals = vec![Vec::with_capacity(table.len()); dnames.len()];
    let mut buf = vec![0.0; dnames.len()];
    for r in 0..table.len() {
        compute(table.row(r), &mut buf);
        for (col, v) in dvals.iter_mut().zip(&buf) {
            col.push(*v);
        }
    }
    for (name, v) in dnames.iter().zip(dvals) {
        intervals.push(interval(name.clone(), v));
    }
    let taus = sampler.chain().autocorr_times(burn_in, DEFAULT_WINDOW_C)?;
    Ok(PosteriorSummary {
        kind: model.kind,
        walkers: sampler.n_walkers(),
        steps: sampler.steps_done(),
        burn_in,
        thin,
        acceptance: sampler.overall_acceptance(),
        autocorrelation_times: names
            .iter()
            .zip(&taus)
            .map(|(n, t)| (n.to_string(), t.tau))
            .collect(),
        converged: taus.iter().all(|t| t.reliable),
        intervals,
        n_samples: table.len(),
    })
}

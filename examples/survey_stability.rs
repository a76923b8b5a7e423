//! Orbital stability of posterior samples of the invented demo system
//! Tellan: fit the coplanar edge-on N-body model, draw samples with a short
//! ensemble-sampler run (written as a samples CSV), integrate a seeded
//! choice of them for 2000 outer orbits each (in parallel), and print the
//! stable fraction with its exact Clopper–Pearson interval.
//!
//! ```sh
//! cargo run --release --example survey_stability
//! ```
//!
//! Output (about 9 s of CPU time in release; 19 s wall on two loaded cores):
//!
//! ```text
//! best fit: ln L = -409.56, b: P = 60.222 d, m = 2.085 M_J; c: P = 125.008 d, m = 1.741 M_J
//! posterior: 28 walkers × 120 steps, burn-in 60, 1680 samples, acceptance 0.37
//! surveyed 40 samples for 2000 outer orbits each
//! stable: 40 of 40 (1.000), 95 % interval [0.912, 1.000] (Clopper–Pearson)
//! ```

use apsidal::config::{FitSection, build_model};
use apsidal::fit::best_fit::FitSettings;
use apsidal::fit::models::ModelKind;
use apsidal::fit::sample::Flow;
use apsidal::stability::run::{RunSettings, settings_for_model};
use apsidal::stability::survey::{SurveySettings, read_samples_csv, run_survey};
use apsidal::workflow::fitting::fit_run;
use apsidal::workflow::posterior::{PosteriorSettings, sample_posterior};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let (mut run, data) = apsidal::demo::load_demo("tellan")?;
    let name = "demo:tellan";
    run.fit = Some(FitSection {
        models: vec![ModelKind::CoplanarEdgeOn],
        ..run.fit.clone().unwrap_or_default()
    });

    // 1. Maximum-likelihood fit.
    let report = fit_run(&run, &data, name, &FitSettings::default())?;
    let best = &report.fits[0];
    let planets: Vec<String> = best
        .planets
        .iter()
        .map(|p| {
            format!(
                "{}: P = {:.3} d, m = {:.3} M_J",
                p.name, p.period, p.mass_jupiter
            )
        })
        .collect();
    println!(
        "best fit: ln L = {:.2}, {}",
        best.fit.ln_likelihood,
        planets.join("; ")
    );
    let model = build_model(&run, &data, best.kind, name)?.with_wh_step(best.fit.wh_step);

    // 2. A short posterior run from the optimum (a demonstration length,
    //    not a converged posterior), into a scratch folder.
    let dir = std::env::temp_dir().join(format!("apsidal-survey-example-{}", std::process::id()));
    std::fs::create_dir_all(&dir)?;
    let samples_csv = dir.join("samples.csv");
    let posterior = sample_posterior(
        &model,
        &best.fit,
        &PosteriorSettings {
            walkers: Some(28),
            steps: 120,
            burn_in: Some(60),
            thin: 1,
            checkpoint_every: 60,
            seed: 11,
        },
        &dir.join("checkpoint.ron"),
        &samples_csv,
        false,
        &mut [],
    )?;
    println!(
        "posterior: {} walkers × {} steps, burn-in {}, {} samples, acceptance {:.2}",
        posterior.walkers,
        posterior.steps,
        posterior.burn_in,
        posterior.n_samples,
        posterior.acceptance
    );

    // 3. Stability survey of 40 of the samples (a seeded choice; the result
    //    does not depend on the number of threads).
    let table = read_samples_csv(&samples_csv)?;
    let orbits = 2000.0;
    let settings = SurveySettings {
        run: settings_for_model(
            &model,
            RunSettings {
                orbits,
                ..RunSettings::default()
            },
        ),
        max_samples: Some(40),
        seed: 3,
        confidence: 0.95,
        ..SurveySettings::default()
    };
    let summary = run_survey(
        &model,
        &table,
        &model.params.start_full(),
        &settings,
        &dir.join("survey.csv"),
        false,
        &|_| Flow::Continue,
    )?;
    println!(
        "surveyed {} samples for {orbits} outer orbits each",
        summary.n_samples
    );
    println!(
        "stable: {} of {} ({}), {:.0} % interval [{:.3}, {:.3}] (Clopper–Pearson)",
        summary.n_stable,
        summary.n_samples,
        summary
            .stable_fraction
            .map_or("-".to_string(), |f| format!("{f:.3}")),
        100.0 * summary.interval.confidence,
        summary.interval.lower,
        summary.interval.upper
    );
    if summary.n_stable < summary.n_samples {
        println!("by verdict: {:?}", summary.by_verdict);
    }
    std::fs::remove_dir_all(&dir)?;
    Ok(())
}

//! One function per subcommand: read inputs, call the library, write and
//! print the results.

use std::path::{Path, PathBuf};

use apsidal::config::{RunFile, load_run_file};
use apsidal::data::{Dataset, InstrumentLabel, TableSource, read_tables};
use apsidal::fit::best_fit::FitSettings;
use apsidal::periodogram::{GridSettings, PeelSettings};
use apsidal::workflow::fitting::{FitReport, WorkflowError, fit_run};
use apsidal::workflow::posterior::{PosteriorSettings, PosteriorSummary, sample_posterior};
use apsidal::workflow::search::{SearchReport, SearchSettings, search};

use super::args::{Cli, Command, PeriodogramArgs, RunArgs, SampleArgs};
use super::args::{SimModelArg, SimulateArgs};
use super::output::write_text;
use super::output::{CliError, ensure_dir, write_report};
use super::progress::{SamplerProgress, bar};

/// Default seed when neither the command line nor the run file gives one.
const DEFAULT_SEED: u64 = 1;

/// Run the chosen subcommand.
pub fn dispatch(cli: &Cli) -> Result<(), CliError> {
    match &cli.command {
        Command::Periodogram(a) => periodogram(cli, a),
        Command::Fit(a) => fit(cli, a),
        Command::Sample(a) => sample(cli, a),
        Command::Simulate(a) => simulate(cli, a),
    }
}

fn say(cli: &Cli, text: &str) {
    if !cli.global.quiet {
        println!("{text}");
    }
}

fn out_dir(cli: &Cli, run: Option<&RunFile>) -> PathBuf {
    cli.global
        .out
        .clone()
        .or_else(|| run.and_then(|r| r.output.clone()))
        .unwrap_or_else(|| PathBuf::from("apsidal-out"))
}

fn load_run(path: &Path) -> Result<(RunFile, Dataset), CliError> {
    let run = load_run_file(path).map_err(|e| CliError::BadInput(e.to_string()))?;
    let data = run
        .read_data()
        .map_err(|e| CliError::BadInput(e.to_string()))?;
    Ok((run, data))
}

fn workflow_error(e: WorkflowError) -> CliError {
    match e {
        WorkflowError::Setup(_) => CliError::BadInput(e.to_string()),
        _ => CliError::Internal(e.to_string()),
    }
}

fn periodogram(cli: &Cli, a: &PeriodogramArgs) -> Result<(), CliError> {
    let sources: Vec<TableSource> = a
        .tables
        .iter()
        .map(|p| TableSource {
            path: p.clone(),
            instrument: a
                .instrument
                .clone()
                .map_or(InstrumentLabel::FromColumn, InstrumentLabel::Given),
        })
        .collect();
    let data = read_tables(&sources, None).map_err(|e| CliError::BadInput(e.to_string()))?;
    let settings = SearchSettings {
        grid: GridSettings {
            oversampling: a.oversampling,
            shortest_period: a.shortest_period,
            longest_period: a.longest_period,
        },
        peel: PeelSettings {
            max_signals: a.max_signals,
            fap_threshold: a.fap,
        },
    };
    let report = search(&data, &settings).map_err(|e| CliError::BadInput(e.to_string()))?;
    let dir = out_dir(cli, None);
    ensure_dir(&dir)?;
    write_report(&dir, "periodogram", &report)?;
    say(cli, &periodogram_table(&report));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

/// The periodogram's detections as a short table.
pub fn periodogram_table(r: &SearchReport) -> String {
    let mut s = format!("{} points over {:.1} d\n", r.n_points, r.baseline);
    s += "  #   period [d]   power    FAP         amplitude [m/s]\n";
    for (k, d) in r.detections.iter().enumerate() {
        s += &format!(
            "  {:<3} {:>10.4}   {:.4}   {:<10.3e}  {:.2}\n",
            k + 1,
            d.period,
            d.power,
            d.fap,
            d.sinusoid.amplitude
        );
    }
    s += &format!("  ({})", r.stop);
    s
}

fn fit(cli: &Cli, a: &RunArgs) -> Result<(), CliError> {
    let (run, data) = load_run(&a.run)?;
    let name = a.run.display().to_string();
    let report = fit_run(&run, &data, &name, &FitSettings::default()).map_err(workflow_error)?;
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    write_report(&dir, "fit", &report)?;
    say(cli, &fit_table(&report));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

/// Fit results as a short table.
pub fn fit_table(r: &FitReport) -> String {
    let mut s = String::new();
    for f in &r.fits {
        s += &format!(
            "{:?}: ln L = {:.3}, χ² = {:.1} for {} points, BIC = {:.2}, {}\n",
            f.kind,
            f.fit.ln_likelihood,
            f.fit.chi_square,
            f.fit.n_points,
            f.fit.bic,
            if f.fit.converged {
                "converged"
            } else {
                "NOT converged"
            }
        );
        s += "  planet  P [d]       K [m/s]  e       ω⋆ [deg]  m sin i [M_J]  m [M_J]  a [au]\n";
        for p in &f.planets {
            s += &format!(
                "  {:<7} {:<11.4} {:<8.3} {:<7.4} {:<9.2} {:<14.4} {:<8.4} {:.4}\n",
                p.name,
                p.period,
                p.semi_amplitude,
                p.eccentricity,
                p.omega_star_deg,
                p.min_mass_jupiter,
                p.mass_jupiter,
                p.semi_major_axis
            );
        }
        for (inst, rms) in &f.residual_rms {
            s += &format!("  residual RMS {inst}: {rms:.3} m/s\n");
        }
    }
    s.trim_end().to_string()
}

fn sample(cli: &Cli, a: &SampleArgs) -> Result<(), CliError> {
    let (run, data) = load_run(&a.run)?;
    let name = a.run.display().to_string();
    let report = fit_run(&run, &data, &name, &FitSettings::default()).map_err(workflow_error)?;
    let Some(last) = report.fits.last() else {
        return Err(CliError::BadInput(format!(
            "{name}: fit.models lists no model to sample"
        )));
    };
    let model = apsidal::config::build_model(&run, &data, last.kind, &name)
        .map_err(|e| CliError::BadInput(e.to_string()))?;
    let section = run.sampler;
    let steps = a.steps.or(section.map(|s| s.steps)).unwrap_or(2000);
    let settings = PosteriorSettings {
        walkers: a.walkers.or(section.and_then(|s| s.walkers)),
        steps,
        burn_in: section.and_then(|s| s.burn_in),
        thin: section.and_then(|s| s.thin).unwrap_or(1),
        checkpoint_every: section.and_then(|s| s.checkpoint_every).unwrap_or(50),
        seed: cli.global.seed.or(run.seed).unwrap_or(DEFAULT_SEED),
    };
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    let pb = bar(steps as u64, "sampling", cli.global.quiet);
    let mut progress = SamplerProgress(pb.clone());
    let summary = sample_posterior(
        &model,
        &last.fit,
        &settings,
        &dir.join("checkpoint.ron"),
        &dir.join("samples.csv"),
        a.resume,
        &mut [&mut progress],
    )
    .map_err(|e| CliError::Internal(e.to_string()))?;
    pb.finish_and_clear();
    write_report(&dir, "posterior", &summary)?;
    say(cli, &posterior_table(&summary));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

/// Posterior intervals as a short table.
pub fn posterior_table(s: &PosteriorSummary) -> String {
    let mut t = format!(
        "{:?}: {} walkers × {} steps, burn-in {}, acceptance {:.2}, {} samples, {}\n",
        s.kind,
        s.walkers,
        s.steps,
        s.burn_in,
        s.acceptance,
        s.n_samples,
        if s.converged {
            "chains longer than 50 τ"
        } else {
            "chains SHORTER than 50 τ: run longer"
        }
    );
    t += "  quantity                          median        −1σ           +1σ\n";
    for i in &s.intervals {
        t += &format!(
            "  {:<33} {:<13.6} {:<13.6} {:.6}\n",
            i.name,
            i.median,
            i.median - i.lower_68,
            i.upper_68 - i.median
        );
    }
    t.trim_end().to_string()
}

fn simulate(cli: &Cli, a: &SimulateArgs) -> Result<(), CliError> {
    use apsidal::workflow::simulate::{
        SimulateSettings, SimulationModel, epochs_between, parse_epochs,
    };
    let bad = |e: apsidal::workflow::simulate::SimulateError| CliError::BadInput(e.to_string());
    let run = load_run_file(&a.run).map_err(|e| CliError::BadInput(e.to_string()))?;
    let epochs = match (&a.epochs, a.start, a.end, a.step) {
        (Some(path), ..) => {
            let text = std::fs::read_to_string(path).map_err(|e| {
                CliError::BadInput(format!("{}: cannot read the epochs: {e}", path.display()))
            })?;
            parse_epochs(&text, &path.display().to_string()).map_err(bad)?
        }
        (None, Some(start), Some(end), Some(step)) => {
            epochs_between(start, end, step).map_err(bad)?
        }
        _ => {
            return Err(CliError::BadInput(
                "give the epochs: --epochs FILE, or --start, --end and --step".into(),
            ));
        }
    };
    let settings = SimulateSettings {
        model: match a.model {
            SimModelArg::Dynamical => SimulationModel::Dynamical,
            SimModelArg::Keplerian => SimulationModel::Keplerian,
        },
        noise: a.noise,
        seed: cli.global.seed.or(run.seed).unwrap_or(DEFAULT_SEED),
        instrument: a.instrument.clone(),
        ..SimulateSettings::default()
    };
    let name = a.run.display().to_string();
    let sim = apsidal::workflow::simulate::simulate(&run, &epochs, &settings, &name).map_err(
        |e| match e {
            apsidal::workflow::simulate::SimulateError::Dynamical(_) => {
                CliError::Internal(e.to_string())
            }
            _ => CliError::BadInput(e.to_string()),
        },
    )?;
    if a.table.is_empty() || a.table.contains(['/', '\\']) {
        return Err(CliError::BadInput(format!(
            "--table '{}' must be a plain file name",
            a.table
        )));
    }
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    let path = dir.join(&a.table);
    write_text(&path, &sim.to_table())?;
    say(
        cli,
        &format!(
            "{} epochs ({:?} model, reference epoch {}) written to {}",
            sim.time.len(),
            sim.model,
            sim.reference_epoch,
            path.display()
        ),
    );
    Ok(())
}

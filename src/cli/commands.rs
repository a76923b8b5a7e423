//! One function per subcommand: read inputs, call the library, write and
//! print the results.

use std::path::{Path, PathBuf};

use apsidal::config::{FieldPath, RunFile, SetupError, load_run_file};
use apsidal::data::{Dataset, InstrumentLabel, TableSource, read_tables};
use apsidal::fit::best_fit::FitSettings;
use apsidal::periodogram::{GridSettings, PeelSettings};
use apsidal::workflow::fitting::{FitReport, WorkflowError, fit_run};
use apsidal::workflow::pictures;
use apsidal::workflow::posterior::{PosteriorSettings, PosteriorSummary, sample_posterior};
use apsidal::workflow::search::{SearchReport, SearchSettings, search};

use super::args::{Cli, Command, PeriodogramArgs, RunArgs, SampleArgs};
use super::args::{DemoArgs, SimModelArg, SimulateArgs};
use super::args::{MapArgs, MergeArgs, RunLengthArgs, StabilityArgs};
use super::output::{CliError, ensure_dir, write_report, write_text};
use super::progress::{SamplerProgress, bar};

/// Default seed when neither the command line nor the run file gives one.
const DEFAULT_SEED: u64 = 1;

/// Run the chosen subcommand.
pub fn dispatch(cli: &Cli) -> Result<(), CliError> {
    match &cli.command {
        Command::Periodogram(a) => periodogram(cli, a),
        Command::Fit(a) => fit(cli, a),
        Command::Sample(a) => sample(cli, a),
        Command::Stability(a) => stability(cli, a),
        Command::Map(a) => map(cli, a),
        Command::Merge(a) => merge(cli, a),
        Command::Simulate(a) => simulate(cli, a),
        Command::Demo(a) => demo(cli, a),
        Command::Compare(a) => compare(cli, a),
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

fn workflow_error(e: WorkflowError, run: &Path) -> CliError {
    match e {
        WorkflowError::Setup(s) => setup_error(s, run),
        _ => CliError::Internal(e.to_string()),
    }
}

/// A model set-up error as bad input, with the line and column of the
/// prior override at fault when there is one (hardening: the set-up
/// errors named the file and field but not the line).
fn setup_error(e: SetupError, run: &Path) -> CliError {
    let name = run.display().to_string();
    let text = e.to_string();
    if let SetupError::UnknownParameter { index, .. } = &e {
        let field = FieldPath::parse_simple(&format!("fit.priors[{index}].parameter"));
        if let (Some((line, column)), Some(rest)) = (
            apsidal::config::field_position(run, &field),
            text.strip_prefix(&format!("{name}: ")),
        ) {
            return CliError::BadInput(format!("{name}:{line}:{column}: {rest}"));
        }
    }
    CliError::BadInput(text)
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
    let svg =
        pictures::periodogram_picture(&report).map_err(|e| CliError::Internal(e.to_string()))?;
    write_text(&dir.join("periodogram.svg"), &svg)?;
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
    let report = fit_run(&run, &data, &name, &FitSettings::default())
        .map_err(|e| workflow_error(e, &a.run))?;
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    write_report(&dir, "fit", &report)?;
    fit_pictures(&run, &data, &name, &report, &dir)?;
    say(cli, &fit_table(&report));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

/// The RV picture with every fitted model, and the phase-folded signal of
/// each planet from the Keplerian fit (when there is one).
fn fit_pictures(
    run: &RunFile,
    data: &Dataset,
    name: &str,
    report: &FitReport,
    dir: &Path,
) -> Result<(), CliError> {
    let internal = |e: String| CliError::Internal(e);
    let mut models = Vec::new();
    for f in &report.fits {
        let m = apsidal::config::build_model(run, data, f.kind, name)
            .map_err(|e| internal(e.to_string()))?;
        models.push((m.with_wh_step(f.fit.wh_step), f.fit.values.clone()));
    }
    let pairs: Vec<(&apsidal::fit::models::RvModel, &[f64])> =
        models.iter().map(|(m, v)| (m, v.as_slice())).collect();
    if !pairs.is_empty() {
        let svg = pictures::rv_picture(&pairs, "BJD").map_err(|e| internal(e.to_string()))?;
        write_text(&dir.join("rv.svg"), &svg)?;
    }
    if let Some((m, v)) = models
        .iter()
        .find(|(m, _)| m.kind == apsidal::fit::models::ModelKind::Keplerian)
    {
        for (planet, svg) in pictures::phase_pictures(m, v).map_err(|e| internal(e.to_string()))? {
            write_text(&dir.join(format!("phase-{planet}.svg")), &svg)?;
        }
    }
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
    let report = fit_run(&run, &data, &name, &FitSettings::default())
        .map_err(|e| workflow_error(e, &a.run))?;
    let Some(last) = report.fits.last() else {
        return Err(CliError::BadInput(format!(
            "{name}: fit.models lists no model to sample"
        )));
    };
    let model = apsidal::config::build_model(&run, &data, last.kind, &name)
        .map_err(|e| setup_error(e, &a.run))?
        .with_wh_step(last.fit.wh_step);
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
    posterior_pictures(&summary, &dir)?;
    say(cli, &posterior_table(&summary));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

/// Histograms and a pair plot of the sampled free parameters.
fn posterior_pictures(summary: &PosteriorSummary, dir: &Path) -> Result<(), CliError> {
    let text = std::fs::read_to_string(dir.join("samples.csv"))
        .map_err(|e| CliError::Internal(e.to_string()))?;
    let wanted: Vec<&str> = summary
        .autocorrelation_times
        .iter()
        .map(|(n, _)| n.as_str())
        .collect();
    let cols: Vec<(String, String, Vec<f64>)> = pictures::read_sample_columns(&text, &wanted)
        .into_iter()
        .map(|(n, v)| {
            let unit = pictures::parameter_unit(&n).to_string();
            (n, unit, v)
        })
        .collect();
    let (hist, pairs) =
        pictures::posterior_pictures(&cols).map_err(|e| CliError::Internal(e.to_string()))?;
    write_text(&dir.join("posterior-histograms.svg"), &hist)?;
    write_text(&dir.join("posterior-pairs.svg"), &pairs)?;
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

fn run_settings(a: &RunLengthArgs) -> apsidal::stability::run::RunSettings {
    apsidal::stability::run::RunSettings {
        orbits: a.orbits,
        step: a.step,
        hill_radii: a.hill_radii,
        max_steps: a.max_steps,
        megno: a.megno,
        ..Default::default()
    }
}

fn last_kind(run: &RunFile, name: &str) -> Result<apsidal::fit::models::ModelKind, CliError> {
    run.fit
        .clone()
        .unwrap_or_default()
        .models
        .last()
        .copied()
        .ok_or_else(|| CliError::BadInput(format!("{name}: fit.models lists no model")))
}

/// The model of the run file's last kind and its maximum-likelihood values.
fn fitted(
    run: &RunFile,
    data: &Dataset,
    name: &str,
) -> Result<(apsidal::fit::models::RvModel, Vec<f64>), CliError> {
    let report = fit_run(run, data, name, &FitSettings::default())
        .map_err(|e| workflow_error(e, Path::new(name)))?;
    let Some(last) = report.fits.last() else {
        return Err(CliError::BadInput(format!(
            "{name}: fit.models lists no model"
        )));
    };
    let model = apsidal::config::build_model(run, data, last.kind, name)
        .map_err(|e| CliError::BadInput(e.to_string()))?
        .with_wh_step(last.fit.wh_step);
    Ok((model, last.fit.values.clone()))
}

fn stability(cli: &Cli, a: &StabilityArgs) -> Result<(), CliError> {
    use apsidal::stability::run::settings_for_model;
    use apsidal::stability::survey::{SurveySettings, read_samples_csv, run_survey};
    let (run, data) = load_run(&a.run)?;
    let name = a.run.display().to_string();
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    let Some(samples) = &a.samples else {
        use apsidal::stability::run::{run_stability_observed, solution_system};
        let (model, values) = fitted(&run, &data, &name)?;
        let settings = settings_for_model(&model, run_settings(&a.length));
        let system =
            solution_system(&model, &values).map_err(|e| CliError::BadInput(e.to_string()))?;
        // Progress in thousandths of the run (indicatif draws nothing when
        // stderr is not a terminal, and `bar` hides it in quiet mode).
        let pb = bar(1000, "stability", cli.global.quiet);
        let pb2 = pb.clone();
        let report = run_stability_observed(&system, &settings, &move |f| {
            pb2.set_position((1000.0 * f).round() as u64)
        })
        .map_err(|e| CliError::BadInput(e.to_string()))?;
        pb.finish_and_clear();
        write_report(&dir, "stability", &report)?;
        say(
            cli,
            &format!(
                "{}: survived {:.1} of {} orbits ({:.1} d), max e {:?}, max |Δa|/a {:?}, min spacing {:?} mutual Hill radii",
                report.verdict.label(),
                report.survival_orbits,
                a.length.orbits,
                report.survival_time,
                report.max_eccentricity,
                report.max_axis_drift,
                report.min_hill_spacing()
            ),
        );
        say(cli, &format!("results in {}", dir.display()));
        return Ok(());
    };
    let model = apsidal::config::build_model(&run, &data, last_kind(&run, &name)?, &name)
        .map_err(|e| CliError::BadInput(e.to_string()))?;
    let table = read_samples_csv(samples).map_err(|e| CliError::BadInput(e.to_string()))?;
    let shard = match &a.shard {
        Some(s) => s
            .parse()
            .map_err(|e: apsidal::stability::survey::SurveyError| {
                CliError::BadInput(e.to_string())
            })?,
        None => Default::default(),
    };
    let settings = SurveySettings {
        run: settings_for_model(&model, run_settings(&a.length)),
        max_samples: a.max_samples,
        seed: cli.global.seed.or(run.seed).unwrap_or(DEFAULT_SEED),
        shard,
        confidence: a.confidence,
        ..Default::default()
    };
    let stem = if a.shard.is_some() {
        format!("survey-shard-{}-of-{}", shard.index, shard.count)
    } else {
        "survey".to_string()
    };
    let n = apsidal::stability::survey::shard_rows(
        &apsidal::stability::survey::select_rows(table.rows.len(), a.max_samples, settings.seed),
        shard,
    )
    .len();
    let pb = bar(n as u64, "stability", cli.global.quiet);
    let pb2 = pb.clone();
    let summary = run_survey(
        &model,
        &table,
        &model.params.start_full(),
        &settings,
        &dir.join(format!("{stem}.csv")),
        a.resume,
        &move |p| {
            pb2.set_position(p.done as u64);
            apsidal::fit::sample::Flow::Continue
        },
    )
    .map_err(|e| match e {
        apsidal::stability::survey::SurveyError::Write(_)
        | apsidal::stability::survey::SurveyError::Journal { .. } => {
            CliError::Internal(e.to_string())
        }
        _ => CliError::BadInput(e.to_string()),
    })?;
    pb.finish_and_clear();
    write_report(&dir, &format!("{stem}-summary"), &summary)?;
    say(cli, &survey_line(&summary));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

fn survey_line(s: &apsidal::stability::survey::SurveySummary) -> String {
    format!(
        "{} of {} samples stable ({}), {:.0}% interval [{:.4}, {:.4}] (Clopper–Pearson); by verdict {:?}",
        s.n_stable,
        s.n_samples,
        s.stable_fraction
            .map_or("-".to_string(), |f| format!("{f:.4}")),
        100.0 * s.interval.confidence,
        s.interval.lower,
        s.interval.upper,
        s.by_verdict
    )
}

fn parse_axis(s: &str, n_planets: usize) -> Result<apsidal::stability::map::Axis, CliError> {
    let bad = |why: &str| {
        CliError::BadInput(format!(
            "axis `{s}`: {why} (expected PLANET.ELEMENT:MIN:MAX:N, e.g. 2.period:80:90:21)"
        ))
    };
    let parts: Vec<&str> = s.split(':').collect();
    if parts.len() != 4 {
        return Err(bad("four parts separated by `:` needed"));
    }
    let (p, e) = parts[0]
        .split_once('.')
        .ok_or_else(|| bad("PLANET.ELEMENT needed"))?;
    let planet: usize = p
        .parse()
        .map_err(|_| bad("planet must be a number from 1"))?;
    if planet == 0 || planet > n_planets {
        return Err(bad(&format!("the solution has planets 1 to {n_planets}")));
    }
    let element =
        apsidal::stability::map::Element::from_name(e).ok_or_else(|| bad("unknown element"))?;
    let num = |x: &str| x.parse::<f64>().ok().filter(|v| v.is_finite());
    let (Some(min), Some(max)) = (num(parts[1]), num(parts[2])) else {
        return Err(bad("MIN and MAX must be numbers"));
    };
    let n: usize = parts[3]
        .parse()
        .map_err(|_| bad("N must be a whole number"))?;
    if n == 0 {
        return Err(bad("N must be at least 1"));
    }
    Ok(apsidal::stability::map::Axis {
        planet: planet - 1,
        element,
        min,
        max,
        n,
    })
}

fn map(cli: &Cli, a: &MapArgs) -> Result<(), CliError> {
    use apsidal::stability::map::{BaseSolution, Indicator, MapSettings, map_csv, stability_map};
    let (run, data) = load_run(&a.run)?;
    let name = a.run.display().to_string();
    let indicator = Indicator::from_name(&a.indicator).ok_or_else(|| {
        CliError::BadInput(format!(
            "indicator `{}`: expected survival, max-e, drift or megno",
            a.indicator
        ))
    })?;
    let (model, values) = fitted(&run, &data, &name)?;
    let (star_mass, star_radius, planets, t_ref) =
        apsidal::stability::run::solution_planets(&model, &values)
            .map_err(|e| CliError::BadInput(e.to_string()))?;
    let settings = MapSettings {
        x: parse_axis(&a.x, planets.len())?,
        y: parse_axis(&a.y, planets.len())?,
        indicator,
        run: apsidal::stability::run::settings_for_model(&model, run_settings(&a.length)),
    };
    let base = BaseSolution {
        star_mass,
        star_radius,
        planets,
        t_ref,
    };
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    let pb = bar(
        (settings.x.n * settings.y.n) as u64,
        "map",
        cli.global.quiet,
    );
    let pb2 = pb.clone();
    let m = stability_map(&base, &settings, &move |d| pb2.set_position(d as u64))
        .map_err(|e| CliError::BadInput(e.to_string()))?;
    pb.finish_and_clear();
    write_text(&dir.join("map.csv"), &map_csv(&m))?;
    let system = run.star.name.clone().unwrap_or_else(|| name.clone());
    match pictures::map_picture(&m, &system) {
        Ok(svg) => write_text(&dir.join("map.svg"), &svg)?,
        // A map with a one-value axis is a table, not a picture.
        Err(e) => say(cli, &format!("map.svg not written: {e}")),
    }
    let stable = m.cells.iter().filter(|c| c.verdict == "stable").count();
    let disrupted = m.cells.iter().filter(|c| c.disrupted()).count();
    say(
        cli,
        &format!(
            "{stable} of {} cells stable, {disrupted} disrupted",
            m.cells.len()
        ),
    );
    if indicator == Indicator::Megno {
        let regular = m
            .cells
            .iter()
            .filter(|c| {
                c.value
                    .is_some_and(|y| y <= 2.0 + apsidal::stability::megno::REGULAR_MARGIN)
            })
            .count();
        say(
            cli,
            &format!("{regular} cells with ⟨Y⟩ ≤ 2.2 (regular, Cincotta & Simó 2000)"),
        );
    }
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

fn merge(cli: &Cli, a: &MergeArgs) -> Result<(), CliError> {
    use apsidal::stability::survey::{merge_tables, summarise};
    let table = merge_tables(&a.tables).map_err(|e| CliError::BadInput(e.to_string()))?;
    let dir = out_dir(cli, None);
    ensure_dir(&dir)?;
    write_text(&dir.join("survey.csv"), &table.to_csv())?;
    let summary = summarise(&table, table.rows.len(), a.confidence)
        .map_err(|e| CliError::BadInput(e.to_string()))?;
    write_report(&dir, "survey-summary", &summary)?;
    say(cli, &survey_line(&summary));
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
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

fn demo(cli: &Cli, a: &DemoArgs) -> Result<(), CliError> {
    use apsidal::workflow::job::{JobSettings, job_summary, run_job};
    let (run, data) =
        apsidal::demo::load_demo(&a.system).map_err(|e| CliError::BadInput(e.to_string()))?;
    let seed = cli.global.seed.or(run.seed).unwrap_or(DEFAULT_SEED);
    let mut settings = JobSettings::for_run(&run, seed);
    settings.posterior.steps = a.steps;
    settings.assess.survey_samples = a.survey;
    let dir = cli
        .global
        .out
        .clone()
        .unwrap_or_else(|| PathBuf::from("apsidal-demo"));
    ensure_dir(&dir)?;
    let name = format!("demo:{}", a.system);
    say(
        cli,
        &format!(
            "demo system {} ({} points); writing into {}",
            a.system,
            data.len(),
            dir.display()
        ),
    );
    let pb = bar(a.steps as u64, "sampling", cli.global.quiet);
    let mut progress = SamplerProgress(pb.clone());
    let report = run_job(&run, &data, &name, &dir, &settings, &mut [&mut progress])
        .map_err(|e| CliError::Internal(e.to_string()))?;
    pb.finish_and_clear();
    say(cli, &job_summary(&report));
    say(
        cli,
        &format!("{} files in {}", report.files.len(), dir.display()),
    );
    Ok(())
}

fn compare(cli: &Cli, a: &RunArgs) -> Result<(), CliError> {
    use apsidal::fit::models::ModelKind;
    use apsidal::workflow::assess::{AssessSettings, assess_observed};
    let (run, data) = load_run(&a.run)?;
    let name = a.run.display().to_string();
    let report = fit_run(&run, &data, &name, &FitSettings::default())
        .map_err(|e| workflow_error(e, &a.run))?;
    let kep = report.fits.iter().find(|f| f.kind == ModelKind::Keplerian);
    let dynf = report
        .fits
        .iter()
        .rev()
        .find(|f| f.kind != ModelKind::Keplerian);
    let (Some(kep), Some(dynf)) = (kep, dynf) else {
        return Err(CliError::BadInput(format!(
            "{name}: fit.models must list Keplerian and a dynamical model to compare them"
        )));
    };
    let build = |f: &apsidal::workflow::fitting::ModelFit| {
        apsidal::config::build_model(&run, &data, f.kind, &name)
            .map(|m| m.with_wh_step(f.fit.wh_step))
            .map_err(|e| CliError::BadInput(e.to_string()))
    };
    let (km, dm) = (build(kep)?, build(dynf)?);
    let dir = out_dir(cli, Some(&run));
    ensure_dir(&dir)?;
    let seed = cli.global.seed.or(run.seed).unwrap_or(DEFAULT_SEED);
    let settings = AssessSettings {
        seed,
        ..AssessSettings::default()
    };
    let mut files = Vec::new();
    let pb = bar(1000, "history", cli.global.quiet);
    let a = assess_observed(
        &km,
        &kep.fit.values,
        &dm,
        &dynf.fit.values,
        None,
        &settings,
        &dir,
        &mut files,
        &mut |f| pb.set_position((1000.0 * f.clamp(0.0, 1.0)) as u64),
    )
    .map_err(|e| CliError::Internal(e.to_string()))?;
    pb.finish_and_clear();
    say(cli, &a.comparison.text_summary());
    say(cli, &format!("results in {}", dir.display()));
    Ok(())
}

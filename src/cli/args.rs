//! Arguments of the command line (clap derive).

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

/// Dynamical (N-body) modelling of stellar radial velocities.
#[derive(Debug, Parser)]
#[command(name = "apsidal", version, about, long_about = None)]
pub struct Cli {
    /// Options shared by every subcommand.
    #[command(flatten)]
    pub global: Global,
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Options shared by every subcommand.
#[derive(Debug, Args)]
pub struct Global {
    /// Seed of every random choice (overrides the run file's).
    #[arg(long, global = true)]
    pub seed: Option<u64>,
    /// Number of worker threads (default: all cores). Results do not
    /// depend on it.
    #[arg(long, global = true)]
    pub threads: Option<usize>,
    /// Output folder (default: the run file's `output`, else `apsidal-out`).
    #[arg(long, global = true)]
    pub out: Option<PathBuf>,
    /// Print nothing but errors; no progress bars.
    #[arg(long, short, global = true)]
    pub quiet: bool,
}

/// Subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Keplerian-versus-dynamical comparison of a run file's fits: statistics,
    /// divergence horizon, resonance diagnosis from a long integration,
    /// stability of the dynamical solution, and the flag with its reasons.
    /// The run file must list a Keplerian and a dynamical model.
    #[command(
        after_help = "Example:\n  apsidal compare demo-data/tellan/run.ron --out cmp\n  (writes cmp/comparison.txt, comparison.ron/json, diagnosis.*, stability.*, divergence.svg, angles-1.svg)"
    )]
    Compare(RunArgs),
    /// The whole job on an embedded, invented demo system: periodogram →
    /// Keplerian fit → dynamical fits → a short posterior run →
    /// comparison and flag → stability of the best fit and a survey of
    /// posterior samples, with every result and picture written.
    #[command(
        after_help = "Examples:\n  apsidal demo                       # interacting pair near 2:1 (Tellan), into apsidal-demo/\n  apsidal demo --system verrow --out verrow-demo   # a non-interacting pair for contrast\n  apsidal demo --steps 1500 --seed 3  # a longer posterior run"
    )]
    Demo(DemoArgs),
    /// Periodogram of one or more RV tables, with false-alarm levels and
    /// peeling of significant signals.
    #[command(
        after_help = "Example:\n  apsidal periodogram --out pg demo-data/tellan/korva.txt --instrument KORVA --shortest-period 2"
    )]
    Periodogram(PeriodogramArgs),
    /// Maximum-likelihood fits of the models a run file lists.
    #[command(after_help = "Example:\n  apsidal fit demo-data/tellan/run.ron --out fits")]
    Fit(RunArgs),
    /// Posterior sampling (resumable) of the last model of a run file,
    /// started from its maximum-likelihood fit.
    #[command(
        after_help = "Example:\n  apsidal sample demo-data/tellan/run.ron --out post --steps 2000\n  apsidal sample demo-data/tellan/run.ron --out post --steps 4000 --resume"
    )]
    Sample(SampleArgs),
    /// Orbital stability of the fitted solution of a run file (last model),
    /// or a survey of the posterior samples of a samples CSV (parallel,
    /// shardable with --shard k/n, resumable).
    #[command(
        after_help = "Examples:\n  apsidal stability run.ron --out stab --orbits 10000\n  apsidal stability run.ron --out stab --samples post/samples.csv --max-samples 500 --orbits 5000\n  apsidal stability run.ron --out stab --samples post/samples.csv --shard 0/4 --resume"
    )]
    Stability(StabilityArgs),
    /// A stability map over a grid of two elements of the fitted solution,
    /// written as map.csv and drawn as the heat map map.svg.
    #[command(
        after_help = "Example:\n  apsidal map run.ron --out map --x 2.period:80:90:21 --y 2.eccentricity:0:0.4:21 --indicator survival --orbits 2000\n  apsidal map run.ron --out map --x 2.period:80:90:15 --y 2.eccentricity:0:0.3:10 --indicator megno --orbits 500\n\nAxes are PLANET.ELEMENT:MIN:MAX:N, planets numbered from 1 (innermost); elements: period, semi_major_axis, eccentricity, mass_jupiter, inclination, omega_star. Indicators: survival, max-e, drift, megno (⟨Y⟩, colour range 1.5 to 8; disrupted cells carry a dot)."
    )]
    Map(MapArgs),
    /// Merge the tables of a sharded survey into the table the unsharded
    /// survey writes (survey.csv and survey-summary in --out).
    #[command(
        after_help = "Example:\n  apsidal merge --out stab stab/survey-shard-0-of-4.csv stab/survey-shard-1-of-4.csv stab/survey-shard-2-of-4.csv stab/survey-shard-3-of-4.csv"
    )]
    Merge(MergeArgs),
    /// RVs of the run file's star and planets at chosen epochs, from the
    /// N-body model (default) or the sum of Keplerians, optionally with
    /// Gaussian noise; written as a table (time rv err instrument).
    #[command(
        after_help = "The planets' elements are osculating at the run file's reference epoch (else the\n\
middle of the epochs); no instrument offset is added. With --noise the err column\n\
holds the noise sigma, else 1 m/s.\n\n\
Examples:\n  \
apsidal simulate demo-data/tellan/run.ron --start 2455000 --end 2459500 --step 0.5 --out sim\n  \
apsidal simulate demo-data/tellan/run.ron --epochs nights.txt --model keplerian --noise 2 --seed 7 --out sim\n\n\
writes sim/simulated.txt, e.g.\n  \
# simulated by apsidal (Dynamical model, reference epoch 2457250); rv, err in m/s\n  \
time rv err instrument\n  \
2455000.000000 29.4620 1.0000 SIM"
    )]
    Simulate(SimulateArgs),
}

/// Settings of one stability run shared by `stability` and `map`.
#[derive(Debug, Args)]
pub struct RunLengthArgs {
    /// Length in orbits of the outermost planet.
    #[arg(long, default_value_t = 10000.0)]
    pub orbits: f64,
    /// Wisdom–Holman step in days (default: the integrator's).
    #[arg(long)]
    pub step: Option<f64>,
    /// Close-encounter threshold in mutual Hill radii.
    #[arg(long, default_value_t = 1.0)]
    pub hill_radii: f64,
    /// Largest number of steps of one run.
    #[arg(long, default_value_t = 100_000_000)]
    pub max_steps: u64,
    /// Also compute MEGNO ⟨Y⟩ of each surviving run (about twice the cost).
    #[arg(long)]
    pub megno: bool,
}

/// Arguments of `stability`.
#[derive(Debug, Args)]
pub struct StabilityArgs {
    /// The RON run file (its last model defines the parameters).
    pub run: PathBuf,
    /// Survey these posterior samples instead of the fitted solution.
    #[arg(long)]
    pub samples: Option<PathBuf>,
    /// Survey at most this many samples (a seeded choice).
    #[arg(long)]
    pub max_samples: Option<usize>,
    /// Run shard k of n (0-based), e.g. 3/8; output survey-shard-k-of-n.csv.
    #[arg(long)]
    pub shard: Option<String>,
    /// Keep the rows already in the output table and run the rest.
    #[arg(long)]
    pub resume: bool,
    /// Confidence level of the interval on the stable fraction.
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
    /// Run settings.
    #[command(flatten)]
    pub length: RunLengthArgs,
}

/// Arguments of `map`.
#[derive(Debug, Args)]
pub struct MapArgs {
    /// The RON run file (its last model's fit is the base solution).
    pub run: PathBuf,
    /// Horizontal axis, PLANET.ELEMENT:MIN:MAX:N.
    #[arg(long)]
    pub x: String,
    /// Vertical axis, PLANET.ELEMENT:MIN:MAX:N.
    #[arg(long)]
    pub y: String,
    /// Indicator: survival (outer orbits survived), max-e (largest
    /// eccentricity), drift (largest |Δa|/a) or megno (MEGNO ⟨Y⟩; turns
    /// --megno on; disrupted cells have an empty value and the event as
    /// their verdict, and are drawn with a dot at the chaotic end).
    #[arg(long, default_value = "survival")]
    pub indicator: String,
    /// Run settings.
    #[command(flatten)]
    pub length: RunLengthArgs,
}

/// Arguments of `merge`.
#[derive(Debug, Args)]
pub struct MergeArgs {
    /// Shard tables to merge.
    #[arg(required = true)]
    pub tables: Vec<PathBuf>,
    /// Confidence level of the interval on the stable fraction.
    #[arg(long, default_value_t = 0.95)]
    pub confidence: f64,
}

/// Arguments of `periodogram`.
#[derive(Debug, Args)]
pub struct PeriodogramArgs {
    /// RV tables (time, RV, error[, instrument]).
    #[arg(required = true)]
    pub tables: Vec<PathBuf>,
    /// Instrument of every line of the tables (otherwise the 4th column).
    #[arg(long)]
    pub instrument: Option<String>,
    /// Shortest period searched (d).
    #[arg(long)]
    pub shortest_period: Option<f64>,
    /// Longest period searched (d; default the baseline).
    #[arg(long)]
    pub longest_period: Option<f64>,
    /// Frequency oversampling factor.
    #[arg(long, default_value_t = 10.0)]
    pub oversampling: f64,
    /// Largest number of signals peeled.
    #[arg(long, default_value_t = 5)]
    pub max_signals: usize,
    /// False-alarm probability above which peeling stops.
    #[arg(long, default_value_t = 1e-3)]
    pub fap: f64,
}

/// A run file.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// The RON run file.
    pub run: PathBuf,
}

/// Arguments of `sample`.
#[derive(Debug, Args)]
pub struct SampleArgs {
    /// The RON run file.
    pub run: PathBuf,
    /// Steps (overrides the run file's sampler section).
    #[arg(long)]
    pub steps: Option<usize>,
    /// Walkers (overrides the run file's sampler section).
    #[arg(long)]
    pub walkers: Option<usize>,
    /// Continue from the checkpoint in the output folder.
    #[arg(long)]
    pub resume: bool,
}

/// Arguments of `simulate`.
#[derive(Debug, Args)]
pub struct SimulateArgs {
    /// The RON run file (its star and planets are used; its data are not read).
    pub run: PathBuf,
    /// File of epochs (days), one a line; `#` comments.
    #[arg(long, conflicts_with_all = ["start", "end", "step"])]
    pub epochs: Option<PathBuf>,
    /// First epoch (days).
    #[arg(long, requires_all = ["end", "step"])]
    pub start: Option<f64>,
    /// Last epoch (days, inclusive).
    #[arg(long, requires_all = ["start", "step"])]
    pub end: Option<f64>,
    /// Spacing of the epochs (days).
    #[arg(long, requires_all = ["start", "end"])]
    pub step: Option<f64>,
    /// Which model: `dynamical` (N-body, Gauss–Radau at tolerance 1e-9) or
    /// `keplerian`.
    #[arg(long, value_enum, default_value_t = SimModelArg::Dynamical)]
    pub model: SimModelArg,
    /// Gaussian noise σ in m/s (seeded by --seed).
    #[arg(long)]
    pub noise: Option<f64>,
    /// Instrument label of the table.
    #[arg(long, default_value = "SIM")]
    pub instrument: String,
    /// Name of the table in the output folder.
    #[arg(long, default_value = "simulated.txt")]
    pub table: String,
}

/// The model of `simulate`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SimModelArg {
    /// N-body integration.
    Dynamical,
    /// Sum of Keplerians.
    Keplerian,
}

/// Arguments of `demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Which demo system: `tellan` (two giants near 2:1) or `verrow`
    /// (period ratio 7.3).
    #[arg(long, default_value = "tellan")]
    pub system: String,
    /// Steps of the posterior run.
    #[arg(long, default_value_t = 300)]
    pub steps: usize,
    /// Posterior samples in the stability survey.
    #[arg(long, default_value_t = 100)]
    pub survey: usize,
}

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

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

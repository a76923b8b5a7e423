//! Progress bars (indicatif) for long steps, silent in quiet mode and when
//! standard error is not a terminal.

use apsidal::fit::sample::{EnsembleSampler, Flow, Observer, SampleError};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// A progress bar of `total` units with a label, hidden when `quiet`.
pub fn bar(total: u64, label: &str, quiet: bool) -> ProgressBar {
    let pb = ProgressBar::with_draw_target(
        Some(total),
        if quiet {
            ProgressDrawTarget::hidden()
        } else {
            ProgressDrawTarget::stderr()
        },
    );
    let style =
        ProgressStyle::with_template("{msg:>12} [{bar:30}] {pos}/{len} ({per_sec}, eta {eta})")
            .unwrap_or_else(|_| ProgressStyle::default_bar())
            .progress_chars("=> ");
    pb.set_style(style);
    pb.set_message(label.to_string());
    pb
}

/// A sampler observer that advances a progress bar by one per step.
pub struct SamplerProgress(pub ProgressBar);

impl Observer for SamplerProgress {
    fn observe(&mut self, sampler: &EnsembleSampler) -> Result<Flow, SampleError> {
        self.0.set_position(sampler.steps_done());
        Ok(Flow::Continue)
    }
}

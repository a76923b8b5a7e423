//! Small numerical helpers shared by the analyses: angle wrapping, phase
//! unwrapping and the straight-line least-squares fit.
//!
//! Written by hand: each is a few lines, and pulling a statistics crate for
//! an ordinary least-squares line would add a dependency for no gain.

use std::f64::consts::{PI, TAU};

/// Wrap an angle to [0, 2π). `rem_euclid` can return exactly 2π for tiny
/// negative inputs through rounding; that case is mapped to 0.
pub(crate) fn wrap_two_pi(x: f64) -> f64 {
    let r = x.rem_euclid(TAU);
    if r >= TAU { 0.0 } else { r }
}

/// Wrap an angle to [−π, π).
pub(crate) fn wrap_pi(x: f64) -> f64 {
    wrap_two_pi(x + PI) - PI
}

/// Unwrap a phase series: each step is taken as the representative in
/// [−π, π) of the wrapped difference (the usual phase unwrapping, common
/// practice). The first sample is kept as given. Returns the unwrapped series
/// and the largest |step| met, so that callers can flag under-sampling.
pub(crate) fn unwrap(phase: &[f64]) -> (Vec<f64>, f64) {
    let mut out = Vec::with_capacity(phase.len());
    let mut max_step = 0.0_f64;
    if let Some(&first) = phase.first() {
        out.push(first);
        for w in phase.windows(2) {
            let step = wrap_pi(w[1] - w[0]);
            max_step = max_step.max(step.abs());
            let last = out[out.len() - 1];
            out.push(last + step);
        }
    }
    (out, max_step)
}

/// Ordinary least-squares straight line y = a + b (t − t̄).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct LineFit {
    /// Slope b (units of y per unit of t).
    pub slope: f64,
    /// Standard error of the slope from the residual scatter,
    /// s_b = sqrt(Σr² / (n − 2) / Σ(t − t̄)²) (e.g. Press et al. 2007,
    /// *Numerical Recipes*, 3rd ed., §15.2). Assumes independent residuals.
    pub slope_std_err: f64,
}

/// Fit a straight line to (t, y) by ordinary least squares, with t centred on
/// its mean for numerical stability. Needs at least 3 points with distinct t
/// (guaranteed by the callers' validation); returns `None` otherwise.
pub(crate) fn fit_line(t: &[f64], y: &[f64]) -> Option<LineFit> {
    let n = t.len();
    if n < 3 || y.len() != n {
        return None;
    }
    let nf = n as f64;
    let tm = t.iter().sum::<f64>() / nf;
    let ym = y.iter().sum::<f64>() / nf;
    let (mut stt, mut sty) = (0.0, 0.0);
    for (ti, yi) in t.iter().zip(y) {
        let dt = ti - tm;
        stt += dt * dt;
        sty += dt * (yi - ym);
    }
    if !(stt > 0.0) {
        return None;
    }
    let slope = sty / stt;
    let ss: f64 = t
        .iter()
        .zip(y)
        .map(|(ti, yi)| {
            let r = yi - ym - slope * (ti - tm);
            r * r
        })
        .sum();
    let slope_std_err = (ss / (nf - 2.0) / stt).sqrt();
    (slope.is_finite() && slope_std_err.is_finite()).then_some(LineFit {
        slope,
        slope_std_err,
    })
}

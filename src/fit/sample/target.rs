//! The sampler's target: a log-probability in the unconstrained space.

/// A log-probability density (up to an additive constant) over a parameter
/// vector in the unconstrained space the fit module samples in.
///
/// `ln_prob` returns natural-log probability; `f64::NEG_INFINITY` marks an
/// impossible point. The sampler treats any non-finite value (NaN, ±∞) as
/// an impossible point and rejects it, so a target never has to panic.
/// The trait requires `Sync` because the proposals of one half of the
/// ensemble are evaluated in parallel (rayon) on shared `&self`.
/// A call must not depend on anything but `theta` (no hidden state that
/// changes between calls), otherwise runs are not reproducible.
pub trait LogTarget: Sync {
    /// Natural log of the (unnormalised) probability density at `theta`.
    fn ln_prob(&self, theta: &[f64]) -> f64;
}

impl<T: LogTarget + ?Sized> LogTarget for &T {
    fn ln_prob(&self, theta: &[f64]) -> f64 {
        (**self).ln_prob(theta)
    }
}

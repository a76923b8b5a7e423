//! The one trait every integrator implements.

use super::events::{Event, NbodyError};
use super::system::Snapshot;

/// An N-body integrator holding its own copy of the system.
///
/// Time runs either way: `advance_to` with a time before [`Integrator::time`]
/// integrates backwards. The main sequence of steps is never shortened to
/// land on a requested time: an output between step boundaries comes from
/// a partial step on a copy (Wisdom–Holman) or from the step polynomial
/// (Gauss–Radau dense output), so the same run gives the same trajectory
/// whatever epochs are asked for.
pub trait Integrator {
    /// Time (days) of the current step boundary.
    fn time(&self) -> f64;

    /// The barycentric state at the current step boundary.
    fn snapshot(&self) -> Snapshot;

    /// Advance the step sequence towards `t` (days, either direction) and
    /// write the barycentric state at exactly `t` into `out` (whose vectors
    /// must have one entry per body). After the call [`Integrator::time`]
    /// is the last step boundary reached, at or before `t` in the direction
    /// of travel (Gauss–Radau may stand just past `t`, with `t` inside its
    /// last step).
    fn advance_to(&mut self, t: f64, out: &mut Snapshot) -> Result<(), NbodyError>;

    /// Events recorded so far (when they do not stop the run).
    fn events(&self) -> &[Event];
}

//! Two-body (Keplerian) mechanics: Kepler's equation, anomalies, elements ↔
//! state, Kepler's third law and the spectroscopic mass function.

mod anomaly;
mod elements;
mod equation;
mod masses;
pub(crate) mod trig;

pub use anomaly::*;
pub use elements::*;
pub use equation::*;
pub use masses::*;

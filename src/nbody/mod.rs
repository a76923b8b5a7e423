//! N-body engine: the planetary system, forces, integrators and events.
//!
//! All states here are barycentric and inertial, in au and au/day, with
//! body 0 the star (DESIGN §3 frame: +Z away from the observer). This layer
//! knows nothing of RV data; [`crate::model`] turns its states into RVs.

mod elliptic;
pub mod events;
pub mod forces;
pub mod gauss_radau;
pub mod integrator;
pub mod jacobi;
pub mod system;
pub mod universal;
pub mod variational;
pub mod wisdom_holman;

pub use events::{Event, EventSettings, NbodyError};
pub use integrator::Integrator;
pub use system::{Snapshot, System};

//! Events of an integration as typed data, and the settings that detect them.

/// Something that happened during an integration. Events are data: the
/// caller decides through [`EventSettings::stop_on_event`] whether an
/// event ends the run ([`NbodyError::Stopped`]) or is only recorded.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Event {
    /// Two planets `i` and `j` (body indices, star = 0) came closer than
    /// the chosen number of mutual Hill radii at time `t` (days).
    CloseEncounter {
        /// Time in days.
        t: f64,
        /// First body index.
        i: usize,
        /// Second body index.
        j: usize,
        /// Separation in mutual Hill radii.
        hill_separation: f64,
    },
    /// Body `body` came within the sum of its radius and the star's.
    StarCollision {
        /// Time in days.
        t: f64,
        /// Body index.
        body: usize,
        /// Distance from the star in au.
        distance: f64,
    },
    /// Body `body` became unbound (its Jacobi orbit has positive energy)
    /// or went beyond the distance limit.
    Ejection {
        /// Time in days.
        t: f64,
        /// Body index.
        body: usize,
        /// Distance from the barycentre in au.
        distance: f64,
    },
    /// The adaptive step fell below the smallest allowed step.
    StepUnderflow {
        /// Time in days.
        t: f64,
        /// The step that was needed, in days.
        dt: f64,
    },
}

impl Event {
    /// Time (days) at which the event was detected.
    pub fn time(&self) -> f64 {
        match *self {
            Event::CloseEncounter { t, .. }
            | Event::StarCollision { t, .. }
            | Event::Ejection { t, .. }
            | Event::StepUnderflow { t, .. } => t,
        }
    }
}

/// Which events are looked for, and whether they end the run.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct EventSettings {
    /// Report a close encounter below this many mutual Hill radii
    /// (`None`: not checked).
    pub hill_radii: Option<f64>,
    /// Check collisions with the star using the bodies' radii.
    pub star_collisions: bool,
    /// Report an ejection beyond this barycentric distance in au, or when
    /// a planet's Jacobi orbit is unbound (`None`: not checked).
    pub max_distance: Option<f64>,
    /// Smallest adaptive step in days before a step-underflow event.
    pub min_step: f64,
    /// Stop the integration at the first event (otherwise record and go on).
    pub stop_on_event: bool,
}

impl Default for EventSettings {
    fn default() -> Self {
        EventSettings {
            hill_radii: Some(1.0),
            star_collisions: true,
            max_distance: Some(1000.0),
            min_step: 1e-8,
            stop_on_event: true,
        }
    }
}

/// Errors of the N-body layer.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum NbodyError {
    /// The integration was stopped by an event.
    #[error("integration stopped: {0:?}")]
    Stopped(Event),
    /// The system was described by impossible values.
    #[error("invalid system: {0}")]
    InvalidSystem(String),
    /// The state stopped being finite (never returned as NaN to callers).
    #[error("state became non-finite at t = {t} d")]
    NonFinite {
        /// Time in days.
        t: f64,
    },
    /// A requested time or step was not finite or not allowed.
    #[error("invalid request: {0}")]
    InvalidRequest(String),
    /// A Kepler drift of body `body` failed at time `t` (days).
    #[error("Kepler drift of body {body} failed at t = {t} d: {source}")]
    Drift {
        /// Time in days.
        t: f64,
        /// Body index (star = 0).
        body: usize,
        /// What the universal-variable solver reported.
        source: super::universal::DriftError,
    },
    /// Osculating elements could not be formed from a state.
    #[error("osculating elements: {0}")]
    Elements(#[from] crate::kepler::ElementsError),
}

//! A stability run of one solution: integrate the system with the
//! Wisdom–Holman map (Wisdom & Holman 1991) for a chosen number of orbits of
//! the outermost planet, stop at the first close encounter, collision with
//! the star or ejection ([`crate::nbody::events`]), and record the largest
//! eccentricity and the semi-major-axis drift of every planet together with
//! the analytic criteria of [`super::criteria`] at the start.
//!
//! # What is measured
//!
//! * **Length.** `orbits` × P_N, with P_N = 2π √(a_N³/μ_N) the osculating
//!   Jacobi period of the outermost planet at the start (μ_N = G M_N, the
//!   total mass). The run takes ⌈length / h⌉ whole steps of the fixed WH step
//!   h; [`RunSettings::max_steps`] bounds the work of one call (longer
//!   requests are refused, never cut short silently).
//! * **Events.** Close encounters below [`RunSettings::hill_radii`] mutual
//!   Hill radii (Chambers, Wetherill & Boss 1996, eq. 2, with the current
//!   astrocentric distances), collisions with the star (sum of radii; the
//!   star's radius comes from the system, 0 disables them), and ejections
//!   (barycentric distance beyond [`RunSettings::max_distance_factor`] × the
//!   outermost initial semi-major axis, or a positive Jacobi two-body
//!   energy). The first event stops the run; its time and kind are kept.
//! * **Largest eccentricity and drift.** Every [`RunSettings::sample_every`]
//!   steps the barycentric state at the step boundary is converted to
//!   Jacobi coordinates and osculating Jacobi elements (μ_k = G M_k, DESIGN
//!   §3); max e_k and max |a_k − a_k(0)| / a_k(0) over those samples (and the
//!   start) are recorded. These are sampled extremes, so they are lower
//!   bounds of the true extremes; a sample every few steps resolves the
//!   secular and resonant variations, not the short-period ones within one
//!   step.
//! * **Criteria at t0** from the same osculating Jacobi elements, with the
//!   inclinations and nodes in the sky frame (the criteria accept any
//!   reference plane): Hill stability of each adjacent pair (Gladman 1993),
//!   spacing in mutual Hill radii and AMD stability (Laskar & Petit 2017).
//!   Absent for a single planet.
//! * **Chaos indicator.** With [`RunSettings::megno`], MEGNO ⟨Y⟩
//!   (Cincotta & Simó 2000) of the same length and step from the
//!   variational equations ([`crate::stability::megno::megno_run`]),
//!   computed for runs that survive; [`StabilityReport::megno`] holds it.
//!
//! # Verdict
//!
//! [`Verdict::Stable`] when the run reached its full length without an
//! event; otherwise [`Verdict::Unstable`] with the kind of event. An
//! integration that fails numerically (non-finite state, a failed Kepler
//! drift, an osculating orbit that cannot be formed) is unstable with
//! [`EventKind::IntegrationFailure`]: in practice this happens only after
//! an encounter too close for the fixed step.
//!
//! No heap allocation happens inside the step loop: every buffer is made
//! before it.

use nalgebra::Vector3;
use serde::{Deserialize, Serialize};

use super::criteria::{CriteriaReport, PlanetOrbit, PlanetarySystem, assess};
use crate::fit::models::{ModelError, ModelKind, RvModel};
use crate::kepler::{planet_mass, state_to_elements};
use crate::model::dynamical::IntegratorChoice;
use crate::nbody::jacobi::{inertial_to_jacobi, interior_masses};
use crate::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use crate::nbody::wisdom_holman::{Corrector, WhSettings, WisdomHolman};
use crate::nbody::{Event, EventSettings, Integrator, NbodyError, Snapshot, System};
use crate::units::G;

/// Errors of a stability run (the run itself never fails on an unstable
/// system: that is a verdict, not an error).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StabilityError {
    /// A setting is out of range.
    #[error("stability settings: {0}")]
    BadSettings(String),
    /// The system cannot be integrated (no planet, bad state, unbound start).
    #[error("stability run: {0}")]
    BadSystem(String),
    /// The requested run needs more steps than allowed for one call.
    #[error(
        "stability run of {orbits} orbits needs {needed} steps of {step} d, more than the limit of {limit}; raise max_steps or shorten the run"
    )]
    TooManySteps {
        /// Requested length in orbits of the outermost planet.
        orbits: f64,
        /// Step in days.
        step: f64,
        /// Steps needed.
        needed: u64,
        /// The limit.
        limit: u64,
    },
    /// MEGNO was asked for and could not be computed.
    #[error("MEGNO: {0}")]
    Megno(String),
    /// The solution's parameters could not be turned into a system.
    #[error(transparent)]
    Model(#[from] ModelError),
    /// The N-body layer refused the system.
    #[error(transparent)]
    Nbody(#[from] NbodyError),
}

/// Settings of a stability run.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunSettings {
    /// Length in orbits of the outermost planet (osculating Jacobi period at
    /// the start), > 0.
    pub orbits: f64,
    /// Wisdom–Holman step in days; `None`: the integrator's default (a
    /// twentieth of the shortest orbit, shortened for eccentric orbits; see
    /// [`crate::nbody::wisdom_holman`]).
    pub step: Option<f64>,
    /// Close-encounter threshold in mutual Hill radii (> 0).
    pub hill_radii: f64,
    /// Ejection distance as a multiple of the outermost initial Jacobi
    /// semi-major axis (> 1).
    pub max_distance_factor: f64,
    /// Measure the osculating elements every this many steps (≥ 1).
    pub sample_every: u32,
    /// Largest number of steps one call may take (bounded work).
    pub max_steps: u64,
    /// Also compute MEGNO ⟨Y⟩ over the same length with the same step
    /// (about twice the cost of the run).
    pub megno: bool,
}

impl Default for RunSettings {
    /// 10⁴ orbits, default step, 1 mutual Hill radius, ejection at 100 a_N,
    /// elements every 4 steps, at most 10⁸ steps, no MEGNO.
    fn default() -> Self {
        RunSettings {
            orbits: 1e4,
            step: None,
            hill_radii: 1.0,
            max_distance_factor: 100.0,
            sample_every: 4,
            max_steps: 100_000_000,
            megno: false,
        }
    }
}

impl RunSettings {
    fn check(&self) -> Result<(), StabilityError> {
        let bad = |s: String| Err(StabilityError::BadSettings(s));
        if !(self.orbits > 0.0 && self.orbits.is_finite()) {
            return bad(format!("orbits must be positive, got {}", self.orbits));
        }
        if let Some(h) = self.step {
            if !(h > 0.0 && h.is_finite()) {
                return bad(format!("step must be positive, got {h}"));
            }
        }
        if !(self.hill_radii > 0.0 && self.hill_radii.is_finite()) {
            return bad(format!(
                "hill_radii must be positive, got {}",
                self.hill_radii
            ));
        }
        if !(self.max_distance_factor > 1.0 && self.max_distance_factor.is_finite()) {
            return bad(format!(
                "max_distance_factor must exceed 1, got {}",
                self.max_distance_factor
            ));
        }
        if self.sample_every == 0 {
            return bad("sample_every must be at least 1".into());
        }
        Ok(())
    }
}

/// What ended a run early.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum EventKind {
    /// Two planets closer than the threshold in mutual Hill radii.
    CloseEncounter,
    /// A planet within the sum of its and the star's radius.
    StarCollision,
    /// A planet unbound or beyond the distance limit.
    Ejection,
    /// The integration failed numerically (see the module docs).
    IntegrationFailure,
}

impl EventKind {
    /// Short label used in tables: `close-encounter`, `star-collision`,
    /// `ejection`, `integration-failure`.
    pub fn label(self) -> &'static str {
        match self {
            EventKind::CloseEncounter => "close-encounter",
            EventKind::StarCollision => "star-collision",
            EventKind::Ejection => "ejection",
            EventKind::IntegrationFailure => "integration-failure",
        }
    }
}

/// The event that ended a run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StabilityEvent {
    /// Kind of event.
    pub kind: EventKind,
    /// Time since the start of the run in days.
    pub time: f64,
    /// The same in orbits of the outermost planet.
    pub orbits: f64,
    /// Planets involved (1-based body indices, star = 0): two for an
    /// encounter, one otherwise, none for a failure without a body.
    pub bodies: Vec<usize>,
    /// Separation in mutual Hill radii (encounter) or distance in au
    /// (collision, ejection); 0 for a failure.
    pub value: f64,
    /// The integrator's own message for a failure.
    pub detail: Option<String>,
}

/// Verdict of a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Verdict {
    /// Full length reached without an event.
    Stable,
    /// Stopped early by this kind of event.
    Unstable(EventKind),
}

impl Verdict {
    /// True for [`Verdict::Stable`].
    pub fn is_stable(self) -> bool {
        matches!(self, Verdict::Stable)
    }

    /// `stable`, or the event label of [`EventKind::label`].
    pub fn label(self) -> &'static str {
        match self {
            Verdict::Stable => "stable",
            Verdict::Unstable(k) => k.label(),
        }
    }
}

/// Result of a stability run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StabilityReport {
    /// The verdict.
    pub verdict: Verdict,
    /// The event that stopped the run, if any.
    pub event: Option<StabilityEvent>,
    /// Requested length in days.
    pub length_days: f64,
    /// Osculating Jacobi period of the outermost planet at the start, days.
    pub outer_period: f64,
    /// Step in days.
    pub step: f64,
    /// Steps taken.
    pub steps: u64,
    /// Time survived in days (the full length when stable).
    pub survival_time: f64,
    /// The same in orbits of the outermost planet.
    pub survival_orbits: f64,
    /// Largest sampled Jacobi eccentricity of each planet (innermost first).
    pub max_eccentricity: Vec<f64>,
    /// Largest sampled |a − a(0)| / a(0) of each planet (Jacobi osculating).
    pub max_axis_drift: Vec<f64>,
    /// Initial Jacobi semi-major axes in au.
    pub initial_axes: Vec<f64>,
    /// Relative energy error |E − E(0)| / |E(0)| at the last sample
    /// (Newtonian energy; a check of the step, not of stability).
    pub energy_error: f64,
    /// Analytic criteria at the start (two or more planets).
    pub criteria: Option<CriteriaReport>,
    /// Why the criteria could not be evaluated, when they were not.
    pub criteria_error: Option<String>,
    /// MEGNO ⟨Y⟩ at the end of the run (`None` unless asked for with
    /// [`RunSettings::megno`], or when the run stopped on an event).
    pub megno: Option<f64>,
}

impl StabilityReport {
    /// Smallest spacing of adjacent pairs in mutual Hill radii at t0.
    pub fn min_hill_spacing(&self) -> Option<f64> {
        self.criteria.as_ref().and_then(|c| {
            c.hill
                .iter()
                .map(|h| h.spacing_mutual_hill)
                .min_by(f64::total_cmp)
        })
    }

    /// Every adjacent pair Hill stable (Gladman 1993 eq. 21) at t0.
    pub fn hill_stable(&self) -> Option<bool> {
        self.criteria
            .as_ref()
            .map(|c| c.hill.iter().all(|h| h.hill_stable))
    }

    /// AMD stable (Laskar & Petit 2017) at t0.
    pub fn amd_stable(&self) -> Option<bool> {
        self.criteria.as_ref().map(|c| c.amd.amd_stable)
    }
}

/// Buffers of one run, made before the loop.
struct Buffers {
    interior: Vec<f64>,
    jr: Vec<Vector3<f64>>,
    jv: Vec<Vector3<f64>>,
    snap: Snapshot,
}

impl Buffers {
    fn new(system: &System) -> Self {
        let n = system.len();
        let mut interior = vec![0.0; n];
        interior_masses(&system.masses, &mut interior);
        Buffers {
            interior,
            jr: vec![Vector3::zeros(); n],
            jv: vec![Vector3::zeros(); n],
            snap: Snapshot::zeros(n, system.state.t),
        }
    }

    /// Jacobi (a, e) of every planet of `snap`, written through `f`.
    fn elements(
        &mut self,
        masses: &[f64],
        mut f: impl FnMut(usize, f64, f64),
    ) -> Result<(), NbodyError> {
        inertial_to_jacobi(masses, &self.interior, &self.snap.pos, &mut self.jr);
        inertial_to_jacobi(masses, &self.interior, &self.snap.vel, &mut self.jv);
        for k in 1..masses.len() {
            let el = state_to_elements(&self.jr[k], &self.jv[k], G * self.interior[k])?;
            f(k - 1, el.a, el.e);
        }
        Ok(())
    }
}

fn event_of(ev: Event, t0: f64, p_out: f64) -> StabilityEvent {
    let (kind, t, bodies, value) = match ev {
        Event::CloseEncounter {
            t,
            i,
            j,
            hill_separation,
        } => (EventKind::CloseEncounter, t, vec![i, j], hill_separation),
        Event::StarCollision { t, body, distance } => {
            (EventKind::StarCollision, t, vec![body], distance)
        }
        Event::Ejection { t, body, distance } => (EventKind::Ejection, t, vec![body], distance),
        Event::StepUnderflow { t, dt } => (EventKind::IntegrationFailure, t, vec![], dt),
    };
    let time = t - t0;
    StabilityEvent {
        kind,
        time,
        orbits: time / p_out,
        bodies,
        value,
        detail: None,
    }
}

/// Integrate `system` from its state and time for the length, step and
/// events of `settings` and judge its stability (see the module docs).
///
/// # Errors
/// Bad settings, a system without planets or with an unbound planet at the
/// start, more steps than [`RunSettings::max_steps`], or MEGNO requested.
pub fn run_stability(
    system: &System,
    settings: &RunSettings,
) -> Result<StabilityReport, StabilityError> {
    run_stability_observed(system, settings, &|_| {})
}

/// [`run_stability`] reporting its progress: `progress` is called with the
/// fraction done in \[0, 1\], non-decreasing, about a thousand times over
/// the run and with 1 at the end. With [`RunSettings::megno`] the
/// integration of the orbit counts for the first third and the MEGNO run
/// (about twice its cost, without a progress hook of its own) for the
/// rest, so the fraction jumps from 1/3 to 1 when MEGNO is done. The
/// callback only watches: the result is the same bit for bit.
///
/// # Errors
/// As [`run_stability`].
pub fn run_stability_observed(
    system: &System,
    settings: &RunSettings,
    progress: &dyn Fn(f64),
) -> Result<StabilityReport, StabilityError> {
    settings.check()?;
    let n = system.len();
    if n < 2 {
        return Err(StabilityError::BadSystem("the system has no planet".into()));
    }
    let np = n - 1;
    let mut buf = Buffers::new(system);
    buf.snap.pos.copy_from_slice(&system.state.pos);
    buf.snap.vel.copy_from_slice(&system.state.vel);
    let mut a0 = vec![0.0; np];
    let mut e0 = vec![0.0; np];
    buf.elements(&system.masses, |k, a, e| {
        a0[k] = a;
        e0[k] = e;
    })
    .map_err(|e| StabilityError::BadSystem(format!("initial osculating elements: {e}")))?;
    if a0.iter().any(|a| !(*a > 0.0 && a.is_finite())) {
        return Err(StabilityError::BadSystem(
            "a planet is unbound at the start".into(),
        ));
    }
    let a_out = a0[np - 1];
    let p_out = std::f64::consts::TAU * (a_out.powi(3) / (G * buf.interior[n - 1])).sqrt();
    let length = settings.orbits * p_out;

    // Criteria at t0 from the osculating Jacobi elements.
    let (criteria, criteria_error) = if np >= 2 {
        let mut planets = Vec::with_capacity(np);
        for k in 1..n {
            let el = state_to_elements(&buf.jr[k], &buf.jv[k], G * buf.interior[k])
                .map_err(|e| StabilityError::BadSystem(format!("initial elements: {e}")))?;
            planets.push(PlanetOrbit {
                mass: system.masses[k],
                a: el.a,
                e: el.e,
                inc: el.inc,
                node: el.node,
            });
        }
        match assess(&PlanetarySystem {
            star_mass: system.masses[0],
            planets,
        }) {
            Ok(c) => (Some(c), None),
            Err(e) => (None, Some(e.to_string())),
        }
    } else {
        (None, None)
    };

    let events = EventSettings {
        hill_radii: Some(settings.hill_radii),
        star_collisions: true,
        max_distance: Some(settings.max_distance_factor * a_out),
        min_step: 0.0,
        stop_on_event: true,
    };
    let mut wh = WisdomHolman::new(
        system,
        WhSettings {
            step: settings.step,
            corrector: Corrector::Off,
            events,
            ..WhSettings::default()
        },
    )?;
    let h = wh.step();
    let needed = (length / h).ceil().max(1.0);
    if needed > settings.max_steps as f64 {
        return Err(StabilityError::TooManySteps {
            orbits: settings.orbits,
            step: h,
            needed: if needed.is_finite() {
                needed as u64
            } else {
                u64::MAX
            },
            limit: settings.max_steps,
        });
    }
    let total = needed as u64;
    let t0 = system.state.t;
    let e_start = system.energy_of(&system.state);
    let mut max_e = e0.clone();
    let mut max_da = vec![0.0; np];
    let mut energy_error = 0.0;
    let mut event = None;
    let mut done = 0u64;
    let every = u64::from(settings.sample_every);
    let weight = if settings.megno { 1.0 / 3.0 } else { 1.0 };
    let report_every = (total / 1000).max(1);
    let mut next_report = report_every;
    progress(0.0);
    while done < total {
        let k = (done + every).min(total);
        // The same expression as the integrator's boundary grid, so the
        // output lands exactly on a boundary (no partial step).
        let t = t0 + k as f64 * h;
        match wh.advance_to(t, &mut buf.snap) {
            Ok(()) => {}
            Err(NbodyError::Stopped(ev)) => {
                event = Some(event_of(ev, t0, p_out));
                break;
            }
            Err(e) => {
                let time = wh.time() - t0;
                event = Some(StabilityEvent {
                    kind: EventKind::IntegrationFailure,
                    time,
                    orbits: time / p_out,
                    bodies: vec![],
                    value: 0.0,
                    detail: Some(e.to_string()),
                });
                break;
            }
        }
        done = k;
        if done >= next_report {
            progress(weight * done as f64 / total as f64);
            next_report = done + report_every;
        }
        let res = buf.elements(&system.masses, |j, a, e| {
            if e > max_e[j] {
                max_e[j] = e;
            }
            let d = ((a - a0[j]) / a0[j]).abs();
            if d > max_da[j] {
                max_da[j] = d;
            }
        });
        if let Err(e) = res {
            // An osculating orbit that cannot be formed is an unbound one.
            let time = t - t0;
            event = Some(StabilityEvent {
                kind: EventKind::Ejection,
                time,
                orbits: time / p_out,
                bodies: vec![],
                value: 0.0,
                detail: Some(e.to_string()),
            });
            break;
        }
        energy_error = ((system.energy_of(&buf.snap) - e_start) / e_start).abs();
    }
    let steps = {
        let s = ((wh.time() - t0) / h).round();
        if s > 0.0 { s as u64 } else { 0 }
    };
    let (verdict, survival_time) = match &event {
        None => (Verdict::Stable, total as f64 * h),
        Some(ev) => (Verdict::Unstable(ev.kind), ev.time.max(0.0)),
    };
    let megno = if settings.megno && event.is_none() {
        use crate::nbody::variational::VariationalIntegrator;
        use crate::nbody::wisdom_holman::WhSettings;
        use crate::stability::megno::{MegnoSettings, megno_run};
        // The same step and events as the orbit run above, so the MEGNO
        // integration follows the trajectory that survived; should it still
        // stop on an event (it integrates the variational equations too,
        // with its own output times), ⟨Y⟩ of the shortened run is not kept.
        let integ = VariationalIntegrator::WisdomHolman(WhSettings {
            step: Some(h),
            corrector: Corrector::Off,
            events,
            ..WhSettings::default()
        });
        let m = megno_run(system, integ, settings.orbits, &MegnoSettings::default())
            .map_err(|e| StabilityError::Megno(e.to_string()))?;
        (m.classification != crate::stability::megno::Classification::Disrupted).then_some(m.mean_y)
    } else {
        None
    };
    progress(1.0);
    Ok(StabilityReport {
        verdict,
        event,
        length_days: length,
        outer_period: p_out,
        step: h,
        steps,
        survival_time,
        survival_orbits: survival_time / p_out,
        max_eccentricity: max_e,
        max_axis_drift: max_da,
        initial_axes: a0,
        energy_error,
        criteria,
        criteria_error,
        megno,
    })
}

/// Star mass (M☉), star radius (au), planets as osculating Jacobi elements
/// at t_ref and t_ref itself, from an [`RvModel`] and a full parameter
/// vector — the same construction as
/// [`crate::model::dynamical::DynamicalModel::build_system`]: masses from K
/// through the mass function with the Jacobi interior mass, innermost first
/// (Keplerian models are read as coplanar edge-on, i.e. minimum masses).
///
/// # Errors
/// A parameter vector the model cannot decode (e ≥ 1, bad K or P).
pub fn solution_planets(
    model: &RvModel,
    full: &[f64],
) -> Result<(f64, f64, Vec<JacobiPlanet>, f64), StabilityError> {
    if full.len() != model.params.len() {
        return Err(StabilityError::BadSystem(format!(
            "parameter vector has {} values, the model {}",
            full.len(),
            model.params.len()
        )));
    }
    let mut decoded = model.decode_planets(full)?;
    decoded.sort_by(|a, b| a.period.total_cmp(&b.period));
    let mut interior = model.star_mass;
    let mut planets = Vec::with_capacity(decoded.len());
    for (rank, p) in decoded.iter().enumerate() {
        if !(p.inclination > 0.0 && p.inclination < std::f64::consts::PI) {
            return Err(StabilityError::BadSystem(format!(
                "planet {}: inclination {} rad outside (0, π)",
                p.name, p.inclination
            )));
        }
        let m = planet_mass(
            p.semi_amplitude,
            p.period,
            p.eccentricity,
            p.inclination.sin(),
            interior,
        )
        .ok_or_else(|| {
            StabilityError::BadSystem(format!(
                "planet {}: no mass from K = {} m/s, P = {} d",
                p.name, p.semi_amplitude, p.period
            ))
        })?;
        planets.push(JacobiPlanet {
            mass: m,
            radius: 0.0,
            size: OrbitSize::Period(p.period),
            e: p.eccentricity,
            omega_star: p.omega_star,
            phase: OrbitPhase::MeanAnomaly(p.mean_anomaly),
            inc: p.inclination,
            node: if rank == 0 { 0.0 } else { p.node },
        });
        interior += m;
    }
    Ok((
        model.star_mass,
        model.dynamics.star_radius,
        planets,
        model.t_ref,
    ))
}

/// The N-body system at t_ref of a solution: [`solution_planets`] built
/// with [`System::from_jacobi_elements`] (post-Newtonian term as the
/// model's dynamics say).
///
/// # Errors
/// As [`solution_planets`], or a system the N-body layer refuses.
pub fn solution_system(model: &RvModel, full: &[f64]) -> Result<System, StabilityError> {
    let (m, r, planets, t_ref) = solution_planets(model, full)?;
    let mut sys = System::from_jacobi_elements(m, r, &planets, t_ref)?;
    sys.post_newtonian = model.kind != ModelKind::Keplerian && model.dynamics.post_newtonian;
    Ok(sys)
}

/// Run settings with the step of the model's Wisdom–Holman integrator when
/// it has a fixed one (the step it was fitted with) and `base` otherwise.
pub fn settings_for_model(model: &RvModel, base: RunSettings) -> RunSettings {
    match model.dynamics.integrator {
        IntegratorChoice::WisdomHolman { step: Some(h), .. } if base.step.is_none() => {
            RunSettings {
                step: Some(h),
                ..base
            }
        }
        _ => base,
    }
}

/// [`run_stability`] of the solution `full` of `model`.
///
/// # Errors
/// As [`solution_system`] and [`run_stability`].
pub fn run_solution(
    model: &RvModel,
    full: &[f64],
    settings: &RunSettings,
) -> Result<StabilityReport, StabilityError> {
    let sys = solution_system(model, full)?;
    run_stability(&sys, settings)
}

//! The dynamical (N-body) RV model: parameters → the star's barycentric
//! radial velocity at every epoch.
//!
//! Parameters per planet are those of the trade (DESIGN §3): P, K, e, ω⋆,
//! mean anomaly at the reference epoch, inclination i and node difference
//! ΔΩ, read as osculating Jacobi elements at t_ref. Masses follow from K
//! through the mass function with the Jacobi interior mass, solved exactly
//! ([`crate::kepler::planet_mass`]), from the innermost planet outwards
//! (each planet's interior mass includes the planets inside it). The
//! system is integrated once forward and once backward from t_ref over the
//! epochs in time order (the input order is free), and the model RV is
//!
//! v(t) = v_z,⋆(t) + γ_inst + c₁ (t − t_ref) + c₂ (t − t_ref)²,
//!
//! with v_z,⋆ the star's barycentric velocity along +Z (away from the
//! observer) in m/s, γ one offset per instrument and an optional trend.
//! At t_ref this equals the sum of Keplerians with the same elements, to
//! rounding (the Jacobi construction of [`crate::nbody::System`]).
//!
//! Repeated evaluations reuse a [`DynamicalWorkspace`]: after the first call
//! with a given number of planets and epochs no heap allocation is made.

use nalgebra::Vector3;

use crate::kepler::planet_mass;
use crate::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
use crate::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use crate::nbody::wisdom_holman::{Corrector, WhSettings, WisdomHolman};
use crate::nbody::{EventSettings, Integrator, NbodyError, Snapshot, System};
use crate::units::au_per_day_to_m_s;

/// One planet's parameters: osculating Jacobi elements at t_ref and the RV
/// semi-amplitude. Angles in radians.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct DynamicalPlanet {
    /// Jacobi period P in days (> 0).
    pub period: f64,
    /// RV semi-amplitude K in m/s (≥ 0).
    pub k: f64,
    /// Eccentricity, 0 ≤ e < 1.
    pub e: f64,
    /// Argument of periastron of the star's reflex orbit ω⋆.
    pub omega_star: f64,
    /// Mean anomaly at t_ref.
    pub mean_anomaly: f64,
    /// Inclination to the sky plane, 0 < i < π (π/2: edge-on).
    pub inc: f64,
    /// Node difference ΔΩ = Ω − Ω_1 to the innermost planet (ignored for
    /// the innermost planet itself, whose Ω is 0).
    pub delta_node: f64,
}

/// A polynomial trend about t_ref: c₁ (t − t_ref) + c₂ (t − t_ref)².
#[derive(Debug, Clone, Copy, Default, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Trend {
    /// Linear coefficient c₁ in m/s/day.
    pub linear: f64,
    /// Quadratic coefficient c₂ in m/s/day².
    pub quadratic: f64,
}

/// Full parameter set of the dynamical model.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct DynamicalParams {
    /// Stellar mass in M☉.
    pub star_mass: f64,
    /// Planets in any order (sorted by period internally).
    pub planets: Vec<DynamicalPlanet>,
    /// One RV offset γ per instrument, m/s.
    pub offsets: Vec<f64>,
    /// Optional trend (zero for none).
    pub trend: Trend,
}

/// Which integrator the model runs.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum IntegratorChoice {
    /// Wisdom–Holman map ([`crate::nbody::wisdom_holman`]) with a fixed step
    /// in days (`None`: the integrator's default) and a corrector.
    WisdomHolman {
        /// Step in days.
        step: Option<f64>,
        /// Symplectic corrector.
        corrector: Corrector,
    },
    /// Adaptive 15th-order Gauss–Radau ([`crate::nbody::gauss_radau`])
    /// with this step-control tolerance ε (IAS15's; 1e-9 reaches
    /// round-off). The reference integrator: slower, allocates per call.
    GaussRadau {
        /// Step-control tolerance ε.
        tolerance: f64,
    },
}

/// Settings of the dynamical model that are not fitted.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct DynamicalModel {
    /// Reference epoch t_ref (days) of the osculating elements.
    pub t_ref: f64,
    /// Stellar radius in au (for collision events; 0 disables them).
    pub star_radius: f64,
    /// Integrator and its step.
    pub integrator: IntegratorChoice,
    /// Events that make the model unusable (they stop the integration).
    pub events: EventSettings,
    /// Include the first post-Newtonian potential of the star.
    pub post_newtonian: bool,
}

/// Largest number of integrator steps one call of
/// [`DynamicalModel::star_rv`] may take (both directions from t_ref
/// together). A call that would need more is refused with
/// [`DynamicalError::TooMuchWork`] before integrating, so that one
/// evaluation inside a fit or a sampler is bounded in time (about a second
/// for two planets). Wisdom–Holman: the exact count, span / step. Gauss–
/// Radau: estimated with the Wisdom–Holman default step (P_min/20 scaled
/// for the pericentre passage), which its adaptive steps exceed on
/// well-separated orbits.
pub const MAX_STEPS_PER_EVALUATION: f64 = 2.0e6;

/// Why the model could not be evaluated (the likelihood is then −∞ with
/// this reason; DESIGN §3).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DynamicalError {
    /// A parameter is outside its domain.
    #[error("invalid parameter: {0}")]
    InvalidParameter(String),
    /// The inputs disagree in length or index.
    #[error("inconsistent input: {0}")]
    Inconsistent(String),
    /// The integration failed or stopped on an event.
    #[error(transparent)]
    Nbody(#[from] NbodyError),
    /// The epochs span too many steps of the integrator
    /// ([`MAX_STEPS_PER_EVALUATION`]).
    #[error(
        "the epochs span {span:.1} d, {steps:.3e} integrator steps of {step:.4e} d, more than the limit of {limit:.1e} per evaluation; use a longer step or fewer epochs"
    )]
    TooMuchWork {
        /// Days from the earliest to the latest of t_ref and the epochs.
        span: f64,
        /// The step, days.
        step: f64,
        /// Steps needed.
        steps: f64,
        /// The limit.
        limit: f64,
    },
}

/// Preallocated buffers of the dynamical model.
#[derive(Debug, Clone)]
pub struct DynamicalWorkspace {
    order: Vec<usize>,
    sorted_for: Vec<f64>,
    planet_order: Vec<usize>,
    planets: Vec<JacobiPlanet>,
    system: System,
    wh: Option<WisdomHolman>,
    snap: Snapshot,
}

impl Default for DynamicalWorkspace {
    fn default() -> Self {
        DynamicalWorkspace {
            order: Vec::new(),
            sorted_for: Vec::new(),
            planet_order: Vec::new(),
            planets: Vec::new(),
            system: System {
                masses: vec![1.0],
                radii: vec![0.0],
                state: Snapshot::zeros(1, 0.0),
                post_newtonian: false,
            },
            wh: None,
            snap: Snapshot::zeros(1, 0.0),
        }
    }
}

impl DynamicalWorkspace {
    /// The system at t_ref built by the last evaluation (masses in M☉,
    /// barycentric state).
    pub fn system(&self) -> &System {
        &self.system
    }
}

impl DynamicalModel {
    /// A model with a Wisdom–Holman integrator at its default step, no
    /// corrector, no post-Newtonian term and default event settings.
    pub fn new(t_ref: f64) -> Self {
        DynamicalModel {
            t_ref,
            star_radius: 0.0,
            integrator: IntegratorChoice::WisdomHolman {
                step: None,
                corrector: Corrector::Off,
            },
            events: EventSettings::default(),
            post_newtonian: false,
        }
    }

    /// Build the system at t_ref from the parameters into `ws.system`
    /// (masses from K, inside out; DESIGN §3).
    pub fn build_system(
        &self,
        params: &DynamicalParams,
        ws: &mut DynamicalWorkspace,
    ) -> Result<(), DynamicalError> {
        let bad = |s: String| Err(DynamicalError::InvalidParameter(s));
        if !(params.star_mass > 0.0 && params.star_mass.is_finite()) {
            return bad(format!("star mass {} must be positive", params.star_mass));
        }
        // Planet order by period (allocation-free once sized).
        ws.planet_order.clear();
        ws.planet_order.extend(0..params.planets.len());
        for (j, p) in params.planets.iter().enumerate() {
            let ok = p.period > 0.0
                && p.period.is_finite()
                && p.k >= 0.0
                && p.k.is_finite()
                && (0.0..1.0).contains(&p.e)
                && p.inc > 0.0
                && p.inc < std::f64::consts::PI
                && [p.omega_star, p.mean_anomaly, p.delta_node]
                    .iter()
                    .all(|x| x.is_finite());
            if !ok {
                return bad(format!(
                    "planet {j}: need P > 0, K ≥ 0, 0 ≤ e < 1, 0 < i < π and finite angles, got {p:?}"
                ));
            }
        }
        let planets = &params.planets;
        ws.planet_order.sort_unstable_by(|&a, &b| {
            planets[a]
                .period
                .partial_cmp(&planets[b].period)
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        ws.planets.clear();
        let mut interior = params.star_mass;
        for (rank, &j) in ws.planet_order.iter().enumerate() {
            let p = &planets[j];
            let m = planet_mass(p.k, p.period, p.e, p.inc.sin(), interior).ok_or_else(|| {
                DynamicalError::InvalidParameter(format!("planet {j}: no mass from K = {}", p.k))
            })?;
            ws.planets.push(JacobiPlanet {
                mass: m,
                radius: 0.0,
                size: OrbitSize::Period(p.period),
                e: p.e,
                omega_star: p.omega_star,
                phase: OrbitPhase::MeanAnomaly(p.mean_anomaly),
                inc: p.inc,
                node: if rank == 0 { 0.0 } else { p.delta_node },
            });
            interior += m;
        }
        ws.system.post_newtonian = self.post_newtonian;
        ws.system.set_jacobi_elements(
            params.star_mass,
            self.star_radius,
            &ws.planets,
            self.t_ref,
        )?;
        Ok(())
    }

    /// Model RV (m/s) at each of `epochs` (days, any order, either side of
    /// t_ref) into `out`, for instrument indices `instruments` (one per
    /// epoch, indexing `params.offsets`).
    pub fn star_rv(
        &self,
        params: &DynamicalParams,
        epochs: &[f64],
        instruments: &[usize],
        ws: &mut DynamicalWorkspace,
        out: &mut [f64],
    ) -> Result<(), DynamicalError> {
        let n = epochs.len();
        if instruments.len() != n || out.len() != n {
            return Err(DynamicalError::Inconsistent(format!(
                "{n} epochs, {} instrument indices, {} outputs",
                instruments.len(),
                out.len()
            )));
        }
        if let Some(i) = instruments.iter().position(|&i| i >= params.offsets.len()) {
            return Err(DynamicalError::Inconsistent(format!(
                "epoch {i}: instrument {} but only {} offsets",
                instruments[i],
                params.offsets.len()
            )));
        }
        if let Some(i) = epochs.iter().position(|t| !t.is_finite()) {
            return Err(DynamicalError::Inconsistent(format!(
                "epoch {i} is not finite"
            )));
        }
        let finite = params.offsets.iter().all(|g| g.is_finite())
            && params.trend.linear.is_finite()
            && params.trend.quadratic.is_finite();
        if !finite {
            return Err(DynamicalError::InvalidParameter(
                "offsets and trend must be finite".into(),
            ));
        }
        self.build_system(params, ws)?;
        sort_epochs(epochs, ws);
        let nb = ws.system.len();
        if ws.snap.len() != nb {
            ws.snap = Snapshot::zeros(nb, self.t_ref);
        }
        let split = ws.order.partition_point(|&i| epochs[i] < self.t_ref);
        let (first, last) = match (ws.order.first(), ws.order.last()) {
            (Some(&a), Some(&b)) => (epochs[a].min(self.t_ref), epochs[b].max(self.t_ref)),
            _ => (self.t_ref, self.t_ref),
        };
        let span = last - first;
        match self.integrator {
            IntegratorChoice::WisdomHolman { step, corrector } => {
                let settings = WhSettings {
                    step,
                    corrector,
                    events: self.events,
                    ..WhSettings::default()
                };
                let wh = match ws.wh.as_mut() {
                    Some(wh) => {
                        wh.set_corrector(corrector);
                        wh.set_events(self.events);
                        wh.reset(&ws.system, step)?;
                        wh
                    }
                    None => ws.wh.insert(WisdomHolman::new(&ws.system, settings)?),
                };
                check_work(span, wh.step())?;
                sample_star_vz(wh, epochs, &ws.order[split..], &mut ws.snap, out)?;
                if split > 0 {
                    wh.reset(&ws.system, step)?;
                    sample_star_vz(
                        wh,
                        epochs,
                        ws.order[..split].iter().rev(),
                        &mut ws.snap,
                        out,
                    )?;
                }
            }
            IntegratorChoice::GaussRadau { tolerance } => {
                let settings = GaussRadauSettings {
                    tolerance,
                    initial_step: None,
                    events: self.events,
                };
                let probe = WisdomHolman::new(
                    &ws.system,
                    WhSettings {
                        step: None,
                        corrector: Corrector::Off,
                        events: self.events,
                        ..WhSettings::default()
                    },
                )?;
                check_work(span, probe.step())?;
                let mut gr = GaussRadau::new(ws.system.clone(), settings)?;
                sample_star_vz(&mut gr, epochs, &ws.order[split..], &mut ws.snap, out)?;
                if split > 0 {
                    let mut gr = GaussRadau::new(ws.system.clone(), settings)?;
                    sample_star_vz(
                        &mut gr,
                        epochs,
                        ws.order[..split].iter().rev(),
                        &mut ws.snap,
                        out,
                    )?;
                }
            }
        }
        for i in 0..n {
            let dt = epochs[i] - self.t_ref;
            out[i] += params.offsets[instruments[i]]
                + dt * (params.trend.linear + dt * params.trend.quadratic);
        }
        if let Some(i) = out.iter().position(|v| !v.is_finite()) {
            return Err(DynamicalError::InvalidParameter(format!(
                "epoch {i}: the model RV overflows (parameters too large)"
            )));
        }
        Ok(())
    }
}

/// Refuse an evaluation of more than [`MAX_STEPS_PER_EVALUATION`] steps.
fn check_work(span: f64, step: f64) -> Result<(), DynamicalError> {
    let steps = span / step.abs();
    if steps > MAX_STEPS_PER_EVALUATION || !steps.is_finite() {
        return Err(DynamicalError::TooMuchWork {
            span,
            step: step.abs(),
            steps,
            limit: MAX_STEPS_PER_EVALUATION,
        });
    }
    Ok(())
}

/// Sort epoch indices by time into `ws.order`, skipping the sort when the
/// epochs are those of the previous call.
fn sort_epochs(epochs: &[f64], ws: &mut DynamicalWorkspace) {
    if ws.sorted_for.as_slice() == epochs && ws.order.len() == epochs.len() {
        return;
    }
    ws.sorted_for.clear();
    ws.sorted_for.extend_from_slice(epochs);
    ws.order.clear();
    ws.order.extend(0..epochs.len());
    ws.order.sort_unstable_by(|&a, &b| {
        epochs[a]
            .partial_cmp(&epochs[b])
            .unwrap_or(std::cmp::Ordering::Equal)
    });
}

/// Advance `integ` through `indices` (epochs in the direction of travel)
/// and write the star's barycentric v_z in m/s at each into `out[index]`.
/// Written against the [`Integrator`] trait so that any integrator
/// (Wisdom–Holman, Gauss–Radau) serves the model.
pub fn sample_star_vz<'a, I: Integrator + ?Sized>(
    integ: &mut I,
    epochs: &[f64],
    indices: impl IntoIterator<Item = &'a usize>,
    snap: &mut Snapshot,
    out: &mut [f64],
) -> Result<(), NbodyError> {
    for &i in indices {
        integ.advance_to(epochs[i], snap)?;
        let v: Vector3<f64> = snap.vel[0];
        out[i] = au_per_day_to_m_s(v.z);
    }
    Ok(())
}

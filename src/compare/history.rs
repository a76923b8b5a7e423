//! Element histories from long N-body integrations: the input of the
//! resonance analysis ([`crate::compare::resonance`]).
//!
//! A [`System`] (normally the fitted solution, built from Jacobi elements at
//! t_ref) is integrated with the Wisdom–Holman map
//! ([`crate::nbody::wisdom_holman`]) and sampled at a regular output
//! interval. At each sample the osculating **Jacobi** elements of every
//! planet are formed (planet k about the centre of mass of the star and
//! planets 1..k−1, μ_k = G M_k; DESIGN §3, as
//! [`System::osculating_elements`] with [`crate::nbody::system::Primary::Jacobi`],
//! but into preallocated buffers) and stored as period, e, ϖ = Ω + ω and
//! λ = M + ϖ, with the planet's own ω.
//!
//! **Frame.** By default the elements are measured in the *invariable
//! plane* of the system (the plane normal to the total angular momentum at
//! the start, which the integration conserves): i and Ω are then the
//! small angles of each orbit to that plane, and ϖ, λ are the longitudes
//! of secular theory. A planetary system seen nearly edge-on has i ≈ 90° in
//! the sky frame, where ϖ = Ω + ω is a poor longitude. The x axis of the
//! invariable frame lies along the ascending node of the invariable plane
//! on the reference (sky) plane, or along +X if the two planes coincide.
//! [`ElementFrame::Reference`] keeps the frame of the input state instead
//! (e.g. the ecliptic for solar-system tests).
//!
//! **Output interval.** Unless given, the smaller of P_out /
//! [`HistorySettings::samples_per_outer_orbit`] (P_out the osculating
//! Jacobi period of the outermost planet at the start) and, for every
//! adjacent pair and every commensurability that [`summarise_pair`] will
//! analyse (the nearest of each order k ≤ 3 and any near one, chosen from
//! the starting osculating period ratio), the period 2π/|j n₂ − (j−k) n₁|
//! of its resonant angles divided by [`HistorySettings::samples_per_angle_cycle`]
//! (the ϖ rates are secular and ignored here). [`analyse_angle`](crate::compare::resonance::analyse_angle)
//! needs at least four samples per cycle (its quarter-turn rule); the
//! default of eight gives a factor two of margin for the difference between
//! osculating and mean motions.
//!
//! **Length.** First [`HistorySettings::initial_outer_orbits`] outer orbits
//! (default 2000). Then every adjacent pair is summarised; if any *angle of
//! interest* is undecided because the series is too short
//! ([`UndecidedReason::TooShort`] or [`UndecidedReason::FullCircleWithoutNetTurn`]),
//! the integration is continued (not restarted) to twice its length, and so
//! on up to the bound: the smallest of [`HistorySettings::max_outer_orbits`]
//! outer orbits (default 10⁵), [`HistorySettings::max_span_d`] and
//! [`HistorySettings::max_samples`] samples. Angles of interest are the
//! resonant angles of every *near* commensurability of an adjacent pair and,
//! if [`HistorySettings::apsidal_difference_of_interest`], the secular angle
//! Δϖ of every adjacent pair (its period is secular, typically 10³–10⁵
//! orbits, so this is what usually sets the length).
//!
//! **Events** (close encounters, star collisions, ejections) detected by the
//! integrator with [`HistorySettings::events`] end the run when
//! `stop_on_event` is set: the history up to the last sample before the event
//! is returned with [`RunEnd::Stopped`] (and no pair summaries).
//!
//! The series are preallocated for each stage; a sample costs no heap
//! allocation (the Jacobi buffers are made once).

use nalgebra::{Matrix3, Vector3};
use std::f64::consts::TAU;

use crate::compare::resonance::{
    AngleRegime, ElementHistory, MIN_SAMPLES, PairResonanceSummary, PlanetSeries, ResonanceError,
    SummarySettings, UndecidedReason, commensurabilities, summarise_pair,
};
use crate::kepler::{ElementsError, period_from_a, state_to_elements};
use crate::nbody::events::{Event, EventSettings, NbodyError};
use crate::nbody::integrator::Integrator;
use crate::nbody::jacobi::{inertial_to_jacobi, interior_masses};
use crate::nbody::system::{Snapshot, System};
use crate::nbody::wisdom_holman::{Corrector, WhSettings, WisdomHolman};
use crate::units::G;

/// Frame in which the osculating elements are measured (see module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum ElementFrame {
    /// The invariable plane of the system (normal to the total angular
    /// momentum at the start).
    Invariable,
    /// The frame of the input state (the sky frame of DESIGN §3, or e.g. the
    /// ecliptic of a solar-system state).
    Reference,
}

/// Settings of [`record_history`].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct HistorySettings {
    /// Wisdom–Holman step in days; `None` for the integrator's default
    /// (P/20 scaled for the pericentre passage of the most demanding planet).
    pub step_d: Option<f64>,
    /// Symplectic corrector of the Wisdom–Holman map.
    pub corrector: Corrector,
    /// Events looked for, and whether they stop the run.
    pub events: EventSettings,
    /// Frame of the elements.
    pub frame: ElementFrame,
    /// Output interval in days; `None` for the default of the module docs.
    pub output_interval_d: Option<f64>,
    /// Samples per orbit of the outermost planet (default 4).
    pub samples_per_outer_orbit: f64,
    /// Samples per cycle of the fastest resonant angle analysed (default 8;
    /// the analysis needs ≥ 4).
    pub samples_per_angle_cycle: f64,
    /// Length of the first stage, in orbits of the outermost planet
    /// (default 2000).
    pub initial_outer_orbits: f64,
    /// Bound on the length, in orbits of the outermost planet (default 10⁵).
    pub max_outer_orbits: f64,
    /// Bound on the length in days (`None`: no bound beyond the others).
    pub max_span_d: Option<f64>,
    /// Bound on the number of samples (default 500 000: about 20 MB per
    /// planet).
    pub max_samples: usize,
    /// Whether an undecided secular angle Δϖ makes the run longer.
    pub apsidal_difference_of_interest: bool,
    /// Settings of the pair summaries used to decide the length.
    pub summary: SummarySettings,
}

impl Default for HistorySettings {
    fn default() -> Self {
        Self {
            step_d: None,
            corrector: Corrector::Off,
            events: EventSettings::default(),
            frame: ElementFrame::Invariable,
            output_interval_d: None,
            samples_per_outer_orbit: 4.0,
            samples_per_angle_cycle: 8.0,
            initial_outer_orbits: 2000.0,
            max_outer_orbits: 1e5,
            max_span_d: None,
            max_samples: 500_000,
            apsidal_difference_of_interest: true,
            summary: SummarySettings::default(),
        }
    }
}

/// How the run ended.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum RunEnd {
    /// Every angle of interest was decided.
    Decided,
    /// The length bound was reached with some angle of interest still
    /// undecided for want of length.
    LengthBound,
    /// An event stopped the integration (the history ends at the last sample
    /// before it).
    Stopped(Event),
}

/// A planet's osculating Jacobi elements at the first sample, in the frame
/// of the history.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StartOrbit {
    /// Planet mass (M☉).
    pub mass: f64,
    /// Jacobi semi-major axis (au).
    pub a_au: f64,
    /// Jacobi period (d), with μ_k = G M_k.
    pub period_d: f64,
    /// Eccentricity.
    pub e: f64,
    /// Inclination to the plane of the frame (rad).
    pub inc: f64,
    /// Longitude of the ascending node (rad).
    pub node: f64,
    /// Longitude of periastron ϖ = Ω + ω of the planet (rad, [0, 2π)).
    pub varpi: f64,
    /// Mean longitude λ = M + ϖ (rad, [0, 2π)).
    pub lambda: f64,
}

/// The recorded history and how it was made.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct HistoryRun {
    /// The element series (epochs in days of the system's clock).
    pub history: ElementHistory,
    /// Frame of the elements.
    pub frame: ElementFrame,
    /// Rotation from the reference frame to the frame of the elements
    /// (rows: the frame's x, y, z axes in reference coordinates).
    pub rotation: [[f64; 3]; 3],
    /// Star mass (M☉).
    pub star_mass: f64,
    /// Planets at the first sample.
    pub start: Vec<StartOrbit>,
    /// Output interval used (d).
    pub output_interval_d: f64,
    /// Integrator step used (d).
    pub step_d: f64,
    /// Number of stages (1 + number of doublings).
    pub stages: usize,
    /// Length bound that applied (d).
    pub bound_d: f64,
    /// How the run ended.
    pub end: RunEnd,
    /// Events recorded without stopping the run.
    pub events: Vec<Event>,
    /// Settings of the pair summaries.
    pub summary: SummarySettings,
    /// Summaries of the adjacent pairs (inner index, inner + 1) of the final
    /// history, made to decide the length; empty when the run was stopped.
    pub pair_summaries: Vec<PairResonanceSummary>,
}

/// Errors of [`record_history`].
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum HistoryError {
    /// The system has no planet.
    #[error("the system has no planet")]
    NoPlanets,
    /// A setting is out of range.
    #[error("setting {name} = {value} is invalid: {reason}")]
    InvalidSetting {
        /// Which setting.
        name: &'static str,
        /// Its value.
        value: f64,
        /// What is allowed.
        reason: &'static str,
    },
    /// The integrator failed (other than by a stopping event).
    #[error("integration: {0}")]
    Nbody(#[from] NbodyError),
    /// Osculating elements could not be formed (e.g. an unbound planet with
    /// ejection checks off).
    #[error("elements of planet {planet} at t = {t} d: {source}")]
    Elements {
        /// Planet index (0 = innermost).
        planet: usize,
        /// Time (d).
        t: f64,
        /// What the conversion reported.
        source: ElementsError,
    },
    /// The resonance analysis of the history failed.
    #[error("resonance analysis: {0}")]
    Resonance(#[from] ResonanceError),
}

fn positive(name: &'static str, value: f64) -> Result<(), HistoryError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(HistoryError::InvalidSetting {
            name,
            value,
            reason: "must be finite and > 0",
        })
    }
}

fn check_settings(s: &HistorySettings) -> Result<(), HistoryError> {
    if let Some(h) = s.step_d {
        positive("step_d", h)?;
    }
    if let Some(dt) = s.output_interval_d {
        positive("output_interval_d", dt)?;
    }
    if let Some(t) = s.max_span_d {
        positive("max_span_d", t)?;
    }
    positive("samples_per_outer_orbit", s.samples_per_outer_orbit)?;
    if !(s.samples_per_angle_cycle >= 4.0 && s.samples_per_angle_cycle.is_finite()) {
        return Err(HistoryError::InvalidSetting {
            name: "samples_per_angle_cycle",
            value: s.samples_per_angle_cycle,
            reason: "must be finite and >= 4 (the analysis needs 4 per cycle)",
        });
    }
    positive("initial_outer_orbits", s.initial_outer_orbits)?;
    positive("max_outer_orbits", s.max_outer_orbits)?;
    if s.max_samples < MIN_SAMPLES {
        return Err(HistoryError::InvalidSetting {
            name: "max_samples",
            value: s.max_samples as f64,
            reason: "must be at least MIN_SAMPLES (8)",
        });
    }
    Ok(())
}

/// Rotation to the invariable frame of angular momentum `l` (rows: new
/// axes in old coordinates); identity when `l` is zero.
fn invariable_rotation(l: &Vector3<f64>) -> Matrix3<f64> {
    let ln = l.norm();
    if !(ln > 0.0 && ln.is_finite()) {
        return Matrix3::identity();
    }
    let z = l / ln;
    let node = Vector3::z().cross(&z);
    let x = if node.norm() > 1e-12 {
        node.normalize()
    } else {
        Vector3::x()
    };
    let y = z.cross(&x);
    Matrix3::from_rows(&[x.transpose(), y.transpose(), z.transpose()])
}

/// Buffers and constants to turn a barycentric snapshot into Jacobi elements
/// without allocation.
struct Sampler {
    masses: Vec<f64>,
    interior: Vec<f64>,
    jr: Vec<Vector3<f64>>,
    jv: Vec<Vector3<f64>>,
    rot: Matrix3<f64>,
}

/// One planet's elements as stored in the series.
#[derive(Clone, Copy)]
struct Sample {
    a: f64,
    period: f64,
    e: f64,
    inc: f64,
    node: f64,
    varpi: f64,
    lambda: f64,
}

impl Sampler {
    fn new(system: &System, rot: Matrix3<f64>) -> Self {
        let n = system.len();
        let mut interior = vec![0.0; n];
        interior_masses(&system.masses, &mut interior);
        Self {
            masses: system.masses.clone(),
            interior,
            jr: vec![Vector3::zeros(); n],
            jv: vec![Vector3::zeros(); n],
            rot,
        }
    }

    fn load(&mut self, s: &Snapshot) {
        inertial_to_jacobi(&self.masses, &self.interior, &s.pos, &mut self.jr);
        inertial_to_jacobi(&self.masses, &self.interior, &s.vel, &mut self.jv);
    }

    /// Elements of planet index `p` (body p + 1) of the loaded snapshot.
    fn planet(&self, p: usize, t: f64) -> Result<Sample, HistoryError> {
        let k = p + 1;
        let mu = G * self.interior[k];
        let r = self.rot * self.jr[k];
        let v = self.rot * self.jv[k];
        let el = state_to_elements(&r, &v, mu).map_err(|source| HistoryError::Elements {
            planet: p,
            t,
            source,
        })?;
        let varpi = (el.node + el.omega).rem_euclid(TAU);
        Ok(Sample {
            a: el.a,
            period: period_from_a(el.a, mu),
            e: el.e,
            inc: el.inc,
            node: el.node.rem_euclid(TAU),
            varpi,
            lambda: (el.mean_anomaly + varpi).rem_euclid(TAU),
        })
    }
}

fn empty_series(capacity: usize) -> PlanetSeries {
    PlanetSeries {
        period_d: Vec::with_capacity(capacity),
        e: Vec::with_capacity(capacity),
        varpi: Vec::with_capacity(capacity),
        lambda: Vec::with_capacity(capacity),
        inc: Some(Vec::with_capacity(capacity)),
        node: Some(Vec::with_capacity(capacity)),
    }
}

fn reserve(history: &mut ElementHistory, total: usize) {
    let extra = total.saturating_sub(history.times_d.len());
    history.times_d.reserve(extra);
    for p in &mut history.planets {
        p.period_d.reserve(extra);
        p.e.reserve(extra);
        p.varpi.reserve(extra);
        p.lambda.reserve(extra);
        if let Some(v) = p.inc.as_mut() {
            v.reserve(extra);
        }
        if let Some(v) = p.node.as_mut() {
            v.reserve(extra);
        }
    }
}

fn push(series: &mut PlanetSeries, s: &Sample) {
    series.period_d.push(s.period);
    series.e.push(s.e);
    series.varpi.push(s.varpi);
    series.lambda.push(s.lambda);
    if let Some(v) = series.inc.as_mut() {
        v.push(s.inc);
    }
    if let Some(v) = series.node.as_mut() {
        v.push(s.node);
    }
}

/// The default output interval (d) of the module docs from the starting
/// periods (innermost first).
pub fn default_output_interval(
    periods_d: &[f64],
    settings: &HistorySettings,
) -> Result<f64, HistoryError> {
    let Some(&p_out) = periods_d.last() else {
        return Err(HistoryError::NoPlanets);
    };
    let mut dt = p_out / settings.samples_per_outer_orbit;
    for w in periods_d.windows(2) {
        let (p1, p2) = (w[0], w[1]);
        let ratio = p2 / p1;
        if !(ratio > 1.0 && ratio.is_finite()) {
            continue;
        }
        let all = commensurabilities(
            ratio,
            settings.summary.max_j,
            settings.summary.near_threshold,
        )?;
        let (n1, n2) = (TAU / p1, TAU / p2);
        for (i, c) in all.iter().enumerate() {
            // The same choice as `summarise_pair`.
            if !c.near && all[..i].iter().any(|d| d.k == c.k) {
                continue;
            }
            let rate = (f64::from(c.j) * n2 - f64::from(c.j - c.k) * n1).abs();
            if rate > 0.0 {
                dt = dt.min(TAU / rate / settings.samples_per_angle_cycle);
            }
        }
    }
    Ok(dt)
}

/// Whether an angle of interest of `summary` is undecided for want of length.
fn wants_more(summary: &PairResonanceSummary, settings: &HistorySettings) -> bool {
    let short = |r: &AngleRegime| {
        matches!(
            r,
            AngleRegime::Undecided(
                UndecidedReason::TooShort | UndecidedReason::FullCircleWithoutNetTurn
            )
        )
    };
    let resonant = summary
        .analysed
        .iter()
        .filter(|c| c.commensurability.near)
        .flat_map(|c| &c.angles)
        .any(|a| short(&a.analysis.regime));
    resonant
        || (settings.apsidal_difference_of_interest
            && short(&summary.apsidal_difference.analysis.regime))
}

/// Integrate `system` and record the osculating Jacobi elements of every
/// planet (module docs: frame, interval, length, events). `progress`
/// receives the fraction (0–1) of the current stage done; it restarts
/// from one half when a stage is doubled.
pub fn record_history(
    system: &System,
    settings: &HistorySettings,
    mut progress: impl FnMut(f64),
) -> Result<HistoryRun, HistoryError> {
    check_settings(settings)?;
    let n_planets = system.len().saturating_sub(1);
    if n_planets == 0 {
        return Err(HistoryError::NoPlanets);
    }
    let rot = match settings.frame {
        ElementFrame::Invariable => invariable_rotation(&system.angular_momentum()),
        ElementFrame::Reference => Matrix3::identity(),
    };
    let t0 = system.state.t;
    let mut sampler = Sampler::new(system, rot);
    sampler.load(&system.state);
    let mut start = Vec::with_capacity(n_planets);
    for p in 0..n_planets {
        let s = sampler.planet(p, t0)?;
        start.push(StartOrbit {
            mass: system.masses[p + 1],
            a_au: s.a,
            period_d: s.period,
            e: s.e,
            inc: s.inc,
            node: s.node,
            varpi: s.varpi,
            lambda: s.lambda,
        });
    }
    let periods: Vec<f64> = start.iter().map(|s| s.period_d).collect();
    let dt = match settings.output_interval_d {
        Some(dt) => dt,
        None => default_output_interval(&periods, settings)?,
    };
    let p_out = periods.iter().fold(0.0f64, |m, &p| m.max(p));
    let mut bound = settings.max_outer_orbits * p_out;
    if let Some(t) = settings.max_span_d {
        bound = bound.min(t);
    }
    bound = bound.min((settings.max_samples - 1) as f64 * dt);
    let mut target = (settings.initial_outer_orbits * p_out).min(bound);
    // At least MIN_SAMPLES samples, whatever the settings.
    target = target.max((MIN_SAMPLES - 1) as f64 * dt);
    bound = bound.max(target);

    let mut wh = WisdomHolman::new(
        system,
        WhSettings {
            step: settings.step_d,
            corrector: settings.corrector,
            events: settings.events,
            ..WhSettings::default()
        },
    )?;
    let mut snap = Snapshot::zeros(system.len(), t0);
    let mut history = ElementHistory {
        times_d: Vec::new(),
        planets: (0..n_planets).map(|_| empty_series(0)).collect(),
    };
    let mut stages = 0;
    let mut index: usize = 0;
    let mut pair_summaries = Vec::new();
    let end = loop {
        stages += 1;
        let last = (target / dt).floor() as usize;
        reserve(&mut history, last + 1);
        let first = index;
        let report_every = ((last + 1 - first) / 200).max(1);
        let mut stopped = None;
        while index <= last {
            let t = t0 + dt * index as f64;
            if index == 0 {
                snap.clone_from(&system.state);
            } else {
                match wh.advance_to(t, &mut snap) {
                    Ok(()) => {}
                    Err(NbodyError::Stopped(ev)) => {
                        stopped = Some(ev);
                        break;
                    }
                    Err(e) => return Err(e.into()),
                }
            }
            sampler.load(&snap);
            history.times_d.push(t);
            for (p, series) in history.planets.iter_mut().enumerate() {
                let s = sampler.planet(p, t)?;
                push(series, &s);
            }
            if (index - first) % report_every == 0 {
                progress((index as f64 * dt / target).min(1.0));
            }
            index += 1;
        }
        if let Some(ev) = stopped {
            pair_summaries.clear();
            break RunEnd::Stopped(ev);
        }
        progress(1.0);
        pair_summaries = (0..n_planets - 1)
            .map(|i| summarise_pair(&history, i, i + 1, &settings.summary))
            .collect::<Result<Vec<_>, _>>()?;
        let more = pair_summaries.iter().any(|s| wants_more(s, settings));
        if !more {
            break RunEnd::Decided;
        }
        if target >= bound {
            break RunEnd::LengthBound;
        }
        target = (2.0 * target).min(bound);
    };
    let r = rot;
    Ok(HistoryRun {
        history,
        frame: settings.frame,
        rotation: [
            [r[(0, 0)], r[(0, 1)], r[(0, 2)]],
            [r[(1, 0)], r[(1, 1)], r[(1, 2)]],
            [r[(2, 0)], r[(2, 1)], r[(2, 2)]],
        ],
        star_mass: system.masses[0],
        start,
        output_interval_d: dt,
        step_d: wh.step(),
        stages,
        bound_d: bound,
        end,
        events: wh.events().to_vec(),
        summary: settings.summary,
        pair_summaries,
    })
}

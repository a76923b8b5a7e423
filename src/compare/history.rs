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
//!
//! **Spans of data.** [`record_at_epochs`] gives the same Jacobi elements at
//! given epochs on both sides of the system's epoch (integrated outwards
//! both ways, as the dynamical RV model does, with Wisdom–Holman or
//! Gauss–Radau), and [`mean_orbits`] turns a dense, even sampling of a data
//! span into the *baseline-mean* elements that a Keplerian fit of the
//! span's RVs estimates (mean period of the RV fundamental, ⟨K⟩, mean
//! eccentricity vector).

use nalgebra::{Matrix3, Vector3};
use std::f64::consts::TAU;

use crate::compare::resonance::{
    AngleRegime, ElementHistory, MIN_SAMPLES, PairResonanceSummary, PlanetSeries, ResonanceError,
    SummarySettings, UndecidedReason, commensurabilities, summarise_pair,
};
use crate::kepler::{ElementsError, period_from_a, semi_amplitude, state_to_elements, wrap_pi};
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

/// Integrator of [`record_at_epochs`] and [`mean_orbits`].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum SpanIntegrator {
    /// Wisdom–Holman map with a fixed step in days (`None`: the
    /// integrator's default) and a corrector.
    WisdomHolman {
        /// Step in days.
        step: Option<f64>,
        /// Symplectic corrector.
        corrector: Corrector,
    },
    /// Adaptive 15th-order Gauss–Radau (IAS15 step control) with this
    /// tolerance ε; its dense output serves the epochs.
    GaussRadau {
        /// Step-control tolerance ε.
        tolerance: f64,
    },
}

/// Sample the osculating elements at `times_d[i]` for `i` in `indices` (in
/// the direction of travel) into `out[planet][i]`.
fn sample_into<I: Integrator + ?Sized>(
    integ: &mut I,
    times_d: &[f64],
    indices: impl Iterator<Item = usize>,
    sampler: &mut Sampler,
    snap: &mut Snapshot,
    out: &mut [Vec<Sample>],
) -> Result<(), HistoryError> {
    for i in indices {
        let t = times_d[i];
        integ.advance_to(t, snap)?;
        sampler.load(snap);
        for (p, series) in out.iter_mut().enumerate() {
            series[i] = sampler.planet(p, t)?;
        }
    }
    Ok(())
}

/// Run `integrator` from `system` once forward over the indices `fwd` and
/// once, from the same start, backward over `bwd`.
fn sample_both_ways(
    system: &System,
    times_d: &[f64],
    integrator: SpanIntegrator,
    events: EventSettings,
    sampler: &mut Sampler,
    out: &mut [Vec<Sample>],
) -> Result<(), HistoryError> {
    let t0 = system.state.t;
    let split = times_d.partition_point(|&t| t < t0);
    let mut snap = Snapshot::zeros(system.len(), t0);
    let fwd = split..times_d.len();
    let bwd = (0..split).rev();
    match integrator {
        SpanIntegrator::WisdomHolman { step, corrector } => {
            let settings = WhSettings {
                step,
                corrector,
                events,
                ..WhSettings::default()
            };
            let mut wh = WisdomHolman::new(system, settings)?;
            sample_into(&mut wh, times_d, fwd, sampler, &mut snap, out)?;
            let mut wh = WisdomHolman::new(system, settings)?;
            sample_into(&mut wh, times_d, bwd, sampler, &mut snap, out)?;
        }
        SpanIntegrator::GaussRadau { tolerance } => {
            use crate::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
            let settings = GaussRadauSettings {
                tolerance,
                initial_step: None,
                events,
            };
            let mut gr = GaussRadau::new(system.clone(), settings)?;
            sample_into(&mut gr, times_d, fwd, sampler, &mut snap, out)?;
            let mut gr = GaussRadau::new(system.clone(), settings)?;
            sample_into(&mut gr, times_d, bwd, sampler, &mut snap, out)?;
        }
    }
    Ok(())
}

/// Check that `times_d` are finite and strictly increasing.
fn check_epochs(times_d: &[f64]) -> Result<(), HistoryError> {
    if let Some(i) = times_d.iter().position(|t| !t.is_finite()) {
        return Err(HistoryError::InvalidSetting {
            name: "times_d",
            value: times_d[i],
            reason: "epochs must be finite",
        });
    }
    if let Some(w) = times_d.windows(2).find(|w| !(w[1] > w[0])) {
        return Err(HistoryError::InvalidSetting {
            name: "times_d",
            value: w[1],
            reason: "epochs must be strictly increasing",
        });
    }
    Ok(())
}

/// The osculating Jacobi elements of every planet at `times_d`
/// ([`record_at_epochs`]), per planet then per epoch.
fn record_samples(
    system: &System,
    times_d: &[f64],
    integrator: SpanIntegrator,
    frame: ElementFrame,
    events: EventSettings,
) -> Result<Vec<Vec<Sample>>, HistoryError> {
    let n_planets = system.len().saturating_sub(1);
    if n_planets == 0 {
        return Err(HistoryError::NoPlanets);
    }
    check_epochs(times_d)?;
    let rot = match frame {
        ElementFrame::Invariable => invariable_rotation(&system.angular_momentum()),
        ElementFrame::Reference => Matrix3::identity(),
    };
    let mut sampler = Sampler::new(system, rot);
    let zero = Sample {
        a: 0.0,
        period: 0.0,
        e: 0.0,
        inc: 0.0,
        node: 0.0,
        varpi: 0.0,
        lambda: 0.0,
    };
    let mut samples = vec![vec![zero; times_d.len()]; n_planets];
    sample_both_ways(
        system,
        times_d,
        integrator,
        events,
        &mut sampler,
        &mut samples,
    )?;
    Ok(samples)
}

/// Osculating **Jacobi** elements of every planet of `system` at the epochs
/// `times_d` (days, strictly increasing, on either side of the system's
/// epoch t₀ = `system.state.t`), in `frame` (module docs; the Jacobi
/// elements of [`record_history`], but at given epochs rather than on a
/// grid from t₀ forward).
///
/// The system is integrated from t₀ once forward over the epochs ≥ t₀ and
/// once backward, from the same initial state, over the earlier ones: the
/// way [`crate::model::dynamical`] integrates a fitted solution, so a
/// history made here with the same integrator follows the model's
/// trajectory. Events as `events`; a stopping event is an error
/// ([`HistoryError::Nbody`]).
pub fn record_at_epochs(
    system: &System,
    times_d: &[f64],
    integrator: SpanIntegrator,
    frame: ElementFrame,
    events: EventSettings,
) -> Result<ElementHistory, HistoryError> {
    let samples = record_samples(system, times_d, integrator, frame, events)?;
    let mut history = ElementHistory {
        times_d: times_d.to_vec(),
        planets: samples
            .iter()
            .map(|_| empty_series(times_d.len()))
            .collect(),
    };
    for (series, planet) in history.planets.iter_mut().zip(&samples) {
        for s in planet {
            push(series, s);
        }
    }
    Ok(history)
}

/// A planet's **baseline-mean elements** over a span: the elements a single
/// Keplerian, fitted to the star's RVs of an interacting system over that
/// span, estimates (see [`mean_orbits`] for the reasoning). Angles in
/// radians, of the star's reflex orbit where marked ω⋆ (ω⋆ = ω − π,
/// DESIGN §3), measured in the sky frame of the input state.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct MeanOrbit {
    /// Mean period 2π / ⟨d(λ − Ω)/dt⟩ (d), the slope of the least-squares
    /// line through the unwrapped phase λ − Ω = M + ω: the period of the
    /// planet's RV fundamental.
    pub period_d: f64,
    /// λ − Ω of that line at the system's epoch t₀ (rad, [0, 2π)): the mean
    /// longitude a Keplerian fit with Ω = 0 reports at t₀.
    pub mean_longitude: f64,
    /// Root mean square of the phase about the line (rad): how far the
    /// planet's phase is from a constant frequency over the span.
    pub phase_rms: f64,
    /// Time mean of the osculating RV semi-amplitude ⟨K⟩ (m/s), K from the
    /// mass function with the Jacobi interior mass
    /// ([`crate::kepler::semi_amplitude`]).
    pub semi_amplitude_m_s: f64,
    /// ⟨K e cos ω⋆⟩ / ⟨K⟩.
    pub e_cos_omega_star: f64,
    /// ⟨K e sin ω⋆⟩ / ⟨K⟩.
    pub e_sin_omega_star: f64,
    /// Eccentricity of the mean eccentricity vector,
    /// √(e_cos_omega_star² + e_sin_omega_star²).
    pub e: f64,
    /// ω⋆ of the mean eccentricity vector (rad, [0, 2π)).
    pub omega_star: f64,
    /// Change of the unwrapped osculating ω⋆ from the first to the last
    /// sample (rad): the apsidal precession over the span.
    pub omega_star_change: f64,
    /// Smallest and largest osculating period over the span (d).
    pub osculating_period_range_d: (f64, f64),
    /// Smallest and largest osculating eccentricity over the span.
    pub osculating_e_range: (f64, f64),
}

impl MeanOrbit {
    /// The mean eccentricity vector in the fit basis (√e cos ω⋆, √e sin ω⋆).
    pub fn sqrt_basis(&self) -> (f64, f64) {
        let s = self.e.sqrt();
        (s * self.omega_star.cos(), s * self.omega_star.sin())
    }
}

/// Least-squares line y = a + b (t − t₀): (b, a, rms of the residuals).
fn line_through(t: &[f64], y: &[f64], t0: f64) -> (f64, f64, f64) {
    let n = t.len() as f64;
    let tm = t.iter().sum::<f64>() / n;
    let ym = y.iter().sum::<f64>() / n;
    let (mut stt, mut sty) = (0.0, 0.0);
    for (ti, yi) in t.iter().zip(y) {
        stt += (ti - tm) * (ti - tm);
        sty += (ti - tm) * (yi - ym);
    }
    let b = sty / stt;
    let ss: f64 = t
        .iter()
        .zip(y)
        .map(|(ti, yi)| (yi - ym - b * (ti - tm)).powi(2))
        .sum();
    (b, ym + b * (t0 - tm), (ss / n).sqrt())
}

/// The baseline-mean elements ([`MeanOrbit`]) of every planet of `system`
/// over the span `[t_start, t_end]` (days), from its osculating Jacobi
/// elements in the sky frame at `samples` equally spaced epochs
/// ([`record_at_epochs`] with `integrator`, both ways from the system's
/// epoch t₀, which the span normally contains).
///
/// **What a Keplerian fit measures.** To first order in e a Keplerian RV
/// signal is v ≈ K [cos(M + ω⋆) + e cos(2(M + ω⋆) − ω⋆)] (the expansion of
/// the equation of the centre, ν ≈ M + 2e sin M; e.g. Murray & Dermott
/// 1999, *Solar System Dynamics*, §2.5, from memory). In an interacting
/// system, with Jacobi osculating elements, the star's velocity is exactly
/// the sum of such terms with elements that vary in time (DESIGN §3). A
/// Keplerian with fixed P, K, e, ω⋆ fitted by least squares to densely and
/// evenly sampled data therefore measures
///
/// * the frequency of the fundamental, i.e. the mean rate of the phase
///   M + ω = λ − Ω (the true longitude's mean rate) — *not* the mean
///   osculating mean motion ⟨2π/P⟩, which differs from dλ/dt by dε/dt
///   (Murray & Dermott 1999, eq. 6.145), nor the anomalistic rate dM/dt,
///   which differs from it by the apsidal precession dϖ/dt. A
///   constant-frequency model fitted to a phase φ(t) gives the
///   least-squares slope of φ: here the line through the unwrapped λ − Ω.
///   That Keplerian fits of interacting pairs return such mean periods,
///   not osculating ones, is the classic lesson of the resonant pair of
///   GJ 876 (Laughlin & Chambers 2001, ApJ 551, L109; Rivera & Lissauer
///   2001, ApJ 558, 392; from memory);
/// * the amplitude of the fundamental, the time mean ⟨K⟩;
/// * the complex amplitude of the first harmonic, K e e^{−iω⋆}, averaged
///   over the span: the projection of a slowly turning phasor onto a fixed
///   one is its mean. So the fitted eccentricity vector is
///   ⟨K e e^{iω⋆}⟩ / ⟨K⟩, the mean of the eccentricity *vector* (e, not
///   √e: the harmonic is linear in e), converted to √e cos ω⋆, √e sin ω⋆
///   only at the end. A precessing vector averages to a shorter one: its
///   mean e is below the osculating e.
///
/// The constant term K e cos ω⋆ of each Keplerian cancels the mean of the
/// cosine, so the offsets are the injected ones. These are first-order
/// statements; terms of order e² and the short-period and near-resonant
/// wobbles of the phase (reported as [`MeanOrbit::phase_rms`]) are what a
/// Keplerian cannot follow and leaves in its residuals.
///
/// **Where the mean elements are not what a Keplerian measures.** Near a
/// first-order commensurability j:(j−1) the phase of each planet wobbles
/// at the near-resonant frequency (j−1)n₁ − j n₂ (say), and that wobble
/// puts sidebands on its fundamental at frequencies that coincide with
/// harmonics of the other planet: at 2:1 the sideband n₁ + (2n₂ − n₁) of
/// the inner planet is exactly the first harmonic 2n₂ of the outer one. A
/// sum of Keplerians then gives that part of the inner planet's signal to
/// the outer planet's eccentricity vector, which comes out displaced from
/// its mean (tests/fit_dynamical_injection.rs measures this: −4σ in both
/// components for the outer planet, while the periods, amplitudes and the
/// inner planet's eccentricity vector agree with the mean elements). The
/// size of the wobble is [`MeanOrbit::phase_rms`] (times K in m/s).
///
/// **Unwrapping.** Each step of λ − Ω is predicted from the osculating
/// mean motions (as [`crate::compare::resonance::mean_motion`] does), so
/// `samples` need only resolve the wobbles, not the orbits; ω⋆ is
/// unwrapped step by step (needs a sampling much finer than the
/// precession period).
pub fn mean_orbits(
    system: &System,
    t_start: f64,
    t_end: f64,
    samples: usize,
    integrator: SpanIntegrator,
    events: EventSettings,
) -> Result<Vec<MeanOrbit>, HistoryError> {
    if !(t_start.is_finite() && t_end.is_finite() && t_end > t_start) {
        return Err(HistoryError::InvalidSetting {
            name: "t_end",
            value: t_end,
            reason: "the span needs finite t_start < t_end",
        });
    }
    if samples < MIN_SAMPLES {
        return Err(HistoryError::InvalidSetting {
            name: "samples",
            value: samples as f64,
            reason: "must be at least MIN_SAMPLES (8)",
        });
    }
    let dt = (t_end - t_start) / (samples - 1) as f64;
    let times: Vec<f64> = (0..samples).map(|i| t_start + dt * i as f64).collect();
    let series = record_samples(system, &times, integrator, ElementFrame::Reference, events)?;
    let t0 = system.state.t;
    let interior = system.interior_masses();
    let mut out = Vec::with_capacity(series.len());
    for (p, s) in series.iter().enumerate() {
        let (mass, m_inner) = (system.masses[p + 1], interior[p]);
        let mut phase = Vec::with_capacity(samples);
        let mut omega_star = Vec::with_capacity(samples);
        let (mut k_sum, mut kc_sum, mut ks_sum) = (0.0, 0.0, 0.0);
        for i in 0..samples {
            let si = &s[i];
            let u = si.lambda - si.node;
            let w = si.varpi - si.node - std::f64::consts::PI;
            if i == 0 {
                phase.push(u);
                omega_star.push(w);
            } else {
                let n_mid = 0.5 * (TAU / s[i - 1].period + TAU / si.period);
                let predicted = n_mid * (times[i] - times[i - 1]);
                let du = predicted + wrap_pi(u - phase[i - 1] - predicted);
                phase.push(phase[i - 1] + du);
                let dw = wrap_pi(w - omega_star[i - 1]);
                omega_star.push(omega_star[i - 1] + dw);
            }
            let k = semi_amplitude(mass, si.period, si.e, si.inc.sin().abs(), m_inner).ok_or(
                HistoryError::Elements {
                    planet: p,
                    t: times[i],
                    source: ElementsError::NotBound { a: si.a, e: si.e },
                },
            )?;
            k_sum += k;
            kc_sum += k * si.e * w.cos();
            ks_sum += k * si.e * w.sin();
        }
        let (rate, phase0, phase_rms) = line_through(&times, &phase, t0);
        let (ec, es) = (kc_sum / k_sum, ks_sum / k_sum);
        let range = |f: fn(&Sample) -> f64| {
            s.iter()
                .map(f)
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
                    (lo.min(x), hi.max(x))
                })
        };
        out.push(MeanOrbit {
            period_d: TAU / rate,
            mean_longitude: phase0.rem_euclid(TAU),
            phase_rms,
            semi_amplitude_m_s: k_sum / samples as f64,
            e_cos_omega_star: ec,
            e_sin_omega_star: es,
            e: ec.hypot(es),
            omega_star: es.atan2(ec).rem_euclid(TAU),
            omega_star_change: omega_star[samples - 1] - omega_star[0],
            osculating_period_range_d: range(|x| x.period),
            osculating_e_range: range(|x| x.e),
        });
    }
    Ok(out)
}

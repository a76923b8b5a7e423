//! MEGNO chaos indicator and largest Lyapunov exponent from one tangent
//! vector carried by either integrator ([`crate::nbody::variational`]).
//!
//! # What is computed
//!
//! MEGNO (Mean Exponential Growth factor of Nearby Orbits; Cincotta &
//! Simó 2000, A&AS 147, 205, eqs. 2–3):
//!
//! Y(t) = (2/t) ∫₀ᵗ (δ̇·δ / δ·δ) s ds,  ⟨Y⟩(t) = (1/t) ∫₀ᵗ Y(s) ds.
//!
//! Since δ̇·δ/δ·δ = d ln|δ|/ds, integration by parts gives the form used
//! here, which needs only |δ| at the sample times (the discrete-map form
//! of Goździewski et al. 2001, A&A 378, 569, and of Rein & Tamayo 2015,
//! MNRAS 452, 376, for symplectic maps):
//!
//! Y(t) = 2 [ L(t) − (1/t) ∫₀ᵗ L(s) ds ],  L(t) = ln(|δ(t)|/|δ(0)|).
//!
//! Both integrals are taken by the trapezoidal rule on a uniform grid of
//! sample times (default four per inner orbit; for Wisdom–Holman a whole
//! number of steps). |δ| is measured with the metric
//! |δ|² = Σ_i |δx_i|² + τ² |δv_i|², τ = P_in/(2π) (P_in the innermost
//! osculating Jacobi period), so that positions and velocities weigh
//! alike; the asymptotic values do not depend on the metric (any fixed
//! invertible linear change of the tangent coordinates changes ln|δ| by a
//! bounded amount, which ⟨Y⟩ averages away; Cincotta & Simó 2000 §2).
//! With Gauss–Radau the sum runs over the barycentric tangent vector
//! (star and planets) at the sample times. With Wisdom–Holman it runs over
//! the map's own Jacobi tangent vector (δr'_k, δv'_k) at its internal phase,
//! after the kick and half a drift before the step boundary
//! ([`WisdomHolman::map_tangent`]): the fused drift–kick sequence is the
//! map conjugated by the half drift, so |δ| differs from the boundary one
//! by the bounded tangent map of that half drift and of the Jacobi
//! transformation, and the run needs whole steps only — no output (the
//! half drift, the copies and the Jacobi → barycentric conversion of state
//! and tangent vector at every sample cost ≈ 14 % of the run at six steps
//! per sample). The MEGNO of the map is well defined: the tangent dynamics
//! of the Wisdom–Holman map is that of a symplectic map (Goździewski et
//! al. 2001; Rein & Tamayo 2016, MNRAS 459, 2275, §2 carry MEGNO with
//! WHFast the same way).
//!
//! **Renormalisation.** The equations are linear, so whenever |δ|² leaves
//! [1e-200, 1e200] at a sample the tangent vector is divided by |δ| and
//! ln|δ| is added to a running offset that enters L; nothing else changes.
//! ln|δ| is taken as ½ ln |δ|² (no square root per sample).
//!
//! # Step of the Wisdom–Holman map
//!
//! With `WhSettings::step` `None`, [`megno_run`] uses [`megno_step`]:
//! [`MEGNO_STEP_FACTOR`] (2) times the integrator's default step (P/20
//! scaled by the pericentre passage time, `nbody::wisdom_holman`), that is
//! P/10 for circular orbits and P/12.3 for the two-giant benchmark
//! (e = 0.1). An explicit step is used as given. Evidence (the example
//! `megno_step_scan`, ⟨Y⟩ after 10⁴ inner orbits, seed 1; "default" the
//! integrator's default step; Gauss–Radau, ε = 1e-9 default tolerance, as
//! the independent reference):
//!
//! | system | 0.5× | 1× | 1.5× | 2× | 2.5× | 3× | Gauss–Radau |
//! |---|---|---|---|---|---|---|---|
//! | wide pair (regular) | 2.0038 | 2.0039 | 2.0040 | 2.0041 | 2.0042 | 2.0043 | 2.0037 |
//! | eccentric wide pair, e₁ = 0.3 (regular) | 1.0536 | 1.0535 | 1.0532 | 1.0527 | 1.0522 | 1.0517 | 1.0439 |
//! | two giants (chaotic) | 45.7 | 57.1 | 50.1 | 59.9 | 65.5 | 77.2 | 45.1 |
//! | packed pair, 300 outer orbits (chaotic) | 65.5 | 75.1 | 67.2 | 67.8 | 38.7 | 56.0 | 56.7 |
//!
//! Every verdict is the same (Regular, Regular, Chaotic, Chaotic) at every
//! step and for Gauss–Radau; the regular values move by at most 0.002
//! from 0.5× to 3×, less than the map differs from the flow (0.0004 and
//! 0.01 against Gauss–Radau, alike at every step). For chaotic orbits
//! ⟨Y⟩ follows one particular diverging trajectory, so only the verdict
//! compares. Two points outside the
//! rule show what a larger step risks: steps at low-order fractions of
//! the inner period, P/8 and P/6 (2.6× and 3.5× default for the wide
//! pair), gave ⟨Y⟩ = 1.99 and 1.73 for the wide pair, and an undecided
//! verdict for the packed pair over 10⁴ inner orbits — resonances between
//! the step and the orbit, an artefact of the map (Rauch & Holman 1999,
//! AJ 117, 1087; from memory). The factor 2 keeps the step below P/10 and
//! short of those. Pinned by `tests/megno_values.rs`
//! (`megno_step_keeps_the_verdicts`).
//!
//! **Limits** (Cincotta & Simó 2000 §2): ⟨Y⟩ → 2 for quasi-periodic
//! (regular, KAM-torus) orbits, ⟨Y⟩ → 0 for stable periodic (harmonic)
//! orbits, and ⟨Y⟩ ≈ (λ/2) t for chaotic ones (λ the largest Lyapunov
//! exponent).
//!
//! **Lyapunov exponent.** Two estimates: `lyapunov_per_yr`, twice the
//! least-squares slope of ⟨Y⟩(t) over the second half of the run (the
//! MEGNO estimate; ≈ 0 within noise for regular orbits), and
//! `log_growth_per_yr` = L(T)/T (the finite-time Lyapunov estimate).
//!
//! # Classification (our thresholds)
//!
//! * [`Classification::Regular`]: ⟨Y⟩(T) ≤ 2 + [`REGULAR_MARGIN`] (0.2).
//!   A quasi-periodic orbit's ⟨Y⟩ approaches 2 with oscillations decaying
//!   roughly as 1/t; 0.2 leaves room for runs of only ~10³ orbits while
//!   staying far below the values reached by chaotic orbits whose
//!   Lyapunov time is shorter than the run. Periodic orbits (⟨Y⟩ → 0) are
//!   regular too.
//! * [`Classification::Chaotic`]: ⟨Y⟩ ≥ [`CHAOTIC_MIN`] (4, twice the
//!   regular value) at every sample of the second half of the run. A
//!   chaotic orbit keeps ⟨Y⟩ growing; a transient early episode (e.g. one
//!   scattering that leaves a regular configuration) makes ⟨Y⟩ decay as
//!   ~1/t towards 2 and is caught by requiring the whole second half above
//!   the threshold. (A first version also asked for a rising fitted slope;
//!   strongly scattering Jupiter pairs that Gauss–Radau and Wisdom–Holman
//!   both drive to ⟨Y⟩ ≈ 25–80 in 300 orbits then came out undecided in
//!   one of the two, because ⟨Y⟩ saturates once the pair is scattered.)
//! * [`Classification::Undecided`]: anything else (weak chaos with a
//!   Lyapunov time comparable to the run: run longer).
//! * [`Classification::Disrupted`]: an event stopped the run (only when
//!   the integrator's events are set to stop).

use nalgebra::Vector3;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::nbody::system::Primary;
use crate::nbody::variational::{Tangent, Variational, VariationalIntegrator};
use crate::nbody::wisdom_holman::WisdomHolman;
use crate::nbody::{Event, Integrator, NbodyError, Snapshot, System};
use crate::units::JULIAN_YEAR_D;

/// The default Wisdom–Holman step of a MEGNO run, in units of the
/// integrator's own default step (module docs, "Step of the
/// Wisdom–Holman map").
pub const MEGNO_STEP_FACTOR: f64 = 2.0;

/// The Wisdom–Holman step (days) a MEGNO run of `system` takes when its
/// settings leave the step unset: [`MEGNO_STEP_FACTOR`] times the
/// integrator's default step for the system's state (module docs).
pub fn megno_step(system: &System) -> Result<f64, MegnoError> {
    let wh = WisdomHolman::new(system, crate::nbody::wisdom_holman::WhSettings::default())?;
    Ok(MEGNO_STEP_FACTOR * wh.step())
}

/// ⟨Y⟩ at most 2 + this is regular (module docs).
pub const REGULAR_MARGIN: f64 = 0.2;
/// ⟨Y⟩ at least this (with a rising trend) is chaotic (module docs).
pub const CHAOTIC_MIN: f64 = 4.0;

/// Errors of a MEGNO run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MegnoError {
    /// Bad settings or system.
    #[error("MEGNO run refused: {0}")]
    Invalid(String),
    /// The integration failed (not an event: those end the run as
    /// [`Classification::Disrupted`]).
    #[error(transparent)]
    Nbody(#[from] NbodyError),
}

/// Settings of a MEGNO run.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct MegnoSettings {
    /// Samples of |δ| per innermost orbit (default 4).
    pub samples_per_inner_orbit: f64,
    /// Seed of the random initial tangent vector (ChaCha8).
    pub seed: u64,
}

impl Default for MegnoSettings {
    fn default() -> Self {
        MegnoSettings {
            samples_per_inner_orbit: 4.0,
            seed: 1,
        }
    }
}

/// Verdict of a MEGNO run (thresholds in the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum Classification {
    /// Quasi-periodic or periodic.
    Regular,
    /// Chaotic.
    Chaotic,
    /// Neither test passed.
    Undecided,
    /// An event stopped the integration.
    Disrupted,
}

/// Result of [`megno_run`].
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct MegnoResult {
    /// ⟨Y⟩ at the end of the run.
    pub mean_y: f64,
    /// Y at the end of the run.
    pub y: f64,
    /// Largest Lyapunov exponent from the slope of ⟨Y⟩ (1/yr, Julian years).
    pub lyapunov_per_yr: f64,
    /// Finite-time Lyapunov estimate ln(|δ(T)|/|δ(0)|)/T (1/yr).
    pub log_growth_per_yr: f64,
    /// Verdict.
    pub classification: Classification,
    /// Events recorded (and the stopping one, last, if any).
    pub events: Vec<Event>,
    /// Length integrated in days (shorter than asked when disrupted).
    pub duration: f64,
    /// Number of samples of |δ|.
    pub samples: usize,
    /// Innermost and outermost osculating Jacobi periods (days) at the start.
    pub periods: (f64, f64),
    /// (t − t₀ in days, ⟨Y⟩) at up to ~200 evenly spread samples, for plots.
    pub series: Vec<(f64, f64)>,
}

/// Squared weighted norm of a barycentric tangent vector (module docs),
/// τ in days.
fn tangent_norm2(pos: &[Vector3<f64>], vel: &[Vector3<f64>], tau: f64) -> f64 {
    let tau2 = tau * tau;
    pos.iter()
        .zip(vel)
        .map(|(p, v)| p.norm_squared() + tau2 * v.norm_squared())
        .sum::<f64>()
}

/// The integrator of a MEGNO run and how |δ| is read from it.
enum Runner {
    /// Wisdom–Holman: whole steps only, |δ| of the map's own tangent
    /// vector (Jacobi coordinates, map phase; module docs), no outputs.
    Map(Box<WisdomHolman>),
    /// Any other integrator: outputs at the sample times, |δ| of the
    /// barycentric tangent vector.
    Flow(Box<dyn Variational>, Snapshot),
}

impl Runner {
    /// Integrate to about `t` (exactly for a flow; the nearest step
    /// boundary for the map) and return the time reached and |δ|².
    fn advance(&mut self, t: f64, tau: f64) -> Result<(f64, f64), NbodyError> {
        let reached = match self {
            Runner::Map(wh) => {
                wh.advance_steps_to(t + 0.5 * wh.step())?;
                wh.time()
            }
            Runner::Flow(integ, snap) => {
                integ.advance_to(t, snap)?;
                t
            }
        };
        Ok((reached, self.norm2(tau)))
    }

    /// |δ|² of the tangent vector now (module docs).
    fn norm2(&self, tau: f64) -> f64 {
        match self {
            Runner::Map(wh) => match wh.map_tangent(0) {
                Some((r, v)) => tangent_norm2(r, v, tau),
                None => f64::NAN,
            },
            Runner::Flow(integ, _) => {
                let t = &integ.output_tangents()[0];
                tangent_norm2(&t.pos, &t.vel, tau)
            }
        }
    }

    fn scale_tangent(&mut self, factor: f64) {
        match self {
            Runner::Map(wh) => wh.scale_tangent(0, factor),
            Runner::Flow(integ, _) => integ.scale_tangent(0, factor),
        }
    }

    fn events(&self) -> &[Event] {
        match self {
            Runner::Map(wh) => wh.events(),
            Runner::Flow(integ, _) => integ.events(),
        }
    }
}

/// MEGNO ⟨Y⟩ and Lyapunov estimates of `system` over `outer_orbits`
/// periods of the outermost planet (osculating Jacobi period at the
/// start), integrated forwards by `integrator` with one tangent vector
/// (random direction from `settings.seed`, planets only, the star moved
/// so that the barycentre is not displaced). See the module docs for the
/// method, the units and the classification.
pub fn megno_run(
    system: &System,
    integrator: VariationalIntegrator,
    outer_orbits: f64,
    settings: &MegnoSettings,
) -> Result<MegnoResult, MegnoError> {
    let n = system.len();
    if n < 2 {
        return Err(MegnoError::Invalid("need at least one planet".into()));
    }
    if !(outer_orbits > 0.0 && outer_orbits.is_finite()) {
        return Err(MegnoError::Invalid(format!(
            "run length must be a positive number of orbits, got {outer_orbits}"
        )));
    }
    if !(settings.samples_per_inner_orbit >= 1.0 && settings.samples_per_inner_orbit.is_finite()) {
        return Err(MegnoError::Invalid(format!(
            "samples per inner orbit must be ≥ 1, got {}",
            settings.samples_per_inner_orbit
        )));
    }
    let period = |k: usize| -> Result<f64, MegnoError> {
        let el = system.osculating_elements(&system.state, k, Primary::Jacobi)?;
        let mu = crate::units::G * system.masses[..=k].iter().sum::<f64>();
        Ok(crate::kepler::period_from_a(el.a, mu))
    };
    let p_in = period(1)?;
    let p_out = period(n - 1)?;
    let tau = p_in / std::f64::consts::TAU;
    let length = outer_orbits * p_out;
    let mut dt = p_in / settings.samples_per_inner_orbit;
    let mut runner = match integrator {
        VariationalIntegrator::WisdomHolman(mut wh) => {
            if wh.step.is_none() {
                wh.step = Some(megno_step(system)?);
            }
            let wh = WisdomHolman::new(system, wh)?;
            // A whole number of steps between samples.
            let h = wh.step();
            dt = (dt / h).round().max(1.0) * h;
            Runner::Map(Box::new(wh))
        }
        VariationalIntegrator::GaussRadau(_) => Runner::Flow(
            integrator.build(system)?,
            Snapshot::zeros(n, system.state.t),
        ),
    };
    let samples = (length / dt).ceil() as usize;
    // Random initial tangent: planets' displacements uniform in [−1, 1]
    // (velocities over τ), star compensating the barycentre, unit norm.
    let mut rng = ChaCha8Rng::seed_from_u64(settings.seed);
    let mut t0 = Tangent::zeros(n);
    for k in 1..n {
        for c in 0..3 {
            t0.pos[k][c] = rng.random_range(-1.0..1.0);
            t0.vel[k][c] = rng.random_range(-1.0..1.0) / tau;
        }
    }
    let m0 = system.masses[0];
    let (mut sp, mut sv) = (Vector3::zeros(), Vector3::zeros());
    for k in 1..n {
        sp += t0.pos[k] * system.masses[k];
        sv += t0.vel[k] * system.masses[k];
    }
    t0.pos[0] = -sp / m0;
    t0.vel[0] = -sv / m0;
    let norm0 = tangent_norm2(&t0.pos, &t0.vel, tau).sqrt();
    for x in t0.pos.iter_mut().chain(t0.vel.iter_mut()) {
        *x /= norm0;
    }
    match &mut runner {
        Runner::Map(wh) => wh.set_tangents(std::slice::from_ref(&t0))?,
        Runner::Flow(integ, _) => integ.set_tangents(std::slice::from_ref(&t0))?,
    }
    // |δ(0)| in the metric the runner measures (1 for the barycentric one).
    let log_norm0 = 0.5 * runner.norm2(tau).ln();

    let start = system.state.t;
    let mut log_offset = -log_norm0;
    // Running trapezoid integrals of L and of Y, previous values.
    let (mut int_l, mut int_y) = (0.0, 0.0);
    let (mut l_prev, mut y_prev) = (0.0, 0.0);
    let (mut y, mut mean_y, mut l_now) = (0.0, 0.0, 0.0);
    // Least squares of ⟨Y⟩ on t over the second half.
    let (mut s1, mut st, mut sy, mut stt, mut sty) = (0.0, 0.0, 0.0, 0.0, 0.0);
    let thin = (samples / 200).max(1);
    let mut series = Vec::with_capacity(samples / thin + 2);
    let mut stopped: Option<Event> = None;
    let mut min_late = f64::INFINITY;
    let mut done = 0usize;
    let mut t_done = 0.0;
    for i in 1..=samples {
        let (t_reached, norm2) = match runner.advance(start + (i as f64 * dt).min(length), tau) {
            Ok(r) => r,
            Err(NbodyError::Stopped(ev)) => {
                stopped = Some(ev);
                break;
            }
            Err(e) => return Err(e.into()),
        };
        let t = t_reached - start;
        if !(norm2 > 0.0 && norm2.is_finite()) {
            return Err(MegnoError::Nbody(NbodyError::NonFinite { t: t_reached }));
        }
        if t <= t_done {
            // The map's last boundary is the previous sample's.
            continue;
        }
        // ln|δ| = ½ ln |δ|² (no square root).
        let log_norm = 0.5 * norm2.ln();
        l_now = log_offset + log_norm;
        if !(1e-200..=1e200).contains(&norm2) {
            runner.scale_tangent((-log_norm).exp());
            log_offset += log_norm;
        }
        let h = t - t_done;
        let inv_t = 1.0 / t;
        int_l += 0.5 * h * (l_prev + l_now);
        y = 2.0 * (l_now - int_l * inv_t);
        int_y += 0.5 * h * (y_prev + y);
        mean_y = int_y * inv_t;
        if 2.0 * t >= length {
            min_late = min_late.min(mean_y);
            s1 += 1.0;
            st += t;
            sy += mean_y;
            stt += t * t;
            sty += t * mean_y;
        }
        if i % thin == 0 || i == samples {
            series.push((t, mean_y));
        }
        l_prev = l_now;
        y_prev = y;
        t_done = t;
        done += 1;
    }
    if done > 0 && series.last().is_none_or(|p: &(f64, f64)| p.0 != t_done) {
        series.push((t_done, mean_y));
    }
    let slope = {
        let den = s1 * stt - st * st;
        if s1 >= 2.0 && den > 0.0 {
            (s1 * sty - st * sy) / den
        } else {
            0.0
        }
    };
    let mut events = runner.events().to_vec();
    let classification = if let Some(ev) = stopped {
        events.push(ev);
        Classification::Disrupted
    } else if mean_y <= 2.0 + REGULAR_MARGIN {
        Classification::Regular
    } else if min_late >= CHAOTIC_MIN && min_late.is_finite() {
        Classification::Chaotic
    } else {
        Classification::Undecided
    };
    let per_yr = JULIAN_YEAR_D;
    Ok(MegnoResult {
        mean_y,
        y,
        lyapunov_per_yr: 2.0 * slope * per_yr,
        log_growth_per_yr: if t_done > 0.0 {
            l_now / t_done * per_yr
        } else {
            0.0
        },
        classification,
        events,
        duration: t_done,
        samples: done,
        periods: (p_in, p_out),
        series,
    })
}

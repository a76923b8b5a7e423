//! The planetary system: masses, radii and a barycentric state; its
//! construction from Jacobi elements at a reference epoch (DESIGN §3),
//! coordinate views (Jacobi, astrocentric), conserved quantities and
//! osculating elements.

use nalgebra::Vector3;

use super::events::NbodyError;
use super::jacobi;
use crate::kepler::{
    Elements, a_from_period, elements_to_state, omega_planet_from_star, period_from_a,
    state_to_elements,
};
use crate::units::G;

/// Size of a planet's Jacobi orbit: its period or its semi-major axis.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum OrbitSize {
    /// Osculating Jacobi period in days (Kepler's third law with μ_k).
    Period(f64),
    /// Osculating Jacobi semi-major axis in au.
    SemiMajorAxis(f64),
}

/// Where a planet is on its Jacobi orbit at the reference epoch.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum OrbitPhase {
    /// Mean anomaly M in radians.
    MeanAnomaly(f64),
    /// Mean longitude λ = M + ω_p + Ω in radians, with the planet's
    /// ω_p = ω⋆ + π.
    MeanLongitude(f64),
}

/// One planet's mass, radius and osculating Jacobi elements at the
/// reference epoch (DESIGN §3). Angles in radians, in the sky frame
/// (+Z away from the observer).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct JacobiPlanet {
    /// Mass in M☉ (≥ 0).
    pub mass: f64,
    /// Radius in au (0: point mass).
    pub radius: f64,
    /// Period or semi-major axis of the Jacobi orbit.
    pub size: OrbitSize,
    /// Eccentricity, 0 ≤ e < 1.
    pub e: f64,
    /// Argument of periastron of the **star's** reflex orbit ω⋆; the
    /// planet's is ω⋆ + π.
    pub omega_star: f64,
    /// Mean anomaly or mean longitude at the reference epoch.
    pub phase: OrbitPhase,
    /// Inclination to the sky plane (π/2: edge-on).
    pub inc: f64,
    /// Longitude of the ascending node Ω. Only node differences are
    /// observable: by convention the innermost planet has Ω_1 = 0 and the
    /// others carry ΔΩ_k = Ω_k − Ω_1.
    pub node: f64,
}

/// Which primary osculating elements refer to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum Primary {
    /// Jacobi: body k about the centre of mass of bodies 0..k−1, with
    /// μ_k = G (m_0 + … + m_k).
    Jacobi,
    /// Astrocentric: body k about the star, with μ = G (m_0 + m_k).
    Star,
}

/// Positions (au) and velocities (au/day) of all bodies at time `t`
/// (days), barycentric and inertial; index 0 is the star.
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    /// Time in days.
    pub t: f64,
    /// Positions in au.
    pub pos: Vec<Vector3<f64>>,
    /// Velocities in au/day.
    pub vel: Vec<Vector3<f64>>,
}

impl Snapshot {
    /// A zeroed snapshot for `n` bodies at time `t`.
    pub fn zeros(n: usize, t: f64) -> Self {
        Snapshot {
            t,
            pos: vec![Vector3::zeros(); n],
            vel: vec![Vector3::zeros(); n],
        }
    }

    /// Number of bodies.
    pub fn len(&self) -> usize {
        self.pos.len()
    }

    /// True when there are no bodies.
    pub fn is_empty(&self) -> bool {
        self.pos.is_empty()
    }
}

/// A star and its planets: masses in M☉, radii in au (0 for a point mass),
/// the barycentric state, and which optional forces act.
#[derive(Debug, Clone, PartialEq)]
pub struct System {
    /// Masses in M☉; index 0 is the star.
    pub masses: Vec<f64>,
    /// Radii in au (0: point mass); index 0 is the star.
    pub radii: Vec<f64>,
    /// Barycentric state.
    pub state: Snapshot,
    /// Add the first post-Newtonian correction from the star.
    pub post_newtonian: bool,
}

impl System {
    /// A system from masses (M☉, star first), radii (au) and a barycentric
    /// state, validated: at least the star, matching lengths, star mass > 0,
    /// planet masses ≥ 0, radii ≥ 0, all finite. Post-Newtonian off.
    pub fn new(masses: Vec<f64>, radii: Vec<f64>, state: Snapshot) -> Result<Self, NbodyError> {
        let n = masses.len();
        if n == 0 || radii.len() != n || state.pos.len() != n || state.vel.len() != n {
            return Err(NbodyError::InvalidSystem(format!(
                "{n} masses, {} radii, {} positions and {} velocities: need one of each per body",
                radii.len(),
                state.pos.len(),
                state.vel.len()
            )));
        }
        if !(masses[0] > 0.0 && masses[0].is_finite()) {
            return Err(NbodyError::InvalidSystem(format!(
                "star mass must be positive and finite, got {}",
                masses[0]
            )));
        }
        for (k, (&m, &r)) in masses.iter().zip(&radii).enumerate() {
            if !(m >= 0.0 && m.is_finite() && r >= 0.0 && r.is_finite()) {
                return Err(NbodyError::InvalidSystem(format!(
                    "body {k}: mass {m} and radius {r} must be finite and non-negative"
                )));
            }
        }
        let finite = state.t.is_finite()
            && state
                .pos
                .iter()
                .chain(&state.vel)
                .all(|v| v.iter().all(|c| c.is_finite()));
        if !finite {
            return Err(NbodyError::NonFinite { t: state.t });
        }
        Ok(System {
            masses,
            radii,
            state,
            post_newtonian: false,
        })
    }

    /// A star of mass `star_mass` (M☉) and radius `star_radius` (au) with
    /// planets given by osculating Jacobi elements at `t_ref` (days),
    /// ordered by increasing period (refused otherwise), barycentre at rest
    /// at the origin. See [`System::set_jacobi_elements`].
    pub fn from_jacobi_elements(
        star_mass: f64,
        star_radius: f64,
        planets: &[JacobiPlanet],
        t_ref: f64,
    ) -> Result<Self, NbodyError> {
        let n = planets.len() + 1;
        let mut sys = System {
            masses: vec![0.0; n],
            radii: vec![0.0; n],
            state: Snapshot::zeros(n, t_ref),
            post_newtonian: false,
        };
        sys.set_jacobi_elements(star_mass, star_radius, planets, t_ref)?;
        Ok(sys)
    }

    /// Overwrite this system (masses, radii and state; `post_newtonian` is
    /// kept) from Jacobi elements, reusing its buffers when the number of
    /// bodies is unchanged (no allocation then: meant for fits).
    ///
    /// Planet k's elements describe its orbit about the centre of mass of the
    /// star and planets 1..k−1 with μ_k = G M_k, M_k = M⋆ + m_1 + … + m_k
    /// (DESIGN §3; Wisdom & Holman 1991 §3). A period is turned into a
    /// semi-major axis with that μ_k. The planet's ω is ω⋆ + π. The star's
    /// barycentric position and velocity are exactly
    /// −Σ_k (m_k/M_k) r'_k and −Σ_k (m_k/M_k) v'_k, so its velocity along
    /// +Z is the sum of the Keplerian RVs with the same elements.
    pub fn set_jacobi_elements(
        &mut self,
        star_mass: f64,
        star_radius: f64,
        planets: &[JacobiPlanet],
        t_ref: f64,
    ) -> Result<(), NbodyError> {
        let n = planets.len() + 1;
        if !(star_mass > 0.0 && star_mass.is_finite()) {
            return Err(NbodyError::InvalidSystem(format!(
                "star mass must be positive and finite, got {star_mass}"
            )));
        }
        if !(star_radius >= 0.0 && star_radius.is_finite() && t_ref.is_finite()) {
            return Err(NbodyError::InvalidSystem(format!(
                "star radius {star_radius} and reference epoch {t_ref} must be finite, radius ≥ 0"
            )));
        }
        self.masses.resize(n, 0.0);
        self.radii.resize(n, 0.0);
        self.state.pos.resize(n, Vector3::zeros());
        self.state.vel.resize(n, Vector3::zeros());
        self.state.t = t_ref;
        self.masses[0] = star_mass;
        self.radii[0] = star_radius;
        let mut interior = star_mass;
        let mut last_period = 0.0;
        for (j, p) in planets.iter().enumerate() {
            let k = j + 1;
            let bad = |what: &str| {
                Err(NbodyError::InvalidSystem(format!(
                    "planet {k}: {what} (mass {}, e {}, size {:?})",
                    p.mass, p.e, p.size
                )))
            };
            let angles_finite = [p.omega_star, p.inc, p.node].iter().all(|v| v.is_finite())
                && match p.phase {
                    OrbitPhase::MeanAnomaly(x) | OrbitPhase::MeanLongitude(x) => x.is_finite(),
                };
            if !(p.mass >= 0.0 && p.mass.is_finite() && p.radius >= 0.0 && p.radius.is_finite()) {
                return bad("mass and radius must be finite and non-negative");
            }
            if !((0.0..1.0).contains(&p.e)) {
                return bad("eccentricity must be in [0, 1)");
            }
            if !angles_finite {
                return bad("angles must be finite");
            }
            let m_k = interior + p.mass;
            let mu = G * m_k;
            let (a, period) = match p.size {
                OrbitSize::Period(per) if per > 0.0 && per.is_finite() => {
                    (a_from_period(per, mu), per)
                }
                OrbitSize::SemiMajorAxis(a) if a > 0.0 && a.is_finite() => {
                    (a, period_from_a(a, mu))
                }
                _ => return bad("period or semi-major axis must be positive and finite"),
            };
            if period <= last_period {
                return bad("planets must be ordered by increasing period");
            }
            last_period = period;
            let omega = omega_planet_from_star(p.omega_star);
            let mean_anomaly = match p.phase {
                OrbitPhase::MeanAnomaly(m) => m,
                OrbitPhase::MeanLongitude(l) => l - omega - p.node,
            };
            let el = Elements {
                a,
                e: p.e,
                inc: p.inc,
                node: p.node,
                omega,
                mean_anomaly,
            };
            let rel = elements_to_state(&el, mu)?;
            self.masses[k] = p.mass;
            self.radii[k] = p.radius;
            // Jacobi vectors parked in the state; converted below.
            self.state.pos[k] = rel.pos;
            self.state.vel[k] = rel.vel;
            interior = m_k;
        }
        // Jacobi → barycentric in place, from the outside in
        // (see [`jacobi::jacobi_to_inertial`]); barycentre at rest at 0.
        let mut com_r = Vector3::zeros();
        let mut com_v = Vector3::zeros();
        for k in (1..n).rev() {
            let m_k: f64 = self.masses[..=k].iter().sum();
            let w = self.masses[k] / m_k;
            let (rj, vj) = (self.state.pos[k], self.state.vel[k]);
            com_r -= rj * w;
            com_v -= vj * w;
            self.state.pos[k] = com_r + rj;
            self.state.vel[k] = com_v + vj;
        }
        self.state.pos[0] = com_r;
        self.state.vel[0] = com_v;
        Ok(())
    }

    /// Number of bodies (star included).
    pub fn len(&self) -> usize {
        self.masses.len()
    }

    /// True when the system has no bodies at all.
    pub fn is_empty(&self) -> bool {
        self.masses.is_empty()
    }

    /// Interior masses M_k = m_0 + … + m_k in M☉ (index 0: the star).
    pub fn interior_masses(&self) -> Vec<f64> {
        let mut out = vec![0.0; self.len()];
        jacobi::interior_masses(&self.masses, &mut out);
        out
    }

    /// Jacobi positions (au) and velocities (au/day) of `state` (entry 0:
    /// centre of mass); see [`jacobi`].
    pub fn jacobi_of(&self, state: &Snapshot) -> (Vec<Vector3<f64>>, Vec<Vector3<f64>>) {
        let n = self.len();
        let interior = self.interior_masses();
        let mut r = vec![Vector3::zeros(); n];
        let mut v = vec![Vector3::zeros(); n];
        jacobi::inertial_to_jacobi(&self.masses, &interior, &state.pos, &mut r);
        jacobi::inertial_to_jacobi(&self.masses, &interior, &state.vel, &mut v);
        (r, v)
    }

    /// Astrocentric positions (au) and velocities (au/day) of `state`
    /// (relative to the star; entry 0 is zero).
    pub fn astrocentric_of(&self, state: &Snapshot) -> (Vec<Vector3<f64>>, Vec<Vector3<f64>>) {
        let n = self.len();
        let mut r = vec![Vector3::zeros(); n];
        let mut v = vec![Vector3::zeros(); n];
        jacobi::inertial_to_astrocentric(&state.pos, &mut r);
        jacobi::inertial_to_astrocentric(&state.vel, &mut v);
        (r, v)
    }

    /// Osculating elements of planet `body` (1..N) in `state`, about the
    /// chosen primary (Jacobi with μ_k = G M_k, or the star with
    /// μ = G(m_0 + m_k)); the planet's own ω (ω⋆ = ω − π). Errors for an
    /// unbound or degenerate orbit, or a bad index.
    pub fn osculating_elements(
        &self,
        state: &Snapshot,
        body: usize,
        primary: Primary,
    ) -> Result<Elements, NbodyError> {
        if body == 0 || body >= self.len() || state.len() != self.len() {
            return Err(NbodyError::InvalidRequest(format!(
                "no planet {body} in a system of {} bodies (state of {})",
                self.len(),
                state.len()
            )));
        }
        let (r, v, mu) = match primary {
            Primary::Jacobi => {
                let (r, v) = self.jacobi_of(state);
                let m_k: f64 = self.masses[..=body].iter().sum();
                (r[body], v[body], G * m_k)
            }
            Primary::Star => (
                state.pos[body] - state.pos[0],
                state.vel[body] - state.vel[0],
                G * (self.masses[0] + self.masses[body]),
            ),
        };
        Ok(state_to_elements(&r, &v, mu)?)
    }

    /// Total energy of `state` with these masses (M☉ au² d⁻²), barycentric,
    /// Newtonian only.
    pub fn energy_of(&self, s: &Snapshot) -> f64 {
        let n = s.len();
        let mut kin = 0.0;
        let mut pot = 0.0;
        for i in 0..n {
            kin += 0.5 * self.masses[i] * s.vel[i].norm_squared();
            for j in (i + 1)..n {
                pot -= G * self.masses[i] * self.masses[j] / (s.pos[i] - s.pos[j]).norm();
            }
        }
        kin + pot
    }

    /// Energy of the post-Newtonian potential of the star in `s`,
    /// Σ_k −3 (G m_0)² m_k / (c² r_0k²) in M☉ au² d⁻² (the position-only
    /// Nobili & Roxburgh 1986 term used by the Wisdom–Holman kick); add it
    /// to [`System::energy_of`] for the conserved energy when
    /// `post_newtonian` is on.
    pub fn post_newtonian_energy_of(&self, s: &Snapshot) -> f64 {
        let gm0 = G * self.masses[0];
        let c2 = crate::units::C_AU_PER_DAY * crate::units::C_AU_PER_DAY;
        (1..s.len())
            .map(|k| {
                -3.0 * gm0 * gm0 * self.masses[k] / (c2 * (s.pos[k] - s.pos[0]).norm_squared())
            })
            .sum()
    }

    /// Total energy (kinetic + potential) in M☉ au² d⁻², barycentric.
    /// (Without the post-Newtonian term.)
    pub fn energy(&self) -> f64 {
        self.energy_of(&self.state)
    }

    /// Total angular momentum Σ m r × v in M☉ au² d⁻¹, barycentric.
    pub fn angular_momentum(&self) -> Vector3<f64> {
        self.angular_momentum_of(&self.state)
    }

    /// Total angular momentum Σ m r × v of `s` with these masses,
    /// M☉ au² d⁻¹.
    pub fn angular_momentum_of(&self, s: &Snapshot) -> Vector3<f64> {
        (0..s.len())
            .map(|i| self.masses[i] * s.pos[i].cross(&s.vel[i]))
            .sum()
    }
}

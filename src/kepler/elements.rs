//! Osculating orbital elements ↔ Cartesian state relative to a primary.
//!
//! Frame (DESIGN §3): right-handed, +Z pointing away from the observer, the
//! sky plane is XY. The inclination i is measured from the sky plane
//! (i = 90° edge-on); the ascending node is where the body crosses the sky
//! plane moving away from the observer (ż > 0), and Ω is measured in the
//! sky plane from +X towards +Y. ω here is the argument of pericentre of
//! **the body whose state is returned** (a planet's own ω, not ω⋆ of the
//! star; see [`crate::kepler::omega_planet_from_star`]).
//!
//! Formulae: Murray & Dermott (1999), *Solar System Dynamics*, §2.8
//! (eqs. 2.122 for the rotation, 2.134–2.139 for the inverse).

use nalgebra::Vector3;
use std::f64::consts::TAU;

use super::equation::{solve_kepler, wrap_two_pi};

/// Osculating Keplerian elements of a bound orbit about a primary.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Elements {
    /// Semi-major axis a in au (> 0).
    pub a: f64,
    /// Eccentricity e, 0 ≤ e < 1.
    pub e: f64,
    /// Inclination i to the sky plane, radians, 0 ≤ i ≤ π.
    pub inc: f64,
    /// Longitude of the ascending node Ω, radians.
    pub node: f64,
    /// Argument of pericentre ω of the body itself, radians.
    pub omega: f64,
    /// Mean anomaly M, radians.
    pub mean_anomaly: f64,
}

/// Errors of the element ↔ state conversions.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum ElementsError {
    /// The elements describe no bound orbit (a ≤ 0, e outside [0, 1), or a
    /// non-finite value).
    #[error("elements describe no bound orbit: a = {a}, e = {e}")]
    NotBound {
        /// Semi-major axis given.
        a: f64,
        /// Eccentricity given.
        e: f64,
    },
    /// The gravitational parameter is not positive and finite.
    #[error("gravitational parameter must be positive and finite, got {0}")]
    BadMu(f64),
    /// The state is degenerate (zero position, or radial motion with zero
    /// angular momentum) or not finite.
    #[error("state is degenerate (zero distance, zero angular momentum or not finite)")]
    Degenerate,
    /// The state is unbound (specific energy ≥ 0).
    #[error("state is unbound: specific orbital energy {0} ≥ 0")]
    Unbound(f64),
}

/// Position (au) and velocity (au/day) of a body relative to its primary.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RelativeState {
    /// Position in au.
    pub pos: Vector3<f64>,
    /// Velocity in au/day.
    pub vel: Vector3<f64>,
}

/// Cartesian state from elements, for a primary with gravitational
/// parameter `mu` = G(m_primary + m_body) in au³/d².
///
/// ```
/// use apsidal::kepler::{Elements, elements_to_state};
/// let el = Elements { a: 1.0, e: 0.0, inc: 0.0, node: 0.0, omega: 0.0, mean_anomaly: 0.0 };
/// let s = elements_to_state(&el, apsidal::units::G).unwrap();
/// assert!((s.pos.x - 1.0).abs() < 1e-15);
/// assert!((s.vel.y - apsidal::units::GAUSS_K).abs() < 1e-15);
/// ```
pub fn elements_to_state(el: &Elements, mu: f64) -> Result<RelativeState, ElementsError> {
    if !(mu > 0.0 && mu.is_finite()) {
        return Err(ElementsError::BadMu(mu));
    }
    let finite = [el.a, el.e, el.inc, el.node, el.omega, el.mean_anomaly]
        .iter()
        .all(|v| v.is_finite());
    if !finite || el.a <= 0.0 {
        return Err(ElementsError::NotBound { a: el.a, e: el.e });
    }
    let sol =
        solve_kepler(el.mean_anomaly, el.e).ok_or(ElementsError::NotBound { a: el.a, e: el.e })?;
    let e = el.e;
    let a = el.a;
    let b_fac = (1.0 - e * e).sqrt();
    // Position and velocity in the orbital plane, x towards pericentre.
    let x = a * (sol.cos_e - e);
    let y = a * b_fac * sol.sin_e;
    let n = (mu / (a * a * a)).sqrt();
    let edot = n / (1.0 - e * sol.cos_e);
    let vx = -a * sol.sin_e * edot;
    let vy = a * b_fac * sol.cos_e * edot;
    let rot = orbit_rotation(el.inc, el.node, el.omega);
    Ok(RelativeState {
        pos: rot.0 * x + rot.1 * y,
        vel: rot.0 * vx + rot.1 * vy,
    })
}

/// Unit vectors P (towards pericentre) and Q (90° ahead in the direction
/// of motion) in the sky frame: Murray & Dermott (1999) eq. 2.122.
#[inline]
pub fn orbit_rotation(inc: f64, node: f64, omega: f64) -> (Vector3<f64>, Vector3<f64>) {
    let (si, ci) = inc.sin_cos();
    let (sn, cn) = node.sin_cos();
    let (sw, cw) = omega.sin_cos();
    let p = Vector3::new(cn * cw - sn * sw * ci, sn * cw + cn * sw * ci, sw * si);
    let q = Vector3::new(-cn * sw - sn * cw * ci, -sn * sw + cn * cw * ci, cw * si);
    (p, q)
}

/// Osculating elements from a Cartesian state relative to a primary with
/// gravitational parameter `mu` (au³/d²).
///
/// Undefined angles are returned by documented rules:
/// - i = 0 or π (node undefined): Ω = 0, and ω is measured from +X
///   (it becomes the longitude of pericentre ϖ = Ω ± ω).
/// - e = 0 (pericentre undefined; in practice |e vector| ≤ 1e-12, which is
///   then set to e = 0 exactly): ω = 0, and the mean anomaly is the
///   argument of latitude u measured from the node (from +X when the node
///   is also undefined). The state is reproduced to ≈ 1e-12 a.
/// - The node counts as undefined when |k × h| ≤ 1e-14 |h|.
///
/// All returned angles are in [0, 2π) except i ∈ [0, π].
pub fn state_to_elements(
    pos: &Vector3<f64>,
    vel: &Vector3<f64>,
    mu: f64,
) -> Result<Elements, ElementsError> {
    if !(mu > 0.0 && mu.is_finite()) {
        return Err(ElementsError::BadMu(mu));
    }
    let r = pos.norm();
    let h = pos.cross(vel);
    let hn = h.norm();
    let ok = r > 0.0 && r.is_finite() && vel.norm().is_finite() && hn > 0.0;
    if !ok {
        return Err(ElementsError::Degenerate);
    }
    let v2 = vel.norm_squared();
    let energy = 0.5 * v2 - mu / r;
    if energy >= 0.0 {
        return Err(ElementsError::Unbound(energy));
    }
    let a = -mu / (2.0 * energy);
    let evec = vel.cross(&h) / mu - pos / r;
    let mut e = evec.norm();
    // atan2 rather than acos(h_z/|h|): well conditioned near i = 0 and π.
    let inc = h.x.hypot(h.y).atan2(h.z);
    // Node vector k × h = (−h_y, h_x, 0).
    let nvec = Vector3::new(-h.y, h.x, 0.0);
    let nn = nvec.norm();
    let node_defined = nn > 1e-14 * hn;
    let node = if node_defined {
        wrap_two_pi(nvec.y.atan2(nvec.x))
    } else {
        0.0
    };
    // Reference direction in the orbital plane (the node, or +X when the
    // node is undefined) and the direction 90° ahead of it.
    let hhat = h / hn;
    let ref_x = if node_defined {
        nvec / nn
    } else {
        Vector3::new(1.0, 0.0, 0.0)
    };
    let ref_y = hhat.cross(&ref_x);
    // Argument of latitude of the body.
    let u = pos.dot(&ref_y).atan2(pos.dot(&ref_x));
    const E_ZERO: f64 = 1e-12;
    let (omega, true_anom) = if e > E_ZERO {
        let w = evec.dot(&ref_y).atan2(evec.dot(&ref_x));
        (wrap_two_pi(w), u - w)
    } else {
        e = 0.0;
        (0.0, u)
    };
    // True → eccentric → mean anomaly.
    let (sf, cf) = true_anom.sin_cos();
    let b_fac = (1.0 - e * e).sqrt();
    let ecc = (b_fac * sf).atan2(e + cf);
    let mean = ecc - e * ecc.sin();
    Ok(Elements {
        a,
        e,
        inc,
        node,
        omega,
        mean_anomaly: wrap_two_pi(mean),
    })
}

/// Period in days of a bound orbit of semi-major axis `a` (au) about a
/// gravitational parameter `mu` (au³/d²): Kepler's third law P = 2π √(a³/μ).
/// Plain formula: the caller passes a > 0 and μ > 0 (validated upstream,
/// e.g. by [`elements_to_state`] or the model's parameter checks).
#[inline]
pub fn period_from_a(a: f64, mu: f64) -> f64 {
    TAU * (a * a * a / mu).sqrt()
}

/// Semi-major axis in au from the period P in days and `mu` (au³/d²):
/// a = (μ P² / 4π²)^{1/3} (Kepler's third law). Plain formula: the caller
/// passes P > 0 and μ > 0.
#[inline]
pub fn a_from_period(period: f64, mu: f64) -> f64 {
    (mu * period * period / (TAU * TAU)).cbrt()
}

//! Kepler's third law, the spectroscopic mass function solved exactly for
//! the planet's mass, and the RV semi-amplitude from masses.
//!
//! For planet k in Jacobi coordinates (DESIGN §3) the interior mass is
//! M_k = M⋆ + m_1 + … + m_k (it includes m_k), and
//!
//! m_k³ sin³ i_k / M_k² = P_k K_k³ (1 − e_k²)^{3/2} / (2π G),
//!
//! with K in au/day, P in days and masses in M☉ (e.g. Murray & Correia
//! 2010, in *Exoplanets*, ed. Seager, eq. 66, with the Jacobi interior
//! mass). The mass is solved from this exactly, never from the small-planet
//! approximation m ≪ M.

use std::f64::consts::TAU;

use crate::units::{G, m_s_to_au_per_day};

/// Mass function f = P K³ (1 − e²)^{3/2} / (2π G) in M☉, for P in days and
/// K in m/s.
#[inline]
pub fn mass_function(period: f64, k_m_s: f64, e: f64) -> f64 {
    let k = m_s_to_au_per_day(k_m_s);
    period * k * k * k * (1.0 - e * e).powf(1.5) / (TAU * G)
}

/// The planet mass m (M☉) from the semi-amplitude `k_m_s` (m/s), period
/// (days), eccentricity and sin i, given the interior mass `m_inner`
/// (M☉: the star plus all planets inside this one's Jacobi orbit, without
/// this planet). Solves m³ sin³ i = f (m_inner + m)² exactly by Newton's
/// method on φ(m) = m − (f / sin³ i)^{1/3} (m_inner + m)^{2/3}, which is
/// monotonic and convex for m > 0.
///
/// `sin_i = 1` gives the minimum mass m sin i. Returns `None` for
/// non-positive or non-finite input.
///
/// ```
/// use apsidal::kepler::{planet_mass, semi_amplitude};
/// let k = semi_amplitude(1e-3, 365.25, 0.1, 1.0, 1.0).unwrap();
/// let m = planet_mass(k, 365.25, 0.1, 1.0, 1.0).unwrap();
/// assert!((m - 1e-3).abs() < 1e-15);
/// ```
pub fn planet_mass(k_m_s: f64, period: f64, e: f64, sin_i: f64, m_inner: f64) -> Option<f64> {
    let ok = k_m_s >= 0.0
        && k_m_s.is_finite()
        && period > 0.0
        && period.is_finite()
        && (0.0..1.0).contains(&e)
        && sin_i > 0.0
        && sin_i <= 1.0 + 1e-15
        && m_inner > 0.0
        && m_inner.is_finite();
    if !ok {
        return None;
    }
    if k_m_s == 0.0 {
        return Some(0.0);
    }
    let f = mass_function(period, k_m_s, e);
    let c = (f / (sin_i * sin_i * sin_i)).cbrt();
    // Start from the small-planet solution; φ is convex, so Newton from
    // below converges monotonically.
    let mut m = c * m_inner.powf(2.0 / 3.0);
    for _ in 0..100 {
        let tot = m_inner + m;
        let t23 = tot.powf(2.0 / 3.0);
        let phi = m - c * t23;
        let dphi = 1.0 - (2.0 / 3.0) * c * t23 / tot;
        if dphi <= 0.0 {
            // The planet would outweigh the whole interior by far: the
            // iteration is still well defined from above; take a
            // bisection-safe step.
            m *= 2.0;
            continue;
        }
        let step = phi / dphi;
        m -= step;
        if step.abs() <= 1e-15 * m.abs() {
            break;
        }
    }
    (m.is_finite() && m >= 0.0).then_some(m)
}

/// Semi-amplitude K (m/s) of the star's reflex motion from the planet mass
/// `m` (M☉), period (days), eccentricity, sin i and interior mass
/// `m_inner` (M☉, without this planet):
/// K = (2πG / P)^{1/3} m sin i / (m_inner + m)^{2/3} / √(1 − e²).
pub fn semi_amplitude(m: f64, period: f64, e: f64, sin_i: f64, m_inner: f64) -> Option<f64> {
    let ok = m >= 0.0 && m.is_finite() && period > 0.0 && (0.0..1.0).contains(&e) && m_inner > 0.0;
    if !ok {
        return None;
    }
    let k = (TAU * G / period).cbrt() * m * sin_i
        / (m_inner + m).powf(2.0 / 3.0)
        / (1.0 - e * e).sqrt();
    Some(crate::units::au_per_day_to_m_s(k))
}

/// Jacobi semi-major axis (au) of planet k from its period (days), its mass
/// and the interior mass (M☉): a = (G (m_inner + m) P² / 4π²)^{1/3}.
#[inline]
pub fn jacobi_semi_major_axis(period: f64, m: f64, m_inner: f64) -> f64 {
    super::elements::a_from_period(period, G * (m_inner + m))
}

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
/// K in m/s. Plain formula for validated input (P > 0, K ≥ 0, 0 ≤ e < 1),
/// as [`planet_mass`] checks before calling it.
#[inline]
pub fn mass_function(period: f64, k_m_s: f64, e: f64) -> f64 {
    let k = m_s_to_au_per_day(k_m_s);
    period * k * k * k * (1.0 - e * e).powf(1.5) / (TAU * G)
}

/// The planet mass m (M☉) from the semi-amplitude `k_m_s` (m/s), period
/// (days), eccentricity and sin i, given the interior mass `m_inner`
/// (M☉: the star plus all planets inside this one's Jacobi orbit, without
/// this planet).
///
/// Solves m³ sin³ i = f (m_inner + m)² exactly, with f the
/// [`mass_function`]. With u = m / (m_inner + m) ∈ [0, 1) the equation
/// becomes the depressed cubic u³ + q u − q = 0, q = f / (sin³ i · m_inner),
/// whose single real root (the left side increases monotonically in u) is
/// given in closed form by Cardano's formula with Vieta's substitution,
/// u = w − q / (3w), w = ∛(q/2 · (1 + √(1 + 4q/27))), free of cancellation
/// for small q; two Newton steps on the cubic polish it to rounding for
/// any q. The mass then follows without cancellation from the cubic itself:
/// 1 − u = u³ / q, so m = m_inner · q / u².
///
/// `sin_i = 1` gives the minimum mass m sin i (see [`minimum_mass`]).
/// Returns `None` for negative, zero (except K = 0, which gives m = 0) or
/// non-finite input, e outside [0, 1) or sin i outside (0, 1].
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
    let sin_i = sin_i.min(1.0);
    let f = mass_function(period, k_m_s, e);
    let q = f / (sin_i * sin_i * sin_i * m_inner);
    if !(q > 0.0 && q.is_finite()) {
        return None;
    }
    // Cardano–Vieta root of u³ + q u − q = 0.
    let w = (0.5 * q * (1.0 + (1.0 + 4.0 * q / 27.0).sqrt())).cbrt();
    let mut u = w - q / (3.0 * w);
    for _ in 0..2 {
        let g = u * u * u + q * u - q;
        let dg = 3.0 * u * u + q;
        u -= g / dg;
    }
    let m = m_inner * q / (u * u);
    (m.is_finite() && m > 0.0).then_some(m)
}

/// Minimum planet mass m sin i (M☉): [`planet_mass`] with i = 90°, i.e. the
/// true mass of an edge-on orbit, solved exactly with the interior mass
/// `m_inner` (M☉, without this planet).
#[inline]
pub fn minimum_mass(k_m_s: f64, period: f64, e: f64, m_inner: f64) -> Option<f64> {
    planet_mass(k_m_s, period, e, 1.0, m_inner)
}

/// Masses (M☉) of several planets from their signals, each with its Jacobi
/// interior mass (DESIGN §3): planet k (ordered by period, innermost
/// first) is solved with m_inner = M⋆ + m_1 + … + m_{k−1}.
///
/// `signals` holds, per planet, (K in m/s, P in days, e, sin i); the masses
/// are written into `out` (same length). Returns `None` if the lengths
/// differ, the periods are not increasing, or any planet's input is invalid
/// (see [`planet_mass`]).
pub fn jacobi_planet_masses(
    m_star: f64,
    signals: &[(f64, f64, f64, f64)],
    out: &mut [f64],
) -> Option<()> {
    if signals.len() != out.len() || !(m_star > 0.0 && m_star.is_finite()) {
        return None;
    }
    if !signals.windows(2).all(|w| w[0].1 < w[1].1) {
        return None;
    }
    let mut m_inner = m_star;
    for (&(k, p, e, sin_i), o) in signals.iter().zip(out.iter_mut()) {
        let m = planet_mass(k, p, e, sin_i, m_inner)?;
        *o = m;
        m_inner += m;
    }
    Some(())
}

/// Semi-amplitude K (m/s) of the star's reflex motion from the planet mass
/// `m` (M☉), period (days), eccentricity, sin i and interior mass
/// `m_inner` (M☉, without this planet):
/// K = (2πG / P)^{1/3} m sin i / (m_inner + m)^{2/3} / √(1 − e²), the
/// two-body result (e.g. Lovis & Fischer 2010, in *Exoplanets*, ed. Seager)
/// with the Jacobi interior mass of DESIGN §3.
///
/// Returns `None` for a negative or non-finite mass, P ≤ 0, e outside
/// [0, 1), sin i outside [0, 1] or a non-positive interior mass.
pub fn semi_amplitude(m: f64, period: f64, e: f64, sin_i: f64, m_inner: f64) -> Option<f64> {
    let ok = m >= 0.0
        && m.is_finite()
        && period > 0.0
        && period.is_finite()
        && (0.0..1.0).contains(&e)
        && (0.0..=1.0).contains(&sin_i)
        && m_inner > 0.0
        && m_inner.is_finite();
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

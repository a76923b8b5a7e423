//! The multi-planet Keplerian RV model.

use crate::kepler::solve_kepler;

/// RV (m/s) of one Keplerian signal at `t` (days): v = K [cos(ν + ω⋆) + e cos ω⋆],
/// for period P (days), semi-amplitude K (m/s), eccentricity e, the star's
/// argument of periastron ω⋆ (rad) and mean anomaly `m_ref` at `t_ref`.
/// Returns `None` when e is outside [0, 1) or the mean anomaly is not finite.
#[inline]
pub fn keplerian_rv(
    t: f64,
    period: f64,
    k: f64,
    e: f64,
    omega_star: f64,
    m_ref: f64,
    t_ref: f64,
) -> Option<f64> {
    let m = m_ref + std::f64::consts::TAU * (t - t_ref) / period;
    let sol = solve_kepler(m, e)?;
    let den = 1.0 - e * sol.cos_e;
    let cos_nu = (sol.cos_e - e) / den;
    let sin_nu = (1.0 - e * e).sqrt() * sol.sin_e / den;
    let (sw, cw) = omega_star.sin_cos();
    Some(k * (cos_nu * cw - sin_nu * sw + e * cw))
}

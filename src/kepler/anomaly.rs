//! Conversions between mean, eccentric and true anomaly, mean longitude,
//! and the epochs of periastron and of inferior conjunction.
//!
//! Conventions (DESIGN §3): ω⋆ is the argument of periastron of the star's
//! reflex orbit; the planet's is ω⋆ + π. Inferior conjunction (transit,
//! planet between star and observer) happens when the planet is nearest the
//! observer, i.e. at true anomaly ν_c = π/2 − ω⋆: with +Z away from the
//! observer the planet's z = r sin(ν + ω_p) sin i is then most negative.
//!
//! The epoch conversions are plain formulae: the caller passes a validated
//! period (P > 0, finite), as [`crate::model::keplerian`] does.

use std::f64::consts::{FRAC_PI_2, PI, TAU};

use super::equation::{solve_kepler, wrap_pi};

/// True anomaly ν from eccentric anomaly E (radians), 0 ≤ e < 1,
/// in the same turn as E (Murray & Dermott 1999, eq. 2.46).
#[inline]
pub fn true_from_eccentric(ecc: f64, e: f64) -> f64 {
    let (s, c) = ecc.sin_cos();
    let nu = ((1.0 - e * e).sqrt() * s).atan2(c - e);
    ecc - wrap_pi(ecc - nu)
}

/// Eccentric anomaly E from true anomaly ν (radians), in the same turn as ν.
#[inline]
pub fn eccentric_from_true(nu: f64, e: f64) -> f64 {
    let (s, c) = nu.sin_cos();
    let ecc = ((1.0 - e * e).sqrt() * s).atan2(e + c);
    nu - wrap_pi(nu - ecc)
}

/// Mean anomaly M = E − e sin E from the eccentric anomaly (Kepler's equation).
#[inline]
pub fn mean_from_eccentric(ecc: f64, e: f64) -> f64 {
    ecc - e * ecc.sin()
}

/// Mean anomaly from true anomaly.
#[inline]
pub fn mean_from_true(nu: f64, e: f64) -> f64 {
    mean_from_eccentric(eccentric_from_true(nu, e), e)
}

/// True anomaly from mean anomaly (solves Kepler's equation); `None` for
/// e outside [0, 1) or non-finite M.
pub fn true_from_mean(m: f64, e: f64) -> Option<f64> {
    solve_kepler(m, e).map(|s| true_from_eccentric(s.e_anom, e))
}

/// The planet's argument of pericentre from the star's: ω_p = ω⋆ + π,
/// reduced to [0, 2π).
#[inline]
pub fn omega_planet_from_star(omega_star: f64) -> f64 {
    (omega_star + PI).rem_euclid(TAU)
}

/// The star's argument of periastron from the planet's: ω⋆ = ω_p − π,
/// reduced to [0, 2π).
#[inline]
pub fn omega_star_from_planet(omega_planet: f64) -> f64 {
    (omega_planet - PI).rem_euclid(TAU)
}

/// Mean longitude λ = M + ω_p + Ω of the planet (radians, not reduced).
#[inline]
pub fn mean_longitude(mean_anomaly: f64, omega_planet: f64, node: f64) -> f64 {
    mean_anomaly + omega_planet + node
}

/// Mean anomaly at `epoch` (days) of an orbit of period `period` (days)
/// whose periastron passage is at `t_peri`: M = 2π (t − T_p) / P.
#[inline]
pub fn mean_anomaly_at(epoch: f64, t_peri: f64, period: f64) -> f64 {
    TAU * (epoch - t_peri) / period
}

/// Time of periastron passage (days) from the mean anomaly `m` at `epoch`:
/// T_p = t − M P / 2π, the passage nearest before-or-at `epoch` when
/// 0 ≤ M < 2π.
#[inline]
pub fn time_of_periastron(epoch: f64, m: f64, period: f64) -> f64 {
    epoch - m * period / TAU
}

/// Mean anomaly at inferior conjunction (transit) for the star's argument
/// of periastron ω⋆: ν_c = π/2 − ω⋆ converted to M, in [0, 2π).
#[inline]
pub fn mean_anomaly_at_conjunction(e: f64, omega_star: f64) -> f64 {
    mean_from_true(FRAC_PI_2 - omega_star, e).rem_euclid(TAU)
}

/// Time of inferior conjunction (days): the first conjunction at or after
/// the periastron passage `t_peri` of an orbit (P, e, ω⋆).
#[inline]
pub fn time_of_conjunction(t_peri: f64, period: f64, e: f64, omega_star: f64) -> f64 {
    t_peri + mean_anomaly_at_conjunction(e, omega_star) * period / TAU
}

/// Time of periastron from a time of inferior conjunction: the inverse of
/// [`time_of_conjunction`].
#[inline]
pub fn periastron_from_conjunction(t_conj: f64, period: f64, e: f64, omega_star: f64) -> f64 {
    t_conj - mean_anomaly_at_conjunction(e, omega_star) * period / TAU
}

/// Mean anomaly from the mean longitude λ = M + ω_p + Ω (radians), the
/// inverse of [`mean_longitude`], reduced to [0, 2π).
#[inline]
pub fn mean_anomaly_from_longitude(lambda: f64, omega_planet: f64, node: f64) -> f64 {
    (lambda - omega_planet - node).rem_euclid(TAU)
}

/// Mean anomaly (radians, in [0, 2π)) at `epoch` (days) of an orbit (P, e,
/// ω⋆) with an inferior conjunction at `t_conj`: the conjunction's mean
/// anomaly ([`mean_anomaly_at_conjunction`]) advanced by 2π (t − t_c) / P.
#[inline]
pub fn mean_anomaly_from_conjunction(
    epoch: f64,
    t_conj: f64,
    period: f64,
    e: f64,
    omega_star: f64,
) -> f64 {
    (mean_anomaly_at_conjunction(e, omega_star) + mean_anomaly_at(epoch, t_conj, period))
        .rem_euclid(TAU)
}

/// Time of inferior conjunction (days) from the mean anomaly `m` at `epoch`
/// of an orbit (P, e, ω⋆): the first conjunction at or after the periastron
/// passage [`time_of_periastron`]`(epoch, m, P)`.
#[inline]
pub fn conjunction_from_mean_anomaly(
    epoch: f64,
    m: f64,
    period: f64,
    e: f64,
    omega_star: f64,
) -> f64 {
    time_of_conjunction(time_of_periastron(epoch, m, period), period, e, omega_star)
}

//! Quantities derived from a fitted parameter vector: masses (minimum and
//! true, from the exact mass function with Jacobi interior masses), semi-
//! major axes, ω of the planet, epochs of periastron and conjunction, and
//! mutual inclinations.

use serde::{Deserialize, Serialize};

use super::models::{ModelError, RvModel};
use crate::kepler::{jacobi_semi_major_axis, planet_mass, time_of_conjunction, time_of_periastron};
use crate::units::{sun_to_earth, sun_to_jupiter};

/// Derived quantities of one planet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanetDerived {
    /// Planet name.
    pub name: String,
    /// Period (d).
    pub period: f64,
    /// Semi-amplitude (m/s).
    pub semi_amplitude: f64,
    /// Eccentricity.
    pub eccentricity: f64,
    /// ω⋆ of the star's orbit (deg, [0, 360)).
    pub omega_star_deg: f64,
    /// ω of the planet's orbit, ω⋆ + 180° (deg, [0, 360)).
    pub omega_planet_deg: f64,
    /// Mean anomaly at the reference epoch (deg).
    pub mean_anomaly_deg: f64,
    /// Inclination (deg; 90 where the model assumes edge-on).
    pub inclination_deg: f64,
    /// Minimum mass m sin i (M_J), from the mass function with i = 90°
    /// applied to m sin i — i.e. the mass at sin i = 1.
    pub min_mass_jupiter: f64,
    /// Minimum mass in Earth masses.
    pub min_mass_earth: f64,
    /// True mass (M_J) at the model's inclination.
    pub mass_jupiter: f64,
    /// Jacobi semi-major axis (au).
    pub semi_major_axis: f64,
    /// A time of periastron (d): the last one at or before the reference epoch.
    pub time_of_periastron: f64,
    /// The first time of inferior conjunction after that periastron (d).
    pub time_of_conjunction: f64,
}

/// Derived quantities of every planet of `model` at the full vector `full`.
/// Masses use the interior mass M⋆ + Σ inner planets' true masses (DESIGN §3).
pub fn derive_planets(model: &RvModel, full: &[f64]) -> Result<Vec<PlanetDerived>, ModelError> {
    let planets = model.decode_planets(full)?;
    let mut interior = model.star_mass;
    let mut out = Vec::with_capacity(planets.len());
    for p in planets {
        let fail = || {
            ModelError::Evaluation(format!(
                "planet `{}`: mass function has no solution",
                p.name
            ))
        };
        let sin_i = p.inclination.sin().abs().max(1e-9);
        let m_min = planet_mass(p.semi_amplitude, p.period, p.eccentricity, 1.0, interior)
            .ok_or_else(fail)?;
        let m_true = planet_mass(p.semi_amplitude, p.period, p.eccentricity, sin_i, interior)
            .ok_or_else(fail)?;
        let a = jacobi_semi_major_axis(p.period, m_true, interior);
        interior += m_true;
        let tp = time_of_periastron(model.t_ref, p.mean_anomaly, p.period);
        let tc = time_of_conjunction(tp, p.period, p.eccentricity, p.omega_star);
        out.push(PlanetDerived {
            name: p.name,
            period: p.period,
            semi_amplitude: p.semi_amplitude,
            eccentricity: p.eccentricity,
            omega_star_deg: p.omega_star.to_degrees().rem_euclid(360.0),
            omega_planet_deg: (p.omega_star.to_degrees() + 180.0).rem_euclid(360.0),
            mean_anomaly_deg: p.mean_anomaly.to_degrees(),
            inclination_deg: p.inclination.to_degrees(),
            min_mass_jupiter: sun_to_jupiter(m_min),
            min_mass_earth: sun_to_earth(m_min),
            mass_jupiter: sun_to_jupiter(m_true),
            semi_major_axis: a,
            time_of_periastron: tp,
            time_of_conjunction: tc,
        });
    }
    Ok(out)
}

/// Mutual inclination Φ (rad) of two orbits with inclinations i₁, i₂ and
/// node difference ΔΩ (rad): cos Φ = cos i₁ cos i₂ + sin i₁ sin i₂ cos ΔΩ
/// (DESIGN §3; e.g. Murray & Dermott 1999 spherical trigonometry).
pub fn mutual_inclination(i1: f64, i2: f64, node_difference: f64) -> f64 {
    let c = i1.cos() * i2.cos() + i1.sin() * i2.sin() * node_difference.cos();
    c.clamp(-1.0, 1.0).acos()
}

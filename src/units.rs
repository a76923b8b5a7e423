//! Physical constants and unit conversions.
//!
//! Internal units (DESIGN §3): time in days, distance in au, mass in solar
//! masses, velocity in au/day inside the integrators and m/s at the edges.
//! The gravitational constant is G = k² au³ M☉⁻¹ d⁻² with the Gaussian
//! gravitational constant k (IAU 1976 system of astronomical constants).
//!
//! Mass ratios use the IAU 2015 Resolution B3 nominal values of GM for the
//! Sun, Jupiter and the Earth, so that M☉/M_J and M☉/M_⊕ are exact ratios
//! of nominal parameters rather than measured masses.

/// Gaussian gravitational constant k, in au^(3/2) M☉^(-1/2) d⁻¹.
///
/// Source: IAU 1976 system of astronomical constants (defining constant).
pub const GAUSS_K: f64 = 0.017_202_098_95;

/// Gravitational constant G = k², in au³ M☉⁻¹ d⁻².
///
/// Source: follows from [`GAUSS_K`] (IAU 1976).
pub const G: f64 = GAUSS_K * GAUSS_K;

/// Astronomical unit in metres.
///
/// Source: IAU 2012 Resolution B2 (exact, defining).
pub const AU_M: f64 = 149_597_870_700.0;

/// Day in seconds (86 400 s, the SI day used by Julian dates).
///
/// Source: IAU / SI definition of the day as 86 400 s.
pub const DAY_S: f64 = 86_400.0;

/// Julian year in days (365.25 d).
///
/// Source: IAU definition of the Julian year.
pub const JULIAN_YEAR_D: f64 = 365.25;

/// Nominal solar mass parameter (GM)☉ in m³ s⁻².
///
/// Source: IAU 2015 Resolution B3, nominal value 1.327 124 4 × 10²⁰ m³ s⁻².
pub const GM_SUN_NOMINAL: f64 = 1.327_124_4e20;

/// Nominal Jupiter mass parameter (GM)_J in m³ s⁻².
///
/// Source: IAU 2015 Resolution B3, nominal value 1.266 865 3 × 10¹⁷ m³ s⁻².
pub const GM_JUPITER_NOMINAL: f64 = 1.266_865_3e17;

/// Nominal Earth mass parameter (GM)_⊕ in m³ s⁻².
///
/// Source: IAU 2015 Resolution B3, nominal value 3.986 004 × 10¹⁴ m³ s⁻².
pub const GM_EARTH_NOMINAL: f64 = 3.986_004e14;

/// Jupiter's mass in solar masses, (GM)_J / (GM)☉ of the IAU 2015 nominal values.
pub const M_JUPITER_IN_SUN: f64 = GM_JUPITER_NOMINAL / GM_SUN_NOMINAL;

/// The Earth's mass in solar masses, (GM)_⊕ / (GM)☉ of the IAU 2015 nominal values.
pub const M_EARTH_IN_SUN: f64 = GM_EARTH_NOMINAL / GM_SUN_NOMINAL;

/// Nominal solar radius in au (IAU 2015 Resolution B3: R☉ = 695 700 km).
pub const R_SUN_AU: f64 = 695_700_000.0 / AU_M;

/// Speed of light in au/day (c = 299 792 458 m/s, SI definition).
pub const C_AU_PER_DAY: f64 = 299_792_458.0 * DAY_S / AU_M;

/// Velocity conversion factor: 1 au/day in m/s.
pub const AU_PER_DAY_IN_M_S: f64 = AU_M / DAY_S;

/// Convert a velocity from au/day to m/s.
///
/// ```
/// use apsidal::units::{au_per_day_to_m_s, m_s_to_au_per_day};
/// let v = au_per_day_to_m_s(0.01);
/// assert!((m_s_to_au_per_day(v) - 0.01).abs() < 1e-18);
/// ```
#[inline]
pub fn au_per_day_to_m_s(v: f64) -> f64 {
    v * AU_PER_DAY_IN_M_S
}

/// Convert a velocity from m/s to au/day.
#[inline]
pub fn m_s_to_au_per_day(v: f64) -> f64 {
    v / AU_PER_DAY_IN_M_S
}

/// Convert a mass from solar masses to Jupiter masses (IAU 2015 nominal ratio).
#[inline]
pub fn sun_to_jupiter(m: f64) -> f64 {
    m / M_JUPITER_IN_SUN
}

/// Convert a mass from Jupiter masses to solar masses (IAU 2015 nominal ratio).
#[inline]
pub fn jupiter_to_sun(m: f64) -> f64 {
    m * M_JUPITER_IN_SUN
}

/// Convert a mass from solar masses to Earth masses (IAU 2015 nominal ratio).
#[inline]
pub fn sun_to_earth(m: f64) -> f64 {
    m / M_EARTH_IN_SUN
}

/// Convert a mass from Earth masses to solar masses (IAU 2015 nominal ratio).
#[inline]
pub fn earth_to_sun(m: f64) -> f64 {
    m * M_EARTH_IN_SUN
}

/// Convert a mass from Jupiter masses to Earth masses (IAU 2015 nominal ratio).
#[inline]
pub fn jupiter_to_earth(m: f64) -> f64 {
    sun_to_earth(jupiter_to_sun(m))
}

/// Convert degrees to radians.
#[inline]
pub fn deg(x: f64) -> f64 {
    x.to_radians()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn iau_2015_mass_ratios() {
        // IAU 2015 Resolution B3 nominal values; the expected ratios were computed
        // with Python float division of the published nominal GM values.
        assert_relative_eq!(
            1.0 / M_JUPITER_IN_SUN,
            1_047.565_514_660_477,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            1.0 / M_EARTH_IN_SUN,
            332_946.078_328_07,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            jupiter_to_earth(1.0),
            317.828_406_594_675,
            max_relative = 1e-12
        );
    }

    #[test]
    fn gaussian_constant_matches_nominal_gm_sun() {
        // k² au³/d² expressed in SI must be close to the IAU 2015 nominal GM☉
        // (they differ at the 1e-9 level: k is a 1976 definition, the au a
        // 2012 one).
        let gm_si = G * AU_M.powi(3) / (DAY_S * DAY_S);
        assert_relative_eq!(gm_si, GM_SUN_NOMINAL, max_relative = 1e-8);
    }

    #[test]
    fn velocity_round_trip() {
        // 1 au/day = 149 597 870 700 / 86 400 m/s = 1 731 456.8368... m/s (IAU 2012 au).
        assert_relative_eq!(
            au_per_day_to_m_s(1.0),
            1_731_456.836_805_555_6,
            max_relative = 1e-15
        );
        assert_relative_eq!(
            m_s_to_au_per_day(au_per_day_to_m_s(3.7)),
            3.7,
            max_relative = 1e-15
        );
    }
}

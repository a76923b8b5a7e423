//! Resonant angles of a pair of planets near a commensurability j:(j−k),
//! and the secular angle Δϖ.
//!
//! For planets 1 (inner) and 2 (outer) near j:(j−k), the k + 1 resonant
//! angles of the d'Alembert family that involve no inclinations are
//!
//! φ_q = j λ₂ − (j−k) λ₁ − (k−q) ϖ₁ − q ϖ₂,   q = 0, …, k
//!
//! (Murray & Dermott 1999, *Solar System Dynamics*, §8.2 and Table 8.1;
//! DESIGN §5). The coefficients sum to zero (d'Alembert rule), so every φ_q is
//! independent of the origin of longitudes. The secular (apsidal) angle is
//! Δϖ = ϖ₁ − ϖ₂, *inner minus outer*, so that φ_k − φ_0 = k Δϖ.
//!
//! λ and ϖ are the planet's own mean longitude and longitude of periastron
//! (ϖ = Ω + ω of the planet). When e_i → 0, ϖ_i is ill-defined and so are
//! the angles containing it; the libration analysis will then see noise.

use super::error::ResonanceError;
use super::numerics::wrap_two_pi;
use super::series::{PlanetSeries, check_series};

/// Which resonant angle: commensurability j:(j−k) and index q (0 ≤ q ≤ k).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct AngleSpec {
    /// Outer coefficient j.
    pub j: u32,
    /// Order k.
    pub k: u32,
    /// Index q: the coefficient of −ϖ₂ (and k − q that of −ϖ₁).
    pub q: u32,
}

/// Integer coefficients of an angle in λ₁, λ₂, ϖ₁, ϖ₂.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct AngleCoefficients {
    /// Coefficient of λ₁ (inner mean longitude).
    pub lambda_inner: i64,
    /// Coefficient of λ₂ (outer mean longitude).
    pub lambda_outer: i64,
    /// Coefficient of ϖ₁ (inner longitude of periastron).
    pub varpi_inner: i64,
    /// Coefficient of ϖ₂ (outer longitude of periastron).
    pub varpi_outer: i64,
}

impl AngleCoefficients {
    /// The secular angle Δϖ = ϖ₁ − ϖ₂.
    pub const APSIDAL_DIFFERENCE: Self = Self {
        lambda_inner: 0,
        lambda_outer: 0,
        varpi_inner: 1,
        varpi_outer: -1,
    };

    /// Rate of the angle (rad/d) for given rates of λ₁, λ₂, ϖ₁, ϖ₂ (rad/d):
    /// the same linear combination.
    pub fn rate(&self, n_inner: f64, n_outer: f64, g_inner: f64, g_outer: f64) -> f64 {
        self.lambda_inner as f64 * n_inner
            + self.lambda_outer as f64 * n_outer
            + self.varpi_inner as f64 * g_inner
            + self.varpi_outer as f64 * g_outer
    }

    /// The angle (rad, wrapped to [0, 2π)) at each epoch of two planets'
    /// series, which must have equal lengths and finite values.
    pub fn series(
        &self,
        inner: &PlanetSeries,
        outer: &PlanetSeries,
    ) -> Result<Vec<f64>, ResonanceError> {
        let n = inner.lambda.len();
        check_series("inner lambda", &inner.lambda, n)?;
        check_series("inner varpi", &inner.varpi, n)?;
        check_series("outer lambda", &outer.lambda, n)?;
        check_series("outer varpi", &outer.varpi, n)?;
        // Each input is wrapped first so that j·λ of an unwrapped λ of many
        // turns does not lose digits.
        let (c1, c2, c3, c4) = (
            self.lambda_inner as f64,
            self.lambda_outer as f64,
            self.varpi_inner as f64,
            self.varpi_outer as f64,
        );
        Ok((0..n)
            .map(|i| {
                wrap_two_pi(
                    c1 * wrap_two_pi(inner.lambda[i])
                        + c2 * wrap_two_pi(outer.lambda[i])
                        + c3 * wrap_two_pi(inner.varpi[i])
                        + c4 * wrap_two_pi(outer.varpi[i]),
                )
            })
            .collect())
    }
}

impl AngleSpec {
    /// Check 1 ≤ k < j and q ≤ k.
    pub fn new(j: u32, k: u32, q: u32) -> Result<Self, ResonanceError> {
        if k >= 1 && k < j && q <= k {
            Ok(Self { j, k, q })
        } else {
            Err(ResonanceError::InvalidAngle { j, k, q })
        }
    }

    /// All k + 1 angles φ_0 … φ_k of j:(j−k).
    pub fn family(j: u32, k: u32) -> Result<Vec<Self>, ResonanceError> {
        (0..=k).map(|q| Self::new(j, k, q)).collect()
    }

    /// Coefficients of φ_q = j λ₂ − (j−k) λ₁ − (k−q) ϖ₁ − q ϖ₂.
    pub fn coefficients(&self) -> AngleCoefficients {
        AngleCoefficients {
            lambda_inner: -(i64::from(self.j) - i64::from(self.k)),
            lambda_outer: i64::from(self.j),
            varpi_inner: -(i64::from(self.k) - i64::from(self.q)),
            varpi_outer: -i64::from(self.q),
        }
    }

    /// Label, e.g. "5:2 φ1".
    pub fn label(&self) -> String {
        format!("{}:{} φ{}", self.j, self.j - self.k, self.q)
    }
}

/// Series of the resonant angle φ_q (rad, wrapped to [0, 2π)) of the pair
/// (`inner`, `outer`) at each epoch.
pub fn resonant_angle(
    inner: &PlanetSeries,
    outer: &PlanetSeries,
    spec: AngleSpec,
) -> Result<Vec<f64>, ResonanceError> {
    let spec = AngleSpec::new(spec.j, spec.k, spec.q)?;
    spec.coefficients().series(inner, outer)
}

/// Series of the secular angle Δϖ = ϖ₁ − ϖ₂ (inner minus outer; rad,
/// wrapped to [0, 2π)) at each epoch.
pub fn apsidal_difference(
    inner: &PlanetSeries,
    outer: &PlanetSeries,
) -> Result<Vec<f64>, ResonanceError> {
    AngleCoefficients::APSIDAL_DIFFERENCE.series(inner, outer)
}

//! Commensurabilities j:(j−k) near a period ratio, and the period ratios of
//! a pair of planets from their element histories.
//!
//! A commensurability j:(j−k) of order k is the period ratio
//! P_outer/P_inner = j/(j−k) > 1 (Murray & Dermott 1999, *Solar System
//! Dynamics*, §8.1). Only coprime (j, k) are listed: 4:2 is the first-order
//! 2:1, not a second-order commensurability. The fractional distance to it is
//! Δ = (P₂/P₁) / (j/(j−k)) − 1, positive wide of (outside) the
//! commensurability, as in the Kepler-multis literature (e.g. Lithwick,
//! Xie & Wu 2012, eq. 1, from memory).

use super::error::ResonanceError;
use super::numerics::fit_line;
use super::series::{ElementHistory, PlanetSeries};
use std::f64::consts::TAU;

/// Highest order k considered (DESIGN §5: k ≤ 3). The strength of a
/// resonance scales as e^k (d'Alembert rules), so beyond third order the
/// resonances of planets with moderate e are too weak to matter for RVs.
pub const MAX_ORDER: u32 = 3;

/// Default bound on j. With j ≤ 20 the first-order sequence reaches 20:19
/// (ratio 1.053), closer than any stable pair of giant planets can be
/// (two Jupiter masses about a Sun need a ratio above ~1.3 for Hill
/// stability, Gladman 1993); higher j only adds ever denser, weaker
/// commensurabilities near 1.
pub const DEFAULT_MAX_J: u32 = 20;

/// Largest accepted bound on j (guards the enumeration against silly input).
pub const MAX_J_LIMIT: u32 = 1000;

/// Threshold on |Δ| below which a commensurability is called *near*: 5 %.
///
/// A screening threshold, not a resonance test (that is the libration of the
/// resonant angles). Rationale: it includes the classic Jupiter–Saturn 5:2
/// "great inequality" (Δ ≈ −0.7 %) and the pile-up of Kepler pairs a few per
/// cent wide of first-order commensurabilities (Δ ≈ +1–2 %, Fabrycky et al.
/// 2014, from memory). Above ratio 2 the neighbouring commensurabilities of
/// order ≤ 3 (2:1, 5:2, 3:1, 4:1) are 20–33 % apart, so a ratio is near at
/// most one of them; below ~1.8 they are only 4–7 % apart (3:2, 8:5, 5:3,
/// 7:4) and nearly every ratio is near something: there the flag carries
/// little information and only the libration test of the angles decides.
pub const NEAR_THRESHOLD: f64 = 0.05;

/// One commensurability j:(j−k) and the fractional distance of a period
/// ratio from it.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Commensurability {
    /// Outer coefficient j (the outer planet makes j − k orbits while the
    /// inner makes j).
    pub j: u32,
    /// Order k (1 ≤ k ≤ [`MAX_ORDER`]).
    pub k: u32,
    /// Nominal period ratio j/(j−k).
    pub nominal_ratio: f64,
    /// Fractional distance Δ = (P₂/P₁)/(j/(j−k)) − 1 (dimensionless).
    pub delta: f64,
    /// Whether |Δ| < the threshold used ([`NEAR_THRESHOLD`] by default).
    pub near: bool,
}

impl Commensurability {
    /// Label "j:(j−k)", e.g. "5:2".
    pub fn label(&self) -> String {
        format!("{}:{}", self.j, self.j - self.k)
    }
}

fn gcd(mut a: u32, mut b: u32) -> u32 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

fn check_ratio(ratio: f64) -> Result<(), ResonanceError> {
    if ratio.is_finite() && ratio > 1.0 {
        Ok(())
    } else {
        Err(ResonanceError::InvalidRatio { value: ratio })
    }
}

fn check_max_j(max_j: u32) -> Result<(), ResonanceError> {
    if (2..=MAX_J_LIMIT).contains(&max_j) {
        Ok(())
    } else {
        Err(ResonanceError::InvalidSetting {
            name: "max_j",
            value: f64::from(max_j),
            reason: "need 2 <= max_j <= 1000",
        })
    }
}

fn check_threshold(near_threshold: f64) -> Result<(), ResonanceError> {
    if near_threshold.is_finite() && near_threshold > 0.0 {
        Ok(())
    } else {
        Err(ResonanceError::InvalidSetting {
            name: "near_threshold",
            value: near_threshold,
            reason: "must be finite and > 0",
        })
    }
}

/// Every commensurability j:(j−k) with 1 ≤ k ≤ [`MAX_ORDER`], j ≤ `max_j`
/// and gcd(j, k) = 1, with its distance from `ratio` = P₂/P₁ > 1, sorted by
/// increasing |Δ| (ties: lower order first). `near_threshold` sets the
/// [`Commensurability::near`] flag (use [`NEAR_THRESHOLD`]).
pub fn commensurabilities(
    ratio: f64,
    max_j: u32,
    near_threshold: f64,
) -> Result<Vec<Commensurability>, ResonanceError> {
    check_ratio(ratio)?;
    check_max_j(max_j)?;
    check_threshold(near_threshold)?;
    let mut out = Vec::new();
    for k in 1..=MAX_ORDER {
        for j in (k + 1)..=max_j {
            if gcd(j, k) != 1 {
                continue;
            }
            let nominal_ratio = f64::from(j) / f64::from(j - k);
            let delta = ratio / nominal_ratio - 1.0;
            out.push(Commensurability {
                j,
                k,
                nominal_ratio,
                delta,
                near: delta.abs() < near_threshold,
            });
        }
    }
    out.sort_by(|a, b| a.delta.abs().total_cmp(&b.delta.abs()).then(a.k.cmp(&b.k)));
    Ok(out)
}

/// The commensurability of order `k` nearest to `ratio` (smallest |Δ|), or
/// `None` if no j ≤ `max_j` gives order k (e.g. k = 3 with max_j < 4).
pub fn nearest_of_order(
    ratio: f64,
    k: u32,
    max_j: u32,
    near_threshold: f64,
) -> Result<Option<Commensurability>, ResonanceError> {
    if !(1..=MAX_ORDER).contains(&k) {
        return Err(ResonanceError::InvalidSetting {
            name: "k",
            value: f64::from(k),
            reason: "order must be 1, 2 or 3",
        });
    }
    Ok(commensurabilities(ratio, max_j, near_threshold)?
        .into_iter()
        .find(|c| c.k == k))
}

/// Mean and osculating period ratios of a pair of planets.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PeriodRatios {
    /// Osculating P₂/P₁ at the first epoch.
    pub osculating_start: f64,
    /// Mean P₂/P₁ = n̄₁/n̄₂ from the mean motions of [`mean_motion`].
    pub mean: f64,
    /// Mean motion n̄₁ of the inner planet (rad/d).
    pub mean_motion_inner_rad_per_d: f64,
    /// Mean motion n̄₂ of the outer planet (rad/d).
    pub mean_motion_outer_rad_per_d: f64,
    /// Mean period 2π/n̄₁ of the inner planet (d).
    pub mean_period_inner_d: f64,
    /// Mean period 2π/n̄₂ of the outer planet (d).
    pub mean_period_outer_d: f64,
}

/// Mean motion n̄ (rad/d) of one planet: the least-squares slope of its
/// unwrapped mean longitude λ(t).
///
/// Why λ and not the time average of the osculating n = 2π/P: resonant angles
/// are built from λ, and the rate that enters them is dλ/dt = n + dε/dt
/// (ε the mean longitude at epoch; Murray & Dermott 1999, eq. 6.145), which
/// differs from the osculating n by a secular term of the order of the
/// planetary masses. The slope of λ(t) is also insensitive to irregular
/// sampling, whereas a plain average of n over-weights densely sampled parts.
///
/// The unwrapping predicts each step from the osculating mean motions,
/// Δλ ≈ ½(n_{i−1} + n_i)(t_i − t_{i−1}), and adds the wrapped difference
/// between the observed and predicted steps, so it works even when the
/// sampling interval exceeds half an orbital period (output of a long
/// integration is often sparse), provided the prediction is good to < π.
pub fn mean_motion(
    times_d: &[f64],
    planet: &PlanetSeries,
    index: usize,
) -> Result<f64, ResonanceError> {
    super::series::check_times(times_d)?;
    planet.validate(times_d.len())?;
    let mut u = Vec::with_capacity(times_d.len());
    u.push(planet.lambda[0]);
    for i in 1..times_d.len() {
        let n_mid = 0.5 * (TAU / planet.period_d[i - 1] + TAU / planet.period_d[i]);
        let predicted = n_mid * (times_d[i] - times_d[i - 1]);
        let observed = planet.lambda[i] - planet.lambda[i - 1];
        let step = predicted + super::numerics::wrap_pi(observed - predicted);
        u.push(u[i - 1] + step);
    }
    let fit = fit_line(times_d, &u).ok_or(ResonanceError::TooFewSamples {
        count: times_d.len(),
        needed: 3,
    })?;
    if fit.slope > 0.0 {
        Ok(fit.slope)
    } else {
        Err(ResonanceError::NonPositiveMeanMotion {
            planet: index,
            value: fit.slope,
        })
    }
}

/// Osculating (first epoch) and mean period ratios P₂/P₁ of planets
/// `inner` and `outer` of the history. The mean ratio must exceed 1.
pub fn period_ratios(
    history: &ElementHistory,
    inner: usize,
    outer: usize,
) -> Result<PeriodRatios, ResonanceError> {
    let count = history.planets.len();
    let p1 = history
        .planets
        .get(inner)
        .ok_or(ResonanceError::PlanetIndex {
            index: inner,
            count,
        })?;
    let p2 = history
        .planets
        .get(outer)
        .ok_or(ResonanceError::PlanetIndex {
            index: outer,
            count,
        })?;
    let n1 = mean_motion(&history.times_d, p1, inner)?;
    let n2 = mean_motion(&history.times_d, p2, outer)?;
    let mean = n1 / n2;
    check_ratio(mean)?;
    Ok(PeriodRatios {
        osculating_start: p2.period_d[0] / p1.period_d[0],
        mean,
        mean_motion_inner_rad_per_d: n1,
        mean_motion_outer_rad_per_d: n2,
        mean_period_inner_d: TAU / n1,
        mean_period_outer_d: TAU / n2,
    })
}

//! Analytic stability criteria for planetary systems: Hill stability of a
//! pair (Gladman 1993), spacing in mutual Hill radii (Chambers, Wetherill &
//! Boss 1996) and AMD stability (Laskar & Petit 2017), with the flag for
//! overlap of first-order mean-motion resonances (Petit, Laskar & Boué 2017).
//!
//! Inputs: stellar mass and planet masses in M☉, semi-major axes in au,
//! eccentricities, and inclinations i and nodes Ω in radians relative to any
//! fixed reference plane (for RV fits: the sky plane, with the fitted node
//! differences). The AMD needs inclinations relative to the invariable plane;
//! it is computed here from the total angular momentum, so the reference plane
//! may be any. Mutual inclinations follow from cos Φ = cos i₁ cos i₂ +
//! sin i₁ sin i₂ cos(Ω₁ − Ω₂) (DESIGN §3).
//!
//! All criteria use the lowest order in the planet masses, as their papers
//! do: Λ_k = m_k √(G M⋆ a_k) (Laskar & Petit 2017 use m_k √(μ a_k) with
//! heliocentric masses; the difference is of order m/M⋆ and cancels in the
//! ratios used here).

use nalgebra::Vector3;
use serde::{Deserialize, Serialize};

use crate::units::G;

/// Errors of the analytic criteria.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CriteriaError {
    /// The stellar mass is not positive and finite.
    #[error("stellar mass must be positive and finite, got {0}")]
    BadStarMass(f64),
    /// A planet parameter is out of range.
    #[error("planet {index}: {what} = {value} is invalid")]
    BadPlanet {
        /// Planet index (0-based, order given).
        index: usize,
        /// Parameter name.
        what: &'static str,
        /// Value given.
        value: f64,
    },
    /// Fewer than two planets.
    #[error("stability criteria need at least two planets, got {0}")]
    TooFewPlanets(usize),
    /// Planets not ordered by strictly increasing semi-major axis.
    #[error("planets must be ordered by strictly increasing semi-major axis (planet {0})")]
    NotOrdered(usize),
    /// α or γ outside the domain of the critical AMD (0 < α < 1, 0 < γ < ∞).
    #[error("critical AMD needs 0 < α < 1 and 0 < γ < ∞, got α = {alpha}, γ = {gamma}")]
    BadPairRatio {
        /// a_inner / a_outer.
        alpha: f64,
        /// m_inner / m_outer.
        gamma: f64,
    },
    /// The total angular momentum vanishes: no invariable plane.
    #[error("total angular momentum is zero: the invariable plane is undefined")]
    NoInvariablePlane,
    /// A root finder did not converge.
    #[error("{0} did not converge")]
    NoConvergence(&'static str),
}

/// One planet's orbit for the criteria.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PlanetOrbit {
    /// Mass in M☉ (> 0).
    pub mass: f64,
    /// Semi-major axis in au (> 0).
    pub a: f64,
    /// Eccentricity, 0 ≤ e < 1.
    pub e: f64,
    /// Inclination to the reference plane, radians (0 ≤ i ≤ π); default 0.
    #[serde(default)]
    pub inc: f64,
    /// Longitude of the ascending node on the reference plane, radians; default 0.
    #[serde(default)]
    pub node: f64,
}

/// A star and its planets, innermost first.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanetarySystem {
    /// Stellar mass M⋆ in M☉.
    pub star_mass: f64,
    /// Planets ordered by increasing a.
    pub planets: Vec<PlanetOrbit>,
}

fn check_star(m: f64) -> Result<(), CriteriaError> {
    if !(m > 0.0 && m.is_finite()) {
        return Err(CriteriaError::BadStarMass(m));
    }
    Ok(())
}

fn check_planet(index: usize, p: &PlanetOrbit) -> Result<(), CriteriaError> {
    let bad = |what, value| CriteriaError::BadPlanet { index, what, value };
    if !(p.mass > 0.0 && p.mass.is_finite()) {
        return Err(bad("mass", p.mass));
    }
    if !(p.a > 0.0 && p.a.is_finite()) {
        return Err(bad("a", p.a));
    }
    if !(0.0..1.0).contains(&p.e) {
        return Err(bad("e", p.e));
    }
    if !(0.0..=std::f64::consts::PI).contains(&p.inc) {
        return Err(bad("inc", p.inc));
    }
    if !p.node.is_finite() {
        return Err(bad("node", p.node));
    }
    Ok(())
}

fn check_system(sys: &PlanetarySystem) -> Result<(), CriteriaError> {
    check_star(sys.star_mass)?;
    if sys.planets.len() < 2 {
        return Err(CriteriaError::TooFewPlanets(sys.planets.len()));
    }
    for (i, p) in sys.planets.iter().enumerate() {
        check_planet(i, p)?;
        if i > 0 && !(p.a > sys.planets[i - 1].a) {
            return Err(CriteriaError::NotOrdered(i));
        }
    }
    Ok(())
}

/// 1 − √(1 − e²) without cancellation for small e.
fn one_minus_sqrt(e: f64) -> f64 {
    e * e / (1.0 + (1.0 - e * e).sqrt())
}

/// Unit vector along an orbit's angular momentum for inclination `inc` and
/// node `node` on the reference plane (Murray & Dermott 1999, §2.8).
fn orbit_normal(inc: f64, node: f64) -> Vector3<f64> {
    let (si, ci) = inc.sin_cos();
    let (so, co) = node.sin_cos();
    Vector3::new(si * so, -si * co, ci)
}

/// Mutual inclination Φ (radians, 0 ≤ Φ ≤ π) of two orbits given on the same
/// reference plane: cos Φ = cos i₁ cos i₂ + sin i₁ sin i₂ cos(Ω₁ − Ω₂)
/// (DESIGN §3), evaluated as the angle between the orbit normals.
pub fn mutual_inclination(p1: &PlanetOrbit, p2: &PlanetOrbit) -> f64 {
    let n1 = orbit_normal(p1.inc, p1.node);
    let n2 = orbit_normal(p2.inc, p2.node);
    n1.cross(&n2).norm().atan2(n1.dot(&n2))
}

/// Mutual Hill radius R_H = [(m₁ + m₂)/(3M⋆)]^{1/3} (a₁ + a₂)/2 in au
/// (Chambers, Wetherill & Boss 1996, Icarus 119, 261, eq. 2).
pub fn mutual_hill_radius(
    star_mass: f64,
    m1: f64,
    m2: f64,
    a1: f64,
    a2: f64,
) -> Result<f64, CriteriaError> {
    check_star(star_mass)?;
    for (i, (m, a)) in [(m1, a1), (m2, a2)].into_iter().enumerate() {
        check_planet(
            i,
            &PlanetOrbit {
                mass: m,
                a,
                e: 0.0,
                inc: 0.0,
                node: 0.0,
            },
        )?;
    }
    Ok(((m1 + m2) / (3.0 * star_mass)).cbrt() * 0.5 * (a1 + a2))
}

/// Critical spacing for Hill stability of circular coplanar orbits, in mutual
/// Hill radii: Δ_c = 2√3 R_H (Gladman 1993, Icarus 106, 247, eq. 3, leading
/// order in (m/M⋆)^{1/3}; Gladman writes Δ_c ≈ 2.40 (μ₁ + μ₂)^{1/3} a₁, the
/// same to that order since 2√3 · 3^{−1/3} = 2.40).
pub const CIRCULAR_HILL_SPACING: f64 = 3.464_101_615_137_754_6;

/// Hill-stability diagnosis of one adjacent pair.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HillPair {
    /// Index of the inner planet.
    pub inner: usize,
    /// Index of the outer planet.
    pub outer: usize,
    /// Mutual Hill radius in au (Chambers et al. 1996).
    pub mutual_hill_radius_au: f64,
    /// Separation (a_out − a_in) in mutual Hill radii.
    pub spacing_mutual_hill: f64,
    /// Circular-orbit verdict: spacing > 2√3 (Gladman 1993, eq. 3).
    pub circular_hill_stable: bool,
    /// Mutual inclination used in the eccentric criterion, radians.
    pub mutual_inclination: f64,
    /// Left side of the eccentric criterion (Gladman 1993, eq. 21).
    pub gladman_lhs: f64,
    /// Right side of the eccentric criterion.
    pub gladman_rhs: f64,
    /// Eccentric verdict: lhs > rhs means Hill stable (a sufficient condition
    /// for the two orbits never to approach closely; strictly a two-planet
    /// result, applied here pair by pair).
    pub hill_stable: bool,
    /// The a_out/a_in at which lhs = rhs for these masses, eccentricities and
    /// mutual inclination (the pair is Hill stable beyond it); `None` for
    /// mutual inclinations above 90°, where the root need not be unique.
    pub critical_axis_ratio: Option<f64>,
}

/// Left and right sides of the Gladman (1993) eq. 21 criterion, lowest order
/// in the masses (after Marchal & Bozis 1982):
///
/// (μ₁ + μ₂)^{−3} (μ₁ + μ₂/λ²) c² > 1 + 3^{4/3} μ₁μ₂ / (μ₁ + μ₂)^{4/3},
///
/// μ_i = m_i/M⋆, λ = √(a₂/a₁), γ_i = √(1 − e_i²), and c² the squared total
/// angular momentum in units of a₁: c² = μ₁²γ₁² + μ₂²γ₂²λ² + 2μ₁μ₂γ₁γ₂λ cos Φ,
/// which is (μ₁γ₁ + μ₂γ₂λ)² for coplanar orbits (the non-coplanar form is
/// |L₁ + L₂|², as used by Veras & Armitage 2004, from memory).
fn gladman_sides(mu1: f64, mu2: f64, g1: f64, g2: f64, cphi: f64, lam: f64) -> (f64, f64) {
    let s = mu1 + mu2;
    let c2 = mu1 * mu1 * g1 * g1
        + mu2 * mu2 * g2 * g2 * lam * lam
        + 2.0 * mu1 * mu2 * g1 * g2 * lam * cphi;
    let lhs = (mu1 + mu2 / (lam * lam)) * c2 / (s * s * s);
    let rhs = 1.0 + 3f64.powf(4.0 / 3.0) * mu1 * mu2 / s.powf(4.0 / 3.0);
    (lhs, rhs)
}

/// Hill stability of the pair (`inner`, `outer`) about a star of mass
/// `star_mass` (Gladman 1993, eq. 21 and eq. 3; mutual Hill radius of
/// Chambers et al. 1996). See [`HillPair`].
///
/// The critical axis ratio solves lhs(λ) = rhs by bisection on [1, λ_hi]:
/// lhs(1) ≤ 1 < rhs always, and for cos Φ ≥ 0 d(lhs)/dλ · λ³ is a quartic in
/// λ with one sign change in its coefficients (Descartes), so lhs has a single
/// minimum and the root beyond λ = 1 is unique.
pub fn gladman_hill(
    star_mass: f64,
    inner: &PlanetOrbit,
    outer: &PlanetOrbit,
) -> Result<HillPair, CriteriaError> {
    check_star(star_mass)?;
    check_planet(0, inner)?;
    check_planet(1, outer)?;
    if !(outer.a > inner.a) {
        return Err(CriteriaError::NotOrdered(1));
    }
    let mu1 = inner.mass / star_mass;
    let mu2 = outer.mass / star_mass;
    let g1 = (1.0 - inner.e * inner.e).sqrt();
    let g2 = (1.0 - outer.e * outer.e).sqrt();
    let phi = mutual_inclination(inner, outer);
    let cphi = phi.cos();
    let lam = (outer.a / inner.a).sqrt();
    let (lhs, rhs) = gladman_sides(mu1, mu2, g1, g2, cphi, lam);
    let rh = mutual_hill_radius(star_mass, inner.mass, outer.mass, inner.a, outer.a)?;
    let spacing = (outer.a - inner.a) / rh;
    let critical_axis_ratio = if cphi >= 0.0 {
        let f = |l: f64| {
            let (a, b) = gladman_sides(mu1, mu2, g1, g2, cphi, l);
            a - b
        };
        let mut lo = 1.0;
        let mut hi = 2.0;
        let mut tries = 0;
        while f(hi) <= 0.0 {
            lo = hi;
            hi *= 2.0;
            tries += 1;
            if tries > 200 {
                return Err(CriteriaError::NoConvergence(
                    "Gladman critical spacing bracket",
                ));
            }
        }
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi {
                break;
            }
            if f(mid) > 0.0 {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        let l = 0.5 * (lo + hi);
        Some(l * l)
    } else {
        None
    };
    Ok(HillPair {
        inner: 0,
        outer: 1,
        mutual_hill_radius_au: rh,
        spacing_mutual_hill: spacing,
        circular_hill_stable: spacing > CIRCULAR_HILL_SPACING,
        mutual_inclination: phi,
        gladman_lhs: lhs,
        gladman_rhs: rhs,
        hill_stable: lhs > rhs,
        critical_axis_ratio,
    })
}

/// The critical relative AMD of a pair and the eccentricities that reach it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CriticalAmd {
    /// α = a_in/a_out.
    pub alpha: f64,
    /// γ = m_in/m_out.
    pub gamma: f64,
    /// Inner eccentricity at the critical point.
    pub e_inner: f64,
    /// Outer eccentricity at the critical point (= 1 − α − α e_inner).
    pub e_outer: f64,
    /// C_c(α, γ): critical AMD in units of Λ_out.
    pub value: f64,
}

/// Critical AMD C_c(α, γ) of a pair, in units of the outer planet's
/// Λ' = m' √(G M⋆ a'): the least AMD that allows the orbits to touch
/// (Laskar & Petit 2017, A&A 605, A72, §3; equation numbers from memory:
/// eqs. 26–35). Minimising γ√α (1 − √(1 − e²)) + 1 − √(1 − e'²) on the
/// collision line α e + e' = 1 − α gives the implicit equation for e
///
/// F(e) = α e + γ e / √(α (1 − e²) + γ² e²) − 1 + α = 0,
///
/// with e' = 1 − α − α e = γ e / √(α(1 − e²) + γ²e²). F is strictly
/// increasing on [0, 1] (F′ = α + α γ D^{−3/2} > 0), F(0) = α − 1 < 0 and
/// F(1) = 2α > 0, so the root is unique; it is found by Newton's method
/// safeguarded by bisection, to full relative precision also when e is tiny
/// (α → 1). Hand-written because the library root finders at hand stop on
/// an absolute tolerance.
pub fn critical_relative_amd(alpha: f64, gamma: f64) -> Result<CriticalAmd, CriteriaError> {
    critical_amd_eps(alpha, 1.0 - alpha, gamma)
}

/// As [`critical_relative_amd`] with 1 − α given separately (computed as
/// (a' − a)/a' by the callers, exact to rounding also when α → 1).
fn critical_amd_eps(alpha: f64, eps: f64, gamma: f64) -> Result<CriticalAmd, CriteriaError> {
    if !(alpha > 0.0 && alpha < 1.0 && gamma > 0.0 && gamma.is_finite() && eps > 0.0) {
        return Err(CriteriaError::BadPairRatio { alpha, gamma });
    }
    let d = |e: f64| alpha * (1.0 - e * e) + gamma * gamma * e * e;
    let f = |e: f64| alpha * e + gamma * e / d(e).sqrt() - eps;
    let fp = |e: f64| alpha + alpha * gamma / d(e).powf(1.5);
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    // Start from the small-eccentricity solution e ≈ ε √α / (γ + α^{3/2}).
    let mut x = (eps * alpha.sqrt() / (gamma + alpha.powf(1.5))).clamp(1e-300, 0.5);
    let mut converged = false;
    for _ in 0..400 {
        let fx = f(x);
        if fx == 0.0 {
            converged = true;
            break;
        }
        if fx > 0.0 {
            hi = x;
        } else {
            lo = x;
        }
        let step = fx / fp(x);
        let mut next = x - step;
        if !(next > lo && next < hi) {
            next = if lo > 0.0 { 0.5 * (lo + hi) } else { 0.5 * hi };
        }
        if (next - x).abs() <= 2.0 * f64::EPSILON * x || hi - lo <= 2.0 * f64::EPSILON * hi {
            x = next;
            converged = true;
            break;
        }
        x = next;
    }
    if !converged {
        return Err(CriteriaError::NoConvergence("critical AMD root"));
    }
    let e = x;
    let e_out = gamma * e / d(e).sqrt();
    let value = gamma * alpha.sqrt() * one_minus_sqrt(e) + one_minus_sqrt(e_out);
    Ok(CriticalAmd {
        alpha,
        gamma,
        e_inner: e,
        e_outer: e_out,
        value,
    })
}

/// Semi-major-axis ratio α_R = 1 − 1.46 ε^{2/7}, ε = (m + m′)/M⋆, above
/// which first-order mean-motion resonances overlap even for circular orbits
/// (Deck, Payne & Holman 2013; used by Petit, Laskar & Boué 2017, A&A 607,
/// A35, to bound the AMD criterion; coefficient from memory).
pub fn mmr_overlap_alpha(star_mass: f64, m1: f64, m2: f64) -> f64 {
    1.0 - 1.46 * ((m1 + m2) / star_mass).powf(2.0 / 7.0)
}

/// AMD diagnosis of one adjacent pair.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AmdPair {
    /// Index of the inner planet.
    pub inner: usize,
    /// Index of the outer planet.
    pub outer: usize,
    /// α = a_in/a_out.
    pub alpha: f64,
    /// γ = m_in/m_out.
    pub gamma: f64,
    /// Relative AMD C = (total AMD of the system)/Λ_out (Laskar & Petit 2017).
    pub relative_amd: f64,
    /// The pair's own AMD over Λ_out (for information; not conserved alone).
    pub relative_amd_pair: f64,
    /// Critical AMD and the eccentricities that reach it.
    pub critical: CriticalAmd,
    /// β = C / C_c with the system AMD.
    pub beta: f64,
    /// β with the pair's own AMD.
    pub beta_pair: f64,
    /// α_R of the MMR-overlap criterion.
    pub mmr_overlap_alpha: f64,
    /// α > α_R: first-order resonances overlap; the AMD criterion does not
    /// protect this pair.
    pub mmr_overlap: bool,
    /// Verdict: β < 1 and no MMR overlap.
    pub stable: bool,
}

/// AMD stability of a whole system.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AmdReport {
    /// Λ_k = m_k √(G M⋆ a_k), M☉ au² d⁻¹.
    pub lambdas: Vec<f64>,
    /// Inclination of each orbit to the invariable plane, radians.
    pub invariable_inclinations: Vec<f64>,
    /// AMD of each planet Λ_k (1 − √(1 − e_k²) cos i_k), M☉ au² d⁻¹.
    pub planet_amd: Vec<f64>,
    /// Total AMD, M☉ au² d⁻¹ (Laskar 1997; Laskar & Petit 2017 eq. 1).
    pub total_amd: f64,
    /// Total AMD / Λ_1: the innermost planet can reach the star (e₁ = 1)
    /// only if this is ≥ 1 (Laskar & Petit 2017 §3, point-mass star).
    pub star_collision_beta: f64,
    /// Adjacent pairs, innermost first.
    pub pairs: Vec<AmdPair>,
    /// All pairs stable and star_collision_beta < 1.
    pub amd_stable: bool,
}

/// AMD stability (Laskar & Petit 2017): the total AMD
/// Σ Λ_k (1 − √(1 − e_k²) cos i_k), with i_k relative to the invariable
/// plane (normal along Σ Λ_k √(1 − e_k²) ĥ_k), is compared for every
/// adjacent pair with the critical value Λ_out · C_c(α, γ); the system is
/// AMD-stable when every β = C/C_c < 1, since the AMD is conserved by the
/// secular dynamics and no collision is then possible.
pub fn amd_stability(system: &PlanetarySystem) -> Result<AmdReport, CriteriaError> {
    check_system(system)?;
    let pl = &system.planets;
    let lambdas: Vec<f64> = pl
        .iter()
        .map(|p| p.mass * (G * system.star_mass * p.a).sqrt())
        .collect();
    let mut total_l = Vector3::zeros();
    for (p, l) in pl.iter().zip(&lambdas) {
        total_l += orbit_normal(p.inc, p.node) * (l * (1.0 - p.e * p.e).sqrt());
    }
    let norm = total_l.norm();
    if !(norm > 0.0) {
        return Err(CriteriaError::NoInvariablePlane);
    }
    let z = total_l / norm;
    let mut incs = Vec::with_capacity(pl.len());
    let mut amd = Vec::with_capacity(pl.len());
    for (p, l) in pl.iter().zip(&lambdas) {
        let n = orbit_normal(p.inc, p.node);
        let i = n.cross(&z).norm().atan2(n.dot(&z));
        let s = (0.5 * i).sin();
        let g = (1.0 - p.e * p.e).sqrt();
        // 1 − γ cos i = (1 − γ) + γ (1 − cos i), both without cancellation.
        amd.push(l * (one_minus_sqrt(p.e) + g * 2.0 * s * s));
        incs.push(i);
    }
    let total: f64 = amd.iter().sum();
    let mut pairs = Vec::with_capacity(pl.len() - 1);
    for k in 0..pl.len() - 1 {
        let (p, q) = (&pl[k], &pl[k + 1]);
        let alpha = p.a / q.a;
        let gamma = p.mass / q.mass;
        let critical = critical_amd_eps(alpha, (q.a - p.a) / q.a, gamma)?;
        let c = total / lambdas[k + 1];
        let c_pair = (amd[k] + amd[k + 1]) / lambdas[k + 1];
        let a_r = mmr_overlap_alpha(system.star_mass, p.mass, q.mass);
        let beta = c / critical.value;
        let overlap = alpha > a_r;
        pairs.push(AmdPair {
            inner: k,
            outer: k + 1,
            alpha,
            gamma,
            relative_amd: c,
            relative_amd_pair: c_pair,
            critical,
            beta,
            beta_pair: c_pair / critical.value,
            mmr_overlap_alpha: a_r,
            mmr_overlap: overlap,
            stable: beta < 1.0 && !overlap,
        });
    }
    let star_collision_beta = total / lambdas[0];
    let amd_stable = star_collision_beta < 1.0 && pairs.iter().all(|p| p.stable);
    Ok(AmdReport {
        lambdas,
        invariable_inclinations: incs,
        planet_amd: amd,
        total_amd: total,
        star_collision_beta,
        pairs,
        amd_stable,
    })
}

/// All analytic criteria for a system.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CriteriaReport {
    /// Hill diagnosis of each adjacent pair.
    pub hill: Vec<HillPair>,
    /// AMD diagnosis.
    pub amd: AmdReport,
}

/// Run every criterion: [`gladman_hill`] on each adjacent pair and
/// [`amd_stability`] on the system.
pub fn assess(system: &PlanetarySystem) -> Result<CriteriaReport, CriteriaError> {
    check_system(system)?;
    let mut hill = Vec::with_capacity(system.planets.len() - 1);
    for k in 0..system.planets.len() - 1 {
        let mut h = gladman_hill(system.star_mass, &system.planets[k], &system.planets[k + 1])?;
        h.inner = k;
        h.outer = k + 1;
        hill.push(h);
    }
    Ok(CriteriaReport {
        hill,
        amd: amd_stability(system)?,
    })
}

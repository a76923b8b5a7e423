//! Laplace–Lagrange secular theory for N planets.
//!
//! The classical first-order (in masses), second-order (in eccentricities and
//! inclinations) secular theory of Murray & Dermott (1999), *Solar System
//! Dynamics*, ch. 7 (§7.7 for N planets, eqs. 7.128–7.131 for the matrices
//! **A** and **B**; §7.8 for the solution, scaled to the initial conditions as
//! in the two-planet case, eqs. 7.40–7.49). In the variables
//! h_j = e_j sin ϖ_j, k_j = e_j cos ϖ_j, p_j = I_j sin Ω_j, q_j = I_j cos Ω_j
//! (I_j in radians) the averaged equations are linear,
//!
//! ḣ = **A** k, k̇ = −**A** h, ṗ = **B** q, q̇ = −**B** p,
//!
//! with the solution h_j = Σ_i e_ji sin(g_i t + β_i), k_j = Σ_i e_ji cos(g_i t + β_i)
//! (and the same for p, q with I_ji, f_i, γ_i), g_i and f_i the eigenvalues of
//! **A** and **B**.
//!
//! Units: semi-major axes in au, masses in M☉, angles in radians, time `t`
//! in Julian years counted from the epoch of the initial elements, all rates
//! stored in rad/yr with deg/yr and arcsec/yr accessors. Mean motions follow
//! from Kepler's third law n_j = k √(M⋆ + m_j) / a_j^{3/2} (Gaussian
//! constant, DESIGN §3). Angles ϖ, Ω and I are measured in whatever
//! reference plane the caller uses (the theory is linear and so holds in any
//! plane close to the orbits; the invariable plane is the natural one).
//!
//! **Eigenproblem.** **A** is not symmetric, but with D = diag(m_j n_j a_j²)
//! (the weights of the second-order angular momentum deficit) the product
//! D**A** is exactly symmetric when n_j² a_j³ = G(M⋆ + m_j) and the mass
//! factor is m_k / (M⋆ + m_j), as here: D_j A_jk = G m_j m_k α ᾱ b / (4 a_j)
//! is the same for (j, k) and (k, j). We therefore diagonalise the symmetric
//! matrix S = D^{1/2} **A** D^{−1/2} with nalgebra's symmetric eigen-solver:
//! real eigenvalues are guaranteed, the eigenvectors are orthonormal, and
//! those of **A** are D^{−1/2} u_i. The same holds for **B**. Orthogonality
//! gives the amplitudes without inverting a matrix, and it is what makes
//! Σ D_j e_j² (and Σ D_j I_j²) a constant of the secular motion.

use nalgebra::{DMatrix, DVector, SymmetricEigen};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

use crate::units::{GAUSS_K, JULIAN_YEAR_D};

/// Arcseconds per radian.
const ARCSEC_PER_RAD: f64 = 180.0 * 3600.0 / PI;

/// Errors of the secular theory.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SecularError {
    /// The Laplace coefficient was asked for α outside [0, 1) or s ≤ 0.
    #[error("Laplace coefficient needs 0 ≤ α < 1 and s > 0, got α = {alpha}, s = {s}")]
    BadLaplaceArgument {
        /// Ratio of semi-major axes given.
        alpha: f64,
        /// Exponent s given.
        s: f64,
    },
    /// A numerical procedure did not reach its tolerance.
    #[error("{0} did not converge")]
    NoConvergence(&'static str),
    /// Fewer than two planets.
    #[error("secular theory needs at least two planets, got {0}")]
    TooFewPlanets(usize),
    /// The stellar mass is not positive and finite.
    #[error("stellar mass must be positive and finite, got {0}")]
    BadStarMass(f64),
    /// A planet has an invalid parameter.
    #[error("planet {index}: {what} = {value} is invalid")]
    BadPlanet {
        /// Index of the planet (0-based, in the order given).
        index: usize,
        /// Name of the parameter.
        what: &'static str,
        /// Value given.
        value: f64,
    },
    /// The planets are not ordered by strictly increasing semi-major axis.
    #[error("planets must be ordered by strictly increasing semi-major axis (planet {0})")]
    NotOrdered(usize),
    /// A planet index is out of range.
    #[error("planet index {0} out of range")]
    NoSuchPlanet(usize),
    /// The time is not finite.
    #[error("time must be finite, got {0}")]
    BadTime(f64),
    /// The longitude (of pericentre or node) is undefined because the
    /// eccentricity (or inclination) vector is zero at that time.
    #[error("the angle is undefined: its vector has zero length at that time")]
    UndefinedAngle,
}

/// Laplace coefficient b_s^{(j)}(α) by the trapezoidal rule on the integral
/// definition (Murray & Dermott 1999, eq. 6.67)
///
/// b_s^{(j)}(α) = (1/π) ∫₀^{2π} cos jψ / (1 − 2α cos ψ + α²)^s dψ.
///
/// Why the trapezoidal rule: the integrand is periodic and analytic in the
/// strip |Im ψ| < ln(1/α), so the N-point rule is exact for every Fourier
/// harmonic below N and its error is the aliased harmonics b^{(N±j)}, which
/// fall like α^N (Trefethen & Weideman 2014, SIAM Review 56, 385, "The
/// exponentially convergent trapezoidal rule"). Gauss or Simpson rules
/// would be slower here: they treat a periodic function as a general one.
/// N starts from the estimate α^{N−j} < 10⁻¹⁸ and is doubled until two
/// successive sums agree to 10⁻¹⁵ relative.
///
/// Accuracy limit: the harmonics cancel, so the relative rounding error is
/// about 10⁻¹⁶ · b^{(0)}/b^{(j)} ≈ 10⁻¹⁶ α^{−j}. [`laplace_coefficient`]
/// therefore switches to the series for small α.
pub fn laplace_coefficient_quadrature(s: f64, j: u32, alpha: f64) -> Result<f64, SecularError> {
    check_laplace_args(s, alpha)?;
    if alpha == 0.0 {
        return Ok(if j == 0 { 2.0 } else { 0.0 });
    }
    let decay = -alpha.ln();
    let jf = f64::from(j);
    let estimate = 2.0 * jf + 42.0 / decay + 16.0;
    const MAX_N: f64 = 4_194_304.0;
    if estimate > MAX_N {
        return Err(SecularError::NoConvergence(
            "Laplace-coefficient quadrature",
        ));
    }
    let mut n = estimate.ceil() as usize;
    let (mut previous, _) = trapezoid_sum(s, jf, alpha, n);
    while (n as f64) < MAX_N {
        n *= 2;
        let (current, abs_mean) = trapezoid_sum(s, jf, alpha, n);
        // Converged to 1e-15 relative, or down to the rounding floor set by
        // the cancelling harmonics (≈ 1e-16 of the mean |integrand|).
        let scale = (current.abs() * 1e-15).max(abs_mean * 1e-14);
        if (current - previous).abs() <= scale {
            return Ok(current);
        }
        previous = current;
    }
    Err(SecularError::NoConvergence(
        "Laplace-coefficient quadrature",
    ))
}

/// The N-point trapezoidal sum (2/N) Σ_k cos(jψ_k) (1 − 2α cos ψ_k + α²)^{−s},
/// and the same sum of absolute values (the rounding scale).
fn trapezoid_sum(s: f64, j: f64, alpha: f64, n: usize) -> (f64, f64) {
    let h = 2.0 * PI / n as f64;
    // 1 − 2α cos ψ + α² written as (1 − α)² + 4α sin²(ψ/2): no cancellation
    // near ψ = 0 when α → 1 (the direct form loses ~ε/(1 − α)² there).
    let om2 = (1.0 - alpha) * (1.0 - alpha);
    let mut sum = 0.0;
    let mut abs_sum = 0.0;
    for k in 0..n {
        let psi = h * k as f64;
        let sh = (0.5 * psi).sin();
        let term = (j * psi).cos() * (om2 + 4.0 * alpha * sh * sh).powf(-s);
        sum += term;
        abs_sum += term.abs();
    }
    (2.0 * sum / n as f64, 2.0 * abs_sum / n as f64)
}

/// Laplace coefficient b_s^{(j)}(α) from the hypergeometric series
/// (Murray & Dermott 1999, eq. 6.68):
///
/// b_s^{(j)}(α) = 2 (s)_j / j! · α^j · ₂F₁(s, s + j; j + 1; α²),
///
/// summed term by term until a term falls below 10⁻¹⁷ of the sum. Converges
/// like α^{2n}: fast for small α, slow near α = 1 (up to 10⁶ terms allowed).
pub fn laplace_coefficient_series(s: f64, j: u32, alpha: f64) -> Result<f64, SecularError> {
    check_laplace_args(s, alpha)?;
    let mut prefactor = 2.0;
    for m in 0..j {
        let m = f64::from(m);
        prefactor *= (s + m) / (m + 1.0) * alpha;
    }
    let jf = f64::from(j);
    let x = alpha * alpha;
    let mut term = 1.0;
    let mut sum = 1.0;
    for n in 0..1_000_000u32 {
        let n = f64::from(n);
        term *= (s + n) * (s + jf + n) / ((jf + 1.0 + n) * (n + 1.0)) * x;
        sum += term;
        if term.abs() <= 1e-17 * sum.abs() {
            return Ok(prefactor * sum);
        }
    }
    Err(SecularError::NoConvergence("Laplace-coefficient series"))
}

/// Laplace coefficient b_s^{(j)}(α), 0 ≤ α < 1, s > 0.
///
/// Uses [`laplace_coefficient_series`] for α ≤ 0.3 (where it converges in a
/// few dozen terms and has no cancellation) and
/// [`laplace_coefficient_quadrature`] otherwise (exponentially convergent,
/// and free of the series' slow convergence near α = 1).
pub fn laplace_coefficient(s: f64, j: u32, alpha: f64) -> Result<f64, SecularError> {
    if alpha <= 0.3 {
        laplace_coefficient_series(s, j, alpha)
    } else {
        laplace_coefficient_quadrature(s, j, alpha)
    }
}

fn check_laplace_args(s: f64, alpha: f64) -> Result<(), SecularError> {
    if !(s > 0.0 && s.is_finite() && (0.0..1.0).contains(&alpha)) {
        return Err(SecularError::BadLaplaceArgument { alpha, s });
    }
    Ok(())
}

/// One planet's initial osculating (or mean) elements for the secular theory.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SecularPlanet {
    /// Mass in M☉ (> 0).
    pub mass: f64,
    /// Semi-major axis in au (> 0).
    pub a: f64,
    /// Eccentricity, 0 ≤ e < 1 (the theory assumes e ≪ 1).
    pub e: f64,
    /// Longitude of pericentre ϖ = Ω + ω (planet's ω), radians.
    pub varpi: f64,
    /// Inclination to the reference plane, radians (the theory assumes I ≪ 1).
    pub inc: f64,
    /// Longitude of the ascending node Ω on the reference plane, radians.
    pub node: f64,
}

/// A star and its planets, ordered by increasing semi-major axis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SecularSystem {
    /// Stellar mass M⋆ in M☉.
    pub star_mass: f64,
    /// Planets, innermost first.
    pub planets: Vec<SecularPlanet>,
}

/// The secular matrices and their normal modes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SecularModes {
    /// Mean motions n_j, rad/yr.
    pub mean_motions: Vec<f64>,
    /// Matrix **A** (eccentricities and pericentres), rad/yr
    /// (Murray & Dermott 1999, eqs. 7.128–7.129).
    pub a_matrix: DMatrix<f64>,
    /// Matrix **B** (inclinations and nodes), rad/yr (eqs. 7.130–7.131).
    pub b_matrix: DMatrix<f64>,
    /// Eigenfrequencies g_i of **A**, rad/yr, ascending.
    pub g: Vec<f64>,
    /// Eigenfrequencies f_i of **B**, rad/yr, ascending.
    pub f: Vec<f64>,
    /// Eigenvectors of **A** (column i belongs to g_i), normalised so that
    /// Σ_j D_j v_ji² = 1 with D_j = m_j n_j a_j².
    pub g_vectors: DMatrix<f64>,
    /// Eigenvectors of **B** (column i belongs to f_i), same normalisation.
    pub f_vectors: DMatrix<f64>,
    /// Weights D_j = m_j n_j a_j² (M☉ au² rad/yr).
    pub weights: Vec<f64>,
}

impl SecularModes {
    /// Eigenfrequencies g_i in degrees per year.
    pub fn g_deg_per_yr(&self) -> Vec<f64> {
        self.g.iter().map(|x| x.to_degrees()).collect()
    }
    /// Eigenfrequencies g_i in arcseconds per year.
    pub fn g_arcsec_per_yr(&self) -> Vec<f64> {
        self.g.iter().map(|x| x * ARCSEC_PER_RAD).collect()
    }
    /// Eigenfrequencies f_i in degrees per year.
    pub fn f_deg_per_yr(&self) -> Vec<f64> {
        self.f.iter().map(|x| x.to_degrees()).collect()
    }
    /// Eigenfrequencies f_i in arcseconds per year.
    pub fn f_arcsec_per_yr(&self) -> Vec<f64> {
        self.f.iter().map(|x| x * ARCSEC_PER_RAD).collect()
    }
}

fn validate(system: &SecularSystem) -> Result<(), SecularError> {
    let n = system.planets.len();
    if n < 2 {
        return Err(SecularError::TooFewPlanets(n));
    }
    if !(system.star_mass > 0.0 && system.star_mass.is_finite()) {
        return Err(SecularError::BadStarMass(system.star_mass));
    }
    for (index, p) in system.planets.iter().enumerate() {
        let bad = |what, value| SecularError::BadPlanet { index, what, value };
        if !(p.mass > 0.0 && p.mass.is_finite()) {
            return Err(bad("mass", p.mass));
        }
        if !(p.a > 0.0 && p.a.is_finite()) {
            return Err(bad("a", p.a));
        }
        if !(0.0..1.0).contains(&p.e) {
            return Err(bad("e", p.e));
        }
        if !p.varpi.is_finite() {
            return Err(bad("varpi", p.varpi));
        }
        if !(p.inc.is_finite() && p.inc.abs() < PI) {
            return Err(bad("inc", p.inc));
        }
        if !p.node.is_finite() {
            return Err(bad("node", p.node));
        }
        if index > 0 && !(p.a > system.planets[index - 1].a) {
            return Err(SecularError::NotOrdered(index));
        }
    }
    Ok(())
}

/// Build **A** and **B** and their normal modes (Murray & Dermott 1999,
/// §7.7, eqs. 7.128–7.131):
///
/// A_jj = +n_j/4 Σ_{k≠j} m_k/(M⋆+m_j) α_jk ᾱ_jk b^{(1)}_{3/2}(α_jk),
/// A_jk = −n_j/4 m_k/(M⋆+m_j) α_jk ᾱ_jk b^{(2)}_{3/2}(α_jk),
/// B_jj = −n_j/4 Σ_{k≠j} m_k/(M⋆+m_j) α_jk ᾱ_jk b^{(1)}_{3/2}(α_jk),
/// B_jk = +n_j/4 m_k/(M⋆+m_j) α_jk ᾱ_jk b^{(1)}_{3/2}(α_jk),
///
/// with α_jk = min(a_j, a_k)/max(a_j, a_k), and ᾱ_jk = α_jk when the
/// perturber k is exterior (a_j < a_k), 1 when it is interior.
/// The eigenproblem is solved in symmetric form (see the module docs).
pub fn secular_modes(system: &SecularSystem) -> Result<SecularModes, SecularError> {
    validate(system)?;
    let np = system.planets.len();
    let ms = system.star_mass;
    let pl = &system.planets;
    let mean_motions: Vec<f64> = pl
        .iter()
        .map(|p| GAUSS_K * (ms + p.mass).sqrt() / p.a.powf(1.5) * JULIAN_YEAR_D)
        .collect();
    let mut a_mat = DMatrix::<f64>::zeros(np, np);
    let mut b_mat = DMatrix::<f64>::zeros(np, np);
    for j in 0..np {
        for k in 0..np {
            if j == k {
                continue;
            }
            let (alpha, alpha_bar) = if pl[j].a < pl[k].a {
                let al = pl[j].a / pl[k].a;
                (al, al)
            } else {
                (pl[k].a / pl[j].a, 1.0)
            };
            let c = 0.25 * mean_motions[j] * pl[k].mass / (ms + pl[j].mass) * alpha * alpha_bar;
            let b1 = laplace_coefficient(1.5, 1, alpha)?;
            let b2 = laplace_coefficient(1.5, 2, alpha)?;
            a_mat[(j, j)] += c * b1;
            a_mat[(j, k)] = -c * b2;
            b_mat[(j, j)] -= c * b1;
            b_mat[(j, k)] = c * b1;
        }
    }
    let weights: Vec<f64> = pl
        .iter()
        .zip(&mean_motions)
        .map(|(p, n)| p.mass * n * p.a * p.a)
        .collect();
    let (g, g_vectors) = symmetric_modes(&a_mat, &weights);
    let (f, f_vectors) = symmetric_modes(&b_mat, &weights);
    Ok(SecularModes {
        mean_motions,
        a_matrix: a_mat,
        b_matrix: b_mat,
        g,
        f,
        g_vectors,
        f_vectors,
        weights,
    })
}

/// Eigen-decomposition of M through S = D^{1/2} M D^{−1/2} (symmetric).
/// Returns ascending eigenvalues and eigenvectors of M, D-orthonormal.
fn symmetric_modes(m: &DMatrix<f64>, weights: &[f64]) -> (Vec<f64>, DMatrix<f64>) {
    let n = weights.len();
    let sq: Vec<f64> = weights.iter().map(|w| w.sqrt()).collect();
    let mut s = DMatrix::<f64>::zeros(n, n);
    for j in 0..n {
        for k in 0..n {
            s[(j, k)] = m[(j, k)] * sq[j] / sq[k];
        }
    }
    // D M is symmetric to rounding; remove the rounding asymmetry.
    let s = (&s + s.transpose()) * 0.5;
    let eig = SymmetricEigen::new(s);
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&x, &y| eig.eigenvalues[x].total_cmp(&eig.eigenvalues[y]));
    let values = order.iter().map(|&i| eig.eigenvalues[i]).collect();
    let mut vectors = DMatrix::<f64>::zeros(n, n);
    for (col, &i) in order.iter().enumerate() {
        // Fix the sign: the largest component positive (reproducible output).
        let u = eig.eigenvectors.column(i);
        let big = u
            .iter()
            .fold(0.0f64, |acc, x| if x.abs() > acc.abs() { *x } else { acc });
        let sign = if big < 0.0 { -1.0 } else { 1.0 };
        for j in 0..n {
            vectors[(j, col)] = sign * u[j] / sq[j];
        }
    }
    (values, vectors)
}

/// The secular solution fitted to the initial conditions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SecularSolution {
    /// Matrices and modes.
    pub modes: SecularModes,
    /// Eccentricity amplitudes e_ji (row j planet, column i mode), so that
    /// h_j = Σ_i e_ji sin(g_i t + β_i), k_j = Σ_i e_ji cos(g_i t + β_i).
    pub ecc_amplitudes: DMatrix<f64>,
    /// Phases β_i, radians.
    pub ecc_phases: Vec<f64>,
    /// Inclination amplitudes I_ji (radians), p_j = Σ_i I_ji sin(f_i t + γ_i),
    /// q_j = Σ_i I_ji cos(f_i t + γ_i).
    pub inc_amplitudes: DMatrix<f64>,
    /// Phases γ_i, radians.
    pub inc_phases: Vec<f64>,
}

/// Solve the secular problem for the initial elements of `system`.
///
/// The mode amplitudes follow from h(0) = V x, k(0) = V y with x_i = S_i sin β_i,
/// y_i = S_i cos β_i (Murray & Dermott 1999, eqs. 7.47–7.49 for two planets,
/// the same for N); with the D-orthonormal eigenvectors V⁻¹ = Vᵀ D, so
/// x = Vᵀ D h(0) exactly, without a matrix inversion.
pub fn solve_secular(system: &SecularSystem) -> Result<SecularSolution, SecularError> {
    let modes = secular_modes(system)?;
    let pl = &system.planets;
    let h0: Vec<f64> = pl.iter().map(|p| p.e * p.varpi.sin()).collect();
    let k0: Vec<f64> = pl.iter().map(|p| p.e * p.varpi.cos()).collect();
    let p0: Vec<f64> = pl.iter().map(|p| p.inc * p.node.sin()).collect();
    let q0: Vec<f64> = pl.iter().map(|p| p.inc * p.node.cos()).collect();
    let (ecc_amplitudes, ecc_phases) = fit_modes(&modes.g_vectors, &modes.weights, &h0, &k0);
    let (inc_amplitudes, inc_phases) = fit_modes(&modes.f_vectors, &modes.weights, &p0, &q0);
    Ok(SecularSolution {
        modes,
        ecc_amplitudes,
        ecc_phases,
        inc_amplitudes,
        inc_phases,
    })
}

fn fit_modes(v: &DMatrix<f64>, w: &[f64], sin0: &[f64], cos0: &[f64]) -> (DMatrix<f64>, Vec<f64>) {
    let n = w.len();
    let x = v.transpose() * DVector::from_iterator(n, sin0.iter().zip(w).map(|(a, b)| a * b));
    let y = v.transpose() * DVector::from_iterator(n, cos0.iter().zip(w).map(|(a, b)| a * b));
    let mut amp = DMatrix::<f64>::zeros(n, n);
    let mut phases = vec![0.0; n];
    for i in 0..n {
        let si = x[i].hypot(y[i]);
        phases[i] = x[i].atan2(y[i]);
        for j in 0..n {
            amp[(j, i)] = v[(j, i)] * si;
        }
    }
    (amp, phases)
}

/// Long-term mean rate of a longitude and how it was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MeanRate {
    /// Mean rate, rad/yr.
    pub rate: f64,
    /// Mode that dominates this planet's vector (|amplitude| larger than the
    /// sum of all others), if any: then the mean rate is exactly that mode's
    /// frequency, because the vector can never wind around zero otherwise.
    pub dominant_mode: Option<usize>,
    /// Span in years over which the angle was unwrapped, when no mode dominates.
    pub unwrapped_span_yr: Option<f64>,
}

/// Per-planet secular predictions at one time, for reports.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PlanetSecularState {
    /// Eccentricity e_j(t).
    pub e: f64,
    /// Longitude of pericentre ϖ_j(t), radians in (−π, π].
    pub varpi: f64,
    /// Instantaneous dϖ_j/dt, deg/yr.
    pub varpi_rate_deg_per_yr: f64,
    /// Inclination I_j(t), radians.
    pub inc: f64,
    /// Node Ω_j(t), radians in (−π, π] (0 when I_j = 0).
    pub node: f64,
}

impl SecularSolution {
    fn planet_row(&self, j: usize) -> Result<(), SecularError> {
        if j >= self.ecc_phases.len() {
            return Err(SecularError::NoSuchPlanet(j));
        }
        Ok(())
    }

    /// (h_j, k_j, ḣ_j, k̇_j) at time t (years); rates in rad/yr.
    fn hk(&self, j: usize, t: f64) -> (f64, f64, f64, f64) {
        let g = &self.modes.g;
        let (mut h, mut k, mut hd, mut kd) = (0.0, 0.0, 0.0, 0.0);
        for (i, gi) in g.iter().enumerate() {
            let (s, c) = (gi * t + self.ecc_phases[i]).sin_cos();
            let a = self.ecc_amplitudes[(j, i)];
            h += a * s;
            k += a * c;
            hd += a * gi * c;
            kd -= a * gi * s;
        }
        (h, k, hd, kd)
    }

    fn pq(&self, j: usize, t: f64) -> (f64, f64) {
        let (mut p, mut q) = (0.0, 0.0);
        for (i, fi) in self.modes.f.iter().enumerate() {
            let (s, c) = (fi * t + self.inc_phases[i]).sin_cos();
            p += self.inc_amplitudes[(j, i)] * s;
            q += self.inc_amplitudes[(j, i)] * c;
        }
        (p, q)
    }

    /// The eccentricity vector (h_j, k_j) = e_j (sin ϖ_j, cos ϖ_j) at time
    /// `t` in years from the epoch.
    pub fn eccentricity_vector(&self, j: usize, t: f64) -> Result<(f64, f64), SecularError> {
        self.planet_row(j)?;
        check_time(t)?;
        let (h, k, _, _) = self.hk(j, t);
        Ok((h, k))
    }

    /// The inclination vector (p_j, q_j) = I_j (sin Ω_j, cos Ω_j), radians.
    pub fn inclination_vector(&self, j: usize, t: f64) -> Result<(f64, f64), SecularError> {
        self.planet_row(j)?;
        check_time(t)?;
        Ok(self.pq(j, t))
    }

    /// Planet j's secular state at time `t` (years from the epoch).
    /// Fails with [`SecularError::UndefinedAngle`] when e_j(t) = 0.
    pub fn state(&self, j: usize, t: f64) -> Result<PlanetSecularState, SecularError> {
        self.planet_row(j)?;
        check_time(t)?;
        let (h, k, hd, kd) = self.hk(j, t);
        let e2 = h * h + k * k;
        if !(e2 > 0.0) {
            return Err(SecularError::UndefinedAngle);
        }
        let (p, q) = self.pq(j, t);
        let inc = p.hypot(q);
        Ok(PlanetSecularState {
            e: e2.sqrt(),
            varpi: h.atan2(k),
            varpi_rate_deg_per_yr: ((k * hd - h * kd) / e2).to_degrees(),
            inc,
            node: if inc > 0.0 { p.atan2(q) } else { 0.0 },
        })
    }

    /// Envelope of e_j(t): (min, max) = (max(0, |e_jd| − Σ_{i≠d} |e_ji|), Σ_i |e_ji|),
    /// d the largest mode. The bounds are approached arbitrarily closely when
    /// the g_i are rationally independent (always, for two planets, since
    /// then e_j² = e_j1² + e_j2² + 2 e_j1 e_j2 cos((g1 − g2)t + β1 − β2)).
    pub fn eccentricity_envelope(&self, j: usize) -> Result<(f64, f64), SecularError> {
        self.planet_row(j)?;
        let row = self.ecc_amplitudes.row(j);
        let sum: f64 = row.iter().map(|x| x.abs()).sum();
        let big = row.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        Ok(((2.0 * big - sum).max(0.0), sum))
    }

    /// Long-term mean dϖ_j/dt. If one mode dominates planet j's eccentricity
    /// vector (its amplitude exceeds the sum of the others) the mean rate is
    /// exactly g of that mode (the vector turns once per turn of the
    /// dominant term). Otherwise ϖ_j is unwrapped numerically over
    /// `span_yr` years, with steps of 1/64 of the shortest period among the
    /// g_i and their differences.
    pub fn mean_varpi_rate(&self, j: usize, span_yr: f64) -> Result<MeanRate, SecularError> {
        self.planet_row(j)?;
        let row = self.ecc_amplitudes.row(j);
        let sum: f64 = row.iter().map(|x| x.abs()).sum();
        if let Some((i, big)) = row
            .iter()
            .map(|x| x.abs())
            .enumerate()
            .max_by(|a, b| a.1.total_cmp(&b.1))
            && big > sum - big
        {
            return Ok(MeanRate {
                rate: self.modes.g[i],
                dominant_mode: Some(i),
                unwrapped_span_yr: None,
            });
        }
        Ok(MeanRate {
            rate: self.unwrapped_varpi_rate(j, span_yr)?,
            dominant_mode: None,
            unwrapped_span_yr: Some(span_yr),
        })
    }

    /// Mean dϖ_j/dt (rad/yr) from unwrapping ϖ_j(t) numerically over
    /// [0, `span_yr`], with steps of 1/64 of the shortest period among the g_i
    /// and their differences; the signed angle between successive
    /// eccentricity vectors is summed. Accurate to about 2π/span.
    pub fn unwrapped_varpi_rate(&self, j: usize, span_yr: f64) -> Result<f64, SecularError> {
        self.planet_row(j)?;
        if !(span_yr > 0.0 && span_yr.is_finite()) {
            return Err(SecularError::BadTime(span_yr));
        }
        let g = &self.modes.g;
        let mut fastest = 0.0f64;
        for (a, ga) in g.iter().enumerate() {
            fastest = fastest.max(ga.abs());
            for gb in &g[a + 1..] {
                fastest = fastest.max((ga - gb).abs());
            }
        }
        if !(fastest > 0.0) {
            return Err(SecularError::UndefinedAngle);
        }
        let dt = 2.0 * PI / fastest / 64.0;
        let steps = (span_yr / dt).ceil();
        if steps > 1e8 {
            return Err(SecularError::NoConvergence(
                "mean-rate unwrapping (span too long)",
            ));
        }
        let steps = steps as u64;
        let dt = span_yr / steps as f64;
        let (mut h0, mut k0, _, _) = self.hk(j, 0.0);
        let mut total = 0.0;
        for s in 1..=steps {
            let (h1, k1, _, _) = self.hk(j, dt * s as f64);
            // Signed angle from (k0, h0) to (k1, h1).
            let cross = k0 * h1 - h0 * k1;
            let dot = k0 * k1 + h0 * h1;
            if cross == 0.0 && dot == 0.0 {
                return Err(SecularError::UndefinedAngle);
            }
            total += cross.atan2(dot);
            h0 = h1;
            k0 = k1;
        }
        Ok(total / span_yr)
    }

    /// Second-order angular momentum deficit Σ_j m_j n_j a_j² e_j²(t)
    /// (M☉ au² rad/yr), a constant of the secular motion (Murray & Dermott
    /// 1999, §7.7; Laskar 1997). Used to check the solution.
    pub fn eccentricity_deficit(&self, t: f64) -> Result<f64, SecularError> {
        check_time(t)?;
        let mut sum = 0.0;
        for (j, w) in self.modes.weights.iter().enumerate() {
            let (h, k, _, _) = self.hk(j, t);
            sum += w * (h * h + k * k);
        }
        Ok(sum)
    }

    /// Σ_j m_j n_j a_j² I_j²(t), the inclination part of the deficit, also
    /// constant along the secular solution.
    pub fn inclination_deficit(&self, t: f64) -> Result<f64, SecularError> {
        check_time(t)?;
        let mut sum = 0.0;
        for (j, w) in self.modes.weights.iter().enumerate() {
            let (p, q) = self.pq(j, t);
            sum += w * (p * p + q * q);
        }
        Ok(sum)
    }

    /// A serialisable summary: frequencies and, per planet, the state at
    /// t = 0, the mean apsidal rate and the eccentricity envelope.
    /// `span_yr` is used only for planets with no dominant mode.
    pub fn summary(&self, span_yr: f64) -> Result<SecularSummary, SecularError> {
        let n = self.ecc_phases.len();
        let mut planets = Vec::with_capacity(n);
        for j in 0..n {
            // A planet whose eccentricity vector vanishes has no pericentre:
            // its rates are reported as absent rather than as an error.
            let now = match self.state(j, 0.0) {
                Ok(st) => Some(st.varpi_rate_deg_per_yr),
                Err(SecularError::UndefinedAngle) => None,
                Err(e) => return Err(e),
            };
            let mean = match self.mean_varpi_rate(j, span_yr) {
                Ok(m) => Some(m),
                Err(SecularError::UndefinedAngle) => None,
                Err(e) => return Err(e),
            };
            let (e_min, e_max) = self.eccentricity_envelope(j)?;
            planets.push(PlanetSecularSummary {
                varpi_rate_now_deg_per_yr: now,
                mean_varpi_rate_deg_per_yr: mean.map(|m| m.rate.to_degrees()),
                dominant_mode: mean.and_then(|m| m.dominant_mode),
                e_min,
                e_max,
            });
        }
        Ok(SecularSummary {
            g_deg_per_yr: self.modes.g_deg_per_yr(),
            g_arcsec_per_yr: self.modes.g_arcsec_per_yr(),
            f_deg_per_yr: self.modes.f_deg_per_yr(),
            f_arcsec_per_yr: self.modes.f_arcsec_per_yr(),
            planets,
        })
    }
}

/// Per-planet part of [`SecularSummary`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanetSecularSummary {
    /// dϖ/dt at the epoch, deg/yr (`None` if e = 0 at the epoch).
    pub varpi_rate_now_deg_per_yr: Option<f64>,
    /// Long-term mean dϖ/dt, deg/yr (`None` if the eccentricity vector
    /// vanishes identically or passes through zero during the unwrapping).
    pub mean_varpi_rate_deg_per_yr: Option<f64>,
    /// Dominant eccentricity mode, if one dominates.
    pub dominant_mode: Option<usize>,
    /// Lower envelope of e(t).
    pub e_min: f64,
    /// Upper envelope of e(t).
    pub e_max: f64,
}

/// Frequencies and per-planet predictions of the secular theory.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SecularSummary {
    /// g_i, deg/yr.
    pub g_deg_per_yr: Vec<f64>,
    /// g_i, arcsec/yr.
    pub g_arcsec_per_yr: Vec<f64>,
    /// f_i, deg/yr.
    pub f_deg_per_yr: Vec<f64>,
    /// f_i, arcsec/yr.
    pub f_arcsec_per_yr: Vec<f64>,
    /// One entry per planet, innermost first.
    pub planets: Vec<PlanetSecularSummary>,
}

fn check_time(t: f64) -> Result<(), SecularError> {
    if !t.is_finite() {
        return Err(SecularError::BadTime(t));
    }
    Ok(())
}

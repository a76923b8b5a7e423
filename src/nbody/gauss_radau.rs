//! Adaptive 15th-order Gauss–Radau integrator (Everhart 1985) with the step
//! control of IAS15 (Rein & Spiegel 2015).
//!
//! Method. Over a step of length Δt the acceleration of every coordinate is
//! written as a polynomial in the step fraction τ ∈ [0, 1],
//!
//! F(τ) = a₀ + b₀ τ + b₁ τ² + … + b₆ τ⁷,
//!
//! (Everhart 1985, in *Dynamics of Comets*, eds. Carusi & Valsecchi, p. 185,
//! eqs. 4–5), whose coefficients are fixed by the accelerations at the
//! seven Gauss–Radau nodes h₁…h₇ (and h₀ = 0). Position and velocity follow
//! by integrating the polynomial twice (Everhart's eqs. 6–7):
//!
//! x(τ) = x₀ + Δt τ v₀ + Δt² τ² [a₀/2 + b₀τ/6 + b₁τ²/12 + … + b₆τ⁷/72],
//! v(τ) = v₀ + Δt τ [a₀ + b₀τ/2 + b₁τ²/3 + … + b₆τ⁷/8].
//!
//! The b are found through the divided-difference coefficients g
//! (F = a₀ + g₀ τ + g₁ τ(τ−h₁) + …, Everhart eq. 8) by predictor–corrector
//! iteration until the change of b₆ is below 1e-16 relative to the largest
//! acceleration (Rein & Spiegel 2015, MNRAS 446, 1424, §2.3), at most
//! [`MAX_ITERATIONS`] times, or, by default, until the rate of the last two
//! changes predicts what is left below 1e-4 ε (the stopping test of
//! Hairer & Wanner 1996, §IV.8; [`IterationStop`]). The next step comes
//! from the step polynomial by one of two published rules ([`StepCriterion`]): by default the per-body
//! timescale of Pham, Rein & Spiegel (2024), τ² = 2|F|²/(|F′|² + |F″||F|)
//! at the step end and a next step min τ (7! ε)^{1/7}; or the global
//! estimate ε̃ = max|b₆| / max|a| of Rein & Spiegel (2015, eq. 11 and
//! §3.3) and a next step Δt (ε/ε̃)^{1/7} (their eq. 12). Either way a step
//! whose proposed successor is smaller than [`SAFETY`] times itself is
//! rejected and redone, and a step grows by at most 1/[`SAFETY`]. The b of the next step are predicted from
//! those of the last one by Everhart's extrapolation (the e coefficients,
//! Everhart 1985 eq. 13, with the correction by the last prediction error,
//! Rein & Spiegel 2015 §2.5). Positions, velocities and time are summed with
//! Kahan's compensated summation (Kahan 1965; Rein & Spiegel 2015 §2.2),
//! the seven small b terms of a step's increment first added together
//! (see the step update).
//!
//! Dense output: a requested time inside the last accepted step is
//! evaluated from that step's polynomial, so `advance_to` never shortens a
//! step and the trajectory does not depend on which epochs are asked for.
//!
//! Tangent vectors ([`super::variational`], [`Variational`]): the
//! linearised equations δẍ = (∂a/∂x) δx (the tidal tensor,
//! [`tidal_accelerations_flat`]) are integrated as extra coordinates
//! appended after the 3N real ones, with the same step polynomial
//! machinery, while the step size, the rejection test and the
//! predictor–corrector convergence look at the real bodies only (as
//! Rein & Tamayo 2016, MNRAS 459, 2275, §3 do for IAS15). Refused with the
//! post-Newtonian term on (velocity-dependent; its Jacobian is not coded).
//!
//! Written by hand: no maintained crate provides IAS15 / Gauss–Radau with
//! dense output and events, and the method is short enough to own.
//!
//! (Equation and section numbers of the papers above are cited from
//! memory; the algorithm itself is the published one.)

use nalgebra::Vector3;

use super::events::{Event, EventSettings, NbodyError};
use super::forces::{
    add_post_newtonian_accelerations, newtonian_accelerations, newtonian_accelerations_flat,
};
use super::integrator::Integrator;
use super::system::{Snapshot, System};
use super::variational::{Tangent, Variational, tidal_accelerations_flat};
use crate::units::G;

/// Gauss–Radau spacings h₀ = 0, h₁…h₇ on [0, 1] (Everhart 1985, Table 1;
/// the roots of the Radau polynomial for 15th order, as in Rein & Spiegel
/// 2015, eq. 6).
#[allow(clippy::excessive_precision)] // the published 30 digits, rounded by the compiler
pub const NODES: [f64; 8] = [
    0.0,
    0.056_262_560_536_922_146_465_652_191_031_8,
    0.180_240_691_736_892_364_987_579_942_780,
    0.352_624_717_113_169_637_373_907_769_648,
    0.547_153_626_330_555_383_001_448_554_766,
    0.734_210_177_215_410_531_523_210_605_558,
    0.885_320_946_839_095_768_090_359_771_030,
    0.977_520_613_561_287_501_891_174_488_626,
];

/// Largest number of predictor–corrector iterations in one step.
pub const MAX_ITERATIONS: usize = 12;

/// Convergence threshold of the predictor–corrector iteration: the change
/// of b₆ relative to the largest acceleration (Rein & Spiegel 2015, §2.3).
pub const CONVERGENCE: f64 = 1e-16;

/// Step safety factor: a step is rejected when the proposed next step is
/// smaller than `SAFETY` times it, and a step grows by at most 1/`SAFETY`
/// (the value of Rein & Spiegel 2015, §3.3).
pub const SAFETY: f64 = 0.25;

/// Default step-control parameter ε (Rein & Spiegel 2015, §3.3: 1e-9 keeps
/// the error at the round-off level for planetary orbits).
pub const DEFAULT_TOLERANCE: f64 = 1e-9;

/// Which published rule turns the step polynomial into the next step size.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StepCriterion {
    /// The global criterion of IAS15 as first published (Rein & Spiegel
    /// 2015, MNRAS 446, 1424, eqs. 11–12): ε̃ = max|b₆| / max|a| over all
    /// real coordinates, next step Δt (ε/ε̃)^{1/7}.
    Global2015,
    /// The criterion of Pham, Rein & Spiegel (2024, Open Journal of
    /// Astrophysics 7; reference and the constant 7! cited from memory of
    /// the paper and of REBOUND's IAS15, its default since 2024), checked
    /// here against the 2015 rule (tests/nbody_gauss_radau_criterion.rs)
    /// and a circular orbit (unit test): for every body the timescale
    /// τ² = 2 y₂ / (y₃ + √(y₄ y₂)) from the squared norms y₂, y₃, y₄ of
    /// the acceleration and of its first two τ-derivatives at the step end
    /// (from the step polynomial), and the next step
    /// Δt min_bodies τ (7! ε)^{1/7}. It does not depend on how large the
    /// accelerations of the other bodies are, and takes longer steps for
    /// the same round-off accuracy on planetary orbits (BENCHMARKS.md).
    #[default]
    PerBody2024,
}

/// Fraction κ of the step-control parameter ε below which the predicted
/// remaining change of the predictor–corrector iteration stops it
/// ([`IterationStop::PredictedRate`]): the iteration stops when
/// θ/(1 − θ) δ_k < max(κ ε, [`CONVERGENCE`]). Ours, chosen by the
/// measurements quoted at [`IterationStop::PredictedRate`] (κ = 1e-2 made
/// the benchmark's RV 4× less accurate at ε ≥ 1e-7; 1e-4 keeps it).
pub const ITERATION_KAPPA: f64 = 1e-4;

/// When the predictor–corrector iteration of a step stops. Both rules stop
/// when the change δ_k of b₆ in iteration k, relative to the largest
/// acceleration, falls below [`CONVERGENCE`], when it stops falling
/// (k > 2), or after [`MAX_ITERATIONS`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum IterationStop {
    /// IAS15 as published (Rein & Spiegel 2015, §2.3): only the tests
    /// above, so the iteration runs until b₆ no longer changes at all
    /// (δ is exactly 0 in most steps of the benchmark system: the last
    /// iteration only confirms convergence).
    RoundOff2015,
    /// Also stop after iteration k ≥ 2 when the contraction rate
    /// θ = δ_k/δ_{k−1} < 1 predicts the change still to come, θ/(1 − θ) δ_k,
    /// below max([`ITERATION_KAPPA`] ε, [`CONVERGENCE`]) with ε the
    /// step-control parameter: the stopping test of the simplified Newton
    /// iteration of implicit Runge–Kutta methods, which keeps the
    /// iteration error a small fraction κ of the local tolerance (Hairer &
    /// Wanner 1996, *Solving Ordinary Differential Equations II*, §IV.8,
    /// eqs. 8.10–8.12, from memory; there κ ≈ 1e-1…1e-2 of a tolerance on
    /// the solution, here κ = 1e-4 of ε).
    ///
    /// Evidence (tests/nbody_gauss_radau_iterations.rs; the two-giant
    /// benchmark, 400 epochs over 4000 d, star RV, against the 2015 stop
    /// at the same ε and against the 2015 step rule and stop at
    /// ε = 1e-12): at ε = 1e-9, 2.01 iterations per step instead of 3.18
    /// and 24 424 force evaluations instead of 37 619 (−35 %), the same
    /// steps, max |Δv| 9.9e-12 m/s from the 2015 stop and 5.7e-12 m/s from
    /// the tight run (the 2015 stop: 7.3e-12), i.e. round-off (RV
    /// amplitude 177.5 m/s). At ε = 1e-7, 1e-6, 1e-4: 16 143 / 13 101 /
    /// 8 666 evaluations instead of 26 783 / 21 977 / 16 723, errors from
    /// the tight run 6.3e-11 / 1.5e-9 / 7.6e-7 m/s instead of 6.4e-11 /
    /// 1.4e-9 / 7.4e-7. Energy over 10⁴ inner orbits 6.5e-15
    /// (tests/nbody_gauss_radau.rs). The default.
    #[default]
    PredictedRate,
}

/// Settings of the Gauss–Radau integrator.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct GaussRadauSettings {
    /// Step-control parameter ε (dimensionless, > 0) of the step rule
    /// ([`StepCriterion`]): the target of max|b₆|/max|a| for the 2015
    /// rule, the factor (7! ε)^{1/7} on the smallest body timescale for
    /// the 2024 rule. Default [`DEFAULT_TOLERANCE`] (round-off for
    /// planetary orbits with either rule, BENCHMARKS.md).
    pub tolerance: f64,
    /// First trial step in days (magnitude; the sign follows the direction
    /// of travel). `None`: a small fraction (1/20) of the shortest
    /// astrocentric timescale min(r/v, √(r³/μ)) of the planets.
    pub initial_step: Option<f64>,
    /// Which events are looked for and whether they stop the run.
    pub events: EventSettings,
}

impl Default for GaussRadauSettings {
    fn default() -> Self {
        GaussRadauSettings {
            tolerance: DEFAULT_TOLERANCE,
            initial_step: None,
            events: EventSettings::default(),
        }
    }
}

/// Coefficient tables derived from the nodes (computed once).
#[derive(Debug, Clone)]
struct Tables {
    /// inv[n][k] = 1 / (h_n − h_k), k < n.
    inv: [[f64; 8]; 8],
    /// b from g: b_m = Σ_{k ≥ m} c[k][m] g_k (coefficient of τ^m in
    /// Π_{j=1..k} (τ − h_j)).
    c: [[f64; 7]; 7],
    /// g from b: g_k = Σ_{m ≥ k} d[m][k] b_m (τ^{m+1} in the Newton basis).
    d: [[f64; 7]; 7],
    /// Position weights at node n: w[n][0] = τ²/2 (for a₀) and
    /// w[n][k+1] = τ^{k+3}/((k+2)(k+3)) (for b_k), τ = h_n; times Δt² they
    /// give the position polynomial as a dot product (kept for the
    /// unit test of `wg`).
    #[cfg_attr(not(test), allow(dead_code))]
    w: [[f64; 8]; 8],
    /// The same weights on the divided differences g: wg[n][0] = w[n][0]
    /// and wg[n][k+1] = Σ_{m ≤ k} w[n][m+1] c[k][m] (since b = Cᵀ g), so
    /// that the predictor needs g only and b is formed once per iteration.
    wg: [[f64; 8]; 8],
    /// Velocity weights on g at node n: ug[n][0] = τ and
    /// ug[n][k+1] = Σ_{m ≤ k} τ^{m+2}/(m+2) c[k][m]; times Δt.
    ug: [[f64; 8]; 8],
}

impl Tables {
    fn new() -> Self {
        let h = NODES;
        let mut inv = [[0.0; 8]; 8];
        for n in 1..8 {
            for k in 0..n {
                inv[n][k] = 1.0 / (h[n] - h[k]);
            }
        }
        // c: Π_{j=1..k}(τ − h_j) built by the recurrence
        // c[k][m] = c[k−1][m−1] − h_k c[k−1][m].
        let mut c = [[0.0; 7]; 7];
        c[0][0] = 1.0;
        for k in 1..7 {
            for m in 0..=k {
                let up = if m > 0 { c[k - 1][m - 1] } else { 0.0 };
                let same = if m < k { c[k - 1][m] } else { 0.0 };
                c[k][m] = up - h[k] * same;
            }
        }
        // d: τ^{m+1} = Σ_k d[m][k] N_k(τ), N_k = Π_{j=0..k}(τ − h_j), from
        // τ N_k = N_{k+1} + h_{k+1} N_k: d[m][k] = d[m−1][k−1] + h_{k+1} d[m−1][k].
        let mut d = [[0.0; 7]; 7];
        d[0][0] = 1.0;
        for m in 1..7 {
            for k in 0..=m {
                let up = if k > 0 { d[m - 1][k - 1] } else { 0.0 };
                let same = if k < m { d[m - 1][k] } else { 0.0 };
                d[m][k] = up + h[k + 1] * same;
            }
        }
        let mut w = [[0.0; 8]; 8];
        for n in 1..8 {
            let tau = h[n];
            w[n][0] = tau * tau / 2.0;
            for k in 0..7 {
                w[n][k + 1] = tau.powi(k as i32 + 3) / (((k + 2) * (k + 3)) as f64);
            }
        }
        let mut wg = [[0.0; 8]; 8];
        let mut ug = [[0.0; 8]; 8];
        for n in 1..8 {
            let tau = h[n];
            wg[n][0] = w[n][0];
            ug[n][0] = tau;
            for k in 0..7 {
                let (mut sw, mut su) = (0.0, 0.0);
                for m in 0..=k {
                    sw += w[n][m + 1] * c[k][m];
                    su += tau.powi(m as i32 + 2) / ((m + 2) as f64) * c[k][m];
                }
                wg[n][k + 1] = sw;
                ug[n][k + 1] = su;
            }
        }
        Tables {
            inv,
            c,
            d,
            w,
            wg,
            ug,
        }
    }
}

/// Compensated (Kahan 1965) addition of `inc` to `sum`, with the running
/// compensation `cs` (the true sum is `sum − cs`).
#[inline(always)]
fn add_cs(sum: &mut f64, cs: &mut f64, inc: f64) {
    let y = inc - *cs;
    let t = *sum + y;
    *cs = (t - *sum) - y;
    *sum = t;
}

/// Position increment of the step polynomial at fraction `tau` (without x₀).
#[inline(always)]
fn pos_poly(dt: f64, tau: f64, v0: f64, a0: f64, b: &[f64; 7]) -> f64 {
    let p = a0 * (1.0 / 2.0)
        + tau
            * (b[0] * (1.0 / 6.0)
                + tau
                    * (b[1] * (1.0 / 12.0)
                        + tau
                            * (b[2] * (1.0 / 20.0)
                                + tau
                                    * (b[3] * (1.0 / 30.0)
                                        + tau
                                            * (b[4] * (1.0 / 42.0)
                                                + tau
                                                    * (b[5] * (1.0 / 56.0)
                                                        + tau * b[6] * (1.0 / 72.0)))))));
    let s = dt * tau;
    s * v0 + s * s * p
}

/// Velocity increment of the step polynomial at fraction `tau` (without v₀).
#[inline(always)]
fn vel_poly(dt: f64, tau: f64, a0: f64, b: &[f64; 7]) -> f64 {
    let p = a0
        + tau
            * (b[0] * (1.0 / 2.0)
                + tau
                    * (b[1] * (1.0 / 3.0)
                        + tau
                            * (b[2] * (1.0 / 4.0)
                                + tau
                                    * (b[3] * (1.0 / 5.0)
                                        + tau
                                            * (b[4] * (1.0 / 6.0)
                                                + tau
                                                    * (b[5] * (1.0 / 7.0)
                                                        + tau * b[6] * (1.0 / 8.0)))))));
    dt * tau * p
}

/// Everhart's prediction of the next step's coefficients (Everhart 1985,
/// eq. 13; Rein & Spiegel 2015 §2.5): the last step's polynomial shifted to
/// its end and rescaled by `ratio` = Δt_new/Δt_old gives `e`; `b` is `e`
/// plus the error of the previous prediction (`b_old − e_old`). A ratio
/// above 20 gives no prediction (zeros).
fn predict_next(
    ratio: f64,
    e_old: &[[f64; 7]],
    b_old: &[[f64; 7]],
    e: &mut [[f64; 7]],
    b: &mut [[f64; 7]],
) {
    if ratio.abs() > 20.0 || !ratio.is_finite() {
        for (ej, bj) in e.iter_mut().zip(b.iter_mut()) {
            *ej = [0.0; 7];
            *bj = [0.0; 7];
        }
        return;
    }
    let q1 = ratio;
    let q2 = q1 * q1;
    let q3 = q1 * q2;
    let q4 = q2 * q2;
    let q5 = q2 * q3;
    let q6 = q3 * q3;
    let q7 = q3 * q4;
    for j in 0..b.len() {
        let bo = b_old[j];
        let eo = e_old[j];
        let mut be = [0.0; 7];
        for k in 0..7 {
            be[k] = bo[k] - eo[k];
        }
        let ne = [
            q1 * (7.0 * bo[6]
                + 6.0 * bo[5]
                + 5.0 * bo[4]
                + 4.0 * bo[3]
                + 3.0 * bo[2]
                + 2.0 * bo[1]
                + bo[0]),
            q2 * (21.0 * bo[6] + 15.0 * bo[5] + 10.0 * bo[4] + 6.0 * bo[3] + 3.0 * bo[2] + bo[1]),
            q3 * (35.0 * bo[6] + 20.0 * bo[5] + 10.0 * bo[4] + 4.0 * bo[3] + bo[2]),
            q4 * (35.0 * bo[6] + 15.0 * bo[5] + 5.0 * bo[4] + bo[3]),
            q5 * (21.0 * bo[6] + 6.0 * bo[5] + bo[4]),
            q6 * (7.0 * bo[6] + bo[5]),
            q7 * bo[6],
        ];
        e[j] = ne;
        for k in 0..7 {
            b[j][k] = ne[k] + be[k];
        }
    }
}

/// Newtonian accelerations of flat positions, exactly the arithmetic of
/// [`newtonian_accelerations_flat`] (same operations in the same order,
/// bit-identical; unit-tested below), inlined into the fixed-size corrector
/// pass so that the body count is a compile-time constant there.
#[inline(always)]
fn newtonian_fixed<const M: usize>(masses: &[f64], pos: &[f64; M], acc: &mut [f64; M]) {
    let n = M / 3;
    let masses = &masses[..n];
    *acc = [0.0; M];
    for i in 0..n {
        let (xi, yi, zi) = (pos[3 * i], pos[3 * i + 1], pos[3 * i + 2]);
        let mi = masses[i];
        let (mut ax, mut ay, mut az) = (0.0, 0.0, 0.0);
        for j in (i + 1)..n {
            let dx = pos[3 * j] - xi;
            let dy = pos[3 * j + 1] - yi;
            let dz = pos[3 * j + 2] - zi;
            let r2 = dx * dx + dy * dy + dz * dz;
            let f = G / (r2 * r2.sqrt());
            let fj = f * masses[j];
            ax += fj * dx;
            ay += fj * dy;
            az += fj * dz;
            let fi = f * mi;
            acc[3 * j] -= fi * dx;
            acc[3 * j + 1] -= fi * dy;
            acc[3 * j + 2] -= fi * dz;
        }
        acc[3 * i] += ax;
        acc[3 * i + 1] += ay;
        acc[3 * i + 2] += az;
    }
}

/// The smallest squared timescale (in units of the step squared) over the
/// bodies of a step, for [`StepCriterion::PerBody2024`] (Pham, Rein &
/// Spiegel 2024): per body, y₂ = |F(1)|², y₃ = |F′(1)|², y₄ = |F″(1)|²
/// with F(τ) = a₀ + Σ b_k τ^{k+1} and its τ-derivatives at the step end,
/// and τ² = 2 y₂ / (y₃ + √(y₄ y₂)). Bodies whose y₂ is zero or not normal
/// (no acceleration) or whose τ² is not normal are skipped; +∞ when none
/// is left. `a0` and `b` are the real coordinates, three per body.
fn min_timescale2(a0: &[f64], b: &[[f64; 7]]) -> f64 {
    let mut min_ts2 = f64::INFINITY;
    for (a0i, bi) in a0.chunks_exact(3).zip(b.chunks_exact(3)) {
        let (mut y2, mut y3, mut y4) = (0.0, 0.0, 0.0);
        for (&a, p) in a0i.iter().zip(bi) {
            let f = a + p[0] + p[1] + p[2] + p[3] + p[4] + p[5] + p[6];
            let f1 =
                p[0] + 2.0 * p[1] + 3.0 * p[2] + 4.0 * p[3] + 5.0 * p[4] + 6.0 * p[5] + 7.0 * p[6];
            let f2 =
                2.0 * p[1] + 6.0 * p[2] + 12.0 * p[3] + 20.0 * p[4] + 30.0 * p[5] + 42.0 * p[6];
            y2 += f * f;
            y3 += f1 * f1;
            y4 += f2 * f2;
        }
        if !y2.is_normal() {
            continue;
        }
        let ts2 = 2.0 * y2 / (y3 + (y4 * y2).sqrt());
        if ts2.is_normal() && ts2 < min_ts2 {
            min_ts2 = ts2;
        }
    }
    min_ts2
}

/// Scratch buffers for the force evaluation (allocated once).
#[derive(Debug, Clone)]
struct ForceBuffers {
    pos: Vec<Vector3<f64>>,
    vel: Vec<Vector3<f64>>,
    acc: Vec<Vector3<f64>>,
}

impl ForceBuffers {
    /// Accelerations of the real coordinates (the first `nr` = 3N) and of
    /// `ntan` tangent blocks of `nr` coordinates each after them.
    #[inline]
    #[allow(clippy::too_many_arguments)]
    fn eval_all(
        &mut self,
        masses: &[f64],
        post_newtonian: bool,
        nr: usize,
        ntan: usize,
        x: &[f64],
        v: &[f64],
        out: &mut [f64],
    ) {
        self.eval(masses, post_newtonian, &x[..nr], &v[..nr], &mut out[..nr]);
        for t in 1..=ntan {
            let blk = t * nr..(t + 1) * nr;
            tidal_accelerations_flat(masses, &x[..nr], &x[blk.clone()], &mut out[blk]);
        }
    }

    /// Accelerations (au/d², flat 3N) at flat positions/velocities.
    #[inline]
    fn eval(
        &mut self,
        masses: &[f64],
        post_newtonian: bool,
        x: &[f64],
        v: &[f64],
        out: &mut [f64],
    ) {
        if !post_newtonian {
            newtonian_accelerations_flat(masses, x, out);
            return;
        }
        let n = self.pos.len();
        for i in 0..n {
            self.pos[i] = Vector3::new(x[3 * i], x[3 * i + 1], x[3 * i + 2]);
            self.vel[i] = Vector3::new(v[3 * i], v[3 * i + 1], v[3 * i + 2]);
        }
        newtonian_accelerations(masses, &self.pos, &mut self.acc);
        add_post_newtonian_accelerations(masses, &self.pos, &self.vel, &mut self.acc);
        for i in 0..n {
            out[3 * i] = self.acc[i].x;
            out[3 * i + 1] = self.acc[i].y;
            out[3 * i + 2] = self.acc[i].z;
        }
    }
}

/// The corrector for node `K + 1`: the new divided difference g_K from the
/// acceleration `at` there (Everhart 1985, eqs. 8–9; the b follow from the
/// g once per iteration, eq. 10, [`b_from_g`]). Returns max |Δg_K|
/// (= max |Δb_K| for the last node, where c[6][6] = 1). Unrolled per node
/// by the const `K`.
#[inline(always)]
fn corrector<const K: usize>(inv: &[f64; 8], at: &[f64], a0: &[f64], g: &mut [[f64; 7]]) -> f64 {
    let mut max_delta: f64 = 0.0;
    for ((gj, &a), &a0j) in g.iter_mut().zip(at).zip(a0) {
        let mut gk = (a - a0j) * inv[0];
        for m in 0..K {
            gk = (gk - gj[m]) * inv[m + 1];
        }
        let delta = gk - gj[K];
        gj[K] = gk;
        max_delta = max_delta.max(delta.abs());
    }
    max_delta
}

/// b from g: b_m = Σ_{k ≥ m} c[k][m] g_k (Everhart 1985, eq. 10), for every
/// coordinate.
#[inline(always)]
fn b_from_g(c: &[[f64; 7]; 7], g: &[[f64; 7]], b: &mut [[f64; 7]]) {
    for (bj, gj) in b.iter_mut().zip(g) {
        for m in 0..7 {
            let mut s = 0.0;
            for k in m..7 {
                s += c[k][m] * gj[k];
            }
            bj[m] = s;
        }
    }
}

/// The corrector for node `n` (1..7), dispatched to the unrolled forms.
#[inline(always)]
fn corrector_node(n: usize, inv: &[f64; 8], at: &[f64], a0: &[f64], g: &mut [[f64; 7]]) -> f64 {
    match n {
        1 => corrector::<0>(inv, at, a0, g),
        2 => corrector::<1>(inv, at, a0, g),
        3 => corrector::<2>(inv, at, a0, g),
        4 => corrector::<3>(inv, at, a0, g),
        5 => corrector::<4>(inv, at, a0, g),
        6 => corrector::<5>(inv, at, a0, g),
        _ => corrector::<6>(inv, at, a0, g),
    }
}

/// The 15th-order adaptive Gauss–Radau (IAS15-type) integrator of a
/// [`System`] in barycentric inertial coordinates (au, au/day, days).
///
/// Forces: Newtonian point masses, plus the star's first post-Newtonian
/// term ([`add_post_newtonian_accelerations`]) when
/// [`System::post_newtonian`] is set. Events are checked at every step
/// boundary (see [`GaussRadau::new`]). All work arrays are allocated in the
/// constructor; a step allocates nothing (an event record may).
#[derive(Debug, Clone)]
pub struct GaussRadau {
    masses: Vec<f64>,
    radii: Vec<f64>,
    post_newtonian: bool,
    settings: GaussRadauSettings,
    tables: Tables,
    /// Number of real coordinates 3N and of tangent blocks after them.
    nr: usize,
    ntan: usize,
    /// Tangent vectors at the last output.
    out_tan: Vec<Tangent>,
    /// Time of the current step boundary and its compensation.
    t: f64,
    t_cs: f64,
    /// Flat (3N) positions, velocities and their Kahan compensations.
    x: Vec<f64>,
    v: Vec<f64>,
    csx: Vec<f64>,
    csv: Vec<f64>,
    /// Acceleration at the step start, at the current node, and the
    /// predicted positions/velocities at the node.
    a0: Vec<f64>,
    at: Vec<f64>,
    xs: Vec<f64>,
    vs: Vec<f64>,
    /// Polynomial coefficients per coordinate.
    b: Vec<[f64; 7]>,
    g: Vec<[f64; 7]>,
    e: Vec<[f64; 7]>,
    br: Vec<[f64; 7]>,
    er: Vec<[f64; 7]>,
    /// Next trial step (signed) and the last accepted step.
    dt: f64,
    dt_last_done: f64,
    /// The last accepted step, for dense output.
    have_step: bool,
    step_t0: f64,
    step_dt: f64,
    step_x0: Vec<f64>,
    step_v0: Vec<f64>,
    step_a0: Vec<f64>,
    step_b: Vec<[f64; 7]>,
    /// Force scratch.
    forces: ForceBuffers,
    /// Event state: the mass factors ((m_i + m_j)/(3 M⋆))^{1/3} of the
    /// mutual Hill radii (entry i·N + j, i < j; computed once), onset
    /// flags and the astrocentric r·v of the last step.
    hill_factors: Vec<f64>,
    pair_flags: Vec<bool>,
    collide_flags: Vec<bool>,
    eject_flags: Vec<bool>,
    last_rdotv: Vec<f64>,
    events: Vec<Event>,
    stopped: Option<Event>,
    steps: u64,
    rejected: u64,
    iterations: u64,
    /// Step-size rule and its constant factor (7! ε)^{1/7} (for
    /// [`StepCriterion::PerBody2024`]).
    criterion: StepCriterion,
    per_body_factor: f64,
    /// Use only the general slice-based corrector pass (for benchmarks and
    /// the bit-identity test of the fixed-size pass).
    general_loop: bool,
    iteration_stop: IterationStop,
}

impl GaussRadau {
    /// A Gauss–Radau integrator starting from `system` (barycentric state,
    /// body 0 the star) at `system.state.t`.
    ///
    /// Events (after every accepted step, at its end):
    /// - close encounter: planets i, j closer than `hill_radii` mutual Hill
    ///   radii R_H = ((m_i + m_j)/(3 M⋆))^{1/3} (r_i + r_j)/2, with the
    ///   astrocentric distances r_i, r_j;
    /// - star collision: a planet's astrocentric distance below R⋆ + R_k,
    ///   or, when the step carried it through pericentre (r·v changed sign
    ///   from − to +), its osculating two-body pericentre distance
    ///   q = h²/(μ(1 + e)) below R⋆ + R_k (so a fast pericentre passage
    ///   between step boundaries is not missed);
    /// - ejection: barycentric distance above `max_distance`, or a positive
    ///   two-body energy of the planet's Jacobi orbit (about the barycentre
    ///   of the star and all planets of lower index);
    /// - step underflow: the needed step below `min_step` (when the run
    ///   goes on, the step is forced to `min_step` and accepted).
    ///
    /// Only the onset of a condition is recorded. Errors: invalid masses,
    /// radii, a non-finite state, or a bad tolerance/initial step.
    pub fn new(system: System, settings: GaussRadauSettings) -> Result<Self, NbodyError> {
        let n = system.masses.len();
        if n == 0 {
            return Err(NbodyError::InvalidSystem("no bodies".into()));
        }
        if system.radii.len() != n || system.state.pos.len() != n || system.state.vel.len() != n {
            return Err(NbodyError::InvalidSystem(
                "masses, radii, positions and velocities must have one entry per body".into(),
            ));
        }
        if !system.masses.iter().all(|m| m.is_finite() && *m >= 0.0) || system.masses[0] <= 0.0 {
            return Err(NbodyError::InvalidSystem(
                "masses must be finite and non-negative, the star's positive".into(),
            ));
        }
        if !system.radii.iter().all(|r| r.is_finite() && *r >= 0.0) {
            return Err(NbodyError::InvalidSystem(
                "radii must be finite and non-negative".into(),
            ));
        }
        let s = &system.state;
        if !s.t.is_finite()
            || !s
                .pos
                .iter()
                .chain(s.vel.iter())
                .all(|p| p.iter().all(|c| c.is_finite()))
        {
            return Err(NbodyError::InvalidSystem("state is not finite".into()));
        }
        if !(settings.tolerance > 0.0 && settings.tolerance.is_finite()) {
            return Err(NbodyError::InvalidRequest(format!(
                "tolerance must be positive and finite, got {}",
                settings.tolerance
            )));
        }
        if !(settings.events.min_step >= 0.0 && settings.events.min_step.is_finite()) {
            return Err(NbodyError::InvalidRequest(
                "min_step must be finite and ≥ 0".into(),
            ));
        }
        let dt0 = match settings.initial_step {
            Some(h) => {
                if !(h.is_finite() && h != 0.0) {
                    return Err(NbodyError::InvalidRequest(format!(
                        "initial step must be finite and non-zero, got {h}"
                    )));
                }
                h.abs()
            }
            None => default_initial_step(&system),
        };
        let n3 = 3 * n;
        let mut x = vec![0.0; n3];
        let mut v = vec![0.0; n3];
        for i in 0..n {
            for c in 0..3 {
                x[3 * i + c] = s.pos[i][c];
                v[3 * i + c] = s.vel[i][c];
            }
        }
        let mut gr = GaussRadau {
            masses: system.masses.clone(),
            radii: system.radii.clone(),
            post_newtonian: system.post_newtonian,
            settings,
            tables: Tables::new(),
            nr: n3,
            ntan: 0,
            out_tan: Vec::new(),
            t: s.t,
            t_cs: 0.0,
            x,
            v,
            csx: vec![0.0; n3],
            csv: vec![0.0; n3],
            a0: vec![0.0; n3],
            at: vec![0.0; n3],
            xs: vec![0.0; n3],
            vs: vec![0.0; n3],
            b: vec![[0.0; 7]; n3],
            g: vec![[0.0; 7]; n3],
            e: vec![[0.0; 7]; n3],
            br: vec![[0.0; 7]; n3],
            er: vec![[0.0; 7]; n3],
            dt: dt0,
            dt_last_done: 0.0,
            have_step: false,
            step_t0: s.t,
            step_dt: 0.0,
            step_x0: vec![0.0; n3],
            step_v0: vec![0.0; n3],
            step_a0: vec![0.0; n3],
            step_b: vec![[0.0; 7]; n3],
            forces: ForceBuffers {
                pos: vec![Vector3::zeros(); n],
                vel: vec![Vector3::zeros(); n],
                acc: vec![Vector3::zeros(); n],
            },
            hill_factors: (0..n * n)
                .map(|k| {
                    let (i, j) = (k / n, k % n);
                    ((system.masses[i] + system.masses[j]) / (3.0 * system.masses[0])).cbrt()
                })
                .collect(),
            pair_flags: vec![false; n * n],
            collide_flags: vec![false; n],
            eject_flags: vec![false; n],
            last_rdotv: vec![0.0; n],
            events: Vec::new(),
            stopped: None,
            steps: 0,
            rejected: 0,
            iterations: 0,
            criterion: StepCriterion::default(),
            per_body_factor: (5040.0 * settings.tolerance).powf(1.0 / 7.0),
            general_loop: false,
            iteration_stop: IterationStop::default(),
        };
        for k in 1..n {
            gr.last_rdotv[k] = gr.rel(k).0.dot(&gr.rel(k).1);
        }
        Ok(gr)
    }

    /// The system at the current step boundary (masses, radii, flags and
    /// the barycentric state).
    pub fn system(&self) -> System {
        System {
            masses: self.masses.clone(),
            radii: self.radii.clone(),
            state: self.snapshot(),
            post_newtonian: self.post_newtonian,
        }
    }

    /// Choose the step-size rule (default [`StepCriterion::PerBody2024`]).
    /// Takes effect from the next step.
    pub fn set_step_criterion(&mut self, criterion: StepCriterion) {
        self.criterion = criterion;
    }

    /// The step-size rule in use.
    pub fn step_criterion(&self) -> StepCriterion {
        self.criterion
    }

    /// With `true`, always run the general slice-based predictor–corrector
    /// pass instead of its fixed-size copy for 2–10 bodies. The results
    /// are bit-identical (same arithmetic in the same order); only the
    /// speed differs. Kept as the baseline of `benches/nbody.rs`.
    pub fn set_general_loop(&mut self, general: bool) {
        self.general_loop = general;
    }

    /// Choose when the predictor–corrector iteration stops (default
    /// [`IterationStop::PredictedRate`]). Takes effect from the next step.
    pub fn set_iteration_stop(&mut self, rule: IterationStop) {
        self.iteration_stop = rule;
    }

    /// The predictor–corrector stopping rule in use.
    pub fn iteration_stop(&self) -> IterationStop {
        self.iteration_stop
    }

    /// Number of accepted steps so far.
    pub fn steps(&self) -> u64 {
        self.steps
    }

    /// Number of rejected (redone) steps so far.
    pub fn rejected_steps(&self) -> u64 {
        self.rejected
    }

    /// Total predictor–corrector iterations so far (each costs seven force
    /// evaluations).
    pub fn iterations(&self) -> u64 {
        self.iterations
    }

    /// The next trial step in days (signed by the direction of travel).
    pub fn next_step(&self) -> f64 {
        self.dt
    }

    /// Astrocentric position and velocity of body `k`.
    #[inline]
    fn rel(&self, k: usize) -> (Vector3<f64>, Vector3<f64>) {
        let r = Vector3::new(
            self.x[3 * k] - self.x[0],
            self.x[3 * k + 1] - self.x[1],
            self.x[3 * k + 2] - self.x[2],
        );
        let v = Vector3::new(
            self.v[3 * k] - self.v[0],
            self.v[3 * k + 1] - self.v[1],
            self.v[3 * k + 2] - self.v[2],
        );
        (r, v)
    }

    /// Turn the direction of travel: the step polynomial predictions of the
    /// other direction are dropped.
    fn reverse(&mut self) {
        self.dt = -self.dt;
        for j in 0..self.b.len() {
            self.b[j] = [0.0; 7];
            self.e[j] = [0.0; 7];
            self.br[j] = [0.0; 7];
            self.er[j] = [0.0; 7];
        }
        self.dt_last_done = 0.0;
    }

    /// One accepted step of length ≈ `self.dt` (retried with smaller steps
    /// when rejected), followed by the event checks.
    fn step(&mut self) -> Result<(), NbodyError> {
        let n3 = self.x.len();
        let (nr, ntan) = (self.nr, self.ntan);
        self.forces.eval_all(
            &self.masses,
            self.post_newtonian,
            nr,
            ntan,
            &self.x,
            &self.v,
            &mut self.a0,
        );
        if !self.a0.iter().all(|a| a.is_finite()) {
            return Err(NbodyError::NonFinite { t: self.t });
        }
        loop {
            let mut dt = self.dt;
            if !dt.is_finite() || dt == 0.0 {
                return Err(NbodyError::NonFinite { t: self.t });
            }
            let mut forced = false;
            let min_step = self.settings.events.min_step;
            if dt.abs() < min_step {
                let ev = Event::StepUnderflow {
                    t: self.t,
                    dt: dt.abs(),
                };
                self.events.push(ev);
                if self.settings.events.stop_on_event {
                    self.stopped = Some(ev);
                    return Err(NbodyError::Stopped(ev));
                }
                dt = min_step.copysign(dt);
                self.dt = dt;
                forced = true;
            }
            // g from the predicted b.
            let d = &self.tables.d;
            for j in 0..n3 {
                let bj = &self.b[j];
                let mut gj = [0.0; 7];
                for k in 0..7 {
                    let mut s = 0.0;
                    for m in k..7 {
                        s += d[m][k] * bj[m];
                    }
                    gj[k] = s;
                }
                self.g[j] = gj;
            }
            // Predictor–corrector iteration.
            let rate_threshold = CONVERGENCE.max(ITERATION_KAPPA * self.settings.tolerance);
            let mut pc_err = f64::INFINITY;
            let mut pc_err_last = 2.0;
            let mut iter = 0;
            while pc_err >= CONVERGENCE {
                if iter >= MAX_ITERATIONS {
                    break;
                }
                if iter > 2 && pc_err_last <= pc_err {
                    // Oscillating at round-off: no further gain.
                    break;
                }
                if iter >= 2 && self.iteration_stop == IterationStop::PredictedRate {
                    // Hairer & Wanner (1996) §IV.8: the rate θ of the last
                    // two changes bounds what is left, θ/(1 − θ) δ_k.
                    let theta = pc_err / pc_err_last;
                    if theta < 1.0 && theta / (1.0 - theta) * pc_err < rate_threshold {
                        break;
                    }
                }
                pc_err_last = pc_err;
                iter += 1;
                let (max_delta6, max_at) = self.corrector_pass(dt);
                pc_err = if max_at > 0.0 {
                    max_delta6 / max_at
                } else {
                    max_delta6
                };
                if !pc_err.is_finite() {
                    return Err(NbodyError::NonFinite { t: self.t });
                }
            }
            self.iterations += iter as u64;
            b_from_g(&self.tables.c, &self.g, &mut self.b);
            // Global error estimate ε̃ = max|b₆| / max|a| (Rein & Spiegel
            // 2015, eq. 11), with a from the last node.
            let mut max_b6: f64 = 0.0;
            let mut max_a: f64 = 0.0;
            let mut finite = true;
            for j in 0..n3 {
                let b6 = self.b[j][6];
                let a = self.at[j];
                finite &= b6.is_finite() && a.is_finite();
                if j < nr {
                    max_b6 = max_b6.max(b6.abs());
                    max_a = max_a.max(a.abs());
                }
            }
            if !finite {
                return Err(NbodyError::NonFinite { t: self.t });
            }
            let dt_new = match self.criterion {
                StepCriterion::Global2015 => {
                    let err = if max_a > 0.0 { max_b6 / max_a } else { 0.0 };
                    if err > 0.0 {
                        dt * (self.settings.tolerance / err).powf(1.0 / 7.0)
                    } else {
                        dt / SAFETY
                    }
                }
                StepCriterion::PerBody2024 => {
                    let ts2 = min_timescale2(&self.a0[..nr], &self.b[..nr]);
                    if ts2.is_normal() {
                        ts2.sqrt() * dt * self.per_body_factor
                    } else {
                        dt / SAFETY
                    }
                }
            };
            if !forced && (dt_new / dt).abs() < SAFETY {
                // Reject: redo with the smaller step, predicting b from the
                // last accepted step.
                self.rejected += 1;
                self.dt = dt_new;
                if self.dt_last_done != 0.0 {
                    let ratio = self.dt / self.dt_last_done;
                    predict_next(ratio, &self.er, &self.br, &mut self.e, &mut self.b);
                } else {
                    for bj in self.b.iter_mut() {
                        *bj = [0.0; 7];
                    }
                }
                continue;
            }
            // Accept: keep the step for dense output, then update.
            self.have_step = true;
            self.step_t0 = self.t;
            self.step_dt = dt;
            for j in 0..n3 {
                self.step_x0[j] = self.x[j] - self.csx[j];
                self.step_v0[j] = self.v[j] - self.csv[j];
            }
            self.step_a0.copy_from_slice(&self.a0);
            self.step_b.copy_from_slice(&self.b);
            // Compensated update (Kahan 1965; Rein & Spiegel 2015, §2.2) of
            // the three parts of the increment: the b terms, summed first
            // in plain arithmetic (smallest first), then a₀ and v₀. The b
            // terms together are ≈ (Ω Δt)³ of the position (Ω the fastest
            // orbital frequency: ≈ 1e-3 here) and ≈ (Ω Δt)² of the
            // velocity, so rounding their sum adds far less than the
            // rounding of the v₀ Δt and a₀ Δt terms themselves (≈ ½ ulp of
            // a term ≈ Ω Δt of the coordinate), which bounds the error of
            // the term-by-term sum as well; the sum and its compensation
            // stay in registers.
            let dt2 = dt * dt;
            for j in 0..n3 {
                let bj = self.b[j];
                let a0 = self.a0[j];
                let v0 = self.v[j];
                let (mut x, mut cx) = (self.x[j], self.csx[j]);
                let px = bj[6] * (1.0 / 72.0) * dt2
                    + bj[5] * (1.0 / 56.0) * dt2
                    + bj[4] * (1.0 / 42.0) * dt2
                    + bj[3] * (1.0 / 30.0) * dt2
                    + bj[2] * (1.0 / 20.0) * dt2
                    + bj[1] * (1.0 / 12.0) * dt2
                    + bj[0] * (1.0 / 6.0) * dt2;
                add_cs(&mut x, &mut cx, px);
                add_cs(&mut x, &mut cx, a0 * (1.0 / 2.0) * dt2);
                add_cs(&mut x, &mut cx, v0 * dt);
                let (mut v, mut cv) = (v0, self.csv[j]);
                let pv = bj[6] * (1.0 / 8.0) * dt
                    + bj[5] * (1.0 / 7.0) * dt
                    + bj[4] * (1.0 / 6.0) * dt
                    + bj[3] * (1.0 / 5.0) * dt
                    + bj[2] * (1.0 / 4.0) * dt
                    + bj[1] * (1.0 / 3.0) * dt
                    + bj[0] * (1.0 / 2.0) * dt;
                add_cs(&mut v, &mut cv, pv);
                add_cs(&mut v, &mut cv, a0 * dt);
                self.x[j] = x;
                self.csx[j] = cx;
                self.v[j] = v;
                self.csv[j] = cv;
            }
            if !self.x.iter().chain(self.v.iter()).all(|c| c.is_finite()) {
                // Leave the last finite state in place (no NaN escapes).
                self.x.copy_from_slice(&self.step_x0);
                self.v.copy_from_slice(&self.step_v0);
                self.csx.fill(0.0);
                self.csv.fill(0.0);
                self.have_step = false;
                return Err(NbodyError::NonFinite { t: self.t + dt });
            }
            add_cs(&mut self.t, &mut self.t_cs, dt);
            self.steps += 1;
            self.dt_last_done = dt;
            let mut dt_next = dt_new;
            if (dt_next / dt).abs() > 1.0 / SAFETY {
                dt_next = dt / SAFETY;
            }
            // The accepted e and b become the "last" ones; predict_next
            // overwrites every entry of e and b.
            std::mem::swap(&mut self.er, &mut self.e);
            std::mem::swap(&mut self.br, &mut self.b);
            predict_next(dt_next / dt, &self.er, &self.br, &mut self.e, &mut self.b);
            self.dt = dt_next;
            return self.check_events();
        }
    }

    /// One predictor–corrector pass over the seven nodes of a step of
    /// length `dt` (Everhart 1985 eqs. 8–10): predicted positions (and
    /// velocities with the 1PN term) from the g, forces, and the corrector
    /// of g at every node (b is formed from g after the iteration).
    /// Returns max|Δb₆| and max|a| at the last node over the real
    /// coordinates. Dispatches to a fixed-size copy of the same arithmetic
    /// (same operations in the same order, so bit-identical results) for
    /// the common case of 2–10 bodies without tangents or 1PN.
    #[inline]
    fn corrector_pass(&mut self, dt: f64) -> (f64, f64) {
        if self.ntan == 0 && !self.post_newtonian && !self.general_loop {
            let r = match self.nr {
                6 => self.corrector_pass_fixed::<6>(dt),
                9 => self.corrector_pass_fixed::<9>(dt),
                12 => self.corrector_pass_fixed::<12>(dt),
                15 => self.corrector_pass_fixed::<15>(dt),
                18 => self.corrector_pass_fixed::<18>(dt),
                21 => self.corrector_pass_fixed::<21>(dt),
                24 => self.corrector_pass_fixed::<24>(dt),
                27 => self.corrector_pass_fixed::<27>(dt),
                30 => self.corrector_pass_fixed::<30>(dt),
                _ => None,
            };
            if let Some(r) = r {
                return r;
            }
        }
        self.corrector_pass_general(dt)
    }

    /// [`GaussRadau::corrector_pass`] on slices of any length (tangent
    /// blocks and the 1PN term included).
    fn corrector_pass_general(&mut self, dt: f64) -> (f64, f64) {
        let (nr, ntan) = (self.nr, self.ntan);
        let mut max_delta6: f64 = 0.0;
        let mut max_at: f64 = 0.0;
        for (n, &tau) in NODES.iter().enumerate().skip(1) {
            let s_dt = dt * tau;
            let wn = self.tables.wg[n];
            let un = self.tables.ug[n];
            let dt2 = dt * dt;
            let wa = wn[0] * dt2;
            let wb = [
                wn[1] * dt2,
                wn[2] * dt2,
                wn[3] * dt2,
                wn[4] * dt2,
                wn[5] * dt2,
                wn[6] * dt2,
                wn[7] * dt2,
            ];
            for ((xs, (&x, &cs)), (&v, (&a0, b))) in self
                .xs
                .iter_mut()
                .zip(self.x.iter().zip(&self.csx))
                .zip(self.v.iter().zip(self.a0.iter().zip(&self.g)))
            {
                let p = (wa * a0 + wb[0] * b[0] + wb[1] * b[1] + wb[2] * b[2])
                    + (wb[3] * b[3] + wb[4] * b[4] + wb[5] * b[5] + wb[6] * b[6]);
                *xs = x + ((s_dt * v + p) - cs);
            }
            if self.post_newtonian {
                for ((vs, (&v, &cs)), (&a0, g)) in self
                    .vs
                    .iter_mut()
                    .zip(self.v.iter().zip(&self.csv))
                    .zip(self.a0.iter().zip(&self.g))
                {
                    let u = (un[0] * a0 + un[1] * g[0] + un[2] * g[1] + un[3] * g[2])
                        + (un[4] * g[3] + un[5] * g[4] + un[6] * g[5] + un[7] * g[6]);
                    *vs = v + (dt * u - cs);
                }
            }
            self.forces.eval_all(
                &self.masses,
                self.post_newtonian,
                nr,
                ntan,
                &self.xs,
                &self.vs,
                &mut self.at,
            );
            let inv = &self.tables.inv[n];
            let (at, a0, g) = (&self.at, &self.a0, &mut self.g);
            // Convergence is judged on the real bodies only.
            let md = corrector_node(n, inv, &at[..nr], &a0[..nr], &mut g[..nr]);
            if ntan > 0 {
                corrector_node(n, inv, &at[nr..], &a0[nr..], &mut g[nr..]);
            }
            if n == 7 {
                max_delta6 = md;
                max_at = at[..nr].iter().fold(0.0f64, |m, a| m.max(a.abs()));
            }
        }
        (max_delta6, max_at)
    }

    /// [`GaussRadau::corrector_pass`] for `M` = 3N real coordinates and
    /// nothing else (Newtonian forces, no tangents): the arrays as
    /// fixed-size arrays, so the loops over coordinates are unrolled and
    /// free of bounds checks. `None` when the lengths do not match.
    #[inline(always)]
    fn corrector_pass_fixed<const M: usize>(&mut self, dt: f64) -> Option<(f64, f64)> {
        let x: &[f64; M] = self.x.as_slice().try_into().ok()?;
        let csx: &[f64; M] = self.csx.as_slice().try_into().ok()?;
        let v: &[f64; M] = self.v.as_slice().try_into().ok()?;
        let a0: &[f64; M] = self.a0.as_slice().try_into().ok()?;
        let xs: &mut [f64; M] = self.xs.as_mut_slice().try_into().ok()?;
        let at: &mut [f64; M] = self.at.as_mut_slice().try_into().ok()?;
        let g: &mut [[f64; 7]; M] = self.g.as_mut_slice().try_into().ok()?;
        let masses = self.masses.get(..M / 3)?;
        let tables = &self.tables;
        let mut max_delta6: f64 = 0.0;
        let mut max_at: f64 = 0.0;
        for (n, &tau) in NODES.iter().enumerate().skip(1) {
            let s_dt = dt * tau;
            let wn = tables.wg[n];
            let dt2 = dt * dt;
            let wa = wn[0] * dt2;
            let wb = [
                wn[1] * dt2,
                wn[2] * dt2,
                wn[3] * dt2,
                wn[4] * dt2,
                wn[5] * dt2,
                wn[6] * dt2,
                wn[7] * dt2,
            ];
            for j in 0..M {
                let bj = &g[j];
                let p = (wa * a0[j] + wb[0] * bj[0] + wb[1] * bj[1] + wb[2] * bj[2])
                    + (wb[3] * bj[3] + wb[4] * bj[4] + wb[5] * bj[5] + wb[6] * bj[6]);
                xs[j] = x[j] + ((s_dt * v[j] + p) - csx[j]);
            }
            newtonian_fixed(masses, xs, at);
            let inv = &tables.inv[n];
            let md = corrector_node(n, inv, &at[..], &a0[..], &mut g[..]);
            if n == 7 {
                max_delta6 = md;
                max_at = at.iter().fold(0.0f64, |m, a| m.max(a.abs()));
            }
        }
        Some((max_delta6, max_at))
    }

    /// Event checks at the current step boundary (see [`GaussRadau::new`]).
    fn check_events(&mut self) -> Result<(), NbodyError> {
        let n = self.masses.len();
        let ev_set = self.settings.events;
        let t = self.t;
        let m0 = self.masses[0];
        let mut first: Option<Event> = None;
        // Close encounters between planets.
        if let Some(hill) = ev_set.hill_radii {
            for i in 1..n {
                let (ri, _) = self.rel(i);
                for j in (i + 1)..n {
                    let (rj, _) = self.rel(j);
                    let rh = self.hill_factors[i * n + j] * 0.5 * (ri.norm() + rj.norm());
                    let sep = (ri - rj).norm();
                    let inside = rh > 0.0 && sep < hill * rh;
                    let flag = &mut self.pair_flags[i * n + j];
                    if inside && !*flag {
                        let ev = Event::CloseEncounter {
                            t,
                            i,
                            j,
                            hill_separation: sep / rh,
                        };
                        self.events.push(ev);
                        first.get_or_insert(ev);
                    }
                    *flag = inside;
                }
            }
        }
        // Collisions with the star.
        for k in 1..n {
            let (r, v) = self.rel(k);
            let rdotv = r.dot(&v);
            if ev_set.star_collisions {
                let rsum = self.radii[0] + self.radii[k];
                let rn = r.norm();
                let mut dist = rn;
                if self.last_rdotv[k] < 0.0 && rdotv >= 0.0 {
                    // Pericentre passed during the step: osculating q.
                    let mu = G * (m0 + self.masses[k]);
                    let h2 = r.cross(&v).norm_squared();
                    let evec = v.cross(&r.cross(&v)) / mu - r / rn;
                    let q = h2 / (mu * (1.0 + evec.norm()));
                    if q.is_finite() {
                        dist = dist.min(q);
                    }
                }
                let inside = dist < rsum;
                if inside && !self.collide_flags[k] {
                    let ev = Event::StarCollision {
                        t,
                        body: k,
                        distance: dist,
                    };
                    self.events.push(ev);
                    first.get_or_insert(ev);
                }
                self.collide_flags[k] = inside;
            }
            self.last_rdotv[k] = rdotv;
        }
        // Ejections: distance or unbound Jacobi orbit.
        if let Some(dmax) = ev_set.max_distance {
            let mut mc = self.masses[0];
            let mut com = Vector3::new(self.x[0], self.x[1], self.x[2]) * mc;
            let mut vcom = Vector3::new(self.v[0], self.v[1], self.v[2]) * mc;
            for k in 1..n {
                let xk = Vector3::new(self.x[3 * k], self.x[3 * k + 1], self.x[3 * k + 2]);
                let vk = Vector3::new(self.v[3 * k], self.v[3 * k + 1], self.v[3 * k + 2]);
                let rj = xk - com / mc;
                let vj = vk - vcom / mc;
                let mk = self.masses[k];
                let mu = G * (mc + mk);
                let energy = 0.5 * vj.norm_squared() - mu / rj.norm();
                let dist = xk.norm();
                let out = dist > dmax || energy > 0.0;
                if out && !self.eject_flags[k] {
                    let ev = Event::Ejection {
                        t,
                        body: k,
                        distance: dist,
                    };
                    self.events.push(ev);
                    first.get_or_insert(ev);
                }
                self.eject_flags[k] = out;
                com += xk * mk;
                vcom += vk * mk;
                mc += mk;
            }
        }
        match first {
            Some(ev) if ev_set.stop_on_event => {
                self.stopped = Some(ev);
                Err(NbodyError::Stopped(ev))
            }
            _ => Ok(()),
        }
    }

    /// Is `t` inside the last accepted step (ends included)?
    #[inline]
    fn in_last_step(&self, t: f64) -> bool {
        if !self.have_step {
            return false;
        }
        let t1 = self.step_t0 + self.step_dt;
        let (lo, hi) = if self.step_dt > 0.0 {
            (self.step_t0, t1)
        } else {
            (t1, self.step_t0)
        };
        t >= lo && t <= hi
    }

    /// Dense output: the last step's polynomial at time `t`.
    fn dense(&mut self, t: f64, out: &mut Snapshot) {
        let dt = self.step_dt;
        let tau = (t - self.step_t0) / dt;
        let n = self.masses.len();
        for i in 0..n {
            for c in 0..3 {
                let j = 3 * i + c;
                let b = &self.step_b[j];
                out.pos[i][c] =
                    self.step_x0[j] + pos_poly(dt, tau, self.step_v0[j], self.step_a0[j], b);
                out.vel[i][c] = self.step_v0[j] + vel_poly(dt, tau, self.step_a0[j], b);
            }
        }
        out.t = t;
        let nr = self.nr;
        for (k, tan) in self.out_tan.iter_mut().enumerate() {
            let off = (k + 1) * nr;
            for i in 0..n {
                for c in 0..3 {
                    let j = off + 3 * i + c;
                    let b = &self.step_b[j];
                    tan.pos[i][c] =
                        self.step_x0[j] + pos_poly(dt, tau, self.step_v0[j], self.step_a0[j], b);
                    tan.vel[i][c] = self.step_v0[j] + vel_poly(dt, tau, self.step_a0[j], b);
                }
            }
        }
    }

    fn write_current(&self, out: &mut Snapshot) {
        let n = self.masses.len();
        for i in 0..n {
            for c in 0..3 {
                out.pos[i][c] = self.x[3 * i + c];
                out.vel[i][c] = self.v[3 * i + c];
            }
        }
        out.t = self.t;
    }

    /// Copy the current tangent coordinates into the output tangents.
    fn write_current_tangents(&mut self) {
        let (n, nr) = (self.masses.len(), self.nr);
        for (k, tan) in self.out_tan.iter_mut().enumerate() {
            let off = (k + 1) * nr;
            for i in 0..n {
                for c in 0..3 {
                    tan.pos[i][c] = self.x[off + 3 * i + c] - self.csx[off + 3 * i + c];
                    tan.vel[i][c] = self.v[off + 3 * i + c] - self.csv[off + 3 * i + c];
                }
            }
        }
    }
}

/// Default first step: 1/20 of the shortest astrocentric timescale
/// min(r/v, √(r³/μ)) of the planets (1 day when there are none).
fn default_initial_step(system: &System) -> f64 {
    let s = &system.state;
    let mut tmin = f64::INFINITY;
    for k in 1..system.masses.len() {
        let r = (s.pos[k] - s.pos[0]).norm();
        let v = (s.vel[k] - s.vel[0]).norm();
        let mu = G * (system.masses[0] + system.masses[k]);
        let t_dyn = (r * r * r / mu).sqrt();
        let t_cross = if v > 0.0 { r / v } else { f64::INFINITY };
        tmin = tmin.min(t_dyn).min(t_cross);
    }
    if tmin.is_finite() && tmin > 0.0 {
        tmin / 20.0
    } else {
        1.0
    }
}

impl Variational for GaussRadau {
    fn set_tangents(&mut self, tangents: &[Tangent]) -> Result<(), NbodyError> {
        if self.post_newtonian {
            return Err(NbodyError::InvalidRequest(
                "tangent vectors are not available with the post-Newtonian term in Gauss–Radau"
                    .into(),
            ));
        }
        let n = self.masses.len();
        if tangents
            .iter()
            .any(|t| t.pos.len() != n || t.vel.len() != n)
        {
            return Err(NbodyError::InvalidRequest(format!(
                "every tangent vector needs {n} positions and velocities"
            )));
        }
        if tangents.iter().any(|t| {
            !t.pos
                .iter()
                .chain(&t.vel)
                .all(|p| p.iter().all(|c| c.is_finite()))
        }) {
            return Err(NbodyError::InvalidRequest(
                "tangent vectors must be finite".into(),
            ));
        }
        let nr = self.nr;
        let total = nr * (1 + tangents.len());
        for a in [
            &mut self.x,
            &mut self.v,
            &mut self.csx,
            &mut self.csv,
            &mut self.a0,
            &mut self.at,
            &mut self.xs,
            &mut self.vs,
            &mut self.step_x0,
            &mut self.step_v0,
            &mut self.step_a0,
        ] {
            a.truncate(nr);
            a.resize(total, 0.0);
        }
        for a in [
            &mut self.b,
            &mut self.g,
            &mut self.e,
            &mut self.br,
            &mut self.er,
            &mut self.step_b,
        ] {
            a.truncate(nr);
            a.resize(total, [0.0; 7]);
        }
        for (k, t) in tangents.iter().enumerate() {
            let off = (k + 1) * nr;
            for i in 0..n {
                for c in 0..3 {
                    self.x[off + 3 * i + c] = t.pos[i][c];
                    self.v[off + 3 * i + c] = t.vel[i][c];
                }
            }
        }
        self.ntan = tangents.len();
        self.out_tan = tangents.to_vec();
        self.have_step = false;
        Ok(())
    }

    fn tangent_count(&self) -> usize {
        self.ntan
    }

    fn output_tangents(&self) -> &[Tangent] {
        &self.out_tan
    }

    fn scale_tangent(&mut self, i: usize, factor: f64) {
        if i >= self.ntan {
            return;
        }
        let blk = (i + 1) * self.nr..(i + 2) * self.nr;
        for a in [
            &mut self.x,
            &mut self.v,
            &mut self.csx,
            &mut self.csv,
            &mut self.a0,
            &mut self.at,
            &mut self.step_x0,
            &mut self.step_v0,
            &mut self.step_a0,
        ] {
            for x in &mut a[blk.clone()] {
                *x *= factor;
            }
        }
        for a in [
            &mut self.b,
            &mut self.g,
            &mut self.e,
            &mut self.br,
            &mut self.er,
            &mut self.step_b,
        ] {
            for x in a[blk.clone()].iter_mut().flatten() {
                *x *= factor;
            }
        }
        let o = &mut self.out_tan[i];
        for x in o.pos.iter_mut().chain(o.vel.iter_mut()) {
            *x *= factor;
        }
    }
}

impl Integrator for GaussRadau {
    fn time(&self) -> f64 {
        self.t
    }

    fn snapshot(&self) -> Snapshot {
        let mut s = Snapshot::zeros(self.masses.len(), self.t);
        self.write_current(&mut s);
        s
    }

    fn advance_to(&mut self, t: f64, out: &mut Snapshot) -> Result<(), NbodyError> {
        if !t.is_finite() {
            return Err(NbodyError::InvalidRequest(format!(
                "time must be finite, got {t}"
            )));
        }
        let n = self.masses.len();
        if out.pos.len() != n || out.vel.len() != n {
            return Err(NbodyError::InvalidRequest(format!(
                "output snapshot has {} entries, system has {n} bodies",
                out.pos.len()
            )));
        }
        if let Some(ev) = self.stopped {
            return Err(NbodyError::Stopped(ev));
        }
        loop {
            if t == self.t {
                self.write_current(out);
                self.write_current_tangents();
                return Ok(());
            }
            if self.in_last_step(t) {
                self.dense(t, out);
                return Ok(());
            }
            let forward = t > self.t;
            if forward != (self.dt > 0.0) {
                self.reverse();
            }
            self.step()?;
        }
    }

    fn events(&self) -> &[Event] {
        &self.events
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn coefficient_tables_round_trip() {
        // b = Cᵀ g and g = Dᵀ b must be inverse maps (exact algebra of the
        // Newton and power bases; Everhart 1985 eqs. 8–10).
        let t = Tables::new();
        for m in 0..7 {
            for k in 0..7 {
                let mut s = 0.0;
                for l in 0..7 {
                    s += t.c[l][m] * t.d[k][l];
                }
                let want = if m == k { 1.0 } else { 0.0 };
                assert!((s - want).abs() < 1e-13, "m={m} k={k} s={s}");
            }
        }
        // The predictor weights on g equal those on b = Cᵀ g (algebra of
        // the two bases), for positions and velocities.
        let gs = [0.3, -1.2, 0.7, 2.1, -0.4, 1.5, -0.9];
        let mut bs = [0.0; 7];
        b_from_g(&t.c, &[gs], std::slice::from_mut(&mut bs));
        for (n, &tau) in NODES.iter().enumerate().skip(1) {
            let via_b: f64 = (0..7).map(|m| t.w[n][m + 1] * bs[m]).sum();
            let via_g: f64 = (0..7).map(|k| t.wg[n][k + 1] * gs[k]).sum();
            assert!((via_b - via_g).abs() < 1e-14, "n={n}: {via_b} {via_g}");
            let vb = vel_poly(1.0, tau, 0.0, &bs);
            let vg: f64 = (0..7).map(|k| t.ug[n][k + 1] * gs[k]).sum();
            assert!((vb - vg).abs() < 1e-14, "n={n}: {vb} {vg}");
            assert_eq!((t.wg[n][0], t.ug[n][0]), (t.w[n][0], tau));
        }
        // Published value (Rein & Spiegel 2015 / Everhart 1985 tables):
        // c₀ = −h₁, d₀ = h₁.
        assert_eq!(t.c[1][0], -NODES[1]);
        assert_eq!(t.d[1][0], NODES[1]);
    }

    #[test]
    fn fixed_size_force_is_bit_identical_to_the_shared_one() {
        // The inlined copy must reproduce forces.rs exactly (same
        // arithmetic), which is itself tested against Newton's third law
        // and the two-body limit there.
        let m = [1.0, 1e-3, 3e-4, 2e-5];
        let p = [
            0.001, -0.002, 0.0005, 0.4, 0.1, -0.02, -0.3, 0.9, 0.05, 1.5, -0.7, 0.3,
        ];
        let mut want = [0.0; 12];
        newtonian_accelerations_flat(&m, &p, &mut want);
        let mut got = [1.0; 12];
        newtonian_fixed::<12>(&m, &p, &mut got);
        assert_eq!(got, want);
    }

    #[test]
    fn per_body_timescale_of_a_circular_orbit_is_one_over_n() {
        // Uniform circular motion: F(τ) = −ω² r(τ) with ω = n Δt per step,
        // so |F| = ω² r, |F′| = ω³ r, |F″| = ω⁴ r and the timescale
        // τ² = 2 y₂/(y₃ + √(y₄ y₂)) = 1/ω² (Pham, Rein & Spiegel 2024;
        // exact for a circle). The b of the Taylor series of
        // −ω² (cos ωτ, sin ωτ) truncated at τ⁷ give it to ≈ ω⁸.
        let w: f64 = 0.05;
        let mut a0 = [0.0; 3];
        let mut b = [[0.0; 7]; 3];
        a0[0] = -w * w;
        let mut fact = 1.0;
        for k in 1..=7 {
            fact *= k as f64;
            // d^k/dτ^k of −ω² cos ωτ and −ω² sin ωτ at τ = 0.
            let (cx, cy) = match k % 4 {
                0 => (1.0, 0.0),
                1 => (0.0, 1.0),
                2 => (-1.0, 0.0),
                _ => (0.0, -1.0),
            };
            b[0][k - 1] = -w * w * cx * w.powi(k as i32) / fact;
            b[1][k - 1] = -w * w * cy * w.powi(k as i32) / fact;
        }
        let ts2 = min_timescale2(&a0, &b);
        assert!((ts2 * w * w - 1.0).abs() < 1e-9, "{}", ts2 * w * w);
        // No acceleration: skipped.
        assert_eq!(min_timescale2(&[0.0; 3], &[[0.0; 7]; 3]), f64::INFINITY);
    }

    #[test]
    fn radau_nodes_integrate_to_degree_fourteen() {
        // Gauss–Radau quadrature with 8 nodes (one fixed at 0) is exact for
        // polynomials up to degree 2·8 − 2 = 14 (Abramowitz & Stegun 1964,
        // §25.4.31, from memory). Fit weights on degrees 0..7, check degrees 8..14.
        let v = nalgebra::SMatrix::<f64, 8, 8>::from_fn(|k, i| NODES[i].powi(k as i32));
        let rhs = nalgebra::SVector::<f64, 8>::from_fn(|k, _| 1.0 / (k as f64 + 1.0));
        let w = v.lu().solve(&rhs).unwrap();
        for k in 8..=14 {
            let q: f64 = (0..8).map(|i| w[i] * NODES[i].powi(k)).sum();
            assert!(
                (q - 1.0 / (k as f64 + 1.0)).abs() < 1e-12,
                "degree {k}: {q}"
            );
        }
        // ... and not for degree 15 (the rule's order is exactly 15).
        let q: f64 = (0..8).map(|i| w[i] * NODES[i].powi(15)).sum();
        assert!((q - 1.0 / 16.0).abs() > 1e-9);
    }
}

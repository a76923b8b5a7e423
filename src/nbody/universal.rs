//! Kepler drift of a two-body relative state by universal variables.
//!
//! Method: Danby (1988), *Fundamentals of Celestial Mechanics*, 2nd ed.,
//! §6.9 ("universal variables"): with β = 2μ/r₀ − v₀², η₀ = r₀·v₀ and
//! ζ₀ = μ − β r₀, the universal anomaly s solves
//!
//! f(s) = r₀ G₁(s) + η₀ G₂(s) + μ G₃(s) − Δt = 0,   f′(s) = r(s),
//!
//! with Gₖ(s) = sᵏ cₖ(β s²) and the Stumpff functions c₀..c₃. The root is
//! found by the Laguerre–Conway iteration (Conway 1986, Celest. Mech. 39,
//! 199; degree n = 5) kept inside a bracket that tightens at every step
//! (f is monotonic since f′ = r > 0), falling back to bisection when a
//! Laguerre step leaves the bracket. This is robust for every conic:
//! circular, very eccentric, parabolic and hyperbolic.
//!
//! The new state follows from the f and g functions (Danby 1988, eqs.
//! 6.9.x): f = 1 − μG₂/r₀, g = r₀G₁ + η₀G₂ (= Δt − μG₃ without the
//! cancellation), ḟ = −μG₁/(r₀ r), ġ = 1 − μG₂/r.
//!
//! Written by hand because no maintained Rust library offers an
//! allocation-free universal-variable propagator; everything here works
//! on the stack.

use std::f64::consts::TAU;

use nalgebra::Vector3;

use super::elliptic::{BoundOrbit, f_and_g_elliptic};

/// Stumpff functions c₀(x)..c₃(x) (Stumpff 1959; Danby 1988 §6.9):
/// c₀ = cos √x, c₁ = sin √x / √x, c₂ = (1 − cos √x)/x,
/// c₃ = (√x − sin √x)/x^{3/2}, continued analytically to x ≤ 0
/// (hyperbolic functions).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stumpff {
    /// c₀(x).
    pub c0: f64,
    /// c₁(x).
    pub c1: f64,
    /// c₂(x).
    pub c2: f64,
    /// c₃(x).
    pub c3: f64,
}

/// Largest |x| at which the Stumpff series is summed directly; larger
/// arguments are divided by 4 until below it and the values are doubled
/// back (Danby 1988, §6.9, the "quartering" formulae).
const SERIES_LIMIT: f64 = 0.1;

/// Below x = −9 (√−x > 3) the hyperbolic Stumpff functions are taken from
/// their closed forms instead.
const HYPERBOLIC_CLOSED_FORM: f64 = 9.0;

/// Stumpff functions at `x` by their power series after argument
/// reduction x → x/4ⁿ, then n applications of the doubling formulae
/// c₀(4x) = 2c₀(x)² − 1, c₁(4x) = c₀(x)c₁(x), c₂(4x) = c₁(x)²/2,
/// c₃(4x) = (c₂(x) + c₀(x)c₃(x))/4 (Danby 1988, §6.9).
///
/// Accurate to a few ulp for |x| ≲ 40 (one elliptic turn, x = β s² ≤ 4π²);
/// hyperbolic arguments x < −9 use the closed forms in cosh and sinh. Non-finite input gives non-finite output
/// (callers check).
#[inline]
pub fn stumpff(x: f64) -> Stumpff {
    if x < -HYPERBOLIC_CLOSED_FORM {
        // Far out on a hyperbola the doublings would multiply rounding
        // (each doubles the relative error of c₀); the closed forms have
        // no cancellation for √−x > 3: c₀ = cosh y, c₁ = sinh y / y,
        // c₂ = (cosh y − 1)/y², c₃ = (sinh y − y)/y³.
        let y = (-x).sqrt();
        let e = y.exp();
        let (ch, sh) = (0.5 * (e + 1.0 / e), 0.5 * (e - 1.0 / e));
        return Stumpff {
            c0: ch,
            c1: sh / y,
            c2: (ch - 1.0) / (-x),
            c3: (sh - y) / (-x * y),
        };
    }
    let mut xr = x;
    let mut n = 0u32;
    while xr.abs() > SERIES_LIMIT && n < 200 {
        xr *= 0.25;
        n += 1;
    }
    // c₂ = Σ (−x)ᵏ/(2k+2)!, c₃ = Σ (−x)ᵏ/(2k+3)! to k = 6 with
    // precomputed coefficients, by Estrin's scheme (short dependency chains:
    // the solver's iterations depend on each other, so latency matters).
    // For |x| ≤ 0.1 the first omitted term is below 0.1⁷/16! ≈ 5e-21.
    const C2: [f64; 7] = [
        1.0 / 2.0,
        -1.0 / 24.0,
        1.0 / 720.0,
        -1.0 / 40_320.0,
        1.0 / 3_628_800.0,
        -1.0 / 479_001_600.0,
        1.0 / 87_178_291_200.0,
    ];
    const C3: [f64; 7] = [
        1.0 / 6.0,
        -1.0 / 120.0,
        1.0 / 5040.0,
        -1.0 / 362_880.0,
        1.0 / 39_916_800.0,
        -1.0 / 6_227_020_800.0,
        1.0 / 1_307_674_368_000.0,
    ];
    let x2 = xr * xr;
    let x4 = x2 * x2;
    let estrin = |a: &[f64; 7]| {
        (a[0] + a[1] * xr) + x2 * (a[2] + a[3] * xr) + x4 * ((a[4] + a[5] * xr) + x2 * a[6])
    };
    let c2 = estrin(&C2);
    let c3 = estrin(&C3);
    let mut c = Stumpff {
        c0: 1.0 - xr * c2,
        c1: 1.0 - xr * c3,
        c2,
        c3,
    };
    for _ in 0..n {
        let c0 = 2.0 * c.c0 * c.c0 - 1.0;
        let c1 = c.c0 * c.c1;
        let c2 = 0.5 * c.c1 * c.c1;
        let c3 = 0.25 * (c.c2 + c.c0 * c.c3);
        c = Stumpff { c0, c1, c2, c3 };
    }
    c
}

/// Failure of a Kepler drift. Never NaN: a failed drift leaves its input
/// untouched and returns one of these.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum DriftError {
    /// μ ≤ 0, a zero position, or a non-finite input.
    #[error("invalid Kepler drift input (mu = {mu}, r = {r}, dt = {dt})")]
    InvalidInput {
        /// Gravitational parameter given (au³/d²).
        mu: f64,
        /// Distance given (au).
        r: f64,
        /// Time step given (days).
        dt: f64,
    },
    /// The universal Kepler equation did not converge.
    #[error("universal Kepler equation did not converge in {iterations} iterations")]
    NoConvergence {
        /// Iterations made.
        iterations: usize,
    },
}

/// The Lagrange f and g coefficients of a Kepler drift and the universal
/// anomaly s that produced them: r(t₀+Δt) = f r₀ + g v₀,
/// v(t₀+Δt) = ḟ r₀ + ġ v₀ (Danby 1988, §6.9).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FandG {
    /// f (dimensionless).
    pub f: f64,
    /// g (days).
    pub g: f64,
    /// ḟ (1/day).
    pub fdot: f64,
    /// ġ (dimensionless).
    pub gdot: f64,
    /// Universal anomaly s solving the universal Kepler equation (the
    /// elliptic turns removed from Δt first), in d·au⁻¹ units as in Danby.
    pub s: f64,
    /// Iterations used: of the universal Kepler equation, or (for a bound
    /// orbit solved in ΔE by [`super::elliptic`]) sine/cosine evaluations.
    pub iterations: usize,
    /// G₀(s)..G₃(s) at the solution (Gₖ = sᵏ cₖ(β s²)), for the tangent
    /// map ([`drift_tangent_from`]).
    pub gk: [f64; 4],
    /// β = 2μ/r₀ − v₀² (au²/d²) used by the solver (from compensated
    /// arithmetic near a parabola).
    pub beta: f64,
    /// Initial distance r₀ (au).
    pub r0: f64,
    /// Final distance r = r₀G₀ + η₀G₁ + μG₂ (au).
    pub r: f64,
}

/// Largest number of iterations of the universal Kepler equation.
pub const MAX_DRIFT_ITERATIONS: usize = 200;

/// f and g functions for a drift by `dt` (days, either sign) of the relative
/// state (`pos` au, `vel` au/day) about a gravitational parameter `mu`
/// (au³/d²).
///
/// `guess` is an optional starting universal anomaly (e.g. the solution of
/// the previous step of the same orbit, which makes a fixed-step integrator
/// converge in one or two iterations); it is ignored unless finite and of
/// the sign of `dt`. Full elliptic turns are removed from `dt` first
/// (the state is periodic), so any |dt| is accepted.
///
/// Bound orbits away from the parabola are solved in the change of
/// eccentric anomaly by [`super::elliptic`] (one or two sine/cosine
/// evaluations); every other case, and any case that solver declines, by
/// the universal-variable iteration above. Both give the same f and g to
/// rounding (tested).
#[inline]
pub fn f_and_g(
    pos: &Vector3<f64>,
    vel: &Vector3<f64>,
    mu: f64,
    dt: f64,
    guess: Option<f64>,
) -> Result<FandG, DriftError> {
    f_and_g_with(pos, vel, mu, dt, guess, true)
}

/// [`f_and_g`] with the elliptic solver switched on or off (`false`: the
/// universal-variable iteration for every orbit, as a reference in tests
/// and benches).
#[doc(hidden)]
#[inline]
pub fn f_and_g_with(
    pos: &Vector3<f64>,
    vel: &Vector3<f64>,
    mu: f64,
    dt: f64,
    guess: Option<f64>,
    elliptic: bool,
) -> Result<FandG, DriftError> {
    f_and_g_inlined(pos, vel, mu, dt, guess, elliptic)
}

/// The body of [`f_and_g_with`], inlined into [`kepler_drift`] so that the
/// drift keeps f and g in registers instead of returning the whole
/// [`FandG`] through memory.
#[inline(always)]
fn f_and_g_inlined(
    pos: &Vector3<f64>,
    vel: &Vector3<f64>,
    mu: f64,
    dt: f64,
    guess: Option<f64>,
    elliptic: bool,
) -> Result<FandG, DriftError> {
    let mut st = match solve_setup(pos, vel, mu, dt) {
        Setup::Done(r) => return r,
        Setup::Iterate(st) => st,
    };
    if elliptic && st.bound {
        if let [Some(fg)] = f_and_g_elliptic(&[st.orbit()]) {
            return Ok(fg);
        }
    }
    universal_start(&mut st, guess);
    for iteration in 0..MAX_DRIFT_ITERATIONS {
        if let Some(r) = solve_iteration(&mut st, iteration) {
            return r;
        }
    }
    Err(DriftError::NoConvergence {
        iterations: MAX_DRIFT_ITERATIONS,
    })
}

/// [`f_and_g`] (without a starting guess) for `L` independent orbits
/// drifted by the same `dt`, solved together: the iterations of the lanes
/// are interleaved (iteration i of lane 0, of lane 1, …, then iteration
/// i + 1 of the lanes not yet converged), so the processor overlaps their
/// independent chains of dependent operations (the solver is bound by
/// latency, not by throughput). Each lane runs exactly the operations of
/// the scalar solver, so every result is bitwise that of [`f_and_g`]
/// (checked by a test over random conics).
#[inline]
pub fn f_and_g_lanes<const L: usize>(
    pos: &[Vector3<f64>; L],
    vel: &[Vector3<f64>; L],
    mu: &[f64; L],
    dt: f64,
) -> [Result<FandG, DriftError>; L] {
    let mut out = [Err(DriftError::NoConvergence {
        iterations: MAX_DRIFT_ITERATIONS,
    }); L];
    let mut st = [Solve::default(); L];
    let mut live = [false; L];
    for l in 0..L {
        match solve_setup(&pos[l], &vel[l], mu[l], dt) {
            Setup::Done(r) => out[l] = r,
            Setup::Iterate(s) => {
                st[l] = s;
                live[l] = true;
            }
        }
    }
    // Bound orbits: the ΔE solver, all lanes together.
    let orbits: [BoundOrbit; L] = std::array::from_fn(|l| {
        if live[l] && st[l].bound {
            st[l].orbit()
        } else {
            BoundOrbit::FILLER
        }
    });
    let elliptic = f_and_g_elliptic(&orbits);
    for l in 0..L {
        if live[l] && st[l].bound {
            if let Some(fg) = elliptic[l] {
                out[l] = Ok(fg);
                live[l] = false;
            }
        }
    }
    for l in 0..L {
        if live[l] {
            universal_start(&mut st[l], None);
        }
    }
    for iteration in 0..MAX_DRIFT_ITERATIONS {
        let mut any = false;
        for l in 0..L {
            if live[l] {
                if let Some(r) = solve_iteration(&mut st[l], iteration) {
                    out[l] = r;
                    live[l] = false;
                } else {
                    any = true;
                }
            }
        }
        if !any {
            break;
        }
    }
    out
}

/// Positions and velocities of `L` orbits.
pub(crate) type LaneStates<const L: usize> = ([Vector3<f64>; L], [Vector3<f64>; L]);

/// The drifted states (r, v) of `L` independent orbits by the same `dt`,
/// when every lane is a bound orbit that the ΔE solver of
/// [`super::elliptic`] takes (the common case of a Wisdom–Holman drift);
/// `None` otherwise, and the caller then uses [`f_and_g_lanes`]. Each lane
/// runs exactly the operations of [`f_and_g`] followed by
/// r = f r₀ + g v₀, v = ḟ r₀ + ġ v₀, so the states are bitwise those of
/// [`kepler_drift`]; only f, g, ḟ and ġ are kept, so nothing else of
/// [`FandG`] passes through memory.
#[inline(always)]
pub(crate) fn drift_bound_lanes<const L: usize>(
    pos: &[Vector3<f64>; L],
    vel: &[Vector3<f64>; L],
    mu: &[f64; L],
    dt: f64,
) -> Option<LaneStates<L>> {
    let mut orbits = [BoundOrbit::FILLER; L];
    for l in 0..L {
        match solve_setup(&pos[l], &vel[l], mu[l], dt) {
            Setup::Iterate(st) if st.bound => orbits[l] = st.orbit(),
            _ => return None,
        }
    }
    let fg = f_and_g_elliptic(&orbits);
    let mut r = [Vector3::zeros(); L];
    let mut v = [Vector3::zeros(); L];
    for l in 0..L {
        let g = fg[l]?;
        r[l] = pos[l] * g.f + vel[l] * g.g;
        v[l] = pos[l] * g.fdot + vel[l] * g.gdot;
    }
    Some((r, v))
}

/// State of one universal Kepler equation being solved: the constants of
/// the orbit, the bracket [lo, hi] of the root and the current iterate s.
#[derive(Debug, Clone, Copy, Default)]
struct Solve {
    r0: f64,
    inv_r0: f64,
    eta0: f64,
    beta: f64,
    zeta0: f64,
    mu: f64,
    dt: f64,
    /// v₀² (for the starting value).
    v2: f64,
    /// A bound orbit away from the parabola (β > 0, β not recomputed in
    /// compensated arithmetic): the ΔE solver may take it.
    bound: bool,
    s: f64,
    lo: f64,
    hi: f64,
}

impl Solve {
    fn orbit(&self) -> BoundOrbit {
        BoundOrbit {
            r0: self.r0,
            inv_r0: self.inv_r0,
            eta0: self.eta0,
            beta: self.beta,
            zeta0: self.zeta0,
            mu: self.mu,
            dt: self.dt,
        }
    }
}

/// What [`solve_setup`] found: an answer without iterating, or a solve to
/// run.
enum Setup {
    Done(Result<FandG, DriftError>),
    Iterate(Solve),
}

/// Checks, β and the removal of whole turns (everything of [`f_and_g`]
/// before either solver; the universal one then needs
/// [`universal_start`]).
#[inline(always)]
fn solve_setup(pos: &Vector3<f64>, vel: &Vector3<f64>, mu: f64, dt: f64) -> Setup {
    let r0 = pos.norm();
    let v2 = vel.norm_squared();
    if !(mu > 0.0
        && mu.is_finite()
        && r0 > 0.0
        && r0.is_finite()
        && v2.is_finite()
        && dt.is_finite())
    {
        return Setup::Done(Err(DriftError::InvalidInput { mu, r: r0, dt }));
    }
    if dt == 0.0 {
        return Setup::Done(Ok(FandG {
            f: 1.0,
            g: 0.0,
            fdot: 0.0,
            gdot: 1.0,
            s: 0.0,
            iterations: 0,
            gk: [1.0, 0.0, 0.0, 0.0],
            beta: 2.0 * mu / r0 - v2,
            r0,
            r: r0,
        }));
    }
    let eta0 = pos.dot(vel);
    let inv_r0 = 1.0 / r0;
    let mut beta = 2.0 * mu * inv_r0 - v2;
    let near_parabolic = beta.abs() < 1e-2 * v2;
    if near_parabolic {
        // Near-parabolic: 2μ/r₀ and v₀² nearly cancel; recompute β with
        // error-free products and sums (Dekker 1971; Ogita, Rump & Oishi
        // 2005) so that β is accurate to rounding for the given floats.
        beta = compensated_beta(pos, vel, mu);
    }
    let zeta0 = mu - beta * r0;
    let mut dt = dt;
    // Elliptic orbits: drop whole turns so that |dt| ≤ P/2 (the state is
    // periodic). |dt| > P/2 ⟺ 4 dt² β³ > (2πμ)², tested without a division.
    if beta > 0.0 && 4.0 * dt * dt * beta * beta * beta > (TAU * mu) * (TAU * mu) {
        let period = TAU * mu / (beta * beta.sqrt());
        dt -= period * (dt / period).round();
        if dt == 0.0 {
            return Setup::Done(fg_from(
                0.0,
                [1.0, 0.0, 0.0, 0.0],
                beta,
                r0,
                inv_r0,
                eta0,
                mu,
                0,
            ));
        }
    }
    Setup::Iterate(Solve {
        r0,
        inv_r0,
        eta0,
        beta,
        zeta0,
        mu,
        dt,
        v2,
        bound: beta > 0.0 && !near_parabolic,
        s: 0.0,
        lo: 0.0,
        hi: 0.0,
    })
}

/// The bracket and the starting value of the universal iteration (`guess`
/// as in [`f_and_g`]).
#[inline(always)]
fn universal_start(st: &mut Solve, guess: Option<f64>) {
    let Solve {
        r0,
        inv_r0,
        eta0,
        beta,
        mu,
        dt,
        v2,
        ..
    } = *st;
    // Bracket [lo, hi] of the root, which is unique since f′ = r > 0:
    // f(0) = −dt.
    let (lo, hi) = if dt > 0.0 {
        (0.0, f64::INFINITY)
    } else {
        (f64::NEG_INFINITY, 0.0)
    };
    let s = match guess {
        Some(g) if g.is_finite() && g * dt > 0.0 && g > lo && g < hi => g,
        _ => {
            // Three terms of s(t) = ∫ dt / r about t₀: ds/dt = 1/r,
            // d²s/dt² = −ṙ/r², d³s/dt³ = (3ṙ² − v²)/r³ + μ/r⁴ (from
            // r̈ = (v² − ṙ²)/r − μ/r²), used when they form a series.
            let inv_r = inv_r0;
            let rdot = eta0 * inv_r;
            let s1 = dt * inv_r;
            let t2 = -0.5 * rdot * s1 * s1;
            let t3 = ((3.0 * rdot * rdot - v2) + mu * inv_r) * s1 * s1 * s1 * (1.0 / 6.0);
            let mut s0 = if t2.abs() + t3.abs() < 0.5 * s1.abs() {
                s1 + t2 + t3
            } else {
                s1
            };
            if beta < 0.0 {
                // Hyperbolic, long drift: for a|s| ≫ 1 (a = √−β) the
                // G-functions grow as e^{a|s|}, and f(s) = dt gives
                // |s| ≈ ln(2a³|dt| / (μ ± aη₀ + a²r₀)) / a (the
                // asymptotic start of Danby 1988 §6.9). Used when it is
                // the smaller estimate: the series overshoots there.
                let a = (-beta).sqrt();
                let den = mu + dt.signum() * a * eta0 + a * a * r0;
                let arg = 2.0 * a * a * a * dt.abs() / den;
                if den > 0.0 && arg > std::f64::consts::E {
                    let s_h = dt.signum() * arg.ln() / a;
                    if s_h.abs() < s0.abs() {
                        s0 = s_h;
                    }
                }
            }
            if s0 > lo && s0 < hi {
                s0
            } else if s1 > lo && s1 < hi {
                s1
            } else {
                // Not reached: s1 has the sign of dt and the bracket is a
                // half line; kept as a safe fallback.
                dt.signum() * r0.recip()
            }
        }
    };
    (st.s, st.lo, st.hi) = (s, lo, hi);
}

/// One iteration (number `iteration`, from 0) of the universal Kepler
/// equation: the answer when converged, else `None` with the state moved
/// to the next iterate.
#[inline(always)]
fn solve_iteration(st: &mut Solve, iteration: usize) -> Option<Result<FandG, DriftError>> {
    const LAGUERRE_N: f64 = 5.0;
    let Solve {
        r0,
        inv_r0,
        eta0,
        beta,
        zeta0,
        mu,
        dt,
        s,
        ..
    } = *st;
    let x = beta * s * s;
    let c = stumpff(x);
    let g1 = s * c.c1;
    let g2 = s * s * c.c2;
    let g3 = s * s * s * c.c3;
    let g0 = c.c0;
    let f0 = r0 * g1 + eta0 * g2 + mu * g3 - dt;
    let f1 = r0 * g0 + eta0 * g1 + mu * g2;
    let f2 = eta0 * g0 + zeta0 * g1;
    if !(f0.is_finite() && f1.is_finite() && f2.is_finite()) {
        // Overflow far past the root (hyperbolic): shrink the bracket.
        st.hi = if s > 0.0 { s } else { st.hi };
        st.lo = if s < 0.0 { s } else { st.lo };
        let shrunk = 0.25 * s;
        st.s = if shrunk > st.lo && shrunk < st.hi {
            shrunk
        } else {
            0.5 * (st.lo + st.hi)
        };
        return None;
    }
    if f0 < 0.0 {
        st.lo = st.lo.max(s);
    } else if f0 > 0.0 {
        st.hi = st.hi.min(s);
    }
    let (lo, hi) = (st.lo, st.hi);
    // Laguerre–Conway step far from the root; Halley's step (also
    // cubically convergent, no square root) once the Newton step is
    // below 1 % of s.
    // (|f₀/f₁| < 1e-2 |s| tested without a division.)
    let delta = if f0.abs() < 1e-2 * (s * f1).abs() {
        -f0 * f1 / (f1 * f1 - 0.5 * f0 * f2)
    } else {
        let disc = ((LAGUERRE_N - 1.0) * (LAGUERRE_N - 1.0) * f1 * f1
            - LAGUERRE_N * (LAGUERRE_N - 1.0) * f0 * f2)
            .abs()
            .sqrt();
        let den = f1 + f1.signum() * disc;
        if den != 0.0 {
            -LAGUERRE_N * f0 / den
        } else {
            f64::NAN
        }
    };
    // Finish when the last correction is small: Laguerre's method
    // converges at least cubically near a simple root, so after a
    // correction |δ| ≤ 1e-6 |s| the point s + δ is the root to rounding.
    // The G-functions are carried to it by their Taylor series to δ³
    // (dG_k/ds = G_{k−1}, dG₀/ds = −βG₁; remainder ~ (δ√β)⁴ < 1e-20),
    // saving a last Stumpff evaluation. (A test on |δ| ≈ ε|s| would
    // chase rounding noise.)
    let small = delta.is_finite() && delta.abs() <= 1e-6 * s.abs();
    if small && s + delta > lo && s + delta < hi {
        let (d, d2, d3) = (
            delta,
            0.5 * delta * delta,
            delta * delta * delta * (1.0 / 6.0),
        );
        let g0n = g0 - beta * (d * g1 + d2 * g0 - d3 * beta * g1);
        let g1n = g1 + d * g0 - beta * (d2 * g1 + d3 * g0);
        let g2n = g2 + d * g1 + d2 * g0 - d3 * beta * g1;
        let g3n = g3 + d * g2 + d2 * g1 + d3 * g0;
        return Some(fg_from(
            s + delta,
            [g0n, g1n, g2n, g3n],
            beta,
            r0,
            inv_r0,
            eta0,
            mu,
            iteration + 1,
        ));
    }
    if f0 == 0.0 || (hi - lo) <= 2.0 * f64::EPSILON * s.abs() {
        return Some(fg_from(
            s,
            [g0, g1, g2, g3],
            beta,
            r0,
            inv_r0,
            eta0,
            mu,
            iteration + 1,
        ));
    }
    let next = s + delta;
    // Safeguard: from iteration 12 on, every third step bisects a
    // finite bracket, so slow progress far out on a hyperbola cannot
    // exhaust the iterations.
    let force_bisect = iteration >= 12 && iteration % 3 == 0 && hi.is_finite() && lo.is_finite();
    st.s = if delta.is_finite() && next > lo && next < hi && !force_bisect {
        next
    } else if lo.is_finite() && hi.is_finite() {
        0.5 * (lo + hi)
    } else if hi.is_infinite() {
        // No upper bound yet (unbound orbit): move up geometrically.
        2.0 * s.max(lo).abs().max(dt.abs() / r0)
    } else {
        // No lower bound yet: move down geometrically.
        -2.0 * s.min(hi).abs().max(dt.abs() / r0)
    };
    None
}

/// f and g from the converged universal anomaly `s` and its G₀..G₃
/// (Danby 1988, §6.9).
#[allow(clippy::too_many_arguments)]
#[inline(always)]
fn fg_from(
    s: f64,
    gk: [f64; 4],
    beta: f64,
    r0: f64,
    inv_r0: f64,
    eta0: f64,
    mu: f64,
    iterations: usize,
) -> Result<FandG, DriftError> {
    let [g0, g1, g2, _] = gk;
    let r = r0 * g0 + eta0 * g1 + mu * g2;
    if !(r > 0.0 && r.is_finite() && g1.is_finite() && g2.is_finite()) {
        return Err(DriftError::NoConvergence { iterations });
    }
    let inv_r = 1.0 / r;
    let mu_g2 = mu * g2;
    Ok(FandG {
        f: 1.0 - mu_g2 * inv_r0,
        g: r0 * g1 + eta0 * g2,
        fdot: -mu * g1 * inv_r0 * inv_r,
        gdot: 1.0 - mu_g2 * inv_r,
        s,
        iterations,
        gk,
        beta,
        r0,
        r,
    })
}

/// a·b as an unevaluated sum hi + lo (exact, by fused multiply–add).
#[inline]
fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    (p, a.mul_add(b, -p))
}

/// a + b as an unevaluated sum hi + lo (exact; Knuth's TwoSum).
#[inline]
fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    (s, (a - (s - bb)) + (b - bb))
}

/// |x|² in double-double.
#[inline]
fn norm2_dd(x: &Vector3<f64>) -> (f64, f64) {
    let (p0, e0) = two_prod(x.x, x.x);
    let (p1, e1) = two_prod(x.y, x.y);
    let (p2, e2) = two_prod(x.z, x.z);
    let (s1, f1) = two_sum(p0, p1);
    let (s2, f2) = two_sum(s1, p2);
    (s2, e0 + e1 + e2 + f1 + f2)
}

/// β = 2μ/r₀ − v₀² evaluated in double-double arithmetic, rounded once.
fn compensated_beta(pos: &Vector3<f64>, vel: &Vector3<f64>, mu: f64) -> f64 {
    let (r2h, r2l) = norm2_dd(pos);
    let sr = r2h.sqrt();
    let (sq, sq_err) = two_prod(sr, sr);
    let sr_lo = ((r2h - sq) - sq_err + r2l) / (2.0 * sr);
    // 2μ / (sr + sr_lo) = q + q_lo.
    let q = 2.0 * mu / sr;
    let rem = (-q).mul_add(sr, 2.0 * mu);
    let q_lo = (rem - q * sr_lo) / sr;
    let (v2h, v2l) = norm2_dd(vel);
    let (d, d_err) = two_sum(q, -v2h);
    d + (d_err + q_lo - v2l)
}

/// Advance the relative state (`pos` au, `vel` au/day) of a two-body orbit
/// with gravitational parameter `mu` (au³/d²) by `dt` days (either sign), in
/// place, by the universal-variable f and g functions ([`f_and_g`]).
/// Returns the universal anomaly used (a good `guess` for the next drift of
/// the same size). On error the state is left unchanged.
///
/// Allocation-free.
#[inline(never)]
pub fn kepler_drift(
    pos: &mut Vector3<f64>,
    vel: &mut Vector3<f64>,
    mu: f64,
    dt: f64,
    guess: Option<f64>,
) -> Result<f64, DriftError> {
    let fg = f_and_g_inlined(pos, vel, mu, dt, guess, true)?;
    let p = *pos * fg.f + *vel * fg.g;
    let v = *pos * fg.fdot + *vel * fg.gdot;
    *pos = p;
    *vel = v;
    Ok(fg.s)
}

/// G₄ = s⁴c₄(x) and G₅ = s⁵c₅(x) at x = βs², from the power series
/// c₄ = Σ (−x)ʲ/(2j+4)!, c₅ = Σ (−x)ʲ/(2j+5)! (j ≤ 8; next term below
/// 0.5⁹/22! ≈ 2e-24) for |x| < 0.5, else from the recurrences
/// G₄ = (s²/2 − G₂)/β, G₅ = (s³/6 − G₃)/β (c_k(x) = 1/k! − x c_{k+2}(x);
/// Danby 1988 §6.9), where the cancellation costs at most a factor ~24 of
/// rounding. `g2`, `g3` are G₂(s), G₃(s).
#[inline]
fn g45(beta: f64, s: f64, g2: f64, g3: f64) -> (f64, f64) {
    let s2 = s * s;
    let x = beta * s2;
    if x.abs() < 0.5 {
        // Coefficients 1/(2j+4)! and 1/(2j+5)! with the sign (−1)ʲ,
        // evaluated by Estrin's scheme.
        const C4: [f64; 9] = [
            1.0 / 24.0,
            -1.0 / 720.0,
            1.0 / 40_320.0,
            -1.0 / 3_628_800.0,
            1.0 / 479_001_600.0,
            -1.0 / 87_178_291_200.0,
            1.0 / 20_922_789_888_000.0,
            -1.0 / 6_402_373_705_728_000.0,
            1.0 / 2_432_902_008_176_640_000.0,
        ];
        const C5: [f64; 9] = [
            1.0 / 120.0,
            -1.0 / 5040.0,
            1.0 / 362_880.0,
            -1.0 / 39_916_800.0,
            1.0 / 6_227_020_800.0,
            -1.0 / 1_307_674_368_000.0,
            1.0 / 355_687_428_096_000.0,
            -1.0 / 121_645_100_408_832_000.0,
            1.0 / 51_090_942_171_709_440_000.0,
        ];
        let x2 = x * x;
        let x4 = x2 * x2;
        let estrin = |a: &[f64; 9]| {
            (a[0] + a[1] * x)
                + x2 * (a[2] + a[3] * x)
                + x4 * ((a[4] + a[5] * x) + x2 * (a[6] + a[7] * x) + x4 * a[8])
        };
        let s4 = s2 * s2;
        (s4 * estrin(&C4), s4 * s * estrin(&C5))
    } else {
        ((0.5 * s2 - g2) / beta, (s2 * s / 6.0 - g3) / beta)
    }
}

/// The tangent map (Jacobian) of one Kepler drift: how a small change
/// (δr₀, δv₀) of the initial relative state maps to the change (δr, δv)
/// of the drifted state, for the first-order variational equations of the
/// Wisdom–Holman map (the drift part of Mikkola & Innanen 1999, AJ 118,
/// 1929, and of Rein & Tamayo 2016, MNRAS 459, 2275, §2; derivation ours,
/// written out below).
///
/// **Derivation.** With r₀ = |r₀|, η₀ = r₀·v₀, β = 2μ/r₀ − v₀², the
/// universal anomaly s solves r₀G₁ + η₀G₂ + μG₃ = Δt, Gₖ = Gₖ(β, s)
/// (see [`f_and_g`]), and r = r₀G₀ + η₀G₁ + μG₂. The G-functions obey
/// ∂Gₖ/∂s = Gₖ₋₁ and ∂Gₖ/∂β = (k Gₖ₊₂ − s Gₖ₊₁)/2 (from the series
/// Gₖ = Σⱼ (−β)ʲ s^{2j+k}/(2j+k)!). Varying the inputs,
///
/// * δr₀ = r₀·δr₀/r₀, δη₀ = δr₀·v₀ + r₀·δv₀, δβ = −2μ δr₀/r₀² − 2 v₀·δv₀;
/// * δs = −[G₁ δr₀ + G₂ δη₀ + (r₀ ∂_βG₁ + η₀ ∂_βG₂ + μ ∂_βG₃) δβ] / r
///   (implicit differentiation of the Kepler equation, whose s-derivative
///   is r);
/// * δGₖ = Gₖ₋₁ δs + ∂_βGₖ δβ;
/// * f = 1 − μG₂/r₀ → δf = −μ δG₂/r₀ + μG₂ δr₀/r₀²; g = Δt − μG₃ →
///   δg = −μ δG₃; δr = δf r₀ + f δr₀ + δg v₀ + g δv₀;
/// * with δr = r·δr/r (of the new position),
///   ḟ = −μG₁/(r₀r) → δḟ = −μ δG₁/(r₀r) − ḟ (δr₀/r₀ + δr/r);
///   ġ = 1 − μG₂/r → δġ = −μ δG₂/r + μG₂ δr/r²;
///   δv = δḟ r₀ + ḟ δr₀ + δġ v₀ + ġ δv₀.
///
/// When [`f_and_g`] removed n whole periods P = 2πμ/β^{3/2} from Δt, the
/// flow over Δt equals the flow over Δt − nP(β), so the map gains
/// −n δP (v, −μ r/r³) with δP = −(3/2) P δβ/β.
///
/// Built by [`drift_tangent_map`]; applied to any number of tangent vectors
/// by [`DriftTangent::apply`] (no allocation).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriftTangent {
    r0v: Vector3<f64>,
    v0v: Vector3<f64>,
    rv: Vector3<f64>,
    mu: f64,
    /// 1/r₀ and 1/r.
    inv_r0: f64,
    inv_r: f64,
    /// −2μ/r₀² (δβ per δr₀).
    beta_r0: f64,
    /// −μ/r₀ and μG₂/r₀² (δf per δG₂ and per δr₀).
    f_g2: f64,
    f_r0: f64,
    /// −μ/(r₀r) (δḟ per δG₁).
    fdot_g1: f64,
    /// −μ/r and μG₂/r² (δġ per δG₂ and per δr).
    gdot_g2: f64,
    gdot_r: f64,
    f: f64,
    g: f64,
    fdot: f64,
    gdot: f64,
    /// G₀..G₂ at the solution.
    gk: [f64; 3],
    /// ∂Gₖ/∂β for k = 1, 2, 3.
    gb: [f64; 3],
    /// Sensitivity of the Kepler equation to β: r₀∂_βG₁ + η₀∂_βG₂ + μ∂_βG₃.
    kb: f64,
    /// −n (3/2) P/β: δ(−nP) = turn_term · δβ … (0 when no turn removed).
    turn: f64,
    /// The new velocity and acceleration, for the turn term.
    vv: Vector3<f64>,
    av: Vector3<f64>,
    identity: bool,
}

impl DriftTangent {
    /// The drifted state (position au, velocity au/day) the map was built
    /// at.
    #[inline]
    pub fn state(&self) -> (Vector3<f64>, Vector3<f64>) {
        (self.rv, self.vv)
    }

    /// Map one tangent vector (δr₀ in au, δv₀ in au/day) in place to its
    /// value after the drift.
    #[inline(always)]
    pub fn apply(&self, dr: &mut Vector3<f64>, dv: &mut Vector3<f64>) {
        if self.identity {
            return;
        }
        let [g0, g1, g2] = self.gk;
        let [gb1, gb2, gb3] = self.gb;
        let d_r0 = self.r0v.dot(dr) * self.inv_r0;
        let d_eta = dr.dot(&self.v0v) + self.r0v.dot(dv);
        let d_beta = self.beta_r0 * d_r0 - 2.0 * self.v0v.dot(dv);
        let d_s = -(g1 * d_r0 + g2 * d_eta + self.kb * d_beta) * self.inv_r;
        let d_g1 = g0 * d_s + gb1 * d_beta;
        let d_g2 = g1 * d_s + gb2 * d_beta;
        let d_g3 = g2 * d_s + gb3 * d_beta;
        let d_f = self.f_g2 * d_g2 + self.f_r0 * d_r0;
        let d_g = -self.mu * d_g3;
        let mut new_dr = self.r0v * d_f + *dr * self.f + self.v0v * d_g + *dv * self.g;
        let d_r = self.rv.dot(&new_dr) * self.inv_r;
        let d_fdot = self.fdot_g1 * d_g1 - self.fdot * (d_r0 * self.inv_r0 + d_r * self.inv_r);
        let d_gdot = self.gdot_g2 * d_g2 + self.gdot_r * d_r;
        let mut new_dv = self.r0v * d_fdot + *dr * self.fdot + self.v0v * d_gdot + *dv * self.gdot;
        if self.turn != 0.0 {
            let d_shift = self.turn * d_beta;
            new_dr += self.vv * d_shift;
            new_dv += self.av * d_shift;
        }
        *dr = new_dr;
        *dv = new_dv;
    }
}

/// Kepler drift of (`pos`, `vel`) by `dt` about `mu` as [`kepler_drift`]
/// (same solver, same result to the bit), also returning the tangent map
/// of the drift ([`DriftTangent`]) at the initial state. On error the
/// state is left unchanged.
#[inline]
pub fn drift_tangent_map(
    pos: &mut Vector3<f64>,
    vel: &mut Vector3<f64>,
    mu: f64,
    dt: f64,
) -> Result<DriftTangent, DriftError> {
    let fg = f_and_g(pos, vel, mu, dt, None)?;
    let map = drift_tangent_from(pos, vel, mu, dt, &fg)?;
    *pos = map.rv;
    *vel = map.vv;
    Ok(map)
}

/// The tangent map ([`DriftTangent`]) of the drift by `dt` about `mu` of
/// the initial state (`pos` au, `vel` au/day) whose solution `fg` was
/// found by [`f_and_g`] or [`f_and_g_lanes`] with the same arguments. The
/// G-functions, β and the distances are those of the solver (no second
/// Stumpff evaluation); G₄ and G₅ are added by their series.
#[inline(always)]
pub fn drift_tangent_from(
    pos: &Vector3<f64>,
    vel: &Vector3<f64>,
    mu: f64,
    dt: f64,
    fg: &FandG,
) -> Result<DriftTangent, DriftError> {
    let r0v = *pos;
    let v0v = *vel;
    let p = r0v * fg.f + v0v * fg.g;
    let v = r0v * fg.fdot + v0v * fg.gdot;
    let (r0, r, beta, s) = (fg.r0, fg.r, fg.beta, fg.s);
    if !(r > 0.0 && r0 > 0.0 && beta.is_finite()) {
        return Err(DriftError::NoConvergence {
            iterations: fg.iterations,
        });
    }
    let eta0 = r0v.dot(&v0v);
    let [g0, g1, g2, g3] = fg.gk;
    let (g4, g5) = if s == 0.0 {
        (0.0, 0.0)
    } else {
        g45(beta, s, g2, g3)
    };
    let gb = [
        0.5 * (g3 - s * g2),
        0.5 * (2.0 * g4 - s * g3),
        0.5 * (3.0 * g5 - s * g4),
    ];
    let kb = r0 * gb[0] + eta0 * gb[1] + mu * gb[2];
    // Whole turns removed by f_and_g (same test and rounding).
    let mut turn = 0.0;
    if beta > 0.0 && 4.0 * dt * dt * beta * beta * beta > (TAU * mu) * (TAU * mu) {
        let period = TAU * mu / (beta * beta.sqrt());
        let n = (dt / period).round();
        // δ(−nP) = −n δP = −n (−3/2) (P/β) δβ.
        turn = 1.5 * n * period / beta;
    }
    // One division for both reciprocals (r₀ r is far from overflow:
    // distances in au).
    let inv_rr = 1.0 / (r0 * r);
    let inv_r0 = r * inv_rr;
    let inv_r = r0 * inv_rr;
    Ok(DriftTangent {
        r0v,
        v0v,
        rv: p,
        mu,
        inv_r0,
        inv_r,
        beta_r0: -2.0 * mu * inv_r0 * inv_r0,
        f_g2: -mu * inv_r0,
        f_r0: mu * g2 * inv_r0 * inv_r0,
        fdot_g1: -mu * inv_rr,
        gdot_g2: -mu * inv_r,
        gdot_r: mu * g2 * inv_r * inv_r,
        f: fg.f,
        g: fg.g,
        fdot: fg.fdot,
        gdot: fg.gdot,
        gk: [g0, g1, g2],
        gb,
        kb,
        turn,
        vv: v,
        av: -p * (mu * inv_r * inv_r * inv_r),
        identity: dt == 0.0,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stumpff_closed_forms() {
        // Closed forms of the definitions (Danby 1988, §6.9).
        for &x in &[1e-3, 0.05, 0.7, 3.0, 20.0, 39.0, -0.5, -10.0, -400.0] {
            let c = stumpff(x);
            let (c0, c1, c2, c3) = if x > 0.0 {
                let r: f64 = x.sqrt();
                (
                    r.cos(),
                    r.sin() / r,
                    (1.0 - r.cos()) / x,
                    (r - r.sin()) / (x * r),
                )
            } else {
                let r: f64 = (-x).sqrt();
                (
                    r.cosh(),
                    r.sinh() / r,
                    (r.cosh() - 1.0) / (-x),
                    (r.sinh() - r) / (-x * r),
                )
            };
            let tol = if x.abs() < 1.0 { 1e-9 } else { 1e-12 };
            for (a, b) in [(c.c0, c0), (c.c1, c1), (c.c2, c2), (c.c3, c3)] {
                assert!(
                    (a - b).abs() <= tol * b.abs().max(1e-3),
                    "x={x}: {a} vs {b}"
                );
            }
        }
    }

    #[test]
    fn few_iterations() {
        // A P/20 step of a mildly eccentric orbit: a handful of iterations
        // from the crude start, one or two from the previous step's s.
        let (r, v) = (
            Vector3::new(0.09, 0.02, 0.0),
            Vector3::new(-0.004, 0.017, 0.001),
        );
        let fg = f_and_g(&r, &v, 2.96e-4, 0.5, None).unwrap();
        assert!(fg.iterations <= 5, "{}", fg.iterations);
        let again = f_and_g(&r, &v, 2.96e-4, 0.5, Some(fg.s * (1.0 + 1e-6))).unwrap();
        assert!(again.iterations <= 2, "{}", again.iterations);
    }

    #[test]
    fn rejects_bad_input() {
        let mut p = Vector3::zeros();
        let mut v = Vector3::new(0.0, 1.0, 0.0);
        assert!(kepler_drift(&mut p, &mut v, 1.0, 1.0, None).is_err());
        let mut p = Vector3::new(1.0, 0.0, 0.0);
        assert!(kepler_drift(&mut p, &mut v, f64::NAN, 1.0, None).is_err());
        assert!(kepler_drift(&mut p, &mut v, 1.0, f64::INFINITY, None).is_err());
        assert_eq!(p, Vector3::new(1.0, 0.0, 0.0));
    }

    /// A random relative state about μ = 3e-4 au³/d² (a Sun-like star):
    /// elliptic up to e = 1 − 1e-9, near-parabolic (|e − 1| ≤ 1e-7) and
    /// hyperbolic up to e = 6, random orientation and phase; and a random
    /// signed time step from 1e-3 d to many periods.
    fn random_case(rng: &mut rand_chacha::ChaCha8Rng) -> (Vector3<f64>, Vector3<f64>, f64, f64) {
        use rand::Rng;
        let mu = 3e-4 * rng.random_range(0.5..2.0);
        let q: f64 = 10f64.powf(rng.random_range(-2.5..0.7));
        let e: f64 = match rng.random_range(0..5) {
            0 => rng.random_range(0.0..0.3),
            1 => rng.random_range(0.3..0.99),
            2 => 1.0 - 10f64.powf(rng.random_range(-9.0..-2.0)),
            3 => 1.0 + rng.random_range(-1e-7..1e-7),
            _ => rng.random_range(1.0..6.0),
        };
        // Periastron state in the orbit plane, then a random true anomaly
        // within the allowed range, then a random rotation.
        let p = q * (1.0 + e);
        let nu_max = if e < 1.0 {
            // Within 1000 q of the star (far out on a very eccentric
            // orbit the finite differences below drown in rounding).
            ((p / (1000.0 * q) - 1.0) / e).max(-1.0).acos()
        } else {
            0.95 * (-1.0 / e).acos()
        };
        let nu: f64 = rng.random_range(-nu_max..nu_max);
        let r = p / (1.0 + e * nu.cos());
        let h = (mu * p).sqrt();
        let pos = Vector3::new(r * nu.cos(), r * nu.sin(), 0.0);
        let vel = Vector3::new(-mu / h * nu.sin(), mu / h * (e + nu.cos()), 0.0);
        let axis = Vector3::new(
            rng.random_range(-1.0..1.0),
            rng.random_range(-1.0..1.0),
            rng.random_range(-1.0..1.0),
        );
        let rot = nalgebra::Rotation3::new(axis * 3.0);
        let period = TAU * (q.powi(3) / mu).sqrt();
        let mut dt = period * 10f64.powf(rng.random_range(-3.0..1.3));
        if rng.random_bool(0.5) {
            dt = -dt;
        }
        (rot * pos, rot * vel, mu, dt)
    }

    #[test]
    fn interleaved_lanes_equal_the_scalar_solver_bitwise() {
        use rand::SeedableRng;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(20261201);
        fn check<const L: usize>(rng: &mut rand_chacha::ChaCha8Rng) {
            // Lanes share the time step; orbits differ.
            let (_, _, _, dt) = random_case(rng);
            let mut pos = [Vector3::zeros(); L];
            let mut vel = [Vector3::zeros(); L];
            let mut mu = [0.0; L];
            for l in 0..L {
                let (p, v, m, _) = random_case(rng);
                (pos[l], vel[l], mu[l]) = (p, v, m);
            }
            let lanes = f_and_g_lanes(&pos, &vel, &mu, dt);
            for l in 0..L {
                let one = f_and_g(&pos[l], &vel[l], mu[l], dt, None);
                match (one, lanes[l]) {
                    (Ok(a), Ok(b)) => {
                        for (x, y) in [
                            (a.f, b.f),
                            (a.g, b.g),
                            (a.fdot, b.fdot),
                            (a.gdot, b.gdot),
                            (a.s, b.s),
                        ] {
                            assert_eq!(x.to_bits(), y.to_bits(), "lane {l} of {L}: {a:?} vs {b:?}");
                        }
                        assert_eq!(a.iterations, b.iterations);
                    }
                    (a, b) => assert_eq!(a, b, "lane {l} of {L}"),
                }
            }
        }
        for _ in 0..2000 {
            check::<1>(&mut rng);
            check::<2>(&mut rng);
            check::<3>(&mut rng);
            check::<4>(&mut rng);
        }
    }

    #[test]
    fn tangent_map_matches_central_differences() {
        // Central finite differences of the drift (an independent
        // computation of the same derivative) over random conics,
        // e → 1, near-parabolic and hyperbolic, forwards and backwards.
        use rand::SeedableRng;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let mut checked = 0;
        for _ in 0..300 {
            let (pos, vel, mu, dt) = random_case(&mut rng);
            let (mut p, mut v) = (pos, vel);
            let Ok(map) = drift_tangent_map(&mut p, &mut v, mu, dt) else {
                continue;
            };
            // Skip cases where the flow is too sensitive for differences
            // in double precision to be meaningful (many turns of a very
            // eccentric orbit, or a near-parabolic pass), judged by the
            // conditioning of the map.
            let scale_r = pos.norm();
            let scale_v = vel.norm();
            for c in 0..6 {
                let mut e_r = Vector3::zeros();
                let mut e_v = Vector3::zeros();
                let h = if c < 3 {
                    e_r[c] = 1.0;
                    1e-6 * scale_r
                } else {
                    e_v[c - 3] = 1.0;
                    1e-6 * scale_v
                };
                let (mut dr, mut dv) = (e_r * h, e_v * h);
                map.apply(&mut dr, &mut dv);
                let mut plus = (pos + e_r * h, vel + e_v * h);
                let mut minus = (pos - e_r * h, vel - e_v * h);
                if kepler_drift(&mut plus.0, &mut plus.1, mu, dt, None).is_err()
                    || kepler_drift(&mut minus.0, &mut minus.1, mu, dt, None).is_err()
                {
                    continue;
                }
                let fd_r = (plus.0 - minus.0) * 0.5;
                let fd_v = (plus.1 - minus.1) * 0.5;
                // Second-order truncation of the differences: compare the
                // two halves (+ and −) to judge the nonlinearity.
                let lin = ((plus.0 - p) + (minus.0 - p)).norm() / fd_r.norm().max(1e-300);
                if lin > 1e-4 || fd_r.norm() > 1e3 * h {
                    continue;
                }
                // Rounding of the differenced states (~1e-16 of them)
                // bounds what can be compared.
                let err_r = (dr - fd_r).norm() / fd_r.norm().max(1e-9 * p.norm());
                let err_v = (dv - fd_v).norm() / fd_v.norm().max(1e-9 * v.norm());
                assert!(
                    err_r < 1e-5 && err_v < 1e-5,
                    "c={c} e_r={err_r:e} e_v={err_v:e} pos={pos:?} vel={vel:?} mu={mu} dt={dt}"
                );
                checked += 1;
            }
        }
        assert!(checked > 1000, "only {checked} derivatives checked");
    }
}

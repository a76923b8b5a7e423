//! Fast Kepler drift of a bound orbit through Kepler's equation in the
//! change of eccentric anomaly.
//!
//! Method: Danby (1988), *Fundamentals of Celestial Mechanics*, 2nd ed.,
//! the f and g functions in terms of ΔE (from memory: §6.8). For an
//! ellipse with β = 2μ/r₀ − v₀² = μ/a > 0, mean motion n = β^{3/2}/μ,
//! e cos E₀ = 1 − r₀β/μ and e sin E₀ = η₀√β/μ (η₀ = r₀·v₀), the increment
//! x = ΔE over a time Δt solves
//!
//! F(x) = x − (e cos E₀) sin x + (e sin E₀)(1 − cos x) − nΔt = 0,
//!
//! with F′ = r/a > 0. The universal anomaly of [`super::universal`] is
//! s = x/√β and its G-functions are G₀ = cos x, G₁ = sin x/√β,
//! G₂ = (1 − cos x)/β, G₃ = (x − sin x)/β^{3/2}, so the result is the same
//! [`FandG`] as the universal solver's (to rounding), with the same
//! G-functions for the tangent map.
//!
//! Why a second solver: the universal one evaluates Stumpff series at
//! every iteration and starts from a crude guess; here the start is the
//! series reversion of F to fourth order in nΔt (accurate to ~1e-5 for the
//! steps of a Wisdom–Holman map), and each iteration is one call of the
//! crate's inlined sine/cosine ([`crate::kepler::trig`]) followed by a
//! fifth-order correction with a single division (the inverse series of
//! the Taylor expansion of F; Householder's methods, e.g. Danby 1988
//! §6.6). One iteration suffices for a step of P/20 at moderate e; the
//! sine and cosine at the root are then carried from the last iterate by
//! their Taylor series (angle addition), as the crate's Kepler solver does.
//!
//! The solver only takes cases where this is fast and safe: a bound orbit
//! away from the parabola (β ≥ 10⁻² v₀²), |nΔt| ≤ 1.5 (longer drifts are
//! handed to the universal solver) and a moderate eccentricity; anything else, or an
//! iteration that does not settle within [`MAX_ITERATIONS`], returns `None`
//! and the caller uses the universal solver. Written by hand for the same
//! reason as the universal solver (no library offers an allocation-free
//! propagator).

use super::universal::FandG;
use crate::kepler::trig::sin_cos_unchecked;

/// Largest number of sine/cosine evaluations before giving up (the caller
/// falls back to the universal solver).
pub const MAX_ITERATIONS: usize = 4;

/// Largest e² handled (e ≈ 0.95); more eccentric orbits go to the
/// universal solver, whose bracketed iteration is safer there.
const MAX_E2: f64 = 0.9;

/// Newton steps |F/F′| above this (radians) are taken by Halley's method
/// instead of the fifth-order series, whose terms grow like a₂ᵏtᵏ.
const SERIES_STEP: f64 = 1e-2;

/// Largest |nΔt| (radians) handled: a WH step of P/20 is 0.31; longer
/// drifts go to the universal solver.
const MAX_MEAN_ANOMALY: f64 = 1.5;

/// A correction of at most this fraction of |x| ends the iteration: after a
/// fifth-order step from such an iterate the error is ~(3e-4)⁵ ≈ 2e-18 of
/// x (times constants of order e/(1 − e)).
const SETTLED: f64 = 3e-4;

/// A bound orbit to drift: distance `r0` (au), 1/r₀, η₀ = r₀·v₀
/// (au²/d), β = 2μ/r₀ − v₀² > 0 (au²/d²), ζ₀ = μ − βr₀, the gravitational
/// parameter `mu` (au³/d²) and the time `dt` (days, either sign).
#[derive(Debug, Clone, Copy)]
pub(crate) struct BoundOrbit {
    pub r0: f64,
    pub inv_r0: f64,
    pub eta0: f64,
    pub beta: f64,
    pub zeta0: f64,
    pub mu: f64,
    pub dt: f64,
}

impl BoundOrbit {
    /// A harmless stand-in for an unused lane (a circular orbit).
    pub const FILLER: BoundOrbit = BoundOrbit {
        r0: 1.0,
        inv_r0: 1.0,
        eta0: 0.0,
        beta: 1.0,
        zeta0: 0.0,
        mu: 1.0,
        dt: 0.1,
    };
}

/// The drifts of `L` bound orbits, computed together: every stage runs
/// over all lanes before the next (so the processor overlaps their
/// dependency chains, and the compiler may pair them in vector
/// registers); each lane does exactly the operations of a lone orbit, so
/// the result of a lane does not depend on its neighbours (bitwise;
/// tested). Per lane, `None` when the case is outside this solver's range
/// (module docs); otherwise the f and g functions, the universal anomaly
/// and its G-functions, as [`super::universal::f_and_g`] would give them
/// to rounding.
#[inline(always)]
pub(crate) fn f_and_g_elliptic<const L: usize>(o: &[BoundOrbit; L]) -> [Option<FandG>; L] {
    let mut ok = [true; L];
    let mut inv_sqrt_beta = [0.0; L];
    let mut m = [0.0; L];
    let mut ec = [0.0; L];
    let mut es = [0.0; L];
    let mut x = [0.0; L];
    for l in 0..L {
        let inv_mu = 1.0 / o[l].mu;
        let sqrt_beta = o[l].beta.sqrt();
        inv_sqrt_beta[l] = 1.0 / sqrt_beta;
        // Mean anomaly advanced, e cos E₀, e sin E₀ and p = r₀/a =
        // 1 − e cos E₀ (taken directly, not as a difference).
        m[l] = o[l].beta * sqrt_beta * inv_mu * o[l].dt;
        ec[l] = o[l].zeta0 * inv_mu;
        es[l] = o[l].eta0 * sqrt_beta * inv_mu;
        let p = o[l].r0 * o[l].beta * inv_mu;
        let e2 = ec[l] * ec[l] + es[l] * es[l];
        ok[l] = e2 <= MAX_E2 && m[l].abs() <= MAX_MEAN_ANOMALY && p > 0.0;
        // Start: reversion of F = p x + q x² + r x³ + u x⁴ + …
        // (q = e sin E₀/2, r = e cos E₀/6, u = −e sin E₀/24) to fourth order
        // in y = nΔt/p: x = y (1 − q′y + (2q′² − r′)y² + (5q′r′ − u′ −
        // 5q′³)y³) with q′ = q/p, r′ = r/p, u′ = u/p (Abramowitz & Stegun
        // 3.6.25, from memory; checked by the iteration counts in the tests).
        let inv_p = 1.0 / p;
        let y = m[l] * inv_p;
        let q = 0.5 * es[l] * inv_p;
        let r = ec[l] * (1.0 / 6.0) * inv_p;
        let u = -es[l] * (1.0 / 24.0) * inv_p;
        x[l] = y
            * (1.0 + y * (-q + y * ((2.0 * q * q - r) + y * (5.0 * q * r - u - 5.0 * q * q * q))));
        // The start must stay in the range of the inlined sine/cosine.
        ok[l] &= x[l].abs() <= 3.5;
    }
    // The first iteration, in every lane.
    let mut step = [Step::default(); L];
    for l in 0..L {
        step[l] = correction(x[l], ec[l], es[l], m[l]);
    }
    let mut out = [None; L];
    for l in 0..L {
        if !ok[l] {
            continue;
        }
        let mut st = step[l];
        let mut iteration = 1;
        // Not settled after one iteration (long drift, high e): go on
        // alone.
        while !st.settled {
            if iteration == MAX_ITERATIONS || !st.finite_step() {
                break;
            }
            iteration += 1;
            st = correction(st.x_next, ec[l], es[l], m[l]);
        }
        if st.settled {
            out[l] = finish(&st, inv_sqrt_beta[l], &o[l], iteration);
        }
    }
    out
}

/// One iteration from x: sin x, cos x, 1 − cos x, and the next iterate.
#[derive(Debug, Clone, Copy, Default)]
struct Step {
    sin_x: f64,
    cos_x: f64,
    one_minus_cos: f64,
    /// The correction δ (x_next = x + δ).
    delta: f64,
    x_next: f64,
    /// δ was from the fifth-order series and below [`SETTLED`] of x.
    settled: bool,
}

impl Step {
    fn finite_step(&self) -> bool {
        self.x_next.abs() <= 3.5 && self.delta.is_finite()
    }
}

/// One iteration of F(x) = 0 from x (module docs), with ec = e cos E₀,
/// es = e sin E₀ and m = nΔt.
#[inline(always)]
fn correction(x: f64, ec: f64, es: f64, m: f64) -> Step {
    let (s, c) = sin_cos_unchecked(x);
    // 1 − cos x as sin²x/(1 + cos x): for a short drift 1 − cos x would
    // keep only a few digits, and F with it.
    let om = if c > 0.0 { s * s / (1.0 + c) } else { 1.0 - c };
    // F and its derivatives at x: F′ = 1 − ec cos x + es sin x,
    // F″ = ec sin x + es cos x, F‴ = 1 − F′, F⁗ = −F″.
    let f0 = x - ec * s + es * om - m;
    let f1 = 1.0 - ec * c + es * s;
    let f2 = ec * s + es * c;
    let f3 = ec * c - es * s;
    let inv_f1 = 1.0 / f1;
    let t = -f0 * inv_f1;
    let a2 = 0.5 * f2 * inv_f1;
    let (delta, series) = if t.abs() <= SERIES_STEP && f1 > 0.0 {
        // Fifth-order correction: the inverse of the Taylor series
        // t = δ + a₂δ² + a₃δ³ + a₄δ⁴ (aₖ = F⁽ᵏ⁾/(k! F′), t = −F/F′) is
        // δ = t − a₂t² + (2a₂² − a₃)t³ − (5a₂³ − 5a₂a₃ + a₄)t⁴ + O(t⁵).
        let a3 = (1.0 / 6.0) * f3 * inv_f1;
        let a4 = -(1.0 / 24.0) * f2 * inv_f1;
        let d = t
            * (1.0
                + t * (-a2
                    + t * ((2.0 * a2 * a2 - a3) - t * (5.0 * a2 * a2 * a2 - 5.0 * a2 * a3 + a4))));
        (d, true)
    } else {
        // Far from the root the inverse series is not to be trusted: a
        // Halley step δ = t/(1 + a₂t) (cubic), at most one radian.
        let den = 1.0 + a2 * t;
        let d = if den > 0.5 { t / den } else { t };
        (
            if f1 > 0.0 {
                d.clamp(-1.0, 1.0)
            } else {
                f64::NAN
            },
            false,
        )
    };
    let x_next = x + delta;
    Step {
        sin_x: s,
        cos_x: c,
        one_minus_cos: om,
        delta,
        x_next,
        settled: series && delta.abs() <= SETTLED * x_next.abs() && x_next.abs() <= 3.5,
    }
}

/// x − sin x for |x| ≤ 3.5: its power series Σ (−1)ʲ x^{2j+3}/(2j+3)! for
/// |x| < 1 (to j = 8; the next term is below 1/21! ≈ 2e-20 of x³/6), where
/// the difference would cancel, and the difference itself beyond.
#[inline(always)]
fn x_minus_sin(x: f64, sin_x: f64) -> f64 {
    if x.abs() >= 1.0 {
        return x - sin_x;
    }
    const C: [f64; 9] = [
        1.0 / 6.0,
        -1.0 / 120.0,
        1.0 / 5040.0,
        -1.0 / 362_880.0,
        1.0 / 39_916_800.0,
        -1.0 / 6_227_020_800.0,
        1.0 / 1_307_674_368_000.0,
        -1.0 / 355_687_428_096_000.0,
        1.0 / 121_645_100_408_832_000.0,
    ];
    let z = x * x;
    let z2 = z * z;
    let z4 = z2 * z2;
    let poly = (C[0] + C[1] * z)
        + z2 * (C[2] + C[3] * z)
        + z4 * ((C[4] + C[5] * z) + z2 * (C[6] + C[7] * z) + z4 * C[8]);
    x * z * poly
}

/// The [`FandG`] at the root x + δ of the settled iteration `st`
/// (module docs), or `None` if the new distance is not positive and finite.
#[inline(always)]
fn finish(st: &Step, inv_sqrt_beta: f64, o: &BoundOrbit, iterations: usize) -> Option<FandG> {
    // sin, cos and 1 − cos at x + δ by angle addition with the Taylor
    // series of sin δ and cos δ − 1 to δ⁵ (remainder below 1e-23); the
    // last without cancellation, from the accurate 1 − cos x.
    let (s, c, d) = (st.sin_x, st.cos_x, st.delta);
    let d2 = d * d;
    let sd = d * (1.0 - d2 * (1.0 / 6.0) * (1.0 - d2 * (1.0 / 20.0)));
    let cd_m1 = -0.5 * d2 * (1.0 - d2 * (1.0 / 12.0));
    let sin_x = s + (s * cd_m1 + c * sd);
    let cos_x = c + (c * cd_m1 - s * sd);
    let one_minus_cos = st.one_minus_cos - (c * cd_m1 - s * sd);
    let x = st.x_next;
    let ib2 = inv_sqrt_beta * inv_sqrt_beta;
    let g1 = sin_x * inv_sqrt_beta;
    let g2 = one_minus_cos * ib2;
    let g3 = x_minus_sin(x, sin_x) * ib2 * inv_sqrt_beta;
    let BoundOrbit {
        r0,
        inv_r0,
        eta0,
        beta,
        mu,
        ..
    } = *o;
    let r = r0 * cos_x + eta0 * g1 + mu * g2;
    if !(r > 0.0 && r.is_finite()) {
        return None;
    }
    let inv_r = 1.0 / r;
    let mu_g2 = mu * g2;
    Some(FandG {
        f: 1.0 - mu_g2 * inv_r0,
        g: r0 * g1 + eta0 * g2,
        fdot: -mu * g1 * inv_r0 * inv_r,
        gdot: 1.0 - mu_g2 * inv_r,
        s: x * inv_sqrt_beta,
        iterations,
        gk: [cos_x, g1, g2, g3],
        beta,
        r0,
        r,
    })
}

#[cfg(test)]
mod tests {
    use super::super::universal::{f_and_g, f_and_g_with};
    use crate::kepler::{Elements, elements_to_state, state_to_elements};
    use nalgebra::Vector3;
    use rand::{Rng, SeedableRng};
    use std::f64::consts::TAU;

    /// A random bound orbit about μ ≈ 3e-4 au³/d² (e up to `e_max`, random
    /// orientation and mean anomaly) and a step of `frac` of its period.
    fn random_orbit(
        rng: &mut rand_chacha::ChaCha8Rng,
        e_max: f64,
    ) -> (Vector3<f64>, Vector3<f64>, f64, Elements) {
        let mu = 3e-4 * rng.random_range(0.5..2.0);
        let el = Elements {
            a: 10f64.powf(rng.random_range(-2.0..1.0)),
            e: rng.random_range(0.0..e_max),
            inc: rng.random_range(0.0..std::f64::consts::PI),
            node: rng.random_range(0.0..TAU),
            omega: rng.random_range(0.0..TAU),
            mean_anomaly: rng.random_range(0.0..TAU),
        };
        let st = elements_to_state(&el, mu).unwrap();
        (st.pos, st.vel, mu, el)
    }

    fn period(el: &Elements, mu: f64) -> f64 {
        TAU * (el.a.powi(3) / mu).sqrt()
    }

    #[test]
    fn agrees_with_the_two_body_solution_through_elements() {
        // Outside reference: the closed-form two-body motion, i.e. the
        // orbital elements with the mean anomaly advanced by nΔt and the
        // state rebuilt through the crate's Kepler-equation solver
        // (Markley 1995 starter; tests/kepler_reference.rs), a route
        // independent of the f and g functions.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(20261202);
        let mut worst: f64 = 0.0;
        for _ in 0..5000 {
            let (pos, vel, mu, el) = random_orbit(&mut rng, 0.9);
            let dt = period(&el, mu) * rng.random_range(-0.5..0.5);
            let fg = f_and_g(&pos, &vel, mu, dt, None).unwrap();
            let p1 = pos * fg.f + vel * fg.g;
            let v1 = pos * fg.fdot + vel * fg.gdot;
            // Elements from the state itself, so that both routes start
            // from the same floats.
            let mut e1 = state_to_elements(&pos, &vel, mu).unwrap();
            let n = (mu / e1.a.powi(3)).sqrt();
            e1.mean_anomaly = (e1.mean_anomaly + n * dt).rem_euclid(TAU);
            let reference = elements_to_state(&e1, mu).unwrap();
            let err_r = (p1 - reference.pos).norm() / el.a;
            let err_v = (v1 - reference.vel).norm() / (mu / el.a).sqrt();
            worst = worst.max(err_r).max(err_v);
        }
        // The element route itself loses a few digits (anomaly conversions
        // near e = 0.9); 1e-12 of a and of the orbital speed.
        assert!(worst < 1e-12, "worst relative difference {worst:e}");
    }

    #[test]
    fn matches_50_digit_reference() {
        // Reference: tests/fixtures/elliptic_drift.py (mpmath, 50 digits,
        // classical elements and Kepler's equation; 300 random bound
        // orbits, e ≤ 0.95, steps up to 0.24 P either way). Both solvers
        // are measured; the ΔE one must be within a few ulp (plus the
        // problem's own half-ulp sensitivity) and no worse than the
        // universal one. Measured: ΔE worst 2.9e-15 (mean 1.4e-16),
        // universal worst 3.4e-15 (mean 1.8e-16).
        let text = std::fs::read_to_string(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/fixtures/elliptic_drift.json"
        ))
        .unwrap();
        let json: serde_json::Value = serde_json::from_str(&text).unwrap();
        let v3 = |x: &serde_json::Value| {
            Vector3::new(
                x[0].as_f64().unwrap(),
                x[1].as_f64().unwrap(),
                x[2].as_f64().unwrap(),
            )
        };
        let cases = json["cases"].as_array().unwrap();
        assert_eq!(cases.len(), 300);
        let (mut worst_fast, mut worst_univ) = (0.0f64, 0.0f64);
        let (mut sum_fast, mut sum_univ) = (0.0, 0.0);
        let mut fast = 0;
        for c in cases {
            let (r0, v0) = (v3(&c["r0"]), v3(&c["v0"]));
            let (mu, dt) = (c["mu"].as_f64().unwrap(), c["dt"].as_f64().unwrap());
            let (rw, vw) = (v3(&c["r1"]), v3(&c["v1"]));
            let sens = c["half_ulp_sensitivity"].as_f64().unwrap();
            let err = |fg: &super::FandG| {
                let r = r0 * fg.f + v0 * fg.g;
                let v = r0 * fg.fdot + v0 * fg.gdot;
                ((r - rw).norm() / rw.norm()).max((v - vw).norm() / vw.norm())
            };
            let a = f_and_g(&r0, &v0, mu, dt, None).unwrap();
            let b = f_and_g_with(&r0, &v0, mu, dt, None, false).unwrap();
            fast += usize::from(a != b);
            let (ea, eb) = (err(&a), err(&b));
            assert!(ea <= 2e-15 + 4.0 * sens, "case {c}: {ea:e}");
            (worst_fast, worst_univ) = (worst_fast.max(ea), worst_univ.max(eb));
            (sum_fast, sum_univ) = (sum_fast + ea, sum_univ + eb);
        }
        let n = cases.len() as f64;
        eprintln!(
            "ΔE worst {worst_fast:.2e} mean {:.2e}; universal worst {worst_univ:.2e} mean {:.2e}; ΔE used {fast}/300",
            sum_fast / n,
            sum_univ / n
        );
        assert!(fast >= 290, "ΔE solver used for {fast} of 300");
        assert!(worst_fast <= worst_univ && sum_fast <= sum_univ);
    }

    #[test]
    fn g_functions_agree_with_the_universal_solver() {
        // The tangent map (super::universal::drift_tangent_from) uses the
        // solver's s and G₀..G₃: the two solvers must give the same ones
        // to rounding (random bound orbits, e ≤ 0.5, steps up to P/2).
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let mut worst_g = 0.0f64;
        for _ in 0..20000 {
            let (pos, vel, mu, el) = random_orbit(&mut rng, 0.5);
            let sign = if rng.random_bool(0.5) { 1.0 } else { -1.0 };
            let dt = sign
                * period(&el, mu)
                * 10f64.powf(rng.random_range(-4.0..-std::f64::consts::LOG10_2));
            let a = f_and_g(&pos, &vel, mu, dt, None).unwrap();
            let b = f_and_g_with(&pos, &vel, mu, dt, None, false).unwrap();
            let scale = [1.0, b.gk[1].abs(), b.gk[2].abs(), b.gk[3].abs()];
            for ((ga, gb), sc) in a.gk.iter().zip(&b.gk).zip(scale) {
                worst_g = worst_g.max((ga - gb).abs() / sc);
            }
            worst_g = worst_g.max((a.s - b.s).abs() / b.s.abs());
        }
        eprintln!("worst relative difference of s, G₀..G₃: {worst_g:.2e}");
        assert!(worst_g < 1e-13, "G-functions: {worst_g:e}");
    }

    #[test]
    fn wisdom_holman_steps_take_one_sine_and_cosine() {
        // Steps of the Wisdom–Holman default size, (P/20)(1 − e)^{3/2}/
        // (1 + e)^{1/2}, at e ≤ 0.6: the series start is close enough for
        // a single iteration.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let mut counts = [0usize; 5];
        for _ in 0..10000 {
            let (pos, vel, mu, el) = random_orbit(&mut rng, 0.6);
            let dt = period(&el, mu) / 20.0 * (1.0 - el.e).powf(1.5) / (1.0 + el.e).sqrt();
            let fg = f_and_g(&pos, &vel, mu, dt, None).unwrap();
            counts[fg.iterations.min(4)] += 1;
        }
        assert_eq!(counts[0], 0);
        assert!(counts[1] >= 9900, "iterations: {counts:?}");
        assert_eq!(counts[4], 0, "iterations: {counts:?}");
    }
}

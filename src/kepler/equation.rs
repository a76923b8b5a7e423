//! Kepler's equation, elliptic (E − e sin E = M) and hyperbolic
//! (e sinh F − F = M).
//!
//! The elliptic solver follows Markley (1995, Celest. Mech. Dyn. Astron. 63,
//! 101, eqs. 5–20): a cubic starter from a Padé approximation of sin E,
//! solved in closed form, then a fifth-order Householder-type correction
//! (Danby 1987, eq. 6.9 family). Each further correction re-uses the
//! sine and cosine of the previous estimate through the angle-addition
//! formulae with a short series for the small correction, so only one pair
//! of sine/cosine evaluations is made per solve; those, and the starter's
//! cube root, are inlined bounded-range versions (module `trig`). Iteration stops when the
//! residual is below [`KEPLER_TOLERANCE`] (normally after one correction,
//! at most [`MAX_CORRECTIONS`]).

use std::f64::consts::{PI, TAU};

use super::trig;

/// Residual tolerance on |E − e sin E − M| in radians.
pub const KEPLER_TOLERANCE: f64 = 1e-15;

/// Largest number of high-order corrections applied after the starter.
pub const MAX_CORRECTIONS: usize = 6;

/// Solution of the elliptic Kepler equation with the sine and cosine of the
/// eccentric anomaly, which callers nearly always need next.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct EccentricAnomaly {
    /// Eccentric anomaly E in radians, in the same 2π-turn as the input M.
    pub e_anom: f64,
    /// sin E.
    pub sin_e: f64,
    /// cos E.
    pub cos_e: f64,
    /// Number of corrections applied after the starter (1 is typical; 0
    /// only for e = 0, where E = M exactly).
    pub corrections: usize,
}

/// Reduce an angle to (−π, π].
#[inline]
pub fn wrap_pi(x: f64) -> f64 {
    let mut y = x.rem_euclid(TAU);
    if y > PI {
        y -= TAU;
    }
    y
}

/// Reduce an angle to [0, 2π).
#[inline]
pub fn wrap_two_pi(x: f64) -> f64 {
    let y = x.rem_euclid(TAU);
    if y >= TAU { 0.0 } else { y }
}

/// sin and cos of a small angle d, |d| < 0.01, by their Taylor series to
/// d⁷ and d⁸: truncation below 2e-18 relative (the starter's error, hence
/// a first correction, is ≤ 4.4e-4 rad). Constants are multiplied, not
/// divided by (a division by a literal is not folded by the compiler).
#[inline(always)]
fn small_sin_cos(d: f64) -> (f64, f64) {
    let d2 = d * d;
    let s = d * (1.0 + d2 * (-1.0 / 6.0 + d2 * (1.0 / 120.0 - d2 * (1.0 / 5040.0))));
    let c = 1.0 + d2 * (-0.5 + d2 * (1.0 / 24.0 + d2 * (-1.0 / 720.0 + d2 * (1.0 / 40_320.0))));
    (s, c)
}

/// A solver of the elliptic Kepler equation for one eccentricity, with the
/// M-independent constants of Markley's (1995) starter computed once: the
/// Keplerian model keeps one per planet so that a solve needs no division
/// for them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeplerSolver {
    e: f64,
    /// 3π² / (π² − 6) (Markley 1995, eq. 20, the M-independent part of α).
    alpha0: f64,
    /// 1.6π / ((1 + e)(π² − 6)), so that α = α₀ + α₁ (π − |M|).
    alpha1: f64,
}

impl KeplerSolver {
    /// A solver for eccentricity e; `None` unless 0 ≤ e < 1.
    #[inline]
    pub fn new(e: f64) -> Option<Self> {
        if !(0.0..1.0).contains(&e) {
            return None;
        }
        const PI2: f64 = PI * PI;
        Some(Self {
            e,
            alpha0: 3.0 * PI2 / (PI2 - 6.0),
            alpha1: 1.6 * PI / ((1.0 + e) * (PI2 - 6.0)),
        })
    }

    /// The eccentricity of this solver.
    #[inline]
    pub fn eccentricity(&self) -> f64 {
        self.e
    }

    /// Markley's (1995) cubic starter for −π ≤ M ≤ π (eqs. 5–20); its
    /// largest error is 4.4e-4 rad (measured on a 1001 × 4001 grid of
    /// (e, M) with an exact cube root; the starter-grade one adds ≲ 1e-4).
    #[inline(always)]
    fn starter(&self, m: f64) -> f64 {
        let e = self.e;
        let alpha = self.alpha0 + self.alpha1 * (PI - m.abs());
        let d = 3.0 * (1.0 - e) + alpha * e;
        let q = 2.0 * alpha * d * (1.0 - e) - m * m;
        let r = 3.0 * alpha * d * (d - 1.0 + e) * m + m * m * m;
        // w = (|r| + √(q³ + r²))^{2/3} as a squared cube root of starter
        // grade (`powf` and `cbrt` are library calls of ~25 ns each here).
        let cr = trig::cbrt_starter(r.abs() + (q * q * q + r * r).sqrt());
        let w = cr * cr;
        // (2 r w / (w² + w q + q²) + M) / d with one division.
        let den = w * w + w * q + q * q;
        (2.0 * r * w + m * den) / (d * den)
    }

    /// Solve E − e sin E = M for any finite M (radians; the returned E is
    /// in the same 2π-turn as M). `None` when M is not finite. See
    /// [`solve_kepler`] for the method.
    #[inline]
    pub fn solve(&self, mean_anomaly: f64) -> Option<EccentricAnomaly> {
        if !mean_anomaly.is_finite() {
            return None;
        }
        let e = self.e;
        let m_red = reduce_mean_anomaly(mean_anomaly);
        let turn = mean_anomaly - m_red;
        if e == 0.0 {
            let (s, c) = trig::sin_cos_bounded(m_red);
            return Some(EccentricAnomaly {
                e_anom: mean_anomaly,
                sin_e: s,
                cos_e: c,
                corrections: 0,
            });
        }
        let mut ecc = self.starter(m_red);
        let (mut s, mut c) = trig::sin_cos_bounded(ecc);
        let mut corrections = 0;
        // At least one correction is always applied: near e → 1 and M → 0
        // the starter's residual can be below the tolerance while E is
        // still off in relative terms (f′ = 1 − e cos E ≪ 1 there), and one
        // correction makes E accurate to rounding. Further ones only run if
        // the residual is still above [`KEPLER_TOLERANCE`] (not seen on a
        // dense grid).
        let mut f0 = ecc - e * s - m_red;
        loop {
            // f(E) = E − e sin E − M and its derivatives.
            let f1 = 1.0 - e * c;
            let f2 = e * s;
            let f3 = e * c;
            // Fifth-order correction (Markley 1995, eqs. 18–20), with
            // f⁗ = −f″; δ₃ = −f / (f′ − ½ f f″ / f′) in one division.
            let d3 = -f0 * f1 / (f1 * f1 - 0.5 * f0 * f2);
            let d4 = -f0 / (f1 + d3 * (0.5 * f2 + d3 * (1.0 / 6.0) * f3));
            let d5 =
                -f0 / (f1 + d4 * (0.5 * f2 + d4 * ((1.0 / 6.0) * f3 - d4 * (1.0 / 24.0) * f2)));
            ecc += d5;
            if d5.abs() < 0.01 {
                // sin/cos of E + δ by angle addition, re-using sin E, cos E.
                let (sd, cd) = small_sin_cos(d5);
                let s_new = s * cd + c * sd;
                c = c * cd - s * sd;
                s = s_new;
            } else {
                let sc = trig::sin_cos_bounded(ecc);
                s = sc.0;
                c = sc.1;
            }
            corrections += 1;
            f0 = ecc - e * s - m_red;
            if f0.abs() <= KEPLER_TOLERANCE || corrections == MAX_CORRECTIONS {
                break;
            }
        }
        Some(EccentricAnomaly {
            e_anom: ecc + turn,
            sin_e: s,
            cos_e: c,
            corrections,
        })
    }
}

impl KeplerSolver {
    /// Starter and one fifth-order correction for four values −π < M ≤ π
    /// (e > 0), written step by step over the four lanes in straight-line
    /// code with no branch, so that the compiler can pair the lanes into
    /// SIMD operations and the processor overlaps the four dependency
    /// chains. Returns per lane (E, sin E, cos E, residual, last
    /// correction); the caller falls back to [`KeplerSolver::solve`] when
    /// the residual is above the tolerance, not finite, or the correction
    /// too large for the short series.
    #[inline(always)]
    #[allow(clippy::type_complexity)]
    fn one_pass4(&self, m: [f64; 4]) -> ([f64; 4], [f64; 4], [f64; 4], [f64; 4], [f64; 4]) {
        macro_rules! lanes {
            ($i:ident => $x:expr) => {{
                let v: [f64; 4] = std::array::from_fn(|$i| $x);
                v
            }};
        }
        let e = self.e;
        let alpha = lanes!(i => self.alpha0 + self.alpha1 * (PI - m[i].abs()));
        let d = lanes!(i => 3.0 * (1.0 - e) + alpha[i] * e);
        let q = lanes!(i => 2.0 * alpha[i] * d[i] * (1.0 - e) - m[i] * m[i]);
        let r = lanes!(i => 3.0 * alpha[i] * d[i] * (d[i] - 1.0 + e) * m[i] + m[i] * m[i] * m[i]);
        let x = lanes!(i => r[i].abs() + (q[i] * q[i] * q[i] + r[i] * r[i]).sqrt());
        let cr = lanes!(i => trig::cbrt_starter_unchecked(x[i]));
        let w = lanes!(i => cr[i] * cr[i]);
        let den = lanes!(i => w[i] * w[i] + w[i] * q[i] + q[i] * q[i]);
        let ecc = lanes!(i => (2.0 * r[i] * w[i] + m[i] * den[i]) / (d[i] * den[i]));
        let sc: [(f64, f64); 4] = std::array::from_fn(|i| trig::sin_cos_unchecked(ecc[i]));
        let s = lanes!(i => sc[i].0);
        let c = lanes!(i => sc[i].1);
        let f0 = lanes!(i => ecc[i] - e * s[i] - m[i]);
        let f1 = lanes!(i => 1.0 - e * c[i]);
        let f2 = lanes!(i => e * s[i]);
        let f3 = lanes!(i => e * c[i]);
        let d3 = lanes!(i => -f0[i] * f1[i] / (f1[i] * f1[i] - 0.5 * f0[i] * f2[i]));
        let d4 =
            lanes!(i => -f0[i] / (f1[i] + d3[i] * (0.5 * f2[i] + d3[i] * (1.0 / 6.0) * f3[i])));
        let d5 = lanes!(i => -f0[i]
            / (f1[i] + d4[i] * (0.5 * f2[i] + d4[i] * ((1.0 / 6.0) * f3[i] - d4[i] * (1.0 / 24.0) * f2[i]))));
        let ecc = lanes!(i => ecc[i] + d5[i]);
        let scd: [(f64, f64); 4] = std::array::from_fn(|i| small_sin_cos(d5[i]));
        let s_new = lanes!(i => s[i] * scd[i].1 + c[i] * scd[i].0);
        let c_new = lanes!(i => c[i] * scd[i].1 - s[i] * scd[i].0);
        let res = lanes!(i => ecc[i] - e * s_new[i] - m[i]);
        (ecc, s_new, c_new, res, d5)
    }

    /// Solve Kepler's equation for four mean anomalies at once (radians,
    /// any finite values); `None` if one is not finite.
    ///
    /// The same method and results as [`KeplerSolver::solve`] (to
    /// rounding), but the four solves run interleaved in straight-line code
    /// so that the processor overlaps their long dependency chains
    /// (divisions, square root): about twice the throughput of four calls
    /// of `solve` (BENCHMARKS.md). A lane whose residual after one
    /// correction is above [`KEPLER_TOLERANCE`] is redone by `solve`.
    #[inline]
    pub fn solve4(&self, ms: [f64; 4]) -> Option<[EccentricAnomaly; 4]> {
        if !ms.iter().all(|m| m.is_finite()) {
            return None;
        }
        if self.e == 0.0 {
            return Some([
                self.solve(ms[0])?,
                self.solve(ms[1])?,
                self.solve(ms[2])?,
                self.solve(ms[3])?,
            ]);
        }
        let red = ms.map(reduce_mean_anomaly);
        let (ecc, s, c, f0, d5) = self.one_pass4(red);
        let mut out = [EccentricAnomaly::default(); 4];
        for i in 0..4 {
            out[i] = if f0[i].abs() <= KEPLER_TOLERANCE && d5[i].abs() < 0.01 {
                EccentricAnomaly {
                    e_anom: ecc[i] + (ms[i] - red[i]),
                    sin_e: s[i],
                    cos_e: c[i],
                    corrections: 1,
                }
            } else {
                self.solve(ms[i])?
            };
        }
        Some(out)
    }

    /// Solve Kepler's equation for every mean anomaly in `ms` (radians),
    /// writing into `out` (same length), four at a time with
    /// [`KeplerSolver::solve4`]; `None` if the lengths differ or an M is not
    /// finite (then `out` is partly written).
    pub fn solve_slice(&self, ms: &[f64], out: &mut [EccentricAnomaly]) -> Option<()> {
        if ms.len() != out.len() {
            return None;
        }
        let mut chunks_m = ms.chunks_exact(4);
        let mut chunks_o = out.chunks_exact_mut(4);
        for (cm, co) in (&mut chunks_m).zip(&mut chunks_o) {
            let res = self.solve4([cm[0], cm[1], cm[2], cm[3]])?;
            co.copy_from_slice(&res);
        }
        for (o, &m) in chunks_o
            .into_remainder()
            .iter_mut()
            .zip(chunks_m.remainder())
        {
            *o = self.solve(m)?;
        }
        Some(())
    }
}

/// Reduce M to (−π, π], skipping the library `fmod` when it already is.
#[inline(always)]
fn reduce_mean_anomaly(m: f64) -> f64 {
    if m > -PI && m <= PI { m } else { wrap_pi(m) }
}

/// Solve the elliptic Kepler equation E − e sin E = M for 0 ≤ e < 1 and any
/// M (radians; range-reduced internally, and the returned E is in the same
/// 2π-turn as M).
///
/// Method: Markley (1995) cubic starter (error ≤ 4.4e-4 rad) and one
/// fifth-order correction, repeated only while |E − e sin E − M| >
/// [`KEPLER_TOLERANCE`]. For many solves at one eccentricity, build a
/// [`KeplerSolver`] once.
///
/// Returns `None` when e is outside [0, 1) or M is not finite.
///
/// ```
/// use apsidal::kepler::solve_kepler;
/// // Meeus, Astronomical Algorithms (2nd ed.), ch. 30: e = 0.1, M = 5°
/// // gives E = 5.554589° (from memory).
/// let e = solve_kepler(5f64.to_radians(), 0.1).unwrap();
/// assert!((e.e_anom.to_degrees() - 5.554589).abs() < 1e-6);
/// ```
#[inline]
pub fn solve_kepler(mean_anomaly: f64, e: f64) -> Option<EccentricAnomaly> {
    KeplerSolver::new(e)?.solve(mean_anomaly)
}

/// Solve the hyperbolic Kepler equation e sinh F − F = M for e > 1 and any
/// finite M (radians), by Newton–Raphson with a Halley step from the
/// starter F₀ = asinh(M / e) (|M| small) or sign(M)·ln(2|M|/e + 1.8)
/// (Danby 1988, *Fundamentals of Celestial Mechanics*, §6.9).
///
/// Returns `None` for e ≤ 1, a non-finite M, or no convergence in 50
/// iterations (which does not happen for finite input).
pub fn solve_kepler_hyperbolic(mean_anomaly: f64, e: f64) -> Option<f64> {
    if e <= 1.0 || !e.is_finite() || !mean_anomaly.is_finite() {
        return None;
    }
    let m = mean_anomaly;
    let mut f = if m.abs() < 6.0 * e {
        (m / e).asinh()
    } else {
        m.signum() * (2.0 * m.abs() / e + 1.8).ln()
    };
    for _ in 0..50 {
        let sh = f.sinh();
        let ch = f.cosh();
        let g0 = e * sh - f - m;
        let g1 = e * ch - 1.0;
        let g2 = e * sh;
        // Halley step.
        let df = -g0 / (g1 - 0.5 * g0 * g2 / g1);
        f += df;
        if df.abs() <= 4.0 * f64::EPSILON * f.abs().max(1.0) {
            return Some(f);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn meeus_worked_example() {
        // Meeus, Astronomical Algorithms (2nd ed.), ch. 30, example 30.a:
        // e = 0.1, M = 5° gives E = 5.554589° (from memory).
        let sol = solve_kepler(5f64.to_radians(), 0.1).unwrap();
        assert!((sol.e_anom.to_degrees() - 5.554_589).abs() < 5e-7);
    }

    #[test]
    fn keeps_the_turn_of_the_input() {
        let m = 7.0 * TAU + 1.0;
        let sol = solve_kepler(m, 0.3).unwrap();
        assert!((sol.e_anom - 0.3 * sol.e_anom.sin() - m).abs() < 1e-12);
        assert!((sol.sin_e - sol.e_anom.sin()).abs() < 1e-14);
    }

    #[test]
    fn rejects_bad_input() {
        assert!(solve_kepler(1.0, 1.0).is_none());
        assert!(solve_kepler(1.0, -0.1).is_none());
        assert!(solve_kepler(f64::NAN, 0.1).is_none());
        assert!(solve_kepler_hyperbolic(1.0, 0.9).is_none());
    }

    #[test]
    fn hyperbolic_residual() {
        for &e in &[1.0001, 1.1, 2.0, 10.0] {
            for &m in &[-1000.0, -3.0, -1e-8, 0.0, 0.5, 7.0, 1e4] {
                let f = solve_kepler_hyperbolic(m, e).unwrap();
                let res = e * f.sinh() - f - m;
                assert!(
                    res.abs() <= 1e-12 * m.abs().max(1.0),
                    "e={e} m={m} res={res}"
                );
            }
        }
    }
}

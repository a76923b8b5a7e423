//! Kepler's equation, elliptic (E − e sin E = M) and hyperbolic
//! (e sinh F − F = M).
//!
//! The elliptic solver follows Markley (1995, Celest. Mech. Dyn. Astron. 63,
//! 101, eqs. 5–20): a cubic starter from a Padé approximation of sin E,
//! solved in closed form, then a fifth-order Householder-type correction
//! (Danby 1987, eq. 6.9 family). Each further correction re-uses the
//! sine and cosine of the previous estimate through the angle-addition
//! formulae with a short series for the small correction, so only one pair
//! of transcendental calls is made per solve. Iteration stops when the
//! residual is below [`KEPLER_TOLERANCE`] (normally after one correction,
//! at most [`MAX_CORRECTIONS`]).

use std::f64::consts::{PI, TAU};

/// Residual tolerance on |E − e sin E − M| in radians.
pub const KEPLER_TOLERANCE: f64 = 1e-15;

/// Largest number of high-order corrections applied after the starter.
pub const MAX_CORRECTIONS: usize = 6;

/// Solution of the elliptic Kepler equation with the sine and cosine of the
/// eccentric anomaly, which callers nearly always need next.
#[derive(Debug, Clone, Copy, PartialEq)]
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

/// sin and cos of a small angle d (|d| ≲ 0.1) by their Taylor series to
/// d⁹ / d¹⁰, accurate to rounding for |d| < 0.1.
#[inline]
fn small_sin_cos(d: f64) -> (f64, f64) {
    let d2 = d * d;
    let s = d * (1.0 - d2 / 6.0 * (1.0 - d2 / 20.0 * (1.0 - d2 / 42.0 * (1.0 - d2 / 72.0))));
    let c = 1.0
        - d2 / 2.0 * (1.0 - d2 / 12.0 * (1.0 - d2 / 30.0 * (1.0 - d2 / 56.0 * (1.0 - d2 / 90.0))));
    (s, c)
}

/// Markley's (1995) cubic starter for −π ≤ M ≤ π, 0 ≤ e < 1 (eqs. 5–20).
#[inline]
fn markley_starter(m: f64, e: f64) -> f64 {
    let pi2 = PI * PI;
    let abs_m = m.abs();
    let alpha = (3.0 * pi2 + 1.6 * PI * (PI - abs_m) / (1.0 + e)) / (pi2 - 6.0);
    let d = 3.0 * (1.0 - e) + alpha * e;
    let q = 2.0 * alpha * d * (1.0 - e) - m * m;
    let r = 3.0 * alpha * d * (d - 1.0 + e) * m + m * m * m;
    // (|r| + √(q³ + r²))^{2/3} as a squared cube root: `cbrt` is several
    // times cheaper than `powf` and exact to rounding.
    let cr = (r.abs() + (q * q * q + r * r).sqrt()).cbrt();
    let w = cr * cr;
    (2.0 * r * w / (w * w + w * q + q * q) + m) / d
}

/// Solve the elliptic Kepler equation E − e sin E = M for 0 ≤ e < 1 and any
/// M (radians; range-reduced internally, and the returned E is in the same
/// 2π-turn as M).
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
pub fn solve_kepler(mean_anomaly: f64, e: f64) -> Option<EccentricAnomaly> {
    if !(0.0..1.0).contains(&e) || !mean_anomaly.is_finite() {
        return None;
    }
    let m_red = wrap_pi(mean_anomaly);
    let turn = mean_anomaly - m_red;
    if e == 0.0 {
        let (s, c) = m_red.sin_cos();
        return Some(EccentricAnomaly {
            e_anom: mean_anomaly,
            sin_e: s,
            cos_e: c,
            corrections: 0,
        });
    }
    let mut ecc = markley_starter(m_red, e);
    let (mut s, mut c) = ecc.sin_cos();
    let mut corrections = 0;
    // At least one correction is always applied: near e → 1 and M → 0 the
    // starter's residual can be below the tolerance while E is still off
    // in relative terms (f′ = 1 − e cos E ≪ 1 there), and one correction
    // makes E accurate to rounding. Further ones only run if the residual
    // is still above [`KEPLER_TOLERANCE`] (not seen on a dense grid).
    let mut f0 = ecc - e * s - m_red;
    loop {
        // f(E) = E − e sin E − M and its derivatives.
        let f1 = 1.0 - e * c;
        let f2 = e * s;
        let f3 = e * c;
        let f4 = -f2;
        // Fifth-order correction (Markley 1995, eqs. 18–20).
        let d3 = -f0 / (f1 - 0.5 * f0 * f2 / f1);
        let d4 = -f0 / (f1 + 0.5 * d3 * f2 + d3 * d3 * f3 / 6.0);
        let d5 = -f0 / (f1 + 0.5 * d4 * f2 + d4 * d4 * f3 / 6.0 + d4 * d4 * d4 * f4 / 24.0);
        ecc += d5;
        if d5.abs() < 0.1 {
            // sin/cos of E + δ by angle addition, re-using sin E, cos E.
            let (sd, cd) = small_sin_cos(d5);
            let s_new = s * cd + c * sd;
            c = c * cd - s * sd;
            s = s_new;
        } else {
            let sc = ecc.sin_cos();
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

//! Sine and cosine for the bounded arguments of Kepler's equation, and a
//! cube root for Markley's starter.
//!
//! Written by hand (rather than calling the C library) because the solver
//! only ever needs |x| ≤ π + 0.1 and a cube root to ~1e-5: that allows a
//! two-constant Cody–Waite reduction to [−π/4, π/4] (Cody & Waite 1980,
//! *Software Manual for the Elementary Functions*) and short minimax
//! polynomials, inlined, with no general-range (Payne–Hanek) path and no
//! function call.
//! On the development machine this and the starter-grade cube root took a
//! solve from 165 ns to 78 ns (BENCHMARKS.md).
//! Accuracy is checked against the standard library in the unit tests.

/// High part of π/2 (33 significant bits, so k·PIO2_HI is exact for
/// |k| ≤ 2^20): fdlibm's `pio2_1`, 0x3FF921FB54400000.
const PIO2_HI: f64 = f64::from_bits(0x3FF9_21FB_5440_0000);
/// π/2 − PIO2_HI: fdlibm's `pio2_1t`, 0x3DD0B4611A626331 (both bit
/// patterns from memory; the unit tests check that they split π/2 and that
/// the sine matches the standard library).
const PIO2_LO: f64 = f64::from_bits(0x3DD0_B461_1A62_6331);
/// 2/π.
const TWO_OVER_PI: f64 = std::f64::consts::FRAC_2_PI;

/// Round to the nearest integer (ties to even) by the 1.5·2^52 trick, valid
/// for |x| < 2^51; exact and call-free (f64::round is a library call on
/// baseline x86-64).
#[inline(always)]
pub(crate) fn round_small(x: f64) -> f64 {
    const MAGIC: f64 = 6_755_399_441_055_744.0; // 1.5 · 2^52
    if x.abs() < 2_251_799_813_685_248.0 {
        (x + MAGIC) - MAGIC
    } else {
        x
    }
}

/// sin and cos of r for |r| ≤ π/4 (+ a little): the minimax polynomials of
/// degree 13 and 14 of Sun's fdlibm (k_sin.c, k_cos.c, 1993; error below
/// 2^-58 on [−π/4, π/4] per their comments, from memory; checked here
/// against the standard library to ≤ 2.3e-16 in the unit tests), evaluated with Estrin's scheme for a short
/// dependency chain, and fdlibm's split 1 − r²/2 for cos.
#[inline(always)]
#[allow(clippy::excessive_precision)] // the coefficients as published
fn sin_cos_kernel(r: f64) -> (f64, f64) {
    const S1: f64 = -1.666_666_666_666_663_243_48e-1;
    const S2: f64 = 8.333_333_333_322_489_461_24e-3;
    const S3: f64 = -1.984_126_982_985_794_931_34e-4;
    const S4: f64 = 2.755_731_370_707_006_767_89e-6;
    const S5: f64 = -2.505_076_025_340_686_341_95e-8;
    const S6: f64 = 1.589_690_995_211_550_102_21e-10;
    const C1: f64 = 4.166_666_666_666_660_190_37e-2;
    const C2: f64 = -1.388_888_888_887_410_957_49e-3;
    const C3: f64 = 2.480_158_728_947_672_941_78e-5;
    const C4: f64 = -2.755_731_435_139_066_330_35e-7;
    const C5: f64 = 2.087_572_321_298_174_827_90e-9;
    const C6: f64 = -1.135_964_755_778_819_482_65e-11;
    let z = r * r;
    let z2 = z * z;
    let z4 = z2 * z2;
    let ps = (S1 + z * S2) + z2 * (S3 + z * S4) + z4 * (S5 + z * S6);
    let pc = (C1 + z * C2) + z2 * (C3 + z * C4) + z4 * (C5 + z * C6);
    let s = r + (r * z) * ps;
    let hz = 0.5 * z;
    let w = 1.0 - hz;
    let c = w + (((1.0 - w) - hz) + z2 * pc);
    (s, c)
}

/// (sin x, cos x) for |x| ≤ 4, accurate to about one ulp; outside that
/// range it falls back to the standard library.
#[inline(always)]
pub(crate) fn sin_cos_bounded(x: f64) -> (f64, f64) {
    if x.abs() > 4.0 {
        return x.sin_cos();
    }
    sin_cos_unchecked(x)
}

/// [`sin_cos_bounded`] without the range check: only for |x| ≤ 4 (larger
/// |x| gives wrong values, never NaN for finite x).
#[inline(always)]
pub(crate) fn sin_cos_unchecked(x: f64) -> (f64, f64) {
    const MAGIC: f64 = 6_755_399_441_055_744.0; // 1.5 · 2^52
    let k = (x * TWO_OVER_PI + MAGIC) - MAGIC;
    let r = (x - k * PIO2_HI) - k * PIO2_LO;
    let (s, c) = sin_cos_kernel(r);
    // Quadrant q = k mod 4 (two's complement: −1 → 3, −2 → 2), applied
    // without branches or a jump table: odd q swaps sin and cos; sin
    // changes sign for q ∈ {2, 3}, cos for q ∈ {1, 2}.
    let q = (k as i64) as u64;
    let (a, b) = if q & 1 == 1 { (c, s) } else { (s, c) };
    let sign_a = ((q >> 1) & 1) << 63;
    let sign_b = (((q + 1) >> 1) & 1) << 63;
    (
        f64::from_bits(a.to_bits() ^ sign_a),
        f64::from_bits(b.to_bits() ^ sign_b),
    )
}

/// Cube root of x > 0 to a relative error below 2.1e-5, which is all
/// Markley's starter needs (its own error is up to 4.4e-4 rad, and the
/// fifth-order correction after it still reaches a residual ≤ 4.4e-16 on a
/// dense (e, M) grid, tests/kepler_properties.rs): exponent-thirding bit
/// trick (initial error < 4 %; the constant is fdlibm's B1 = 715094163 in
/// the high word) and one Halley iteration y ← y (y³ + 2x)/(2y³ + x), which
/// triples the number of correct digits. Non-normal input falls back to
/// `f64::cbrt`.
#[inline(always)]
pub(crate) fn cbrt_starter(x: f64) -> f64 {
    if !(x > 1e-300 && x < 1e300) {
        return x.cbrt();
    }
    cbrt_starter_unchecked(x)
}

/// [`cbrt_starter`] without the range check: only for normal x > 0 (other
/// input gives a wrong but finite-or-NaN value, which the callers' residual
/// check catches).
#[inline(always)]
pub(crate) fn cbrt_starter_unchecked(x: f64) -> f64 {
    let mut y = f64::from_bits(x.to_bits() / 3 + (715_094_163u64 << 32));
    let y3 = y * y * y;
    y *= (y3 + 2.0 * x) / (2.0 * y3 + x);
    y
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constants_split_pi_over_two() {
        // The two parts sum to π/2 (f64), and the high part has its low 22
        // bits clear so that k·PIO2_HI is exact for small k.
        assert_eq!(PIO2_HI + PIO2_LO, std::f64::consts::FRAC_PI_2);
        assert_eq!(PIO2_HI.to_bits() & 0x3F_FFFF, 0);
    }

    #[test]
    fn sin_cos_matches_std() {
        let mut worst: f64 = 0.0;
        for i in 0..=200_000 {
            let x = -4.0 + 8.0 * i as f64 / 200_000.0;
            let (s, c) = sin_cos_bounded(x);
            worst = worst.max((s - x.sin()).abs()).max((c - x.cos()).abs());
        }
        for &x in &[
            0.0,
            1e-300,
            -1e-20,
            1e-8,
            std::f64::consts::PI,
            -std::f64::consts::PI,
        ] {
            let (s, c) = sin_cos_bounded(x);
            // Relative accuracy near the zeros (at ±π: sin π_f64 = 1.22e-16,
            // which the two-part π/2 gets to ~1e-11 relative).
            let rel = (s - f64::sin(x)).abs() / f64::sin(x).abs().max(1e-300);
            assert!(rel <= 1e-10, "x = {x}: {s} vs {}", f64::sin(x));
            assert!((c - f64::cos(x)).abs() <= 2.3e-16);
        }
        assert!(worst <= 2.3e-16, "worst {worst:e}");
    }

    #[test]
    fn cube_root_matches_std() {
        let mut worst: f64 = 0.0;
        for i in 0..=100_000 {
            let x = 10f64.powf(-30.0 + 60.0 * i as f64 / 100_000.0);
            worst = worst.max((cbrt_starter(x) / x.cbrt() - 1.0).abs());
        }
        println!("cbrt_starter worst relative error {worst:e}");
        assert!(worst < 2.1e-5, "worst {worst:e}");
        assert_eq!(cbrt_starter(0.0), 0.0);
    }

    #[test]
    fn rounding_trick() {
        for &(x, r) in &[
            (0.4, 0.0),
            (0.6, 1.0),
            (-1.6, -2.0),
            (2.5, 2.0),
            (-2.49, -2.0),
        ] {
            assert_eq!(round_small(x), r);
        }
        assert_eq!(round_small(1e300), 1e300);
    }
}

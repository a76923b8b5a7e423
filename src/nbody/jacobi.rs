//! Jacobi coordinates ↔ barycentric (inertial) and astrocentric coordinates.
//!
//! Body 0 is the star; planets 1..N are ordered by period. With
//! M_k = m_0 + m_1 + … + m_k (the interior mass *including* body k) and
//! R_k the centre of mass of bodies 0..k, the Jacobi vectors are
//!
//! r'_0 = R_N (centre of mass), r'_k = r_k − R_{k−1} (k ≥ 1),
//!
//! (Jacobi's construction as used by Wisdom & Holman 1991, §3). The inverse
//! runs from the outside in: R_{k−1} = R_k − (m_k/M_k) r'_k and
//! r_k = R_{k−1} + r'_k, so the star ends at exactly
//! r_0 = R_N − Σ_k (m_k/M_k) r'_k (DESIGN §3). The map is linear, so the
//! same functions transform velocities and accelerations (for
//! accelerations the centre-of-mass entry is the total force over the total
//! mass).
//!
//! All functions write into caller-provided slices (no allocation) and
//! require slices of one length n ≥ 1 (checked by debug assertions only:
//! they are internal hot-path helpers; public entry points validate).

use nalgebra::Vector3;

/// Interior masses M_k = m_0 + … + m_k (M☉) of `masses`, written into `out`.
#[inline]
pub fn interior_masses(masses: &[f64], out: &mut [f64]) {
    debug_assert_eq!(masses.len(), out.len());
    let mut acc = 0.0;
    for (o, &m) in out.iter_mut().zip(masses) {
        acc += m;
        *o = acc;
    }
}

/// Barycentric (inertial) vectors `x` (positions, velocities or
/// accelerations) → Jacobi vectors `jac`; `interior` from
/// [`interior_masses`]. `jac[0]` receives the centre-of-mass vector.
#[inline]
pub fn inertial_to_jacobi(
    masses: &[f64],
    interior: &[f64],
    x: &[Vector3<f64>],
    jac: &mut [Vector3<f64>],
) {
    let n = x.len();
    debug_assert!(n >= 1 && jac.len() == n && masses.len() == n && interior.len() == n);
    // S = Σ_{j<k} m_j x_j, the mass-weighted sum of the interior bodies.
    let mut sum = x[0] * masses[0];
    for k in 1..n {
        jac[k] = x[k] - sum / interior[k - 1];
        sum += x[k] * masses[k];
    }
    jac[0] = sum / interior[n - 1];
}

/// Jacobi vectors `jac` → barycentric (inertial) vectors `x`; the inverse of
/// [`inertial_to_jacobi`]. Uses R_{k−1} = R_k − (m_k/M_k) r'_k from the
/// outside in, so `x[0] = jac[0] − Σ_k (m_k/M_k) jac[k]`.
#[inline]
pub fn jacobi_to_inertial(
    masses: &[f64],
    interior: &[f64],
    jac: &[Vector3<f64>],
    x: &mut [Vector3<f64>],
) {
    let n = jac.len();
    debug_assert!(n >= 1 && x.len() == n && masses.len() == n && interior.len() == n);
    let mut com = jac[0];
    for k in (1..n).rev() {
        com -= jac[k] * (masses[k] / interior[k]);
        x[k] = com + jac[k];
    }
    x[0] = com;
}

/// [`inertial_to_jacobi`] with the reciprocals `inv_interior[k]` = 1/M_k
/// precomputed (multiplications instead of divisions; for integrator
/// kicks). Agrees with it to rounding.
#[inline(always)]
pub fn inertial_to_jacobi_with(
    masses: &[f64],
    inv_interior: &[f64],
    x: &[Vector3<f64>],
    jac: &mut [Vector3<f64>],
) {
    let n = x.len();
    debug_assert!(n >= 1 && jac.len() == n && masses.len() == n && inv_interior.len() == n);
    let mut sum = x[0] * masses[0];
    for k in 1..n {
        jac[k] = x[k] - sum * inv_interior[k - 1];
        sum += x[k] * masses[k];
    }
    jac[0] = sum * inv_interior[n - 1];
}

/// [`jacobi_to_inertial`] with the ratios `ratio[k]` = m_k/M_k
/// precomputed; bit-for-bit the same result when `ratio[k]` is
/// `masses[k] / interior[k]`.
#[inline(always)]
pub fn jacobi_to_inertial_with(ratio: &[f64], jac: &[Vector3<f64>], x: &mut [Vector3<f64>]) {
    let n = jac.len();
    debug_assert!(n >= 1 && x.len() == n && ratio.len() == n);
    let mut com = jac[0];
    for k in (1..n).rev() {
        com -= jac[k] * ratio[k];
        x[k] = com + jac[k];
    }
    x[0] = com;
}

/// Barycentric vectors `x` → astrocentric (relative to the star, body 0)
/// vectors `out`: `out[k] = x[k] − x[0]` (`out[0]` = 0).
#[inline]
pub fn inertial_to_astrocentric(x: &[Vector3<f64>], out: &mut [Vector3<f64>]) {
    debug_assert_eq!(x.len(), out.len());
    let x0 = x[0];
    for (o, xi) in out.iter_mut().zip(x) {
        *o = xi - x0;
    }
}

/// Astrocentric vectors `rel` (`rel[0]` ignored) → barycentric vectors `x`,
/// for positions or velocities: the star is at
/// x_0 = −Σ m_k rel_k / Σ m_j (the barycentre at the origin, at rest for
/// velocities), x_k = x_0 + rel_k.
#[inline]
pub fn astrocentric_to_inertial(masses: &[f64], rel: &[Vector3<f64>], x: &mut [Vector3<f64>]) {
    debug_assert!(rel.len() == x.len() && masses.len() == x.len());
    let total: f64 = masses.iter().sum();
    let mut s = Vector3::zeros();
    for k in 1..rel.len() {
        s += rel[k] * masses[k];
    }
    let x0 = -s / total;
    x[0] = x0;
    for k in 1..rel.len() {
        x[k] = x0 + rel[k];
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_and_star_identity() {
        let m = [1.0, 1e-3, 3e-4, 2e-3];
        let mut mi = [0.0; 4];
        interior_masses(&m, &mut mi);
        let x = [
            Vector3::new(0.001, -0.002, 0.0005),
            Vector3::new(1.0, 0.2, -0.1),
            Vector3::new(-2.0, 0.5, 0.3),
            Vector3::new(0.3, 4.0, -0.2),
        ];
        let mut j = [Vector3::zeros(); 4];
        let mut back = [Vector3::zeros(); 4];
        inertial_to_jacobi(&m, &mi, &x, &mut j);
        jacobi_to_inertial(&m, &mi, &j, &mut back);
        for k in 0..4 {
            assert!((back[k] - x[k]).norm() < 1e-15, "{k}");
        }
        // Star identity r_0 = R − Σ (m_k/M_k) r'_k (DESIGN §3).
        let mut star = j[0];
        for k in 1..4 {
            star -= j[k] * (m[k] / mi[k]);
        }
        assert!((star - x[0]).norm() < 1e-16);
        // First Jacobi vector is the astrocentric one.
        assert!((j[1] - (x[1] - x[0])).norm() < 1e-15);
        // Astrocentric round trip for a state with its barycentre at 0.
        let com: Vector3<f64> = (0..4).map(|k| x[k] * m[k]).sum::<Vector3<f64>>() / mi[3];
        let xb: Vec<Vector3<f64>> = x.iter().map(|v| v - com).collect();
        let mut rel = [Vector3::zeros(); 4];
        inertial_to_astrocentric(&xb, &mut rel);
        astrocentric_to_inertial(&m, &rel, &mut back);
        for k in 0..4 {
            assert!((back[k] - xb[k]).norm() < 1e-15, "{k}");
        }
    }
}

//! Gravitational accelerations between point masses.

use nalgebra::Vector3;

use crate::units::G;

/// Newtonian accelerations (au/d²) of all bodies from their mutual
/// attraction, written into `acc` (same length as `pos`); `masses` in M☉,
/// positions in au. Pairwise sum with Newton's third law, O(N²).
#[inline]
pub fn newtonian_accelerations(masses: &[f64], pos: &[Vector3<f64>], acc: &mut [Vector3<f64>]) {
    let n = pos.len();
    for a in acc.iter_mut() {
        *a = Vector3::zeros();
    }
    for i in 0..n {
        for j in (i + 1)..n {
            let d = pos[j] - pos[i];
            let r2 = d.norm_squared();
            let inv_r3 = 1.0 / (r2 * r2.sqrt());
            let f = d * (G * inv_r3);
            acc[i] += f * masses[j];
            acc[j] -= f * masses[i];
        }
    }
}

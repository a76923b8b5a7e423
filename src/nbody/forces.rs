//! Gravitational accelerations between point masses.

use nalgebra::Vector3;

use crate::units::{C_AU_PER_DAY, G};

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

/// Adds the first post-Newtonian (1PN) correction from the star (body 0)
/// to `acc` (au/d²), for positions `pos` (au) and velocities `vel` (au/d),
/// barycentric; `masses` in M☉.
///
/// Form: the test-particle 1PN acceleration of a body about a central mass
/// in harmonic coordinates (Anderson et al. 1975, ApJ 200, 221; also
/// Benitez & Gallardo 2008, Celest. Mech. Dyn. Astr. 101, 289, eq. 1),
/// with the star as the only relativistic source:
///
/// a_PN = μ / (c² r³) [ (4μ/r − v²) r + 4 (r·v) v ],  μ = G M⋆,
///
/// where r = x_k − x_⋆ and v = v_k − v_⋆ are the planet's heliocentric
/// (astrocentric) position and velocity. Planet–planet relativistic terms
/// are neglected. Applied in the barycentric frame so that the relative
/// acceleration of planet k with respect to the star gains exactly a_PN
/// and the barycentre stays unaccelerated: the planet gets
/// M⋆/(M⋆ + m_k) a_PN and the star −m_k/(M⋆ + m_k) a_PN. On its own (no
/// other planets) this gives the classical periastron advance
/// Δϖ = 6πGM⋆ / (c² a (1 − e²)) per orbit (Einstein 1915).
#[inline]
pub fn add_post_newtonian_accelerations(
    masses: &[f64],
    pos: &[Vector3<f64>],
    vel: &[Vector3<f64>],
    acc: &mut [Vector3<f64>],
) {
    let n = pos.len();
    if n < 2 {
        return;
    }
    let m0 = masses[0];
    let mu = G * m0;
    let c2 = C_AU_PER_DAY * C_AU_PER_DAY;
    for k in 1..n {
        let r = pos[k] - pos[0];
        let v = vel[k] - vel[0];
        let r2 = r.norm_squared();
        let rn = r2.sqrt();
        let pref = mu / (c2 * r2 * rn);
        let a_pn = (r * (4.0 * mu / rn - v.norm_squared()) + v * (4.0 * r.dot(&v))) * pref;
        let tot = m0 + masses[k];
        acc[k] += a_pn * (m0 / tot);
        acc[0] -= a_pn * (masses[k] / tot);
    }
}

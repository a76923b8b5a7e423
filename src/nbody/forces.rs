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

/// Newtonian accelerations as [`newtonian_accelerations`], on flat
/// coordinate arrays: `pos` and `acc` hold x, y, z of body 0, then body 1,
/// … (au and au/d²). The same pairwise sum; used by the integrators' inner
/// loops to avoid packing `Vector3`s.
#[inline]
pub fn newtonian_accelerations_flat(masses: &[f64], pos: &[f64], acc: &mut [f64]) {
    let n = masses.len();
    let pos = &pos[..3 * n];
    let acc = &mut acc[..3 * n];
    for a in acc.iter_mut() {
        *a = 0.0;
    }
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

#[cfg(test)]
mod tests {
    use super::*;

    fn bodies() -> (Vec<f64>, Vec<Vector3<f64>>, Vec<Vector3<f64>>) {
        let m = vec![1.0, 1e-3, 3e-4, 2e-5];
        let p = vec![
            Vector3::new(0.001, -0.002, 0.0005),
            Vector3::new(0.4, 0.1, -0.02),
            Vector3::new(-0.3, 0.9, 0.05),
            Vector3::new(1.5, -0.7, 0.3),
        ];
        let v = vec![
            Vector3::new(1e-5, 2e-5, 0.0),
            Vector3::new(-0.005, 0.025, 0.001),
            Vector3::new(-0.015, -0.006, 0.0),
            Vector3::new(0.004, 0.011, -0.002),
        ];
        (m, p, v)
    }

    #[test]
    fn flat_and_vector_forms_agree_and_conserve_momentum() {
        // Newton's third law: Σ m_i a_i = 0.
        let (m, p, _) = bodies();
        let mut acc = vec![Vector3::zeros(); 4];
        newtonian_accelerations(&m, &p, &mut acc);
        let flat_p: Vec<f64> = p.iter().flat_map(|x| [x.x, x.y, x.z]).collect();
        let mut flat_a = vec![0.0; 12];
        newtonian_accelerations_flat(&m, &flat_p, &mut flat_a);
        for i in 0..4 {
            for c in 0..3 {
                assert!((acc[i][c] - flat_a[3 * i + c]).abs() <= 1e-15 * acc[i].norm());
            }
        }
        let tot: Vector3<f64> = (0..4).map(|i| acc[i] * m[i]).sum();
        assert!(tot.norm() < 1e-18);
        // The two-body limit: |a| = G m_0 / r² for body 1 alone with the star.
        let mut a2 = vec![Vector3::zeros(); 2];
        newtonian_accelerations(&m[..2], &p[..2], &mut a2);
        let r = (p[1] - p[0]).norm();
        assert!((a2[1].norm() - G * m[0] / (r * r)).abs() < 1e-14 * a2[1].norm());
    }

    #[test]
    fn post_newtonian_term_keeps_the_barycentre_and_gives_the_formula() {
        // a_PN = μ/(c² r³) [(4μ/r − v²) r + 4 (r·v) v] for the relative
        // orbit (Anderson et al. 1975), barycentre unaccelerated.
        let (m, p, v) = bodies();
        let mut acc = vec![Vector3::zeros(); 4];
        add_post_newtonian_accelerations(&m, &p, &v, &mut acc);
        let tot: Vector3<f64> = (0..4).map(|i| acc[i] * m[i]).sum();
        assert!(tot.norm() < 1e-14 * acc[1].norm() * m[1]);
        let mut a2 = vec![Vector3::zeros(); 2];
        add_post_newtonian_accelerations(&m[..2], &p[..2], &v[..2], &mut a2);
        let r = p[1] - p[0];
        let u = v[1] - v[0];
        let mu = G * m[0];
        let rn = r.norm();
        let c2 = C_AU_PER_DAY * C_AU_PER_DAY;
        let want = (r * (4.0 * mu / rn - u.norm_squared()) + u * (4.0 * r.dot(&u)))
            * (mu / (c2 * rn.powi(3)));
        assert!((a2[1] - a2[0] - want).norm() < 1e-12 * want.norm());
        // Size: ~ (GM/c²r) × Newtonian ≈ 2.5e-8 of GM/r² at 0.41 au.
        assert!(want.norm() / (mu / (rn * rn)) < 1e-7);
    }
}

//! The planetary system: masses, radii and a barycentric state.

use nalgebra::Vector3;

use crate::units::G;

/// Positions (au) and velocities (au/day) of all bodies at time `t`
/// (days), barycentric and inertial; index 0 is the star.
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    /// Time in days.
    pub t: f64,
    /// Positions in au.
    pub pos: Vec<Vector3<f64>>,
    /// Velocities in au/day.
    pub vel: Vec<Vector3<f64>>,
}

impl Snapshot {
    /// A zeroed snapshot for `n` bodies at time `t`.
    pub fn zeros(n: usize, t: f64) -> Self {
        Snapshot {
            t,
            pos: vec![Vector3::zeros(); n],
            vel: vec![Vector3::zeros(); n],
        }
    }

    /// Number of bodies.
    pub fn len(&self) -> usize {
        self.pos.len()
    }

    /// True when there are no bodies.
    pub fn is_empty(&self) -> bool {
        self.pos.is_empty()
    }
}

/// A star and its planets: masses in M☉, radii in au (0 for a point mass),
/// the barycentric state, and which optional forces act.
#[derive(Debug, Clone, PartialEq)]
pub struct System {
    /// Masses in M☉; index 0 is the star.
    pub masses: Vec<f64>,
    /// Radii in au (0: point mass); index 0 is the star.
    pub radii: Vec<f64>,
    /// Barycentric state.
    pub state: Snapshot,
    /// Add the first post-Newtonian correction from the star.
    pub post_newtonian: bool,
}

impl System {
    /// Total energy (kinetic + potential) in M☉ au² d⁻², barycentric.
    /// (Without the post-Newtonian term.)
    pub fn energy(&self) -> f64 {
        let s = &self.state;
        let n = s.len();
        let mut kin = 0.0;
        let mut pot = 0.0;
        for i in 0..n {
            kin += 0.5 * self.masses[i] * s.vel[i].norm_squared();
            for j in (i + 1)..n {
                pot -= G * self.masses[i] * self.masses[j] / (s.pos[i] - s.pos[j]).norm();
            }
        }
        kin + pot
    }

    /// Total angular momentum Σ m r × v in M☉ au² d⁻¹, barycentric.
    pub fn angular_momentum(&self) -> Vector3<f64> {
        let s = &self.state;
        (0..s.len())
            .map(|i| self.masses[i] * s.pos[i].cross(&s.vel[i]))
            .sum()
    }
}

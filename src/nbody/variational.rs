//! First-order variational equations: tangent vectors carried along an
//! orbit by both integrators, and the exact derivatives of the star's RV
//! with respect to the initial state of the planets.
//!
//! A tangent vector δ = (δx_i, δv_i), i = 0..N, is a small displacement of
//! the barycentric state (au, au/day). It obeys the linearised equations of
//! motion δẋ = δv, δv̇ = Σ_j (∂a_i/∂x_j) δx_j, where for point masses
//! (the tidal tensor; e.g. Rein & Tamayo 2016, MNRAS 459, 2275, eq. 4)
//!
//! δa_i = Σ_{j≠i} G m_j [ δd_ij / d³ − 3 d_ij (d_ij·δd_ij) / d⁵ ],
//! d_ij = x_j − x_i, δd_ij = δx_j − δx_i.
//!
//! How each integrator advances them:
//!
//! * **Wisdom–Holman** ([`super::wisdom_holman`]): the exact tangent map of
//!   the map itself (so the derivatives are those of the numerical
//!   solution, to rounding): for the Kepler drift the derivative of the
//!   universal-variable f and g solution ([`super::universal::DriftTangent`]),
//!   for the kick the Jacobian of the interaction accelerations in Jacobi
//!   coordinates applied to δr' (including the post-Newtonian potential's
//!   when it is on). Tangent vectors are refused when a symplectic
//!   corrector is on (its kernels would need the same treatment; not done).
//! * **Gauss–Radau** ([`super::gauss_radau`]): the linearised equations are
//!   integrated as extra coordinates inside the same step, with the step
//!   size and the predictor–corrector convergence decided by the real
//!   bodies only (Rein & Tamayo 2016, §3 do the same for IAS15). Refused
//!   with the post-Newtonian term on (its acceleration depends on the
//!   velocities and its Jacobian is not coded).
//!
//! Without tangent vectors both integrators run exactly their plain code
//! path (one branch per step).

use nalgebra::{DMatrix, Vector3};

use super::events::NbodyError;
use super::gauss_radau::{GaussRadau, GaussRadauSettings};
use super::integrator::Integrator;
use super::jacobi;
use super::system::{Snapshot, System};
use super::wisdom_holman::{WhSettings, WisdomHolman};
use crate::units::{AU_PER_DAY_IN_M_S, G};

/// A tangent vector: a displacement of every body's barycentric position
/// (au) and velocity (au/day); index 0 is the star.
#[derive(Debug, Clone, PartialEq)]
pub struct Tangent {
    /// Position displacements in au.
    pub pos: Vec<Vector3<f64>>,
    /// Velocity displacements in au/day.
    pub vel: Vec<Vector3<f64>>,
}

impl Tangent {
    /// A zero tangent vector for `n` bodies.
    pub fn zeros(n: usize) -> Self {
        Tangent {
            pos: vec![Vector3::zeros(); n],
            vel: vec![Vector3::zeros(); n],
        }
    }

    /// Number of bodies.
    pub fn len(&self) -> usize {
        self.pos.len()
    }

    /// True when it has no bodies.
    pub fn is_empty(&self) -> bool {
        self.pos.is_empty()
    }
}

/// Linearised Newtonian accelerations δa (au/d²) of all bodies for the
/// position displacements `dpos` (au) about the positions `pos` (au),
/// masses in M☉: the tidal tensor of the module docs applied to δx,
/// written into `dacc`. Pairwise with the symmetry of the tensor, O(N²).
#[inline]
pub fn tidal_accelerations(
    masses: &[f64],
    pos: &[Vector3<f64>],
    dpos: &[Vector3<f64>],
    dacc: &mut [Vector3<f64>],
) {
    let n = pos.len();
    for a in dacc.iter_mut() {
        *a = Vector3::zeros();
    }
    for i in 0..n {
        for j in (i + 1)..n {
            let d = pos[j] - pos[i];
            let dd = dpos[j] - dpos[i];
            let r2 = d.norm_squared();
            let inv_r3 = 1.0 / (r2 * r2.sqrt());
            let t = (dd - d * (3.0 * d.dot(&dd) / r2)) * (G * inv_r3);
            dacc[i] += t * masses[j];
            dacc[j] -= t * masses[i];
        }
    }
}

/// [`tidal_accelerations`] on flat arrays (x, y, z of body 0, then body 1,
/// …): `pos` and `dpos` of length ≥ 3N with N = `masses.len()`; writes
/// the first 3N entries of `dacc`.
#[inline]
pub fn tidal_accelerations_flat(masses: &[f64], pos: &[f64], dpos: &[f64], dacc: &mut [f64]) {
    let n = masses.len();
    let dacc = &mut dacc[..3 * n];
    dacc.fill(0.0);
    for i in 0..n {
        let xi = Vector3::new(pos[3 * i], pos[3 * i + 1], pos[3 * i + 2]);
        let dxi = Vector3::new(dpos[3 * i], dpos[3 * i + 1], dpos[3 * i + 2]);
        let mut ai = Vector3::zeros();
        for j in (i + 1)..n {
            let d = Vector3::new(pos[3 * j], pos[3 * j + 1], pos[3 * j + 2]) - xi;
            let dd = Vector3::new(dpos[3 * j], dpos[3 * j + 1], dpos[3 * j + 2]) - dxi;
            let r2 = d.norm_squared();
            let inv_r3 = 1.0 / (r2 * r2.sqrt());
            let t = (dd - d * (3.0 * d.dot(&dd) / r2)) * (G * inv_r3);
            ai += t * masses[j];
            for c in 0..3 {
                dacc[3 * j + c] -= t[c] * masses[i];
            }
        }
        for c in 0..3 {
            dacc[3 * i + c] += ai[c];
        }
    }
}

/// An integrator that carries first-order tangent vectors with its orbit.
pub trait Variational: Integrator {
    /// Start carrying `tangents` (barycentric, one entry per body each),
    /// given at the current step boundary [`Integrator::time`]; replaces
    /// any tangent vectors carried before. Buffers are allocated here,
    /// never in a step. Errors when the integrator cannot carry them
    /// (see the module docs) or the lengths are wrong.
    fn set_tangents(&mut self, tangents: &[Tangent]) -> Result<(), NbodyError>;

    /// Number of tangent vectors carried.
    fn tangent_count(&self) -> usize;

    /// The tangent vectors (barycentric) at the time of the last
    /// [`Integrator::advance_to`] output (at the boundary where they were
    /// set, before any output).
    fn output_tangents(&self) -> &[Tangent];

    /// Multiply tangent vector `i` by `factor` (renormalisation; the
    /// equations are linear). Also scales its last output.
    fn scale_tangent(&mut self, i: usize, factor: f64);
}

/// Which integrator runs a variational computation, with its settings.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum VariationalIntegrator {
    /// Wisdom–Holman map (the corrector must be `Off`).
    WisdomHolman(WhSettings),
    /// Adaptive Gauss–Radau (post-Newtonian must be off).
    GaussRadau(GaussRadauSettings),
}

impl VariationalIntegrator {
    /// Build the chosen integrator from `system`.
    pub fn build(&self, system: &System) -> Result<Box<dyn Variational>, NbodyError> {
        Ok(match self {
            VariationalIntegrator::WisdomHolman(s) => Box::new(WisdomHolman::new(system, *s)?),
            VariationalIntegrator::GaussRadau(s) => Box::new(GaussRadau::new(system.clone(), *s)?),
        })
    }
}

/// Frame of the initial-state coordinates that [`rv_jacobian`]
/// differentiates with respect to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum InitialFrame {
    /// Jacobi vectors r'_k, v'_k of planet k (about the centre of mass of
    /// the star and planets 1..k−1; [`super::jacobi`]), the other Jacobi
    /// vectors and the centre of mass held fixed. This is the frame of
    /// [`System::from_jacobi_elements`]: the chain rule with ∂(r'_k, v'_k)
    /// / ∂(elements_k) gives the derivatives by the elements.
    Jacobi,
    /// Barycentric x_k, v_k of planet k, the other planets held fixed and
    /// the star moved by −(m_k/m_0) δ so that the barycentre stays at rest
    /// at its place.
    Barycentric,
}

/// The star's RV at some epochs and its derivatives by the initial state.
#[derive(Debug, Clone, PartialEq)]
pub struct RvJacobian {
    /// The star's barycentric v_z in m/s at each epoch (positive: receding).
    pub rv: Vec<f64>,
    /// ∂v_z(t_i)/∂q_j: one row per epoch (in the given order), 6N columns:
    /// planet 1's x, y, z (m/s per au), v_x, v_y, v_z (m/s per au/day),
    /// then planet 2's, … in the chosen [`InitialFrame`] at the system's
    /// epoch.
    pub d_rv: DMatrix<f64>,
}

/// The initial tangent vector (barycentric) for coordinate `c` (0..6:
/// x, y, z, v_x, v_y, v_z) of planet `k` in `frame`.
pub fn unit_tangent(system: &System, frame: InitialFrame, k: usize, c: usize) -> Tangent {
    let n = system.len();
    let mut t = Tangent::zeros(n);
    let mut e = Vector3::zeros();
    e[c % 3] = 1.0;
    match frame {
        InitialFrame::Jacobi => {
            let interior = system.interior_masses();
            let mut jac = vec![Vector3::zeros(); n];
            jac[k] = e;
            let out = if c < 3 { &mut t.pos } else { &mut t.vel };
            jacobi::jacobi_to_inertial(&system.masses, &interior, &jac, out);
        }
        InitialFrame::Barycentric => {
            let out = if c < 3 { &mut t.pos } else { &mut t.vel };
            out[k] = e;
            out[0] = -e * (system.masses[k] / system.masses[0]);
        }
    }
    t
}

/// The star's barycentric RV v_z (m/s) at `epochs` (days, any order, on
/// either side of the system's epoch) and its exact derivatives with
/// respect to the planets' initial state in `frame` (see
/// [`RvJacobian::d_rv`]), from 6N tangent vectors integrated with the
/// orbit by `integrator` (forwards for epochs after the system's epoch,
/// with a second run backwards for those before). The derivatives are those
/// of the numerical solution (Wisdom–Holman) or of the exact flow to the
/// integrator's accuracy (Gauss–Radau). Masses are not differentiated.
pub fn rv_jacobian(
    system: &System,
    integrator: VariationalIntegrator,
    frame: InitialFrame,
    epochs: &[f64],
) -> Result<RvJacobian, NbodyError> {
    let n = system.len();
    let np = n.saturating_sub(1);
    if epochs.iter().any(|t| !t.is_finite()) {
        return Err(NbodyError::InvalidRequest("epochs must be finite".into()));
    }
    let tangents: Vec<Tangent> = (1..n)
        .flat_map(|k| (0..6).map(move |c| (k, c)))
        .map(|(k, c)| unit_tangent(system, frame, k, c))
        .collect();
    let mut order: Vec<usize> = (0..epochs.len()).collect();
    order.sort_by(|&a, &b| epochs[a].total_cmp(&epochs[b]));
    let t0 = system.state.t;
    let split = order.partition_point(|&i| epochs[i] < t0);
    let mut rv = vec![0.0; epochs.len()];
    let mut d_rv = DMatrix::zeros(epochs.len(), 6 * np);
    let mut snap = Snapshot::zeros(n, t0);
    let mut run = |idx: &mut dyn Iterator<Item = &usize>| -> Result<(), NbodyError> {
        let mut integ = integrator.build(system)?;
        integ.set_tangents(&tangents)?;
        for &i in idx {
            integ.advance_to(epochs[i], &mut snap)?;
            rv[i] = snap.vel[0].z * AU_PER_DAY_IN_M_S;
            for (j, t) in integ.output_tangents().iter().enumerate() {
                d_rv[(i, j)] = t.vel[0].z * AU_PER_DAY_IN_M_S;
            }
        }
        Ok(())
    };
    run(&mut order[split..].iter())?;
    if split > 0 {
        run(&mut order[..split].iter().rev())?;
    }
    Ok(RvJacobian { rv, d_rv })
}

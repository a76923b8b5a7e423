//! The Wisdom–Holman symplectic map in Jacobi coordinates (Wisdom & Holman
//! 1991, AJ 102, 1528), with optional symplectic correctors (Wisdom, Holman
//! & Touma 1996, Fields Inst. Commun. 10, 217) and an optional first
//! post-Newtonian potential of the star (Nobili & Roxburgh 1986, IAU Symp.
//! 114, 105).
//!
//! # Splitting
//!
//! In Jacobi coordinates (see [`super::jacobi`]) with Jacobi masses
//! m'_k = m_k M_{k−1}/M_k the Hamiltonian splits as H = H_A + H_B,
//!
//! * H_A = Σ_k [ p'_k²/(2m'_k) − G M_k m'_k / r'_k ]: independent Kepler
//!   orbits about μ_k = G M_k (M_k = m_0 + … + m_k), solved exactly by the
//!   universal-variable drift of [`super::universal`];
//! * H_B = V(r) + Σ_k G M_k m'_k / r'_k, with V = −Σ_{i<j} G m_i m_j/r_ij the
//!   full Newtonian potential (plus the post-Newtonian pair potential when
//!   switched on): a function of positions only, so its flow is a kick.
//!
//! **Kick, derived.** The Jacobi map r' = A r is linear and makes the
//! kinetic energy diagonal, so the Jacobi acceleration due to V is the
//! Jacobi transform of the inertial accelerations, (A a)_k. The Kepler term
//! of H_B contributes −(1/m'_k) ∂/∂r'_k (G M_k m'_k / r'_k) = +G M_k r'_k/r'_k³.
//! The kick is therefore v'_k += h [ (A a)_k + μ_k r'_k / r'_k³ ], with a the
//! inertial Newtonian accelerations from all pairs (the standard approach of
//! computing the full accelerations and subtracting the Keplerian parts;
//! for planet 1 the two terms cancel exactly, as they should, since
//! r'_1 is the astrocentric vector).
//!
//! **Map.** Drift–kick–drift: D(h/2) K(h) D(h/2), second order, symmetric,
//! time-reversible. Consecutive half drifts are fused, so a step costs one
//! Kepler drift per planet and one force evaluation; the state at a step
//! boundary is obtained by finishing the pending half drift on a copy.
//!
//! **Correctors.** The DKD map is the exact flow of
//! K = A + B + [(x / sinh x) − 1] B + O(B²), x = (h/2) ad_A (first-order
//! Baker–Campbell–Hausdorff with Lie operators; this gives
//! −(h²/24) ad_A² B + (7h⁴/5760) ad_A⁴ B − …, the O(ε h²) error of
//! Wisdom, Holman & Touma 1996). A conjugating map e^C with
//! C = h [−u/24 + 7u³/5760 − 31u⁵/967680 + …] B, u = h ad_A, removes all
//! these O(ε) terms. We build C, as WHT96 do, from kernels
//! Z(a, b) = D(a) K(b) D(−2a) K(−b) D(a), whose generator is
//! b · 2 sinh(a ad_A) B + O(b²), and solve for the kernel kick sizes b_i
//! with drift sizes a_i = (i/2) h so that the first 1, 2 or 3 terms of C
//! are matched exactly (coefficients below, exact rationals; derivation
//! ours, with WHT96's structure — not their published coefficients;
//! n = 1..4 kernels). The residual error is then O(ε h^{2n+2}) +
//! O(ε² h²). Input states are mapped by C⁻¹ once (always by the kernels);
//! every output applies C on a copy, and an output between boundaries
//! takes its partial step τ conjugated by its own corrector,
//! C_τ L_τ C_τ⁻¹. The direction of C was fixed by a test (it must reduce
//! the energy error; the other sign doubles it). Correctors remove the
//! oscillating O(ε h²) error, not the O(ε² h²) terms, which set the slow
//! phase error of strongly interacting giants: with the plain kick they
//! improve the energy by 10–40× but not the RVs. The modified kick below
//! removes the O(ε² h²) term.
//!
//! The corrector order matters at the start, not at the outputs: the error
//! of C⁻¹ at the start is an error of the initial conditions, which the
//! flow carries on (a phase error growing ∝ t), while the error of C at an
//! output is made once, on a copy. Hence a high order (RemoveH8) costs
//! nothing per step and the outputs can use C to first order (below).
//!
//! **Modified kick** ([`Kick::Modified`]). Baker–Campbell–Hausdorff for
//! the symmetric product (Yoshida 1990, Phys. Lett. A 150, 262, eq. for
//! S(h) = e^{hA/2} e^{hB} e^{hA/2}) gives the map's generator
//! h(A + B) − (h³/24)[A,[A,B]] + (h³/12)[B,[B,A]] + O(h⁵), i.e. the
//! modified Hamiltonian H + h² [−(1/24){A,{A,B}} + (1/12){{A,B},B}]
//! (the sign of the second term is that of the bracket squared, so it does
//! not depend on the bracket convention). With B a function of the Jacobi
//! positions only and A's kinetic part Σ p'²/(2m'),
//! {{A,B},B} = Σ_k |∂B/∂r'_k|²/m'_k = Σ_k m'_k |a_k|² =: G ≥ 0, a_k the
//! Jacobi kick accelerations; it is O(ε²). A corrector's conjugation
//! removes the first term and shifts the second to (h²/24) G (conjugation
//! by C = c h²[A,B] changes the two coefficients by −c and +c; c = −1/24
//! cancels the first). Kicking with the potential B − c' h² G, c' = 1/12
//! without a corrector and 1/24 with one, cancels the O(ε² h²) term
//! (the kernel correction of Wisdom, Holman & Touma 1996 and the SABAC
//! corrector of Laskar & Robutel 2001, Celest. Mech. 80, 39, whose c for
//! SABA₁ is 1/12). Its force: ∂G/∂r'_j = −2 m'_j Σ_k (∂a_j/∂r'_k) a_k
//! (the Hessian of B is symmetric), so the kick is
//! v'_k += h [a_k + β h² (T a)_k], β = 2c' (1/6 or 1/12), T = ∂a/∂r'
//! the tidal map of the interaction (pair tidal tensors, the Kepler
//! compensation terms and the post-Newtonian term's derivative, as in the
//! tangent kick) applied to a itself. It is the exact flow of a
//! position-only Hamiltonian, so the map stays symplectic and symmetric.
//! The coefficient is checked numerically (unit test): with β the RV floor
//! vanishes, with −β it doubles, with 2β it is unchanged in size.
//! Measured on two giants near 2:1 (ε ≈ 3e-3; tests/nbody_wh_kernel.rs,
//! BENCHMARKS.md): with RemoveH6 the RV error at h = 2 → 1 d falls 35×
//! (plain kick: 4×, the floor), and scales as ε² relative to the
//! amplitude; ≤ 1 mm/s over 4000 d at h = 4–4.5 d (plain: h = 1.5 d).
//! Extra cost: one tidal-tensor product per kick (no square root).
//!
//! **Outputs** ([`CorrectorForm`]). The first term of C is the Lie
//! transform of χ = (h²/24) Σ_k v'_k·∂B/∂r'_k: the kernel Z(h/2, h/24)
//! expanded to first order in its kick moves r'_k by −(h²/24) a_k and v'_k
//! by +(h²/24)(T v')_k. [`CorrectorForm::FirstOrder`] (the default)
//! applies C at outputs as x → x + L_χ x with α = h²/24 (one force
//! evaluation and one tidal product, no drift), and C_τ⁻¹ C_h as one such
//! map with α = (h² − τ²)/24. Its error, O(ε h⁴) from the higher terms
//! of C and O(ε² h⁴) from the first order, is made once per output on a
//! copy: the RVs
//! of first-order and kernel outputs differ by ≤ 5.5e-6 m/s at h = 4 d
//! (4.3e-7 at 2 d) on the benchmark system, against a map error of
//! 2e-4 m/s (tests/nbody_wh_kernel.rs). [`CorrectorForm::Kernels`] keeps the
//! kernels at the outputs (the earlier code: 3n drifts per application,
//! three applications per output).
//!
//! **Post-Newtonian.** A position-only pair potential between the star and
//! each planet, U_k = −3 (G m_0)² m_k / (c² r_0k²) (Nobili & Roxburgh 1986;
//! the test-particle form that gives the general-relativistic periastron
//! advance Δϖ = 6πG m_0 / (c² a (1 − e²)) per orbit), added to V, so it
//! enters the kick.
//!
//! **Default step.** The smallest over planets of
//! (P_k / 20) · (1 − e_k)^{3/2} / (1 + e_k)^{1/2}: a twentieth of the orbit
//! scaled by the pericentre passage time q/v_q = √(a³/μ)(1−e)^{3/2}/(1+e)^{1/2}
//! relative to its circular value (osculating Jacobi elements at the start;
//! an unbound planet uses (2π/20) r'/v'). User-settable.
//!
//! **Events** are looked for after every step at the kick positions (the
//! middle of the step): star collisions (astrocentric distance below the
//! sum of radii), close encounters (separation below a number of mutual
//! Hill radii R_H = [(m_i+m_j)/(3m_0)]^{1/3} (r_i+r_j)/2, with the current
//! astrocentric distances r in place of semi-major axes), ejections
//! (barycentric distance above the limit, or a positive Jacobi two-body
//! energy ½v'² − μ_k/r'). Each event is recorded once when its condition
//! starts. A non-finite state stops the run with [`NbodyError::NonFinite`].
//! [`EventSettings::min_step`] does not apply (the step is fixed). Events
//! are looked for on the main step sequence only, not in output copies.
//!
//! **Tangent vectors** ([`super::variational`]): with
//! [`Variational::set_tangents`] the map also advances first-order tangent
//! vectors, stored in Jacobi coordinates, by its exact tangent map: each
//! drift by [`super::universal::DriftTangent`] (and δr'_0 += δv'_0 dt for
//! the centre of mass), each kick by δv'_k += h [(A δa)_k + μ_k (δr'_k/r'³
//! − 3 r'_k (r'_k·δr'_k)/r'⁵)], δa the tidal tensor applied to
//! δx = A⁻¹δr' (plus the derivative of the post-Newtonian force
//! −6(Gm_0)²m_k d/(c²r⁴) when on). Not available with a corrector or the
//! modified kick. Without tangent vectors the step is the plain one.
//!
//! No heap allocation happens in a step or an output: every buffer is made
//! at construction (or when tangent vectors are set).

use nalgebra::Vector3;

use super::events::{Event, EventSettings, NbodyError};
use super::integrator::Integrator;
use super::jacobi;
use super::system::{Snapshot, System};
use super::universal::{
    DriftError, drift_bound_lanes, drift_tangent_from, f_and_g_lanes, f_and_g_with, kepler_drift,
};
use super::variational::{Tangent, Variational};
use crate::kepler::state_to_elements;
use crate::units::{C_AU_PER_DAY, G};

/// Symplectic corrector of the Wisdom–Holman map (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum Corrector {
    /// No corrector: error O(ε h²).
    Off,
    /// One kernel: removes the O(ε h²) term; error O(ε h⁴) + O(ε² h²).
    RemoveH2,
    /// Two kernels: removes the O(ε h²) and O(ε h⁴) terms.
    RemoveH4,
    /// Three kernels: removes the O(ε h²), O(ε h⁴) and O(ε h⁶) terms.
    RemoveH6,
    /// Four kernels: removes the O(ε h²) to O(ε h⁸) terms.
    RemoveH8,
}

impl Corrector {
    /// Kernel kick sizes b_i / h for drift sizes a_i / h = i/2
    /// (i = 1..n), solving Σ_i b_i · 2 a_i^{2m+1}/(2m+1)! = c_{2m+1} for
    /// c₁ = −1/24, c₃ = 7/5760, c₅ = −31/967680, c₇ = 127/154828800
    /// (exact rationals, solved with Python fractions; checked by a unit
    /// test).
    fn kicks(self) -> &'static [f64] {
        match self {
            Corrector::Off => &[],
            Corrector::RemoveH2 => &[-1.0 / 24.0],
            Corrector::RemoveH4 => &[-47.0 / 720.0, 17.0 / 1440.0],
            Corrector::RemoveH6 => &[-9781.0 / 120_960.0, 367.0 / 15_120.0, -377.0 / 120_960.0],
            Corrector::RemoveH8 => &[
                -334_303.0 / 3_628_800.0,
                128_953.0 / 3_628_800.0,
                -3203.0 / 403_200.0,
                5839.0 / 7_257_600.0,
            ],
        }
    }
}

/// The interaction kick of the Wisdom–Holman map (module docs, "Modified
/// kick").
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
pub enum Kick {
    /// The kick of H_B (Wisdom & Holman 1991): error O(ε h²) without a
    /// corrector, O(ε² h²) with one.
    #[default]
    Plain,
    /// The kick of the modified potential H_B − c h² {{H_A,H_B},H_B}
    /// (c = 1/12 without a corrector, 1/24 with one; Wisdom, Holman &
    /// Touma 1996; Laskar & Robutel 2001, SABAC), which removes the
    /// O(ε² h²) error: with a corrector the error is then
    /// O(ε h^{2n+2}) + O(ε² h⁴). About one tidal-tensor product more per
    /// kick. Tangent vectors are refused with it.
    Modified,
}

/// How the corrector C of [`Corrector::RemoveH2`] is applied to the
/// states at the outputs and at the start (module docs, "Outputs").
/// Ignored by the other correctors, which always use kernels.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum CorrectorForm {
    /// By the kernels Z(a_i, b_i) (drifts and kicks; the code before the
    /// first-order form; kept as the benchmark baseline).
    Kernels,
    /// By its first-order Lie series x → x + L_χ x with
    /// χ = (h²/24) Σ_k v'_k·∂H_B/∂r'_k: one force evaluation and one
    /// tidal-tensor product, no drift (the default).
    #[default]
    FirstOrder,
}

/// Settings of the Wisdom–Holman integrator.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct WhSettings {
    /// Step in days (its sign is ignored: the direction follows the
    /// requested times); `None` for the default of the module docs.
    pub step: Option<f64>,
    /// Symplectic corrector.
    pub corrector: Corrector,
    /// Events to look for.
    pub events: EventSettings,
    /// The kick (default [`Kick::Plain`]).
    #[serde(default)]
    pub kick: Kick,
}

impl Default for WhSettings {
    fn default() -> Self {
        WhSettings {
            step: None,
            corrector: Corrector::Off,
            events: EventSettings::default(),
            kick: Kick::Plain,
        }
    }
}

/// Coefficient β of the modified kick v' += h (a + β h² T a) (module
/// docs): 1/6 without a corrector, 1/12 with one, 0 for the plain kick.
fn kick_beta(kick: Kick, corrector: Corrector) -> f64 {
    match (kick, corrector) {
        (Kick::Plain, _) => 0.0,
        (Kick::Modified, Corrector::Off) => 1.0 / 6.0,
        (Kick::Modified, _) => 1.0 / 12.0,
    }
}

/// `$body` with `$k` bound to the system size `$n`: a literal for 2–9
/// bodies (eight planets), so that the `#[inline(always)]` sized functions
/// called in `$body` get one copy per size with every loop bound a
/// constant (unrolled, index checks folded; the same operations, so
/// bitwise the same results), and the runtime value beyond.
macro_rules! by_size {
    ($n:expr, |$k:ident| $body:expr) => {
        match $n {
            2 => {
                let $k = 2;
                $body
            }
            3 => {
                let $k = 3;
                $body
            }
            4 => {
                let $k = 4;
                $body
            }
            5 => {
                let $k = 5;
                $body
            }
            6 => {
                let $k = 6;
                $body
            }
            7 => {
                let $k = 7;
                $body
            }
            8 => {
                let $k = 8;
                $body
            }
            9 => {
                let $k = 9;
                $body
            }
            $k => $body,
        }
    };
}

/// Fixed masses and derived constants of a run.
#[derive(Debug, Clone)]
struct Bodies {
    masses: Vec<f64>,
    radii: Vec<f64>,
    interior: Vec<f64>,
    /// 1 / M_k.
    inv_interior: Vec<f64>,
    /// m_k / M_k.
    ratio: Vec<f64>,
    /// μ_k = G M_k (entry 0 unused).
    mu: Vec<f64>,
    /// G m_k.
    gm: Vec<f64>,
    /// [(m_i+m_j)/(3m_0)]^{1/3}, row-major n×n.
    hill: Vec<f64>,
    /// 6 (G m_0)² / c² when the post-Newtonian term is on, else 0.
    pn: f64,
    /// How the planets' Kepler drifts are solved.
    kernel: DriftKernel,
}

/// How the Kepler drifts of the planets in one Wisdom–Holman drift are
/// solved. `Scalar` and `Interleaved` give bitwise the same state (the
/// lanes run the scalar solver's operations; tested), so they only change
/// the speed; `Universal` differs from them at rounding level. Since the
/// kick was specialised by system size the drifts are most of a step's
/// time, and their chains of dependent operations are what the interleaved
/// solve overlaps: it is the default (2-planet step 317 → 300 ns, 3 planets
/// 458 → 401 ns, 5 planets 821 → 749 ns, best of 12 alternating runs;
/// BENCHMARKS.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DriftKernel {
    /// Up to four planets at a time by
    /// [`super::universal::f_and_g_lanes`], their iterations interleaved
    /// (the default).
    #[default]
    Interleaved,
    /// One planet after the other by [`super::universal::f_and_g`]: bound
    /// orbits by Kepler's equation in ΔE (`nbody::elliptic`), others by
    /// universal variables.
    Scalar,
    /// One planet after the other, every orbit by the universal-variable
    /// iteration alone: the reference the ΔE solver is measured against.
    Universal,
}

/// Work buffers of a kick.
#[derive(Debug, Clone)]
struct Work {
    pos: Vec<Vector3<f64>>,
    acc: Vec<Vector3<f64>>,
    jacc: Vec<Vector3<f64>>,
    /// When true (tangent vectors carried) the kick keeps its geometry in
    /// `geo` for the tangent kick.
    save: bool,
    /// The pair geometry of the last force evaluation that kept it (every
    /// kick when `save`, and [`interaction`]).
    geo: Geometry,
}

/// Work of the modified kick and of the first-order corrector: the Jacobi
/// kick accelerations and the buffers of one tidal-tensor product.
#[derive(Debug, Clone, Default)]
struct KernelWork {
    /// Jacobi interaction accelerations a_k = (A a)_k + μ_k r'_k/r'_k³
    /// (entry 0 zero).
    a: Vec<Vector3<f64>>,
    /// Result of a tidal-tensor product (Jacobi).
    t: Vec<Vector3<f64>>,
    scratch: TidalScratch,
}

/// Per pair i < j (row-major n×n) d = x_j − x_i, 1/d³, 3/d²; per planet
/// μ_k/r'³ and 3/r'².
#[derive(Debug, Clone, Default)]
struct Geometry {
    pair: Vec<(Vector3<f64>, f64, f64)>,
    kep: Vec<(f64, f64)>,
}

/// Inertial δx, δa and Jacobi δa of a tidal-tensor product.
#[derive(Debug, Clone, Default)]
struct TidalScratch {
    dpos: Vec<Vector3<f64>>,
    dacc: Vec<Vector3<f64>>,
    djacc: Vec<Vector3<f64>>,
}

impl KernelWork {
    fn resize(&mut self, n: usize) {
        let z = Vector3::zeros();
        for v in [
            &mut self.a,
            &mut self.t,
            &mut self.scratch.dpos,
            &mut self.scratch.dacc,
            &mut self.scratch.djacc,
        ] {
            v.clear();
            v.resize(n, z);
        }
    }
}

/// Tangent vectors in Jacobi coordinates: `ntan` blocks of n entries.
#[derive(Debug, Clone, Default)]
struct Tangents {
    ntan: usize,
    r: Vec<Vector3<f64>>,
    v: Vec<Vector3<f64>>,
    /// Scratch copies for outputs.
    sr: Vec<Vector3<f64>>,
    sv: Vec<Vector3<f64>>,
    /// Kick work: inertial δx, δa and Jacobi δa.
    dpos: Vec<Vector3<f64>>,
    dacc: Vec<Vector3<f64>>,
    djacc: Vec<Vector3<f64>>,
    /// Barycentric tangents at the last output.
    out: Vec<Tangent>,
}

/// The Wisdom–Holman integrator (see the module docs).
#[derive(Debug, Clone)]
pub struct WisdomHolman {
    b: Bodies,
    w: Work,
    tan: Tangents,
    /// Main Jacobi state (mapping coordinates when a corrector is on).
    jr: Vec<Vector3<f64>>,
    jv: Vec<Vector3<f64>>,
    /// Scratch copy for outputs.
    sr: Vec<Vector3<f64>>,
    sv: Vec<Vector3<f64>>,
    /// Event conditions currently on: collisions (n), ejections (n), pairs (n×n).
    active: Vec<bool>,
    events: Vec<Event>,
    settings: EventSettings,
    corrector: Corrector,
    kick: Kick,
    /// β of the modified kick ([`kick_beta`]).
    beta: f64,
    form: CorrectorForm,
    kw: KernelWork,
    /// |h| in days.
    step: f64,
    t0: f64,
    /// Signed number of steps from `t0`.
    steps: i64,
    /// Drift still owed to the main state to reach the boundary (0 or h/2).
    lag: f64,
}

impl WisdomHolman {
    /// A Wisdom–Holman integrator starting from `system` (its state and
    /// time; `system.post_newtonian` switches the post-Newtonian potential).
    pub fn new(system: &System, settings: WhSettings) -> Result<Self, NbodyError> {
        let n = system.len();
        let z = vec![Vector3::zeros(); n];
        let mut wh = WisdomHolman {
            b: Bodies {
                masses: vec![0.0; n],
                radii: vec![0.0; n],
                interior: vec![0.0; n],
                inv_interior: vec![0.0; n],
                ratio: vec![0.0; n],
                mu: vec![0.0; n],
                gm: vec![0.0; n],
                hill: vec![0.0; n * n],
                pn: 0.0,
                kernel: DriftKernel::default(),
            },
            w: Work {
                pos: z.clone(),
                acc: z.clone(),
                jacc: z.clone(),
                save: false,
                geo: Geometry {
                    pair: vec![(Vector3::zeros(), 0.0, 0.0); n * n],
                    kep: vec![(0.0, 0.0); n],
                },
            },
            tan: Tangents::default(),
            jr: z.clone(),
            jv: z.clone(),
            sr: z.clone(),
            sv: z,
            active: vec![false; 2 * n + n * n],
            events: Vec::with_capacity(16),
            settings: settings.events,
            corrector: settings.corrector,
            kick: settings.kick,
            beta: kick_beta(settings.kick, settings.corrector),
            form: CorrectorForm::default(),
            kw: KernelWork::default(),
            step: 1.0,
            t0: system.state.t,
            steps: 0,
            lag: 0.0,
        };
        wh.reset(system, settings.step)?;
        Ok(wh)
    }

    /// Restart from `system` (state, time, masses), keeping settings and
    /// reusing every buffer when the number of bodies is unchanged. `step`
    /// as in [`WhSettings::step`]. Clears recorded events.
    pub fn reset(&mut self, system: &System, step: Option<f64>) -> Result<(), NbodyError> {
        let n = system.len();
        let s = &system.state;
        if n == 0
            || system.masses.len() != n
            || system.radii.len() != n
            || s.pos.len() != n
            || s.vel.len() != n
        {
            return Err(NbodyError::InvalidSystem(
                "masses, radii, positions and velocities must have one entry per body".into(),
            ));
        }
        if !(system.masses[0] > 0.0 && system.masses[0].is_finite())
            || system.masses.iter().any(|m| !(*m >= 0.0 && m.is_finite()))
        {
            return Err(NbodyError::InvalidSystem(
                "the star's mass must be positive and planet masses non-negative".into(),
            ));
        }
        if !s.t.is_finite() || !all_finite(&s.pos) || !all_finite(&s.vel) {
            return Err(NbodyError::NonFinite { t: s.t });
        }
        let z = Vector3::zeros();
        for v in [
            &mut self.w.pos,
            &mut self.w.acc,
            &mut self.w.jacc,
            &mut self.jr,
            &mut self.jv,
            &mut self.sr,
            &mut self.sv,
        ] {
            v.resize(n, z);
        }
        self.w.geo.pair.resize(n * n, (z, 0.0, 0.0));
        self.w.geo.kep.resize(n, (0.0, 0.0));
        self.w.save = false;
        self.kw.resize(n);
        let b = &mut self.b;
        b.masses.clear();
        b.masses.extend_from_slice(&system.masses);
        b.radii.clear();
        b.radii.extend_from_slice(&system.radii);
        b.interior.resize(n, 0.0);
        jacobi::interior_masses(&b.masses, &mut b.interior);
        b.mu.resize(n, 0.0);
        b.gm.resize(n, 0.0);
        b.inv_interior.resize(n, 0.0);
        b.ratio.resize(n, 0.0);
        for k in 0..n {
            b.mu[k] = G * b.interior[k];
            b.gm[k] = G * b.masses[k];
            b.inv_interior[k] = 1.0 / b.interior[k];
            b.ratio[k] = b.masses[k] / b.interior[k];
        }
        b.hill.resize(n * n, 0.0);
        for i in 1..n {
            for j in 1..n {
                b.hill[i * n + j] = ((b.masses[i] + b.masses[j]) / (3.0 * b.masses[0])).cbrt();
            }
        }
        let gm0 = b.gm[0];
        b.pn = if system.post_newtonian {
            6.0 * gm0 * gm0 / (C_AU_PER_DAY * C_AU_PER_DAY)
        } else {
            0.0
        };
        jacobi::inertial_to_jacobi(&b.masses, &b.interior, &s.pos, &mut self.jr);
        jacobi::inertial_to_jacobi(&b.masses, &b.interior, &s.vel, &mut self.jv);
        self.step = match step {
            Some(h) if h.is_finite() && h != 0.0 => h.abs(),
            Some(h) => {
                return Err(NbodyError::InvalidRequest(format!(
                    "step must be finite and non-zero, got {h}"
                )));
            }
            None => default_step(&self.b, &self.jr, &self.jv),
        };
        self.active.clear();
        self.active.resize(2 * n + n * n, false);
        self.tan.ntan = 0;
        self.tan.out.clear();
        self.events.clear();
        self.t0 = s.t;
        self.steps = 0;
        self.lag = 0.0;
        // Real → mapping coordinates: C⁻¹.
        self.beta = kick_beta(self.kick, self.corrector);
        let c = Conj {
            corrector: self.corrector,
            form: CorrectorForm::Kernels,
        };
        if c.corrector != Corrector::Off {
            let (jr, jv) = (&mut self.jr, &mut self.jv);
            c.apply(&self.b, &mut self.w, &mut self.kw, jr, jv, self.step, true)
                .map_err(|body| NbodyError::Drift {
                    t: s.t,
                    body: body.0,
                    source: body.1,
                })?;
        }
        Ok(())
    }

    /// The step size |h| in days.
    pub fn step(&self) -> f64 {
        self.step
    }

    /// Change the corrector; the caller must [`WisdomHolman::reset`] next
    /// (the mapping coordinates depend on it).
    pub(crate) fn set_corrector(&mut self, corrector: Corrector) {
        self.corrector = corrector;
        self.beta = kick_beta(self.kick, corrector);
    }

    /// Choose how the corrector is applied at the outputs
    /// ([`CorrectorForm`]; the start always uses the kernels).
    pub fn set_corrector_form(&mut self, form: CorrectorForm) {
        self.form = form;
    }

    /// The kick in use.
    pub fn kick(&self) -> Kick {
        self.kick
    }

    /// Choose how the Kepler drifts are solved ([`DriftKernel`]; the
    /// results do not change, only the speed).
    pub fn set_drift_kernel(&mut self, kernel: DriftKernel) {
        self.b.kernel = kernel;
    }

    /// Change the event settings (from the next step on).
    pub fn set_events(&mut self, events: EventSettings) {
        self.settings = events;
    }

    /// Write the barycentric state at the current step boundary into `out`.
    fn boundary_state(&mut self, out: &mut Snapshot) -> Result<(), NbodyError> {
        let t = self.time();
        self.output(0.0, t, out)
    }

    /// Output at boundary + `tau` (|tau| < h) on the scratch copy.
    ///
    /// Without a corrector: finish the pending half drift and take a DKD
    /// step of `tau` (fused drifts). With one: map the boundary state to
    /// real coordinates with C_h, then take the partial step conjugated by
    /// its own corrector, C_τ L_τ C_τ⁻¹, so that the partial step is as
    /// accurate as the corrected main steps. With the first-order form of
    /// C (module docs, "Outputs") C_τ⁻¹ C_h is one first-order map of
    /// coefficient (h² − τ²)/24.
    fn output(&mut self, tau: f64, t: f64, out: &mut Snapshot) -> Result<(), NbodyError> {
        self.sr.copy_from_slice(&self.jr);
        self.sv.copy_from_slice(&self.jv);
        let drift_err = |(body, source)| NbodyError::Drift { t, body, source };
        let beta = self.beta;
        let (b, w, kw, sr, sv) = (
            &self.b,
            &mut self.w,
            &mut self.kw,
            &mut self.sr,
            &mut self.sv,
        );
        if self.tan.ntan > 0 {
            let tn = &mut self.tan;
            tn.sr.copy_from_slice(&tn.r);
            tn.sv.copy_from_slice(&tn.v);
            let nb = sr.len();
            drift_tan(b, sr, sv, &mut tn.sr, &mut tn.sv, nb, self.lag + 0.5 * tau)
                .map_err(drift_err)?;
            if tau != 0.0 {
                kick(b, w, sr, sv, tau);
                kick_tan(b, w, tn, true, sr, tau);
                drift_tan(b, sr, sv, &mut tn.sr, &mut tn.sv, nb, 0.5 * tau).map_err(drift_err)?;
            }
            for (i, t) in tn.out.iter_mut().enumerate() {
                let blk = i * nb..(i + 1) * nb;
                jacobi::jacobi_to_inertial_with(&b.ratio, &tn.sr[blk.clone()], &mut t.pos);
                jacobi::jacobi_to_inertial_with(&b.ratio, &tn.sv[blk], &mut t.vel);
            }
        } else if self.corrector == Corrector::Off {
            drift_all(b, sr, sv, self.lag + 0.5 * tau).map_err(drift_err)?;
            if tau != 0.0 {
                any_kick(b, w, kw, sr, sv, tau, beta);
                drift_all(b, sr, sv, 0.5 * tau).map_err(drift_err)?;
            }
        } else if self.form == CorrectorForm::FirstOrder {
            drift_all(b, sr, sv, self.lag).map_err(drift_err)?;
            let h = self.step;
            first_order_corrector(b, w, kw, sr, sv, (h * h - tau * tau) / 24.0);
            if tau != 0.0 {
                drift_all(b, sr, sv, 0.5 * tau).map_err(drift_err)?;
                any_kick(b, w, kw, sr, sv, tau, beta);
                drift_all(b, sr, sv, 0.5 * tau).map_err(drift_err)?;
                first_order_corrector(b, w, kw, sr, sv, tau * tau / 24.0);
            }
        } else {
            let c = Conj {
                corrector: self.corrector,
                form: CorrectorForm::Kernels,
            };
            drift_all(b, sr, sv, self.lag).map_err(drift_err)?;
            c.apply(b, w, kw, sr, sv, self.step, false)
                .map_err(drift_err)?;
            if tau != 0.0 {
                c.apply(b, w, kw, sr, sv, tau, true).map_err(drift_err)?;
                drift_all(b, sr, sv, 0.5 * tau).map_err(drift_err)?;
                any_kick(b, w, kw, sr, sv, tau, beta);
                drift_all(b, sr, sv, 0.5 * tau).map_err(drift_err)?;
                c.apply(b, w, kw, sr, sv, tau, false).map_err(drift_err)?;
            }
        }
        if !all_finite(&self.sr) || !all_finite(&self.sv) {
            return Err(NbodyError::NonFinite { t });
        }
        jacobi::jacobi_to_inertial_with(&self.b.ratio, &self.sr, &mut out.pos);
        jacobi::jacobi_to_inertial_with(&self.b.ratio, &self.sv, &mut out.vel);
        out.t = t;
        Ok(())
    }

    /// Finish a pending half drift in place (before a change of direction).
    fn synchronise(&mut self) -> Result<(), NbodyError> {
        if self.lag != 0.0 {
            let t = self.time();
            let n = self.jr.len();
            let tn = &mut self.tan;
            if tn.ntan > 0 {
                drift_tan(
                    &self.b,
                    &mut self.jr,
                    &mut self.jv,
                    &mut tn.r,
                    &mut tn.v,
                    n,
                    self.lag,
                )
            } else {
                drift_all(&self.b, &mut self.jr, &mut self.jv, self.lag)
            }
            .map_err(|(body, source)| NbodyError::Drift { t, body, source })?;
            self.lag = 0.0;
        }
        Ok(())
    }

    /// One main step of signed size `h` (DKD with fused drifts), dispatched
    /// on the number of bodies like [`kick`].
    fn one_step(&mut self, h: f64) -> Result<(), NbodyError> {
        by_size!(self.jr.len(), |n| self.one_step_sized(h, n))
    }

    /// [`WisdomHolman::one_step`] for `n` bodies (a constant where it is
    /// inlined from the dispatch).
    #[inline(always)]
    fn one_step_sized(&mut self, h: f64, n: usize) -> Result<(), NbodyError> {
        let t_mid = self.time() + 0.5 * h;
        let drift = self.lag + 0.5 * h;
        let drift_err = |(body, source)| NbodyError::Drift {
            t: t_mid,
            body,
            source,
        };
        if self.tan.ntan == 0 {
            let (jr, jv) = (&mut self.jr[..n], &mut self.jv[..n]);
            drift_all(&self.b, jr, jv, drift).map_err(drift_err)?;
            if self.beta == 0.0 {
                kick_sized(&self.b, &mut self.w, &self.jr, &mut self.jv, h, n);
            } else {
                modified_kick(
                    &self.b,
                    &mut self.w,
                    &mut self.kw,
                    &self.jr,
                    &mut self.jv,
                    h,
                    self.beta,
                );
            }
        } else {
            let n = self.jr.len();
            let tn = &mut self.tan;
            drift_tan(
                &self.b,
                &mut self.jr,
                &mut self.jv,
                &mut tn.r,
                &mut tn.v,
                n,
                drift,
            )
            .map_err(drift_err)?;
            kick(&self.b, &mut self.w, &self.jr, &mut self.jv, h);
            kick_tan(&self.b, &self.w, tn, false, &self.jr, h);
            if !all_finite(&tn.r) || !all_finite(&tn.v) {
                return Err(NbodyError::NonFinite { t: t_mid });
            }
        }
        self.lag = 0.5 * h;
        self.steps += if h > 0.0 { 1 } else { -1 };
        if !all_finite(&self.jr[..n]) || !all_finite(&self.jv[..n]) {
            return Err(NbodyError::NonFinite { t: t_mid });
        }
        self.check_events_sized(t_mid, n)
    }

    /// Look for events at the kick positions of the last step. The tests
    /// compare squared distances (no square root or division on the path
    /// of every step); the distances reported are taken only when an event
    /// fires.
    #[inline(always)]
    fn check_events_sized(&mut self, t: f64, n: usize) -> Result<(), NbodyError> {
        let pos = &self.w.pos[..n];
        let (jr, jv) = (&self.jr[..n], &self.jv[..n]);
        let (radii, mu) = (&self.b.radii[..n], &self.b.mu[..n]);
        let hill = &self.b.hill[..n * n];
        let active = &mut self.active[..(2 + n) * n];
        let es = self.settings;
        for k in 1..n {
            if es.star_collisions {
                let d0_2 = (pos[k] - pos[0]).norm_squared();
                let rsum = radii[0] + radii[k];
                let on = d0_2 < rsum * rsum;
                if let Some(ev) = edge(&mut active[k], on, || Event::StarCollision {
                    t,
                    body: k,
                    distance: d0_2.sqrt(),
                }) {
                    record(&mut self.events, es.stop_on_event, ev)?;
                }
            }
            if let Some(dmax) = es.max_distance {
                let r2 = pos[k].norm_squared();
                // Unbound Jacobi orbit: ½v′² − μ/r′ ≥ 0 ⟺ (½v′²)² r′² ≥ μ².
                let half_v2 = 0.5 * jv[k].norm_squared();
                let mu = mu[k];
                let unbound = half_v2 * half_v2 * jr[k].norm_squared() >= mu * mu;
                let on = dmax < 0.0 || r2 > dmax * dmax || unbound;
                if let Some(ev) = edge(&mut active[n + k], on, || Event::Ejection {
                    t,
                    body: k,
                    distance: r2.sqrt(),
                }) {
                    record(&mut self.events, es.stop_on_event, ev)?;
                }
            }
        }
        if let Some(nh) = es.hill_radii {
            for i in 1..n {
                let ri = (pos[i] - pos[0]).norm();
                for j in (i + 1)..n {
                    let rj = (pos[j] - pos[0]).norm();
                    let rh = hill[i * n + j] * 0.5 * (ri + rj);
                    let d2 = (pos[j] - pos[i]).norm_squared();
                    let lim = nh * rh;
                    let on = d2 < lim * lim && lim > 0.0;
                    if let Some(ev) = edge(&mut active[2 * n + i * n + j], on, || {
                        Event::CloseEncounter {
                            t,
                            i,
                            j,
                            hill_separation: d2.sqrt() / rh,
                        }
                    }) {
                        record(&mut self.events, es.stop_on_event, ev)?;
                    }
                }
            }
        }
        Ok(())
    }
}

/// Rising edge of an event condition.
#[inline]
fn edge(flag: &mut bool, on: bool, make: impl FnOnce() -> Event) -> Option<Event> {
    let fire = on && !*flag;
    *flag = on;
    fire.then(make)
}

#[inline]
fn record(events: &mut Vec<Event>, stop: bool, ev: Event) -> Result<(), NbodyError> {
    if stop {
        Err(NbodyError::Stopped(ev))
    } else {
        events.push(ev);
        Ok(())
    }
}

#[inline]
fn all_finite(v: &[Vector3<f64>]) -> bool {
    v.iter().map(|x| x.x + x.y + x.z).sum::<f64>().is_finite()
}

/// Default step (module docs).
fn default_step(b: &Bodies, jr: &[Vector3<f64>], jv: &[Vector3<f64>]) -> f64 {
    let mut h = f64::INFINITY;
    for k in 1..jr.len() {
        let hk = match state_to_elements(&jr[k], &jv[k], b.mu[k]) {
            Ok(el) => {
                let period = std::f64::consts::TAU * (el.a.powi(3) / b.mu[k]).sqrt();
                period / 20.0 * (1.0 - el.e).powf(1.5) / (1.0 + el.e).sqrt()
            }
            Err(_) => {
                let v = jv[k].norm();
                if v > 0.0 {
                    std::f64::consts::TAU / 20.0 * jr[k].norm() / v
                } else {
                    f64::INFINITY
                }
            }
        };
        if hk > 0.0 && hk < h {
            h = hk;
        }
    }
    if h.is_finite() { h } else { 1.0 }
}

/// Kepler drift of every planet by `dt` and of the centre of mass. On
/// failure returns the planet index and the solver's error (that planet and
/// the ones after it untouched, the ones before it drifted). No starting
/// guess is passed: the solver's series start is better than the previous
/// step's anomaly (measured). With [`DriftKernel::Interleaved`] planets are
/// solved up to four at a time with interleaved iterations.
#[inline]
fn drift_all(
    b: &Bodies,
    jr: &mut [Vector3<f64>],
    jv: &mut [Vector3<f64>],
    dt: f64,
) -> Result<(), (usize, super::universal::DriftError)> {
    if dt == 0.0 {
        return Ok(());
    }
    let com_v = jv[0];
    jr[0] += com_v * dt;
    let n = jr.len();
    match b.kernel {
        DriftKernel::Scalar => {
            for k in 1..n {
                kepler_drift(&mut jr[k], &mut jv[k], b.mu[k], dt, None).map_err(|e| (k, e))?;
            }
            return Ok(());
        }
        DriftKernel::Universal => {
            for k in 1..n {
                let fg =
                    f_and_g_with(&jr[k], &jv[k], b.mu[k], dt, None, false).map_err(|e| (k, e))?;
                (jr[k], jv[k]) = (
                    jr[k] * fg.f + jv[k] * fg.g,
                    jr[k] * fg.fdot + jv[k] * fg.gdot,
                );
            }
            return Ok(());
        }
        DriftKernel::Interleaved => {}
    }
    let mut k = 1;
    while k < n {
        let left = n - k;
        match left {
            1 => {
                kepler_drift(&mut jr[k], &mut jv[k], b.mu[k], dt, None).map_err(|e| (k, e))?;
            }
            2 => drift_states::<2>(b, jr, jv, k, dt)?,
            3 => drift_states::<3>(b, jr, jv, k, dt)?,
            _ => drift_states::<4>(b, jr, jv, k, dt)?,
        }
        k += left.min(4);
    }
    Ok(())
}

/// Kepler drifts of planets `k..k + L` by `dt`, solved together: by
/// [`drift_bound_lanes`] when every planet is a bound orbit the ΔE solver
/// takes, else by [`f_and_g_lanes`] (bitwise the same states either way).
/// On failure returns the first failing planet (the planets before it are
/// drifted).
#[inline(always)]
fn drift_states<const L: usize>(
    b: &Bodies,
    jr: &mut [Vector3<f64>],
    jv: &mut [Vector3<f64>],
    k: usize,
    dt: f64,
) -> Result<(), (usize, DriftError)> {
    let pos: [Vector3<f64>; L] = std::array::from_fn(|l| jr[k + l]);
    let vel: [Vector3<f64>; L] = std::array::from_fn(|l| jv[k + l]);
    let mu: [f64; L] = std::array::from_fn(|l| b.mu[k + l]);
    if let Some((r, v)) = drift_bound_lanes(&pos, &vel, &mu, dt) {
        jr[k..k + L].copy_from_slice(&r);
        jv[k..k + L].copy_from_slice(&v);
        return Ok(());
    }
    let res = f_and_g_lanes(&pos, &vel, &mu, dt);
    for (l, r) in res.iter().enumerate() {
        let fg = r.map_err(|e| (k + l, e))?;
        jr[k + l] = pos[l] * fg.f + vel[l] * fg.g;
        jv[k + l] = pos[l] * fg.fdot + vel[l] * fg.gdot;
    }
    Ok(())
}

/// [`drift_all`] that also maps the tangent vectors `tr`, `tv` (blocks of
/// `n` Jacobi entries) by the tangent map of each drift (module docs).
#[inline]
fn drift_tan(
    b: &Bodies,
    jr: &mut [Vector3<f64>],
    jv: &mut [Vector3<f64>],
    tr: &mut [Vector3<f64>],
    tv: &mut [Vector3<f64>],
    n: usize,
    dt: f64,
) -> Result<(), (usize, DriftError)> {
    if dt == 0.0 {
        return Ok(());
    }
    let com_v = jv[0];
    jr[0] += com_v * dt;
    for (r, v) in tr.chunks_exact_mut(n).zip(tv.chunks_exact(n)) {
        r[0] += v[0] * dt;
    }
    // The planets one after the other whatever the drift kernel: with
    // tangent vectors the interleaved solve measured slower (2 planets,
    // one tangent: 778 against 669 ns per step, benches/stability.rs), and
    // the two give bitwise the same states.
    let elliptic = b.kernel != DriftKernel::Universal;
    for k in 1..n {
        let fg = f_and_g_with(&jr[k], &jv[k], b.mu[k], dt, None, elliptic).map_err(|e| (k, e))?;
        let map = drift_tangent_from(&jr[k], &jv[k], b.mu[k], dt, &fg).map_err(|e| (k, e))?;
        for (r, v) in tr.chunks_exact_mut(n).zip(tv.chunks_exact_mut(n)) {
            map.apply(&mut r[k], &mut v[k]);
        }
        (jr[k], jv[k]) = (map.state().0, map.state().1);
    }
    Ok(())
}

/// Tangent part of the kick of size `h` (module docs), on the main
/// (`scratch` false) or output (`scratch` true) tangent vectors; needs the
/// inertial kick positions left in `w.pos` by [`kick`] at the Jacobi
/// positions `jr`.
#[inline]
fn kick_tan(b: &Bodies, w: &Work, tn: &mut Tangents, scratch: bool, jr: &[Vector3<f64>], h: f64) {
    let n = jr.len();
    let (tr, tv) = if scratch {
        (&tn.sr, &mut tn.sv)
    } else {
        (&tn.r, &mut tn.v)
    };
    for (r, v) in tr.chunks_exact(n).zip(tv.chunks_exact_mut(n)) {
        jacobi::jacobi_to_inertial_with(&b.ratio, r, &mut tn.dpos);
        // The tidal tensor of variational::tidal_accelerations, with the
        // pair geometry kept by the kick.
        let (dpos, dacc) = (&tn.dpos, &mut tn.dacc);
        for a in dacc.iter_mut() {
            *a = Vector3::zeros();
        }
        for i in 0..n {
            for j in (i + 1)..n {
                let (d, inv_r3, three_r2) = w.geo.pair[i * n + j];
                let dd = dpos[j] - dpos[i];
                let t = (dd - d * (three_r2 * d.dot(&dd))) * inv_r3;
                dacc[i] += t * b.gm[j];
                dacc[j] -= t * b.gm[i];
            }
        }
        if b.pn != 0.0 {
            let m0 = b.masses[0];
            for k in 1..n {
                let d = w.pos[k] - w.pos[0];
                let dd = tn.dpos[k] - tn.dpos[0];
                let r2 = d.norm_squared();
                let df = (dd - d * (4.0 * d.dot(&dd) / r2)) * (b.pn / (r2 * r2));
                tn.dacc[k] -= df;
                tn.dacc[0] += df * (b.masses[k] / m0);
            }
        }
        jacobi::inertial_to_jacobi_with(&b.masses, &b.inv_interior, &tn.dacc, &mut tn.djacc);
        for k in 1..n {
            let rk = jr[k];
            let dr = r[k];
            let (mu_r3, three_r2) = w.geo.kep[k];
            let da = tn.djacc[k] + (dr - rk * (three_r2 * rk.dot(&dr))) * mu_r3;
            v[k] += da * h;
        }
    }
}

/// Interaction kick v'_k += h [(A a)_k + μ_k r'_k/r'_k³] (module docs).
///
/// Dispatched on the number of bodies (`by_size!`) so that each system
/// size up to nine bodies gets its own copy of [`kick_sized`]. On the
/// two-planet step this cut the instructions per step from 2407 to 1875
/// (valgrind) and the time by about a third (BENCHMARKS.md).
#[inline]
fn kick(b: &Bodies, w: &mut Work, jr: &[Vector3<f64>], jv: &mut [Vector3<f64>], h: f64) {
    by_size!(jr.len(), |n| kick_sized(b, w, jr, jv, h, n))
}

/// [`kick`] for `n` bodies (see [`interaction_sized`]).
#[inline(always)]
fn kick_sized(
    b: &Bodies,
    w: &mut Work,
    jr: &[Vector3<f64>],
    jv: &mut [Vector3<f64>],
    h: f64,
    n: usize,
) {
    let jv = &mut jv[..n];
    let save = w.save;
    interaction_sized(b, w, jr, n, save, |k, a| jv[k] += a * h);
}

/// The Jacobi interaction accelerations a_k = (A a)_k + μ_k r'_k/r'_k³
/// (au/d²) of `n` bodies at the Jacobi positions `jr` (module docs), each
/// handed to `each(k, a_k)` for k = 1..n in order; the inertial positions
/// are left in `w.pos` (for events and the tangent kick) and, when `save`,
/// the pair geometry in `w.geo` (per pair i < j d = x_j − x_i, 1/d³, 3/d²;
/// per planet μ_k/r'³, 3/r'²). Every buffer is cut to `n` entries first,
/// so that with `n` a constant (inlined from a dispatch on the system
/// size) the compiler sees every index in range.
#[inline(always)]
fn interaction_sized(
    b: &Bodies,
    w: &mut Work,
    jr: &[Vector3<f64>],
    n: usize,
    save: bool,
    mut each: impl FnMut(usize, Vector3<f64>),
) {
    let jr = &jr[..n];
    let (masses, gm, mu) = (&b.masses[..n], &b.gm[..n], &b.mu[..n]);
    let (pos, acc, jacc) = (&mut w.pos[..n], &mut w.acc[..n], &mut w.jacc[..n]);
    jacobi::jacobi_to_inertial_with(&b.ratio[..n], jr, pos);
    for a in acc.iter_mut() {
        *a = Vector3::zeros();
    }
    for i in 0..n {
        for j in (i + 1)..n {
            let d = pos[j] - pos[i];
            let r2 = d.norm_squared();
            let inv_r3 = 1.0 / (r2 * r2.sqrt());
            acc[i] += d * (gm[j] * inv_r3);
            acc[j] -= d * (gm[i] * inv_r3);
            if save {
                w.geo.pair[i * n + j] = (d, inv_r3, 3.0 / r2);
            }
        }
    }
    if b.pn != 0.0 {
        // U_k = −3 (G m_0)² m_k / (c² r²): force on planet −6(Gm_0)² m_k d/(c² r⁴).
        let m0 = masses[0];
        for k in 1..n {
            let d = pos[k] - pos[0];
            let r2 = d.norm_squared();
            let f = d * (b.pn / (r2 * r2));
            acc[k] -= f;
            acc[0] += f * (masses[k] / m0);
        }
    }
    jacobi::inertial_to_jacobi_with(masses, &b.inv_interior[..n], acc, jacc);
    for k in 1..n {
        let r = jr[k];
        let r2 = r.norm_squared();
        let mu_r3 = mu[k] / (r2 * r2.sqrt());
        each(k, jacc[k] + r * mu_r3);
        if save {
            w.geo.kep[k] = (mu_r3, 3.0 / r2);
        }
    }
}

/// The plain kick ([`kick`], `beta` = 0) or the modified one
/// ([`modified_kick`]).
#[inline]
fn any_kick(
    b: &Bodies,
    w: &mut Work,
    kw: &mut KernelWork,
    jr: &[Vector3<f64>],
    jv: &mut [Vector3<f64>],
    h: f64,
    beta: f64,
) {
    if beta == 0.0 {
        kick(b, w, jr, jv, h);
    } else {
        modified_kick(b, w, kw, jr, jv, h, beta);
    }
}

/// Jacobi interaction accelerations a_k = (A a)_k + μ_k r'_k/r'_k³ (au/d²)
/// at the Jacobi positions `jr` into `kw.a` (entry 0 zero), the inertial
/// positions into `w.pos` (for events) and the pair geometry into
/// `w.geo`: [`interaction_sized`], dispatched on the system size like
/// [`kick`].
#[inline]
fn interaction(b: &Bodies, w: &mut Work, kw: &mut KernelWork, jr: &[Vector3<f64>]) {
    let a = &mut kw.a;
    a[0] = Vector3::zeros();
    let mut put = |k: usize, ak: Vector3<f64>| a[k] = ak;
    by_size!(jr.len(), |n| interaction_sized(b, w, jr, n, true, &mut put))
}

/// Tidal-tensor product: `out`_k = Σ_j (∂a_k/∂r'_j) `src`_j (Jacobi, per
/// unit of `src`), the derivative of the Jacobi interaction accelerations
/// a_k of [`interaction`] (pair tidal tensors of
/// [`super::variational::tidal_accelerations`], the post-Newtonian term's
/// derivative and the Kepler compensation μ_k [δr/r³ − 3 r (r·δr)/r⁵]),
/// at the geometry `geo` left by [`interaction`] with inertial positions
/// `pos`. `src`_0 is ignored (the interaction does not depend on the
/// centre of mass); `out`_0 is set to zero.
#[inline]
fn tidal_product(
    b: &Bodies,
    pos: &[Vector3<f64>],
    geo: &Geometry,
    jr: &[Vector3<f64>],
    src: &[Vector3<f64>],
    s: &mut TidalScratch,
    out: &mut [Vector3<f64>],
) {
    by_size!(jr.len(), |n| tidal_product_sized(
        b, pos, geo, jr, src, s, out, n
    ))
}

/// [`tidal_product`] for `n` bodies, every buffer cut to `n` (or n²)
/// entries first as in [`interaction_sized`].
#[allow(clippy::too_many_arguments)]
#[inline(always)]
fn tidal_product_sized(
    b: &Bodies,
    pos: &[Vector3<f64>],
    geo: &Geometry,
    jr: &[Vector3<f64>],
    src: &[Vector3<f64>],
    s: &mut TidalScratch,
    out: &mut [Vector3<f64>],
    n: usize,
) {
    let (pos, jr, src, out) = (&pos[..n], &jr[..n], &src[..n], &mut out[..n]);
    let (masses, gm) = (&b.masses[..n], &b.gm[..n]);
    let (pair, kep) = (&geo.pair[..n * n], &geo.kep[..n]);
    let (dpos, dacc, djacc) = (&mut s.dpos[..n], &mut s.dacc[..n], &mut s.djacc[..n]);
    let first = src[0];
    jacobi::jacobi_to_inertial_with(&b.ratio[..n], src, dpos);
    // The centre-of-mass entry only translates every body: drop it.
    if first != Vector3::zeros() {
        for x in dpos.iter_mut() {
            *x -= first;
        }
    }
    for a in dacc.iter_mut() {
        *a = Vector3::zeros();
    }
    for i in 0..n {
        for j in (i + 1)..n {
            let (d, inv_r3, three_r2) = pair[i * n + j];
            let dd = dpos[j] - dpos[i];
            let t = (dd - d * (three_r2 * d.dot(&dd))) * inv_r3;
            dacc[i] += t * gm[j];
            dacc[j] -= t * gm[i];
        }
    }
    if b.pn != 0.0 {
        let m0 = masses[0];
        for k in 1..n {
            let d = pos[k] - pos[0];
            let dd = dpos[k] - dpos[0];
            let r2 = d.norm_squared();
            let df = (dd - d * (4.0 * d.dot(&dd) / r2)) * (b.pn / (r2 * r2));
            dacc[k] -= df;
            dacc[0] += df * (masses[k] / m0);
        }
    }
    jacobi::inertial_to_jacobi_with(masses, &b.inv_interior[..n], dacc, djacc);
    out[0] = Vector3::zeros();
    for k in 1..n {
        let rk = jr[k];
        let dr = src[k];
        let (mu_r3, three_r2) = kep[k];
        out[k] = djacc[k] + (dr - rk * (three_r2 * rk.dot(&dr))) * mu_r3;
    }
}

/// Modified kick v'_k += h [a_k + β h² (T a)_k] (module docs, "Modified
/// kick"): the exact flow over h of the position-only potential
/// H_B − (β/2) h² Σ_k m'_k |a_k|², with a the Jacobi interaction
/// accelerations of [`interaction`] and T their Jacobian ∂a/∂r'
/// ([`tidal_product`]).
#[inline]
fn modified_kick(
    b: &Bodies,
    w: &mut Work,
    kw: &mut KernelWork,
    jr: &[Vector3<f64>],
    jv: &mut [Vector3<f64>],
    h: f64,
    beta: f64,
) {
    interaction(b, w, kw, jr);
    let KernelWork { a, t, scratch } = kw;
    tidal_product(b, &w.pos, &w.geo, jr, a, scratch, t);
    let c = beta * h * h;
    for k in 1..jr.len() {
        jv[k] += (a[k] + t[k] * c) * h;
    }
}

/// First-order corrector (module docs, "Outputs"): the Jacobi state
/// x → x + L_χ x, i.e. r'_k −= α a_k, v'_k += α (T v')_k, for the
/// generator χ = α Σ_k v'_k·∂H_B/∂r'_k (H_B in Jacobi coordinates), with a
/// and T as in [`modified_kick`], both at the input state. α = h²/24 is
/// C_h of [`Corrector::RemoveH2`] to first order in ε (the kernel
/// Z(h/2, h/24) to first order in its kick), α = −h²/24 its inverse.
#[inline]
fn first_order_corrector(
    b: &Bodies,
    w: &mut Work,
    kw: &mut KernelWork,
    jr: &mut [Vector3<f64>],
    jv: &mut [Vector3<f64>],
    alpha: f64,
) {
    if alpha == 0.0 {
        return;
    }
    interaction(b, w, kw, jr);
    let KernelWork { a, t, scratch } = kw;
    tidal_product(b, &w.pos, &w.geo, jr, jv, scratch, t);
    for k in 1..jr.len() {
        jr[k] -= a[k] * alpha;
        jv[k] += t[k] * alpha;
    }
}

/// A corrector and the form it is applied in.
#[derive(Debug, Clone, Copy)]
struct Conj {
    corrector: Corrector,
    form: CorrectorForm,
}

impl Conj {
    /// Apply C (`inverse` false) or C⁻¹ (`inverse` true) for the step `h`
    /// to a Jacobi state: [`first_order_corrector`] for
    /// [`Corrector::RemoveH2`] in [`CorrectorForm::FirstOrder`], else
    /// [`apply_corrector`].
    #[allow(clippy::too_many_arguments)]
    fn apply(
        self,
        b: &Bodies,
        w: &mut Work,
        kw: &mut KernelWork,
        jr: &mut [Vector3<f64>],
        jv: &mut [Vector3<f64>],
        h: f64,
        inverse: bool,
    ) -> Result<(), (usize, super::universal::DriftError)> {
        if self.form == CorrectorForm::FirstOrder {
            let alpha = h * h / 24.0;
            first_order_corrector(b, w, kw, jr, jv, if inverse { -alpha } else { alpha });
            Ok(())
        } else {
            apply_corrector(b, w, jr, jv, self.corrector, h, inverse)
        }
    }
}

/// Apply the corrector C (`inverse` false) or C⁻¹ (`inverse` true) for the
/// step `h` to a Jacobi state, with kernels Z(a_i, b_i) of the module docs.
fn apply_corrector(
    b: &Bodies,
    w: &mut Work,
    jr: &mut [Vector3<f64>],
    jv: &mut [Vector3<f64>],
    corrector: Corrector,
    h: f64,
    inverse: bool,
) -> Result<(), (usize, super::universal::DriftError)> {
    let kicks = corrector.kicks();
    // Direction of C chosen so that the energy error falls (tests).
    const SIGN: f64 = -1.0;
    let mut kernel = |i: usize, a_sign: f64| -> Result<(), (usize, super::universal::DriftError)> {
        let a = a_sign * 0.5 * (i as f64 + 1.0) * h;
        let bk = SIGN * kicks[i] * h;
        drift_all(b, jr, jv, a)?;
        kick(b, w, jr, jv, bk);
        drift_all(b, jr, jv, -2.0 * a)?;
        kick(b, w, jr, jv, -bk);
        drift_all(b, jr, jv, a)
    };
    if inverse {
        // (Z_1 Z_2 … Z_n)⁻¹ = Z_n⁻¹ … Z_1⁻¹ with Z(a, b)⁻¹ = Z(−a, b).
        for i in (0..kicks.len()).rev() {
            kernel(i, -1.0)?;
        }
    } else {
        for i in 0..kicks.len() {
            kernel(i, 1.0)?;
        }
    }
    Ok(())
}

/// A tangent vector as the map carries it: Jacobi δr' (au) and δv'
/// (au/day), entry 0 the centre of mass ([`WisdomHolman::map_tangent`]).
pub type MapTangent<'a> = (&'a [Vector3<f64>], &'a [Vector3<f64>]);

/// Tangent vectors at the map's own phase, without outputs (for MEGNO).
impl WisdomHolman {
    /// Take whole main steps forwards until the next boundary would pass
    /// `t` (the steps [`Integrator::advance_to`] takes, with their events,
    /// tangent maps and checks), without producing an output: no partial
    /// step, and the pending half drift is not finished. Afterwards
    /// [`WisdomHolman::map_tangent`] gives the tangent vectors at the
    /// map's phase and [`Integrator::time`] the boundary reached. `t`
    /// before the current boundary is refused.
    pub fn advance_steps_to(&mut self, t: f64) -> Result<(), NbodyError> {
        if !t.is_finite() || t < self.time() {
            return Err(NbodyError::InvalidRequest(format!(
                "whole steps go forwards to a finite time, got {t} at {}",
                self.time()
            )));
        }
        if self.lag < 0.0 {
            self.synchronise()?;
        }
        while self.t0 + (self.steps as f64 + 1.0) * self.step <= t {
            self.one_step(self.step)?;
        }
        Ok(())
    }

    /// Tangent vector `i` (0-based; `None` beyond [`Variational::tangent_count`])
    /// as the map carries it, in Jacobi coordinates (δr'_k in au, δv'_k in
    /// au/day; entry 0 the centre of mass): after the kick of the last
    /// step, half a drift before the boundary [`Integrator::time`] (at the
    /// boundary itself before any step). The tangent map of the fused
    /// drift–kick sequence is that of the map conjugated by the half drift,
    /// so growth rates measured here are those of the map (its tangent
    /// vectors differ from the boundary ones by the bounded half-drift
    /// tangent map and the fixed Jacobi transformation).
    pub fn map_tangent(&self, i: usize) -> Option<MapTangent<'_>> {
        let n = self.jr.len();
        (i < self.tan.ntan).then(|| {
            (
                &self.tan.r[i * n..(i + 1) * n],
                &self.tan.v[i * n..(i + 1) * n],
            )
        })
    }
}

impl Variational for WisdomHolman {
    fn set_tangents(&mut self, tangents: &[Tangent]) -> Result<(), NbodyError> {
        if self.corrector != Corrector::Off {
            return Err(NbodyError::InvalidRequest(
                "tangent vectors need the Wisdom–Holman map without a corrector".into(),
            ));
        }
        if self.kick != Kick::Plain {
            return Err(NbodyError::InvalidRequest(
                "tangent vectors need the plain Wisdom–Holman kick".into(),
            ));
        }
        let n = self.jr.len();
        if tangents
            .iter()
            .any(|t| t.pos.len() != n || t.vel.len() != n)
        {
            return Err(NbodyError::InvalidRequest(format!(
                "every tangent vector needs {n} positions and velocities"
            )));
        }
        if tangents
            .iter()
            .any(|t| !all_finite(&t.pos) || !all_finite(&t.vel))
        {
            return Err(NbodyError::InvalidRequest(
                "tangent vectors must be finite".into(),
            ));
        }
        self.synchronise()?;
        let nt = tangents.len();
        let tn = &mut self.tan;
        let z = Vector3::zeros();
        for v in [&mut tn.r, &mut tn.v, &mut tn.sr, &mut tn.sv] {
            v.clear();
            v.resize(nt * n, z);
        }
        for v in [&mut tn.dpos, &mut tn.dacc, &mut tn.djacc] {
            v.clear();
            v.resize(n, z);
        }
        for (i, t) in tangents.iter().enumerate() {
            let blk = i * n..(i + 1) * n;
            jacobi::inertial_to_jacobi(
                &self.b.masses,
                &self.b.interior,
                &t.pos,
                &mut tn.r[blk.clone()],
            );
            jacobi::inertial_to_jacobi(&self.b.masses, &self.b.interior, &t.vel, &mut tn.v[blk]);
        }
        tn.out = tangents.to_vec();
        tn.ntan = nt;
        self.w.save = nt > 0;
        Ok(())
    }

    fn tangent_count(&self) -> usize {
        self.tan.ntan
    }

    fn output_tangents(&self) -> &[Tangent] {
        &self.tan.out
    }

    fn scale_tangent(&mut self, i: usize, factor: f64) {
        let n = self.jr.len();
        if i >= self.tan.ntan {
            return;
        }
        for x in self.tan.r[i * n..(i + 1) * n]
            .iter_mut()
            .chain(self.tan.v[i * n..(i + 1) * n].iter_mut())
        {
            *x *= factor;
        }
        let o = &mut self.tan.out[i];
        for x in o.pos.iter_mut().chain(o.vel.iter_mut()) {
            *x *= factor;
        }
    }
}

impl Integrator for WisdomHolman {
    fn time(&self) -> f64 {
        self.t0 + self.steps as f64 * self.step
    }

    fn snapshot(&self) -> Snapshot {
        let n = self.jr.len();
        let mut out = Snapshot::zeros(n, self.time());
        let mut copy = self.clone();
        // A failure here would already have stopped the step that led here;
        // on error the zeroed snapshot stays at the boundary time.
        let _ = copy.boundary_state(&mut out);
        out
    }

    fn advance_to(&mut self, t: f64, out: &mut Snapshot) -> Result<(), NbodyError> {
        if !t.is_finite() {
            return Err(NbodyError::InvalidRequest(format!(
                "requested time {t} is not finite"
            )));
        }
        let n = self.jr.len();
        if out.pos.len() != n || out.vel.len() != n {
            return Err(NbodyError::InvalidRequest(format!(
                "output snapshot has {} positions and {} velocities for {n} bodies",
                out.pos.len(),
                out.vel.len()
            )));
        }
        let dir = if t >= self.time() { 1.0 } else { -1.0 };
        let h = dir * self.step;
        if self.lag != 0.0 && self.lag * dir < 0.0 {
            self.synchronise()?;
        }
        // Whole steps while they do not overshoot t (boundaries on the grid
        // t0 + k h).
        while (self.t0 + (self.steps as f64 + dir) * self.step - t) * dir <= 0.0 {
            self.one_step(h)?;
        }
        let tau = t - self.time();
        self.output(tau, t, out)
    }

    fn events(&self) -> &[Event] {
        &self.events
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corrector_kernels_match_the_series() {
        // Σ_i b_i 2 a_i^{2m+1}/(2m+1)! must equal the coefficients of
        // (x/sinh x − 1)/u, x = u/2: −1/24, 7/5760, −31/967680 (series of
        // x/sinh x = 1 − x²/6 + 7x⁴/360 − 31x⁶/15120 + 127x⁸/604800,
        // standard tables; the x⁸ term from the Bernoulli-number series
        // Σ (2 − 2^{2n}) B_{2n} x^{2n}/(2n)! with B_8 = −1/30).
        let c = [
            -1.0 / 24.0,
            7.0 / 5760.0,
            -31.0 / 967_680.0,
            127.0 / 154_828_800.0,
        ];
        let fact = [1.0, 6.0, 120.0, 5040.0];
        for corr in [
            Corrector::RemoveH2,
            Corrector::RemoveH4,
            Corrector::RemoveH6,
            Corrector::RemoveH8,
        ] {
            let k = corr.kicks();
            for m in 0..k.len() {
                let s: f64 = k
                    .iter()
                    .enumerate()
                    .map(|(i, b)| {
                        let a = 0.5 * (i as f64 + 1.0);
                        b * 2.0 * a.powi(2 * m as i32 + 1) / fact[m]
                    })
                    .sum();
                assert!((s - c[m]).abs() < 1e-15, "{corr:?} m={m}: {s} vs {}", c[m]);
            }
        }
    }

    #[test]
    fn modified_kick_coefficient_is_the_bch_one() {
        // The coefficient of the modified kick, from the Baker–Campbell–
        // Hausdorff formula (Yoshida 1990, Phys. Lett. A 150, 262): the
        // DKD map carries (h²/12){{A,B},B}; a corrector's conjugation
        // shifts it to h²/24 (module docs), cancelled by β = 1/12. Checked
        // numerically against Gauss–Radau at round-off (two giants near
        // 2:1, RemoveH8, h = 2 d, 2000 d): with β the O(ε² h²) floor
        // vanishes; with −β the floor's coefficient doubles (error ×2);
        // with 2β it changes sign (error ×1); with 0 it is the plain map.
        use crate::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
        use crate::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
        use crate::units::M_JUPITER_IN_SUN;
        let pl = |m: f64, p: f64, e: f64, w: f64, ma: f64, inc: f64, node: f64| JacobiPlanet {
            mass: m * M_JUPITER_IN_SUN,
            radius: 0.0,
            size: OrbitSize::Period(p),
            e,
            omega_star: w,
            phase: OrbitPhase::MeanAnomaly(ma),
            inc,
            node,
        };
        let sys = System::from_jacobi_elements(
            0.8,
            0.0,
            &[
                pl(1.5, 100.0, 0.12, 0.7, 0.2, 1.36, 0.0),
                pl(2.5, 205.0, 0.18, 3.8, 3.5, 1.41, 0.07),
            ],
            0.0,
        )
        .unwrap();
        let ep: Vec<f64> = (1..=200).map(|i| i as f64 * 10.0).collect();
        let st = GaussRadauSettings {
            tolerance: 1e-9,
            ..GaussRadauSettings::default()
        };
        let mut gr = GaussRadau::new(sys.clone(), st).unwrap();
        let mut snap = Snapshot::zeros(3, 0.0);
        let r: Vec<f64> = ep
            .iter()
            .map(|&t| {
                gr.advance_to(t, &mut snap).unwrap();
                snap.vel[0].z
            })
            .collect();
        let err = |scale: f64| {
            let s = WhSettings {
                step: Some(2.0),
                corrector: Corrector::RemoveH8,
                kick: Kick::Modified,
                ..WhSettings::default()
            };
            let mut wh = WisdomHolman::new(&sys, s).unwrap();
            assert_eq!(wh.beta, 1.0 / 12.0);
            wh.beta *= scale;
            let mut snap = Snapshot::zeros(3, 0.0);
            ep.iter()
                .zip(&r)
                .map(|(&t, &want)| {
                    wh.advance_to(t, &mut snap).unwrap();
                    (snap.vel[0].z - want).abs()
                })
                .fold(0.0, f64::max)
        };
        let (e0, e1, em, e2) = (err(0.0), err(1.0), err(-1.0), err(2.0));
        println!("β × 0: {e0:.3e}, × 1: {e1:.3e}, × −1: {em:.3e}, × 2: {e2:.3e} (au/d)");
        assert!(e1 < e0 / 50.0);
        assert!((1.7..2.3).contains(&(em / e0)), "−β: {}", em / e0);
        assert!((0.8..1.2).contains(&(e2 / e0)), "2β: {}", e2 / e0);
    }

    #[test]
    fn drift_kernels_give_bitwise_the_same_run() {
        // Interleaved and scalar drifts: the same states to the bit, with
        // and without tangent vectors, for 2 to 6 planets (lanes of 1–4).
        use crate::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
        use crate::nbody::variational::{InitialFrame, unit_tangent};
        for n in 2..=6usize {
            let planets: Vec<JacobiPlanet> = (0..n)
                .map(|k| JacobiPlanet {
                    mass: 1e-4 * (1.0 + k as f64),
                    radius: 0.0,
                    size: OrbitSize::Period(12.0 * 1.9f64.powi(k as i32)),
                    e: 0.02 + 0.05 * k as f64,
                    omega_star: 0.9 * k as f64,
                    phase: OrbitPhase::MeanAnomaly(2.1 * k as f64),
                    inc: 1.5 - 0.05 * k as f64,
                    node: 0.1 * k as f64,
                })
                .collect();
            let sys = System::from_jacobi_elements(0.9, 0.0, &planets, 0.0).unwrap();
            for ntan in [0usize, 2] {
                let tans: Vec<_> = (0..ntan)
                    .map(|j| unit_tangent(&sys, InitialFrame::Jacobi, 1 + j % n, (2 * j) % 6))
                    .collect();
                let mut snaps = Vec::new();
                for kernel in [DriftKernel::Scalar, DriftKernel::Interleaved] {
                    let mut wh = WisdomHolman::new(&sys, WhSettings::default()).unwrap();
                    wh.set_drift_kernel(kernel);
                    wh.set_tangents(&tans).unwrap();
                    let mut out = Snapshot::zeros(n + 1, 0.0);
                    wh.advance_to(317.3, &mut out).unwrap();
                    wh.advance_to(-41.9, &mut out).unwrap();
                    snaps.push((out, wh.output_tangents().to_vec()));
                }
                assert_eq!(snaps[0], snaps[1], "{n} planets, {ntan} tangents");
            }
        }
    }
}

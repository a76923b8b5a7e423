//! The multi-planet Keplerian RV model: a sum of independent Keplerian
//! signals, one offset per instrument and an optional polynomial trend.
//!
//! v(t) = Σ_k K_k [cos(ν_k(t) + ω⋆_k) + e_k cos ω⋆_k] + γ_{inst(t)}
//!        + c₁ (t − t_ref) + c₂ (t − t_ref)²
//!
//! with ω⋆ the argument of periastron of the *star's* reflex orbit and the
//! RV positive when the star recedes (DESIGN §3). The true anomaly ν_k
//! follows from the mean anomaly M_k(t) = M_k(t_ref) + 2π (t − t_ref) / P_k
//! through Kepler's equation ([`crate::kepler::solve_kepler`], Markley
//! 1995). The formula is the standard single-Keplerian RV (e.g. Lovis &
//! Fischer 2010, in *Exoplanets*, ed. Seager).
//!
//! The model knows nothing of the data module: it takes epochs (days, the
//! data's own time scale) and an instrument index per epoch as slices and
//! writes into a caller-provided slice, so repeated evaluation (likelihood
//! calls) allocates nothing.

use std::f64::consts::TAU;

use crate::kepler::trig::round_small;
use crate::kepler::{EccentricAnomaly, KeplerSolver};

/// One Keplerian signal (one planet) of the star's RV.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PlanetSignal {
    /// Orbital period P in days (> 0).
    pub period: f64,
    /// RV semi-amplitude K in m/s (≥ 0).
    pub semi_amplitude: f64,
    /// Eccentricity e, 0 ≤ e < 1.
    pub eccentricity: f64,
    /// Argument of periastron of the star's orbit ω⋆ in radians (the
    /// planet's is ω⋆ + π).
    pub omega_star: f64,
    /// Mean anomaly M at the reference epoch, radians.
    pub mean_anomaly_ref: f64,
}

impl PlanetSignal {
    /// A signal from the fit parametrisation of DESIGN §3: P (days), K
    /// (m/s), (√e cos ω⋆, √e sin ω⋆) and M at the reference epoch (rad).
    ///
    /// e = (√e cos ω⋆)² + (√e sin ω⋆)², ω⋆ = atan2(√e sin ω⋆, √e cos ω⋆)
    /// (ω⋆ = 0 when e = 0). The result is not validated here; see
    /// [`PlanetSignal::validate`].
    pub fn from_sqrt_e(
        period: f64,
        semi_amplitude: f64,
        sqrt_e_cos_omega: f64,
        sqrt_e_sin_omega: f64,
        mean_anomaly_ref: f64,
    ) -> Self {
        let e = sqrt_e_cos_omega * sqrt_e_cos_omega + sqrt_e_sin_omega * sqrt_e_sin_omega;
        let omega_star = if e > 0.0 {
            sqrt_e_sin_omega.atan2(sqrt_e_cos_omega)
        } else {
            0.0
        };
        Self {
            period,
            semi_amplitude,
            eccentricity: e,
            omega_star,
            mean_anomaly_ref,
        }
    }

    /// Check that P > 0, K ≥ 0, 0 ≤ e < 1 and that all values are finite;
    /// `planet` is the index reported in the error.
    pub fn validate(&self, planet: usize) -> Result<(), KeplerianError> {
        let p = self.period;
        if !(p > 0.0 && p.is_finite()) {
            return Err(KeplerianError::Period { planet, value: p });
        }
        let k = self.semi_amplitude;
        if !(k >= 0.0 && k.is_finite()) {
            return Err(KeplerianError::SemiAmplitude { planet, value: k });
        }
        let e = self.eccentricity;
        if !(0.0..1.0).contains(&e) {
            return Err(KeplerianError::Eccentricity { planet, value: e });
        }
        if !self.omega_star.is_finite() {
            return Err(KeplerianError::NotFinite {
                planet,
                field: "omega_star",
            });
        }
        if !self.mean_anomaly_ref.is_finite() {
            return Err(KeplerianError::NotFinite {
                planet,
                field: "mean_anomaly_ref",
            });
        }
        Ok(())
    }
}

/// Optional polynomial trend in the RV about the reference epoch.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize, serde::Deserialize)]
pub enum Trend {
    /// No trend.
    #[default]
    None,
    /// c₁ (t − t_ref), slope c₁ in m/s per day.
    Linear {
        /// Slope in m/s/d.
        slope: f64,
    },
    /// c₁ (t − t_ref) + c₂ (t − t_ref)², c₁ in m/s/d and c₂ in m/s/d².
    Quadratic {
        /// Slope in m/s/d.
        slope: f64,
        /// Curvature (coefficient of (t − t_ref)²) in m/s/d².
        curvature: f64,
    },
}

impl Trend {
    /// The (slope, curvature) coefficients, zero where absent.
    #[inline]
    pub fn coefficients(&self) -> (f64, f64) {
        match *self {
            Trend::None => (0.0, 0.0),
            Trend::Linear { slope } => (slope, 0.0),
            Trend::Quadratic { slope, curvature } => (slope, curvature),
        }
    }
}

/// Parameters of the multi-planet Keplerian model.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct KeplerianParams {
    /// Reference epoch t_ref in days (same time scale as the epochs): the
    /// epoch of the mean anomalies and the origin of the trend.
    pub t_ref: f64,
    /// One signal per planet (any order).
    pub planets: Vec<PlanetSignal>,
    /// RV offset γ (m/s) per instrument, indexed by the instrument index
    /// given with each epoch.
    pub offsets: Vec<f64>,
    /// Optional trend about `t_ref`.
    pub trend: Trend,
}

/// Errors of the Keplerian RV model.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KeplerianError {
    /// A period is not positive and finite.
    #[error("planet {planet}: period must be positive and finite, got {value} d")]
    Period {
        /// Planet index.
        planet: usize,
        /// Value given.
        value: f64,
    },
    /// A semi-amplitude is negative or not finite.
    #[error("planet {planet}: semi-amplitude must be ≥ 0 and finite, got {value} m/s")]
    SemiAmplitude {
        /// Planet index.
        planet: usize,
        /// Value given.
        value: f64,
    },
    /// An eccentricity is outside [0, 1).
    #[error("planet {planet}: eccentricity must be in [0, 1), got {value}")]
    Eccentricity {
        /// Planet index.
        planet: usize,
        /// Value given.
        value: f64,
    },
    /// An angle of a planet is not finite.
    #[error("planet {planet}: {field} is not finite")]
    NotFinite {
        /// Planet index.
        planet: usize,
        /// Name of the field.
        field: &'static str,
    },
    /// An instrument offset is not finite.
    #[error("offset of instrument {instrument} is not finite")]
    Offset {
        /// Instrument index.
        instrument: usize,
    },
    /// A trend coefficient or the reference epoch is not finite.
    #[error("trend coefficients and reference epoch must be finite")]
    TrendOrReference,
    /// The epoch, instrument and output slices differ in length.
    #[error("length mismatch: {epochs} epochs, {instruments} instrument indices, {out} outputs")]
    Lengths {
        /// Number of epochs.
        epochs: usize,
        /// Number of instrument indices.
        instruments: usize,
        /// Length of the output slice.
        out: usize,
    },
    /// An epoch is not finite, or further than [`MAX_SPAN_DAYS`] from the
    /// reference epoch.
    #[error("epoch {index} is not finite or more than 1e9 days from the reference epoch")]
    Epoch {
        /// Position of the epoch in the slice.
        index: usize,
    },
    /// The model RV overflowed (parameters too large to represent the sum).
    #[error("epoch {index}: the model RV overflows (parameters too large)")]
    Overflow {
        /// Position of the epoch in the slice.
        index: usize,
    },
    /// An instrument index has no offset.
    #[error("epoch {index}: instrument {instrument} has no offset ({n_offsets} offsets given)")]
    Instrument {
        /// Position of the epoch in the slice.
        index: usize,
        /// Instrument index given.
        instrument: usize,
        /// Number of offsets in the parameters.
        n_offsets: usize,
    },
}

impl KeplerianParams {
    /// Validate every planet ([`PlanetSignal::validate`]), the offsets, the
    /// trend and the reference epoch.
    pub fn validate(&self) -> Result<(), KeplerianError> {
        for (i, p) in self.planets.iter().enumerate() {
            p.validate(i)?;
        }
        if let Some(instrument) = self.offsets.iter().position(|g| !g.is_finite()) {
            return Err(KeplerianError::Offset { instrument });
        }
        let (c1, c2) = self.trend.coefficients();
        if !(c1.is_finite() && c2.is_finite() && self.t_ref.is_finite()) {
            return Err(KeplerianError::TrendOrReference);
        }
        Ok(())
    }
}

/// Largest |t − t_ref| accepted, in days (≈ 2.7 million years): keeps the
/// phase far inside the range where its reduction to one turn is exact.
pub const MAX_SPAN_DAYS: f64 = 1e9;

/// Whether epoch `t` is finite and within [`MAX_SPAN_DAYS`] of `t_ref`.
#[inline]
fn within_span(t: f64, t_ref: f64) -> bool {
    (t - t_ref).abs() <= MAX_SPAN_DAYS
}

/// Constants of one signal computed once per evaluation, outside the loop
/// over epochs.
struct Prepared {
    inv_period: f64,
    /// M_ref / 2π, in turns.
    m_ref_turns: f64,
    e: f64,
    /// `None` only for an invalid e, which validation excludes.
    solver: Option<KeplerSolver>,
    k_cos_w: f64,
    k_sqrt_sin_w: f64,
    k_e_cos_w: f64,
}

impl Prepared {
    #[inline]
    fn new(p: &PlanetSignal) -> Self {
        let e = p.eccentricity;
        let k = p.semi_amplitude;
        let (sw, cw) = p.omega_star.sin_cos();
        Self {
            inv_period: 1.0 / p.period,
            m_ref_turns: p.mean_anomaly_ref / TAU,
            e,
            solver: KeplerSolver::new(e),
            k_cos_w: k * cw,
            k_sqrt_sin_w: k * (1.0 - e * e).sqrt() * sw,
            k_e_cos_w: k * e * cw,
        }
    }

    /// Mean anomaly at `dt` = t − t_ref (days): the phase in turns, reduced
    /// to [−½, ½] before scaling by 2π (exact subtraction), so that M ∈
    /// [−π, π] needs no further range reduction and long spans lose no
    /// precision in M.
    #[inline(always)]
    fn mean_anomaly(&self, dt: f64) -> f64 {
        let phase = dt * self.inv_period + self.m_ref_turns;
        TAU * (phase - round_small(phase))
    }

    /// RV from the solution of Kepler's equation. With
    /// cos ν = (cos E − e)/(1 − e cos E) and
    /// sin ν = √(1−e²) sin E/(1 − e cos E):
    /// K cos(ν + ω⋆) = K[(cos E − e) cos ω⋆ − √(1−e²) sin E sin ω⋆]/(1 − e cos E).
    #[inline(always)]
    fn rv_from(&self, s: &EccentricAnomaly) -> f64 {
        let den = 1.0 - self.e * s.cos_e;
        ((s.cos_e - self.e) * self.k_cos_w - s.sin_e * self.k_sqrt_sin_w) / den + self.k_e_cos_w
    }

    /// RV of the signal at `dt` = t − t_ref (days). Inputs were validated,
    /// so the solver cannot fail; the fallback keeps the function total.
    #[inline]
    fn rv(&self, dt: f64) -> f64 {
        match self.solver.and_then(|k| k.solve(self.mean_anomaly(dt))) {
            Some(s) => self.rv_from(&s),
            None => 0.0,
        }
    }

    /// Add the signal at every epoch to `out`, four epochs at a time
    /// ([`KeplerSolver::solve4`]).
    #[inline]
    fn add_to(&self, t_ref: f64, epochs: &[f64], out: &mut [f64]) {
        let Some(solver) = self.solver else { return };
        let mut ce = epochs.chunks_exact(4);
        let mut co = out.chunks_exact_mut(4);
        for (t, o) in (&mut ce).zip(&mut co) {
            let m = [0, 1, 2, 3].map(|i| self.mean_anomaly(t[i] - t_ref));
            if let Some(sol) = solver.solve4(m) {
                for i in 0..4 {
                    o[i] += self.rv_from(&sol[i]);
                }
            }
        }
        for (o, &t) in co.into_remainder().iter_mut().zip(ce.remainder()) {
            *o += self.rv(t - t_ref);
        }
    }
}

/// Add the RV (m/s) of one Keplerian signal at each epoch (days) to `out`.
///
/// `planet` is validated first; `out` must have the length of `epochs`.
/// Epochs must be finite and within [`MAX_SPAN_DAYS`] of `t_ref`. No
/// allocation.
pub fn add_planet_signal(
    planet: &PlanetSignal,
    t_ref: f64,
    epochs: &[f64],
    out: &mut [f64],
) -> Result<(), KeplerianError> {
    planet.validate(0)?;
    if !t_ref.is_finite() {
        return Err(KeplerianError::TrendOrReference);
    }
    if epochs.len() != out.len() {
        return Err(KeplerianError::Lengths {
            epochs: epochs.len(),
            instruments: epochs.len(),
            out: out.len(),
        });
    }
    if let Some(index) = epochs.iter().position(|&t| !within_span(t, t_ref)) {
        return Err(KeplerianError::Epoch { index });
    }
    Prepared::new(planet).add_to(t_ref, epochs, out);
    Ok(())
}

/// The multi-planet Keplerian RV (m/s) at each epoch, written into `out`.
///
/// `epochs` (days) and `instruments` (an index into `params.offsets` per
/// epoch) have the length of `out`. The parameters are validated first
/// ([`KeplerianParams::validate`]), then the epochs and instrument indices;
/// on error the content of `out` is unspecified. No heap allocation: the
/// per-signal constants live on the stack and the loop over epochs runs
/// once for the offsets and trend and once per planet.
///
/// ```
/// use apsidal::model::keplerian::{KeplerianParams, PlanetSignal, Trend, keplerian_model_rv};
/// let params = KeplerianParams {
///     t_ref: 2_460_000.0,
///     planets: vec![PlanetSignal { period: 10.0, semi_amplitude: 5.0, eccentricity: 0.0,
///                                  omega_star: 0.0, mean_anomaly_ref: 0.0 }],
///     offsets: vec![-3.0],
///     trend: Trend::None,
/// };
/// let mut out = [0.0];
/// keplerian_model_rv(&params, &[2_460_000.0], &[0], &mut out).unwrap();
/// // ν = 0, ω⋆ = 0: v = K + γ.
/// assert!((out[0] - 2.0).abs() < 1e-12);
/// ```
pub fn keplerian_model_rv(
    params: &KeplerianParams,
    epochs: &[f64],
    instruments: &[usize],
    out: &mut [f64],
) -> Result<(), KeplerianError> {
    params.validate()?;
    if epochs.len() != out.len() || instruments.len() != out.len() {
        return Err(KeplerianError::Lengths {
            epochs: epochs.len(),
            instruments: instruments.len(),
            out: out.len(),
        });
    }
    let (c1, c2) = params.trend.coefficients();
    let t_ref = params.t_ref;
    let n_offsets = params.offsets.len();
    for (index, ((o, &t), &inst)) in out.iter_mut().zip(epochs).zip(instruments).enumerate() {
        if !within_span(t, t_ref) {
            return Err(KeplerianError::Epoch { index });
        }
        let gamma = *params.offsets.get(inst).ok_or(KeplerianError::Instrument {
            index,
            instrument: inst,
            n_offsets,
        })?;
        let dt = t - t_ref;
        *o = gamma + dt * (c1 + c2 * dt);
    }
    for planet in &params.planets {
        Prepared::new(planet).add_to(t_ref, epochs, out);
    }
    // Finite but enormous parameters can overflow the sum: refuse rather
    // than hand out ±∞ (found by the hardening property tests).
    if let Some(index) = out.iter().position(|v| !v.is_finite()) {
        return Err(KeplerianError::Overflow { index });
    }
    Ok(())
}

/// RV (m/s) of one Keplerian signal at `t` (days): v = K [cos(ν + ω⋆) + e cos ω⋆],
/// for period P (days), semi-amplitude K (m/s), eccentricity e, the star's
/// argument of periastron ω⋆ (rad) and mean anomaly `m_ref` at `t_ref`.
/// Returns `None` when the parameters are invalid (see
/// [`PlanetSignal::validate`]) or an epoch is not finite.
#[inline]
pub fn keplerian_rv(
    t: f64,
    period: f64,
    k: f64,
    e: f64,
    omega_star: f64,
    m_ref: f64,
    t_ref: f64,
) -> Option<f64> {
    let planet = PlanetSignal {
        period,
        semi_amplitude: k,
        eccentricity: e,
        omega_star,
        mean_anomaly_ref: m_ref,
    };
    planet.validate(0).ok()?;
    let dt = t - t_ref;
    within_span(t, t_ref).then(|| Prepared::new(&planet).rv(dt))
}

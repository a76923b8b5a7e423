//! The injected two-giant system near 2:1 (invented names: star Tessaly-9,
//! instruments KARVO and MIREN) and its synthetic RVs, generated with the
//! project's own reference integrator (Gauss–Radau, tolerance 1e-9).
//! Shared by tests/fit_dynamical_injection.rs and benches/fit.rs.
//!
//! Noise model (documented here once): every epoch gets a Gaussian draw of
//! standard deviation √(σ_i² + s²) with σ_i the quoted error of its
//! instrument and s the instrument's true jitter. Epochs are uniform random
//! over the span, centred on the reference epoch; every third epoch is
//! MIREN's, the rest KARVO's. Random numbers: ChaCha8 seeded with `seed`.

#![allow(dead_code)]

use apsidal::fit::models::{ModelKind, Observations, PlanetGuess};
use apsidal::model::dynamical::{
    DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace, IntegratorChoice, Trend,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Reference epoch of the osculating elements (d).
pub const T_REF: f64 = 2_460_000.0;
/// Stellar mass (M☉).
pub const STAR_MASS: f64 = 0.95;
/// Instrument names.
pub const INSTRUMENTS: [&str; 2] = ["KARVO", "MIREN"];
/// True offsets (m/s).
pub const OFFSETS: [f64; 2] = [-14.0, 23.0];
/// True jitters (m/s).
pub const JITTERS: [f64; 2] = [1.5, 3.0];
/// Quoted errors (m/s).
pub const ERRORS: [f64; 2] = [2.0, 3.5];
/// True shared sin i of the coplanar orbits.
pub const SIN_I: f64 = 0.8;

/// One planet's injected osculating Jacobi elements at T_REF.
#[derive(Debug, Clone, Copy)]
pub struct TruePlanet {
    pub name: &'static str,
    pub period: f64,
    pub k: f64,
    pub e: f64,
    pub omega_star_deg: f64,
    pub mean_anomaly_deg: f64,
}

impl TruePlanet {
    /// √e cos ω⋆ and √e sin ω⋆.
    pub fn sqrt_basis(&self) -> (f64, f64) {
        let w = self.omega_star_deg.to_radians();
        (self.e.sqrt() * w.cos(), self.e.sqrt() * w.sin())
    }
    /// Mean longitude λ = M + ω⋆ + 180° (Ω = 0), degrees in [0, 360).
    pub fn mean_longitude_deg(&self) -> f64 {
        (self.mean_anomaly_deg + self.omega_star_deg + 180.0).rem_euclid(360.0)
    }
}

/// The injected planets, inner first.
pub const PLANETS: [TruePlanet; 2] = [
    TruePlanet {
        name: "b",
        period: 42.0,
        k: 35.0,
        e: 0.12,
        omega_star_deg: 70.0,
        mean_anomaly_deg: 40.0,
    },
    TruePlanet {
        name: "c",
        period: 86.5,
        k: 22.0,
        e: 0.08,
        omega_star_deg: 200.0,
        mean_anomaly_deg: 150.0,
    },
];

/// The truth as dynamical-model parameters.
pub fn true_params() -> DynamicalParams {
    let inc = SIN_I.asin();
    DynamicalParams {
        star_mass: STAR_MASS,
        planets: PLANETS
            .iter()
            .map(|p| DynamicalPlanet {
                period: p.period,
                k: p.k,
                e: p.e,
                omega_star: p.omega_star_deg.to_radians(),
                mean_anomaly: p.mean_anomaly_deg.to_radians(),
                inc,
                delta_node: 0.0,
            })
            .collect(),
        offsets: OFFSETS.to_vec(),
        trend: Trend::default(),
    }
}

/// Noise-free truth RVs (m/s) at `t` for instruments `inst`, from the
/// Gauss–Radau integrator at tolerance 1e-9.
pub fn truth_rv(t: &[f64], inst: &[usize]) -> Vec<f64> {
    let mut model = DynamicalModel::new(T_REF);
    model.integrator = IntegratorChoice::GaussRadau { tolerance: 1e-9 };
    let mut ws = DynamicalWorkspace::default();
    let mut out = vec![0.0; t.len()];
    model
        .star_rv(&true_params(), t, inst, &mut ws, &mut out)
        .expect("truth integrates");
    out
}

/// `n` synthetic epochs over `span` days centred on T_REF with noise.
pub fn synthetic(seed: u64, n: usize, span: f64) -> Observations {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut t: Vec<f64> = (0..n)
        .map(|_| T_REF - 0.5 * span + span * rng.random::<f64>())
        .collect();
    t.sort_by(f64::total_cmp);
    let inst: Vec<usize> = (0..n).map(|i| usize::from(i % 3 == 0)).collect();
    let err: Vec<f64> = inst.iter().map(|&k| ERRORS[k]).collect();
    let mut rv = truth_rv(&t, &inst);
    for i in 0..n {
        let k = inst[i];
        let s = (ERRORS[k] * ERRORS[k] + JITTERS[k] * JITTERS[k]).sqrt();
        rv[i] += Normal::new(0.0, s).expect("positive").sample(&mut rng);
    }
    Observations {
        t,
        rv,
        err,
        inst,
        instruments: INSTRUMENTS.iter().map(|s| s.to_string()).collect(),
    }
}

/// Starting guesses: the truth perturbed (periods by `dp` relative, K by
/// `dk` relative, λ by `dl` degrees), as a periodogram + Keplerian start
/// would give.
pub fn guesses(dp: f64, dk: f64, dl: f64) -> Vec<PlanetGuess> {
    PLANETS
        .iter()
        .enumerate()
        .map(|(j, p)| {
            let sgn = if j == 0 { 1.0 } else { -1.0 };
            PlanetGuess {
                name: p.name.into(),
                period: p.period * (1.0 + sgn * dp),
                semi_amplitude: p.k * (1.0 - sgn * dk),
                eccentricity: 0.1,
                omega_star_deg: p.omega_star_deg + 20.0 * sgn,
                mean_longitude_deg: p.mean_longitude_deg() + sgn * dl,
                inclination_deg: 90.0,
                node_difference_deg: 0.0,
            }
        })
        .collect()
}

/// Planet names in order of period.
pub fn planet_names() -> Vec<String> {
    PLANETS.iter().map(|p| p.name.to_string()).collect()
}

/// Is this model dynamical?
pub fn is_dynamical(kind: ModelKind) -> bool {
    kind != ModelKind::Keplerian
}

//! Synthetic systems for the comparison tests: the project's own models at
//! chosen parameters (no fitting), data drawn from the dynamical model.
#![allow(dead_code)]

use apsidal::compare::resonance::{ElementHistory, PlanetSeries};
use apsidal::compare::statistics::ModelAt;
use apsidal::fit::models::{
    ModelKind, Observations, PlanetGuess, RvModel, TrendKind, default_parameters,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::f64::consts::TAU;

pub const T_REF: f64 = 2_460_000.0;

/// Two planets near 2:1 of about a Jupiter mass each about a Sun.
pub fn near_two_to_one() -> Vec<PlanetGuess> {
    vec![
        guess("b", 30.0, 60.0, 0.05, 40.0, 10.0),
        guess("c", 61.0, 45.0, 0.08, 200.0, 130.0),
    ]
}

/// Two small planets at period ratio 7 (K = 1 m/s: a few Earth masses).
pub fn far_apart() -> Vec<PlanetGuess> {
    vec![
        guess("b", 10.0, 1.0, 0.02, 40.0, 10.0),
        guess("c", 70.0, 1.0, 0.03, 200.0, 130.0),
    ]
}

pub fn guess(name: &str, p: f64, k: f64, e: f64, w: f64, lam: f64) -> PlanetGuess {
    PlanetGuess {
        name: name.into(),
        period: p,
        semi_amplitude: k,
        eccentricity: e,
        omega_star_deg: w,
        mean_longitude_deg: lam,
        inclination_deg: 90.0,
        node_difference_deg: 0.0,
    }
}

/// Epochs over `span` days centred on T_REF, two instruments with errors
/// 1.0 and 2.0 m/s; RVs from the dynamical model at the guesses with
/// offsets −5 and 12 m/s plus Gaussian noise of the stated errors.
pub fn observations(planets: &[PlanetGuess], n: usize, span: f64, seed: u64) -> Observations {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut t: Vec<f64> = (0..n)
        .map(|_| T_REF - 0.5 * span + span * rng.random::<f64>())
        .collect();
    t.sort_by(f64::total_cmp);
    let inst: Vec<usize> = (0..n).map(|i| usize::from(i % 3 == 0)).collect();
    let err: Vec<f64> = inst
        .iter()
        .map(|&k| if k == 0 { 1.0 } else { 2.0 })
        .collect();
    let mut obs = Observations {
        t,
        rv: vec![0.0; n],
        err,
        inst,
        instruments: vec!["TARN".into(), "VESK".into()],
    };
    let (m, mut full) = model(ModelKind::CoplanarEdgeOn, planets, &obs);
    let off = [-5.0, 12.0];
    for (k, name) in obs.instruments.iter().enumerate() {
        full[m.params.index_of(&format!("{name}.offset")).unwrap()] = off[k];
    }
    let mut rv = vec![0.0; n];
    m.model_rv(&full, &mut rv).unwrap();
    for (v, e) in rv.iter_mut().zip(&obs.err) {
        *v += Normal::new(0.0, *e).unwrap().sample(&mut rng);
    }
    obs.rv = rv;
    obs
}

/// A model of `kind` over `obs` with parameters at the guesses, offsets at
/// the values used to draw the data and jitters at zero.
pub fn model(kind: ModelKind, planets: &[PlanetGuess], obs: &Observations) -> (RvModel, Vec<f64>) {
    let params = default_parameters(kind, planets, obs, TrendKind::None).unwrap();
    let names: Vec<String> = planets.iter().map(|p| p.name.clone()).collect();
    let m = RvModel::new(
        obs.clone(),
        kind,
        1.0,
        T_REF,
        &names,
        TrendKind::None,
        params,
    )
    .unwrap();
    let mut full = m.params.start_full();
    let off = [-5.0, 12.0];
    for (k, name) in obs.instruments.iter().enumerate() {
        full[m.params.index_of(&format!("{name}.offset")).unwrap()] = off[k];
        full[m.params.index_of(&format!("{name}.jitter")).unwrap()] = 0.0;
    }
    (m, full)
}

/// A constructed pair history (angles in radians): inner mean motion n1,
/// apsidal rates g1, g2; λ₂ set so that φ₀ = 2λ₂ − λ₁ − ϖ₁ librates as
/// c + a sin(2πt/T) when `librating`, else λ₂ = n2 t with n2 = n1/ratio.
pub fn pair_history(librating: bool, ratio: f64) -> ElementHistory {
    let (n1, g1, g2) = (TAU / 30.0, TAU / 9000.0, -TAU / 13_000.0);
    let (c, a, period) = (3.0_f64, 0.4_f64, 1500.0);
    let t: Vec<f64> = (0..4000).map(|i| 2.0 * i as f64).collect();
    let w1: Vec<f64> = t.iter().map(|&x| g1 * x + 0.5).collect();
    let w2: Vec<f64> = t.iter().map(|&x| g2 * x + 1.0).collect();
    let l1: Vec<f64> = t.iter().map(|&x| n1 * x).collect();
    let (l2, n2): (Vec<f64>, f64) = if librating {
        (
            (0..t.len())
                .map(|i| 0.5 * (c + a * (TAU * t[i] / period).sin() + l1[i] + w1[i]))
                .collect(),
            0.5 * (n1 + g1),
        )
    } else {
        let n2 = n1 / ratio;
        (t.iter().map(|&x| n2 * x + 0.3).collect(), n2)
    };
    let planet = |n: f64, lam: Vec<f64>, w: Vec<f64>| PlanetSeries {
        period_d: vec![TAU / n; t.len()],
        e: vec![0.05; t.len()],
        varpi: w,
        lambda: lam,
        inc: None,
        node: None,
    };
    ElementHistory {
        times_d: t.clone(),
        planets: vec![planet(n1, l1, w1), planet(n2, l2, w2)],
    }
}

/// The Keplerian and the N-body edge-on model over the same data, each at
/// the guesses ([`model`]).
pub struct Pair {
    pub km: RvModel,
    pub kv: Vec<f64>,
    pub dm: RvModel,
    pub dv: Vec<f64>,
}

impl Pair {
    /// Both models over `obs`.
    pub fn new(planets: &[PlanetGuess], obs: &Observations) -> Self {
        Self::over(planets, obs, obs)
    }

    /// The Keplerian model over `kep_obs`, the dynamical over `dyn_obs`.
    pub fn over(planets: &[PlanetGuess], kep_obs: &Observations, dyn_obs: &Observations) -> Self {
        let (km, kv) = model(ModelKind::Keplerian, planets, kep_obs);
        let (dm, dv) = model(ModelKind::CoplanarEdgeOn, planets, dyn_obs);
        Pair { km, kv, dm, dv }
    }

    /// The Keplerian model at its values.
    pub fn keplerian(&self) -> ModelAt<'_> {
        ModelAt {
            model: &self.km,
            values: &self.kv,
        }
    }

    /// The dynamical model at its values.
    pub fn dynamical(&self) -> ModelAt<'_> {
        ModelAt {
            model: &self.dm,
            values: &self.dv,
        }
    }
}

//! Shared helpers of the Gauss–Radau test files and the N-body bench:
//! build barycentric systems from Jacobi elements (DESIGN §3) by hand, so
//! that these tests do not depend on the library's own Jacobi conversion.
#![allow(dead_code)]

use apsidal::kepler::{Elements, a_from_period, elements_to_state};
use apsidal::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
use apsidal::nbody::{EventSettings, Integrator, Snapshot, System};
use apsidal::units::{G, M_JUPITER_IN_SUN, au_per_day_to_m_s, deg};
use nalgebra::Vector3;

/// One planet: mass (M☉), period (days, of its Jacobi orbit) and elements
/// whose `a` is ignored (set from the period with μ_k = G M_k).
pub struct PlanetSpec {
    pub mass: f64,
    pub period: f64,
    pub el: Elements,
}

/// Barycentric system from Jacobi elements: planet k orbits the
/// barycentre of the star and planets 1..k−1 with μ_k = G (M⋆ + m_1 + … +
/// m_k). Built step by step: x_k = R_{k−1} + r'_k, then the barycentre
/// R_k = (M_{k−1} R_{k−1} + m_k x_k)/M_k; finally all shifted to the
/// barycentre of the whole system.
pub fn from_jacobi(m_star: f64, planets: &[PlanetSpec], t: f64) -> System {
    let n = planets.len() + 1;
    let mut pos = vec![Vector3::zeros(); n];
    let mut vel = vec![Vector3::zeros(); n];
    let mut masses = vec![m_star];
    let mut mc = m_star;
    let mut com = Vector3::zeros();
    let mut vcom = Vector3::zeros();
    for (k, p) in planets.iter().enumerate() {
        let mk = mc + p.mass;
        let mu = G * mk;
        let mut el = p.el;
        el.a = a_from_period(p.period, mu);
        let s = elements_to_state(&el, mu).unwrap();
        pos[k + 1] = com + s.pos;
        vel[k + 1] = vcom + s.vel;
        com = (com * mc + pos[k + 1] * p.mass) / mk;
        vcom = (vcom * mc + vel[k + 1] * p.mass) / mk;
        mc = mk;
        masses.push(p.mass);
    }
    for i in 0..n {
        pos[i] -= com;
        vel[i] -= vcom;
    }
    System {
        radii: vec![0.0; n],
        masses,
        state: Snapshot { t, pos, vel },
        post_newtonian: false,
    }
}

/// The benchmark system "two giants near 2:1" (invented): a 0.8 M☉ star,
/// 1.5 M_J at P = 100 d (e = 0.12) and 2.5 M_J at P = 205 d (e = 0.18),
/// slightly non-coplanar (i = 78° and 81°, ΔΩ = 4°), at epoch `t`.
pub fn two_giants(t: f64) -> System {
    let planets = [
        PlanetSpec {
            mass: 1.5 * M_JUPITER_IN_SUN,
            period: 100.0,
            el: Elements {
                a: 0.0,
                e: 0.12,
                inc: deg(78.0),
                node: 0.0,
                omega: deg(40.0),
                mean_anomaly: deg(10.0),
            },
        },
        PlanetSpec {
            mass: 2.5 * M_JUPITER_IN_SUN,
            period: 205.0,
            el: Elements {
                a: 0.0,
                e: 0.18,
                inc: deg(81.0),
                node: deg(4.0),
                omega: deg(220.0),
                mean_anomaly: deg(200.0),
            },
        },
    ];
    from_jacobi(0.8, &planets, t)
}

/// Gauss–Radau settings at tolerance `eps` with events recorded, not
/// stopping the run.
pub fn gr_settings(eps: f64) -> GaussRadauSettings {
    GaussRadauSettings {
        tolerance: eps,
        events: EventSettings {
            stop_on_event: false,
            ..EventSettings::default()
        },
        ..GaussRadauSettings::default()
    }
}

/// Steps, rejected steps and predictor–corrector iterations of one run.
#[derive(Debug, Clone, Copy)]
pub struct GrCounts {
    pub steps: u64,
    pub rejected: u64,
    pub iterations: u64,
}

impl GrCounts {
    /// Force evaluations: one per step attempt plus seven per iteration.
    pub fn evaluations(&self) -> u64 {
        self.steps + self.rejected + 7 * self.iterations
    }
}

/// Star RVs (m/s) of `sys` every 10 d over 0..4000 d, integrated by
/// Gauss–Radau with `settings` both ways from `t_ref` (each integrator
/// set up by `configure` first), and the counts of the forward and the
/// backward run.
pub fn gr_star_rvs(
    sys: &System,
    t_ref: f64,
    settings: GaussRadauSettings,
    configure: impl Fn(&mut GaussRadau),
) -> (Vec<f64>, [GrCounts; 2]) {
    let epochs: Vec<f64> = (0..400).map(|i| i as f64 * 10.0).collect();
    let split = epochs.partition_point(|t| *t < t_ref);
    let mut out = vec![0.0; epochs.len()];
    let mut snap = Snapshot::zeros(sys.masses.len(), 0.0);
    let mut counts = [GrCounts {
        steps: 0,
        rejected: 0,
        iterations: 0,
    }; 2];
    for (d, forward) in [true, false].into_iter().enumerate() {
        let mut gr = GaussRadau::new(sys.clone(), settings).unwrap();
        configure(&mut gr);
        let idx: Vec<usize> = if forward {
            (split..epochs.len()).collect()
        } else {
            (0..split).rev().collect()
        };
        for i in idx {
            gr.advance_to(epochs[i], &mut snap).unwrap();
            out[i] = au_per_day_to_m_s(snap.vel[0].z);
        }
        counts[d] = GrCounts {
            steps: gr.steps(),
            rejected: gr.rejected_steps(),
            iterations: gr.iterations(),
        };
    }
    (out, counts)
}

/// Largest absolute difference of two series.
pub fn max_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

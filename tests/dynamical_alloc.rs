//! No heap allocation in repeated model evaluations or in integrator steps
//! (STYLE: allocate once per run). Checked with a counting global
//! allocator: a conservation-style check of our own code, no external
//! reference needed.

mod alloc_support;
use std::f64::consts::FRAC_PI_2;

use apsidal::model::dynamical::{
    DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace, IntegratorChoice, Trend,
};
use apsidal::nbody::wisdom_holman::Corrector;

use alloc_support::count;

#[test]
fn repeated_evaluations_do_not_allocate() {
    let pl = |period: f64, k: f64| DynamicalPlanet {
        period,
        k,
        e: 0.1,
        omega_star: 1.0,
        mean_anomaly: 2.0,
        inc: FRAC_PI_2,
        delta_node: 0.0,
    };
    let mut params = DynamicalParams {
        star_mass: 0.8,
        planets: vec![pl(205.0, 45.0), pl(100.0, 38.0), pl(31.0, 5.0)],
        offsets: vec![1.0, 2.0],
        trend: Trend::default(),
    };
    let epochs: Vec<f64> = (0..200).map(|i| ((i * 37) % 200) as f64 * 20.0).collect();
    let inst: Vec<usize> = (0..200).map(|i| i % 2).collect();
    let mut out = vec![0.0; 200];
    for corrector in [Corrector::Off, Corrector::RemoveH4] {
        let model = DynamicalModel {
            integrator: IntegratorChoice::WisdomHolman {
                step: None,
                corrector,
            },
            ..DynamicalModel::new(2000.0)
        };
        let mut ws = DynamicalWorkspace::default();
        model
            .star_rv(&params, &epochs, &inst, &mut ws, &mut out)
            .unwrap();
        let before = count();
        for j in 0..5 {
            params.planets[0].k = 40.0 + j as f64;
            params.planets[1].mean_anomaly = 0.3 * j as f64;
            model
                .star_rv(&params, &epochs, &inst, &mut ws, &mut out)
                .unwrap();
        }
        let n = count() - before;
        assert_eq!(n, 0, "{corrector:?}: {n} allocations in 5 evaluations");
        assert!(out.iter().all(|v| v.is_finite()));
    }
}

//! MEGNO ⟨Y⟩ against the Wisdom–Holman step for three systems (the
//! two-giant benchmark of benches/stability.rs, and the wide and packed
//! pairs of tests/megno_values.rs), with Gauss–Radau as an independent
//! reference: the evidence behind the MEGNO step of
//! `apsidal::stability::megno`.
//!
//! `cargo run --release --example megno_step_scan [inner orbits]`

use std::f64::consts::FRAC_PI_2;
use std::time::Instant;

use apsidal::nbody::System;
use apsidal::nbody::events::EventSettings;
use apsidal::nbody::gauss_radau::GaussRadauSettings;
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::variational::VariationalIntegrator;
use apsidal::nbody::wisdom_holman::{WhSettings, WisdomHolman};
use apsidal::stability::megno::{MegnoSettings, megno_run};

#[allow(clippy::too_many_arguments)]
fn p(mass: f64, per: f64, e: f64, w: f64, m: f64, inc: f64, node: f64) -> JacobiPlanet {
    JacobiPlanet {
        mass,
        radius: 0.0,
        size: OrbitSize::Period(per),
        e,
        omega_star: w,
        phase: OrbitPhase::MeanAnomaly(m),
        inc,
        node,
    }
}

fn main() {
    let inner: f64 = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(1e4);
    let quiet = EventSettings {
        stop_on_event: false,
        ..EventSettings::default()
    };
    let systems = [
        (
            "two giants",
            System::from_jacobi_elements(
                0.8,
                0.0,
                &[
                    p(1.5e-3, 100.0, 0.1, 0.4, 1.0, 1.3, 0.0),
                    p(2.2e-3, 205.0, 0.1, 2.0, 4.0, 1.4, 0.2),
                ],
                0.0,
            )
            .unwrap(),
            100.0,
            205.0,
        ),
        (
            "wide pair",
            System::from_jacobi_elements(
                1.0,
                0.0,
                &[
                    p(1e-3, 200.0, 0.02, 0.3, 0.0, FRAC_PI_2, 0.0),
                    p(3e-4, 1400.0, 0.03, 2.0, 2.5, FRAC_PI_2, 0.0),
                ],
                0.0,
            )
            .unwrap(),
            200.0,
            1400.0,
        ),
        (
            "eccentric wide pair",
            System::from_jacobi_elements(
                1.0,
                0.0,
                &[
                    p(1e-3, 200.0, 0.3, 0.3, 0.0, FRAC_PI_2, 0.0),
                    p(3e-4, 1400.0, 0.05, 2.0, 2.5, FRAC_PI_2, 0.0),
                ],
                0.0,
            )
            .unwrap(),
            200.0,
            1400.0,
        ),
        (
            "packed pair",
            System::from_jacobi_elements(
                1.0,
                0.0,
                &[
                    p(1e-3, 100.0, 0.05, 0.0, 0.0, FRAC_PI_2, 0.0),
                    p(1e-3, 130.0, 0.05, 1.5, 3.0, FRAC_PI_2, 0.0),
                ],
                0.0,
            )
            .unwrap(),
            100.0,
            130.0,
        ),
    ];
    let which: Option<String> = std::env::args().nth(2);
    for (name, sys, p_in, p_out) in &systems {
        if which.as_deref().is_some_and(|w| !name.starts_with(w)) {
            continue;
        }
        let outer = inner * p_in / p_out;
        let h0 = WisdomHolman::new(sys, WhSettings::default())
            .unwrap()
            .step();
        for factor in [0.5, 1.0, 1.5, 2.0, 2.5, 3.0] {
            let h = factor * h0;
            let integ = VariationalIntegrator::WisdomHolman(WhSettings {
                step: Some(h),
                events: quiet,
                ..WhSettings::default()
            });
            let t = Instant::now();
            let r = megno_run(sys, integ, outer, &MegnoSettings::default()).unwrap();
            println!(
                "{name:20} WH h = {factor:3} x default = P/{:<5.1}: <Y> = {:8.4}  Y = {:9.3}  {:?}  events {}  ({:.2} s)",
                p_in / h,
                r.mean_y,
                r.y,
                r.classification,
                r.events.len(),
                t.elapsed().as_secs_f64()
            );
        }
        if std::env::var("GR").is_ok() {
            let integ = VariationalIntegrator::GaussRadau(GaussRadauSettings {
                events: quiet,
                ..GaussRadauSettings::default()
            });
            let t = Instant::now();
            let r = megno_run(sys, integ, outer, &MegnoSettings::default()).unwrap();
            println!(
                "{name:20} GR                           : <Y> = {:8.4}  Y = {:9.3}  {:?}  ({:.2} s)",
                r.mean_y,
                r.y,
                r.classification,
                t.elapsed().as_secs_f64()
            );
        }
    }
}

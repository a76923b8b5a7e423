//! The Wisdom–Holman integration of two interacting giants against an
//! independent general-purpose integrator from the registry: the
//! 8th-order Dormand–Prince method with dense output (crate `ode_solvers`,
//! `Dop853`, Hairer, Nørsett & Wanner 1993) on the plain Newtonian
//! equations of motion written out here. This checks the interaction kick
//! (the one-planet tests cannot: there it vanishes).

use std::f64::consts::FRAC_PI_2;

use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::wisdom_holman::{WhSettings, WisdomHolman};
use apsidal::nbody::{Integrator, Snapshot, System};
use apsidal::units::{G, M_JUPITER_IN_SUN, au_per_day_to_m_s};
use ode_solvers::{Dop853, SVector};

type State = SVector<f64, 18>;

struct Newton {
    m: [f64; 3],
}

impl ode_solvers::System<f64, State> for Newton {
    fn system(&self, _t: f64, y: &State, dy: &mut State) {
        for i in 0..3 {
            for c in 0..3 {
                dy[3 * i + c] = y[9 + 3 * i + c];
                dy[9 + 3 * i + c] = 0.0;
            }
        }
        for i in 0..3 {
            for j in 0..3 {
                if i == j {
                    continue;
                }
                let d = [
                    y[3 * j] - y[3 * i],
                    y[3 * j + 1] - y[3 * i + 1],
                    y[3 * j + 2] - y[3 * i + 2],
                ];
                let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
                let f = G * self.m[j] / (r2 * r2.sqrt());
                for c in 0..3 {
                    dy[9 + 3 * i + c] += f * d[c];
                }
            }
        }
    }
}

#[test]
fn two_giants_match_dop853() {
    // Two giants near 2:1 (the model tests' system, masses 1 and 1.5 M_J,
    // mutually inclined).
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
            pl(1.0, 100.0, 0.1, 0.4, 1.0, FRAC_PI_2, 0.0),
            pl(1.5, 205.0, 0.1, 2.0, 4.0, 1.4, 0.2),
        ],
        0.0,
    )
    .unwrap();
    let mut y0 = State::zeros();
    for i in 0..3 {
        for c in 0..3 {
            y0[3 * i + c] = sys.state.pos[i][c];
            y0[9 + 3 * i + c] = sys.state.vel[i][c];
        }
    }
    let m = [sys.masses[0], sys.masses[1], sys.masses[2]];
    // Integrate past the last compared epoch: the solver's final output
    // point is not a dense-output point (it differed by 1 cm/s in a trial).
    let (t_end, dx) = (2050.0, 10.0);
    let mut dop = Dop853::new(Newton { m }, 0.0, t_end, dx, y0, 1e-14, 1e-16);
    dop.integrate().unwrap();
    let (ts, ys) = (dop.x_out().clone(), dop.y_out().clone());
    assert!(ts.len() >= 200);
    let worst = |step: f64| {
        let s = WhSettings {
            step: Some(step),
            ..WhSettings::default()
        };
        let mut wh = WisdomHolman::new(&sys, s).unwrap();
        let mut out = Snapshot::zeros(3, 0.0);
        let mut w: f64 = 0.0;
        for (t, y) in ts.iter().zip(&ys).filter(|(t, _)| **t <= 2000.0) {
            wh.advance_to(*t, &mut out).unwrap();
            let rv_wh = au_per_day_to_m_s(out.vel[0].z);
            let rv_ref = au_per_day_to_m_s(y[11]);
            w = w.max((rv_wh - rv_ref).abs());
        }
        w
    };
    let (e1, e2, e3) = (worst(2.0), worst(1.0), worst(0.25));
    println!("max |RV_WH − RV_DOP853| over 2000 d: h = 2 d {e1:e}, 1 d {e2:e}, 0.25 d {e3:e} m/s");
    // Second-order convergence towards the independent solution, and agreement.
    assert!((3.0..5.0).contains(&(e1 / e2)), "ratio {}", e1 / e2);
    assert!(e1 <= 1e-3 && e3 <= 1e-4);
    // 8× smaller step: 64× smaller error.
    assert!((45.0..85.0).contains(&(e1 / e3)), "ratio {}", e1 / e3);
}

//! First-order variational equations against central finite differences of
//! the flow (a property of the derivative itself: d/dε Φ(x₀ + ε δ) at ε = 0
//! is the tangent vector; the central difference
//! [Φ(x₀ + hδ) − Φ(x₀ − hδ)]/(2h) approximates it to O(h²) + O(ε_mach/h),
//! common practice). For Wisdom–Holman the tangent map is that of the map
//! itself, so the finite differences use the same fixed step; for
//! Gauss–Radau both are accurate approximations of the exact flow.

use apsidal::nbody::gauss_radau::{GaussRadau, GaussRadauSettings};
use apsidal::nbody::system::{JacobiPlanet, OrbitPhase, OrbitSize};
use apsidal::nbody::variational::{
    InitialFrame, Tangent, Variational, VariationalIntegrator, rv_jacobian, unit_tangent,
};
use apsidal::nbody::wisdom_holman::{WhSettings, WisdomHolman};
use apsidal::nbody::{Integrator, Snapshot, System};

/// Two giants (P = 60 d and 170 d, e = 0.15 and 0.25, mutually inclined)
/// about a 0.9 M☉ star: an invented, strongly interacting test case.
fn system() -> System {
    let p = |mass: f64, per: f64, e: f64, w: f64, m: f64, inc: f64, node: f64| JacobiPlanet {
        mass,
        radius: 0.0,
        size: OrbitSize::Period(per),
        e,
        omega_star: w,
        phase: OrbitPhase::MeanAnomaly(m),
        inc,
        node,
    };
    System::from_jacobi_elements(
        0.9,
        0.0,
        &[
            p(2e-3, 60.0, 0.15, 0.4, 1.0, 1.3, 0.0),
            p(3e-3, 170.0, 0.25, 2.0, 4.0, 1.45, 0.3),
        ],
        0.0,
    )
    .unwrap()
}

fn perturbed(sys: &System, t: &Tangent, h: f64) -> System {
    let mut s = sys.clone();
    for k in 0..s.len() {
        s.state.pos[k] += t.pos[k] * h;
        s.state.vel[k] += t.vel[k] * h;
    }
    s
}

fn flat(s: &Snapshot) -> Vec<f64> {
    s.pos
        .iter()
        .chain(&s.vel)
        .flat_map(|v| [v.x, v.y, v.z])
        .collect()
}

fn flat_t(t: &Tangent) -> Vec<f64> {
    t.pos
        .iter()
        .chain(&t.vel)
        .flat_map(|v| [v.x, v.y, v.z])
        .collect()
}

fn run(choice: &VariationalIntegrator, sys: &System, t_end: f64) -> Snapshot {
    let mut integ = choice.build(sys).unwrap();
    let mut s = Snapshot::zeros(sys.len(), t_end);
    integ.advance_to(t_end, &mut s).unwrap();
    s
}

/// Largest relative difference (vector norm) between the tangent vectors
/// after `t_end` days and the central differences, over the 12 Jacobi
/// coordinates of the planets.
fn worst_disagreement(choice: VariationalIntegrator, t_end: f64) -> f64 {
    let sys = system();
    let tangents: Vec<Tangent> = (1..3)
        .flat_map(|k| (0..6).map(move |c| (k, c)))
        .map(|(k, c)| unit_tangent(&sys, InitialFrame::Jacobi, k, c))
        .collect();
    let mut integ = choice.build(&sys).unwrap();
    integ.set_tangents(&tangents).unwrap();
    let mut s = Snapshot::zeros(3, t_end);
    integ.advance_to(t_end, &mut s).unwrap();
    let mut worst: f64 = 0.0;
    for (j, t) in tangents.iter().enumerate() {
        // h: 1e-6 of the coordinate's scale (1 au, or 0.02 au/d): truncation
        // error ∝ h² (measured: 2.8e-6 at h = 1e-5, 2.5e-7 at 3e-6) above
        // rounding ∝ ε/h.
        let h = if j % 6 < 3 { 1e-6 } else { 2e-8 };
        let plus = flat(&run(&choice, &perturbed(&sys, t, h), t_end));
        let minus = flat(&run(&choice, &perturbed(&sys, t, -h), t_end));
        let fd: Vec<f64> = plus
            .iter()
            .zip(&minus)
            .map(|(a, b)| (a - b) / (2.0 * h))
            .collect();
        let var = flat_t(&integ.output_tangents()[j]);
        let diff: f64 = fd
            .iter()
            .zip(&var)
            .map(|(a, b)| (a - b) * (a - b))
            .sum::<f64>()
            .sqrt();
        let size: f64 = var.iter().map(|a| a * a).sum::<f64>().sqrt();
        worst = worst.max(diff / size);
    }
    worst
}

#[test]
fn wisdom_holman_tangents_match_finite_differences() {
    // 333.3 d: not a whole number of steps, so the output partial step is
    // exercised too.
    let choice = VariationalIntegrator::WisdomHolman(WhSettings {
        step: Some(1.0),
        ..WhSettings::default()
    });
    let w = worst_disagreement(choice, 333.3);
    eprintln!("WH worst relative disagreement with central differences: {w:.2e}");
    assert!(w < 1e-6, "{w}");
}

#[test]
fn gauss_radau_tangents_match_finite_differences() {
    let choice = VariationalIntegrator::GaussRadau(GaussRadauSettings::default());
    let w = worst_disagreement(choice, 333.3);
    eprintln!("GR worst relative disagreement with central differences: {w:.2e}");
    assert!(w < 1e-6, "{w}");
}

#[test]
fn backwards_tangents_match_finite_differences() {
    let choice = VariationalIntegrator::WisdomHolman(WhSettings {
        step: Some(1.0),
        ..WhSettings::default()
    });
    let w = worst_disagreement(choice, -250.5);
    assert!(w < 1e-6, "{w}");
}

#[test]
fn orbit_is_unchanged_by_carrying_tangents() {
    // The main trajectory must be the same to the bit with or without
    // tangent vectors (same solver calls in the same order).
    let sys = system();
    let settings = WhSettings {
        step: Some(1.3),
        ..WhSettings::default()
    };
    let mut plain = WisdomHolman::new(&sys, settings).unwrap();
    let mut with = WisdomHolman::new(&sys, settings).unwrap();
    with.set_tangents(&[unit_tangent(&sys, InitialFrame::Barycentric, 1, 0)])
        .unwrap();
    let (mut a, mut b) = (Snapshot::zeros(3, 0.0), Snapshot::zeros(3, 0.0));
    plain.advance_to(500.7, &mut a).unwrap();
    with.advance_to(500.7, &mut b).unwrap();
    assert_eq!(a, b);
    let mut gp = GaussRadau::new(sys.clone(), GaussRadauSettings::default()).unwrap();
    let mut gw = GaussRadau::new(sys.clone(), GaussRadauSettings::default()).unwrap();
    gw.set_tangents(&[unit_tangent(&sys, InitialFrame::Barycentric, 2, 4)])
        .unwrap();
    gp.advance_to(500.7, &mut a).unwrap();
    gw.advance_to(500.7, &mut b).unwrap();
    assert_eq!(a, b);
}

#[test]
fn rv_jacobian_matches_finite_differences_in_both_frames() {
    // d v_z⋆ / d q by central differences of the RV itself, epochs on both
    // sides of the reference epoch, both integrators.
    let sys = system();
    let epochs = [-200.0, 35.5, -3.0, 150.0, 410.2];
    for choice in [
        VariationalIntegrator::WisdomHolman(WhSettings {
            step: Some(0.8),
            ..WhSettings::default()
        }),
        VariationalIntegrator::GaussRadau(GaussRadauSettings::default()),
    ] {
        for frame in [InitialFrame::Jacobi, InitialFrame::Barycentric] {
            let jac = rv_jacobian(&sys, choice, frame, &epochs).unwrap();
            assert_eq!(jac.d_rv.shape(), (5, 12));
            let scale = jac.d_rv.abs().max();
            for j in 0..12 {
                let t = unit_tangent(&sys, frame, 1 + j / 6, j % 6);
                let h = if j % 6 < 3 { 1e-6 } else { 2e-8 };
                let plus = rv_of(&choice, &perturbed(&sys, &t, h), &epochs);
                let minus = rv_of(&choice, &perturbed(&sys, &t, -h), &epochs);
                for i in 0..epochs.len() {
                    let fd = (plus[i] - minus[i]) / (2.0 * h);
                    let col_scale = jac.d_rv.column(j).abs().max().max(1e-3 * scale);
                    assert!(
                        (fd - jac.d_rv[(i, j)]).abs() < 1e-6 * col_scale,
                        "{choice:?} {frame:?} epoch {i} coord {j}: fd {fd} var {}",
                        jac.d_rv[(i, j)]
                    );
                }
            }
            // The RVs themselves are those of a plain run.
            let plain = rv_of(&choice, &sys, &epochs);
            for (a, b) in plain.iter().zip(&jac.rv) {
                assert!((a - b).abs() < 1e-9);
            }
        }
    }
}

fn rv_of(choice: &VariationalIntegrator, sys: &System, epochs: &[f64]) -> Vec<f64> {
    epochs
        .iter()
        .map(|&t| run(choice, sys, t).vel[0].z * apsidal::units::AU_PER_DAY_IN_M_S)
        .collect()
}

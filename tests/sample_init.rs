//! Starting ensembles: Gaussian balls (reference: the covariance asked for)
//! and typed errors for impossible starts.

use apsidal::fit::sample::{
    Ball, DEFAULT_STRETCH_SCALE, EnsembleSampler, LogTarget, SampleError, Walkers, gaussian_ball,
};
use nalgebra::DMatrix;
use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;

/// Flat target on the half-plane x₁ > 0 (−∞ elsewhere).
struct HalfPlane;
impl LogTarget for HalfPlane {
    fn ln_prob(&self, x: &[f64]) -> f64 {
        if x[1] > 0.0 { 0.0 } else { f64::NEG_INFINITY }
    }
}

struct Nowhere;
impl LogTarget for Nowhere {
    fn ln_prob(&self, _: &[f64]) -> f64 {
        f64::NAN
    }
}

#[test]
fn covariance_ball_has_the_requested_covariance() {
    // Flat target everywhere reachable: the ball is then exactly N(c, C).
    let c = DMatrix::from_row_slice(2, 2, &[4.0, 1.2, 1.2, 1.0]);
    let centre = [10.0, 100.0];
    let n = 20_000;
    let mut rng = ChaCha20Rng::seed_from_u64(4);
    let w = gaussian_ball(
        &HalfPlane,
        &centre,
        &Ball::Covariance(c.clone()),
        n,
        3,
        &mut rng,
    )
    .unwrap();
    let p = w.positions();
    let m = [0, 1].map(|k| (0..n).map(|i| p[2 * i + k]).sum::<f64>() / n as f64);
    for k in 0..2 {
        // Standard error of a mean: sqrt(C_kk / n).
        let se = (c[(k, k)] / n as f64).sqrt();
        assert!((m[k] - centre[k]).abs() < 5.0 * se, "mean {k}: {}", m[k]);
    }
    for (a, b) in [(0, 0), (0, 1), (1, 1)] {
        let s = (0..n)
            .map(|i| (p[2 * i + a] - m[a]) * (p[2 * i + b] - m[b]))
            .sum::<f64>()
            / (n - 1) as f64;
        // Gaussian: Var(s_ab) = (C_ab² + C_aa C_bb) / n (common practice).
        let se = ((c[(a, b)].powi(2) + c[(a, a)] * c[(b, b)]) / n as f64).sqrt();
        println!("cov ({a},{b}): {s:.4} vs {:.4}, se {se:.4}", c[(a, b)]);
        assert!((s - c[(a, b)]).abs() < 5.0 * se);
    }
}

#[test]
fn impossible_draws_are_redrawn() {
    // Centred on the boundary: about half of the first draws are impossible.
    let mut rng = ChaCha20Rng::seed_from_u64(8);
    let w = gaussian_ball(
        &HalfPlane,
        &[0.0, 0.0],
        &Ball::Diagonal(vec![1.0, 1.0]),
        10,
        60,
        &mut rng,
    )
    .unwrap();
    assert!(w.ln_probs().iter().all(|l| l.is_finite()));
    assert!((0..10).all(|i| w.positions()[2 * i + 1] > 0.0));
}

#[test]
fn impossible_starts_are_typed_errors() {
    let mut rng = ChaCha20Rng::seed_from_u64(1);
    let d = Ball::Diagonal(vec![1.0, 1.0]);
    assert!(matches!(
        gaussian_ball(&Nowhere, &[0.0, 0.0], &d, 4, 7, &mut rng),
        Err(SampleError::InitRejected {
            walker: 0,
            tries: 7
        })
    ));
    assert!(matches!(
        gaussian_ball(&HalfPlane, &[0.0, 1.0], &d, 3, 7, &mut rng),
        Err(SampleError::BadWalkerCount { .. })
    ));
    assert!(matches!(
        gaussian_ball(&HalfPlane, &[0.0, 1.0], &d, 2, 7, &mut rng),
        Err(SampleError::BadWalkerCount { .. })
    ));
    assert!(matches!(
        gaussian_ball(
            &HalfPlane,
            &[0.0, 1.0],
            &Ball::Diagonal(vec![1.0, -1.0]),
            4,
            7,
            &mut rng
        ),
        Err(SampleError::BadBall(_))
    ));
    let not_pd = DMatrix::from_row_slice(2, 2, &[1.0, 2.0, 2.0, 1.0]);
    assert!(matches!(
        gaussian_ball(
            &HalfPlane,
            &[0.0, 1.0],
            &Ball::Covariance(not_pd),
            4,
            7,
            &mut rng
        ),
        Err(SampleError::BadBall(_))
    ));
    assert!(matches!(
        Walkers::at_points(
            &HalfPlane,
            4,
            2,
            vec![0.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0, -1.0]
        ),
        Err(SampleError::NonFiniteStart { walker: 3 })
    ));
    let ok = Walkers::at_points(
        &HalfPlane,
        4,
        2,
        vec![0.0, 1.0, 0.1, 1.0, 0.0, 1.1, 0.2, 2.0],
    )
    .unwrap();
    assert!(matches!(
        EnsembleSampler::new(ok, 1.0, 0),
        Err(SampleError::BadStretchScale(_))
    ));
}

#[test]
fn walkers_never_leave_the_support() {
    let mut rng = ChaCha20Rng::seed_from_u64(12);
    let w = gaussian_ball(
        &HalfPlane,
        &[0.0, 1.0],
        &Ball::Diagonal(vec![0.5, 0.5]),
        8,
        20,
        &mut rng,
    )
    .unwrap();
    let mut s = EnsembleSampler::new(w, DEFAULT_STRETCH_SCALE, 3).unwrap();
    s.run(&HalfPlane, 300, &mut []).unwrap();
    let ch = s.chain();
    for row in 0..ch.n_steps() {
        for k in 0..ch.n_walkers() {
            assert!(ch.position(row, k)[1] > 0.0);
        }
    }
    let f = s.acceptance_fractions();
    assert_eq!(f.len(), 8);
    let mean = f.iter().sum::<f64>() / 8.0;
    assert!((mean - s.overall_acceptance()).abs() < 1e-12);
}

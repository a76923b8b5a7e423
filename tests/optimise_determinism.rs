//! Finite-difference Jacobians and multi-start results do not depend on the
//! number of rayon threads (bit-for-bit).

use apsidal::fit::optimise::{
    DifferenceScheme, EvaluationError, FdJacobian, JacobianSource, LmSettings, ResidualProblem,
    multi_start,
};
use nalgebra::DMatrix;

/// MGH09 (NIST StRD, data from memory; see optimise_nist.rs), residuals
/// only, so every Jacobian is a finite-difference one.
struct Mgh09;

const X: [f64; 11] = [
    4.0, 2.0, 1.0, 0.5, 0.25, 0.167, 0.125, 0.1, 0.0833, 0.0714, 0.0625,
];
const Y: [f64; 11] = [
    0.1957, 0.1947, 0.1735, 0.1600, 0.0844, 0.0627, 0.0456, 0.0342, 0.0323, 0.0235, 0.0246,
];

impl ResidualProblem for Mgh09 {
    fn n_params(&self) -> usize {
        4
    }
    fn n_residuals(&self) -> usize {
        X.len()
    }
    fn residuals(&self, b: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        for i in 0..X.len() {
            let x = X[i];
            out[i] = Y[i] - b[0] * (x * x + x * b[1]) / (x * x + x * b[2] + b[3]);
        }
        Ok(())
    }
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[test]
fn fd_jacobian_independent_of_thread_count() {
    let theta = [0.25, 0.39, 0.415, 0.39];
    let mut r0 = vec![0.0; X.len()];
    Mgh09.residuals(&theta, &mut r0).unwrap();
    for scheme in [DifferenceScheme::Forward, DifferenceScheme::Central] {
        let jac_with = |threads: usize| {
            pool(threads).install(|| {
                let mut fd = FdJacobian::new(scheme, 4, X.len());
                let mut jac = DMatrix::zeros(X.len(), 4);
                fd.evaluate(&Mgh09, &theta, &r0, &mut jac).unwrap();
                jac
            })
        };
        let one = jac_with(1);
        let two = jac_with(2);
        assert_eq!(bits(one.as_slice()), bits(two.as_slice()), "{scheme:?}");
        assert!(one.iter().any(|&v| v != 0.0));
    }
}

#[test]
fn multi_start_independent_of_thread_count() {
    let starts = vec![
        vec![25.0, 39.0, 41.5, 39.0],
        vec![0.25, 0.39, 0.415, 0.39],
        vec![0.2, 0.2, 0.1, 0.1],
        vec![1.0, 1.0, 1.0, 1.0],
    ];
    for scheme in [DifferenceScheme::Forward, DifferenceScheme::Central] {
        let settings = LmSettings {
            jacobian: JacobianSource::FiniteDifference(scheme),
            ..LmSettings::default()
        };
        let run =
            |threads: usize| pool(threads).install(|| multi_start(&Mgh09, &starts, &settings));
        let one = run(1);
        let two = run(2);
        assert_eq!(one.best, two.best);
        assert!(one.best.is_some());
        for (a, b) in one.outcomes.iter().zip(&two.outcomes) {
            let (a, b) = (a.as_ref().unwrap(), b.as_ref().unwrap());
            assert_eq!(bits(&a.theta), bits(&b.theta));
            assert_eq!(a.cost.to_bits(), b.cost.to_bits());
            assert_eq!(a.status, b.status);
            assert_eq!(a.iterations, b.iterations);
            assert_eq!(a.residual_evaluations, b.residual_evaluations);
        }
        // The best is the lowest χ² (ties: lowest index).
        let best = one.best.unwrap();
        let best_cost = one.outcomes[best].as_ref().unwrap().cost;
        for (i, o) in one.outcomes.iter().enumerate() {
            let c = o.as_ref().unwrap().cost;
            assert!(c > best_cost || (c == best_cost && i >= best));
        }
        println!(
            "{scheme:?}: best start {best}, χ² {best_cost:.10e}, statuses {:?}",
            one.outcomes
                .iter()
                .map(|o| o.as_ref().unwrap().status.clone())
                .collect::<Vec<_>>()
        );
    }
}

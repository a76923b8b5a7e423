//! Levenberg–Marquardt on NIST StRD nonlinear regression problems.
//!
//! Data, starting points, certified values and certified standard
//! deviations: NIST Statistical Reference Datasets, nonlinear regression
//! (https://www.itl.nist.gov/div898/strd/nls/nls_main.shtml), typed in from
//! memory. An independent check of every value: SciPy 1.17
//! `least_squares(method='lm')` from both starts, tests/fixtures/nist_scipy.py
//! → tests/fixtures/nist_scipy.json (from start 2 it agrees with the
//! certified values to ≥ 8.5 significant digits for Misra1a and BoxBOD and
//! 7.6 for MGH09, which confirms the data typed in here).
//!
//! Accuracy is measured as the log relative error LRE = −log₁₀|x − c|/|c|
//! (McCullough 1998, the measure used for StRD), i.e. significant digits.

use apsidal::fit::optimise::{
    CovarianceScaling, DifferenceScheme, EvaluationError, JacobianSource, LmReport, LmSettings,
    ResidualProblem, Status, covariance, least_squares,
};
use nalgebra::DMatrix;

#[derive(Clone, Copy)]
enum Model {
    /// y = b₁(1 − exp(−b₂x))  (Misra1a, BoxBOD)
    Rise,
    /// y = b₁(x² + x b₂)/(x² + x b₃ + b₄)  (MGH09)
    Rational,
}

struct Nist {
    name: &'static str,
    model: Model,
    x: Vec<f64>,
    y: Vec<f64>,
    starts: [Vec<f64>; 2],
    certified: Vec<f64>,
    certified_rss: f64,
    /// Certified standard deviations of the parameters (from memory).
    certified_sd: Vec<f64>,
}

impl Nist {
    fn f_and_grad(&self, b: &[f64], x: f64, grad: &mut [f64]) -> f64 {
        match self.model {
            Model::Rise => {
                let e = (-b[1] * x).exp();
                grad[0] = 1.0 - e;
                grad[1] = b[0] * x * e;
                b[0] * (1.0 - e)
            }
            Model::Rational => {
                let num = x * x + x * b[1];
                let den = x * x + x * b[2] + b[3];
                grad[0] = num / den;
                grad[1] = b[0] * x / den;
                grad[2] = -b[0] * num * x / (den * den);
                grad[3] = -b[0] * num / (den * den);
                b[0] * num / den
            }
        }
    }
}

impl ResidualProblem for Nist {
    fn n_params(&self) -> usize {
        self.certified.len()
    }
    fn n_residuals(&self) -> usize {
        self.x.len()
    }
    fn residuals(&self, b: &[f64], out: &mut [f64]) -> Result<(), EvaluationError> {
        let mut g = [0.0; 4];
        for ((o, &x), &y) in out.iter_mut().zip(&self.x).zip(&self.y) {
            *o = y - self.f_and_grad(b, x, &mut g);
        }
        Ok(())
    }
    fn has_jacobian(&self) -> bool {
        true
    }
    fn jacobian(&self, b: &[f64], out: &mut DMatrix<f64>) -> Result<(), EvaluationError> {
        let mut g = [0.0; 4];
        for (i, &x) in self.x.iter().enumerate() {
            self.f_and_grad(b, x, &mut g);
            for j in 0..b.len() {
                out[(i, j)] = -g[j];
            }
        }
        Ok(())
    }
}

fn misra1a() -> Nist {
    Nist {
        name: "Misra1a",
        model: Model::Rise,
        x: vec![
            77.6, 114.9, 141.1, 190.8, 239.9, 289.0, 332.8, 378.4, 434.8, 477.3, 536.8, 593.1,
            689.1, 760.0,
        ],
        y: vec![
            10.07, 14.73, 17.94, 23.93, 29.61, 35.18, 40.02, 44.82, 50.76, 55.05, 61.01, 66.40,
            75.47, 81.78,
        ],
        starts: [vec![500.0, 1e-4], vec![250.0, 5e-4]],
        certified: vec![2.389_421_291_8e2, 5.501_564_318_1e-4],
        certified_rss: 1.245_513_889_4e-1,
        certified_sd: vec![2.707_007_524_1e0, 7.266_868_843_6e-6],
    }
}

fn boxbod() -> Nist {
    Nist {
        name: "BoxBOD",
        model: Model::Rise,
        x: vec![1.0, 2.0, 3.0, 5.0, 7.0, 10.0],
        y: vec![109.0, 149.0, 149.0, 191.0, 213.0, 224.0],
        starts: [vec![1.0, 1.0], vec![100.0, 0.75]],
        certified: vec![2.138_094_088_9e2, 5.472_374_854_2e-1],
        certified_rss: 1.168_008_876_6e3,
        certified_sd: vec![1.235_451_517_6e1, 1.045_599_323_7e-1],
    }
}

fn mgh09() -> Nist {
    Nist {
        name: "MGH09",
        model: Model::Rational,
        x: vec![
            4.0, 2.0, 1.0, 0.5, 0.25, 0.167, 0.125, 0.1, 0.0833, 0.0714, 0.0625,
        ],
        y: vec![
            0.1957, 0.1947, 0.1735, 0.1600, 0.0844, 0.0627, 0.0456, 0.0342, 0.0323, 0.0235, 0.0246,
        ],
        starts: [vec![25.0, 39.0, 41.5, 39.0], vec![0.25, 0.39, 0.415, 0.39]],
        certified: vec![
            1.928_069_345_8e-1,
            1.912_823_287_3e-1,
            1.230_565_069_3e-1,
            1.360_623_306_8e-1,
        ],
        certified_rss: 3.075_056_038_5e-4,
        certified_sd: vec![
            1.143_531_222_7e-2,
            1.963_322_091_1e-1,
            8.084_203_123_2e-2,
            9.002_554_230_8e-2,
        ],
    }
}

/// SciPy reference for `name`, start index `k` (tests/fixtures/nist_scipy.json).
fn scipy(name: &str, k: usize) -> serde_json::Value {
    let text = include_str!("fixtures/nist_scipy.json");
    let all: serde_json::Value = serde_json::from_str(text).unwrap();
    all[name][k].clone()
}

fn floats(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// Log relative error: significant digits of `x` agreeing with `c`.
fn lre(x: f64, c: f64) -> f64 {
    if x == c {
        return 16.0;
    }
    (-((x - c).abs() / c.abs()).log10()).min(16.0)
}

fn min_lre(x: &[f64], c: &[f64]) -> f64 {
    x.iter()
        .zip(c)
        .map(|(&a, &b)| lre(a, b))
        .fold(f64::INFINITY, f64::min)
}

const SOURCES: [(&str, JacobianSource); 3] = [
    ("analytic", JacobianSource::Analytic),
    (
        "forward FD",
        JacobianSource::FiniteDifference(DifferenceScheme::Forward),
    ),
    (
        "central FD",
        JacobianSource::FiniteDifference(DifferenceScheme::Central),
    ),
];

fn run(p: &Nist, k: usize, source: JacobianSource) -> LmReport {
    run_with(p, k, source, true)
}

fn run_with(p: &Nist, k: usize, source: JacobianSource, monotone_scaling: bool) -> LmReport {
    let settings = LmSettings {
        jacobian: source,
        monotone_scaling,
        ..LmSettings::default()
    };
    least_squares(p, &p.starts[k], &settings).unwrap()
}

fn describe(p: &Nist, k: usize, label: &str, r: &LmReport) {
    println!(
        "{} start {} ({label}): {:?}, b = {:?}, RSS = {:.10e}, LRE(b) = {:.1}, LRE(RSS) = {:.1}, \
         iterations {}, residual evaluations {}, Jacobians {}, GN gain/RSS {:.1e}",
        p.name,
        k + 1,
        r.status,
        r.theta,
        r.cost,
        min_lre(&r.theta, &p.certified),
        lre(r.cost, p.certified_rss),
        r.iterations,
        r.residual_evaluations,
        r.jacobian_evaluations,
        r.predicted_gain / r.cost
    );
}

/// From NIST's second start: certified values to ≥ 6 significant digits
/// with every Jacobian source, and agreement with SciPy.
fn check_second_start(p: &Nist) {
    let sp = scipy(p.name, 1);
    let sp_b = floats(&sp["b"]);
    // The fixture itself reproduces the certified values (independent check
    // of the data typed in above). Measured: ≥ 8.5 digits for Misra1a and
    // BoxBOD, 7.6 for MGH09 (b₂; the problem is ill-conditioned), so the
    // check on the reference is 7 digits.
    let sp_lre = min_lre(&sp_b, &p.certified);
    println!("{}: SciPy vs NIST from start 2: LRE {sp_lre:.1}", p.name);
    assert!(sp_lre >= 7.0, "{}: SciPy vs NIST", p.name);
    for (label, source) in SOURCES {
        let r = run(p, 1, source);
        describe(p, 1, label, &r);
        assert!(
            r.status.is_converged(),
            "{} {label}: {:?}",
            p.name,
            r.status
        );
        assert!(min_lre(&r.theta, &p.certified) >= 6.0, "{} {label}", p.name);
        assert!(
            lre(r.cost, p.certified_rss) >= 6.0,
            "{} {label} RSS",
            p.name
        );
        assert!(
            min_lre(&r.theta, &sp_b) >= 6.0,
            "{} {label} vs SciPy",
            p.name
        );
    }
}

/// From NIST's first start: the report must be truthful. If it claims
/// convergence, the values must be the certified ones.
fn check_first_start(p: &Nist) {
    let variants = SOURCES
        .iter()
        .map(|&(l, s)| (l.to_string(), s, true))
        .chain(
            SOURCES
                .iter()
                .map(|&(l, s)| (format!("{l}, current-diagonal scaling"), s, false)),
        );
    for (label, source, monotone) in variants {
        let r = run_with(p, 0, source, monotone);
        describe(p, 0, &label, &r);
        if r.status.is_converged() {
            assert!(
                min_lre(&r.theta, &p.certified) >= 6.0,
                "{} start 1 {label}: claims {:?} but b = {:?}",
                p.name,
                r.status,
                r.theta
            );
        } else {
            println!("  -> not claimed as converged: {:?}", r.status);
        }
        assert!(r.cost.is_finite() && r.theta.iter().all(|v| v.is_finite()));
    }
}

/// Standard errors from s²(JᵀJ)⁻¹ at the certified optimum's neighbourhood
/// (our fit from start 2) against NIST's certified standard deviations and
/// SciPy's.
fn check_std_errors(p: &Nist) {
    let r = run(p, 1, JacobianSource::Analytic);
    let c = covariance(&r.jacobian, r.cost, CovarianceScaling::ResidualVariance).unwrap();
    let sp_se = floats(&scipy(p.name, 1)["std_err"]);
    println!(
        "{} std errors: ours {:?}, NIST (from memory) {:?}, SciPy {:?}; LRE vs NIST {:.1}, vs SciPy {:.1}; \
         SciPy vs NIST {:.1}",
        p.name,
        c.std_errors,
        p.certified_sd,
        sp_se,
        min_lre(&c.std_errors, &p.certified_sd),
        min_lre(&c.std_errors, &sp_se),
        min_lre(&sp_se, &p.certified_sd)
    );
    assert!(min_lre(&c.std_errors, &p.certified_sd) >= 6.0, "{}", p.name);
    assert!(min_lre(&c.std_errors, &sp_se) >= 6.0, "{}", p.name);
    assert_eq!(c.degrees_of_freedom, p.x.len() - p.certified.len());
    for i in 0..c.correlation.nrows() {
        assert!((c.correlation[(i, i)] - 1.0).abs() < 1e-15);
        for j in 0..c.correlation.ncols() {
            assert!(c.correlation[(i, j)].abs() <= 1.0 + 1e-12);
            assert!((c.correlation[(i, j)] - c.correlation[(j, i)]).abs() < 1e-12);
        }
    }
}

#[test]
fn misra1a_second_start() {
    check_second_start(&misra1a());
}

#[test]
fn misra1a_first_start() {
    check_first_start(&misra1a());
}

#[test]
fn misra1a_std_errors() {
    check_std_errors(&misra1a());
}

#[test]
fn boxbod_second_start() {
    check_second_start(&boxbod());
}

#[test]
fn boxbod_first_start() {
    check_first_start(&boxbod());
}

#[test]
fn boxbod_std_errors() {
    check_std_errors(&boxbod());
}

#[test]
fn mgh09_second_start() {
    check_second_start(&mgh09());
}

#[test]
fn mgh09_first_start() {
    check_first_start(&mgh09());
}

#[test]
fn mgh09_std_errors() {
    check_std_errors(&mgh09());
}

/// A claimed convergence elsewhere would be a lie: the status must not be
/// `Converged` when χ² is above the certified minimum by more than rounding.
#[test]
fn no_false_convergence_claims() {
    for p in [misra1a(), boxbod(), mgh09()] {
        for k in 0..2 {
            for (label, source) in SOURCES {
                let r = run(&p, k, source);
                if matches!(r.status, Status::Converged { .. }) {
                    assert!(
                        lre(r.cost, p.certified_rss) >= 6.0,
                        "{} start {} {label}: converged at RSS {}",
                        p.name,
                        k + 1,
                        r.cost
                    );
                }
            }
        }
    }
}

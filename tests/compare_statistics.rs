//! Keplerian-versus-dynamical statistics on synthetic data drawn from the
//! dynamical model. Outside references: the likelihood and criteria as
//! defined in DESIGN §3 (Gaussian with jitter), BIC = k ln n − 2 ln L
//! (Schwarz 1978), AICc (Hurvich & Tsai 1989), both recomputed here from
//! the residuals; the Jacobi construction (DESIGN §3: at t_ref the
//! dynamical RV equals the sum of Keplerians); a brute-force finer grid.

mod compare_support;

use apsidal::compare::statistics::{
    CompareError, GridSettings, ModelAt, compare_statistics, velocity_difference,
};
use compare_support::*;
use std::f64::consts::TAU;

#[test]
fn statistics_of_an_interacting_pair() {
    let planets = near_two_to_one();
    let obs = observations(&planets, 80, 1200.0, 3);
    let pair = Pair::new(&planets, &obs);
    let (k, d) = (pair.keplerian(), pair.dynamical());
    let s = compare_statistics(&k, &d, &GridSettings::default()).unwrap();

    // ln L, χ², BIC, AICc recomputed from residuals (jitters are zero).
    for (at, st) in [(&k, &s.keplerian), (&d, &s.dynamical)] {
        let mut r = vec![0.0; obs.len()];
        at.model.residuals(at.values, &mut r).unwrap();
        let chi2: f64 = r.iter().zip(&obs.err).map(|(r, e)| r * r / (e * e)).sum();
        let ln_l: f64 = -0.5
            * r.iter()
                .zip(&obs.err)
                .map(|(r, e)| r * r / (e * e) + (TAU * e * e).ln())
                .sum::<f64>();
        let n = obs.len() as f64;
        let kf = at.model.params.n_free() as f64;
        assert!((st.chi_square - chi2).abs() < 1e-9 * chi2.max(1.0));
        assert!((st.ln_likelihood - ln_l).abs() < 1e-9 * ln_l.abs());
        assert!((st.bic - (kf * n.ln() - 2.0 * ln_l)).abs() < 1e-8 * st.bic.abs());
        let aicc = 2.0 * kf - 2.0 * ln_l + 2.0 * kf * (kf + 1.0) / (n - kf - 1.0);
        assert!((st.aicc.unwrap() - aicc).abs() < 1e-8 * aicc.abs());
        // RMS per instrument by hand.
        for (i, rms) in st.residual_rms.iter().enumerate() {
            let v: Vec<f64> = r
                .iter()
                .zip(&obs.inst)
                .filter(|(_, j)| **j == i)
                .map(|(x, _)| *x)
                .collect();
            let want = (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt();
            assert_eq!(rms.points, v.len());
            assert!((rms.rms_m_s - want).abs() < 1e-12 * want);
        }
    }
    // Sign convention: dynamical − Keplerian. The data come from the
    // dynamical model, so it is far more likely.
    let diff = s.difference;
    assert!(
        (diff.ln_likelihood - (s.dynamical.ln_likelihood - s.keplerian.ln_likelihood)).abs() < 1e-9
    );
    assert!((diff.bic - (s.dynamical.bic - s.keplerian.bic)).abs() < 1e-9);
    assert_eq!(diff.n_free, 0); // edge-on coplanar adds no parameter
    assert!(
        diff.ln_likelihood > 100.0,
        "Δ ln L = {}",
        diff.ln_likelihood
    );
    assert!(diff.bic < -200.0);
    println!(
        "Δχ² = {:.2}, Δ ln L = {:.2}, ΔBIC = {:.2}, max|Δv| grid {:.3} m/s at data {:.3} m/s, step {:.3} d, {} points",
        diff.chi_square,
        diff.ln_likelihood,
        diff.bic,
        s.velocity.max_on_grid_m_s,
        s.velocity.max_at_data_m_s,
        s.velocity.grid_step_d,
        s.velocity.grid_points
    );
    assert_eq!(s.median_error_m_s, 1.0);

    // Jacobi construction: identical elements give identical RVs at t_ref.
    let at_ref = velocity_difference(&k, &d, &[T_REF]).unwrap()[0];
    assert!(at_ref.abs() < 1e-6, "Δv(t_ref) = {at_ref}");

    // The grid maximum against a brute-force grid ten times finer.
    let (t0, t1) = (s.first_epoch_d, s.last_epoch_d);
    let fine: Vec<f64> = (0..=10 * (s.velocity.grid_points - 1))
        .map(|i| t0 + (t1 - t0) * i as f64 / (10 * (s.velocity.grid_points - 1)) as f64)
        .collect();
    let dv_fine = velocity_difference(&k, &d, &fine).unwrap();
    let max_fine = dv_fine.iter().fold(0.0_f64, |m, x| m.max(x.abs()));
    assert!(s.velocity.max_on_grid_m_s <= max_fine + 1e-9);
    assert!(
        max_fine - s.velocity.max_on_grid_m_s < 0.01 * max_fine,
        "grid {} fine {max_fine}",
        s.velocity.max_on_grid_m_s
    );
    assert!(s.velocity.max_at_data_m_s <= max_fine + 1e-9);
    assert!((s.velocity.grid_step_d - 30.0 / 50.0).abs() < 0.01);
}

#[test]
fn small_planets_far_apart_give_a_small_difference() {
    let planets = far_apart();
    let obs = observations(&planets, 60, 800.0, 5);
    let pair = Pair::new(&planets, &obs);
    let (k, d) = (pair.keplerian(), pair.dynamical());
    let s = compare_statistics(&k, &d, &GridSettings::default()).unwrap();
    println!(
        "far apart: ΔBIC = {:.4}, max|Δv| = {:.5} m/s",
        s.difference.bic, s.velocity.max_on_grid_m_s
    );
    // A few Earth masses at ratio 7: the difference is far below the error.
    assert!(s.velocity.max_on_grid_m_s < 0.05);
    assert!(s.difference.bic.abs() < 1.0);
}

#[test]
fn mismatched_inputs_are_refused() {
    let planets = near_two_to_one();
    let obs = observations(&planets, 30, 600.0, 1);
    let other = observations(&planets, 31, 600.0, 2);
    let pair = Pair::over(&planets, &obs, &other);
    let Pair { km, kv, .. } = &pair;
    let (k, d) = (pair.keplerian(), pair.dynamical());
    assert!(matches!(
        compare_statistics(&k, &d, &GridSettings::default()),
        Err(CompareError::DifferentData(_))
    ));
    assert!(matches!(
        compare_statistics(&d, &k, &GridSettings::default()),
        Err(CompareError::WrongKinds(..))
    ));
    let short = ModelAt {
        model: km,
        values: &kv[1..],
    };
    assert!(matches!(
        compare_statistics(&short, &d, &GridSettings::default()),
        Err(CompareError::VectorLength { .. })
    ));
}

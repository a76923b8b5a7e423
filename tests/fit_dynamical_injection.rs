//! Injection–recovery of an interacting two-giant system near 2:1
//! (tests/injection_support: P = 42.0 d and 86.5 d, period ratio 2.06,
//! K = 35 and 22 m/s, coplanar at sin i = 0.8 around a 0.95 M☉ star; two
//! instruments with offsets −14 and +23 m/s and jitters 1.5 and 3 m/s;
//! 180 epochs over 1600 d, seed 20260). The outside reference is the
//! injected truth itself, integrated with the project's Gauss–Radau
//! integrator at tolerance 1e-9 (an independent integrator from the
//! Wisdom–Holman map the fit uses), plus Gaussian noise of documented size.
//!
//! Measured on this dataset (release build; numbers printed by the test):
//! the noise-free N-body RV differs from the sum of Keplerians with the
//! same osculating elements by up to 39 m/s (rms 11.5 m/s) over the
//! baseline, so the interaction is strong.
//!
//! * Keplerian fit against the osculating elements at t_ref: K and the
//!   offsets agree within 3σ, the periods and the eccentricity vector do
//!   not (b.P 41.746 ± 0.006 d against 42.0, −42σ): a Keplerian fit
//!   measures *mean* periods over the baseline, and near 2:1 the osculating
//!   period at t_ref is far from them. This is asserted, not hidden.
//! * Keplerian fit against the **baseline-mean elements** of the true
//!   integration (`compare::history::mean_orbits`: the Gauss–Radau run of
//!   the truth sampled every 0.25 d over T_REF ± 800 d; mean period of the
//!   RV fundamental from the line through the unwrapped λ, ⟨K⟩, mean
//!   eccentricity vector ⟨K e e^{iω⋆}⟩/⟨K⟩; the doc comment there gives
//!   the reasoning and its sources): P, K and offsets of both planets and
//!   b's eccentricity vector within 3σ. Measured (seed 20260) pulls: b.P
//!   +1.94, b.K +0.70, b.√e cos ω⋆ −1.26, b.√e sin ω⋆ −0.79, c.P +1.54,
//!   c.K +2.65, offsets −0.72, −1.14 (λ, not asserted: −0.30, −1.40).
//!   Mean elements: b P 41.734 d (osculating 41.57–42.18 over the span),
//!   e 0.132, ω⋆ precesses 5.9°; c P 87.622 d (86.15–88.29), e 0.090,
//!   ω⋆ 4.6°.
//! * **c's eccentricity vector is not c's mean one** (pulls −4.31, −4.15
//!   on seed 20260, and √e sin ω⋆ biased the same way on seeds 1–4:
//!   fitted −0.23…−0.27 against −0.119), and this is not noise: at 2:1 the
//!   first harmonic of c (frequency 2n_c) is exactly the sideband
//!   n_b + (2n_c − n_b) of b's fundamental phase-modulated by the
//!   near-resonant wobble (phase rms about b's mean line 0.071 rad, i.e.
//!   ≈ 2.5 m/s at 35 m/s, as large as K_c e_c ≈ 2 m/s), so a single
//!   Keplerian per planet gives that part of b's signal to c's
//!   eccentricity. What is true instead, and asserted: every fitted P, K,
//!   e-vector and offset agrees within 3σ with the *best Keplerian
//!   description of the noise-free truth* (the Keplerian least-squares fit
//!   to the Gauss–Radau RVs every 0.5 d over the span: the value a
//!   Keplerian fit converges to). That best Keplerian differs from the mean
//!   elements by < 1.4σ in every P, K, λ and in b's e-vector, and by −1.8σ
//!   and −3.8σ in c's √e cos ω⋆ and √e sin ω⋆: the mean elements are the
//!   Keplerian's target except for c's eccentricity vector. Over seeds 1–4
//!   (second test) the Keplerian pulls against the mean elements (32,
//!   without c's e-vector) have mean +0.24, rms 1.14, and against the best
//!   Keplerian (40) mean −0.01, rms 0.95; none beyond 3σ.
//! * Dynamical fit (coplanar, free sin i, Wisdom–Holman default step) from
//!   the Keplerian solution: P, K, e (as √e cos ω⋆, √e sin ω⋆) and offsets
//!   within 3σ of the truth; ΔBIC = BIC_kep − BIC_dyn > 10.
//! * Posterior (ensemble sampler, 32 walkers × 600 steps, burn-in 200):
//!   the true sin i lies inside the central 95 % interval (measured:
//!   median 0.889, 95 % [0.720, 0.994]). The run is short: the integrated
//!   autocorrelation times are 10–57 steps, so 400 kept steps are ≈ 7–40 τ,
//!   below the 50 τ convergence rule; the interval is indicative only.
//!
//! Dynamical pulls measured (seed 20260): b.P +2.15, c.√e cos ω⋆ −2.57, all
//! others |pull| < 2; over seeds 1–4 (second test) the 40 pulls of P, K,
//! √e cos ω⋆, √e sin ω⋆ and offsets have mean −0.08, rms 1.07, none beyond
//! 3σ. sin i is the weak parameter: over seeds 1–4 its optimum went once
//! to the bound 1 (held there by the driver) and twice to 0.52–0.56 with
//! delta-method σ ≈ 0.08, i.e. 2.6–3.8σ below the truth: its
//! covariance error bar is too small, and the posterior interval (above)
//! is the one to quote.
//!
//! Cost: ≈ 55 s for both tests run one after the other at a load average
//! of ≈ 15 on 2 cores (the posterior run is 36 s of it); the mean elements
//! and the best Keplerian of the truth add ≈ 0.3 s to each test.
mod injection_support;

use apsidal::compare::history::{MeanOrbit, SpanIntegrator, mean_orbits};
use apsidal::fit::best_fit::{FitResult, FitSettings, fit_model};
use apsidal::fit::models::{ModelKind, Observations, RvModel, TrendKind, default_parameters};
use apsidal::model::dynamical::{DynamicalModel, DynamicalWorkspace};
use apsidal::model::keplerian::keplerian_rv;
use apsidal::nbody::EventSettings;
use apsidal::workflow::posterior::{PosteriorSettings, sample_posterior};
use injection_support as inj;

const SEED: u64 = 20_260;

fn model_of(kind: ModelKind, obs: &Observations) -> RvModel {
    // Start 0.3 % off in period, 15 % in K, 10° in λ, 20° in ω⋆, e = 0.1.
    let params =
        default_parameters(kind, &inj::guesses(0.003, 0.15, 10.0), obs, TrendKind::None).unwrap();
    RvModel::new(
        obs.clone(),
        kind,
        inj::STAR_MASS,
        inj::T_REF,
        &inj::planet_names(),
        TrendKind::None,
        params,
    )
    .unwrap()
}

/// The model's start overwritten by the same-named values of `prev`.
fn start_from(model: &RvModel, prev: &FitResult) -> Vec<f64> {
    let mut s = model.params.start_full();
    for (n, &v) in prev.names.iter().zip(&prev.values) {
        if let Some(i) = model.params.index_of(n) {
            s[i] = v;
        }
    }
    s
}

/// The true value of every fitted parameter, by name.
fn truth_of(name: &str) -> Option<f64> {
    for p in &inj::PLANETS {
        let (sc, ss) = p.sqrt_basis();
        let v = match name.strip_prefix(p.name).and_then(|r| r.strip_prefix('.')) {
            Some("period") => p.period,
            Some("semi_amplitude") => p.k,
            Some("sqrt_e_cos_w") => sc,
            Some("sqrt_e_sin_w") => ss,
            Some("mean_longitude") => p.mean_longitude_deg(),
            _ => continue,
        };
        return Some(v);
    }
    for (k, inst) in inj::INSTRUMENTS.iter().enumerate() {
        if name == format!("{inst}.offset") {
            return Some(inj::OFFSETS[k]);
        }
        if name == format!("{inst}.jitter") {
            return Some(inj::JITTERS[k]);
        }
    }
    (name == "sin_i").then_some(inj::SIN_I)
}

/// The baseline-mean elements of the injected system over the data span
/// (T_REF ± 800 d, where `inj::synthetic` draws its epochs): the truth for
/// a Keplerian fit (`compare::history::mean_orbits`, which explains the
/// averaging). From the same Gauss–Radau run (ε = 1e-9, both ways from
/// T_REF) that made the data, sampled every 0.25 d.
fn mean_truth() -> Vec<MeanOrbit> {
    let mut ws = DynamicalWorkspace::default();
    DynamicalModel::new(inj::T_REF)
        .build_system(&inj::true_params(), &mut ws)
        .unwrap();
    let half = 800.0;
    mean_orbits(
        ws.system(),
        inj::T_REF - half,
        inj::T_REF + half,
        6401,
        SpanIntegrator::GaussRadau { tolerance: 1e-9 },
        EventSettings::default(),
    )
    .unwrap()
}

/// The Keplerian truth by name: P, K, eccentricity vector and mean
/// longitude from the baseline-mean elements, offsets and jitters as
/// injected.
fn keplerian_truth_of(mean: &[MeanOrbit], name: &str) -> Option<f64> {
    for (p, m) in inj::PLANETS.iter().zip(mean) {
        let (sc, ss) = m.sqrt_basis();
        let v = match name.strip_prefix(p.name).and_then(|r| r.strip_prefix('.')) {
            Some("period") => m.period_d,
            Some("semi_amplitude") => m.semi_amplitude_m_s,
            Some("sqrt_e_cos_w") => sc,
            Some("sqrt_e_sin_w") => ss,
            Some("mean_longitude") => m.mean_longitude.to_degrees(),
            _ => continue,
        };
        return Some(v);
    }
    truth_of(name)
}

/// The best single-Keplerian description of the noise-free truth: the
/// Keplerian fit (from `start`) to the Gauss–Radau RVs, without noise,
/// every 0.5 d over the data span (T_REF ± 800 d), with the instruments,
/// offsets and quoted errors of `inj::synthetic`. It is the value a
/// Keplerian fit of noisy data converges to (the least-squares "pseudo-true"
/// parameters of a model that cannot describe the signal exactly).
fn best_keplerian_of_truth(start: &FitResult) -> FitResult {
    let n = 3201;
    let t: Vec<f64> = (0..n)
        .map(|i| inj::T_REF - 800.0 + 0.5 * i as f64)
        .collect();
    let inst: Vec<usize> = (0..n).map(|i| usize::from(i % 3 == 0)).collect();
    let obs = Observations {
        rv: inj::truth_rv(&t, &inst),
        err: inst.iter().map(|&k| inj::ERRORS[k]).collect(),
        t,
        inst,
        instruments: inj::INSTRUMENTS.iter().map(|s| s.to_string()).collect(),
    };
    let km = model_of(ModelKind::Keplerian, &obs);
    let f = fit_model(&km, &[start_from(&km, start)], &FitSettings::default()).unwrap();
    assert!(f.converged, "{}", f.status);
    f
}

/// The value of parameter `name` in a fit.
fn value(f: &FitResult, name: &str) -> Option<f64> {
    f.names.iter().position(|n| n == name).map(|i| f.values[i])
}

/// Print truth, fit, σ and pull of every parameter against `truth`; return
/// the pulls by name.
fn pulls(label: &str, f: &FitResult, truth: &dyn Fn(&str) -> Option<f64>) -> Vec<(String, f64)> {
    println!(
        "{label}: lnL {:.2} chi2 {:.1} k {} BIC {:.2} converged {} rounds {} ({})",
        f.ln_likelihood, f.chi_square, f.n_free, f.bic, f.converged, f.rounds, f.status
    );
    let mut out = Vec::new();
    for ((n, &v), s) in f.names.iter().zip(&f.values).zip(&f.std_errors) {
        let t = truth(n).unwrap();
        match s {
            Some(s) => {
                let mut d = v - t;
                if n.ends_with("mean_longitude") {
                    d = (d + 180.0).rem_euclid(360.0) - 180.0;
                }
                println!(
                    "  {n:>18} truth {t:>10.4} fit {v:>12.5} ± {s:>9.5}  pull {:>7.2}",
                    d / s
                );
                out.push((n.clone(), d / s));
            }
            None => println!("  {n:>18} truth {t:>10.4} fit {v:>12.5}"),
        }
    }
    out
}

fn pull(p: &[(String, f64)], name: &str) -> f64 {
    p.iter().find(|(n, _)| n == name).unwrap().1
}

fn print_mean(mean: &[MeanOrbit]) {
    for (p, m) in inj::PLANETS.iter().zip(mean) {
        let (sc, ss) = m.sqrt_basis();
        println!(
            "  mean {}: P {:.4} d (osculating {:.4}–{:.4}), K {:.3} m/s, e {:.4} (osculating {:.4}–{:.4}), ω⋆ {:.2}° (Δω⋆ over the span {:.2}°), √e cos ω⋆ {:.4}, √e sin ω⋆ {:.4}, λ {:.3}°, phase rms {:.4} rad",
            p.name,
            m.period_d,
            m.osculating_period_range_d.0,
            m.osculating_period_range_d.1,
            m.semi_amplitude_m_s,
            m.e,
            m.osculating_e_range.0,
            m.osculating_e_range.1,
            m.omega_star.to_degrees(),
            m.omega_star_change.to_degrees(),
            sc,
            ss,
            m.mean_longitude.to_degrees(),
            m.phase_rms
        );
    }
}

/// The noise-free N-body truth against the sum of Keplerians with the same
/// osculating elements: the size of the interaction over the baseline.
fn interaction_size(obs: &Observations) -> (f64, f64) {
    let truth = inj::truth_rv(&obs.t, &obs.inst);
    let (mut max, mut ss) = (0.0f64, 0.0);
    for (i, &t) in obs.t.iter().enumerate() {
        let kep: f64 = inj::PLANETS
            .iter()
            .map(|p| {
                keplerian_rv(
                    t,
                    p.period,
                    p.k,
                    p.e,
                    p.omega_star_deg.to_radians(),
                    p.mean_anomaly_deg.to_radians(),
                    inj::T_REF,
                )
                .unwrap()
            })
            .sum::<f64>()
            + inj::OFFSETS[obs.inst[i]];
        let d = truth[i] - kep;
        max = max.max(d.abs());
        ss += d * d;
    }
    (max, (ss / obs.len() as f64).sqrt())
}

#[test]
fn dynamical_fit_recovers_injected_interacting_system() {
    let obs = inj::synthetic(SEED, 180, 1600.0);
    let (dmax, drms) = interaction_size(&obs);
    println!("N-body − Keplerian (same elements): max {dmax:.2} m/s, rms {drms:.2} m/s");
    assert!(drms > 5.0, "the injected interaction must be measurable");

    // The fit's integrator (WH, default step) against the truth's (GR 1e-9)
    // at the true parameters: the model error the fit carries.
    let wh = DynamicalModel::new(inj::T_REF);
    let mut ws = DynamicalWorkspace::default();
    let mut v = vec![0.0; obs.len()];
    wh.star_rv(&inj::true_params(), &obs.t, &obs.inst, &mut ws, &mut v)
        .unwrap();
    let gr = inj::truth_rv(&obs.t, &obs.inst);
    let wh_err = v
        .iter()
        .zip(&gr)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("WH (default step) − GR (1e-9) at the truth: max {wh_err:.4} m/s");
    assert!(wh_err < 0.5, "WH model error {wh_err} m/s");

    // Keplerian fit from a perturbed start.
    let km = model_of(ModelKind::Keplerian, &obs);
    let kf = fit_model(&km, &[km.params.start_full()], &FitSettings::default()).unwrap();
    assert!(kf.converged, "{}", kf.status);
    let kp = pulls(
        "Keplerian against the osculating truth at t_ref",
        &kf,
        &truth_of,
    );
    // Physical, documented above: Keplerian periods are mean periods, not
    // the osculating periods at t_ref; here they differ by ≫ 3σ.
    assert!(pull(&kp, "b.period").abs() > 10.0);
    // Against the baseline-mean elements of the true integration.
    let mean = mean_truth();
    print_mean(&mean);
    let km_pulls = pulls("Keplerian against the baseline-mean truth", &kf, &|n| {
        keplerian_truth_of(&mean, n)
    });
    let best = best_keplerian_of_truth(&kf);
    let kb_pulls = pulls(
        "Keplerian against the best Keplerian of the noise-free truth",
        &kf,
        &|n| value(&best, n),
    );
    println!("best Keplerian of the truth − mean elements, in σ of the data fit:");
    for ((n, &s), &b) in kf.names.iter().zip(&kf.std_errors).zip(&best.values) {
        if let (Some(s), Some(m)) = (s, keplerian_truth_of(&mean, n)) {
            println!("  {n:>18} {:>8.2}", (b - m) / s);
        }
    }
    let c_evec = ["c.sqrt_e_cos_w", "c.sqrt_e_sin_w"];
    for (name, p) in &km_pulls {
        if name.ends_with("mean_longitude")
            || name.ends_with("jitter")
            || c_evec.contains(&name.as_str())
        {
            continue;
        }
        assert!(
            p.abs() < 3.0,
            "Keplerian {name}: pull {p} against the mean truth"
        );
    }
    // c's first harmonic (2 n_c) coincides with the sideband of b's
    // resonant phase wobble (n_b + (2 n_c − n_b)): a Keplerian gives it to
    // c's eccentricity (module docs). Its e-vector is far from c's mean one…
    let c_gap = pull(&km_pulls, c_evec[0]).hypot(pull(&km_pulls, c_evec[1]));
    assert!(c_gap > 3.0, "c's e-vector {c_gap} σ from its mean");
    // …and every fitted P, K, e-vector and offset agrees with the best
    // Keplerian description of the noise-free truth.
    for (name, p) in &kb_pulls {
        if name.ends_with("mean_longitude") || name.ends_with("jitter") {
            continue;
        }
        assert!(
            p.abs() < 3.0,
            "Keplerian {name}: pull {p} against the best Keplerian"
        );
    }

    // Dynamical fit (coplanar, free sin i, WH default) from the Keplerian
    // solution.
    let dm = model_of(ModelKind::CoplanarSinI, &obs);
    let t0 = std::time::Instant::now();
    let df = fit_model(&dm, &[start_from(&dm, &kf)], &FitSettings::default()).unwrap();
    println!("dynamical fit took {:.2?}", t0.elapsed());
    let dp = pulls("CoplanarSinI", &df, &truth_of);
    assert!(df.converged, "{}", df.status);
    // The optimum must be at least as good as the truth (else the driver stalled).
    let mut truth_full = df.values.clone();
    for (i, n) in df.names.iter().enumerate() {
        truth_full[i] = truth_of(n).unwrap();
    }
    for inst in inj::INSTRUMENTS {
        let i = dm.params.index_of(&format!("{inst}.jitter")).unwrap();
        truth_full[i] = df.values[i];
    }
    let ll_truth = dm.ln_likelihood(&truth_full);
    println!(
        "lnL at the truth (fitted jitters) {ll_truth:.2}, at the fit {:.2}",
        df.ln_likelihood
    );
    assert!(df.ln_likelihood >= ll_truth - 1e-6);
    for (name, p) in &dp {
        if name.ends_with("mean_longitude") || name == "sin_i" {
            continue;
        }
        assert!(p.abs() < 3.0, "dynamical {name}: pull {p}");
    }
    let dbic = kf.bic - df.bic;
    println!("ΔBIC (Keplerian − dynamical) = {dbic:.2}");
    assert!(dbic > 10.0, "ΔBIC {dbic}");

    // Short posterior run of the dynamical model from the optimum.
    let dir = std::env::temp_dir().join(format!("apsidal-injection-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let settings = PosteriorSettings {
        walkers: Some(32),
        steps: 600,
        burn_in: Some(200),
        thin: 1,
        checkpoint_every: 1000,
        seed: 11,
    };
    let t0 = std::time::Instant::now();
    let summary = sample_posterior(
        &dm,
        &df,
        &settings,
        &dir.join("chain.ron"),
        &dir.join("samples.csv"),
        false,
        &mut [],
    )
    .unwrap();
    println!(
        "posterior: {:.2?}, acceptance {:.3}, converged (chain > 50 τ) {}",
        t0.elapsed(),
        summary.acceptance,
        summary.converged
    );
    for (n, tau) in &summary.autocorrelation_times {
        println!("  τ({n}) = {tau:.1} steps");
    }
    let s = summary
        .intervals
        .iter()
        .find(|i| i.name == "sin_i")
        .unwrap();
    println!(
        "sin i: median {:.3}, 68 % [{:.3}, {:.3}], 95 % [{:.3}, {:.3}] (truth {})",
        s.median,
        s.lower_68,
        s.upper_68,
        s.lower_95,
        s.upper_95,
        inj::SIN_I
    );
    std::fs::remove_dir_all(&dir).ok();
    assert!(s.lower_95 <= inj::SIN_I && inj::SIN_I <= s.upper_95);
}

/// The dynamical fit's error bars over a few noise realisations (same
/// system and cadence, seeds 1–4): pulls (fit − truth)/σ of P, K,
/// √e cos ω⋆, √e sin ω⋆ and the offsets. With 40 pulls (correlated within a
/// seed) the rms of standard-normal pulls is 1 ± ≈ 0.15; the bounds below
/// allow for the maximum-likelihood jitters being biased low, which widens
/// the pulls, and catch error bars off by a factor of two or more.
#[test]
fn dynamical_pulls_over_seeds() {
    let mean = mean_truth();
    print_mean(&mean);
    let mut all = Vec::new();
    let (mut kep_mean, mut kep_best) = (Vec::new(), Vec::new());
    let mut best: Option<FitResult> = None;
    for seed in 1..=4u64 {
        let obs = inj::synthetic(seed, 180, 1600.0);
        let km = model_of(ModelKind::Keplerian, &obs);
        let kf = fit_model(&km, &[km.params.start_full()], &FitSettings::default()).unwrap();
        assert!(kf.converged, "seed {seed}: {}", kf.status);
        let best = best.get_or_insert_with(|| best_keplerian_of_truth(&kf));
        let against_mean = pulls(&format!("seed {seed} Keplerian (mean truth)"), &kf, &|n| {
            keplerian_truth_of(&mean, n)
        });
        let against_best = pulls(
            &format!("seed {seed} Keplerian (best Keplerian)"),
            &kf,
            &|n| value(best, n),
        );
        for ((n, vm), (_, vb)) in against_mean.into_iter().zip(against_best) {
            if n.ends_with("mean_longitude") || n.ends_with("jitter") {
                continue;
            }
            if !n.starts_with("c.sqrt_e") {
                kep_mean.push(vm);
            }
            kep_best.push(vb);
        }
        let dm = model_of(ModelKind::CoplanarSinI, &obs);
        let df = fit_model(&dm, &[start_from(&dm, &kf)], &FitSettings::default()).unwrap();
        let p = pulls(&format!("seed {seed}"), &df, &truth_of);
        println!("  held at a bound: {:?}", df.held_at_bound);
        assert!(df.converged, "seed {seed}: {}", df.status);
        for (n, v) in p {
            if !(n.ends_with("mean_longitude") || n == "sin_i") {
                all.push(v);
            }
        }
    }
    let stats = |v: &[f64]| {
        let n = v.len() as f64;
        let mean = v.iter().sum::<f64>() / n;
        let rms = (v.iter().map(|p| p * p).sum::<f64>() / n).sqrt();
        (mean, rms, v.iter().filter(|p| p.abs() > 3.0).count())
    };
    for (label, v) in [
        ("mean elements (without c's e-vector)", &kep_mean),
        ("best Keplerian of the truth", &kep_best),
    ] {
        let (m, r, b) = stats(v);
        println!(
            "Keplerian against the {label}: {} pulls: mean {m:.3}, rms {r:.3}, beyond 3σ: {b}",
            v.len()
        );
        assert!(m.abs() < 0.5, "{label}: mean pull {m}");
        assert!(r > 0.6 && r < 1.6, "{label}: rms pull {r}");
        assert!(b <= 2, "{label}: {b} pulls beyond 3σ");
    }
    let n = all.len() as f64;
    let mean = all.iter().sum::<f64>() / n;
    let rms = (all.iter().map(|p| p * p).sum::<f64>() / n).sqrt();
    let beyond3 = all.iter().filter(|p| p.abs() > 3.0).count();
    println!(
        "{} pulls: mean {mean:.3}, rms {rms:.3}, beyond 3σ: {beyond3}",
        all.len()
    );
    assert!(mean.abs() < 0.5, "mean pull {mean}");
    assert!(rms > 0.6 && rms < 1.6, "rms pull {rms}");
    assert!(beyond3 <= 2, "{beyond3} pulls beyond 3σ");
}

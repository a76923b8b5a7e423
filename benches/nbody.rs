//! N-body RV evaluation: Gauss–Radau (IAS15-type) and Wisdom–Holman
//! against the general-purpose `ode_solvers` Dop853 at matched RV accuracy.
//!
//! System: "two giants near 2:1" (tests/nbody_support), 400 epochs every
//! 10 d over 4000 d, reference epoch in the middle (t_ref = 2000 d), the
//! star's barycentric v_z at every epoch, integrating both ways from t_ref.
//! Run: `cargo bench --bench nbody -- --warm-up-time 1 --measurement-time 3`.

#[path = "../tests/nbody_support/mod.rs"]
mod support;

use std::hint::black_box;

use apsidal::nbody::gauss_radau::{GaussRadau, GaussRadauSettings, IterationStop, StepCriterion};
use apsidal::nbody::wisdom_holman::{Corrector, CorrectorForm, Kick, WhSettings, WisdomHolman};
use apsidal::nbody::{Integrator, Snapshot, System};
use apsidal::units::{G, au_per_day_to_m_s};
use criterion::{Criterion, criterion_group, criterion_main};
use ode_solvers::{Dop853, SVector};

const N_EPOCHS: usize = 400;
const SPACING: f64 = 10.0;
const T_REF: f64 = 2000.0;

fn epochs() -> Vec<f64> {
    (0..N_EPOCHS).map(|i| i as f64 * SPACING).collect()
}

/// Star RVs (m/s) at `epochs` (sorted) with Gauss–Radau at tolerance
/// `eps` and the default settings (step rule of Pham, Rein & Spiegel 2024,
/// rate-predicted iteration stop, fixed-size inner loop): one integrator
/// forward from t_ref, one backward.
fn gr_rv(sys: &System, epochs: &[f64], eps: f64, out: &mut [f64]) -> u64 {
    gr_rv_stop(sys, epochs, eps, IterationStop::PredictedRate, out)
}

/// As [`gr_rv`] with a chosen predictor–corrector stop.
fn gr_rv_stop(sys: &System, epochs: &[f64], eps: f64, stop: IterationStop, out: &mut [f64]) -> u64 {
    gr_rv_with(
        sys,
        epochs,
        eps,
        StepCriterion::PerBody2024,
        false,
        stop,
        out,
    )
}

/// As [`gr_rv`] with a chosen step rule, iteration stop and, with
/// `general`, the general slice-based inner loop (the code before the
/// fixed-size copy).
fn gr_rv_with(
    sys: &System,
    epochs: &[f64],
    eps: f64,
    crit: StepCriterion,
    general: bool,
    stop: IterationStop,
    out: &mut [f64],
) -> u64 {
    let st = GaussRadauSettings {
        tolerance: eps,
        ..GaussRadauSettings::default()
    };
    let n = sys.masses.len();
    let mut snap = Snapshot::zeros(n, 0.0);
    let split = epochs.partition_point(|t| *t < T_REF);
    let mut fwd = GaussRadau::new(sys.clone(), st).unwrap();
    fwd.set_step_criterion(crit);
    fwd.set_general_loop(general);
    fwd.set_iteration_stop(stop);
    for i in split..epochs.len() {
        fwd.advance_to(epochs[i], &mut snap).unwrap();
        out[i] = au_per_day_to_m_s(snap.vel[0].z);
    }
    let mut back = GaussRadau::new(sys.clone(), st).unwrap();
    back.set_step_criterion(crit);
    back.set_general_loop(general);
    back.set_iteration_stop(stop);
    for i in (0..split).rev() {
        back.advance_to(epochs[i], &mut snap).unwrap();
        out[i] = au_per_day_to_m_s(snap.vel[0].z);
    }
    // Force evaluations: one at each step start, seven per iteration.
    let evals = |g: &GaussRadau| g.steps() + g.rejected_steps() + 7 * g.iterations();
    evals(&fwd) + evals(&back)
}

/// A Wisdom–Holman configuration: corrector, kick and the form of the
/// output corrector.
#[derive(Debug, Clone, Copy)]
struct WhConfig {
    corrector: Corrector,
    kick: Kick,
    form: CorrectorForm,
}

impl WhConfig {
    fn name(&self) -> String {
        format!("{:?}_{:?}_{:?}", self.corrector, self.kick, self.form)
    }
}

/// Star RVs (m/s) at `epochs` (sorted) with Wisdom–Holman at step `h`
/// (days) in configuration `cfg`: one integrator forward from t_ref, one
/// backward; outputs from a partial step on a copy (the main sequence is
/// untouched).
fn wh_rv(sys: &System, epochs: &[f64], h: f64, cfg: WhConfig, out: &mut [f64]) {
    let mut snap = Snapshot::zeros(sys.masses.len(), 0.0);
    let split = epochs.partition_point(|t| *t < T_REF);
    let mut fwd = wh_of(sys, h, cfg);
    for i in split..epochs.len() {
        fwd.advance_to(epochs[i], &mut snap).unwrap();
        out[i] = au_per_day_to_m_s(snap.vel[0].z);
    }
    let mut back = wh_of(sys, h, cfg);
    for i in (0..split).rev() {
        back.advance_to(epochs[i], &mut snap).unwrap();
        out[i] = au_per_day_to_m_s(snap.vel[0].z);
    }
}

/// A Wisdom–Holman integrator of `sys` with step `h` (days) in
/// configuration `cfg`.
fn wh_of(sys: &System, h: f64, cfg: WhConfig) -> WisdomHolman {
    let st = WhSettings {
        step: Some(h),
        corrector: cfg.corrector,
        kick: cfg.kick,
        ..WhSettings::default()
    };
    let mut wh = WisdomHolman::new(sys, st).unwrap();
    wh.set_corrector_form(cfg.form);
    wh
}

/// Star v_z (m/s) at `out.len()` epochs spread over the first step after
/// t_ref (every output a partial step from the boundary state at t_ref).
fn wh_outputs_alone(sys: &System, h: f64, cfg: WhConfig, out: &mut [f64]) {
    let mut snap = Snapshot::zeros(sys.masses.len(), 0.0);
    let mut wh = wh_of(sys, h, cfg);
    let n = out.len() as f64;
    for (i, o) in out.iter_mut().enumerate() {
        wh.advance_to(T_REF + h * (i as f64 + 0.5) / n, &mut snap)
            .unwrap();
        *o = au_per_day_to_m_s(snap.vel[0].z);
    }
}

type State = SVector<f64, 18>;

/// Newton's equations for three point masses, first-order form.
struct Newton {
    masses: [f64; 3],
}

impl ode_solvers::System<f64, State> for Newton {
    fn system(&self, _t: f64, y: &State, dy: &mut State) {
        for i in 0..9 {
            dy[i] = y[9 + i];
            dy[9 + i] = 0.0;
        }
        for i in 0..3 {
            for j in (i + 1)..3 {
                let d = [
                    y[3 * j] - y[3 * i],
                    y[3 * j + 1] - y[3 * i + 1],
                    y[3 * j + 2] - y[3 * i + 2],
                ];
                let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
                let f = G / (r2 * r2.sqrt());
                for c in 0..3 {
                    dy[9 + 3 * i + c] += f * self.masses[j] * d[c];
                    dy[9 + 3 * j + c] -= f * self.masses[i] * d[c];
                }
            }
        }
    }
}

/// Star RVs (m/s) with Dop853 (rtol = atol = `tol`) from t_ref both ways,
/// dense output every SPACING days (one interval past the last epoch: the
/// final dense point of ode_solvers 0.6.2 is wrong, see
/// tests/nbody_reference_ode.rs).
fn dop_rv(sys: &System, tol: f64, out: &mut [f64]) -> u64 {
    let mut y0 = State::zeros();
    for i in 0..3 {
        for c in 0..3 {
            y0[3 * i + c] = sys.state.pos[i][c];
            y0[9 + 3 * i + c] = sys.state.vel[i][c];
        }
    }
    let masses = [sys.masses[0], sys.masses[1], sys.masses[2]];
    let i_ref = (T_REF / SPACING) as usize;
    let fwd_span = (N_EPOCHS - 1 - i_ref) as f64 * SPACING;
    let mut f = Dop853::new(
        Newton { masses },
        0.0,
        fwd_span + SPACING,
        SPACING,
        y0,
        tol,
        tol,
    );
    let sf = f.integrate().unwrap();
    for (k, y) in f.y_out().iter().enumerate().take(N_EPOCHS - i_ref) {
        out[i_ref + k] = au_per_day_to_m_s(y[11]);
    }
    let back_span = i_ref as f64 * SPACING;
    let mut b = Dop853::new(
        Newton { masses },
        0.0,
        -back_span - SPACING,
        -SPACING,
        y0,
        tol,
        tol,
    );
    let sb = b.integrate().unwrap();
    for (k, y) in b.y_out().iter().enumerate().take(i_ref + 1) {
        out[i_ref - k] = au_per_day_to_m_s(y[11]);
    }
    (sf.num_eval + sb.num_eval) as u64
}

fn max_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

fn bench(c: &mut Criterion) {
    let sys = support::two_giants(T_REF);
    let ep = epochs();
    let mut reference = vec![0.0; N_EPOCHS];
    let n_ref = gr_rv(&sys, &ep, 1e-9, &mut reference);
    println!("Gauss–Radau ε = 1e-9: {n_ref} force evaluations");
    let mut tmp = vec![0.0; N_EPOCHS];
    gr_rv(&sys, &ep, 1e-11, &mut tmp);
    let gr_err = max_diff(&tmp, &reference);
    let amp = reference.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    println!(
        "RV amplitude {amp:.1} m/s; Gauss–Radau ε = 1e-9 vs 1e-11: max |Δv| = {gr_err:.2e} m/s"
    );
    for eps in [1e-9, 1e-7, 1e-6, 1e-4] {
        let n_ev = gr_rv_stop(&sys, &ep, eps, IterationStop::RoundOff2015, &mut tmp);
        println!(
            "Gauss–Radau ε = {eps:.0e}, 2015 iteration stop: max |Δv| vs default ε = 1e-9 = {:.2e} m/s, {n_ev} force evaluations",
            max_diff(&tmp, &reference)
        );
    }
    let n_old = gr_rv_with(
        &sys,
        &ep,
        1e-9,
        StepCriterion::Global2015,
        true,
        IterationStop::RoundOff2015,
        &mut tmp,
    );
    println!(
        "Gauss–Radau ε = 1e-9, 2015 global step rule: max |Δv| vs default = {:.2e} m/s, {n_old} force evaluations",
        max_diff(&tmp, &reference)
    );
    let mut gr_ladder = Vec::new();
    // Steps of 1, 2, 5 per decade, so that the matched pairs below are
    // within ≈ 2.5× in accuracy rather than 10×.
    for eps in [
        1e-8, 2e-8, 5e-8, 1e-7, 2e-7, 5e-7, 1e-6, 2e-6, 5e-6, 1e-5, 2e-5, 5e-5, 1e-4, 2e-4, 5e-4,
        1e-3, 1e-2,
    ] {
        let n_ev = gr_rv(&sys, &ep, eps, &mut tmp);
        let e = max_diff(&tmp, &reference);
        println!(
            "Gauss–Radau ε = {eps:.0e}: max |Δv| vs ε = 1e-9 = {e:.2e} m/s, {n_ev} force evaluations"
        );
        gr_ladder.push((eps, e));
    }
    // Pairs at matched accuracy: for each Dop853 tolerance, the loosest
    // Gauss–Radau ε whose RV error is no larger than Dop853's.
    let mut pairs = Vec::new();
    for tol in [1e-11, 1e-13, 1e-15] {
        let n_ev = dop_rv(&sys, tol, &mut tmp);
        let e = max_diff(&tmp, &reference);
        println!("Dop853 tol = {tol:.0e}: {n_ev} force evaluations");
        let (eps, e_gr) = gr_ladder
            .iter()
            .rev()
            .find(|x| x.1 <= e)
            .copied()
            .unwrap_or((1e-9, gr_err));
        println!(
            "Dop853 tol = {tol:.0e}: max |Δv| vs Gauss–Radau(1e-9) = {e:.2e} m/s; matched by Gauss–Radau ε = {eps:.0e} ({e_gr:.2e} m/s)"
        );
        pairs.push((tol, eps));
    }

    // Wisdom–Holman: for each configuration the longest step of a short
    // ladder whose RV error is ≤ 1 mm/s; each is timed. The baseline is
    // the code before the modified kick and the first-order output
    // corrector (RemoveH2, plain kick, kernels at the outputs).
    let cfg = |corrector, kick, form| WhConfig {
        corrector,
        kick,
        form,
    };
    use CorrectorForm::{FirstOrder, Kernels};
    use Kick::{Modified, Plain};
    let configs = [
        cfg(Corrector::Off, Plain, FirstOrder),
        cfg(Corrector::RemoveH2, Plain, Kernels),
        cfg(Corrector::RemoveH2, Plain, FirstOrder),
        cfg(Corrector::RemoveH4, Plain, Kernels),
        cfg(Corrector::RemoveH2, Modified, FirstOrder),
        cfg(Corrector::RemoveH4, Modified, FirstOrder),
        cfg(Corrector::RemoveH6, Modified, FirstOrder),
        cfg(Corrector::RemoveH8, Modified, Kernels),
        cfg(Corrector::RemoveH8, Modified, FirstOrder),
    ];
    let mut wh_rows: Vec<(WhConfig, f64, f64)> = Vec::new();
    for c in configs {
        for h in [8.0, 6.0, 5.0, 4.5, 4.0, 3.0, 2.5, 2.0, 1.5, 1.0, 0.5, 0.25] {
            wh_rv(&sys, &ep, h, c, &mut tmp);
            let e = max_diff(&tmp, &reference);
            println!(
                "Wisdom–Holman {} h = {h} d: max |Δv| vs Gauss–Radau(1e-9) = {e:.2e} m/s",
                c.name()
            );
            if e <= 1e-3 {
                wh_rows.push((c, h, e));
                break;
            }
        }
    }
    // Dop853 is matched to the last configuration (the most accurate
    // corrector with the modified kick and first-order outputs).
    let wh_err = wh_rows.last().map_or(1e-3, |r| r.2);
    let (wh_tol, wh_dop_err) = [1e-5, 1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 1e-13]
        .into_iter()
        .map(|tol| {
            let n_ev = dop_rv(&sys, tol, &mut tmp);
            let e = max_diff(&tmp, &reference);
            println!("Dop853 tol = {tol:.0e}: max |Δv| = {e:.2e} m/s, {n_ev} force evaluations");
            (tol, e)
        })
        .find(|x| x.1 <= wh_err)
        .expect("a Dop853 tolerance as accurate as Wisdom–Holman");
    println!(
        "matched: Dop853 tol = {wh_tol:.0e} ({wh_dop_err:.2e} m/s) to Wisdom–Holman {wh_err:.2e} m/s"
    );

    let mut out_w = vec![0.0; N_EPOCHS];
    let mut g = c.benchmark_group("nbody_rv_400_epochs");
    g.bench_function(
        format!("dop853_tol{wh_tol:.0e}_matching_wisdom_holman"),
        |b| b.iter(|| dop_rv(black_box(&sys), wh_tol, &mut out_w)),
    );
    for (c, h, _) in &wh_rows {
        g.bench_function(format!("wisdom_holman_{}_h{h}d", c.name()), |b| {
            b.iter(|| wh_rv(black_box(&sys), &ep, *h, *c, &mut out_w))
        });
    }
    // The floor under any Wisdom–Holman evaluation of this benchmark: its
    // 400 outputs alone (each a partial step from a copy, as
    // `Integrator::advance_to` makes them), here 400 outputs inside the
    // first step of the fastest configuration, so no main step is taken.
    // A 10× margin over Dop853 needs the whole evaluation below a tenth of
    // the Dop853 row above; this row shows whether the outputs alone fit.
    // The cheapest output there is (no corrector, plain kick: two drifts
    // and one kick) is timed too, at the same step.
    if let Some(&(c, h, _)) = wh_rows.last() {
        for c in [c, cfg(Corrector::Off, Plain, FirstOrder)] {
            g.bench_function(
                format!("wisdom_holman_{}_h{h}d_400_outputs_alone", c.name()),
                |b| b.iter(|| wh_outputs_alone(black_box(&sys), h, c, &mut out_w)),
            );
        }
    }
    let mut out = vec![0.0; N_EPOCHS];
    g.bench_function("gauss_radau_eps1e-9", |b| {
        b.iter(|| gr_rv(black_box(&sys), &ep, 1e-9, &mut out))
    });
    // Baselines: the 2015 step rule and iteration stop with the general
    // loop (the code before the step-rule change) and with the fixed-size
    // loop.
    for (name, general) in [("general_loop", true), ("fixed_loop", false)] {
        g.bench_function(format!("gauss_radau_eps1e-9_rule2015_{name}"), |b| {
            b.iter(|| {
                gr_rv_with(
                    black_box(&sys),
                    &ep,
                    1e-9,
                    StepCriterion::Global2015,
                    general,
                    IterationStop::RoundOff2015,
                    &mut out,
                )
            })
        });
    }
    g.bench_function("gauss_radau_eps1e-9_rule2024_general_loop", |b| {
        b.iter(|| {
            gr_rv_with(
                black_box(&sys),
                &ep,
                1e-9,
                StepCriterion::PerBody2024,
                true,
                IterationStop::PredictedRate,
                &mut out,
            )
        })
    });
    // Baseline of the iteration stop: the default but with the stop of
    // Rein & Spiegel (2015) as published (the code before that change).
    g.bench_function("gauss_radau_eps1e-9_stop2015", |b| {
        b.iter(|| {
            gr_rv_stop(
                black_box(&sys),
                &ep,
                1e-9,
                IterationStop::RoundOff2015,
                &mut out,
            )
        })
    });
    for (tol, eps) in pairs {
        g.bench_function(format!("dop853_tol{tol:.0e}"), |b| {
            b.iter(|| dop_rv(black_box(&sys), tol, &mut out))
        });
        g.bench_function(
            format!("gauss_radau_eps{eps:.0e}_matching_tol{tol:.0e}"),
            |b| b.iter(|| gr_rv(black_box(&sys), &ep, eps, &mut out)),
        );
        g.bench_function(format!("gauss_radau_eps{eps:.0e}_stop2015"), |b| {
            b.iter(|| {
                gr_rv_stop(
                    black_box(&sys),
                    &ep,
                    eps,
                    IterationStop::RoundOff2015,
                    &mut out,
                )
            })
        });
    }
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);

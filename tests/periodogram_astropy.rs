//! GLS power, Baluev FAP, FAP levels, best-fit sinusoids and the spectral
//! window against astropy 8.0 (`astropy.timeseries.LombScargle`, exact
//! `method='slow'`, `normalization='standard'`, floating mean) and numpy.
//! Reference values: tests/fixtures/periodogram_astropy.json, made by
//! tests/fixtures/periodogram_astropy.py (committed beside it).

use apsidal::periodogram::{
    BaluevFap, FrequencyGrid, GlsSeries, GridSettings, PeelSettings, PeelStop, gls_power,
    peel_signals, spectral_window,
};
use serde_json::Value;

fn fixture() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/periodogram_astropy.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

fn data(fx: &Value) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    (floats(&fx["t"]), floats(&fx["y"]), floats(&fx["sigma"]))
}

fn grid(fx: &Value, t: &[f64]) -> FrequencyGrid {
    let settings = GridSettings {
        oversampling: fx["grid"]["oversampling"].as_f64().unwrap(),
        shortest_period: fx["grid"]["shortest_period"].as_f64(),
        longest_period: None,
    };
    FrequencyGrid::for_epochs(t, &settings).unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    if a == b { 0.0 } else { (a - b).abs() / b.abs() }
}

#[test]
fn grid_follows_the_documented_rule() {
    // The script builds the grid independently from the same rule.
    let fx = fixture();
    let (t, _, _) = data(&fx);
    let g = grid(&fx, &t);
    assert_eq!(g.len(), fx["grid"]["len"].as_u64().unwrap() as usize);
    assert!(rel(g.start(), fx["grid"]["start"].as_f64().unwrap()) < 1e-15);
    assert!(rel(g.step(), fx["grid"]["step"].as_f64().unwrap()) < 1e-15);
    assert!(rel(g.last(), fx["fap_f_max"].as_f64().unwrap()) < 1e-14);
}

#[test]
fn gls_power_matches_astropy_slow() {
    let fx = fixture();
    let (t, y, s) = data(&fx);
    let g = grid(&fx, &t);
    let expected = floats(&fx["power"]);
    let power = gls_power(&t, &y, &s, &g).unwrap();
    assert_eq!(power.len(), expected.len());
    let worst = power
        .iter()
        .zip(&expected)
        .map(|(p, e)| rel(*p, *e))
        .fold(0.0, f64::max);
    let worst_abs = power
        .iter()
        .zip(&expected)
        .map(|(p, e)| (p - e).abs())
        .fold(0.0, f64::max);
    println!("GLS power: max relative difference to astropy = {worst:e}, absolute {worst_abs:e}");
    assert!(worst <= 1e-8, "max relative difference {worst:e}");

    // Direct evaluation (no recurrence) agrees as well.
    let gls = GlsSeries::new(&t, &y, &s).unwrap();
    let worst_direct = (0..g.len())
        .step_by(37)
        .map(|k| rel(gls.power(g.frequency(k)).unwrap(), expected[k]))
        .fold(0.0, f64::max);
    println!("GLS power (direct): max relative difference = {worst_direct:e}");
    assert!(worst_direct <= 1e-8);
}

#[test]
fn baluev_fap_and_levels_match_astropy() {
    let fx = fixture();
    let (t, _, s) = data(&fx);
    // astropy snaps maximum_frequency onto its own 5-per-peak grid before
    // the FAP (LombScargle.autofrequency); the script records that value.
    let f_max = fx["fap_f_max_astropy"].as_f64().unwrap();
    let fap = BaluevFap::new(&t, &s, f_max).unwrap();
    let mut worst = 0.0f64;
    for (z, expected) in floats(&fx["fap_powers"])
        .iter()
        .zip(floats(&fx["fap_baluev"]))
    {
        let got = fap.probability(*z).unwrap();
        let r = rel(got, expected);
        println!("z = {z:.6}: FAP {got:e} vs astropy {expected:e} (rel {r:e})");
        worst = worst.max(r);
    }
    println!("Baluev FAP: max relative difference to astropy = {worst:e}");
    assert!(worst <= 1e-8);

    let mut worst_davies = 0.0f64;
    for (z, expected) in floats(&fx["fap_powers"])
        .iter()
        .zip(floats(&fx["fap_davies"]))
    {
        worst_davies = worst_davies.max(rel(fap.davies_bound(*z).unwrap(), expected));
    }
    println!("Davies bound: max relative difference to astropy = {worst_davies:e}");
    assert!(worst_davies <= 1e-8);

    // astropy's level comes from scipy's Levenberg–Marquardt root with its
    // default tolerance (xtol ≈ 1.5e-8 relative), so the levels are compared
    // at that tolerance, and each of ours must reproduce its target FAP.
    let mut worst_level = 0.0f64;
    for (target, expected) in floats(&fx["fap_targets"])
        .iter()
        .zip(floats(&fx["fap_levels"]))
    {
        let z = fap.power_level(*target).unwrap();
        assert!(rel(fap.probability(z).unwrap(), *target) < 1e-10);
        worst_level = worst_level.max(rel(z, expected));
    }
    println!("FAP levels: max relative difference to astropy = {worst_level:e}");
    assert!(worst_level <= 1e-8);
}

#[test]
fn best_fit_sinusoid_matches_astropy_model_parameters() {
    let fx = fixture();
    let (t, y, s) = data(&fx);
    let gls = GlsSeries::new(&t, &y, &s).unwrap();
    let mut worst = 0.0f64;
    for fit in fx["fits"].as_array().unwrap() {
        let f = fit["frequency"].as_f64().unwrap();
        let ours = gls.fit(f).unwrap();
        // astropy: y = constant + A_s sin(2π f t) + A_c cos(2π f t), t absolute.
        let (c0, a_s, a_c) = (
            fit["constant"].as_f64().unwrap(),
            fit["sin"].as_f64().unwrap(),
            fit["cos"].as_f64().unwrap(),
        );
        let amp = a_s.hypot(a_c);
        assert!(
            rel(ours.amplitude, amp) < 1e-8,
            "{f}: {} vs {amp}",
            ours.amplitude
        );
        assert!(rel(ours.offset, c0) < 1e-8, "{f}: {} vs {c0}", ours.offset);
        for &ti in &t {
            let w = std::f64::consts::TAU * f * ti;
            let theirs = c0 + a_s * w.sin() + a_c * w.cos();
            worst = worst.max((ours.value_at(ti) - theirs).abs() / amp);
        }
    }
    println!("sinusoid model: max |difference| / amplitude = {worst:e}");
    assert!(worst < 1e-8);
}

#[test]
fn spectral_window_matches_numpy() {
    let fx = fixture();
    let (t, _, s) = data(&fx);
    let len = fx["window_len"].as_u64().unwrap() as usize;
    let g = FrequencyGrid::new(0.0, fx["window_step"].as_f64().unwrap(), len).unwrap();
    for (weights, key) in [(Some(&s[..]), "window_weighted"), (None, "window_uniform")] {
        let expected = floats(&fx[key]);
        let got = spectral_window(&t, weights, &g).unwrap();
        // Absolute: W spans 1 down to ~1e-6; numpy's phases 2π f t are
        // rounded at |f t| ≲ 2000, ≈ 1e-12 of a radian.
        let worst = got
            .iter()
            .zip(&expected)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        println!("{key}: max |difference| to numpy = {worst:e}");
        assert!(worst < 1e-10);
        assert!((got[0] - 1.0).abs() < 1e-14);
    }
}

#[test]
fn peeling_recovers_the_injected_signals() {
    let fx = fixture();
    let (t, y, s) = data(&fx);
    let g = grid(&fx, &t);
    let out = peel_signals(&t, &y, &s, &g, &PeelSettings::default()).unwrap();
    for d in &out.detections {
        println!(
            "P = {:.4} d, power {:.4}, FAP {:.3e}, K = {:.3} m/s, phase {:.4}",
            d.period, d.power, d.fap, d.sinusoid.amplitude, d.sinusoid.phase
        );
    }
    println!("stop: {:?}", out.stop);
    assert_eq!(out.detections.len(), 2);
    assert!(matches!(out.stop, PeelStop::NotSignificant { fap, .. } if fap > 1e-3));
    let baseline = t.iter().cloned().fold(f64::MIN, f64::max) - t[0];
    let injected = fx["signals"].as_array().unwrap();
    // Each injected signal is found within a tenth of the peak width 1/T
    // in frequency, and its amplitude within 3 noise-limited σ_K ≈ σ √(2/N).
    for sig in injected {
        let p = sig["period"].as_f64().unwrap();
        let k = sig["amplitude"].as_f64().unwrap();
        let d = out
            .detections
            .iter()
            .find(|d| (d.frequency - 1.0 / p).abs() < 0.1 / baseline)
            .unwrap_or_else(|| panic!("period {p} d not recovered"));
        assert!((d.sinusoid.amplitude - k).abs() < 3.0 * 3.0 * (2.0f64 / 80.0).sqrt());
    }
}

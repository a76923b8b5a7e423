//! Make the demo data in `demo-data/` from apsidal's own N-body model with
//! the fixed seed, and print how strongly each system interacts.
//!
//! ```sh
//! cargo run --release --example make_demo_data
//! ```
//!
//! For each invented system it prints the largest |v_dyn − v_kep| over the
//! baseline (the N-body RV versus the sum of Keplerians with the same
//! osculating elements at the reference epoch, both without offsets), the
//! median RV error, and whether the system survives 10⁴ years either side
//! of the reference epoch (Wisdom–Holman, default step, close encounters
//! below one mutual Hill radius, ejections and star collisions stop it).

use std::path::Path;

use apsidal::demo::{DEMO_SEED, Truth, generate};
use apsidal::model::dynamical::{DynamicalWorkspace, IntegratorChoice};
use apsidal::model::keplerian::keplerian_model_rv;
use apsidal::nbody::wisdom_holman::Corrector;

fn max_difference(
    truth: &Truth,
    t0: f64,
    t1: f64,
) -> Result<(f64, f64), Box<dyn std::error::Error>> {
    let n = ((t1 - t0) / 0.5).ceil() as usize + 1;
    let t: Vec<f64> = (0..n).map(|k| t0 + 0.5 * k as f64).collect();
    let inst = vec![0; n];
    let mut dynamical = vec![0.0; n];
    let mut kepler = vec![0.0; n];
    truth.dynamical_model().star_rv(
        &truth.dynamical_params(),
        &t,
        &inst,
        &mut DynamicalWorkspace::default(),
        &mut dynamical,
    )?;
    keplerian_model_rv(&truth.keplerian_params(), &t, &inst, &mut kepler)?;
    let (mut worst, mut at) = (0.0_f64, t0);
    for k in 0..n {
        let d = (dynamical[k] - kepler[k]).abs();
        if d > worst {
            worst = d;
            at = t[k];
        }
    }
    Ok((worst, at))
}

fn survives(truth: &Truth, years: f64) -> Result<(), Box<dyn std::error::Error>> {
    let mut model = truth.dynamical_model();
    model.integrator = IntegratorChoice::WisdomHolman {
        step: None,
        corrector: Corrector::Off,
    };
    let span = years * 365.25;
    let t = [truth.reference_epoch - span, truth.reference_epoch + span];
    let mut out = [0.0; 2];
    model.star_rv(
        &truth.dynamical_params(),
        &t,
        &[0, 0],
        &mut DynamicalWorkspace::default(),
        &mut out,
    )?;
    Ok(())
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    for sys in generate(DEMO_SEED)? {
        let dir = root.join(&sys.name);
        std::fs::create_dir_all(&dir)?;
        for (name, text) in &sys.files {
            apsidal::atomic::write_atomic(&dir.join(name), text.as_bytes())?;
        }
        // The files just written must load and validate like any run file.
        let run = apsidal::config::load_run_file(dir.join("run.ron"))?;
        let data = run.read_data()?;
        let (worst, at) = max_difference(&sys.truth, data.first_epoch(), data.last_epoch())?;
        println!(
            "{}: {} epochs ({}), baseline {:.1} d = {:.2} yr, median error {:.2} m/s",
            sys.truth.star_name,
            data.len(),
            data.instruments()
                .iter()
                .map(|i| format!("{} {}", i.name(), i.len()))
                .collect::<Vec<_>>()
                .join(", "),
            data.baseline(),
            data.baseline() / 365.25,
            data.median_error()
        );
        println!("  max |v_dyn - v_kep| over the baseline: {worst:.3} m/s (at t = {at:.1})");
        for p in &sys.truth.planets {
            println!(
                "  {}: P = {} d, m = {} M_J, K = {:.3} m/s, e = {}, i = {} deg",
                p.name, p.period, p.mass_jupiter, p.semi_amplitude, p.eccentricity, p.inclination
            );
        }
        match survives(&sys.truth, 1e4) {
            Ok(()) => println!("  survives ±10^4 yr (Wisdom-Holman): no event"),
            Err(e) => println!("  does NOT survive ±10^4 yr: {e}"),
        }
        println!("  wrote {}", dir.display());
    }
    Ok(())
}

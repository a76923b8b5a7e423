//! Simulate the invented demo system Tellan at chosen epochs with the
//! library API, from the N-body model and from the sum of Keplerians with
//! the same starting elements, and print how far they drift apart.
//!
//! ```sh
//! cargo run --release --example simulate_system
//! ```

use apsidal::workflow::simulate::{SimulateSettings, SimulationModel, epochs_between, simulate};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    // The run file embedded in the crate (no disk access needed).
    let (run, _data) = apsidal::demo::load_demo("tellan")?;
    // One epoch a year over the demo baseline, plus a few nights.
    let mut epochs = epochs_between(2_455_000.0, 2_459_500.0, 365.25)?;
    epochs.extend([2_457_250.0, 2_457_250.5, 2_457_251.0]);
    let dynamical = simulate(
        &run,
        &epochs,
        &SimulateSettings::default(),
        "tellan/run.ron",
    )?;
    let kepler = simulate(
        &run,
        &epochs,
        &SimulateSettings {
            model: SimulationModel::Keplerian,
            ..SimulateSettings::default()
        },
        "tellan/run.ron",
    )?;
    println!(
        "Tellan (invented), elements osculating at {}:",
        dynamical.reference_epoch
    );
    println!("  time [d]        v_dyn [m/s]  v_kep [m/s]  difference [m/s]");
    for ((t, vd), vk) in epochs.iter().zip(&dynamical.rv).zip(&kepler.rv) {
        println!("  {t:<14.2}  {vd:>11.3}  {vk:>11.3}  {:>10.3}", vd - vk);
    }
    // The same epochs with 2 m/s of noise, seeded: a table ready to fit.
    let noisy = simulate(
        &run,
        &epochs,
        &SimulateSettings {
            noise: Some(2.0),
            seed: 42,
            ..SimulateSettings::default()
        },
        "tellan/run.ron",
    )?;
    let table = noisy.to_table();
    println!("first lines of the noisy table:");
    for line in table.lines().take(5) {
        println!("  {line}");
    }
    Ok(())
}

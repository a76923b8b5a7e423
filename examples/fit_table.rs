//! Read one demo RV table, find its periods with the periodogram, turn the
//! peaks into starting guesses and fit a two-planet Keplerian model by
//! maximum likelihood.
//!
//! ```sh
//! cargo run --release --example fit_table
//! ```

use std::path::Path;

use apsidal::config::observations_of;
use apsidal::data::{InstrumentLabel, TableSource, read_tables};
use apsidal::fit::best_fit::{FitSettings, fit_model};
use apsidal::fit::models::{ModelKind, RvModel, TrendKind, default_parameters};
use apsidal::periodogram::{GridSettings, PeelSettings};
use apsidal::workflow::search::{SearchSettings, guesses_from_detections, search};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/verrow/korva.txt");
    let data = read_tables(
        &[TableSource {
            path: path.clone(),
            instrument: InstrumentLabel::FromColumn,
        }],
        None,
    )?;
    println!(
        "{}: {} RVs over {:.0} d",
        path.display(),
        data.len(),
        data.baseline()
    );

    // 1. Periodogram with peeling, periods from 2 d to the baseline. Two
    //    signals at most: a third peak would be the first harmonic (P/2) of
    //    the eccentric outer orbit, which the Keplerian fit models itself.
    let settings = SearchSettings {
        grid: GridSettings {
            shortest_period: Some(2.0),
            ..GridSettings::default()
        },
        peel: PeelSettings {
            max_signals: 2,
            ..PeelSettings::default()
        },
    };
    let report = search(&data, &settings)?;
    for d in &report.detections {
        println!(
            "  peak at {:.3} d, amplitude {:.2} m/s, FAP {:.1e}",
            d.period, d.sinusoid.amplitude, d.fap
        );
    }

    // 2. Starting guesses (circular orbits) and default priors.
    let t_ref = data.suggested_reference_epoch();
    let guesses = guesses_from_detections(&report.detections, t_ref);
    let obs = observations_of(&data);
    let params = default_parameters(ModelKind::Keplerian, &guesses, &obs, TrendKind::None)?;
    let names: Vec<String> = guesses.iter().map(|g| g.name.clone()).collect();
    let model = RvModel::new(
        obs,
        ModelKind::Keplerian,
        0.92,
        t_ref,
        &names,
        TrendKind::None,
        params,
    )?;

    // 3. Maximum-likelihood fit from the guesses.
    let fit = fit_model(
        &model,
        &[model.params.start_full()],
        &FitSettings::default(),
    )?;
    println!(
        "Keplerian fit: ln L = {:.2}, chi2 = {:.1} for {} points, converged: {}",
        fit.ln_likelihood, fit.chi_square, fit.n_points, fit.converged
    );
    for (k, name) in fit.names.iter().enumerate() {
        let err = fit.std_errors[k].map_or(String::new(), |s| format!(" ± {s:.4}"));
        println!("  {name:<22} {:.4}{err}", fit.values[k]);
    }
    Ok(())
}

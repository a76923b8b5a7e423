//! Shared pieces of the stability tests: the Orrin-442 fixture model and a
//! small synthetic samples CSV in the sampler's layout.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

use apsidal::config::{build_model, load_run_file};
use apsidal::fit::models::{ModelKind, RvModel};

/// The fixture run file (invented two-planet system near 2:1).
pub fn run_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/orrin442/run.ron")
}

/// Its Keplerian model (the run file's default model list).
pub fn model() -> RvModel {
    let run = load_run_file(run_file()).unwrap();
    let data = run.read_data().unwrap();
    build_model(&run, &data, ModelKind::Keplerian, "run.ron").unwrap()
}

/// A samples CSV (header `walker,step,ln_prob,<free names>,<derived>`, as
/// `write_samples_csv` writes it) of `n` rows about the model's start,
/// with the outer period swept from 50 d to 84 d so that the rows near the
/// inner planet's 41.3 d are unstable and the others not.
pub fn samples_csv(model: &RvModel, n: usize) -> String {
    let params = model.params.parameters();
    let free = model.params.free_indices();
    let start = model.params.start_full();
    let mut s = String::from("walker,step,ln_prob");
    for &i in free {
        s.push(',');
        s.push_str(&params[i].name);
    }
    s.push_str(",b.eccentricity\n");
    for r in 0..n {
        let mut full = start.clone();
        let ic = model.params.index_of("c.period").unwrap();
        full[ic] = 50.0 + 34.0 * (r as f64) / ((n - 1) as f64);
        let il = model.params.index_of("b.mean_longitude").unwrap();
        full[il] = (full[il] + 7.0 * r as f64) % 360.0;
        s.push_str(&format!("{},{},{:?}", r % 4, r / 4, -100.0 - r as f64));
        for &i in free {
            s.push_str(&format!(",{:?}", full[i]));
        }
        s.push_str(",0.08\n");
    }
    s
}

/// A fresh scratch folder under the target directory.
pub fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("apsidal-stability-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

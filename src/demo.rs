//! The demo systems: two *invented* planetary systems whose RV tables,
//! run files and injected ("true") parameters are embedded in the crate,
//! so that the examples, the tests and the command line run anywhere.
//!
//! * **Tellan** (`tellan`): a K dwarf (0.78 M☉, 0.75 R☉) with two giant
//!   planets just wide of the 2:1 commensurability (P ≈ 60.2 d and 125.1 d,
//!   ratio 2.078), coplanar at i = 84°. Their mutual pull makes the
//!   periastra precess visibly over the twelve-year baseline: the dynamical
//!   RV departs from the Keplerian one with the same osculating elements by
//!   far more than the errors (the "interacting" case).
//! * **Verrow** (`verrow`): a G dwarf (0.92 M☉) with a hot Neptune-mass
//!   planet (21 d) and a Saturn-mass planet (153 d), period ratio 7.3: the
//!   interaction stays below the errors (the "kinematic-adequate" case).
//!
//! Star, planet and instrument names (KORVA, LISSE) are invented; no real
//! catalogue object is meant.
//!
//! The files are made by [`generate`] (called by `examples/make_demo_data.rs`)
//! from the project's own N-body model
//! ([`crate::model::dynamical::DynamicalModel::star_rv`], Gauss–Radau at
//! tolerance 1e-9) with a fixed seed ([`DEMO_SEED`], ChaCha8): epochs in
//! observing seasons of about seven months a year, nights clustered in
//! dark-time runs, a random hour within the night, per-point errors drawn
//! uniformly in each instrument's range, and Gaussian noise of variance
//! σ² + s² (s the instrument's jitter). `tests/demo_data.rs` checks that
//! the generator reproduces the committed files byte for byte.

use std::path::{Path, PathBuf};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use serde::{Deserialize, Serialize};

use crate::config::{RunFile, RunFileError, parse_run_str};
use crate::data::{Dataset, DatasetBuilder, TableError};
use crate::kepler::semi_amplitude;
use crate::model::dynamical::{
    DynamicalError, DynamicalModel, DynamicalParams, DynamicalPlanet, DynamicalWorkspace,
    IntegratorChoice, Trend as DynTrend,
};
use crate::model::keplerian::{KeplerianParams, PlanetSignal, Trend};
use crate::units::{R_SUN_AU, jupiter_to_sun};

/// The seed the committed demo files were made with.
pub const DEMO_SEED: u64 = 20_251_201;

/// Names of the demo systems (folder names under `demo-data/`).
pub const SYSTEMS: [&str; 2] = ["tellan", "verrow"];

/// Gauss–Radau tolerance of the "true" integration (reaches round-off).
pub const TRUTH_TOLERANCE: f64 = 1e-9;

/// One embedded demo file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DemoFile {
    /// File name inside the system's folder, e.g. `korva.txt`.
    pub name: &'static str,
    /// Its content (UTF-8 text).
    pub text: &'static str,
}

const TELLAN_FILES: [DemoFile; 4] = [
    DemoFile {
        name: "korva.txt",
        text: include_str!("../demo-data/tellan/korva.txt"),
    },
    DemoFile {
        name: "lisse.txt",
        text: include_str!("../demo-data/tellan/lisse.txt"),
    },
    DemoFile {
        name: "run.ron",
        text: include_str!("../demo-data/tellan/run.ron"),
    },
    DemoFile {
        name: "truth.ron",
        text: include_str!("../demo-data/tellan/truth.ron"),
    },
];

const VERROW_FILES: [DemoFile; 4] = [
    DemoFile {
        name: "korva.txt",
        text: include_str!("../demo-data/verrow/korva.txt"),
    },
    DemoFile {
        name: "lisse.txt",
        text: include_str!("../demo-data/verrow/lisse.txt"),
    },
    DemoFile {
        name: "run.ron",
        text: include_str!("../demo-data/verrow/run.ron"),
    },
    DemoFile {
        name: "truth.ron",
        text: include_str!("../demo-data/verrow/truth.ron"),
    },
];

/// Why a demo operation failed.
#[derive(Debug, thiserror::Error)]
pub enum DemoError {
    /// No demo system of this name.
    #[error("no demo system '{0}' (there are: tellan, verrow)")]
    UnknownSystem(String),
    /// A file the run file names is not embedded.
    #[error("demo system '{system}': file '{file}' is not embedded")]
    MissingFile {
        /// System.
        system: String,
        /// File name.
        file: String,
    },
    /// The embedded run file failed to parse.
    #[error(transparent)]
    RunFile(#[from] RunFileError),
    /// An embedded table failed to parse.
    #[error(transparent)]
    Table(#[from] TableError),
    /// The embedded truth file failed to parse or format.
    #[error("truth file: {0}")]
    Truth(String),
    /// The N-body model failed while generating.
    #[error(transparent)]
    Model(#[from] DynamicalError),
    /// The observing calendar has too few nights.
    #[error("{0}")]
    Calendar(String),
    /// Writing a file failed.
    #[error(transparent)]
    Write(#[from] crate::atomic::AtomicWriteError),
    /// Creating the folder failed.
    #[error("{path}: cannot create the folder: {source}")]
    Folder {
        /// The folder.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
}

/// The embedded files of demo system `system` (`tellan` or `verrow`).
pub fn files(system: &str) -> Result<&'static [DemoFile], DemoError> {
    match system {
        "tellan" => Ok(&TELLAN_FILES),
        "verrow" => Ok(&VERROW_FILES),
        other => Err(DemoError::UnknownSystem(other.to_string())),
    }
}

/// One embedded file of a demo system by name.
pub fn file(system: &str, name: &str) -> Result<&'static str, DemoError> {
    files(system)?
        .iter()
        .find(|f| f.name == name)
        .map(|f| f.text)
        .ok_or_else(|| DemoError::MissingFile {
            system: system.to_string(),
            file: name.to_string(),
        })
}

/// Write the embedded files of `system` into folder `dir` (created if
/// needed), each atomically ([`crate::atomic::write_atomic`]). Returns the
/// paths written; the run file there is ready for `apsidal fit`.
pub fn write_demo(system: &str, dir: &Path) -> Result<Vec<PathBuf>, DemoError> {
    let fs = files(system)?;
    std::fs::create_dir_all(dir).map_err(|source| DemoError::Folder {
        path: dir.to_path_buf(),
        source,
    })?;
    let mut out = Vec::with_capacity(fs.len());
    for f in fs {
        let path = dir.join(f.name);
        crate::atomic::write_atomic(&path, f.text.as_bytes())?;
        out.push(path);
    }
    Ok(out)
}

/// The run file and dataset of demo system `system`, parsed from the
/// embedded files without touching the disk. Table paths in the run file
/// stay relative (as written); messages name `demo:<system>/<file>`.
pub fn load_demo(system: &str) -> Result<(RunFile, Dataset), DemoError> {
    let run_text = file(system, "run.ron")?;
    let run = parse_run_str(run_text, &format!("demo:{system}/run.ron"), None)?;
    let mut b = DatasetBuilder::new();
    if let Some(allowed) = &run.instruments {
        b = b.allow_only(allowed.iter().cloned());
    }
    for src in run.table_sources() {
        let name = src.path.display().to_string();
        let text = file(system, &name)?;
        b.add_bytes(
            text.as_bytes(),
            &format!("demo:{system}/{name}"),
            &src.instrument,
        )?;
    }
    let data = b.finish()?;
    Ok((run, data))
}

/// The injected parameters of demo system `system`, from its embedded
/// `truth.ron`.
pub fn truth(system: &str) -> Result<Truth, DemoError> {
    parse_truth(file(system, "truth.ron")?)
}

/// Parse a `truth.ron` text.
pub fn parse_truth(text: &str) -> Result<Truth, DemoError> {
    ron::from_str(text).map_err(|e| DemoError::Truth(e.to_string()))
}

/// The injected ("true") values of a demo system. Angles in degrees,
/// periods and epochs in days, velocities in m/s, masses in M☉ (star) and
/// M_J (planets, IAU 2015 nominal). Elements are osculating Jacobi elements
/// at `reference_epoch` (DESIGN §3).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Truth {
    /// Folder name of the system.
    pub system: String,
    /// A reminder that the system is invented.
    pub note: String,
    /// Star name.
    pub star_name: String,
    /// Stellar mass, M☉.
    pub star_mass: f64,
    /// Stellar radius, R☉.
    pub star_radius: f64,
    /// Reference epoch of the elements, days.
    pub reference_epoch: f64,
    /// Seed of the noise and of the calendar.
    pub seed: u64,
    /// Planets, in order of period.
    pub planets: Vec<TruthPlanet>,
    /// Instruments, in the order of the run file.
    pub instruments: Vec<TruthInstrument>,
}

/// Injected elements of one planet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TruthPlanet {
    /// Name (`b`, `c`).
    pub name: String,
    /// Osculating Jacobi period, days.
    pub period: f64,
    /// True mass, M_J.
    pub mass_jupiter: f64,
    /// RV semi-amplitude K (m/s) from the exact mass function with the
    /// Jacobi interior mass and sin i.
    pub semi_amplitude: f64,
    /// Eccentricity.
    pub eccentricity: f64,
    /// ω⋆ of the star's orbit, degrees.
    pub omega_star: f64,
    /// Mean anomaly at the reference epoch, degrees.
    pub mean_anomaly: f64,
    /// Mean longitude λ = M + ω⋆ + 180° + ΔΩ at the reference epoch, degrees.
    pub mean_longitude: f64,
    /// Inclination, degrees (90 = edge-on).
    pub inclination: f64,
    /// Node difference to the innermost planet, degrees.
    pub node_difference: f64,
}

/// Injected properties of one instrument.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TruthInstrument {
    /// Label.
    pub name: String,
    /// Table file.
    pub file: String,
    /// RV offset γ, m/s.
    pub offset: f64,
    /// Jitter s, m/s (added in quadrature to the errors in the noise).
    pub jitter: f64,
    /// Smallest per-point error drawn, m/s.
    pub error_min: f64,
    /// Largest per-point error drawn, m/s.
    pub error_max: f64,
    /// Number of epochs.
    pub epochs: usize,
}

impl Truth {
    /// The dynamical-model parameters of the truth (offsets of the
    /// instruments in order, no trend).
    pub fn dynamical_params(&self) -> DynamicalParams {
        DynamicalParams {
            star_mass: self.star_mass,
            planets: self
                .planets
                .iter()
                .map(|p| DynamicalPlanet {
                    period: p.period,
                    k: p.semi_amplitude,
                    e: p.eccentricity,
                    omega_star: p.omega_star.to_radians(),
                    mean_anomaly: p.mean_anomaly.to_radians(),
                    inc: p.inclination.to_radians(),
                    delta_node: p.node_difference.to_radians(),
                })
                .collect(),
            offsets: self.instruments.iter().map(|i| i.offset).collect(),
            trend: DynTrend::default(),
        }
    }

    /// The Keplerian-model parameters with the same osculating elements at
    /// the reference epoch (and the same offsets).
    pub fn keplerian_params(&self) -> KeplerianParams {
        KeplerianParams {
            t_ref: self.reference_epoch,
            planets: self
                .planets
                .iter()
                .map(|p| PlanetSignal {
                    period: p.period,
                    semi_amplitude: p.semi_amplitude,
                    eccentricity: p.eccentricity,
                    omega_star: p.omega_star.to_radians(),
                    mean_anomaly_ref: p.mean_anomaly.to_radians(),
                })
                .collect(),
            offsets: self.instruments.iter().map(|i| i.offset).collect(),
            trend: Trend::None,
        }
    }

    /// The dynamical model of the truth: Gauss–Radau at
    /// [`TRUTH_TOLERANCE`], the star's radius for collision events.
    pub fn dynamical_model(&self) -> DynamicalModel {
        let mut m = DynamicalModel::new(self.reference_epoch);
        m.integrator = IntegratorChoice::GaussRadau {
            tolerance: TRUTH_TOLERANCE,
        };
        m.star_radius = self.star_radius * R_SUN_AU;
        m
    }
}

/// Everything [`generate`] makes for one system.
#[derive(Debug, Clone, PartialEq)]
pub struct GeneratedSystem {
    /// Folder name, e.g. `tellan`.
    pub name: String,
    /// Files (name, content) in the order of the embedded list.
    pub files: Vec<(String, String)>,
    /// The injected values.
    pub truth: Truth,
}

// ---------------------------------------------------------------- specs

struct PlanetSpec {
    name: &'static str,
    period: f64,
    mass_jupiter: f64,
    e: f64,
    omega_star: f64,
    mean_anomaly: f64,
    inclination: f64,
    node_difference: f64,
    /// By-eye starting guess for the run file: (P, K, e, ω⋆, λ).
    guess: (f64, f64, f64, f64, f64),
}

struct InstrumentSpec {
    name: &'static str,
    file: &'static str,
    offset: f64,
    jitter: f64,
    error: (f64, f64),
    /// Seasons used: year indices [first, last).
    years: (u32, u32),
    epochs: usize,
    /// Probability that a scheduled night is clear.
    clear: f64,
}

struct SystemSpec {
    name: &'static str,
    star_name: &'static str,
    star_mass: f64,
    star_radius: f64,
    mass_uncertainty: f64,
    /// Day (relative to [`FIRST_DAY`]) when the first season opens.
    season_start: f64,
    planets: [PlanetSpec; 2],
    instruments: [InstrumentSpec; 2],
    run_seed: u64,
}

/// First day of the demo calendar (a BJD-like day count).
const FIRST_DAY: f64 = 2_455_000.0;
/// Last day of the demo calendar.
const LAST_DAY: f64 = 2_459_500.0;
/// Reference epoch of both systems (a round epoch near the middle).
const T_REF: f64 = 2_457_250.0;
/// Length of an observing season, days (about seven months).
const SEASON_DAYS: f64 = 212.0;
/// Spacing of dark-time runs, days (a synodic month).
const RUN_SPACING: f64 = 29.53;

fn specs() -> [SystemSpec; 2] {
    [
        SystemSpec {
            name: "tellan",
            star_name: "Tellan",
            star_mass: 0.78,
            star_radius: 0.75,
            mass_uncertainty: 0.03,
            season_start: -70.0,
            planets: [
                PlanetSpec {
                    name: "b",
                    period: 60.2,
                    mass_jupiter: 2.1,
                    e: 0.17,
                    omega_star: 112.0,
                    mean_anomaly: 35.0,
                    inclination: 84.0,
                    node_difference: 0.0,
                    guess: (60.0, 120.0, 0.15, 100.0, 320.0),
                },
                PlanetSpec {
                    name: "c",
                    period: 125.1,
                    mass_jupiter: 1.75,
                    e: 0.12,
                    omega_star: 286.0,
                    mean_anomaly: 250.0,
                    inclination: 84.0,
                    node_difference: 0.0,
                    guess: (125.0, 80.0, 0.1, 280.0, 350.0),
                },
            ],
            instruments: [
                InstrumentSpec {
                    name: "KORVA",
                    file: "korva.txt",
                    offset: -15.0,
                    jitter: 2.0,
                    error: (1.2, 2.0),
                    years: (0, 13),
                    epochs: 100,
                    clear: 0.75,
                },
                InstrumentSpec {
                    name: "LISSE",
                    file: "lisse.txt",
                    offset: 40.0,
                    jitter: 4.0,
                    error: (3.0, 6.0),
                    years: (3, 13),
                    epochs: 50,
                    clear: 0.6,
                },
            ],
            run_seed: 11,
        },
        SystemSpec {
            name: "verrow",
            star_name: "Verrow",
            star_mass: 0.92,
            star_radius: 0.88,
            mass_uncertainty: 0.04,
            season_start: -120.0,
            planets: [
                PlanetSpec {
                    name: "b",
                    period: 21.05,
                    mass_jupiter: 0.069,
                    e: 0.05,
                    omega_star: 40.0,
                    mean_anomaly: 120.0,
                    inclination: 87.0,
                    node_difference: 0.0,
                    guess: (21.0, 5.0, 0.05, 30.0, 330.0),
                },
                PlanetSpec {
                    name: "c",
                    period: 153.4,
                    mass_jupiter: 0.45,
                    e: 0.21,
                    omega_star: 195.0,
                    mean_anomaly: 300.0,
                    inclination: 87.0,
                    node_difference: 0.0,
                    guess: (150.0, 20.0, 0.2, 190.0, 320.0),
                },
            ],
            instruments: [
                InstrumentSpec {
                    name: "KORVA",
                    file: "korva.txt",
                    offset: 8.0,
                    jitter: 1.5,
                    error: (1.2, 2.0),
                    years: (0, 13),
                    epochs: 95,
                    clear: 0.75,
                },
                InstrumentSpec {
                    name: "LISSE",
                    file: "lisse.txt",
                    offset: -22.0,
                    jitter: 3.0,
                    error: (3.5, 5.5),
                    years: (0, 7),
                    epochs: 35,
                    clear: 0.6,
                },
            ],
            run_seed: 12,
        },
    ]
}

// ------------------------------------------------------------ generation

/// Make every demo file from `seed`: the truth of each system, its
/// observing calendars, its RVs from the N-body model (Gauss–Radau at
/// [`TRUTH_TOLERANCE`]) with Gaussian noise, the tables, the run file and
/// `truth.ron`. Deterministic: the same seed gives the same bytes.
/// [`DEMO_SEED`] gives the committed files.
pub fn generate(seed: u64) -> Result<Vec<GeneratedSystem>, DemoError> {
    specs()
        .iter()
        .enumerate()
        .map(|(k, spec)| generate_one(spec, seed.wrapping_add(k as u64)))
        .collect()
}

fn truth_of(spec: &SystemSpec, seed: u64) -> Result<Truth, DemoError> {
    let mut interior = spec.star_mass;
    let mut planets = Vec::new();
    for p in &spec.planets {
        let m = jupiter_to_sun(p.mass_jupiter);
        let k = semi_amplitude(m, p.period, p.e, p.inclination.to_radians().sin(), interior)
            .ok_or_else(|| DemoError::Truth(format!("planet {}: no semi-amplitude", p.name)))?;
        interior += m;
        let node = if planets.is_empty() {
            0.0
        } else {
            p.node_difference
        };
        planets.push(TruthPlanet {
            name: p.name.to_string(),
            period: p.period,
            mass_jupiter: p.mass_jupiter,
            semi_amplitude: round_to(k, 4),
            eccentricity: p.e,
            omega_star: p.omega_star,
            mean_anomaly: p.mean_anomaly,
            mean_longitude: (p.mean_anomaly + p.omega_star + 180.0 + node).rem_euclid(360.0),
            inclination: p.inclination,
            node_difference: node,
        });
    }
    Ok(Truth {
        system: spec.name.to_string(),
        note: format!(
            "{} is an INVENTED system (not a real star); its data are simulated",
            spec.star_name
        ),
        star_name: spec.star_name.to_string(),
        star_mass: spec.star_mass,
        star_radius: spec.star_radius,
        reference_epoch: T_REF,
        seed,
        planets,
        instruments: spec
            .instruments
            .iter()
            .map(|i| TruthInstrument {
                name: i.name.to_string(),
                file: i.file.to_string(),
                offset: i.offset,
                jitter: i.jitter,
                error_min: i.error.0,
                error_max: i.error.1,
                epochs: i.epochs,
            })
            .collect(),
    })
}

/// `x` rounded to `decimals` decimal places.
fn round_to(x: f64, decimals: i32) -> f64 {
    let scale = 10f64.powi(decimals);
    (x * scale).round() / scale
}

/// Epochs of one instrument: seasons of [`SEASON_DAYS`] a year inside
/// [FIRST_DAY, LAST_DAY], dark-time runs of 3–6 nights every synodic
/// month, each night clear with probability `clear`, then `n` nights
/// shared among the seasons in proportion to their clear nights (each
/// season's first and last kept, the others drawn at random), each at a
/// random hour of the night (day fraction
/// 0.52–0.88, i.e. about 00:30–09:00 UT for an observatory in the
/// Americas). Sorted.
fn calendar(
    spec: &SystemSpec,
    inst: &InstrumentSpec,
    rng: &mut ChaCha8Rng,
) -> Result<Vec<f64>, DemoError> {
    // Clear nights of each season.
    let mut seasons: Vec<Vec<f64>> = Vec::new();
    for year in inst.years.0..inst.years.1 {
        let open = FIRST_DAY + spec.season_start + 365.25 * f64::from(year);
        let close = open + SEASON_DAYS;
        let mut nights = Vec::new();
        let mut run_start = open + rng.random_range(0.0..12.0);
        while run_start < close {
            let len: u32 = rng.random_range(3..=6);
            for d in 0..len {
                let day = (run_start + f64::from(d)).floor();
                let clear = rng.random_bool(inst.clear);
                if clear && (FIRST_DAY..=LAST_DAY).contains(&day) && day < close {
                    nights.push(day);
                }
            }
            run_start += RUN_SPACING;
        }
        if !nights.is_empty() {
            seasons.push(nights);
        }
    }
    let total: usize = seasons.iter().map(Vec::len).sum();
    if total < inst.epochs {
        return Err(DemoError::Calendar(format!(
            "{}: only {total} clear nights for {} epochs",
            inst.name, inst.epochs
        )));
    }
    // Epochs per season in proportion to its clear nights (the remainder
    // one by one from the first season on).
    let mut quota: Vec<usize> = seasons
        .iter()
        .map(|s| s.len() * inst.epochs / total)
        .collect();
    let mut left = inst.epochs - quota.iter().sum::<usize>();
    let mut k = 0;
    while left > 0 {
        if quota[k] < seasons[k].len() {
            quota[k] += 1;
            left -= 1;
        }
        k = (k + 1) % seasons.len();
    }
    // In each season the first and last clear nights (the season's ends
    // are observed, as a real programme does) and the rest at random
    // (partial Fisher–Yates of the nights between).
    let mut nights: Vec<f64> = Vec::with_capacity(inst.epochs);
    for (s, &q) in seasons.iter_mut().zip(&quota) {
        let m = s.len();
        if q == 0 {
            continue;
        }
        if q == 1 {
            nights.push(s[rng.random_range(0..m)]);
            continue;
        }
        nights.push(s[0]);
        nights.push(s[m - 1]);
        let middle = &mut s[1..m - 1];
        for i in 0..q - 2 {
            let j = rng.random_range(i..middle.len());
            middle.swap(i, j);
        }
        nights.extend_from_slice(&middle[..q - 2]);
    }
    nights.sort_by(f64::total_cmp);
    Ok(nights
        .into_iter()
        .map(|d| round_to(d + rng.random_range(0.52..0.88), 5))
        .collect())
}

fn generate_one(spec: &SystemSpec, seed: u64) -> Result<GeneratedSystem, DemoError> {
    let truth = truth_of(spec, seed)?;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut epochs: Vec<Vec<f64>> = Vec::new();
    for inst in &spec.instruments {
        epochs.push(calendar(spec, inst, &mut rng)?);
    }
    let all_t: Vec<f64> = epochs.iter().flatten().copied().collect();
    let all_i: Vec<usize> = epochs
        .iter()
        .enumerate()
        .flat_map(|(k, e)| std::iter::repeat_n(k, e.len()))
        .collect();
    let mut rv = vec![0.0; all_t.len()];
    truth.dynamical_model().star_rv(
        &truth.dynamical_params(),
        &all_t,
        &all_i,
        &mut DynamicalWorkspace::default(),
        &mut rv,
    )?;
    let mut files = Vec::new();
    let mut at = 0;
    for (k, inst) in spec.instruments.iter().enumerate() {
        let mut text = table_header(spec, inst, seed);
        for &t in &epochs[k] {
            let sigma = round_to(rng.random_range(inst.error.0..inst.error.1), 2);
            let z: f64 = rng.sample(StandardNormal);
            let v = rv[at] + z * (sigma * sigma + inst.jitter * inst.jitter).sqrt();
            at += 1;
            text += &format!("{t:.5}  {v:9.2}  {sigma:.2}  {}\n", inst.name);
        }
        files.push((inst.file.to_string(), text));
    }
    files.push(("run.ron".to_string(), run_file_text(spec)));
    let truth_text = ron::ser::to_string_pretty(&truth, ron::ser::PrettyConfig::default())
        .map_err(|e| DemoError::Truth(e.to_string()))?;
    files.push((
        "truth.ron".to_string(),
        format!(
            "// Injected values of the INVENTED demo system {} (made by examples/make_demo_data.rs).\n{truth_text}\n",
            spec.star_name
        ),
    ));
    Ok(GeneratedSystem {
        name: spec.name.to_string(),
        files,
        truth,
    })
}

fn table_header(spec: &SystemSpec, inst: &InstrumentSpec, seed: u64) -> String {
    format!(
        "# {star}: an INVENTED star (not a real object); simulated RVs from instrument {name} (also invented).\n\
         # Made by examples/make_demo_data.rs with apsidal's N-body model (Gauss-Radau, tolerance 1e-9), seed {seed}.\n\
         # Noise: Gaussian with variance err^2 + jitter^2, jitter {jit:.1} m/s; offset {off:+.1} m/s.\n\
         # time: BJD-like day count; rv, err: m/s\n\
         time rv err instrument\n",
        star = spec.star_name,
        name = inst.name,
        jit = inst.jitter,
        off = inst.offset,
    )
}

fn run_file_text(spec: &SystemSpec) -> String {
    let data: Vec<String> = spec
        .instruments
        .iter()
        .map(|i| format!("        (path: \"{}\"),", i.file))
        .collect();
    let names: Vec<String> = spec
        .instruments
        .iter()
        .map(|i| format!("\"{}\"", i.name))
        .collect();
    let planets: Vec<String> = spec
        .planets
        .iter()
        .map(|p| {
            let (period, k, e, w, lambda) = p.guess;
            format!(
                "        (name: \"{}\", period: {period:.1}, signal: SemiAmplitude({k:.1}), eccentricity: {e:.2},\n         omega_star: {w:.1}, phase: MeanLongitude({lambda:.1})),",
                p.name
            )
        })
        .collect();
    format!(
        "// {star}: an INVENTED demo system. Starting values are a rough by-eye guess from\n\
         // the RV curve (rounded periods and semi-amplitudes), not the injected values\n\
         // (those are in truth.ron).\n\
         (\n    data: [\n{data}\n    ],\n    instruments: [{names}],\n\
         \x20   star: (name: \"{star}\", mass: {mass:.2}, mass_uncertainty: {dm:.2}, radius: {radius:.2}),\n\
         \x20   planets: [\n{planets}\n    ],\n\
         \x20   reference_epoch: {t_ref:.1},\n\
         \x20   output: \"out\",\n\
         \x20   seed: {seed},\n\
         \x20   fit: (models: [Keplerian, CoplanarEdgeOn, CoplanarSinI]),\n\
         \x20   sampler: (steps: 2000, checkpoint_every: 100),\n)\n",
        star = spec.star_name,
        data = data.join("\n"),
        names = names.join(", "),
        mass = spec.star_mass,
        dm = spec.mass_uncertainty,
        radius = spec.star_radius,
        planets = planets.join("\n"),
        t_ref = T_REF,
        seed = spec.run_seed,
    )
}

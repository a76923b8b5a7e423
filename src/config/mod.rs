//! RON run files → typed settings (serde; unknown keys are errors).
//!
//! A run file describes a job (DESIGN §7). What exists so far: the RV
//! tables, the star, the planets' starting elements, the reference epoch,
//! the output folder and the seed. Later sections (model choice, priors,
//! integrator, sampler) are added as optional fields of [`RunFile`].
//!
//! ```text
//! #![enable(implicit_some)]     // optional: ron's extension, enabled anyway
//! (
//!     data: [
//!         (path: "veska.txt", instrument: Named("VESKA")),
//!         (path: "mixed.csv"),                      // labels from column 4
//!     ],
//!     instruments: ["VESKA", "MIRRAL"],             // optional restriction
//!     star: (name: "Orrin-442", mass: 0.74, mass_uncertainty: 0.03, radius: 0.71),
//!     planets: [
//!         (name: "b", period: 41.3, signal: SemiAmplitude(23.0), eccentricity: 0.08,
//!          omega_star: 112.0, phase: MeanAnomaly(35.0)),
//!         (name: "c", period: 83.9, signal: MassJupiter(0.9), eccentricity: 0.12,
//!          omega_star: 250.0, phase: ConjunctionTime(2459803.2),
//!          inclination: 86.0, node_difference: 4.0),
//!     ],
//!     reference_epoch: 2460000.0,
//!     output: "out",
//!     seed: 20260101,
//! )
//! ```
//!
//! * Units: days, m/s, degrees; star in solar masses and radii; planet
//!   masses in Jupiter or Earth masses (IAU 2015 nominal).
//! * Optional values may be written bare (`radius: 0.71`) or as
//!   `Some(0.71)`: ron's `implicit_some` extension is always on.
//! * Relative paths (tables, output folder) are relative to the folder of
//!   the run file, not to the working directory.
//! * Every error names the file, the line and column, and the field
//!   (e.g. `planets[1].eccentricity (planet 'c')`).

mod error;
mod locate;
mod sections;
mod setup;
mod types;
mod validate;

pub use error::{FieldPath, PathSegment, RunFileError, ValidationIssue};
pub use sections::{FitSection, IntegratorChoice, PriorOverride, SamplerSection};
pub use setup::planet_guesses;
pub use setup::{SetupError, build_model, observations_of};
pub use types::{DataFile, InstrumentChoice, Phase, PlanetStart, RunFile, Signal, Star};
pub use validate::validate;

use std::path::Path;

use ron::error::Error as RonError;

use crate::data::{Dataset, InstrumentLabel, TableError, TableSource};

/// Read, parse and validate a run file; relative paths in it are resolved
/// against the run file's folder.
///
/// ```
/// let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/fixtures/orrin442/run.ron");
/// let run = apsidal::config::load_run_file(path).unwrap();
/// assert_eq!(run.star.name.as_deref(), Some("Orrin-442"));
/// assert!(run.data[0].path.is_absolute());
/// ```
pub fn load_run_file(path: impl AsRef<Path>) -> Result<RunFile, RunFileError> {
    let path = path.as_ref();
    let name = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|source| RunFileError::Io {
        file: name.clone(),
        source,
    })?;
    let text = std::str::from_utf8(&bytes).map_err(|e| {
        let valid = &bytes[..e.valid_up_to()];
        // The valid prefix is UTF-8 by definition.
        let prefix = std::str::from_utf8(valid).unwrap_or("");
        let (line, column) = locate::line_col(prefix, prefix.len());
        RunFileError::NotUtf8 {
            file: name.clone(),
            line,
            column,
        }
    })?;
    parse_run_str(text, &name, path.parent())
}

/// Parse and validate a run file held in memory. `name` stands for the
/// file name in messages; relative paths are resolved against `base_dir`
/// if given, else left as written.
///
/// ```
/// use apsidal::config::parse_run_str;
/// let err = parse_run_str("(data: [], star: (mass: 0.8), seeed: 3)", "mem.ron", None).unwrap_err();
/// assert!(err.to_string().starts_with("mem.ron:1:31: seeed: Unexpected field named `seeed`"), "{err}");
/// ```
pub fn parse_run_str(
    text: &str,
    name: &str,
    base_dir: Option<&Path>,
) -> Result<RunFile, RunFileError> {
    let options =
        ron::Options::default().with_default_extension(ron::extensions::Extensions::IMPLICIT_SOME);
    let mut run: RunFile = options
        .from_str(text)
        .map_err(|e| syntax_error(text, name, e))?;
    if let Some(issue) = validate(&run).into_iter().next() {
        let entries = locate::scan(text);
        let mut path = issue.field.clone();
        let position = loop {
            if let Some(e) = locate::find(&entries, &path) {
                break Some(locate::line_col(text, e.start));
            }
            if path.0.is_empty() {
                break None;
            }
            path = path.parent();
        };
        return Err(RunFileError::Invalid {
            file: name.to_string(),
            position,
            issue,
        });
    }
    if let Some(base) = base_dir {
        for d in &mut run.data {
            if d.path.is_relative() {
                d.path = base.join(&d.path);
            }
        }
        if let Some(o) = &mut run.output {
            if o.is_relative() {
                *o = base.join(&*o);
            }
        }
    }
    Ok(run)
}

/// Turn ron's error into ours, finding the field from the position.
fn syntax_error(text: &str, name: &str, e: ron::error::SpannedError) -> RunFileError {
    let (line, column) = (e.span.start.line, e.span.start.col);
    let offset = locate::offset_of(text, line, column);
    let entries = locate::scan(text);
    let field = match &e.code {
        // The span starts at the offending key.
        RonError::NoSuchStructField { .. } | RonError::DuplicateStructField { .. } => {
            locate::path_at(&entries, offset).map(|e| e.path.clone())
        }
        // Reported at the closer of the struct lacking the field.
        RonError::MissingStructField { field, .. } => {
            let parent = entries
                .iter()
                .filter(|e| e.start < offset && offset < e.end)
                .max_by_key(|e| (e.path.0.len(), e.start))
                .map(|e| e.path.clone())
                .unwrap_or_default();
            Some(parent.field(field))
        }
        // Reported inside or just after the value at fault.
        _ => entries
            .iter()
            .filter(|e| e.start < offset && offset <= e.end)
            .max_by_key(|e| (e.path.0.len(), e.start))
            .or_else(|| locate::path_at(&entries, offset))
            .map(|e| e.path.clone()),
    };
    let planet = field
        .as_ref()
        .and_then(FieldPath::planet_index)
        .and_then(|k| {
            let p = FieldPath::default().field("planets").index(k).field("name");
            locate::find(&entries, &p).and_then(|e| e.string_value.clone())
        });
    RunFileError::Syntax {
        file: name.to_string(),
        line,
        column,
        field,
        planet,
        message: e.code.to_string(),
    }
}

impl RunFile {
    /// The RV tables to read, as the data layer wants them.
    pub fn table_sources(&self) -> Vec<TableSource> {
        self.data
            .iter()
            .map(|d| TableSource {
                path: d.path.clone(),
                instrument: match &d.instrument {
                    InstrumentChoice::FromColumn => InstrumentLabel::FromColumn,
                    InstrumentChoice::Named(n) => InstrumentLabel::Given(n.clone()),
                },
            })
            .collect()
    }

    /// Read and validate every table of the run, restricted to the
    /// declared instruments if the run file lists them.
    pub fn read_data(&self) -> Result<Dataset, TableError> {
        crate::data::read_tables(&self.table_sources(), self.instruments.as_deref())
    }
}

/// 1-based (line, column) of a field of the run file at `path` (e.g.
/// `fit.priors[1].parameter`), for messages about errors found after
/// loading (model set-up); `None` if the file cannot be read or the field
/// is not written in it.
pub fn field_position(path: impl AsRef<Path>, field: &FieldPath) -> Option<(usize, usize)> {
    let bytes = std::fs::read(path).ok()?;
    let text = std::str::from_utf8(&bytes).ok()?;
    let entries = locate::scan(text);
    locate::find(&entries, field).map(|e| locate::line_col(text, e.start))
}

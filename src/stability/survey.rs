//! Stability survey of posterior samples: [`super::run::run_stability`] on
//! every (or a seeded subset of the) sample(s) of a sampler's CSV table, in
//! parallel with rayon, shardable, resumable, with a merge step and a
//! binomial interval on the stable fraction.
//!
//! # Determinism
//!
//! A row's result depends only on its parameter vector (the integration has
//! no randomness), and the only random choice — which rows to keep when
//! [`SurveySettings::max_samples`] is below the number of rows — is made
//! from [`SurveySettings::seed`] with ChaCha8 before the parallel part. The
//! table is written sorted by sample index, so it is the same byte for byte
//! whatever the thread count, the chunking, the sharding or interruptions.
//!
//! # Sharding (`k/n`)
//!
//! The selected rows, in increasing sample index, are dealt round robin:
//! shard k of n (0 ≤ k < n) takes the selected rows at positions i with
//! i mod n = k. Round robin rather than contiguous blocks because samples of
//! one walker sit together in the file and cost alike, so dealing them out
//! balances the shards. Every shard makes the same selection (same seed), so
//! the shards are disjoint and together cover it; [`merge_tables`] joins
//! their tables into exactly the table of the unsharded run.
//!
//! # Output table
//!
//! CSV, header then one line per sample, sorted by `sample` (the 0-based
//! index of the data row in the samples file): `sample,walker,step,verdict,
//! event_time_d,survival_orbits,max_e.<planet>…,max_da.<planet>…,
//! min_hill_spacing,hill_stable,amd_stable,megno`. `verdict` is `stable` or
//! the event label ([`super::run::EventKind::label`]); empty fields mean
//! "none" (no event, criteria not defined, MEGNO not computed). Numbers are
//! Rust's shortest round-trip form.
//!
//! # Interruptions (kill, power cut)
//!
//! The table itself is only ever replaced atomically
//! ([`crate::atomic::write_atomic`]), so a reader finds no table, the
//! previous whole one or a newer whole one, never a torn row. So that a
//! kill loses no finished row, each row is also appended, as soon as it is
//! done, to a journal beside the table (`<table file name>.partial`: the
//! header, then one line per finished row in completion order, each with a
//! single `write` call). The rows of the journal are moved into the table
//! (atomic rewrite, then the journal is emptied) when the journal holds at
//! least [`SurveySettings::chunk`] rows and at least a quarter as many as
//! the table, so the total writing stays proportional to the table size.
//! `resume` reads the table and the journal, drops a torn last journal line
//! (a kill mid-write), and runs only the missing rows; the journal is
//! removed when the survey ends.
//!
//! # Stable fraction
//!
//! Exact (Clopper & Pearson 1934, Biometrika 26, 404) central interval of
//! a binomial proportion: for k stable of n, the lower limit solves
//! P(X ≥ k | p) = α/2 and the upper P(X ≤ k | p) = α/2 (0 for k = 0, 1 for
//! k = n), found by bisection on the binomial tail summed in logarithms.
//! Checked against SciPy's `binomtest(k, n).proportion_ci(method='exact')`.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::run::{RunSettings, StabilityError, StabilityReport, run_solution};
use crate::atomic::{AtomicWriteError, write_atomic};
use crate::fit::models::RvModel;
use crate::fit::sample::Flow;

/// Errors of a survey.
#[derive(Debug, thiserror::Error)]
pub enum SurveyError {
    /// A file could not be read.
    #[error("{path}: cannot read: {source}")]
    Read {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// A table is malformed (1-based line and column).
    #[error("{path}:{line}: column {column} ({name}): {message}")]
    Parse {
        /// The file.
        path: PathBuf,
        /// Line number, 1-based.
        line: usize,
        /// Column number, 1-based (0: the whole line).
        column: usize,
        /// Column name from the header (or `-`).
        name: String,
        /// What is wrong.
        message: String,
    },
    /// A free parameter of the model has no column in the samples table.
    #[error("{path}: no column for the model's free parameter `{name}`")]
    MissingColumn {
        /// The samples file.
        path: PathBuf,
        /// The parameter.
        name: String,
    },
    /// A setting is out of range.
    #[error("survey settings: {0}")]
    BadSettings(String),
    /// Tables to merge or resume do not fit together.
    #[error("{path}: {message}")]
    Mismatch {
        /// The offending file.
        path: PathBuf,
        /// What does not fit.
        message: String,
    },
    /// A sample could not be run.
    #[error("{path}:{line}: sample {sample}: {source}")]
    Sample {
        /// The samples file.
        path: PathBuf,
        /// Line of the sample in that file.
        line: usize,
        /// Sample index.
        sample: usize,
        /// The cause.
        source: StabilityError,
    },
    /// Writing the output failed.
    #[error(transparent)]
    Write(#[from] AtomicWriteError),
    /// Appending to (or creating, emptying, removing) the journal of
    /// finished rows failed.
    #[error("{path}: journal of finished rows: {source}")]
    Journal {
        /// The journal file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// The binomial interval was asked for impossible counts or level.
    #[error("binomial interval: {0}")]
    Binomial(String),
}

/// One data row of a samples table.
#[derive(Debug, Clone, PartialEq)]
pub struct SampleRow {
    /// Line number in the file (1-based).
    pub line: usize,
    /// Walker index.
    pub walker: u64,
    /// Step index.
    pub step: u64,
    /// ln posterior.
    pub ln_prob: f64,
    /// Values of the columns after `ln_prob`, in header order.
    pub values: Vec<f64>,
}

/// A samples table as written by [`crate::fit::sample::write_samples_csv`].
#[derive(Debug, Clone, PartialEq)]
pub struct SamplesTable {
    /// Where it was read from.
    pub source: PathBuf,
    /// Names of the columns after `walker,step,ln_prob`.
    pub columns: Vec<String>,
    /// The rows, in file order.
    pub rows: Vec<SampleRow>,
}

/// Read a samples CSV (header `walker,step,ln_prob,<names>…`).
///
/// # Errors
/// [`SurveyError::Read`], or [`SurveyError::Parse`] naming the line and
/// column of the first problem.
pub fn read_samples_csv(path: &Path) -> Result<SamplesTable, SurveyError> {
    let text = std::fs::read_to_string(path).map_err(|source| SurveyError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    parse_samples_csv(&text, path)
}

/// Parse the text of a samples CSV; `source` names it in errors. Blank
/// lines are refused (the writer makes none); a final newline is optional.
///
/// # Errors
/// [`SurveyError::Parse`] for a bad header, a wrong number of fields, or a
/// field that is not a number (walker and step: non-negative integers;
/// the rest: finite numbers).
pub fn parse_samples_csv(text: &str, source: &Path) -> Result<SamplesTable, SurveyError> {
    let err = |line: usize, column: usize, name: &str, message: String| SurveyError::Parse {
        path: source.to_path_buf(),
        line,
        column,
        name: name.to_string(),
        message,
    };
    let mut lines = text.lines().enumerate();
    let Some((_, header)) = lines.next() else {
        return Err(err(1, 0, "-", "empty file: no header".into()));
    };
    let names: Vec<&str> = header.trim_end_matches('\r').split(',').collect();
    for (c, want) in ["walker", "step", "ln_prob"].iter().enumerate() {
        if names.get(c).map(|s| s.trim()) != Some(want) {
            return Err(err(
                1,
                c + 1,
                names.get(c).copied().unwrap_or("-"),
                format!("header must start with walker,step,ln_prob; expected `{want}`"),
            ));
        }
    }
    let mut seen = std::collections::HashSet::new();
    for (c, n) in names.iter().enumerate().skip(3) {
        if n.trim().is_empty() {
            return Err(err(1, c + 1, "-", "empty column name".into()));
        }
        if !seen.insert(n.trim()) {
            return Err(err(1, c + 1, n, "column name repeated".into()));
        }
    }
    let columns: Vec<String> = names[3..].iter().map(|s| s.trim().to_string()).collect();
    let mut rows = Vec::new();
    for (i, raw) in lines {
        let line = i + 1;
        let raw = raw.trim_end_matches('\r');
        let fields: Vec<&str> = raw.split(',').collect();
        if fields.len() != names.len() {
            return Err(err(
                line,
                0,
                "-",
                format!("{} fields, the header has {}", fields.len(), names.len()),
            ));
        }
        let int = |c: usize| -> Result<u64, SurveyError> {
            fields[c].trim().parse::<u64>().map_err(|_| {
                err(
                    line,
                    c + 1,
                    names[c],
                    format!("`{}` is not a non-negative integer", fields[c]),
                )
            })
        };
        let num = |c: usize| -> Result<f64, SurveyError> {
            match fields[c].trim().parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(err(
                    line,
                    c + 1,
                    names[c],
                    format!("`{}` is not a finite number", fields[c]),
                )),
            }
        };
        let walker = int(0)?;
        let step = int(1)?;
        // ln_prob may be −∞ in principle; the sampler never keeps such rows.
        let ln_prob = match fields[2].trim().parse::<f64>() {
            Ok(v) if !v.is_nan() => v,
            _ => {
                return Err(err(
                    line,
                    3,
                    names[2],
                    format!("`{}` is not a number", fields[2]),
                ));
            }
        };
        let values = (3..fields.len()).map(num).collect::<Result<Vec<_>, _>>()?;
        rows.push(SampleRow {
            line,
            walker,
            step,
            ln_prob,
            values,
        });
    }
    Ok(SamplesTable {
        source: source.to_path_buf(),
        columns,
        rows,
    })
}

/// Full parameter vectors of `model` for every row of `table`: each free
/// parameter from its column (by name), each fixed one from `base` (a full
/// vector, e.g. [`crate::fit::params::ParameterSet::start_full`]). Extra
/// columns (derived quantities) are ignored.
///
/// # Errors
/// [`SurveyError::MissingColumn`] when a free parameter has no column,
/// [`SurveyError::BadSettings`] when `base` has the wrong length.
pub fn parameter_vectors(
    model: &RvModel,
    table: &SamplesTable,
    base: &[f64],
) -> Result<Vec<Vec<f64>>, SurveyError> {
    let params = model.params.parameters();
    if base.len() != params.len() {
        return Err(SurveyError::BadSettings(format!(
            "base vector has {} values, the model {}",
            base.len(),
            params.len()
        )));
    }
    let mut map = Vec::new();
    for &i in model.params.free_indices() {
        let name = &params[i].name;
        let Some(c) = table.columns.iter().position(|c| c == name) else {
            return Err(SurveyError::MissingColumn {
                path: table.source.clone(),
                name: name.clone(),
            });
        };
        map.push((i, c));
    }
    Ok(table
        .rows
        .iter()
        .map(|r| {
            let mut full = base.to_vec();
            for &(i, c) in &map {
                full[i] = r.values[c];
            }
            full
        })
        .collect())
}

/// Shard `index` of `count` (0 ≤ index < count); see the module docs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// This shard, 0-based.
    pub index: usize,
    /// Number of shards (≥ 1).
    pub count: usize,
}

impl Default for Shard {
    /// The whole survey: shard 0 of 1.
    fn default() -> Self {
        Shard { index: 0, count: 1 }
    }
}

impl std::str::FromStr for Shard {
    type Err = SurveyError;

    /// `k/n` with 0 ≤ k < n, e.g. `2/8`.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let bad = || SurveyError::BadSettings(format!("shard `{s}`: expected k/n with 0 ≤ k < n"));
        let (k, n) = s.split_once('/').ok_or_else(bad)?;
        let index: usize = k.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if count == 0 || index >= count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }
}

/// Settings of a survey.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SurveySettings {
    /// The stability run of each sample.
    pub run: RunSettings,
    /// Keep at most this many rows, chosen with `seed` (`None`: all).
    pub max_samples: Option<usize>,
    /// Seed of the row choice.
    pub seed: u64,
    /// Which shard to run.
    pub shard: Shard,
    /// Rows run in parallel between two checks for a stop, and the least
    /// number of journal rows moved into the table at once (≥ 1; module
    /// docs).
    pub chunk: usize,
    /// Confidence level of the interval on the stable fraction, in (0, 1).
    pub confidence: f64,
}

impl Default for SurveySettings {
    /// Default runs, all rows, seed 1, unsharded, writes every 32 rows, 95 %.
    fn default() -> Self {
        SurveySettings {
            run: RunSettings::default(),
            max_samples: None,
            seed: 1,
            shard: Shard::default(),
            chunk: 32,
            confidence: 0.95,
        }
    }
}

/// Rows (0-based data-row indices) kept from `n_rows`: all, or `max`
/// chosen without replacement by ChaCha8 seeded with `seed`
/// (`rand::seq::index::sample`), in increasing order.
pub fn select_rows(n_rows: usize, max: Option<usize>, seed: u64) -> Vec<usize> {
    match max {
        Some(m) if m < n_rows => {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            let mut v = rand::seq::index::sample(&mut rng, n_rows, m).into_vec();
            v.sort_unstable();
            v
        }
        _ => (0..n_rows).collect(),
    }
}

/// The part of `selected` that `shard` runs (round robin, module docs).
pub fn shard_rows(selected: &[usize], shard: Shard) -> Vec<usize> {
    selected
        .iter()
        .enumerate()
        .filter(|(i, _)| i % shard.count.max(1) == shard.index)
        .map(|(_, &r)| r)
        .collect()
}

/// Header of the survey table for these planet names.
pub fn table_header(planets: &[String]) -> String {
    let mut h = String::from("sample,walker,step,verdict,event_time_d,survival_orbits");
    for p in planets {
        let _ = write!(h, ",max_e.{p}");
    }
    for p in planets {
        let _ = write!(h, ",max_da.{p}");
    }
    h.push_str(",min_hill_spacing,hill_stable,amd_stable,megno");
    h
}

fn opt<T: std::fmt::Debug>(v: Option<T>) -> String {
    v.map_or(String::new(), |x| format!("{x:?}"))
}

/// One line of the survey table (no newline).
pub fn table_line(sample: usize, walker: u64, step: u64, r: &StabilityReport) -> String {
    let mut s = format!(
        "{sample},{walker},{step},{},{},{:?}",
        r.verdict.label(),
        opt(r.event.as_ref().map(|e| e.time)),
        r.survival_orbits
    );
    for e in &r.max_eccentricity {
        let _ = write!(s, ",{e:?}");
    }
    for d in &r.max_axis_drift {
        let _ = write!(s, ",{d:?}");
    }
    let _ = write!(
        s,
        ",{},{},{},{}",
        opt(r.min_hill_spacing()),
        opt(r.hill_stable()),
        opt(r.amd_stable()),
        opt(r.megno)
    );
    s
}

/// A survey table in memory: header and lines keyed by sample index.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SurveyTable {
    /// Header line.
    pub header: String,
    /// Lines (without newline) by sample index.
    pub rows: BTreeMap<usize, String>,
}

impl SurveyTable {
    /// The CSV text: header, then the lines in increasing sample index.
    pub fn to_csv(&self) -> String {
        let mut s = String::with_capacity(self.header.len() + 1 + 128 * self.rows.len());
        s.push_str(&self.header);
        s.push('\n');
        for l in self.rows.values() {
            s.push_str(l);
            s.push('\n');
        }
        s
    }

    /// Parse a survey table; `path` names it in errors.
    ///
    /// # Errors
    /// [`SurveyError::Parse`] for an empty file, a line with the wrong
    /// number of fields or a bad sample index, and [`SurveyError::Mismatch`]
    /// for a sample index seen twice.
    pub fn parse(text: &str, path: &Path) -> Result<Self, SurveyError> {
        let mut lines = text.lines().enumerate();
        let Some((_, header)) = lines.next() else {
            return Err(SurveyError::Parse {
                path: path.to_path_buf(),
                line: 1,
                column: 0,
                name: "-".into(),
                message: "empty file: no header".into(),
            });
        };
        if !header.starts_with("sample,walker,step,verdict,") {
            return Err(SurveyError::Parse {
                path: path.to_path_buf(),
                line: 1,
                column: 1,
                name: "-".into(),
                message: "not a survey table (header must start with sample,walker,step,verdict)"
                    .into(),
            });
        }
        let width = header.split(',').count();
        let mut rows = BTreeMap::new();
        for (i, l) in lines {
            let n = l.split(',').count();
            if n != width {
                return Err(SurveyError::Parse {
                    path: path.to_path_buf(),
                    line: i + 1,
                    column: 0,
                    name: "-".into(),
                    message: format!("{n} fields, the header has {width}"),
                });
            }
            let first = l.split(',').next().unwrap_or("");
            let k: usize = first.parse().map_err(|_| SurveyError::Parse {
                path: path.to_path_buf(),
                line: i + 1,
                column: 1,
                name: "sample".into(),
                message: format!("`{first}` is not a sample index"),
            })?;
            if rows.insert(k, l.to_string()).is_some() {
                return Err(SurveyError::Mismatch {
                    path: path.to_path_buf(),
                    message: format!("sample {k} appears twice (line {})", i + 1),
                });
            }
        }
        Ok(SurveyTable {
            header: header.to_string(),
            rows,
        })
    }

    /// Read and parse a survey table.
    ///
    /// # Errors
    /// As [`SurveyTable::parse`], or [`SurveyError::Read`].
    pub fn read(path: &Path) -> Result<Self, SurveyError> {
        let text = std::fs::read_to_string(path).map_err(|source| SurveyError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        Self::parse(&text, path)
    }

    /// Verdict counts: (number of rows, number `stable`, rows per verdict).
    pub fn counts(&self) -> (usize, usize, BTreeMap<String, usize>) {
        let mut by = BTreeMap::new();
        for l in self.rows.values() {
            let v = l.split(',').nth(3).unwrap_or("").to_string();
            *by.entry(v).or_insert(0) += 1;
        }
        let stable = by.get("stable").copied().unwrap_or(0);
        (self.rows.len(), stable, by)
    }
}

/// Join shard tables into one: headers must agree and a sample may appear
/// in several tables only with the same line (a re-run shard). The result
/// is the table the unsharded survey writes (given all shards).
///
/// # Errors
/// [`SurveyError::Mismatch`] for different headers or conflicting lines;
/// read and parse errors of the inputs.
pub fn merge_tables(paths: &[PathBuf]) -> Result<SurveyTable, SurveyError> {
    let mut out: Option<SurveyTable> = None;
    for p in paths {
        let t = SurveyTable::read(p)?;
        match &mut out {
            None => out = Some(t),
            Some(o) => {
                if o.header != t.header {
                    return Err(SurveyError::Mismatch {
                        path: p.clone(),
                        message: "header differs from the first table's (another model?)".into(),
                    });
                }
                for (k, l) in t.rows {
                    if let Some(prev) = o.rows.get(&k) {
                        if *prev != l {
                            return Err(SurveyError::Mismatch {
                                path: p.clone(),
                                message: format!(
                                    "sample {k} differs from another table's (other settings?)"
                                ),
                            });
                        }
                    } else {
                        o.rows.insert(k, l);
                    }
                }
            }
        }
    }
    out.ok_or_else(|| SurveyError::BadSettings("no table to merge".into()))
}

/// Binomial confidence interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BinomialInterval {
    /// Lower limit.
    pub lower: f64,
    /// Upper limit.
    pub upper: f64,
    /// Confidence level.
    pub confidence: f64,
}

/// ln k! for k = 0..=n (cumulative sums of ln j).
fn ln_factorials(n: u64) -> Vec<f64> {
    let mut v = Vec::with_capacity(n as usize + 1);
    let mut acc = 0.0;
    v.push(0.0);
    for j in 1..=n {
        acc += (j as f64).ln();
        v.push(acc);
    }
    v
}

/// Σ_{i ∈ range} C(n, i) p^i (1−p)^{n−i}, summed in logarithms.
fn binomial_sum(lf: &[f64], n: u64, p: f64, lo: u64, hi: u64) -> f64 {
    let (lp, lq) = (p.ln(), (-p).ln_1p());
    let nf = lf[n as usize];
    let term =
        |i: u64| nf - lf[i as usize] - lf[(n - i) as usize] + i as f64 * lp + (n - i) as f64 * lq;
    let mut mx = f64::NEG_INFINITY;
    for i in lo..=hi {
        mx = mx.max(term(i));
    }
    if mx == f64::NEG_INFINITY {
        return 0.0;
    }
    let s: f64 = (lo..=hi).map(|i| (term(i) - mx).exp()).sum();
    (mx + s.ln()).exp()
}

/// Bisection for the p in (0, 1) where `f` (monotone) crosses `target`;
/// `increasing` gives its direction.
fn bisect(f: impl Fn(f64) -> f64, target: f64, increasing: bool) -> f64 {
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        let above = f(mid) > target;
        if above == increasing {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    0.5 * (lo + hi)
}

/// Exact central (Clopper–Pearson 1934) interval for `k` successes in `n`
/// trials at `confidence` (module docs). For n = 0 the interval is [0, 1].
///
/// # Errors
/// [`SurveyError::Binomial`] for k > n or a level outside (0, 1).
pub fn clopper_pearson(k: u64, n: u64, confidence: f64) -> Result<BinomialInterval, SurveyError> {
    if k > n || !(confidence > 0.0 && confidence < 1.0) {
        return Err(SurveyError::Binomial(format!(
            "need 0 ≤ k ≤ n and 0 < confidence < 1, got k = {k}, n = {n}, confidence = {confidence}"
        )));
    }
    if n == 0 {
        return Ok(BinomialInterval {
            lower: 0.0,
            upper: 1.0,
            confidence,
        });
    }
    let half = 0.5 * (1.0 - confidence);
    let lf = ln_factorials(n);
    let lower = if k == 0 {
        0.0
    } else {
        bisect(|p| binomial_sum(&lf, n, p, k, n), half, true)
    };
    let upper = if k == n {
        1.0
    } else {
        bisect(|p| binomial_sum(&lf, n, p, 0, k), half, false)
    };
    Ok(BinomialInterval {
        lower,
        upper,
        confidence,
    })
}

/// Summary of a survey table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SurveySummary {
    /// Rows in the table.
    pub n_samples: usize,
    /// Rows judged stable.
    pub n_stable: usize,
    /// n_stable / n_samples (`None` for an empty table).
    pub stable_fraction: Option<f64>,
    /// Clopper–Pearson interval on the stable fraction.
    pub interval: BinomialInterval,
    /// Rows per verdict label.
    pub by_verdict: BTreeMap<String, usize>,
    /// Rows this run (shard) was to produce.
    pub rows_expected: usize,
    /// All of them are in the table.
    pub complete: bool,
}

/// Summary of `table` (see [`SurveySummary`]).
///
/// # Errors
/// [`SurveyError::Binomial`] for a level outside (0, 1).
pub fn summarise(
    table: &SurveyTable,
    rows_expected: usize,
    confidence: f64,
) -> Result<SurveySummary, SurveyError> {
    let (n, k, by) = table.counts();
    Ok(SurveySummary {
        n_samples: n,
        n_stable: k,
        stable_fraction: (n > 0).then(|| k as f64 / n as f64),
        interval: clopper_pearson(k as u64, n as u64, confidence)?,
        by_verdict: by,
        rows_expected,
        complete: n >= rows_expected,
    })
}

/// Progress of a survey: rows done (this run, resumed ones included) of the
/// rows this shard runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SurveyProgress {
    /// Rows done.
    pub done: usize,
    /// Rows in all.
    pub total: usize,
}

/// Survey `table` (rows from [`read_samples_csv`]) of `model`, fixed
/// parameters from `base`, into the CSV `output` (module docs).
///
/// `resume`: read `output` if it exists (its header must match and its rows
/// must be among this shard's) and run only the missing rows; otherwise
/// any existing `output` is replaced. `progress` is called from worker
/// threads after each row; returning [`Flow::Stop`] ends the survey after
/// the current chunk, with the rows done written (the summary then says
/// `complete: false`).
///
/// # Errors
/// Bad settings, missing columns, a sample that cannot be run (named by
/// file and line), a mismatched table to resume, or a failed write.
pub fn run_survey(
    model: &RvModel,
    table: &SamplesTable,
    base: &[f64],
    settings: &SurveySettings,
    output: &Path,
    resume: bool,
    progress: &(dyn Fn(SurveyProgress) -> Flow + Sync),
) -> Result<SurveySummary, SurveyError> {
    if settings.chunk == 0
        || settings.shard.count == 0
        || settings.shard.index >= settings.shard.count
    {
        return Err(SurveyError::BadSettings(format!(
            "chunk {} must be ≥ 1 and shard {}/{} must have index < count",
            settings.chunk, settings.shard.index, settings.shard.count
        )));
    }
    let vectors = parameter_vectors(model, table, base)?;
    let selected = select_rows(table.rows.len(), settings.max_samples, settings.seed);
    let mine = shard_rows(&selected, settings.shard);
    let mut names: Vec<(f64, String)> = model
        .decode_planets(base)
        .map(|d| d.into_iter().map(|p| (p.period, p.name)).collect())
        .unwrap_or_default();
    names.sort_by(|a, b| a.0.total_cmp(&b.0));
    let planet_names: Vec<String> = names.into_iter().map(|x| x.1).collect();
    let header = table_header(&planet_names);
    let mut out = SurveyTable {
        header: header.clone(),
        rows: BTreeMap::new(),
    };
    let set: std::collections::HashSet<usize> = mine.iter().copied().collect();
    let journal_path = journal_path(output);
    for p in [output, journal_path.as_path()] {
        crate::atomic::remove_stale_temps(p).map_err(|source| SurveyError::Journal {
            path: p.to_path_buf(),
            source,
        })?;
    }
    if resume {
        if output.exists() {
            let prev = SurveyTable::read(output)?;
            check_resumable(&prev, &header, &set, output)?;
            out.rows = prev.rows;
        }
        if journal_path.exists() {
            let text =
                std::fs::read_to_string(&journal_path).map_err(|source| SurveyError::Read {
                    path: journal_path.clone(),
                    source,
                })?;
            let journal = parse_journal(&text, &journal_path)?;
            check_resumable(&journal, &header, &set, &journal_path)?;
            for (k, l) in journal.rows {
                match out.rows.get(&k) {
                    Some(prev) if *prev != l => {
                        return Err(SurveyError::Mismatch {
                            path: journal_path.clone(),
                            message: format!("sample {k} differs from the table's line"),
                        });
                    }
                    Some(_) => {}
                    None => {
                        out.rows.insert(k, l);
                    }
                }
            }
        }
    }
    let todo: Vec<usize> = mine
        .iter()
        .copied()
        .filter(|k| !out.rows.contains_key(k))
        .collect();
    let total = mine.len();
    let done = AtomicUsize::new(total - todo.len());
    let stop = AtomicBool::new(false);
    let mut complete = true;
    // The table first (it holds every journal row), then a fresh journal.
    write_atomic(output, out.to_csv().as_bytes())?;
    let journal = Journal::create(&journal_path, &header)?;
    let mut in_journal = 0usize;
    for chunk in todo.chunks(settings.chunk) {
        if stop.load(Ordering::SeqCst) {
            complete = false;
            break;
        }
        let lines: Vec<Result<(usize, String), SurveyError>> = chunk
            .par_iter()
            .map(|&k| {
                let row = &table.rows[k];
                let r = run_solution(model, &vectors[k], &settings.run).map_err(|source| {
                    SurveyError::Sample {
                        path: table.source.clone(),
                        line: row.line,
                        sample: k,
                        source,
                    }
                })?;
                let line = table_line(k, row.walker, row.step, &r);
                journal.append(&line)?;
                let d = done.fetch_add(1, Ordering::SeqCst) + 1;
                if progress(SurveyProgress { done: d, total }) == Flow::Stop {
                    stop.store(true, Ordering::SeqCst);
                }
                Ok((k, line))
            })
            .collect();
        let mut first_error = None;
        for l in lines {
            match l {
                Ok((k, line)) => {
                    out.rows.insert(k, line);
                    in_journal += 1;
                }
                Err(e) => {
                    first_error.get_or_insert(e);
                }
            }
        }
        if let Some(e) = first_error {
            // The finished rows of this chunk stay in the journal.
            return Err(e);
        }
        if in_journal >= settings.chunk.max(out.rows.len() / 4) {
            write_atomic(output, out.to_csv().as_bytes())?;
            journal.reset(&header)?;
            in_journal = 0;
        }
    }
    write_atomic(output, out.to_csv().as_bytes())?;
    journal.remove()?;
    let mut s = summarise(&out, total, settings.confidence)?;
    s.complete = complete && s.n_samples == total;
    Ok(s)
}

/// The journal of finished rows beside a survey table:
/// `<table file name>.partial` in the same folder (module docs).
pub fn journal_path(table: &Path) -> PathBuf {
    let mut name = table
        .file_name()
        .map(std::ffi::OsStr::to_os_string)
        .unwrap_or_default();
    name.push(".partial");
    table.with_file_name(name)
}

/// Parses a journal: like [`SurveyTable::parse`], except that a last line
/// without its newline (torn by a kill) is dropped, and a line seen twice
/// must repeat the same text.
fn parse_journal(text: &str, path: &Path) -> Result<SurveyTable, SurveyError> {
    let whole = match text.rfind('\n') {
        Some(i) => &text[..=i],
        None => "",
    };
    let mut table = SurveyTable {
        header: String::new(),
        rows: BTreeMap::new(),
    };
    let mut lines = whole.lines();
    let Some(header) = lines.next() else {
        return Ok(table);
    };
    table.header = header.to_string();
    // Reuse the table parser for each line (field count, index) but allow
    // repeats with equal text (a row appended again after a resume).
    for (i, l) in lines.enumerate() {
        let one = SurveyTable::parse(&format!("{header}\n{l}\n"), path).map_err(|e| match e {
            SurveyError::Parse {
                path,
                column,
                name,
                message,
                ..
            } => SurveyError::Parse {
                path,
                line: i + 2,
                column,
                name,
                message,
            },
            other => other,
        })?;
        for (k, line) in one.rows {
            if let Some(prev) = table.rows.insert(k, line) {
                if table.rows.get(&k) != Some(&prev) {
                    return Err(SurveyError::Mismatch {
                        path: path.to_path_buf(),
                        message: format!("sample {k} appears twice with different lines"),
                    });
                }
            }
        }
    }
    Ok(table)
}

/// A table (or journal) to resume must have this survey's header and only
/// rows of this selection and shard.
fn check_resumable(
    prev: &SurveyTable,
    header: &str,
    mine: &std::collections::HashSet<usize>,
    path: &Path,
) -> Result<(), SurveyError> {
    if !prev.header.is_empty() && prev.header != header {
        return Err(SurveyError::Mismatch {
            path: path.to_path_buf(),
            message: "cannot resume: header differs (another model)".into(),
        });
    }
    if let Some(k) = prev.rows.keys().find(|k| !mine.contains(k)) {
        return Err(SurveyError::Mismatch {
            path: path.to_path_buf(),
            message: format!(
                "cannot resume: sample {k} is not in this selection/shard (other seed, max_samples or shard?)"
            ),
        });
    }
    Ok(())
}

/// The open journal: appends whole lines from worker threads.
struct Journal {
    path: PathBuf,
    file: std::sync::Mutex<std::fs::File>,
}

impl Journal {
    fn io(&self) -> impl Fn(std::io::Error) -> SurveyError + '_ {
        |source| SurveyError::Journal {
            path: self.path.clone(),
            source,
        }
    }

    /// Creates (or empties) the journal and writes the header.
    fn create(path: &Path, header: &str) -> Result<Self, SurveyError> {
        let file = std::fs::OpenOptions::new()
            .create(true)
            .truncate(true)
            .write(true)
            .open(path)
            .map_err(|source| SurveyError::Journal {
                path: path.to_path_buf(),
                source,
            })?;
        let j = Journal {
            path: path.to_path_buf(),
            file: std::sync::Mutex::new(file),
        };
        j.append(header)?;
        Ok(j)
    }

    /// Appends `line` and a newline in one `write` call.
    fn append(&self, line: &str) -> Result<(), SurveyError> {
        use std::io::Write as _;
        let mut buf = Vec::with_capacity(line.len() + 1);
        buf.extend_from_slice(line.as_bytes());
        buf.push(b'\n');
        let mut f = self.file.lock().unwrap_or_else(|p| p.into_inner());
        f.write_all(&buf).map_err(self.io())
    }

    /// Empties the journal (its rows are in the table now) and writes the
    /// header again.
    fn reset(&self, header: &str) -> Result<(), SurveyError> {
        use std::io::{Seek as _, SeekFrom};
        {
            let mut f = self.file.lock().unwrap_or_else(|p| p.into_inner());
            f.set_len(0).map_err(self.io())?;
            f.seek(SeekFrom::Start(0)).map_err(self.io())?;
        }
        self.append(header)
    }

    /// Closes and deletes the journal.
    fn remove(self) -> Result<(), SurveyError> {
        let Journal { path, file } = self;
        drop(file);
        std::fs::remove_file(&path).map_err(|source| SurveyError::Journal { path, source })
    }
}

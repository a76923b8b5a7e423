//! The final samples table as CSV, written atomically.

use std::fmt::Write as _;
use std::path::Path;

use super::chain::Samples;
use super::error::SampleError;
use crate::atomic::write_atomic;

/// Extra columns computed from each sample's parameters (e.g. planet
/// masses from the sampled parameters).
pub struct Derived<'a> {
    /// Column names, one per derived value.
    pub names: &'a [&'a str],
    /// Fills `out` (length `names.len()`) from one sample's parameters.
    pub compute: &'a dyn Fn(&[f64], &mut [f64]),
}

fn check_name(name: &str) -> Result<(), SampleError> {
    if name.is_empty() || name.contains([',', '"', '\n', '\r']) {
        return Err(SampleError::BadColumnName(name.to_string()));
    }
    Ok(())
}

/// Writes `samples` to `path` as CSV, atomically
/// ([`crate::atomic::write_atomic`]).
///
/// Layout: a header line `walker,step,ln_prob,<names>…,<derived names>…`,
/// then one line per sample. Numbers are written in Rust's shortest
/// round-trip form (`{:?}`), so reading them back gives the same `f64`.
///
/// # Errors
/// [`SampleError::ShapeMismatch`] if `names` does not match the sample
/// dimension, [`SampleError::BadColumnName`] for an unusable name,
/// [`SampleError::NonFiniteDerived`] if a derived value is NaN or ±∞, and
/// [`SampleError::Write`] if writing fails.
pub fn write_samples_csv(
    path: &Path,
    names: &[&str],
    samples: &Samples,
    derived: Option<Derived<'_>>,
) -> Result<(), SampleError> {
    if names.len() != samples.dim() {
        return Err(SampleError::ShapeMismatch {
            what: "parameter names",
            expected: samples.dim(),
            found: names.len(),
        });
    }
    let derived_names: &[&str] = derived.as_ref().map_or(&[], |d| d.names);
    let mut header = String::from("walker,step,ln_prob");
    for name in names.iter().chain(derived_names) {
        check_name(name)?;
        header.push(',');
        header.push_str(name);
    }
    let mut out = header;
    out.push('\n');
    let mut extra = vec![0.0; derived_names.len()];
    for i in 0..samples.len() {
        // Writing into a String cannot fail.
        let _ = write!(
            out,
            "{},{},{:?}",
            samples.walker[i], samples.step[i], samples.ln_prob[i]
        );
        let row = samples.row(i);
        for v in row {
            let _ = write!(out, ",{v:?}");
        }
        if let Some(d) = &derived {
            (d.compute)(row, &mut extra);
            for (v, name) in extra.iter().zip(d.names) {
                if !v.is_finite() {
                    return Err(SampleError::NonFiniteDerived {
                        row: i,
                        column: (*name).to_string(),
                    });
                }
                let _ = write!(out, ",{v:?}");
            }
        }
        out.push('\n');
    }
    write_atomic(path, out.as_bytes())?;
    Ok(())
}

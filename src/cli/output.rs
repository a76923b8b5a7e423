//! Errors with their exit codes, and atomic writing of result files.

use std::path::{Path, PathBuf};

use serde::Serialize;

/// A failure of a subcommand, with its exit code.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// The user's input was refused (exit code 2).
    #[error("{0}")]
    BadInput(String),
    /// Something failed inside (exit code 1).
    #[error("{0}")]
    Internal(String),
}

impl CliError {
    /// 2 for bad input, 1 for an internal failure.
    pub fn exit_code(&self) -> i32 {
        match self {
            CliError::BadInput(_) => 2,
            CliError::Internal(_) => 1,
        }
    }
}

/// Create the output folder.
pub fn ensure_dir(dir: &Path) -> Result<(), CliError> {
    std::fs::create_dir_all(dir).map_err(|e| {
        CliError::BadInput(format!(
            "{}: cannot create the output folder: {e}",
            dir.display()
        ))
    })
}

/// Write `value` as `<stem>.ron` and `<stem>.json` in `dir`, atomically.
pub fn write_report<T: Serialize>(
    dir: &Path,
    stem: &str,
    value: &T,
) -> Result<Vec<PathBuf>, CliError> {
    let ron = ron::ser::to_string_pretty(value, ron::ser::PrettyConfig::default())
        .map_err(|e| CliError::Internal(format!("cannot format {stem}.ron: {e}")))?;
    let json = serde_json::to_string_pretty(value)
        .map_err(|e| CliError::Internal(format!("cannot format {stem}.json: {e}")))?;
    let mut out = Vec::new();
    for (ext, text) in [("ron", ron), ("json", json)] {
        let path = dir.join(format!("{stem}.{ext}"));
        write_text(&path, &text)?;
        out.push(path);
    }
    Ok(out)
}

/// Write text to a file atomically.
pub fn write_text(path: &Path, text: &str) -> Result<(), CliError> {
    apsidal::atomic::write_atomic(path, text.as_bytes())
        .map_err(|e| CliError::Internal(e.to_string()))
}

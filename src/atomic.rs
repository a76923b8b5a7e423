//! Atomic file writing: a reader sees either the old file or the new one,
//! never a partly written file.
//!
//! Method (common practice on POSIX file systems): write the bytes to a
//! temporary file in the *same* folder, flush them to disk (`fsync`), then
//! `rename` the temporary file over the target. A rename within one file
//! system replaces the directory entry in one step. The folder itself is then
//! synced so that the rename survives a power cut (best effort: not every
//! platform lets a folder be opened for syncing).

use std::fs::{self, File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

/// Why an atomic write failed. The target file is unchanged in every case
/// and no temporary file is left behind (unless removing it failed too).
#[derive(Debug, thiserror::Error)]
pub enum AtomicWriteError {
    /// The path has no file-name part (e.g. `/` or `..`).
    #[error("cannot write atomically to {0}: the path names no file")]
    NoFileName(PathBuf),
    /// An input/output step failed.
    #[error("atomic write to {path} failed while {stage}: {source}")]
    Io {
        /// The target path.
        path: PathBuf,
        /// Which step failed (creating, writing, syncing or renaming).
        stage: &'static str,
        /// The underlying error.
        source: io::Error,
    },
}

/// Counter that keeps temporary names unique between threads of one process.
static TEMP_COUNTER: AtomicU64 = AtomicU64::new(0);

/// Writes `bytes` to `path` atomically: temporary file in the same folder,
/// `fsync`, `rename` over the target, then `fsync` of the folder.
///
/// The temporary file is named `.<file name>.<process id>.<counter>.tmp`
/// and is removed if any step fails.
///
/// # Errors
/// [`AtomicWriteError`] if the path names no file or any file-system step
/// fails; the previous content of `path` (if any) is then untouched.
///
/// # Example
/// ```
/// let dir = std::env::temp_dir().join(format!("apsidal-atomic-doc-{}", std::process::id()));
/// std::fs::create_dir_all(&dir).unwrap();
/// let path = dir.join("table.csv");
/// apsidal::atomic::write_atomic(&path, b"a,b\n1,2\n").unwrap();
/// assert_eq!(std::fs::read(&path).unwrap(), b"a,b\n1,2\n");
/// std::fs::remove_dir_all(&dir).unwrap();
/// ```
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), AtomicWriteError> {
    let file_name = path
        .file_name()
        .ok_or_else(|| AtomicWriteError::NoFileName(path.to_path_buf()))?;
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let n = TEMP_COUNTER.fetch_add(1, Ordering::Relaxed);
    let mut temp_name = std::ffi::OsString::from(".");
    temp_name.push(file_name);
    temp_name.push(format!(".{}.{}.tmp", std::process::id(), n));
    let temp_path = folder.join(temp_name);

    let io_err = |stage: &'static str| {
        let path = path.to_path_buf();
        move |source: io::Error| AtomicWriteError::Io {
            path,
            stage,
            source,
        }
    };

    let result = (|| {
        let mut file = OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&temp_path)
            .map_err(io_err("creating the temporary file"))?;
        file.write_all(bytes)
            .map_err(io_err("writing the temporary file"))?;
        file.sync_all()
            .map_err(io_err("syncing the temporary file"))?;
        drop(file);
        fs::rename(&temp_path, path).map_err(io_err("renaming over the target"))?;
        Ok(())
    })();

    match result {
        Ok(()) => {
            // Best effort: persist the directory entry. Some platforms cannot
            // open a folder as a file; the data itself is already synced.
            if let Ok(dir) = File::open(&folder) {
                let _ = dir.sync_all();
            }
            Ok(())
        }
        Err(e) => {
            let _ = fs::remove_file(&temp_path);
            Err(e)
        }
    }
}

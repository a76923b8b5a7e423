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
/// (unique per process and per call) and is removed if any step fails.
/// After a successful rename, temporary files of the same target left by
/// processes that no longer run (a killed earlier run) are removed
/// ([`remove_stale_temps`], best effort).
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
            let _ = remove_stale_temps(path);
            Ok(())
        }
        Err(e) => {
            let _ = fs::remove_file(&temp_path);
            Err(e)
        }
    }
}

/// The process id and counter of a temporary name written by
/// [`write_atomic`] for the target named `target`, or `None` if `name` is
/// not such a name.
fn temp_owner(name: &str, target: &str) -> Option<u32> {
    let rest = name.strip_prefix('.')?.strip_prefix(target)?;
    let rest = rest.strip_prefix('.')?.strip_suffix(".tmp")?;
    let (pid, counter) = rest.split_once('.')?;
    counter.parse::<u64>().ok()?;
    pid.parse::<u32>().ok()
}

/// Whether process `pid` may still be running. Without a `/proc` file
/// system (not Linux) liveness cannot be told, and every process is taken
/// as alive, so nothing is removed.
fn may_be_alive(pid: u32) -> bool {
    if pid == std::process::id() {
        return true;
    }
    let proc_root = Path::new("/proc");
    if !proc_root.join("self").exists() {
        return true;
    }
    proc_root.join(pid.to_string()).exists()
}

/// Removes the temporary files that [`write_atomic`] left beside `path`
/// in runs that were killed mid-write (`.<file name>.<pid>.<counter>.tmp`
/// whose process no longer runs; liveness from `/proc`, so on systems
/// without it nothing is removed). Temporary files of running processes,
/// including this one, and all other files are left alone. Returns the
/// number of files removed.
///
/// # Errors
/// The error of listing the folder (a missing folder counts as nothing to
/// remove); files that cannot be removed are skipped.
pub fn remove_stale_temps(path: &Path) -> io::Result<usize> {
    let Some(target) = path.file_name().and_then(|n| n.to_str()) else {
        return Ok(0);
    };
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let entries = match fs::read_dir(&folder) {
        Ok(e) => e,
        Err(e) if e.kind() == io::ErrorKind::NotFound => return Ok(0),
        Err(e) => return Err(e),
    };
    let mut removed = 0;
    for entry in entries.flatten() {
        let name = entry.file_name();
        let Some(name) = name.to_str() else { continue };
        if let Some(pid) = temp_owner(name, target) {
            if !may_be_alive(pid) && fs::remove_file(entry.path()).is_ok() {
                removed += 1;
            }
        }
    }
    Ok(removed)
}

#[cfg(test)]
mod tests {
    use super::temp_owner;

    #[test]
    fn temp_names_are_recognised_only_for_their_target() {
        assert_eq!(temp_owner(".survey.csv.123.4.tmp", "survey.csv"), Some(123));
        assert_eq!(temp_owner(".survey.csv.123.4.tmp", "survey"), None);
        assert_eq!(temp_owner(".survey.csv.x.4.tmp", "survey.csv"), None);
        assert_eq!(temp_owner("survey.csv.123.4.tmp", "survey.csv"), None);
        assert_eq!(temp_owner(".survey.csv.123.tmp", "survey.csv"), None);
        assert_eq!(temp_owner(".a.b.csv.7.0.tmp", "a.b.csv"), Some(7));
    }
}

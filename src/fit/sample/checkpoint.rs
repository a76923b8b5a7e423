//! Checkpoints: the sampler state, written so that a kill at any moment
//! leaves something a resume continues from bit-for-bit.
//!
//! # Files
//!
//! A checkpoint at `PATH` (e.g. `checkpoint.ron`) is two files:
//!
//! * the **state**, `PATH`, RON, small and replaced atomically
//!   ([`write_atomic`]) at every checkpoint: format version, walker count,
//!   dimension, stretch scale, the step count, the ChaCha20 stream (seed,
//!   stream number and word position), the walkers' current positions,
//!   log-probabilities and accept counts, and the name and valid length (in
//!   bytes) of the chain file;
//! * the **chain**, [`chain_path_for`]`(PATH)` (e.g. `checkpoint.chain`),
//!   text, append-only: a header line, then one line per step,
//!   `<step> <ln p of walker 0> <its dim coordinates> <ln p of walker 1> …`,
//!   every number in Rust's shortest round-trip form (`{:e}`).
//!
//! A checkpoint appends only the steps since the previous one to the chain,
//! syncs it (`fsync`), then replaces the state, so its cost does not grow
//! with the chain. The state names the chain length it vouches for; lines
//! beyond it (a kill after the append, before the state was replaced, or in
//! the middle of a line) are cut off when the checkpoint is read again or
//! the next one is written. RON and `{:e}` both write every `f64` so that
//! it reads back exactly.
//!
//! [`EnsembleSampler::checkpoint_string`] is the single-string form (state
//! and whole chain in one RON text, format 1), for snapshots in memory;
//! [`EnsembleSampler::load_checkpoint`] also reads such a text from a file.

use std::borrow::Cow;
use std::fmt::Write as _;
use std::fs::OpenOptions;
use std::io::{Read as _, Seek as _, SeekFrom, Write as _};
use std::path::{Path, PathBuf};

use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;
use serde::{Deserialize, Serialize};

use super::chain::Chain;
use super::error::SampleError;
use super::stretch::EnsembleSampler;
use crate::atomic::write_atomic;

/// Version of the single-string layout (state and whole chain in RON).
const FORMAT_VERSION: u32 = 1;

/// Version of the two-file layout (state RON + append-only chain file).
const FILE_FORMAT_VERSION: u32 = 2;

/// Serialisable position of a ChaCha20 stream.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
struct RngState {
    seed: [u8; 32],
    stream: u64,
    /// Word position (a u128) as high and low 64-bit halves.
    word_pos_hi: u64,
    word_pos_lo: u64,
}

impl RngState {
    fn of(rng: &ChaCha20Rng) -> Self {
        let pos = rng.get_word_pos();
        Self {
            seed: rng.get_seed(),
            stream: rng.get_stream(),
            word_pos_hi: (pos >> 64) as u64,
            word_pos_lo: pos as u64,
        }
    }

    fn restore(&self) -> ChaCha20Rng {
        let mut rng = ChaCha20Rng::from_seed(self.seed);
        rng.set_stream(self.stream);
        rng.set_word_pos(((self.word_pos_hi as u128) << 64) | self.word_pos_lo as u128);
        rng
    }
}

/// The checkpoint file's contents (borrowed when writing, owned when read).
#[derive(Debug, Serialize, Deserialize)]
struct Checkpoint<'a> {
    format: u32,
    n_walkers: usize,
    dim: usize,
    stretch_scale: f64,
    steps_done: u64,
    rng: RngState,
    positions: Cow<'a, [f64]>,
    ln_probs: Cow<'a, [f64]>,
    accepted: Cow<'a, [u64]>,
    chain: Cow<'a, Chain>,
}

impl EnsembleSampler {
    /// The complete sampler state as a RON string.
    ///
    /// # Errors
    /// [`SampleError::Format`] if encoding fails.
    pub fn checkpoint_string(&self) -> Result<String, SampleError> {
        let c = Checkpoint {
            format: FORMAT_VERSION,
            n_walkers: self.n_walkers,
            dim: self.dim,
            stretch_scale: self.stretch_scale,
            steps_done: self.steps_done,
            rng: RngState::of(&self.rng),
            positions: Cow::Borrowed(&self.positions),
            ln_probs: Cow::Borrowed(&self.ln_probs),
            accepted: Cow::Borrowed(&self.accepted),
            chain: Cow::Borrowed(&self.chain),
        };
        ron::to_string(&c).map_err(|e| SampleError::Format(e.to_string()))
    }

    /// A sampler rebuilt from [`checkpoint_string`](Self::checkpoint_string)
    /// output; it continues exactly where the saved one stopped.
    ///
    /// # Errors
    /// [`SampleError::Format`] for unreadable text,
    /// [`SampleError::BadCheckpoint`] for an unknown format version or an
    /// inconsistent step count, and the shape errors of a new sampler.
    pub fn from_checkpoint_str(text: &str) -> Result<Self, SampleError> {
        let c: Checkpoint<'static> =
            ron::from_str(text).map_err(|e| SampleError::Format(e.to_string()))?;
        if c.format != FORMAT_VERSION {
            return Err(SampleError::BadCheckpoint(format!(
                "format version {} (this build reads {FORMAT_VERSION})",
                c.format
            )));
        }
        let chain = c.chain.into_owned();
        if chain.n_steps() as u64 != c.steps_done {
            return Err(SampleError::BadCheckpoint(format!(
                "{} steps done but {} stored",
                c.steps_done,
                chain.n_steps()
            )));
        }
        chain.validate()?;
        if c.accepted.iter().any(|&a| a > c.steps_done) {
            return Err(SampleError::BadCheckpoint(
                "a walker has more accepted moves than steps".into(),
            ));
        }
        EnsembleSampler::from_parts(
            c.n_walkers,
            c.dim,
            c.stretch_scale,
            c.positions.into_owned(),
            c.ln_probs.into_owned(),
            c.rng.restore(),
            c.steps_done,
            c.accepted.into_owned(),
            chain,
        )
    }

    /// Writes a checkpoint at `path` in the two-file layout (module
    /// docs): the steps not yet in the chain file [`chain_path_for`]`(path)`
    /// are appended to it and synced, then the state at `path` is replaced
    /// atomically. The steps already on disk are found from the previous
    /// state at `path`; if there is none, or it belongs to another run (its
    /// walkers' positions are not this chain's row at its step count), the
    /// old state is removed first and the chain file is rewritten whole.
    ///
    /// # Errors
    /// [`SampleError::Format`], [`SampleError::Write`] or
    /// [`SampleError::ChainFile`].
    pub fn save_checkpoint(&self, path: &Path) -> Result<(), SampleError> {
        let chain_path = chain_path_for(path);
        let chain_bytes = match self.append_to_chain_file(path, &chain_path)? {
            Some(bytes) => bytes,
            None => {
                // No usable previous state: never leave an old state beside
                // a chain file it does not describe.
                match std::fs::remove_file(path) {
                    Ok(()) => {}
                    Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
                    Err(e) => return Err(chain_err(path, e)),
                }
                let mut text = chain_header(self.n_walkers, self.dim);
                for row in 0..self.chain.n_steps() {
                    self.format_row(row, &mut text);
                }
                write_atomic(&chain_path, text.as_bytes())?;
                text.len() as u64
            }
        };
        let chain_file = chain_path
            .file_name()
            .and_then(|n| n.to_str())
            .unwrap_or_default()
            .to_string();
        let state = State {
            format: FILE_FORMAT_VERSION,
            n_walkers: self.n_walkers,
            dim: self.dim,
            stretch_scale: self.stretch_scale,
            steps_done: self.steps_done,
            rng: RngState::of(&self.rng),
            positions: Cow::Borrowed(&self.positions),
            ln_probs: Cow::Borrowed(&self.ln_probs),
            accepted: Cow::Borrowed(&self.accepted),
            chain_file,
            chain_bytes,
        };
        let text = ron::to_string(&state).map_err(|e| SampleError::Format(e.to_string()))?;
        write_atomic(path, text.as_bytes())?;
        Ok(())
    }

    /// Appends the missing steps to the chain file when the previous state
    /// at `path` describes a prefix of this sampler's chain; returns the
    /// new valid length, or `None` when the whole file must be rewritten.
    fn append_to_chain_file(
        &self,
        path: &Path,
        chain_path: &Path,
    ) -> Result<Option<u64>, SampleError> {
        let Ok(text) = std::fs::read_to_string(path) else {
            return Ok(None);
        };
        let Ok(old) = ron::from_str::<State<'static>>(&text) else {
            return Ok(None);
        };
        let same_run = old.format == FILE_FORMAT_VERSION
            && old.n_walkers == self.n_walkers
            && old.dim == self.dim
            && old.steps_done <= self.steps_done
            && old.steps_done > 0
            && Some(old.chain_file.as_str()) == chain_path.file_name().and_then(|n| n.to_str())
            && {
                let row = old.steps_done as usize - 1;
                let w = self.n_walkers;
                let d = self.dim;
                self.chain.positions_flat()[row * w * d..(row + 1) * w * d] == *old.positions
                    && self.chain.ln_probs_flat()[row * w..(row + 1) * w] == *old.ln_probs
            };
        if !same_run {
            return Ok(None);
        }
        let mut file = match OpenOptions::new().write(true).open(chain_path) {
            Ok(f) => f,
            Err(_) => return Ok(None),
        };
        let len = file.metadata().map_err(|e| chain_err(chain_path, e))?.len();
        if len < old.chain_bytes {
            return Ok(None);
        }
        file.set_len(old.chain_bytes)
            .map_err(|e| chain_err(chain_path, e))?;
        file.seek(SeekFrom::Start(old.chain_bytes))
            .map_err(|e| chain_err(chain_path, e))?;
        let mut text = String::new();
        for row in old.steps_done as usize..self.chain.n_steps() {
            self.format_row(row, &mut text);
        }
        file.write_all(text.as_bytes())
            .map_err(|e| chain_err(chain_path, e))?;
        file.sync_data().map_err(|e| chain_err(chain_path, e))?;
        Ok(Some(old.chain_bytes + text.len() as u64))
    }

    /// Appends chain row `row` (step `row + 1`) as one text line.
    fn format_row(&self, row: usize, out: &mut String) {
        let _ = write!(out, "{}", row + 1);
        for w in 0..self.n_walkers {
            let _ = write!(out, " {:e}", self.chain.ln_prob(row, w));
            for x in self.chain.position(row, w) {
                let _ = write!(out, " {x:e}");
            }
        }
        out.push('\n');
    }

    /// Reads a checkpoint written by [`save_checkpoint`](Self::save_checkpoint)
    /// (or a single-string one, format 1). Chain-file bytes beyond the
    /// length the state vouches for (left by a kill) are cut off, and stale
    /// temporary files of both files are removed
    /// ([`crate::atomic::remove_stale_temps`]).
    ///
    /// # Errors
    /// [`SampleError::Read`], [`SampleError::ChainFile`], the errors of
    /// [`from_checkpoint_str`](Self::from_checkpoint_str), and
    /// [`SampleError::BadCheckpoint`] when the chain file is shorter than
    /// the state says, malformed, or does not end at the state's walkers.
    pub fn load_checkpoint(path: &Path) -> Result<Self, SampleError> {
        let text = std::fs::read_to_string(path).map_err(|source| SampleError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        let chain_path = chain_path_for(path);
        for p in [path, chain_path.as_path()] {
            let _ = crate::atomic::remove_stale_temps(p);
        }
        let state: State<'static> = match ron::from_str(&text) {
            Ok(s) => s,
            // Not the two-file layout: try the single-string one.
            Err(_) => return Self::from_checkpoint_str(&text),
        };
        if state.format != FILE_FORMAT_VERSION {
            return Err(SampleError::BadCheckpoint(format!(
                "format version {} (this build reads {FORMAT_VERSION} and {FILE_FORMAT_VERSION})",
                state.format
            )));
        }
        let chain_path = match path.parent() {
            Some(p) => p.join(&state.chain_file),
            None => PathBuf::from(&state.chain_file),
        };
        let mut file = OpenOptions::new()
            .read(true)
            .write(true)
            .open(&chain_path)
            .map_err(|e| chain_err(&chain_path, e))?;
        let len = file
            .metadata()
            .map_err(|e| chain_err(&chain_path, e))?
            .len();
        if len < state.chain_bytes {
            return Err(SampleError::BadCheckpoint(format!(
                "{}: {len} bytes, the state vouches for {}",
                chain_path.display(),
                state.chain_bytes
            )));
        }
        let mut bytes = Vec::with_capacity(state.chain_bytes as usize);
        (&mut file)
            .take(state.chain_bytes)
            .read_to_end(&mut bytes)
            .map_err(|e| chain_err(&chain_path, e))?;
        let chain = parse_chain(&bytes, &state, &chain_path)?;
        if len > state.chain_bytes {
            file.set_len(state.chain_bytes)
                .map_err(|e| chain_err(&chain_path, e))?;
        }
        if state.accepted.iter().any(|&a| a > state.steps_done) {
            return Err(SampleError::BadCheckpoint(
                "a walker has more accepted moves than steps".into(),
            ));
        }
        EnsembleSampler::from_parts(
            state.n_walkers,
            state.dim,
            state.stretch_scale,
            state.positions.into_owned(),
            state.ln_probs.into_owned(),
            state.rng.restore(),
            state.steps_done,
            state.accepted.into_owned(),
            chain,
        )
    }
}

/// The state file of the two-file layout (borrowed when writing).
#[derive(Debug, Serialize, Deserialize)]
struct State<'a> {
    format: u32,
    n_walkers: usize,
    dim: usize,
    stretch_scale: f64,
    steps_done: u64,
    rng: RngState,
    positions: Cow<'a, [f64]>,
    ln_probs: Cow<'a, [f64]>,
    accepted: Cow<'a, [u64]>,
    /// File name of the chain, in the state's folder.
    chain_file: String,
    /// Bytes of the chain file that hold `steps_done` whole steps.
    chain_bytes: u64,
}

/// The chain file of a checkpoint at `checkpoint`: the same folder and
/// stem with the extension `chain` (`checkpoint.ron` → `checkpoint.chain`;
/// `x.chain` → `x.chain.chain`).
pub fn chain_path_for(checkpoint: &Path) -> PathBuf {
    let p = checkpoint.with_extension("chain");
    if p == checkpoint {
        let mut name = checkpoint
            .file_name()
            .map(std::ffi::OsStr::to_os_string)
            .unwrap_or_default();
        name.push(".chain");
        checkpoint.with_file_name(name)
    } else {
        p
    }
}

fn chain_header(n_walkers: usize, dim: usize) -> String {
    format!(
        "# apsidal sampler chain, format 1: {n_walkers} walkers, {dim} parameters; per line: step, then per walker ln p and the parameters\n"
    )
}

fn chain_err(path: &Path, source: std::io::Error) -> SampleError {
    SampleError::ChainFile {
        path: path.to_path_buf(),
        source,
    }
}

/// Parses the vouched-for part of a chain file into a [`Chain`], checking
/// the header, every step number and field, and that the last row is the
/// state's ensemble.
fn parse_chain(bytes: &[u8], state: &State<'_>, path: &Path) -> Result<Chain, SampleError> {
    let bad = |line: usize, what: String| {
        SampleError::BadCheckpoint(format!("{}:{line}: {what}", path.display()))
    };
    let text = std::str::from_utf8(bytes).map_err(|_| bad(0, "not UTF-8 text".into()))?;
    let (w, d) = (state.n_walkers, state.dim);
    let mut lines = text.split_terminator('\n');
    if lines.next() != Some(chain_header(w, d).trim_end()) {
        return Err(bad(
            1,
            format!("header does not announce {w} walkers, {d} parameters"),
        ));
    }
    let n = state.steps_done as usize;
    let mut positions = Vec::with_capacity(n.saturating_mul(w * d));
    let mut ln_probs = Vec::with_capacity(n.saturating_mul(w));
    let mut rows = 0usize;
    for (i, l) in lines.enumerate() {
        let line = i + 2;
        let mut fields = l.split(' ');
        let step: Option<usize> = fields.next().and_then(|f| f.parse().ok());
        if step != Some(i + 1) {
            return Err(bad(line, format!("expected step {}", i + 1)));
        }
        let mut count = 0usize;
        for (k, f) in fields.enumerate() {
            let v: f64 = match f.parse() {
                Ok(v) if f64::is_finite(v) => v,
                _ => {
                    return Err(bad(
                        line,
                        format!("field {} `{f}` is not a finite number", k + 2),
                    ));
                }
            };
            if k % (d + 1) == 0 {
                ln_probs.push(v);
            } else {
                positions.push(v);
            }
            count += 1;
        }
        if count != w * (d + 1) {
            return Err(bad(
                line,
                format!("{count} numbers, expected {}", w * (d + 1)),
            ));
        }
        rows += 1;
    }
    if rows != n {
        return Err(bad(
            rows + 1,
            format!("{rows} steps stored, the state records {n}"),
        ));
    }
    if n > 0
        && (positions[(n - 1) * w * d..] != *state.positions
            || ln_probs[(n - 1) * w..] != *state.ln_probs)
    {
        return Err(SampleError::BadCheckpoint(format!(
            "{}: the last step is not the state's ensemble (files of different runs?)",
            path.display()
        )));
    }
    Chain::from_parts(w, d, positions, ln_probs)
}

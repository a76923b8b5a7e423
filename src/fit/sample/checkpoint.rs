//! Checkpoints: the complete sampler state as RON, written atomically.
//!
//! The state holds the positions, log-probabilities, the ChaCha20 random
//! stream (seed, stream number and word position), the step count, the
//! accept counts and the stored chain, so that a resumed run continues
//! bit-for-bit where the saved one stopped. RON is used because it writes
//! every `f64` in its shortest round-trip form and reads it back exactly.

use std::borrow::Cow;
use std::path::Path;

use rand::SeedableRng;
use rand_chacha::ChaCha20Rng;
use serde::{Deserialize, Serialize};

use super::chain::Chain;
use super::error::SampleError;
use super::stretch::EnsembleSampler;
use crate::atomic::write_atomic;

/// Version of the checkpoint layout; bumped when fields change.
const FORMAT_VERSION: u32 = 1;

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

    /// Writes the complete state to `path` atomically
    /// ([`crate::atomic::write_atomic`]).
    ///
    /// # Errors
    /// [`SampleError::Format`] or [`SampleError::Write`].
    pub fn save_checkpoint(&self, path: &Path) -> Result<(), SampleError> {
        let text = self.checkpoint_string()?;
        write_atomic(path, text.as_bytes())?;
        Ok(())
    }

    /// Reads a checkpoint written by [`save_checkpoint`](Self::save_checkpoint).
    ///
    /// # Errors
    /// [`SampleError::Read`] and the errors of
    /// [`from_checkpoint_str`](Self::from_checkpoint_str).
    pub fn load_checkpoint(path: &Path) -> Result<Self, SampleError> {
        let text = std::fs::read_to_string(path).map_err(|source| SampleError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        Self::from_checkpoint_str(&text)
    }
}

//! RV tables: reading, validation, instruments (DESIGN §7, §9).
//!
//! # Table format
//!
//! Plain text, one measurement a line:
//!
//! | column | field        | unit | notes                                     |
//! |--------|--------------|------|-------------------------------------------|
//! | 1      | `time`       | days | e.g. BJD_TDB                              |
//! | 2      | `rv`         | m/s  | positive: the star recedes                |
//! | 3      | `error`      | m/s  | 1σ, must be > 0                           |
//! | 4      | `instrument` | —    | optional label, e.g. `VESKA`              |
//!
//! * **Separators.** A line that contains a comma is split at commas (each
//!   field trimmed, so labels may hold inner spaces); any other line is
//!   split at runs of spaces and tabs.
//! * **Comments.** `#` starts a comment that runs to the end of the line,
//!   on a line of its own or after the data. Blank lines are skipped.
//! * **Header.** The first non-blank, non-comment line is a header when
//!   *none* of its fields reads as a number (e.g. `time rv err instrument`).
//!   It is a label line only — the column order is always the one above —
//!   and it must name as many columns as the data lines have. A line that
//!   mixes text and numbers is a data line, so a typo in the first epoch is
//!   reported, not swallowed as a header.
//! * **Column count.** The first data line fixes it (3 or 4); every other
//!   data line must match it.
//! * **Instruments.** A 4-column file carries its labels; a 3-column file
//!   needs an instrument assigned by the caller (the run file names one per
//!   file). If both exist they must agree.
//! * **Values.** Every number must be finite (`NaN`, `inf` and overflow are
//!   refused); errors must be > 0; an epoch may appear only once per
//!   instrument (two instruments may share an epoch). Lines need not be in
//!   time order: the dataset is sorted.
//! * **Time scale.** Epochs are used as written. The tool never converts
//!   between or mixes time scales (BJD_TDB, HJD, JD_UTC, …): all tables of
//!   one run must use the same day count, and results are given in it.
//! * **Encoding.** UTF-8 (a leading byte-order mark is skipped); lines end
//!   in `\n` or `\r\n`. Invalid UTF-8 and control characters are refused
//!   with the line that holds them.
//!
//! Every rejection is a [`TableError`] naming the file, the line and, where
//! one field is at fault, the column and its field name. No input bytes
//! make the reader panic.

mod dataset;
mod error;
mod table;

pub use dataset::{
    Dataset, DatasetBuilder, Instrument, InstrumentData, InstrumentLabel, Measurement, Source,
};
pub use error::{Column, Location, TableError};

use std::path::PathBuf;

/// One RV table to read: a path and where its instrument label comes from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TableSource {
    /// Path of the table file.
    pub path: PathBuf,
    /// The instrument of its lines.
    pub instrument: InstrumentLabel,
}

/// Parse one RV table held in memory (embedded demo data, tests).
/// `name` stands for the file name in messages.
///
/// ```
/// use apsidal::data::{parse_table, InstrumentLabel};
/// let text = "\
/// ## Orrin-442, invented data
/// time     rv      err  instrument
/// 2459000.51  12.3  1.8  VESKA
/// 2459001.49  -4.1  1.9  VESKA   # cloudy
/// 2459001.50   7.7  3.2  MIRRAL
/// ";
/// let d = parse_table(text.as_bytes(), "orrin442.txt", &InstrumentLabel::FromColumn).unwrap();
/// assert_eq!(d.len(), 3);
/// assert_eq!(d.instruments().len(), 2);
/// assert!((d.baseline() - 0.99).abs() < 1e-9);
///
/// let bad = parse_table(b"2459000.5 nan 1.0 VESKA\n", "bad.txt", &InstrumentLabel::FromColumn);
/// assert_eq!(bad.unwrap_err().to_string(),
///     "bad.txt:1: column 2 (rv): value is NaN ('nan'); every value must be a finite number");
/// ```
pub fn parse_table(
    bytes: &[u8],
    name: &str,
    instrument: &InstrumentLabel,
) -> Result<Dataset, TableError> {
    let mut b = DatasetBuilder::new();
    b.add_bytes(bytes, name, instrument)?;
    b.finish()
}

/// Read several RV tables into one dataset. If `allowed` is given, only
/// those instrument labels are accepted.
///
/// ```no_run
/// use apsidal::data::{read_tables, InstrumentLabel, TableSource};
/// let sources = [
///     TableSource { path: "korva.txt".into(), instrument: InstrumentLabel::Given("VESKA".into()) },
///     TableSource { path: "mixed.csv".into(), instrument: InstrumentLabel::FromColumn },
/// ];
/// let data = read_tables(&sources, Some(&["VESKA".to_string(), "MIRRAL".to_string()]))?;
/// println!("{} epochs over {:.1} d", data.len(), data.baseline());
/// # Ok::<(), apsidal::data::TableError>(())
/// ```
pub fn read_tables(
    sources: &[TableSource],
    allowed: Option<&[String]>,
) -> Result<Dataset, TableError> {
    let mut b = DatasetBuilder::new();
    if let Some(a) = allowed {
        b = b.allow_only(a.iter().cloned());
    }
    for s in sources {
        b.add_file(&s.path, &s.instrument)?;
    }
    b.finish()
}

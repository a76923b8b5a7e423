//! Typed errors of the RV table reader.
//!
//! Every variant that concerns a place in a file carries a [`Location`]
//! (file and 1-based line) and, where one field is at fault, the
//! [`Column`]. Their `Display` starts with `file:line:` so that editors and
//! terminals can jump to the place.

use std::fmt;
use std::io;

use thiserror::Error;

/// One of the columns of an RV table, in file order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Column {
    /// Column 1: epoch of the measurement in days (the day count of the file, e.g. BJD_TDB).
    Time,
    /// Column 2: radial velocity in m/s.
    Rv,
    /// Column 3: 1σ measurement error in m/s.
    Error,
    /// Column 4 (optional): instrument label.
    Instrument,
}

impl Column {
    /// The columns in file order.
    pub const ALL: [Column; 4] = [Column::Time, Column::Rv, Column::Error, Column::Instrument];

    /// 1-based column number in the file.
    pub fn number(self) -> usize {
        match self {
            Column::Time => 1,
            Column::Rv => 2,
            Column::Error => 3,
            Column::Instrument => 4,
        }
    }

    /// The column with 1-based number `n`, if there is one.
    pub fn from_number(n: usize) -> Option<Column> {
        n.checked_sub(1).and_then(|i| Column::ALL.get(i).copied())
    }

    /// The field name used in messages: `time`, `rv`, `error` or `instrument`.
    pub fn name(self) -> &'static str {
        match self {
            Column::Time => "time",
            Column::Rv => "rv",
            Column::Error => "error",
            Column::Instrument => "instrument",
        }
    }
}

impl fmt::Display for Column {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "column {} ({})", self.number(), self.name())
    }
}

/// A place in an input: the file's display name and a 1-based line number.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Location {
    /// Display name of the file (its path as given, or the name given to in-memory data).
    pub file: String,
    /// 1-based line number.
    pub line: usize,
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}", self.file, self.line)
    }
}

/// Why an RV table was refused. The first problem found (in file and line
/// order) is reported.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum TableError {
    /// The file could not be read.
    #[error("{file}: cannot read the RV table: {source}")]
    Io {
        /// Display name of the file.
        file: String,
        /// The underlying I/O error.
        #[source]
        source: io::Error,
    },

    /// A line is not valid UTF-8 (typically a binary file).
    #[error("{at}: not text: invalid UTF-8 at byte {byte} of the line (is this a binary file?)")]
    InvalidUtf8 {
        /// Where.
        at: Location,
        /// 1-based byte offset within the line of the first invalid byte.
        byte: usize,
    },

    /// A line holds a control character (other than tab or a final carriage
    /// return), which a text table never does (typically a binary file).
    #[error(
        "{at}: not text: control character U+{code:04X} at character {position} of the line (is this a binary file?)"
    )]
    ControlCharacter {
        /// Where.
        at: Location,
        /// The code point.
        code: u32,
        /// 1-based character position within the line.
        position: usize,
    },

    /// A field that must be a number is not one.
    #[error("{at}: {column}: '{text}' is not a number")]
    NotANumber {
        /// Where.
        at: Location,
        /// Which field.
        column: Column,
        /// The offending text (shortened if long).
        text: String,
    },

    /// A numeric field is NaN.
    #[error("{at}: {column}: value is NaN ('{text}'); every value must be a finite number")]
    NotANumberValue {
        /// Where.
        at: Location,
        /// Which field.
        column: Column,
        /// The text as written.
        text: String,
    },

    /// A numeric field is infinite (written as `inf` or overflowing f64).
    #[error("{at}: {column}: value is infinite ('{text}'); every value must be a finite number")]
    Infinite {
        /// Where.
        at: Location,
        /// Which field.
        column: Column,
        /// The text as written.
        text: String,
    },

    /// A measurement error is zero or negative.
    #[error("{at}: {column}: the measurement error must be > 0 m/s, found {value}")]
    NonPositiveError {
        /// Where.
        at: Location,
        /// Always [`Column::Error`].
        column: Column,
        /// The value read.
        value: f64,
    },

    /// A comma-separated line has an empty field.
    #[error("{at}: {column}: missing value (empty field between commas)")]
    EmptyField {
        /// Where.
        at: Location,
        /// Which field.
        column: Column,
    },

    /// The first data line has fewer than 3 or more than 4 fields.
    #[error(
        "{at}: {detail}: found {found} field(s), a data line has 3 (time, rv, error) or 4 (time, rv, error, instrument)"
    )]
    BadFieldCount {
        /// Where.
        at: Location,
        /// Number of fields found.
        found: usize,
        /// The first missing column, if fields are missing (none if there are too many).
        column: Option<Column>,
        /// "missing column 3 (error)" or "extra column 5".
        detail: String,
    },

    /// A data line has a different number of fields than the file's first data line.
    #[error(
        "{at}: {detail}: found {found} field(s) but the first data line (line {first_line}) has {expected}"
    )]
    ColumnCount {
        /// Where.
        at: Location,
        /// Number of fields found on this line.
        found: usize,
        /// Number of fields on the first data line.
        expected: usize,
        /// Line number of the first data line.
        first_line: usize,
        /// The first missing column, if fields are missing (none if there are too many).
        column: Option<Column>,
        /// "missing column 4 (instrument)" or "extra column 5".
        detail: String,
    },

    /// The header names a different number of columns than the data lines have.
    #[error(
        "{at}: header names {header_fields} column(s) but the first data line (line {data_line}) has {data_fields}"
    )]
    HeaderMismatch {
        /// Location of the header line.
        at: Location,
        /// Number of names in the header.
        header_fields: usize,
        /// Number of fields of the first data line.
        data_fields: usize,
        /// Line number of the first data line.
        data_line: usize,
    },

    /// A 3-column file with no instrument assigned by the caller (run file).
    #[error(
        "{at}: {column}: the file has 3 columns and no instrument was given for it; add a 4th column (instrument label) or name the instrument for this file in the run file"
    )]
    MissingInstrument {
        /// Location of the first data line.
        at: Location,
        /// Always [`Column::Instrument`].
        column: Column,
    },

    /// The label in column 4 differs from the instrument assigned to the file.
    #[error("{at}: {column}: label '{found}' but this file is assigned to instrument '{expected}'")]
    InstrumentMismatch {
        /// Where.
        at: Location,
        /// Always [`Column::Instrument`].
        column: Column,
        /// Label in the file.
        found: String,
        /// Label assigned to the file.
        expected: String,
    },

    /// An instrument label that is not in the list of allowed instruments.
    #[error("{at}: {column}: unknown instrument '{name}' (known: {known})")]
    UnknownInstrument {
        /// Where.
        at: Location,
        /// Always [`Column::Instrument`].
        column: Column,
        /// The label read.
        name: String,
        /// The allowed labels, comma-separated.
        known: String,
    },

    /// The instrument assigned to a whole file is not in the allowed list.
    #[error(
        "{file}: instrument '{name}' assigned to this file is not among the known instruments ({known})"
    )]
    UnknownFileInstrument {
        /// Display name of the file.
        file: String,
        /// The assigned label.
        name: String,
        /// The allowed labels, comma-separated.
        known: String,
    },

    /// The same epoch appears twice for one instrument.
    #[error(
        "{at}: {column}: epoch {time} appears twice for instrument '{instrument}' (first at {first})"
    )]
    DuplicateEpoch {
        /// The later occurrence.
        at: Location,
        /// Always [`Column::Time`].
        column: Column,
        /// The earlier occurrence.
        first: Location,
        /// Instrument label.
        instrument: String,
        /// The epoch (days).
        time: f64,
    },

    /// A file holds no data line.
    #[error("{file}: no data lines ({lines} line(s), all blank, comments or a header)")]
    NoData {
        /// Display name of the file.
        file: String,
        /// Number of lines in the file.
        lines: usize,
    },

    /// No table at all was given.
    #[error("no RV table given")]
    NoTables,
}

impl TableError {
    /// The file and line the error is about, if it is about one line.
    pub fn location(&self) -> Option<&Location> {
        use TableError::*;
        match self {
            InvalidUtf8 { at, .. }
            | ControlCharacter { at, .. }
            | NotANumber { at, .. }
            | NotANumberValue { at, .. }
            | Infinite { at, .. }
            | NonPositiveError { at, .. }
            | EmptyField { at, .. }
            | BadFieldCount { at, .. }
            | ColumnCount { at, .. }
            | HeaderMismatch { at, .. }
            | MissingInstrument { at, .. }
            | InstrumentMismatch { at, .. }
            | UnknownInstrument { at, .. }
            | DuplicateEpoch { at, .. } => Some(at),
            Io { .. } | UnknownFileInstrument { .. } | NoData { .. } | NoTables => None,
        }
    }

    /// The display name of the file the error is about, if any.
    pub fn file(&self) -> Option<&str> {
        use TableError::*;
        match self {
            Io { file, .. } | UnknownFileInstrument { file, .. } | NoData { file, .. } => {
                Some(file)
            }
            NoTables => None,
            _ => self.location().map(|l| l.file.as_str()),
        }
    }

    /// The column at fault, if one column is.
    pub fn column(&self) -> Option<Column> {
        use TableError::*;
        match self {
            NotANumber { column, .. }
            | NotANumberValue { column, .. }
            | Infinite { column, .. }
            | NonPositiveError { column, .. }
            | EmptyField { column, .. }
            | MissingInstrument { column, .. }
            | InstrumentMismatch { column, .. }
            | UnknownInstrument { column, .. }
            | DuplicateEpoch { column, .. } => Some(*column),
            BadFieldCount { column, .. } | ColumnCount { column, .. } => *column,
            _ => None,
        }
    }
}

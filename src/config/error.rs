//! Typed errors of run-file loading and validation.

use std::fmt;
use std::io;

use thiserror::Error;

/// One step of a path to a field of the run file.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum PathSegment {
    /// A struct field, by key.
    Field(String),
    /// A list element, by 0-based index.
    Index(usize),
}

/// Path to a field of the run file, written like `planets[1].eccentricity`.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Default)]
pub struct FieldPath(pub Vec<PathSegment>);

impl FieldPath {
    /// Path made of struct keys and `[i]` indices, e.g. `planets[1].period`
    /// (no validation beyond splitting; for building paths in code and tests).
    pub fn parse_simple(text: &str) -> FieldPath {
        let mut out = Vec::new();
        for part in text.split('.') {
            let (key, rest) = part.split_once('[').unwrap_or((part, ""));
            if !key.is_empty() {
                out.push(PathSegment::Field(key.to_string()));
            }
            for idx in rest.split('[') {
                if let Ok(i) = idx.trim_end_matches(']').parse() {
                    out.push(PathSegment::Index(i));
                }
            }
        }
        FieldPath(out)
    }

    /// This path with a field key appended.
    pub fn field(&self, key: &str) -> FieldPath {
        let mut p = self.clone();
        p.0.push(PathSegment::Field(key.to_string()));
        p
    }

    /// This path with a list index appended.
    pub fn index(&self, i: usize) -> FieldPath {
        let mut p = self.clone();
        p.0.push(PathSegment::Index(i));
        p
    }

    /// The index of the planet this path points into (`planets[k]…`), if any.
    pub fn planet_index(&self) -> Option<usize> {
        match self.0.as_slice() {
            [PathSegment::Field(f), PathSegment::Index(k), ..] if f == "planets" => Some(*k),
            _ => None,
        }
    }

    /// The path without its last step.
    pub fn parent(&self) -> FieldPath {
        let mut p = self.clone();
        p.0.pop();
        p
    }
}

impl fmt::Display for FieldPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.0.is_empty() {
            return f.write_str("(top level)");
        }
        for (i, s) in self.0.iter().enumerate() {
            match s {
                PathSegment::Field(k) if i == 0 => write!(f, "{k}")?,
                PathSegment::Field(k) => write!(f, ".{k}")?,
                PathSegment::Index(k) => write!(f, "[{k}]")?,
            }
        }
        Ok(())
    }
}

/// A value of a run file that is well formed but physically or logically
/// unacceptable, found by [`super::validate`].
#[derive(Debug, Clone, PartialEq, Error)]
#[error("{}{}: {problem}", .field, planet_note(.planet))]
pub struct ValidationIssue {
    /// The field at fault.
    pub field: FieldPath,
    /// The name of the planet concerned, if any.
    pub planet: Option<String>,
    /// What is wrong, with the value found.
    pub problem: String,
}

fn planet_note(planet: &Option<String>) -> String {
    match planet {
        Some(p) => format!(" (planet '{p}')"),
        None => String::new(),
    }
}

fn place(file: &str, position: &Option<(usize, usize)>) -> String {
    match position {
        Some((l, c)) => format!("{file}:{l}:{c}"),
        None => file.to_string(),
    }
}

fn field_note(field: &Option<FieldPath>, planet: &Option<String>) -> String {
    match field {
        Some(f) => format!(" {f}{}:", planet_note(planet)),
        None => String::new(),
    }
}

/// Why a run file was refused. `Display` starts with `file:line:column:`
/// and names the field.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum RunFileError {
    /// The file could not be read.
    #[error("{file}: cannot read the run file: {source}")]
    Io {
        /// Display name of the file.
        file: String,
        /// The underlying I/O error.
        #[source]
        source: io::Error,
    },

    /// The file is not UTF-8 text.
    #[error("{file}:{line}:{column}: not text: invalid UTF-8")]
    NotUtf8 {
        /// Display name of the file.
        file: String,
        /// 1-based line.
        line: usize,
        /// 1-based column (characters).
        column: usize,
    },

    /// RON syntax error, unknown or missing key, wrong type (reported by ron).
    #[error("{}:{} {message}", place(.file, &Some((*.line, *.column))), field_note(.field, .planet))]
    Syntax {
        /// Display name of the file.
        file: String,
        /// 1-based line.
        line: usize,
        /// 1-based column (characters).
        column: usize,
        /// The field concerned, when it can be told.
        field: Option<FieldPath>,
        /// The planet concerned, if any and if its name can be read.
        planet: Option<String>,
        /// ron's description of the problem.
        message: String,
    },

    /// A value outside its physical or logical range.
    #[error("{}: {issue}", place(.file, .position))]
    Invalid {
        /// Display name of the file.
        file: String,
        /// 1-based (line, column) of the field's key, when it can be located.
        position: Option<(usize, usize)>,
        /// What is wrong and where.
        issue: ValidationIssue,
    },
}

impl RunFileError {
    /// 1-based line of the problem, when known.
    pub fn line(&self) -> Option<usize> {
        match self {
            RunFileError::Io { .. } => None,
            RunFileError::NotUtf8 { line, .. } | RunFileError::Syntax { line, .. } => Some(*line),
            RunFileError::Invalid { position, .. } => position.map(|p| p.0),
        }
    }

    /// The field at fault, when known.
    pub fn field(&self) -> Option<&FieldPath> {
        match self {
            RunFileError::Syntax { field, .. } => field.as_ref(),
            RunFileError::Invalid { issue, .. } => Some(&issue.field),
            _ => None,
        }
    }
}

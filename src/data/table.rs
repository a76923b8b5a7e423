//! Line-by-line parsing of one RV table (bytes → rows). No grouping, no
//! cross-line checks beyond the column count; those live in [`super::dataset`].
//!
//! Written by hand rather than with a CSV library because the format mixes
//! whitespace and comma separation, `#` comments anywhere on a line and an
//! optional header, and because every rejection must name the line and the
//! field — a few dozen lines that no general-purpose reader does as directly.

use super::error::{Column, Location, TableError};

/// One data line of a table.
#[derive(Debug, Clone)]
pub(crate) struct Row {
    /// 1-based line number.
    pub line: usize,
    /// Epoch (days).
    pub time: f64,
    /// Radial velocity (m/s).
    pub rv: f64,
    /// Measurement error (m/s), > 0.
    pub err: f64,
    /// Instrument label from column 4, if the file has one.
    pub label: Option<String>,
}

/// The data lines of one file.
#[derive(Debug, Clone)]
pub(crate) struct ParsedTable {
    /// Data rows in file order.
    pub rows: Vec<Row>,
    /// Number of columns (3 or 4); meaningful when `rows` is not empty.
    pub columns: usize,
    /// Line number of the first data line (0 when there is none).
    pub first_line: usize,
}

/// Longest piece of offending text quoted in a message.
const MAX_QUOTE: usize = 40;

fn quote(text: &str) -> String {
    if text.chars().count() <= MAX_QUOTE {
        text.to_string()
    } else {
        let mut s: String = text.chars().take(MAX_QUOTE).collect();
        s.push('…');
        s
    }
}

/// Split a comment-free, trimmed line into fields: at commas if the line
/// holds one (each field trimmed), otherwise at runs of whitespace.
fn split_fields(content: &str) -> Vec<&str> {
    if content.contains(',') {
        content.split(',').map(str::trim).collect()
    } else {
        content.split_whitespace().collect()
    }
}

fn count_detail(found: usize, expected: usize) -> (Option<Column>, String) {
    if found < expected {
        match Column::from_number(found + 1) {
            Some(c) => (Some(c), format!("missing {c}")),
            None => (None, format!("missing column {}", found + 1)),
        }
    } else {
        (None, format!("extra column {}", expected + 1))
    }
}

fn number(at: &Location, column: Column, field: &str) -> Result<f64, TableError> {
    if field.is_empty() {
        return Err(TableError::EmptyField {
            at: at.clone(),
            column,
        });
    }
    let value: f64 = field.parse().map_err(|_| TableError::NotANumber {
        at: at.clone(),
        column,
        text: quote(field),
    })?;
    if value.is_nan() {
        return Err(TableError::NotANumberValue {
            at: at.clone(),
            column,
            text: quote(field),
        });
    }
    if value.is_infinite() {
        return Err(TableError::Infinite {
            at: at.clone(),
            column,
            text: quote(field),
        });
    }
    Ok(value)
}

/// Decode one raw line (without its `\n`) to text, refusing invalid UTF-8
/// and control characters.
fn decode_line<'a>(raw: &'a [u8], at: &Location) -> Result<&'a str, TableError> {
    let raw = raw.strip_suffix(b"\r").unwrap_or(raw);
    let text = std::str::from_utf8(raw).map_err(|e| TableError::InvalidUtf8 {
        at: at.clone(),
        byte: e.valid_up_to() + 1,
    })?;
    if let Some((position, c)) = text
        .chars()
        .enumerate()
        .find(|(_, c)| c.is_control() && *c != '\t')
    {
        return Err(TableError::ControlCharacter {
            at: at.clone(),
            code: u32::from(c),
            position: position + 1,
        });
    }
    Ok(text)
}

/// Parse the bytes of one table. `file` is the display name used in errors.
pub(crate) fn parse_rows(bytes: &[u8], file: &str) -> Result<ParsedTable, TableError> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut segments: Vec<&[u8]> = bytes.split(|&b| b == b'\n').collect();
    if segments.last().is_some_and(|s| s.is_empty()) {
        segments.pop();
    }
    let n_lines = segments.len();

    let mut rows = Vec::new();
    let mut columns = 0usize;
    let mut first_line = 0usize;
    // (line, number of names) of the header, if any.
    let mut header: Option<(usize, usize)> = None;
    let mut seen_content = false;

    for (i, raw) in segments.into_iter().enumerate() {
        let at = Location {
            file: file.to_string(),
            line: i + 1,
        };
        let text = decode_line(raw, &at)?;
        let content = match text.find('#') {
            Some(k) => &text[..k],
            None => text,
        }
        .trim();
        if content.is_empty() {
            continue;
        }
        let fields = split_fields(content);

        if !seen_content {
            seen_content = true;
            // Header rule: the first non-blank, non-comment line is a header
            // when none of its fields reads as a number.
            if fields.iter().all(|f| f.parse::<f64>().is_err()) {
                header = Some((at.line, fields.len()));
                continue;
            }
        }

        if rows.is_empty() {
            if !(3..=4).contains(&fields.len()) {
                let (column, detail) =
                    count_detail(fields.len(), if fields.len() < 3 { 3 } else { 4 });
                return Err(TableError::BadFieldCount {
                    at,
                    found: fields.len(),
                    column,
                    detail,
                });
            }
            columns = fields.len();
            first_line = at.line;
            if let Some((header_line, names)) = header {
                if names != columns {
                    return Err(TableError::HeaderMismatch {
                        at: Location {
                            file: file.to_string(),
                            line: header_line,
                        },
                        header_fields: names,
                        data_fields: columns,
                        data_line: first_line,
                    });
                }
            }
        } else if fields.len() != columns {
            let (column, detail) = count_detail(fields.len(), columns);
            return Err(TableError::ColumnCount {
                at,
                found: fields.len(),
                expected: columns,
                first_line,
                column,
                detail,
            });
        }

        let time = number(&at, Column::Time, fields[0])?;
        let rv = number(&at, Column::Rv, fields[1])?;
        let err = number(&at, Column::Error, fields[2])?;
        if err <= 0.0 {
            return Err(TableError::NonPositiveError {
                at,
                column: Column::Error,
                value: err,
            });
        }
        let label = match fields.get(3) {
            Some(&"") => {
                return Err(TableError::EmptyField {
                    at,
                    column: Column::Instrument,
                });
            }
            Some(l) => Some((*l).to_string()),
            None => None,
        };
        rows.push(Row {
            line: at.line,
            time,
            rv,
            err,
            label,
        });
    }

    if rows.is_empty() {
        return Err(TableError::NoData {
            file: file.to_string(),
            lines: n_lines,
        });
    }
    Ok(ParsedTable {
        rows,
        columns,
        first_line,
    })
}

//! The typed RV dataset (measurements grouped by instrument) and the
//! builder that reads tables into it.

use std::collections::HashMap;
use std::ops::Range;
use std::path::Path;

use super::error::{Column, Location, TableError};
use super::table::{Row, parse_rows};

/// Where the instrument label of a table's measurements comes from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum InstrumentLabel {
    /// Every line of the file belongs to this instrument (the run file names
    /// it). A 4th column, if present, must repeat the same label.
    Given(String),
    /// The label is read from the 4th column of each line.
    FromColumn,
}

/// Where one measurement was read: index into [`Dataset::files`] and 1-based line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Source {
    /// Index of the file in [`Dataset::files`].
    pub file: usize,
    /// 1-based line number in that file.
    pub line: usize,
}

/// One measurement, copied out of a [`Dataset`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measurement {
    /// Epoch in days (the day count of the input, e.g. BJD_TDB).
    pub time: f64,
    /// Radial velocity in m/s (positive: the star recedes).
    pub rv: f64,
    /// 1σ measurement error in m/s (> 0).
    pub err: f64,
    /// Index of the instrument in [`Dataset::instruments`].
    pub instrument: usize,
}

/// An instrument: its label and the index range of its measurements in
/// the dataset's arrays (contiguous, sorted by time).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Instrument {
    name: String,
    range: Range<usize>,
}

impl Instrument {
    /// The instrument label as written in the table or the run file.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Index range of this instrument's measurements in the dataset arrays.
    pub fn range(&self) -> Range<usize> {
        self.range.clone()
    }

    /// Number of measurements of this instrument (≥ 1).
    pub fn len(&self) -> usize {
        self.range.len()
    }

    /// Always false: an instrument exists only if it has a measurement.
    pub fn is_empty(&self) -> bool {
        self.range.is_empty()
    }
}

/// Borrowed view of one instrument's measurements, sorted by time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InstrumentData<'a> {
    /// Instrument label.
    pub name: &'a str,
    /// Epochs in days, increasing strictly.
    pub time: &'a [f64],
    /// Radial velocities in m/s.
    pub rv: &'a [f64],
    /// Measurement errors in m/s.
    pub err: &'a [f64],
}

impl InstrumentData<'_> {
    /// Median of this instrument's measurement errors, in m/s (for an even
    /// count, the mean of the two middle values — common practice).
    pub fn median_error(&self) -> f64 {
        median(self.err)
    }
}

/// RV measurements of one star from one or more instruments, validated.
///
/// Invariants (established by [`DatasetBuilder::finish`]): at least one
/// measurement; every value finite; every error > 0; within an instrument
/// the epochs are distinct. The arrays are grouped by instrument, in order
/// of first appearance in the input, and sorted by time within each
/// instrument; [`Dataset::time_order`] gives the order over all instruments.
///
/// Times are in days of whatever scale the input uses (normally BJD_TDB);
/// the tool never converts or mixes time scales, so all tables of one run
/// must use the same one.
#[derive(Debug, Clone, PartialEq)]
pub struct Dataset {
    files: Vec<String>,
    instruments: Vec<Instrument>,
    time: Vec<f64>,
    rv: Vec<f64>,
    err: Vec<f64>,
    instrument: Vec<usize>,
    source: Vec<Source>,
    by_time: Vec<usize>,
}

/// Median of a non-empty slice (mean of the two middle values for an even count).
fn median(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n == 0 {
        0.0
    } else if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

impl Dataset {
    /// Number of measurements (≥ 1).
    pub fn len(&self) -> usize {
        self.time.len()
    }

    /// Always false for a dataset built by [`DatasetBuilder`].
    pub fn is_empty(&self) -> bool {
        self.time.is_empty()
    }

    /// Display names of the files read, in reading order.
    pub fn files(&self) -> &[String] {
        &self.files
    }

    /// The instruments, in order of first appearance in the input.
    pub fn instruments(&self) -> &[Instrument] {
        &self.instruments
    }

    /// Index of the instrument with this label.
    pub fn instrument_index(&self, name: &str) -> Option<usize> {
        self.instruments.iter().position(|i| i.name == name)
    }

    /// The measurements of instrument `k`, or `None` if there is no such index.
    pub fn instrument_data(&self, k: usize) -> Option<InstrumentData<'_>> {
        let inst = self.instruments.get(k)?;
        let r = inst.range();
        Some(InstrumentData {
            name: &inst.name,
            time: &self.time[r.clone()],
            rv: &self.rv[r.clone()],
            err: &self.err[r],
        })
    }

    /// Epochs in days (grouped by instrument, sorted within each).
    pub fn time(&self) -> &[f64] {
        &self.time
    }

    /// Radial velocities in m/s, aligned with [`Dataset::time`].
    pub fn rv(&self) -> &[f64] {
        &self.rv
    }

    /// Measurement errors in m/s, aligned with [`Dataset::time`].
    pub fn err(&self) -> &[f64] {
        &self.err
    }

    /// Instrument index of every measurement, aligned with [`Dataset::time`].
    pub fn instrument_of(&self) -> &[usize] {
        &self.instrument
    }

    /// Where every measurement was read, aligned with [`Dataset::time`].
    pub fn sources(&self) -> &[Source] {
        &self.source
    }

    /// File display name and line of measurement `i`.
    pub fn location(&self, i: usize) -> Option<Location> {
        let s = self.source.get(i)?;
        Some(Location {
            file: self.files.get(s.file)?.clone(),
            line: s.line,
        })
    }

    /// Measurement `i` (in the dataset's own order).
    pub fn measurement(&self, i: usize) -> Option<Measurement> {
        Some(Measurement {
            time: *self.time.get(i)?,
            rv: self.rv[i],
            err: self.err[i],
            instrument: self.instrument[i],
        })
    }

    /// Indices of all measurements in order of increasing time (ties:
    /// instrument order).
    pub fn time_order(&self) -> &[usize] {
        &self.by_time
    }

    /// All measurements in order of increasing time.
    pub fn iter_by_time(&self) -> impl Iterator<Item = Measurement> + '_ {
        self.by_time.iter().map(move |&i| Measurement {
            time: self.time[i],
            rv: self.rv[i],
            err: self.err[i],
            instrument: self.instrument[i],
        })
    }

    /// Earliest epoch (days).
    pub fn first_epoch(&self) -> f64 {
        self.by_time.first().map_or(0.0, |&i| self.time[i])
    }

    /// Latest epoch (days).
    pub fn last_epoch(&self) -> f64 {
        self.by_time.last().map_or(0.0, |&i| self.time[i])
    }

    /// Time baseline: latest minus earliest epoch, in days.
    pub fn baseline(&self) -> f64 {
        self.last_epoch() - self.first_epoch()
    }

    /// Median of all measurement errors, in m/s (mean of the two middle
    /// values for an even count — common practice, as numpy.median).
    pub fn median_error(&self) -> f64 {
        median(&self.err)
    }

    /// A round reference epoch near the middle of the data (DESIGN §3), in days.
    ///
    /// Rule (ours): take the mid-point m of the first and last epochs and
    /// the step s = the largest power of ten not above baseline/10; return m
    /// rounded to the nearest multiple of s. The result lies within
    /// baseline/20 of the mid-point, hence inside the data span. With a
    /// single epoch (baseline 0) that epoch is returned.
    ///
    /// ```
    /// use apsidal::data::{parse_table, InstrumentLabel};
    /// let table = "2459001.2 3.0 1.5\n2460212.9 -4.0 1.5\n";
    /// let d = parse_table(table.as_bytes(), "demo", &InstrumentLabel::Given("VESKA".into())).unwrap();
    /// // mid-point 2459607.05, baseline 1211.7 d → step 100 d
    /// assert_eq!(d.suggested_reference_epoch(), 2459600.0);
    /// ```
    pub fn suggested_reference_epoch(&self) -> f64 {
        let (t0, t1) = (self.first_epoch(), self.last_epoch());
        let mid = 0.5 * (t0 + t1);
        let span = t1 - t0;
        if span <= 0.0 {
            return t0;
        }
        let exponent = (span / 10.0).log10().floor() as i32;
        let rounded = if exponent >= 0 {
            let step = 10f64.powi(exponent);
            (mid / step).round() * step
        } else {
            // Multiply by an exact power of ten to get the closest decimal.
            let scale = 10f64.powi(-exponent);
            (mid * scale).round() / scale
        };
        rounded.clamp(t0, t1)
    }
}

/// One row waiting to be grouped.
#[derive(Debug)]
struct Pending {
    file: usize,
    row: Row,
    instrument: String,
}

/// Reads one or more RV tables and assembles a validated [`Dataset`].
///
/// ```
/// use apsidal::data::{DatasetBuilder, InstrumentLabel};
/// let mut b = DatasetBuilder::new();
/// b.add_bytes(b"2459000.5 10.1 2.0\n2459003.5 -2.3 2.1\n", "korva.txt",
///             &InstrumentLabel::Given("VESKA".into())).unwrap();
/// b.add_bytes(b"# time rv err inst\n2459001.5, 4.0, 3.0, MIRRAL\n", "lisse.csv",
///             &InstrumentLabel::FromColumn).unwrap();
/// let d = b.finish().unwrap();
/// assert_eq!(d.len(), 3);
/// assert_eq!(d.instruments()[1].name(), "MIRRAL");
/// ```
#[derive(Debug, Default)]
pub struct DatasetBuilder {
    allowed: Option<Vec<String>>,
    files: Vec<String>,
    pending: Vec<Pending>,
}

/// Whether an instrument name given by a caller is usable as a label.
fn valid_label(name: &str) -> bool {
    !name.is_empty()
        && name.trim() == name
        && !name.contains(['#', ','])
        && !name.chars().any(char::is_control)
}

impl DatasetBuilder {
    /// A builder accepting any instrument label.
    pub fn new() -> Self {
        Self::default()
    }

    /// Restrict the instruments to these labels (e.g. those the run file
    /// declares); any other label is refused with
    /// [`TableError::UnknownInstrument`].
    pub fn allow_only<I, S>(mut self, names: I) -> Self
    where
        I: IntoIterator<Item = S>,
        S: Into<String>,
    {
        self.allowed = Some(names.into_iter().map(Into::into).collect());
        self
    }

    fn known(&self) -> String {
        self.allowed
            .as_deref()
            .map(|a| a.join(", "))
            .unwrap_or_default()
    }

    fn is_allowed(&self, name: &str) -> bool {
        self.allowed
            .as_ref()
            .is_none_or(|a| a.iter().any(|n| n == name))
    }

    /// Read the table at `path` (display name: the path as given).
    pub fn add_file(
        &mut self,
        path: impl AsRef<Path>,
        label: &InstrumentLabel,
    ) -> Result<&mut Self, TableError> {
        let path = path.as_ref();
        let name = path.display().to_string();
        let bytes = std::fs::read(path).map_err(|source| TableError::Io {
            file: name.clone(),
            source,
        })?;
        self.add_bytes(&bytes, &name, label)
    }

    /// Read a table held in memory; `name` is used in messages as the file name.
    pub fn add_bytes(
        &mut self,
        bytes: &[u8],
        name: &str,
        label: &InstrumentLabel,
    ) -> Result<&mut Self, TableError> {
        if let InstrumentLabel::Given(given) = label {
            if !valid_label(given) || !self.is_allowed(given) {
                return Err(TableError::UnknownFileInstrument {
                    file: name.to_string(),
                    name: given.clone(),
                    known: if valid_label(given) {
                        self.known()
                    } else {
                        "a label must be non-empty, without surrounding spaces, '#' or ','"
                            .to_string()
                    },
                });
            }
        }
        let table = parse_rows(bytes, name)?;
        let at = |line| Location {
            file: name.to_string(),
            line,
        };
        if table.columns == 3 && *label == InstrumentLabel::FromColumn {
            return Err(TableError::MissingInstrument {
                at: at(table.first_line),
                column: Column::Instrument,
            });
        }
        let file = self.files.len();
        let mut rows = Vec::with_capacity(table.rows.len());
        for row in table.rows {
            let instrument = match (label, &row.label) {
                (InstrumentLabel::Given(g), Some(l)) if l != g => {
                    return Err(TableError::InstrumentMismatch {
                        at: at(row.line),
                        column: Column::Instrument,
                        found: l.clone(),
                        expected: g.clone(),
                    });
                }
                (InstrumentLabel::Given(g), _) => g.clone(),
                (InstrumentLabel::FromColumn, Some(l)) => {
                    if !self.is_allowed(l) {
                        return Err(TableError::UnknownInstrument {
                            at: at(row.line),
                            column: Column::Instrument,
                            name: l.clone(),
                            known: self.known(),
                        });
                    }
                    l.clone()
                }
                (InstrumentLabel::FromColumn, None) => {
                    return Err(TableError::MissingInstrument {
                        at: at(row.line),
                        column: Column::Instrument,
                    });
                }
            };
            rows.push(Pending {
                file,
                row,
                instrument,
            });
        }
        self.files.push(name.to_string());
        self.pending.extend(rows);
        Ok(self)
    }

    /// Group by instrument, check for duplicate epochs within an
    /// instrument, and return the dataset.
    pub fn finish(self) -> Result<Dataset, TableError> {
        if self.pending.is_empty() {
            return Err(TableError::NoTables);
        }
        // Instruments in order of first appearance.
        let mut index: HashMap<&str, usize> = HashMap::new();
        let mut names: Vec<&str> = Vec::new();
        let mut members: Vec<Vec<usize>> = Vec::new();
        for (p, pending) in self.pending.iter().enumerate() {
            let k = *index.entry(pending.instrument.as_str()).or_insert_with(|| {
                names.push(pending.instrument.as_str());
                members.push(Vec::new());
                names.len() - 1
            });
            members[k].push(p);
        }

        // Sort each instrument by time (stable: equal times keep input order)
        // and find duplicates; report the one that comes first in the input.
        let mut duplicate: Option<(usize, usize)> = None; // (later, earlier)
        for m in &mut members {
            m.sort_by(|&a, &b| {
                self.pending[a]
                    .row
                    .time
                    .total_cmp(&self.pending[b].row.time)
            });
            for w in m.windows(2) {
                if self.pending[w[0]].row.time == self.pending[w[1]].row.time
                    && duplicate.is_none_or(|(later, _)| w[1] < later)
                {
                    duplicate = Some((w[1], w[0]));
                }
            }
        }
        if let Some((later, earlier)) = duplicate {
            let loc = |p: &Pending| Location {
                file: self.files[p.file].clone(),
                line: p.row.line,
            };
            let (l, e) = (&self.pending[later], &self.pending[earlier]);
            return Err(TableError::DuplicateEpoch {
                at: loc(l),
                column: Column::Time,
                first: loc(e),
                instrument: l.instrument.clone(),
                time: l.row.time,
            });
        }

        let n = self.pending.len();
        let mut d = Dataset {
            files: self.files.clone(),
            instruments: Vec::with_capacity(names.len()),
            time: Vec::with_capacity(n),
            rv: Vec::with_capacity(n),
            err: Vec::with_capacity(n),
            instrument: Vec::with_capacity(n),
            source: Vec::with_capacity(n),
            by_time: Vec::new(),
        };
        for (k, m) in members.iter().enumerate() {
            let start = d.time.len();
            for &p in m {
                let p = &self.pending[p];
                d.time.push(p.row.time);
                d.rv.push(p.row.rv);
                d.err.push(p.row.err);
                d.instrument.push(k);
                d.source.push(Source {
                    file: p.file,
                    line: p.row.line,
                });
            }
            d.instruments.push(Instrument {
                name: names[k].to_string(),
                range: start..d.time.len(),
            });
        }
        let mut order: Vec<usize> = (0..n).collect();
        // Stable sort: ties keep instrument order.
        order.sort_by(|&a, &b| d.time[a].total_cmp(&d.time[b]));
        d.by_time = order;
        Ok(d)
    }
}

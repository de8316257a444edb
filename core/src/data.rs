//! Census counts: reading them from CSV text, and the checked form a fit
//! uses ([`CountData`], which scenario files carry as `data`).
//!
//! The text holds a time column and one or two count columns. Columns are
//! mapped to the model's species by header name (case-insensitive), or by
//! position when the names do not match; the mapping is reported. Missing
//! counts (empty, `NA`, `N/A`, `NaN`, `-`) are kept as missing. With `;` or
//! tab separators a decimal comma is read as well as a decimal point. Every
//! bad row is reported with its line number and the reason, and nothing is
//! dropped silently: a file with any bad row is refused as a whole.

use serde::{Deserialize, Serialize};

/// Counts of one or two species at a series of times.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CountData {
    /// Observation times in the scenario's time unit: at least two,
    /// non-negative and strictly increasing (the model starts at t = 0).
    pub times: Vec<f64>,
    /// One series per observed species; a species may be left out.
    pub series: Vec<CountSeries>,
}

/// The counts of one species.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CountSeries {
    /// Index of the model species (state order) counted.
    pub species: usize,
    /// Header of the column the counts came from, for display.
    pub column: String,
    /// One entry per time; `null` where the count is missing.
    pub counts: Vec<Option<f64>>,
}

/// Why count data cannot be used. The text is `path: reason`.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
#[error("{path}: {reason}")]
pub struct DataError {
    pub path: String,
    pub reason: String,
}

fn data_error(path: impl Into<String>, reason: impl Into<String>) -> DataError {
    DataError {
        path: path.into(),
        reason: reason.into(),
    }
}

impl CountData {
    /// Number of counts present (missing ones excluded).
    pub fn n_observations(&self) -> usize {
        self.series
            .iter()
            .map(|s| s.counts.iter().filter(|c| c.is_some()).count())
            .sum()
    }

    /// Check data from any source (a scenario file, the browser) against a
    /// model with `n_species` species: the same rules the CSV reader applies.
    pub fn validate(&self, n_species: usize) -> Result<(), DataError> {
        if self.times.len() < 2 {
            return Err(data_error(
                "data.times",
                format!(
                    "needs counts at two or more times, got {}",
                    self.times.len()
                ),
            ));
        }
        for (i, &t) in self.times.iter().enumerate() {
            let path = format!("data.times[{i}]");
            if !t.is_finite() {
                return Err(data_error(
                    path,
                    format!("must be a finite number, got {t}"),
                ));
            }
            if t < 0.0 {
                return Err(data_error(
                    path,
                    format!("must be ≥ 0 (the model starts at t = 0), got {t}"),
                ));
            }
            if i > 0 && t <= self.times[i - 1] {
                return Err(data_error(
                    path,
                    format!("times must increase; {t} follows {}", self.times[i - 1]),
                ));
            }
        }
        if self.series.is_empty() {
            return Err(data_error("data.series", "holds no species"));
        }
        for (k, s) in self.series.iter().enumerate() {
            let path = format!("data.series[{k}]");
            if s.species >= n_species {
                return Err(data_error(
                    format!("{path}.species"),
                    format!("no species {} (this model has {n_species})", s.species),
                ));
            }
            if self.series[..k].iter().any(|o| o.species == s.species) {
                return Err(data_error(
                    format!("{path}.species"),
                    format!("species {} is counted twice", s.species),
                ));
            }
            if s.counts.len() != self.times.len() {
                return Err(data_error(
                    format!("{path}.counts"),
                    format!(
                        "needs one entry per time ({}), got {}",
                        self.times.len(),
                        s.counts.len()
                    ),
                ));
            }
            for (i, c) in s.counts.iter().enumerate() {
                if let Some(c) = *c {
                    if !c.is_finite() || c < 0.0 {
                        return Err(data_error(
                            format!("{path}.counts[{i}]"),
                            format!("must be a finite count ≥ 0, got {c}"),
                        ));
                    }
                }
            }
            if s.counts.iter().all(Option::is_none) {
                return Err(data_error(
                    format!("{path}.counts"),
                    format!("column \"{}\" has no counts", s.column),
                ));
            }
        }
        Ok(())
    }
}

/// Choices a user can make about the columns; the defaults find them.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImportOptions {
    /// Header of the time column. Default: a column named like a time
    /// (`t`, `time`, `day`, `week`, `year`, … or the scenario's time unit),
    /// else the first column.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_column: Option<String>,
    /// Per species in state order, the header of its column (`null` for a
    /// species not counted). Default: by name, else by position.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub species_columns: Option<Vec<Option<String>>>,
}

/// How a column was matched to a species.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MatchedBy {
    /// Its header is the species' name.
    Name,
    /// Count columns left over were given to species left over, in order.
    Position,
    /// The user chose it.
    Choice,
}

/// What one column of the file was used for.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "role", rename_all = "snake_case")]
pub enum ColumnRole {
    Time,
    Species {
        species: usize,
        name: String,
        matched_by: MatchedBy,
    },
    /// Not used (only when the user chose the columns).
    Ignored,
}

/// One column of the file and its use.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ColumnUse {
    /// Position in the file, from 0.
    pub index: usize,
    /// The header, or `column N` (from 1) for a file without one.
    pub header: String,
    #[serde(flatten)]
    pub role: ColumnRole,
}

/// A successfully read file.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Imported {
    pub data: CountData,
    pub columns: Vec<ColumnUse>,
    /// The separator found: `,`, `;` or a tab.
    pub delimiter: char,
    /// Whether a decimal comma was allowed (with `;` or tab separators).
    pub decimal_comma: bool,
    pub has_header: bool,
    /// Data rows read (blank rows excluded).
    pub n_rows: usize,
    /// Rows whose every cell was empty; they are skipped.
    pub blank_rows: Vec<u64>,
    /// Missing counts kept as missing.
    pub n_missing: usize,
    /// The mapping in words, e.g. `time: "day"; prey: "Prey" (by name)`.
    pub mapping_text: String,
}

/// What is wrong with one row.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum RowReason {
    NotANumber {
        text: String,
    },
    NotFinite {
        text: String,
    },
    NegativeCount {
        value: f64,
    },
    MissingTime,
    NegativeTime {
        value: f64,
    },
    DuplicateTime {
        time: f64,
        first_line: u64,
    },
    TimeGoesBack {
        time: f64,
        previous: f64,
        previous_line: u64,
    },
    WrongCellCount {
        expected: usize,
        found: usize,
    },
    Unreadable {
        message: String,
    },
}

impl std::fmt::Display for RowReason {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RowReason::NotANumber { text } => {
                write!(f, "\"{text}\" is not a number")?;
                if text.contains('.') && text.contains(',') {
                    write!(f, " (thousands separators are not read)")?;
                }
                Ok(())
            }
            RowReason::NotFinite { text } => write!(f, "\"{text}\" is not a finite number"),
            RowReason::NegativeCount { value } => {
                write!(f, "count {value} is negative; counts must be ≥ 0")
            }
            RowReason::MissingTime => write!(f, "the time is missing"),
            RowReason::NegativeTime { value } => write!(
                f,
                "time {value} is negative; times are counted from the start of the model run (t = 0)"
            ),
            RowReason::DuplicateTime { time, first_line } => {
                write!(f, "time {time} repeats line {first_line}")
            }
            RowReason::TimeGoesBack {
                time,
                previous,
                previous_line,
            } => write!(
                f,
                "time {time} comes after {previous} (line {previous_line}); times must increase down the file"
            ),
            RowReason::WrongCellCount { expected, found } => {
                write!(f, "has {found} cells, the header has {expected}")
            }
            RowReason::Unreadable { message } => write!(f, "cannot be read: {message}"),
        }
    }
}

/// One bad row (or cell): where, and why.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RowProblem {
    /// Line in the file, from 1 (the header is line 1 when there is one).
    pub line: u64,
    /// Header of the cell's column, when one cell is at fault.
    pub column: Option<String>,
    pub reason: RowReason,
}

impl std::fmt::Display for RowProblem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match &self.column {
            Some(c) => write!(f, "line {}, column \"{c}\": {}", self.line, self.reason),
            None => write!(f, "line {}: {}", self.line, self.reason),
        }
    }
}

/// Why a CSV text cannot be read as counts.
#[derive(Clone, Debug, PartialEq, thiserror::Error, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ImportError {
    #[error("the file is empty")]
    Empty,
    #[error("the file has a header but no data rows")]
    NoRows,
    #[error("only one data row (line {line}); a fit needs counts at two or more times")]
    OneRow { line: u64 },
    #[error("columns: {reason}")]
    Columns { reason: String },
    #[error("{} bad row(s), nothing imported: {}", problems.len(), list_problems(problems))]
    BadRows { problems: Vec<RowProblem> },
    #[error("column \"{column}\" ({species}) has no counts")]
    NoCounts { column: String, species: String },
}

fn list_problems(problems: &[RowProblem]) -> String {
    const SHOWN: usize = 12;
    let mut parts: Vec<String> = problems.iter().take(SHOWN).map(|p| p.to_string()).collect();
    if problems.len() > SHOWN {
        parts.push(format!("and {} more", problems.len() - SHOWN));
    }
    parts.join("; ")
}

/// Header names taken to mean the time column (besides the time unit).
const TIME_NAMES: &[&str] = &[
    "t",
    "time",
    "hour",
    "hours",
    "day",
    "days",
    "week",
    "weeks",
    "month",
    "months",
    "year",
    "years",
    "generation",
    "generations",
];

/// Cell texts read as a missing value (compared case-insensitively).
const MISSING: &[&str] = &["", "na", "n/a", "nan", "-", "–", "—"];

fn is_missing(cell: &str) -> bool {
    let lower = cell.trim().to_lowercase();
    MISSING.contains(&lower.as_str())
}

/// A cell as a number: Ok(None) when missing.
fn parse_cell(cell: &str, decimal_comma: bool) -> Result<Option<f64>, RowReason> {
    let text = cell.trim();
    if is_missing(text) {
        return Ok(None);
    }
    let bad = || RowReason::NotANumber {
        text: text.to_string(),
    };
    let normalised;
    let s = if decimal_comma && text.contains(',') {
        if text.contains('.') || text.matches(',').count() > 1 {
            return Err(bad());
        }
        normalised = text.replace(',', ".");
        normalised.as_str()
    } else {
        text
    };
    // Rust's parser also takes "inf" and "infinity": reported as not finite.
    match s.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Some(v)),
        Ok(_) => Err(RowReason::NotFinite {
            text: text.to_string(),
        }),
        Err(_) => Err(bad()),
    }
}

fn detect_delimiter(text: &str) -> u8 {
    let first = text.lines().find(|l| !l.trim().is_empty()).unwrap_or("");
    if first.contains(';') {
        b';'
    } else if first.contains('\t') {
        b'\t'
    } else {
        b','
    }
}

fn same_name(a: &str, b: &str) -> bool {
    a.trim().to_lowercase() == b.trim().to_lowercase()
}

/// Read counts from CSV text for a model whose species are named
/// `species` (state order), with the scenario's `time_unit`.
pub fn read_counts(
    text: &str,
    species: &[String],
    time_unit: &str,
    options: &ImportOptions,
) -> Result<Imported, ImportError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if text.trim().is_empty() {
        return Err(ImportError::Empty);
    }
    let delimiter = detect_delimiter(text);
    let decimal_comma = delimiter != b',';
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());

    // Every record with its line number; unreadable ones are problems.
    let mut records: Vec<(u64, Vec<String>)> = Vec::new();
    let mut problems: Vec<RowProblem> = Vec::new();
    for (k, record) in reader.records().enumerate() {
        match record {
            Ok(r) => {
                let line = r.position().map_or(k as u64 + 1, |p| p.line());
                records.push((line, r.iter().map(|c| c.to_string()).collect()));
            }
            Err(e) => {
                let line = e.position().map_or(k as u64 + 1, |p| p.line());
                problems.push(RowProblem {
                    line,
                    column: None,
                    reason: RowReason::Unreadable {
                        message: e.to_string(),
                    },
                });
            }
        }
    }
    let Some((_, first)) = records.first() else {
        return Err(if problems.is_empty() {
            ImportError::Empty
        } else {
            ImportError::BadRows { problems }
        });
    };
    // A header is a first row with a cell that is neither a number nor missing.
    let has_header = first
        .iter()
        .any(|c| !is_missing(c) && parse_cell(c, decimal_comma).is_err());
    let n_columns = first.len();
    let headers: Vec<String> = if has_header {
        first.iter().map(|c| c.trim().to_string()).collect()
    } else {
        (1..=n_columns).map(|i| format!("column {i}")).collect()
    };
    let rows = if has_header {
        &records[1..]
    } else {
        &records[..]
    };

    let columns = map_columns(&headers, species, time_unit, options)?;
    let time_index = columns
        .iter()
        .find(|c| c.role == ColumnRole::Time)
        .map(|c| c.index)
        .unwrap_or(0);
    // (column index, species) of the count columns, in species order.
    let mut count_columns: Vec<(usize, usize)> = columns
        .iter()
        .filter_map(|c| match c.role {
            ColumnRole::Species { species, .. } => Some((c.index, species)),
            _ => None,
        })
        .collect();
    count_columns.sort_by_key(|&(_, s)| s);

    let mut times: Vec<f64> = Vec::new();
    let mut time_lines: Vec<u64> = Vec::new();
    let mut counts: Vec<Vec<Option<f64>>> = vec![Vec::new(); count_columns.len()];
    let mut blank_rows = Vec::new();
    let mut n_missing = 0;
    // Last accepted time and its line, for the order checks.
    let mut last_time: Option<(f64, u64)> = None;
    for (line, cells) in rows {
        let line = *line;
        if cells.iter().all(|c| c.trim().is_empty()) {
            blank_rows.push(line);
            continue;
        }
        if cells.len() != n_columns {
            problems.push(RowProblem {
                line,
                column: None,
                reason: RowReason::WrongCellCount {
                    expected: n_columns,
                    found: cells.len(),
                },
            });
            continue;
        }
        let mut row_ok = true;
        let time_cell = cells.get(time_index).map(String::as_str).unwrap_or("");
        let time = match parse_cell(time_cell, decimal_comma) {
            Ok(Some(t)) => Some(t),
            Ok(None) => {
                problems.push(RowProblem {
                    line,
                    column: Some(headers[time_index].clone()),
                    reason: RowReason::MissingTime,
                });
                None
            }
            Err(reason) => {
                problems.push(RowProblem {
                    line,
                    column: Some(headers[time_index].clone()),
                    reason,
                });
                None
            }
        };
        if let Some(t) = time {
            let reason = if t < 0.0 {
                Some(RowReason::NegativeTime { value: t })
            } else {
                match last_time {
                    Some((prev, prev_line)) if t == prev => Some(RowReason::DuplicateTime {
                        time: t,
                        first_line: prev_line,
                    }),
                    Some((prev, prev_line)) if t < prev => Some(RowReason::TimeGoesBack {
                        time: t,
                        previous: prev,
                        previous_line: prev_line,
                    }),
                    _ => None,
                }
            };
            if let Some(reason) = reason {
                problems.push(RowProblem {
                    line,
                    column: Some(headers[time_index].clone()),
                    reason,
                });
                row_ok = false;
            } else {
                last_time = Some((t, line));
            }
        } else {
            row_ok = false;
        }
        let mut row_counts = Vec::with_capacity(count_columns.len());
        for &(col, _) in &count_columns {
            let cell = cells.get(col).map(String::as_str).unwrap_or("");
            match parse_cell(cell, decimal_comma) {
                Ok(Some(v)) if v < 0.0 => {
                    problems.push(RowProblem {
                        line,
                        column: Some(headers[col].clone()),
                        reason: RowReason::NegativeCount { value: v },
                    });
                    row_ok = false;
                }
                Ok(v) => row_counts.push(v),
                Err(reason) => {
                    problems.push(RowProblem {
                        line,
                        column: Some(headers[col].clone()),
                        reason,
                    });
                    row_ok = false;
                }
            }
        }
        if row_ok {
            if let Some(t) = time {
                times.push(t);
                time_lines.push(line);
                for (series, v) in counts.iter_mut().zip(row_counts) {
                    n_missing += usize::from(v.is_none());
                    series.push(v);
                }
            }
        }
    }
    if !problems.is_empty() {
        problems.sort_by_key(|p| p.line);
        return Err(ImportError::BadRows { problems });
    }
    match times.len() {
        0 => return Err(ImportError::NoRows),
        1 => {
            return Err(ImportError::OneRow {
                line: time_lines[0],
            })
        }
        _ => {}
    }
    let series: Vec<CountSeries> = count_columns
        .iter()
        .zip(counts)
        .map(|(&(col, s), counts)| CountSeries {
            species: s,
            column: headers[col].clone(),
            counts,
        })
        .collect();
    for s in &series {
        if s.counts.iter().all(Option::is_none) {
            return Err(ImportError::NoCounts {
                column: s.column.clone(),
                species: species.get(s.species).cloned().unwrap_or_default(),
            });
        }
    }
    let data = CountData { times, series };
    let mapping_text = mapping_text(&columns);
    Ok(Imported {
        n_rows: data.times.len(),
        data,
        columns,
        delimiter: delimiter as char,
        decimal_comma,
        has_header,
        blank_rows,
        n_missing,
        mapping_text,
    })
}

fn mapping_text(columns: &[ColumnUse]) -> String {
    columns
        .iter()
        .filter_map(|c| match &c.role {
            ColumnRole::Time => Some(format!("time: \"{}\"", c.header)),
            ColumnRole::Species {
                name, matched_by, ..
            } => Some(format!(
                "{name}: \"{}\" ({})",
                c.header,
                match matched_by {
                    MatchedBy::Name => "by name",
                    MatchedBy::Position => "by position",
                    MatchedBy::Choice => "chosen",
                }
            )),
            ColumnRole::Ignored => None,
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn find_header(headers: &[String], name: &str, what: &str) -> Result<usize, ImportError> {
    headers
        .iter()
        .position(|h| same_name(h, name))
        .ok_or_else(|| ImportError::Columns {
            reason: format!(
                "no column named \"{name}\" for {what} (columns: {})",
                headers.join(", ")
            ),
        })
}

fn map_columns(
    headers: &[String],
    species: &[String],
    time_unit: &str,
    options: &ImportOptions,
) -> Result<Vec<ColumnUse>, ImportError> {
    let n_species = species.len();
    if headers.len() < 2 {
        return Err(ImportError::Columns {
            reason: format!(
                "found {} column; need a time column and one count column per species counted",
                headers.len()
            ),
        });
    }
    let mut roles: Vec<Option<ColumnRole>> = vec![None; headers.len()];
    let time_index = match &options.time_column {
        Some(name) => find_header(headers, name, "the time")?,
        None => headers
            .iter()
            .position(|h| TIME_NAMES.iter().any(|n| same_name(h, n)) || same_name(h, time_unit))
            .unwrap_or(0),
    };
    roles[time_index] = Some(ColumnRole::Time);

    if let Some(chosen) = &options.species_columns {
        if chosen.len() != n_species {
            return Err(ImportError::Columns {
                reason: format!(
                    "species_columns needs {n_species} entries (null for a species not counted), got {}",
                    chosen.len()
                ),
            });
        }
        for (s, name) in chosen.iter().enumerate() {
            let Some(name) = name else { continue };
            let index = find_header(headers, name, &species[s])?;
            if roles[index].is_some() {
                return Err(ImportError::Columns {
                    reason: format!("column \"{name}\" is chosen twice"),
                });
            }
            roles[index] = Some(ColumnRole::Species {
                species: s,
                name: species[s].clone(),
                matched_by: MatchedBy::Choice,
            });
        }
        if !roles
            .iter()
            .any(|r| matches!(r, Some(ColumnRole::Species { .. })))
        {
            return Err(ImportError::Columns {
                reason: "no count column chosen".to_string(),
            });
        }
        return Ok(finish(headers, roles));
    }

    // By name first.
    let mut taken = vec![false; n_species];
    for (i, h) in headers.iter().enumerate() {
        if roles[i].is_some() {
            continue;
        }
        if let Some(s) = (0..n_species).find(|&s| !taken[s] && same_name(h, &species[s])) {
            taken[s] = true;
            roles[i] = Some(ColumnRole::Species {
                species: s,
                name: species[s].clone(),
                matched_by: MatchedBy::Name,
            });
        }
    }
    // Then the remaining columns to the remaining species, in order.
    let leftover: Vec<usize> = (0..headers.len()).filter(|&i| roles[i].is_none()).collect();
    let free_species: Vec<usize> = (0..n_species).filter(|&s| !taken[s]).collect();
    if leftover.len() > free_species.len() {
        let extra: Vec<String> = leftover
            .iter()
            .map(|&i| format!("\"{}\"", headers[i]))
            .collect();
        return Err(ImportError::Columns {
            reason: format!(
                "this model has {n_species} species ({}) but the file has {} count column(s) that do not all match: {}; name the columns after the species or choose them",
                species.join(", "),
                headers.len() - 1,
                extra.join(", ")
            ),
        });
    }
    for (&i, &s) in leftover.iter().zip(&free_species) {
        roles[i] = Some(ColumnRole::Species {
            species: s,
            name: species[s].clone(),
            matched_by: MatchedBy::Position,
        });
    }
    Ok(finish(headers, roles))
}

fn finish(headers: &[String], roles: Vec<Option<ColumnRole>>) -> Vec<ColumnUse> {
    headers
        .iter()
        .zip(roles)
        .enumerate()
        .map(|(index, (h, role))| ColumnUse {
            index,
            header: h.clone(),
            role: role.unwrap_or(ColumnRole::Ignored),
        })
        .collect()
}

//! Loading: CSV and Parquet through polars, cell cleaning and typing, the schema (target,
//! favourable value, groups, features) checked against what the file holds.

pub mod costs;
pub mod memory;
mod parquet_pages;

use std::collections::{BTreeMap, HashMap};
use std::fs::File;
use std::io::Read;
use std::path::Path;

use polars::prelude::{
    CsvParseOptions, CsvReadOptions, DataFrame, DataType, ParquetReader, SerReader,
};
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

pub use crate::report::SourceInfo;

use crate::error::{nearest_hint, Error, Result};
use crate::report::thousands;
use crate::settings::{parse_comparison, CsvSettings, Membership, SchemaSettings, Settings};

/// Code that marks a missing cell in a categorical column.
pub const MISSING: u32 = u32::MAX;

/// The values of one column, typed.
#[derive(Debug, Clone, PartialEq)]
pub enum Values {
    /// Numbers; `None` is missing.
    Numeric(Vec<Option<f64>>),
    /// Categories: `codes[i]` indexes `levels`, or is [`MISSING`].
    Categorical {
        /// The distinct texts, in order of first appearance.
        levels: Vec<String>,
        /// Each row's index into `levels`.
        codes: Vec<u32>,
    },
}

/// One named, typed column. The values are shared: cloning a column, or taking all of its rows
/// in order, copies no data (a million-row file is held once).
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    /// The column name.
    pub name: String,
    /// The cells, shared between copies of the column.
    pub values: std::sync::Arc<Values>,
}

impl Column {
    /// Number of rows.
    pub fn len(&self) -> usize {
        match &*self.values {
            Values::Numeric(v) => v.len(),
            Values::Categorical { codes, .. } => codes.len(),
        }
    }

    /// True when the column has no rows.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Whether row `i` is missing.
    pub fn is_missing(&self, i: usize) -> bool {
        match &*self.values {
            Values::Numeric(v) => v[i].is_none(),
            Values::Categorical { codes, .. } => codes[i] == MISSING,
        }
    }

    /// Number of missing cells.
    pub fn missing_count(&self) -> usize {
        (0..self.len()).filter(|&i| self.is_missing(i)).count()
    }

    /// The cell as text (numbers in their shortest form), `None` when missing.
    pub fn text(&self, i: usize) -> Option<String> {
        match &*self.values {
            Values::Numeric(v) => v[i].map(|x| format!("{x}")),
            Values::Categorical { levels, codes } => {
                (codes[i] != MISSING).then(|| levels[codes[i] as usize].clone())
            }
        }
    }

    /// "numeric" or "categorical".
    pub fn kind(&self) -> &'static str {
        match *self.values {
            Values::Numeric(_) => "numeric",
            Values::Categorical { .. } => "categorical",
        }
    }

    /// This column with every row where `keep[i]` is false made missing.
    pub fn masked(&self, keep: &[bool]) -> Column {
        let values = match &*self.values {
            Values::Numeric(v) => {
                Values::Numeric(v.iter().zip(keep).map(|(x, &k)| x.filter(|_| k)).collect())
            }
            Values::Categorical { levels, codes } => Values::Categorical {
                levels: levels.clone(),
                codes: codes
                    .iter()
                    .zip(keep)
                    .map(|(&c, &k)| if k { c } else { MISSING })
                    .collect(),
            },
        };
        Column {
            name: self.name.clone(),
            values: values.into(),
        }
    }

    /// This column restricted to the rows in `keep`, in that order (shared, not copied, when
    /// `keep` is every row in order).
    pub fn take(&self, keep: &[usize]) -> Column {
        if keep.len() == self.len() && keep.iter().enumerate().all(|(j, &i)| i == j) {
            return self.clone();
        }
        let values = match &*self.values {
            Values::Numeric(v) => Values::Numeric(keep.iter().map(|&i| v[i]).collect()),
            Values::Categorical { levels, codes } => Values::Categorical {
                levels: levels.clone(),
                codes: keep.iter().map(|&i| codes[i]).collect(),
            },
        };
        Column {
            name: self.name.clone(),
            values: values.into(),
        }
    }
}

/// A file read into typed columns.
#[derive(Debug, Clone)]
pub struct Table {
    /// What was read and from where.
    pub source: SourceInfo,
    /// Every column, typed.
    pub columns: Vec<Column>,
    /// Lines of the file before the first data row (skipped lines and the header), so that data
    /// row `r` (1-based) is near line `r + lines_before_data`.
    pub lines_before_data: usize,
    /// What the reader should know about how the file was read (decimal commas).
    pub warnings: Vec<Warning>,
}

impl Table {
    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.source.rows
    }

    /// The column named `name`, or an error naming the flag and the nearest column.
    pub fn column(&self, name: &str, flag: &str) -> Result<&Column> {
        self.columns
            .iter()
            .find(|c| c.name == name)
            .ok_or_else(|| Error::UnknownColumn {
                flag: flag.to_string(),
                name: name.to_string(),
                hint: nearest_hint(name, self.columns.iter().map(|c| c.name.as_str())),
            })
    }
}

/// Reads the data file named in the settings: Parquet when the file carries the Parquet marker,
/// CSV otherwise; `-` reads standard input (held in a temporary file in the working folder while
/// it is read, then removed). `categorical` names columns kept as categories even when they look
/// numeric.
pub fn read_table(path: &Path, csv: &CsvSettings, categorical: &[String]) -> Result<Table> {
    if !crate::files::is_standard(path) {
        return read_file(path, csv, categorical);
    }
    let held = crate::files::hold_standard_input().map_err(|e| Error::File {
        path: path.to_path_buf(),
        reason: format!("cannot read standard input: {e}"),
    })?;
    let read = read_file(&held, csv, categorical);
    crate::files::release(&held);
    let mut table = read.map_err(|e| e.for_path(path))?;
    table.source.path = "standard input".into();
    Ok(table)
}

fn read_file(path: &Path, csv: &CsvSettings, categorical: &[String]) -> Result<Table> {
    let file_error = |e: std::io::Error| Error::File {
        path: path.to_path_buf(),
        reason: e.to_string(),
    };
    let metadata = std::fs::metadata(path).map_err(file_error)?;
    if metadata.is_dir() {
        return Err(Error::File {
            path: path.to_path_buf(),
            reason: "is a folder, not a data file".into(),
        });
    }
    let (sha256, head) = hash_and_head(path).map_err(file_error)?;
    let format_error = |reason: String| Error::Format {
        path: path.to_path_buf(),
        reason,
    };
    if head.is_empty() {
        return Err(format_error("the file is empty".into()));
    }
    let extension = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    let is_parquet = head.starts_with(b"PAR1");
    if (extension == "parquet" || extension == "pq") && !is_parquet {
        return Err(format_error(
            "is named as Parquet but is not a Parquet file (it lacks the PAR1 marker)".into(),
        ));
    }

    let (frame, delimiter, lines_before_data) = if is_parquet {
        let file = File::open(path).map_err(file_error)?;
        // The Parquet reader can panic on a damaged file rather than fail: that too is a named
        // error (found by tests/fuzz.rs), and its panic message is kept off the terminal.
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(|_| {}));
        // The page headers are checked first, so that a damaged file reads as damaged rather
        // than as too large for memory on the counts its damage gives.
        let read = std::panic::catch_unwind(|| {
            if let Err(reason) = parquet_pages::check(&file) {
                return Ok(Err(format_error(format!(
                    "cannot read as Parquet: the file is damaged ({reason})"
                ))));
            }
            let mut reader = ParquetReader::new(file);
            let rows = reader.num_rows()?;
            let columns = reader.schema()?.len();
            if let Err(e) = memory::check(
                path,
                (rows as u64).saturating_mul(columns as u64),
                "from its metadata",
            ) {
                return Ok(Err(e));
            }
            reader.finish().map(Ok)
        });
        std::panic::set_hook(previous);
        let frame = match read {
            Ok(read) => {
                read.map_err(|e| format_error(format!("cannot read as Parquet: {e}")))??
            }
            Err(_) => {
                return Err(format_error(
                    "cannot read as Parquet: the file is damaged (its reader stopped on it)".into(),
                ))
            }
        };
        (frame, None, 0)
    } else {
        read_csv(path, csv, &head, metadata.len())?
    };
    let rows = frame.height();
    if rows == 0 {
        return Err(format_error("holds no data rows".into()));
    }
    let mut columns = Vec::with_capacity(frame.width());
    let mut warnings = Vec::new();
    // In a file whose fields are not parted by commas, a comma inside a number is a decimal
    // comma; elsewhere only where it cannot be a thousands separator.
    let comma_is_decimal = delimiter.is_some_and(|d| d != b',');
    // Each text column is dropped as soon as it is typed, so the file is not held twice.
    for column in frame.take_columns() {
        let name = column.name().to_string();
        let force_text = categorical.contains(&name);
        let (typed, comma) = type_column(
            name,
            &column,
            &csv.missing_tokens,
            force_text,
            comma_is_decimal,
            (!is_parquet).then_some(lines_before_data),
        )?;
        if let Some(example) = comma {
            warnings.push(format!(
                "column '{}' holds numbers written with a decimal comma (such as '{example}'): read as numbers, '{example}' as {}; add --categorical '{}' if they are codes",
                typed.name,
                example.replace(',', "."),
                typed.name
            ));
        }
        if typed.len() != rows {
            return Err(format_error(format!(
                "the file is damaged: column '{}' holds {} values for {} rows",
                typed.name,
                typed.len(),
                rows
            )));
        }
        columns.push(typed);
    }
    // A line with no cell at all (such as a blank last line) is not a row.
    let blank: Vec<bool> = (0..rows)
        .map(|i| columns.iter().all(|c| c.is_missing(i)))
        .collect();
    let mut rows = rows;
    if blank.iter().any(|&b| b) {
        let keep: Vec<usize> = (0..rows).filter(|&i| !blank[i]).collect();
        columns = columns.iter().map(|c| c.take(&keep)).collect();
        rows = keep.len();
        if rows == 0 {
            return Err(format_error("holds no data rows".into()));
        }
    }
    Ok(Table {
        source: SourceInfo {
            path: path.display().to_string(),
            sha256,
            bytes: metadata.len(),
            format: if is_parquet { "parquet" } else { "csv" }.into(),
            delimiter: delimiter.map(|d| describe_delimiter(d).to_string()),
            rows,
        },
        columns,
        lines_before_data,
        warnings,
    })
}

/// A number written with one decimal comma ("0,75", "-12,5"), as a number; `None` for anything
/// else. With `any_digits` false, three digits after the comma ("1,250") are taken for a
/// thousands separator and refused.
fn decimal_comma(cell: &str, any_digits: bool) -> Option<f64> {
    let (whole, fraction) = cell.split_once(',')?;
    let digits = whole.trim_start_matches(['-', '+']);
    let plain = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    if !plain(digits) || !plain(fraction) || (!any_digits && fraction.len() == 3) {
        return None;
    }
    format!("{whole}.{fraction}").parse().ok()
}

fn describe_delimiter(d: u8) -> String {
    match d {
        b'\t' => "tab".into(),
        b' ' => "space".into(),
        other => (other as char).to_string(),
    }
}

/// SHA-256 of the whole file and its first 64 KiB.
fn hash_and_head(path: &Path) -> std::io::Result<(String, Vec<u8>)> {
    let mut file = File::open(path)?;
    let mut hasher = Sha256::new();
    let mut head = Vec::new();
    let mut buffer = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buffer)?;
        if n == 0 {
            break;
        }
        if head.len() < 1 << 16 {
            let take = n.min((1 << 16) - head.len());
            head.extend_from_slice(&buffer[..take]);
        }
        hasher.update(&buffer[..n]);
    }
    let digest = hasher.finalize();
    Ok((digest.iter().map(|b| format!("{b:02x}")).collect(), head))
}

/// The lines of the file's head that hold a header or data: skipped and comment lines removed.
fn content_lines<'a>(head: &'a str, csv: &CsvSettings) -> Vec<&'a str> {
    head.lines()
        .skip(csv.skip_lines)
        .filter(|l| !l.trim().is_empty())
        .filter(|l| csv.comment.as_deref().is_none_or(|c| !l.starts_with(c)))
        .take(50)
        .collect()
}

/// Splits one line on `delimiter`, honouring double quotes.
fn split_fields(line: &str, delimiter: u8) -> Vec<String> {
    let mut fields = Vec::new();
    let mut current = String::new();
    let mut quoted = false;
    for ch in line.chars() {
        if ch == '"' {
            quoted = !quoted;
        } else if !quoted && ch as u32 == delimiter as u32 {
            fields.push(std::mem::take(&mut current));
        } else {
            current.push(ch);
        }
    }
    fields.push(current);
    fields
}

/// Picks the field separator that splits the first line into more than one field and most of
/// the following lines (four in five, or all but one) into as many, trying comma, semicolon, tab and single space
/// in that order. A broken line among them is then reported by the ragged-line check.
fn sniff_delimiter(lines: &[&str]) -> Option<u8> {
    let lines: Vec<&str> = lines.iter().take(20).copied().collect();
    [b',', b';', b'\t', b' '].into_iter().find(|&d| {
        let counts: Vec<usize> = lines.iter().map(|l| split_fields(l, d).len()).collect();
        counts.first().is_some_and(|&c| {
            let agreeing = counts.iter().filter(|&&x| x == c).count();
            c > 1 && (agreeing * 5 >= counts.len() * 4 || agreeing + 1 >= counts.len())
        })
    })
}

fn read_csv(
    path: &Path,
    csv: &CsvSettings,
    head: &[u8],
    file_bytes: u64,
) -> Result<(DataFrame, Option<u8>, usize)> {
    let format_error = |reason: String| Error::Format {
        path: path.to_path_buf(),
        reason,
    };
    let head_text = String::from_utf8_lossy(head);
    let lines = content_lines(&head_text, csv);
    if lines.is_empty() {
        return Err(format_error("holds no lines with data".into()));
    }
    let delimiter = match csv.delimiter {
        Some(d) => d,
        None => sniff_delimiter(&lines).ok_or_else(|| {
            format_error(
                "cannot tell the field separator from the first lines (tried , ; tab space); \
                 name it with --delimiter"
                    .into(),
            )
        })?,
    };
    let first_fields: Vec<String> = split_fields(lines[0], delimiter)
        .into_iter()
        .map(|f| f.trim().to_string())
        .collect();
    memory::check(
        path,
        memory::csv_cells(
            file_bytes,
            head.len(),
            head.iter().filter(|&&b| b == b'\n').count(),
            first_fields.len(),
        ),
        "estimated from its size and first lines",
    )?;
    if csv.has_header {
        if let Some((i, name)) = first_fields
            .iter()
            .enumerate()
            .find(|(i, n)| first_fields[..*i].contains(n))
        {
            let first = first_fields.iter().position(|n| n == name).unwrap_or(0);
            return Err(format_error(format!(
                "the header names column '{name}' twice (fields {} and {}); rename one",
                first + 1,
                i + 1
            )));
        }
        if lines.len() == 1 {
            return Err(format_error("has a header line but no data rows".into()));
        }
    } else if let Some(names) = &csv.columns {
        if names.len() != first_fields.len() {
            return Err(Error::setting(
                "--columns",
                format!(
                    "names {} columns but the first line of {} has {} fields",
                    names.len(),
                    path.display(),
                    first_fields.len()
                ),
            ));
        }
    }

    let lines_before_data = csv.skip_lines + usize::from(csv.has_header);
    check_ragged(path, csv, delimiter, first_fields.len(), lines_before_data)?;

    let mut parse = CsvParseOptions::default()
        .with_separator(delimiter)
        .with_quote_char(Some(b'"'))
        .with_missing_is_null(true)
        .with_truncate_ragged_lines(false);
    if let Some(prefix) = &csv.comment {
        parse = parse.with_comment_prefix(Some(prefix.as_str()));
    }
    let reader = CsvReadOptions::default()
        .with_has_header(csv.has_header)
        .with_skip_rows(csv.skip_lines)
        .with_infer_schema_length(Some(0))
        .with_raise_if_empty(true)
        .with_parse_options(parse)
        .try_into_reader_with_file_path(Some(path.to_path_buf()))
        .map_err(|e| format_error(e.to_string()))?;
    let mut frame = reader
        .finish()
        .map_err(|e| format_error(explain_csv_error(&e.to_string())))?;
    if let Some(names) = &csv.columns {
        if frame.width() != names.len() {
            return Err(Error::setting(
                "--columns",
                format!(
                    "names {} columns but the file has {}",
                    names.len(),
                    frame.width()
                ),
            ));
        }
        frame
            .set_column_names(names.iter().map(String::as_str))
            .map_err(|e| format_error(e.to_string()))?;
    } else {
        let trimmed: Vec<String> = frame
            .get_column_names()
            .iter()
            .map(|n| n.trim().trim_matches('"').trim().to_string())
            .collect();
        frame
            .set_column_names(trimmed.iter().map(String::as_str))
            .map_err(|e| format_error(e.to_string()))?;
    }
    Ok((frame, Some(delimiter), lines_before_data))
}

/// polars pads short lines with missing cells and names no line for long ones; a line with
/// another number of fields than the header is a broken file, not missing data, so find it and
/// name it. Lines with quotes are left to polars.
fn check_ragged(
    path: &Path,
    csv: &CsvSettings,
    delimiter: u8,
    width: usize,
    lines_before_data: usize,
) -> Result<()> {
    use std::io::BufRead;
    let file_error = |e: std::io::Error| Error::File {
        path: path.to_path_buf(),
        reason: e.to_string(),
    };
    // Line by line, so that a large file is never held twice.
    let mut reader = std::io::BufReader::new(File::open(path).map_err(file_error)?);
    let mut buffer = Vec::new();
    let mut index = 0usize;
    let mut data_row = 0usize;
    loop {
        buffer.clear();
        if reader.read_until(b'\n', &mut buffer).map_err(file_error)? == 0 {
            break;
        }
        let line = std::str::from_utf8(&buffer).map_err(|_| Error::Format {
            path: path.to_path_buf(),
            reason: format!(
                "line {} is not UTF-8 text; convert the file to UTF-8 (for example with \
                 iconv -f latin1 -t utf-8)",
                index + 1
            ),
        })?;
        let line = line.strip_suffix('\n').unwrap_or(line);
        let line = line.strip_suffix('\r').unwrap_or(line);
        index += 1;
        if index <= lines_before_data
            || line.trim().is_empty()
            || csv.comment.as_deref().is_some_and(|c| line.starts_with(c))
        {
            continue;
        }
        data_row += 1;
        if !line.contains('"') {
            let fields = line.split(delimiter as char).count();
            if fields != width {
                return Err(Error::Format {
                    path: path.to_path_buf(),
                    reason: format!(
                        "line {index} (data row {data_row}) has {fields} fields where the file has {width}"
                    ),
                });
            }
        }
    }
    Ok(())
}

fn explain_csv_error(message: &str) -> String {
    let first = message.lines().next().unwrap_or(message).trim();
    if message.contains("found more fields than defined") {
        format!("a line has more fields than the header or first line: {first}")
    } else if message.contains("empty") {
        "the file is empty".to_string()
    } else {
        first.to_string()
    }
}

/// Cleans one cell: trims padding and surrounding quotes; `None` for a missing-value token.
fn clean_cell<'a>(cell: Option<&'a str>, missing: &[String]) -> Option<&'a str> {
    let cell = cell?.trim();
    let cell = cell
        .strip_prefix('"')
        .and_then(|c| c.strip_suffix('"'))
        .map_or(cell, str::trim);
    (!missing.iter().any(|m| m == cell)).then_some(cell)
}

/// Share of non-missing cells that must read as numbers for a column to count as numeric; below
/// it the column is categorical, above it (but not all) the odd cells are an error.
const NUMERIC_SHARE: f64 = 0.9;

fn type_column(
    name: String,
    column: &polars::prelude::Column,
    missing: &[String],
    force_text: bool,
    comma_is_decimal: bool,
    line_offset: Option<usize>,
) -> Result<(Column, Option<String>)> {
    let dtype = column.dtype();
    if dtype.is_primitive_numeric() && !force_text {
        let cast = column
            .cast(&DataType::Float64)
            .map_err(|e| Error::Internal(format!("column '{name}': {e}")))?;
        let floats = cast
            .f64()
            .map_err(|e| Error::Internal(format!("column '{name}': {e}")))?;
        let mut values = Vec::with_capacity(floats.len());
        for (row, v) in floats.into_iter().enumerate() {
            if let Some(x) = v {
                if !x.is_finite() {
                    return Err(non_finite(&name, row, line_offset, &x.to_string()));
                }
            }
            values.push(v);
        }
        return Ok((
            Column {
                name,
                values: std::sync::Arc::new(Values::Numeric(values)),
            },
            None,
        ));
    }
    let text = if matches!(dtype, DataType::String) {
        column.clone()
    } else {
        column
            .cast(&DataType::String)
            .map_err(|e| Error::Internal(format!("column '{name}': {e}")))?
    };
    let strings = text
        .str()
        .map_err(|e| Error::Internal(format!("column '{name}': {e}")))?;

    let mut present = 0usize;
    let mut numeric = 0usize;
    let mut with_comma = 0usize;
    let mut first_comma: Option<String> = None;
    let mut first_text: Option<(usize, String)> = None;
    let mut first_non_finite: Option<(usize, String)> = None;
    if !force_text {
        for (row, cell) in strings.into_iter().enumerate() {
            let Some(cell) = clean_cell(cell, missing) else {
                continue;
            };
            present += 1;
            match cell.parse::<f64>() {
                Ok(x) if x.is_finite() => numeric += 1,
                Ok(_) => {
                    numeric += 1;
                    first_non_finite.get_or_insert((row, cell.to_string()));
                }
                Err(_) if decimal_comma(cell, comma_is_decimal).is_some() => {
                    numeric += 1;
                    with_comma += 1;
                    first_comma.get_or_insert_with(|| cell.to_string());
                }
                Err(_) => {
                    first_text.get_or_insert((row, cell.to_string()));
                }
            }
        }
    }
    let looks_numeric = present > 0 && numeric as f64 >= NUMERIC_SHARE * present as f64;
    if looks_numeric {
        if let Some((row, cell)) = first_non_finite {
            return Err(non_finite(&name, row, line_offset, &cell));
        }
        if let Some((row, cell)) = first_text {
            return Err(Error::BadCell {
                reason: format!(
                    "holds the text '{cell}' in a column of numbers; if it marks a missing value \
                     add --na '{cell}', if the column holds categories add --categorical '{name}'"
                ),
                column: name,
                row: row + 1,
                line: line_offset.map(|offset| row + 1 + offset),
            });
        }
        let values = strings
            .into_iter()
            .map(|cell| {
                clean_cell(cell, missing).and_then(|c| {
                    c.parse::<f64>()
                        .ok()
                        .or_else(|| decimal_comma(c, comma_is_decimal))
                })
            })
            .collect();
        return Ok((
            Column {
                name,
                values: std::sync::Arc::new(Values::Numeric(values)),
            },
            (with_comma > 0).then_some(first_comma).flatten(),
        ));
    }
    let mut index: HashMap<String, u32> = HashMap::new();
    let mut levels: Vec<String> = Vec::new();
    let mut codes = Vec::with_capacity(strings.len());
    for cell in strings.into_iter() {
        let code = match clean_cell(cell, missing) {
            None => MISSING,
            Some(c) => *index.entry(c.to_string()).or_insert_with(|| {
                levels.push(c.to_string());
                (levels.len() - 1) as u32
            }),
        };
        codes.push(code);
    }
    Ok((
        Column {
            name,
            values: std::sync::Arc::new(Values::Categorical { levels, codes }),
        },
        None,
    ))
}

fn non_finite(name: &str, row: usize, line_offset: Option<usize>, cell: &str) -> Error {
    Error::BadCell {
        column: name.to_string(),
        row: row + 1,
        line: line_offset.map(|offset| row + 1 + offset),
        reason: format!(
            "holds '{cell}', which is not a finite number; if it marks a missing value add \
             --na '{cell}'"
        ),
    }
}

/// Fewest rows a group may have: below it its rates rest on a handful of people.
pub const MIN_GROUP_ROWS: usize = 20;

/// A column with more than this share of missing cells is taken for a candidate feature (filled
/// only on a pilot), not a current one, unless `--features` names it. Where `--features` lists
/// the current features, any other column empty on some rows is a candidate, so that a pilot may
/// cover most rows.
pub const CANDIDATE_MISSING_SHARE: f64 = 0.5;

/// One group of the protected attribute, as formed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Group {
    /// Name of the group in reports.
    pub name: String,
    /// How the group was formed from the protected column, e.g. `sex = Female` or
    /// `age <= 25`.
    pub definition: String,
}

/// An attribute's groups as [`Dataset::attribute_groups`] gives them: every row's group, the
/// groups, and the cells too small to assess (name, rows, favourable labels).
pub type AttributeGroups<'a> = (&'a [u32], &'a [Group], &'a [(String, usize, usize)]);

/// A protected attribute (or the intersection of two) with its groups, for every row used.
#[derive(Debug, Clone)]
pub struct Attribute {
    /// The column, or "a × b" for an intersection.
    pub name: String,
    /// Group index of every row; [`Attribute::UNASSESSED`] for a row of a cell too small to
    /// assess (intersections only).
    pub groups: Vec<u32>,
    /// The groups, in report order.
    pub group_list: Vec<Group>,
    /// Index of the reference group in `group_list`.
    pub reference: usize,
    /// How the reference was chosen.
    pub reference_rule: String,
    /// Cells of an intersection too small to assess: their name, rows and favourable labels.
    pub too_small: Vec<(String, usize, usize)>,
}

impl Attribute {
    /// The group index of a row left out of an intersection's assessed cells.
    pub const UNASSESSED: u32 = u32::MAX;

    /// The attribute on the rows `rows` (indices into its rows), in their order.
    pub fn take(&self, rows: &[usize]) -> Attribute {
        Attribute {
            groups: rows.iter().map(|&i| self.groups[i]).collect(),
            ..self.clone()
        }
    }

    /// The groups of `column` on the rows used (`groups`, indices into `group_list`), checked
    /// as every protected attribute is: groups no row falls in dropped, at least two left, each
    /// of at least [`MIN_GROUP_ROWS`] rows, a warning where a group has few rows of a label;
    /// the reference named (`reference`) or the group with the highest favourable rate.
    fn checked(
        column: &str,
        groups: Vec<u32>,
        group_list: Vec<Group>,
        labels: &[bool],
        reference: Option<&str>,
        warnings: &mut Vec<Warning>,
    ) -> Result<Attribute> {
        let mut sizes = vec![0usize; group_list.len()];
        for &g in &groups {
            sizes[g as usize] += 1;
        }
        let (groups, group_list, sizes) = compact_groups(groups, group_list, sizes);
        if group_list.len() < 2 {
            return Err(Error::NotEnoughData(format!(
                "--protected: column '{column}' forms only one group ({}); fairness needs at least two",
                group_list.first().map_or("none", |g| g.name.as_str())
            )));
        }
        for (g, &size) in group_list.iter().zip(&sizes) {
            if size < MIN_GROUP_ROWS {
                return Err(Error::NotEnoughData(format!(
                    "--protected: group '{}' has {size} rows; each group needs at least \
                     {MIN_GROUP_ROWS} for its rates to mean anything (merge groups with --groups)",
                    g.name
                )));
            }
        }
        let mut favourable = vec![0usize; group_list.len()];
        for (&g, &l) in groups.iter().zip(labels) {
            favourable[g as usize] += usize::from(l);
        }
        for (g, group) in group_list.iter().enumerate() {
            let (fav, unfav) = (favourable[g], sizes[g] - favourable[g]);
            if fav.min(unfav) < 5 {
                warnings.push(format!(
                    "group '{}' has only {} rows with the {} label: its true or false positive \
                     rate will be missing or noisy in many trials",
                    group.name,
                    fav.min(unfav),
                    if fav < unfav {
                        "favourable"
                    } else {
                        "unfavourable"
                    }
                ));
            }
        }
        let (reference, reference_rule) = match reference {
            Some(name) => {
                let found = group_list
                    .iter()
                    .position(|g| g.name == name)
                    .ok_or_else(|| Error::UnknownValue {
                        flag: "--reference".into(),
                        column: column.to_string(),
                        value: name.to_string(),
                        hint: nearest_hint(name, group_list.iter().map(|g| g.name.as_str())),
                    })?;
                (found, "named with --reference".to_string())
            }
            None => (
                highest_rate(&favourable, &sizes),
                "the group with the highest favourable rate in the labels".to_string(),
            ),
        };
        Ok(Attribute {
            name: column.to_string(),
            groups,
            group_list,
            reference,
            reference_rule,
            too_small: Vec::new(),
        })
    }

    /// The intersection of `a` and `b`: a cell for every pair of their groups that holds rows.
    /// A cell is assessed when it has at least [`MIN_GROUP_ROWS`] rows and enough of each label
    /// that a trial's test part (`test_fraction` of the rows) can be expected to hold
    /// [`MIN_GROUP_TEST_ROWS`] of each; the others are listed in `too_small` with their counts
    /// and their rows left out of the intersection's figures. The reference is the assessed
    /// cell with the highest favourable rate. `None` where fewer than two cells can be assessed.
    fn intersection(
        a: &Attribute,
        b: &Attribute,
        labels: &[bool],
        test_fraction: f64,
    ) -> Option<Attribute> {
        let width = b.group_list.len();
        let cell = |i: usize| a.groups[i] as usize * width + b.groups[i] as usize;
        let cells = a.group_list.len() * width;
        let (mut rows, mut favourable) = (vec![0usize; cells], vec![0usize; cells]);
        for (i, &label) in labels.iter().enumerate() {
            rows[cell(i)] += 1;
            favourable[cell(i)] += usize::from(label);
        }
        let assessable = |c: usize| {
            let fewest = favourable[c].min(rows[c] - favourable[c]);
            rows[c] >= MIN_GROUP_ROWS && fewest as f64 * test_fraction >= MIN_GROUP_TEST_ROWS as f64
        };
        let name_of = |c: usize| {
            format!(
                "{} & {}",
                a.group_list[c / width].name,
                b.group_list[c % width].name
            )
        };
        let mut index = vec![Attribute::UNASSESSED; cells];
        let (mut group_list, mut too_small) = (Vec::new(), Vec::new());
        let (mut kept_rows, mut kept_favourable) = (Vec::new(), Vec::new());
        for c in (0..cells).filter(|&c| rows[c] > 0) {
            if assessable(c) {
                index[c] = group_list.len() as u32;
                group_list.push(Group {
                    name: name_of(c),
                    definition: format!(
                        "{} and {}",
                        a.group_list[c / width].definition,
                        b.group_list[c % width].definition
                    ),
                });
                kept_rows.push(rows[c]);
                kept_favourable.push(favourable[c]);
            } else {
                too_small.push((name_of(c), rows[c], favourable[c]));
            }
        }
        if group_list.len() < 2 {
            return None;
        }
        Some(Attribute {
            name: format!("{} × {}", a.name, b.name),
            groups: (0..labels.len()).map(|i| index[cell(i)]).collect(),
            reference: highest_rate(&kept_favourable, &kept_rows),
            reference_rule: "the assessed cell with the highest favourable rate in the labels"
                .into(),
            group_list,
            too_small,
        })
    }
}

/// The group with the highest favourable rate (the first of a tie).
fn highest_rate(favourable: &[usize], rows: &[usize]) -> usize {
    let rate = |g: usize| favourable[g] as f64 / rows[g] as f64;
    (0..rows.len())
        .max_by(|&a, &b| rate(a).total_cmp(&rate(b)).then(b.cmp(&a)))
        .unwrap_or(0)
}

/// Something the user should know about the data, with no effect on whether the run goes on.
pub type Warning = String;

/// Fewest rows of each label a trial's training part needs (common practice, no source: below
/// it a model has too little of one class to learn from).
pub const MIN_TRAIN_LABEL_ROWS: usize = 20;
/// Fewest rows of each label a trial's test part needs for its rates to mean anything (common
/// practice, no source).
pub const MIN_TEST_LABEL_ROWS: usize = 10;
/// Fewest rows of a label in one group's test part below which that group is named in a
/// warning (common practice, no source).
pub const MIN_GROUP_TEST_ROWS: usize = 5;
/// Fewer repeats than this give a warning that the intervals are rough.
pub const FEW_REPEATS: usize = 5;
/// The repeats the warning suggests.
const DEFAULT_GOOD_REPEATS: usize = 10;

/// The data ready for trials: labels, groups and feature columns, restricted to usable rows.
#[derive(Debug, Clone)]
pub struct Dataset {
    /// `true` where the label is favourable.
    pub labels: Vec<bool>,
    /// Group index of every row.
    pub groups: Vec<u32>,
    /// The groups, in report order.
    pub group_list: Vec<Group>,
    /// Index of the reference group in `group_list`.
    pub reference: usize,
    /// How the reference was chosen.
    pub reference_rule: String,
    /// The protected column the groups are formed from (the first of `--protected`).
    pub protected: String,
    /// Current features, restricted to the usable rows.
    pub features: Vec<Column>,
    /// Columns taken for candidate features (mostly empty), restricted to the usable rows.
    pub candidates: Vec<Column>,
    /// The favourable label as matched, and the other value(s).
    pub favourable: String,
    /// The other label value(s), as reports name them.
    pub unfavourable: String,
    /// The protected attributes after the first (whose groups are `groups` and `group_list`),
    /// then the intersections of every pair when asked for: each with its own groups, for the
    /// reports that assess every attribute.
    pub more_attributes: Vec<Attribute>,
    /// Data rows read from the file.
    pub rows_read: usize,
    /// Rows left out: missing label, missing protected value.
    pub dropped_missing_label: usize,
    /// Rows left out for a missing protected value.
    pub dropped_missing_group: usize,
    /// What the reader should know about the data.
    pub warnings: Vec<Warning>,
}

impl Dataset {
    /// A dataset of the given labels, groups (indices into `names`) and features, no file
    /// behind it: for checks of the estimators and for data built by the program itself.
    pub fn from_parts(
        labels: Vec<bool>,
        groups: Vec<u32>,
        names: &[&str],
        reference: usize,
        features: Vec<Column>,
    ) -> Dataset {
        Dataset {
            rows_read: labels.len(),
            labels,
            groups,
            group_list: names
                .iter()
                .map(|n| Group {
                    name: n.to_string(),
                    definition: String::new(),
                })
                .collect(),
            reference,
            reference_rule: String::new(),
            protected: "group".into(),
            more_attributes: Vec::new(),
            features,
            candidates: Vec::new(),
            favourable: "yes".into(),
            unfavourable: "no".into(),
            dropped_missing_label: 0,
            dropped_missing_group: 0,
            warnings: Vec::new(),
        }
    }

    /// Adds the intersection of every pair of protected attributes to `more_attributes`
    /// ([`Attribute::intersection`]); a warning names every cell too small to assess.
    pub fn add_intersections(&mut self, test_fraction: f64) -> Result<()> {
        let primary = Attribute {
            name: String::new(),
            groups: self.groups.clone(),
            group_list: self.group_list.clone(),
            reference: self.reference,
            reference_rule: String::new(),
            too_small: Vec::new(),
        };
        let mut attributes = vec![&primary];
        attributes.extend(self.more_attributes.iter());
        if attributes.len() < 2 {
            return Err(Error::setting(
                "--intersections",
                "needs at least two protected attributes (--protected a,b)",
            ));
        }
        let names: Vec<String> = std::iter::once(self.protected.clone())
            .chain(self.more_attributes.iter().map(|a| a.name.clone()))
            .collect();
        let mut cells = Vec::new();
        for x in 0..attributes.len() {
            for y in x + 1..attributes.len() {
                let (mut a, mut b) = (attributes[x].clone(), attributes[y].clone());
                a.name.clone_from(&names[x]);
                b.name.clone_from(&names[y]);
                match Attribute::intersection(&a, &b, &self.labels, test_fraction) {
                    Some(c) => cells.push(c),
                    None => {
                        return Err(Error::NotEnoughData(format!(
                        "--intersections: {} × {} has fewer than two cells large enough to assess",
                        names[x], names[y]
                    )))
                    }
                }
            }
        }
        for c in &cells {
            for (name, rows, favourable) in &c.too_small {
                self.warnings.push(format!(
                    "cell '{name}' of {} has {} rows ({} favourable): too small to assess, left out of its figures and worst-group readings",
                    c.name,
                    thousands(*rows),
                    thousands(*favourable)
                ));
            }
        }
        self.more_attributes.extend(cells);
        Ok(())
    }

    /// The data as seen by further attribute `k` of `more_attributes`: its groups in place of
    /// the first attribute's, on the rows it assesses (an intersection leaves out the rows of
    /// cells too small), with labels only (no feature columns): what the label figures of a
    /// report by that attribute are read from.
    pub fn attribute_view(&self, k: usize) -> Dataset {
        let a = &self.more_attributes[k];
        let rows: Vec<usize> = (0..self.rows())
            .filter(|&i| a.groups[i] != Attribute::UNASSESSED)
            .collect();
        Dataset {
            labels: rows.iter().map(|&i| self.labels[i]).collect(),
            groups: rows.iter().map(|&i| a.groups[i]).collect(),
            group_list: a.group_list.clone(),
            reference: a.reference,
            reference_rule: a.reference_rule.clone(),
            protected: a.name.clone(),
            more_attributes: Vec::new(),
            features: Vec::new(),
            candidates: Vec::new(),
            favourable: self.favourable.clone(),
            unfavourable: self.unfavourable.clone(),
            rows_read: rows.len(),
            dropped_missing_label: 0,
            dropped_missing_group: 0,
            warnings: Vec::new(),
        }
    }

    /// For the commands that assess the first protected attribute only (appraise, plan and
    /// backtest): a warning naming it, where more were given.
    pub fn first_attribute_only(&self) -> Option<String> {
        let more: Vec<&str> = self
            .more_attributes
            .iter()
            .map(|a| a.name.as_str())
            .collect();
        (!more.is_empty()).then(|| {
            format!(
                "several protected attributes were given: this command assesses '{}' (the first) only; `acquest baseline` and `acquest curves` report {} as well",
                self.protected,
                more.join(", ")
            )
        })
    }

    /// The rows of group `value` of the protected attribute (or intersection) `column`, as a
    /// mark for every row; `None` where there is no such attribute or group.
    pub fn group_rows(&self, column: &str, value: &str) -> Option<Vec<bool>> {
        let (groups, list, _) = self.attribute_groups(column)?;
        let g = list.iter().position(|x| x.name == value)? as u32;
        Some(groups.iter().map(|&x| x == g).collect())
    }

    /// The groups of the protected attribute (or intersection) `column`: every row's group,
    /// the groups, and the cells too small to assess (none but for an intersection); `None`
    /// where no attribute has that name.
    pub fn attribute_groups(&self, column: &str) -> Option<AttributeGroups<'_>> {
        if column == self.protected {
            return Some((&self.groups, &self.group_list, &[]));
        }
        let a = self.more_attributes.iter().find(|a| a.name == column)?;
        Some((&a.groups, &a.group_list, &a.too_small))
    }

    /// Rows used.
    pub fn rows(&self) -> usize {
        self.labels.len()
    }

    /// Reads the file, applies the schema and checks the trial design against the rows: what
    /// every command starts with.
    pub fn load(settings: &Settings) -> Result<(Table, Dataset)> {
        let (table, mut dataset) = Dataset::read(settings)?;
        let design = dataset.check_design(&settings.trials)?;
        dataset.warnings.extend(design);
        Ok((table, dataset))
    }

    /// Reads the file and applies the schema, without the trial design's check.
    pub fn read(settings: &Settings) -> Result<(Table, Dataset)> {
        let table = read_table(&settings.data, &settings.csv, &settings.schema.categorical)?;
        for name in &settings.schema.categorical {
            table.column(name, "--categorical")?;
        }
        let mut dataset = Dataset::from_table(&table, &settings.schema)?;
        if settings.schema.intersections {
            dataset.add_intersections(settings.trials.test_fraction)?;
        }
        Ok((table, dataset))
    }

    /// Whether the trial design can give meaningful figures on these rows, decided here for
    /// every command: an error where the training or test part of a trial would hold too few
    /// rows of a label ([`MIN_TRAIN_LABEL_ROWS`], [`MIN_TEST_LABEL_ROWS`]); a warning naming
    /// each group whose test part would hold fewer than [`MIN_GROUP_TEST_ROWS`] of a label, and
    /// for fewer than [`FEW_REPEATS`] repeats.
    pub fn check_design(&self, trials: &crate::settings::TrialSettings) -> Result<Vec<Warning>> {
        let share = trials.test_fraction;
        let favourable = self.labels.iter().filter(|&&l| l).count();
        let counts = [favourable, self.rows() - favourable];
        let (least, label) = if counts[0] <= counts[1] {
            (counts[0], "favourable")
        } else {
            (counts[1], "unfavourable")
        };
        let test = least as f64 * share;
        let train = least as f64 * (1.0 - share);
        // The test shares that would do, to two decimals.
        let lowest = (MIN_TEST_LABEL_ROWS as f64 / least as f64 * 100.0).ceil() / 100.0;
        let highest = ((1.0 - MIN_TRAIN_LABEL_ROWS as f64 / least as f64) * 100.0).floor() / 100.0;
        if lowest > highest {
            return Err(Error::NotEnoughData(format!(
                "too few rows for trials: the rarer label ({label}) is on {} rows; a trial needs \
                 at least {MIN_TRAIN_LABEL_ROWS} of each label to train on and \
                 {MIN_TEST_LABEL_ROWS} to test on",
                thousands(least)
            )));
        }
        if train < MIN_TRAIN_LABEL_ROWS as f64 || test < MIN_TEST_LABEL_ROWS as f64 {
            return Err(Error::setting(
                "--test-fraction",
                format!(
                    "too few rows for trials at {share}: it leaves about {} {label} rows to train \
                     on and {} to test on (of {}), and a trial needs at least \
                     {MIN_TRAIN_LABEL_ROWS} of each label to train on and {MIN_TEST_LABEL_ROWS} \
                     to test on; a share from {:.2} to {:.2} would do",
                    train.floor(),
                    test.floor(),
                    thousands(least),
                    lowest,
                    highest
                ),
            ));
        }
        // A group without one of the labels has no true or no false positive rate: the
        // disparities that compare those cannot be measured for it, whatever the settings.
        let sizes = self.group_sizes();
        for (&(rows, favourable), group) in sizes.iter().zip(&self.group_list) {
            if favourable == 0 || favourable == rows {
                let (has, lacks) = if favourable == 0 {
                    (&self.unfavourable, &self.favourable)
                } else {
                    (&self.favourable, &self.unfavourable)
                };
                return Err(Error::NotEnoughData(format!(
                    "group '{}' has no rows with the label '{lacks}' (its {} rows are all '{has}'): its true or false positive rate, and the disparities built on it, cannot be measured; merge it with another group (--groups) or add rows of it with the other label",
                    group.name,
                    thousands(rows)
                )));
            }
        }
        let mut warnings = Vec::new();
        let thin: Vec<String> = sizes
            .iter()
            .zip(&self.group_list)
            .filter_map(|(&(rows, fav), group)| {
                let fewest = fav.min(rows - fav) as f64 * share;
                (fewest < MIN_GROUP_TEST_ROWS as f64)
                    .then(|| format!("'{}' (about {:.0})", group.name, fewest.floor()))
            })
            .collect();
        if !thin.is_empty() {
            warnings.push(format!(
                "with --test-fraction {share}, the test part of a trial holds fewer than \
                 {MIN_GROUP_TEST_ROWS} rows of a label in group {}: that group's rates rest on \
                 very few rows and their intervals are wide",
                thin.join(", ")
            ));
        }
        if trials.repeats < FEW_REPEATS {
            warnings.push(format!(
                "{} repeats: intervals from so few trials are rough; use --repeats {} or more",
                trials.repeats, DEFAULT_GOOD_REPEATS
            ));
        }
        Ok(warnings)
    }

    /// Applies the schema to a table.
    pub fn from_table(table: &Table, schema: &SchemaSettings) -> Result<Dataset> {
        let target = table.column(&schema.target, "--target")?;
        let mut columns = Vec::new();
        for attribute in &schema.protected {
            let column = table.column(&attribute.column, "--protected")?;
            if column.name == target.name {
                return Err(Error::setting(
                    "--protected",
                    format!("'{}' is the same column as --target", column.name),
                ));
            }
            columns.push(column);
        }
        let mut warnings = table.warnings.clone();
        let (labels, favourable, unfavourable) = read_labels(target, &schema.favourable)?;
        let mut formed = Vec::new();
        for (attribute, column) in schema.protected.iter().zip(&columns) {
            formed.push(form_groups(
                column,
                attribute.groups.as_deref(),
                &mut warnings,
            )?);
        }

        // Every attribute is assessed on the same rows: those with a label and a value in every
        // protected column.
        let mut keep = Vec::with_capacity(table.rows());
        let mut no_label = 0;
        let mut no_group = vec![0usize; columns.len()];
        let mut dropped_missing_group = 0;
        for (i, label) in labels.iter().enumerate() {
            let missing: Vec<usize> = (0..columns.len())
                .filter(|&k| formed[k].0[i].is_none())
                .collect();
            if label.is_none() {
                no_label += 1;
            } else if !missing.is_empty() {
                dropped_missing_group += 1;
                for k in missing {
                    no_group[k] += 1;
                }
            } else {
                keep.push(i);
            }
        }
        if no_label > 0 {
            warnings.push(format!(
                "{} rows have no value in the target column '{}' and are left out",
                thousands(no_label),
                target.name
            ));
        }
        for (column, &count) in columns.iter().zip(&no_group) {
            if count > 0 {
                warnings.push(format!(
                    "{} rows have no value in the protected column '{}' and are left out",
                    thousands(count),
                    column.name
                ));
            }
        }
        let labels: Vec<bool> = keep.iter().map(|&i| labels[i].unwrap_or(false)).collect();
        let total_favourable = labels.iter().filter(|&&l| l).count();
        let mut attributes = Vec::new();
        for ((attribute, column), (groups, group_list)) in
            schema.protected.iter().zip(&columns).zip(formed)
        {
            let groups: Vec<u32> = keep.iter().map(|&i| groups[i].unwrap_or(0)).collect();
            attributes.push(Attribute::checked(
                &column.name,
                groups,
                group_list,
                &labels,
                attribute.reference.as_deref(),
                &mut warnings,
            )?);
        }
        if total_favourable == 0 || total_favourable == labels.len() {
            return Err(Error::NotEnoughData(format!(
                "--target: every usable row has the label '{}'; a classifier needs both labels",
                if total_favourable == 0 {
                    &unfavourable
                } else {
                    &favourable
                }
            )));
        }
        let primary = attributes.remove(0);
        let protected: Vec<&str> = columns.iter().map(|c| c.name.as_str()).collect();
        let (features, candidates) =
            choose_features(table, schema, &target.name, &protected, &mut warnings)?;
        let features: Vec<Column> = features.iter().map(|c| c.take(&keep)).collect();
        let candidates: Vec<Column> = candidates.iter().map(|c| c.take(&keep)).collect();
        if features.is_empty() {
            return Err(Error::setting(
                "--features",
                "no feature columns are left to train on",
            ));
        }
        Ok(Dataset {
            labels,
            protected: primary.name,
            groups: primary.groups,
            group_list: primary.group_list,
            reference: primary.reference,
            reference_rule: primary.reference_rule,
            more_attributes: attributes,
            features,
            candidates,
            favourable,
            unfavourable,
            rows_read: table.rows(),
            dropped_missing_label: no_label,
            dropped_missing_group,
            warnings,
        })
    }

    /// Rows and favourable labels per group.
    pub fn group_sizes(&self) -> Vec<(usize, usize)> {
        let mut sizes = vec![(0usize, 0usize); self.group_list.len()];
        for (&g, &l) in self.groups.iter().zip(&self.labels) {
            sizes[g as usize].0 += 1;
            sizes[g as usize].1 += usize::from(l);
        }
        sizes
    }
}

fn compact_groups(
    groups: Vec<u32>,
    list: Vec<Group>,
    sizes: Vec<usize>,
) -> (Vec<u32>, Vec<Group>, Vec<usize>) {
    let mut new_index = vec![u32::MAX; list.len()];
    let mut new_list = Vec::new();
    let mut new_sizes = Vec::new();
    for (g, group) in list.into_iter().enumerate() {
        if sizes[g] > 0 {
            new_index[g] = new_list.len() as u32;
            new_list.push(group);
            new_sizes.push(sizes[g]);
        }
    }
    let groups = groups.into_iter().map(|g| new_index[g as usize]).collect();
    (groups, new_list, new_sizes)
}

/// Strips one trailing full stop, so that `>50K.` (as in some test files) matches `>50K`.
fn label_key(text: &str) -> &str {
    let t = text.trim();
    t.strip_suffix('.').map_or(t, str::trim_end)
}

/// Reads the target as favourable / not; `None` where the label is missing.
fn read_labels(target: &Column, favourable: &str) -> Result<(Vec<Option<bool>>, String, String)> {
    if let (Values::Numeric(values), Some((op, threshold))) =
        (&*target.values, parse_comparison(favourable))
    {
        let labels: Vec<Option<bool>> = values
            .iter()
            .map(|v| v.map(|x| op.holds(x, threshold)))
            .collect();
        let symbol = op.symbol();
        return Ok((
            labels,
            format!("{} {symbol} {threshold}", target.name),
            format!("{} not {symbol} {threshold}", target.name),
        ));
    }
    let wanted = label_key(favourable);
    let mut seen: BTreeMap<String, usize> = BTreeMap::new();
    let mut labels = Vec::with_capacity(target.len());
    for i in 0..target.len() {
        match target.text(i) {
            None => labels.push(None),
            Some(value) => {
                let key = label_key(&value).to_string();
                labels.push(Some(key == wanted));
                *seen.entry(key).or_default() += 1;
            }
        }
    }
    if !seen.contains_key(wanted) {
        return Err(Error::UnknownValue {
            flag: "--favourable".into(),
            column: target.name.clone(),
            value: favourable.to_string(),
            hint: nearest_hint(wanted, seen.keys().map(String::as_str)),
        });
    }
    let others: Vec<&String> = seen.keys().filter(|k| k.as_str() != wanted).collect();
    match others.len() {
        0 => Err(Error::NotEnoughData(format!(
            "--target: every row of column '{}' holds '{wanted}'; a classifier needs two labels",
            target.name
        ))),
        1 => Ok((labels, wanted.to_string(), others[0].clone())),
        n => Err(Error::setting(
            "--target",
            format!(
                "column '{}' holds {} distinct values, not two (e.g. {}); for a numeric target \
                 give a threshold such as --favourable '>=10'",
                target.name,
                n + 1,
                seen.keys().take(5).cloned().collect::<Vec<_>>().join(", ")
            ),
        )),
    }
}

/// Largest number of distinct values a protected column may have without `--groups`.
const MAX_IMPLICIT_GROUPS: usize = 12;

fn form_groups(
    protected: &Column,
    rules: Option<&[crate::settings::GroupRule]>,
    warnings: &mut Vec<Warning>,
) -> Result<(Vec<Option<u32>>, Vec<Group>)> {
    let Some(rules) = rules else {
        return groups_by_value(protected);
    };
    check_rules(protected, rules, warnings)?;
    let groups = assign_groups(protected, rules)?;
    Ok((groups, group_definitions(&protected.name, rules)))
}

/// One group per distinct value of the protected column, named by the value, in order of first
/// appearance (too many values is an error that suggests `--groups`).
fn groups_by_value(protected: &Column) -> Result<(Vec<Option<u32>>, Vec<Group>)> {
    let column = &protected.name;
    // One group per distinct value, named by the value, in order of first appearance.
    let mut index: BTreeMap<String, u32> = BTreeMap::new();
    let mut order: Vec<String> = Vec::new();
    let mut groups = Vec::with_capacity(protected.len());
    for i in 0..protected.len() {
        groups.push(protected.text(i).map(|v| {
            *index.entry(v.clone()).or_insert_with(|| {
                order.push(v);
                (order.len() - 1) as u32
            })
        }));
    }
    if order.len() > MAX_IMPLICIT_GROUPS {
        return Err(Error::setting(
            "--protected",
            format!(
                "column '{column}' has {} distinct values; form groups with --groups, e.g. \
                 --groups 'under 25=<25;25 and over=>=25' or 'a=x,y;b=*'",
                order.len()
            ),
        ));
    }
    let list = order
        .into_iter()
        .map(|v| Group {
            definition: format!("{column} = {v}"),
            name: v,
        })
        .collect();
    Ok((groups, list))
}

/// The groups of `--groups` rules, each with how it is formed from the protected `column`.
fn group_definitions(column: &str, rules: &[crate::settings::GroupRule]) -> Vec<Group> {
    rules
        .iter()
        .map(|r| Group {
            name: r.name.clone(),
            definition: match &r.member {
                Membership::Values(v) => format!("{column} in {{{}}}", v.join(", ")),
                Membership::Rest => {
                    let claimed: Vec<String> = rules
                        .iter()
                        .filter_map(|other| match &other.member {
                            Membership::Values(v) => Some(v.join(", ")),
                            Membership::Compare { op, value } => {
                                Some(format!("{} {value}", op.symbol()))
                            }
                            Membership::Rest => None,
                        })
                        .collect();
                    format!("{column} not in {{{}}}", claimed.join("; "))
                }
                Membership::Compare { op, value } => format!("{column} {} {value}", op.symbol()),
            },
        })
        .collect()
}

/// Checks `--groups` rules against the column: every listed code exists (a typo is not silently
/// an empty group; some absent codes of a group are warnings), and comparisons are on numbers.
fn check_rules(
    protected: &Column,
    rules: &[crate::settings::GroupRule],
    warnings: &mut Vec<Warning>,
) -> Result<()> {
    let column = &protected.name;
    let present: Vec<String> = {
        let mut seen: BTreeMap<String, ()> = BTreeMap::new();
        for i in 0..protected.len() {
            if let Some(v) = protected.text(i) {
                seen.insert(v, ());
            }
        }
        seen.into_keys().collect()
    };
    for rule in rules {
        if let Membership::Values(values) = &rule.member {
            let absent: Vec<&String> = values.iter().filter(|v| !present.contains(v)).collect();
            if absent.len() == values.len() {
                return Err(Error::UnknownValue {
                    flag: "--groups".into(),
                    column: column.clone(),
                    value: absent[0].clone(),
                    hint: nearest_hint(absent[0], present.iter().map(String::as_str)),
                });
            }
            for v in absent {
                warnings.push(format!(
                    "--groups: value '{v}' of group '{}' does not occur in column '{column}'",
                    rule.name
                ));
            }
        }
        if let (Membership::Compare { .. }, Values::Categorical { .. }) =
            (&rule.member, &*protected.values)
        {
            return Err(Error::setting(
                "--groups",
                format!(
                    "group '{}' compares numbers but column '{column}' holds text",
                    rule.name
                ),
            ));
        }
    }
    Ok(())
}

/// Each row's group under `--groups` rules (`None` where the protected value is missing); a
/// value in no group (without a rest group) or in two is an error.
fn assign_groups(
    protected: &Column,
    rules: &[crate::settings::GroupRule],
) -> Result<Vec<Option<u32>>> {
    let column = &protected.name;
    let rest = rules.iter().position(|r| r.member == Membership::Rest);
    let mut groups = Vec::with_capacity(protected.len());
    for i in 0..protected.len() {
        let Some(text) = protected.text(i) else {
            groups.push(None);
            continue;
        };
        let number = match &*protected.values {
            Values::Numeric(v) => v[i],
            Values::Categorical { .. } => None,
        };
        let matching: Vec<usize> = rules
            .iter()
            .enumerate()
            .filter(|(_, r)| match &r.member {
                Membership::Values(values) => values.contains(&text),
                Membership::Compare { op, value } => number.is_some_and(|x| op.holds(x, *value)),
                Membership::Rest => false,
            })
            .map(|(g, _)| g)
            .collect();
        let group = match (matching.as_slice(), rest) {
            ([g], _) => *g,
            ([], Some(r)) => r,
            ([], None) => {
                return Err(Error::BadCell {
                    column: column.clone(),
                    row: i + 1,
                    line: None,
                    reason: format!(
                        "value '{text}' belongs to no group of --groups (add it to one, or end \
                         with name=* for the rest)"
                    ),
                })
            }
            (several, _) => {
                return Err(Error::setting(
                    "--groups",
                    format!(
                        "value '{text}' of column '{column}' falls in groups '{}' and '{}'; \
                         groups must not overlap",
                        rules[several[0]].name, rules[several[1]].name
                    ),
                ))
            }
        };
        groups.push(Some(group as u32));
    }
    Ok(groups)
}

fn choose_features<'a>(
    table: &'a Table,
    schema: &SchemaSettings,
    target: &str,
    protected: &[&str],
    warnings: &mut Vec<Warning>,
) -> Result<(Vec<&'a Column>, Vec<&'a Column>)> {
    for name in &schema.exclude {
        table.column(name, "--exclude")?;
    }
    let rows = table.rows();
    let mut features = Vec::new();
    let mut candidates = Vec::new();
    if let Some(listed) = &schema.features {
        for name in listed {
            let column = table.column(name, "--features")?;
            if name == target {
                return Err(Error::setting(
                    "--features",
                    format!("lists the target '{name}'"),
                ));
            }
            if protected.contains(&name.as_str()) && !schema.use_protected {
                return Err(Error::setting(
                    "--features",
                    format!(
                        "lists the protected column '{name}'; add --use-protected to train on it"
                    ),
                ));
            }
            if !schema.exclude.contains(name) && !features.iter().any(|c: &&Column| &c.name == name)
            {
                features.push(column);
            }
        }
        for column in &table.columns {
            let is_listed = listed.contains(&column.name);
            if !is_listed
                && column.name != target
                && !protected.contains(&column.name.as_str())
                && column.missing_count() > 0
            {
                candidates.push(column);
            }
        }
    } else {
        for column in &table.columns {
            if column.name == target || schema.exclude.contains(&column.name) {
                continue;
            }
            if protected.contains(&column.name.as_str()) && !schema.use_protected {
                continue;
            }
            let missing = column.missing_count();
            if missing as f64 > CANDIDATE_MISSING_SHARE * rows as f64 {
                warnings.push(format!(
                    "column '{}' is empty on {} of {} rows: taken for a candidate \
                     feature (filled on a pilot), not a current one; name it in --features to \
                     train on it",
                    column.name,
                    thousands(missing),
                    thousands(rows)
                ));
                candidates.push(column);
                continue;
            }
            if let Values::Categorical { levels, .. } = &*column.values {
                if levels.len() > 50 && levels.len() as f64 > 0.5 * (rows - missing) as f64 {
                    warnings.push(format!(
                        "column '{}' has {} distinct values on {} rows and looks like an \
                         identifier: left out (name it in --features to train on it)",
                        column.name,
                        levels.len(),
                        rows - missing
                    ));
                    continue;
                }
            }
            features.push(column);
        }
    }
    for &name in protected {
        if schema.use_protected && !features.iter().any(|c| c.name == name) {
            features.push(table.column(name, "--protected")?);
        }
    }
    Ok((features, candidates))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::settings::{Choices, Settings};
    use std::io::Write;

    fn write(content: &str, suffix: &str) -> tempfile::NamedTempFile {
        let mut f = tempfile::Builder::new().suffix(suffix).tempfile().unwrap();
        f.write_all(content.as_bytes()).unwrap();
        f
    }

    fn settings_for(path: &Path, extra: impl FnOnce(&mut Choices)) -> Settings {
        let mut c = Choices {
            data: Some(path.to_path_buf()),
            target: Some("y".into()),
            favourable: Some("yes".into()),
            protected: Some("g".into()),
            ..Choices::default()
        };
        extra(&mut c);
        Settings::from_choices(c).unwrap()
    }

    fn rows(n: usize, line: impl Fn(usize) -> String) -> String {
        (0..n).map(|i| line(i) + "\n").collect()
    }

    #[test]
    fn decimal_commas_are_read_as_numbers_and_said() {
        // Constructed file, no source needed: a semicolon file as spreadsheets in many European
        // locales write it.
        let text = "x;w;g;y\n".to_string()
            + &rows(200, |i| {
                format!(
                    "{},{};{};{};{}",
                    i % 7,
                    i % 100,
                    if i % 3 == 0 { "1,250" } else { "2" },
                    if i % 2 == 0 { "a" } else { "b" },
                    if i % 5 < 2 { "yes" } else { "no" }
                )
            });
        let f = write(&text, ".csv");
        let (table, data) = Dataset::read(&settings_for(f.path(), |_| {})).unwrap();
        let x = table.column("x", "--features").unwrap();
        assert_eq!(x.kind(), "numeric");
        assert_eq!(x.text(1).as_deref(), Some("1.1"));
        // Three digits after the comma: still a decimal comma where fields are parted by ';'.
        assert_eq!(
            table.column("w", "--features").unwrap().text(0).as_deref(),
            Some("1.25")
        );
        assert!(data
            .warnings
            .iter()
            .any(|w| w.contains("'x'") && w.contains("decimal comma")));
        assert_eq!(decimal_comma("1,250", false), None, "a thousands separator");
        assert_eq!(decimal_comma("-0,5", false), Some(-0.5));
        assert_eq!(decimal_comma("1,2,3", true), None);
        assert_eq!(decimal_comma("a,5", true), None);
    }

    #[test]
    fn sniffs_separators() {
        assert_eq!(sniff_delimiter(&["a;b;c", "1;2;3"]), Some(b';'));
        assert_eq!(sniff_delimiter(&["a b c", "1 2 3"]), Some(b' '));
        assert_eq!(sniff_delimiter(&["a, b, c", "1, 2, 3"]), Some(b','));
        assert_eq!(sniff_delimiter(&["\"x;y\",b", "1,2"]), Some(b','));
    }

    #[test]
    fn padding_quotes_and_missing_tokens_are_cleaned() {
        let body = "x , g ,y\n".to_string()
            + &rows(60, |i| {
                format!(
                    " {} , \"{}\" , {}",
                    if i == 3 { "?".into() } else { i.to_string() },
                    if i % 2 == 0 { "a" } else { "b" },
                    if i % 3 == 0 { "yes" } else { "no." }
                )
            });
        let f = write(&body, ".csv");
        let s = settings_for(f.path(), |_| {});
        let (table, data) = Dataset::read(&s).unwrap();
        assert_eq!(table.rows(), 60);
        let x = table.column("x", "t").unwrap();
        assert_eq!(x.kind(), "numeric");
        assert!(x.is_missing(3));
        assert_eq!(data.group_list.len(), 2);
        assert_eq!(data.group_list[0].name, "a");
        assert_eq!(data.unfavourable, "no");
    }

    #[test]
    fn text_among_numbers_names_the_row() {
        let body = "x,g,y\n".to_string()
            + &rows(60, |i| {
                format!(
                    "{},{},yes",
                    if i == 7 { "abc".into() } else { i.to_string() },
                    i % 2
                )
            });
        let f = write(&body, ".csv");
        let e = Dataset::read(&settings_for(f.path(), |_| {})).unwrap_err();
        let m = e.to_string();
        assert!(
            m.contains("'x'") && m.contains("row 8") && m.contains("abc"),
            "{m}"
        );
    }

    #[test]
    fn duplicate_header_names_are_refused() {
        let f = write("a,b,a\n1,2,3\n", ".csv");
        let e = read_table(f.path(), &settings_for(f.path(), |_| {}).csv, &[]).unwrap_err();
        assert!(e.to_string().contains("'a' twice"), "{e}");
    }

    #[test]
    fn groups_from_codes_and_thresholds() {
        let body = "age,code,y\n".to_string()
            + &rows(200, |i| {
                format!(
                    "{},{},{}",
                    18 + i % 40,
                    ["A1", "A2", "A3"][i % 3],
                    if i % 2 == 0 { "yes" } else { "no" }
                )
            });
        let f = write(&body, ".csv");
        let s = settings_for(f.path(), |c| {
            c.protected = Some("age".into());
            c.groups = Some(vec!["young=<=25;older=>25".into()]);
        });
        let (_, d) = Dataset::read(&s).unwrap();
        assert_eq!(d.group_list[0].definition, "age <= 25");
        let young = d.groups.iter().filter(|&&g| g == 0).count();
        assert_eq!(young, (0..200).filter(|i| 18 + i % 40 <= 25).count());

        let s = settings_for(f.path(), |c| {
            c.protected = Some("code".into());
            c.groups = Some(vec!["first=A1;others=*".into()]);
        });
        let (_, d) = Dataset::read(&s).unwrap();
        assert_eq!(d.group_sizes()[0].0, 67);

        let s = settings_for(f.path(), |c| {
            c.protected = Some("code".into());
            c.groups = Some(vec!["first=A9;others=*".into()]);
        });
        assert!(Dataset::read(&s).unwrap_err().to_string().contains("A9"));
    }

    #[test]
    fn trailing_full_stop_on_labels_matches() {
        let body = "x,g,y\n".to_string()
            + &rows(60, |i| {
                format!(
                    "{i},{},{}",
                    i % 2,
                    if i % 2 == 0 { ">50K." } else { "<=50K." }
                )
            });
        let f = write(&body, ".csv");
        let s = settings_for(f.path(), |c| c.favourable = Some(">50K".into()));
        let (_, d) = Dataset::read(&s).unwrap();
        assert_eq!(d.labels.iter().filter(|&&l| l).count(), 30);
    }

    #[test]
    fn numeric_target_with_a_threshold() {
        let body = "x,g,y\n".to_string() + &rows(60, |i| format!("{i},{},{}", i % 2, i % 20));
        let f = write(&body, ".csv");
        let s = settings_for(f.path(), |c| c.favourable = Some(">=10".into()));
        let (_, d) = Dataset::read(&s).unwrap();
        assert_eq!(d.labels.iter().filter(|&&l| l).count(), 30);
        assert_eq!(d.favourable, "y >= 10");
    }

    #[test]
    fn mostly_empty_columns_become_candidates() {
        let body = "x,pilot,g,y\n".to_string()
            + &rows(60, |i| {
                format!(
                    "{i},{},{},{}",
                    if i < 10 { i.to_string() } else { String::new() },
                    i % 2,
                    if i % 2 == 0 { "yes" } else { "no" }
                )
            });
        let f = write(&body, ".csv");
        let (_, d) = Dataset::read(&settings_for(f.path(), |_| {})).unwrap();
        assert_eq!(d.features.len(), 1);
        assert_eq!(d.candidates[0].name, "pilot");
        assert!(d.warnings.iter().any(|w| w.contains("candidate")));
    }
}

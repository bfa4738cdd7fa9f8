//! The cost sheet: acquisition options read from CSV or JSON, checked against the data, and the
//! cost rule (a feature bought with new rows is collected for those rows too).

use std::path::Path;

use serde::Deserialize;

use crate::data::{Dataset, Values};
use crate::error::{nearest_hint, Error, Result};
use crate::report::{thousands, OptionKind};

pub use crate::report::{Acquisition, CostOption};

impl CostOption {
    /// What the option buys, as reports name it.
    pub fn kind(&self) -> OptionKind {
        match &self.acquisition {
            Acquisition::Rows { filter: None } => OptionKind::Rows,
            Acquisition::Rows { filter: Some(_) } => OptionKind::GroupRows,
            Acquisition::Feature { .. } => OptionKind::Feature,
        }
    }

    /// Cost of buying this feature for `rows` rows (all rows held plus any new ones).
    pub fn feature_cost(&self, rows: usize) -> f64 {
        self.fixed + self.per_row * rows as f64
    }

    /// Cost of growing this feature's pilot by `added` rows (nothing when none are added).
    pub fn pilot_cost(&self, added: usize) -> f64 {
        if added == 0 {
            0.0
        } else {
            self.pilot.fixed + self.pilot.per_row.unwrap_or(self.per_row) * added as f64
        }
    }

    /// Cost of `rows` new rows of this option (nothing when none are bought).
    pub fn rows_cost(&self, rows: usize) -> f64 {
        if rows == 0 {
            0.0
        } else {
            self.fixed + self.per_row * rows as f64
        }
    }

    /// The row counts this rows option can be bought in: step, 2·step, … up to max_rows.
    pub fn row_steps(&self) -> Vec<usize> {
        match (&self.acquisition, self.max_rows) {
            (Acquisition::Rows { .. }, Some(max)) => {
                let step = self.step.unwrap_or(max).max(1);
                let mut steps: Vec<usize> = (1..=max / step).map(|k| k * step).collect();
                if steps.last() != Some(&max) {
                    steps.push(max);
                }
                steps
            }
            _ => Vec::new(),
        }
    }
}

/// One raw line, as in the file.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawLine {
    name: Option<String>,
    kind: Option<String>,
    column: Option<String>,
    per_row: Option<serde_json::Value>,
    fixed: Option<serde_json::Value>,
    max_rows: Option<serde_json::Value>,
    step: Option<serde_json::Value>,
    sensitive: Option<serde_json::Value>,
    note: Option<String>,
    pilot_per_row: Option<serde_json::Value>,
    pilot_fixed: Option<serde_json::Value>,
    pilot_max_rows: Option<serde_json::Value>,
}

const FIELDS: [&str; 12] = [
    "name",
    "kind",
    "column",
    "per_row",
    "fixed",
    "max_rows",
    "step",
    "sensitive",
    "note",
    "pilot_per_row",
    "pilot_fixed",
    "pilot_max_rows",
];

/// Reads a cost sheet (`-` for standard input): JSON (an array of options, or an object with an
/// `options` array) when the file starts with `[` or `{`, CSV otherwise. Returns its lines and
/// the SHA-256 of the text read.
pub fn read_cost_sheet(path: &Path) -> Result<(Vec<(usize, RawOption)>, String)> {
    let text = crate::files::read_text(path).map_err(|e| Error::File {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let sha256 = {
        use sha2::{Digest, Sha256};
        Sha256::digest(text.as_bytes())
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect::<String>()
    };
    Ok((parse_cost_sheet(&text, path)?, sha256))
}

/// Most options one cost sheet may list: every option is valued with its own trials, the planner
/// searches their combinations, and a plan's joint re-scoring names its options in one 60-bit
/// stream key.
pub const MAX_OPTIONS: usize = 60;

/// A cost sheet's text read as its options, with `path` named in errors.
pub fn parse_cost_sheet(text: &str, path: &Path) -> Result<Vec<(usize, RawOption)>> {
    let format_error = |reason: String| Error::Format {
        path: path.to_path_buf(),
        reason,
    };
    let trimmed = text.trim_start();
    let lines: Vec<(usize, RawLine)> = if trimmed.starts_with('[') || trimmed.starts_with('{') {
        let value: serde_json::Value =
            serde_json::from_str(text).map_err(|e| format_error(format!("not valid JSON: {e}")))?;
        let items = match value {
            serde_json::Value::Array(items) => items,
            serde_json::Value::Object(mut map) => match map.remove("options") {
                Some(serde_json::Value::Array(items)) => items,
                _ => return Err(format_error("a JSON cost sheet is an array of options, or an object with an \"options\" array".into())),
            },
            _ => return Err(format_error("a JSON cost sheet is an array of options".into())),
        };
        items
            .into_iter()
            .enumerate()
            .map(|(i, item)| {
                serde_json::from_value::<RawLine>(item)
                    .map(|l| (i + 1, l))
                    .map_err(|e| {
                        format_error(format!(
                            "option {}: {e} (fields: {})",
                            i + 1,
                            FIELDS.join(", ")
                        ))
                    })
            })
            .collect::<Result<_>>()?
    } else {
        parse_csv(text).map_err(format_error)?
    };
    if lines.is_empty() {
        return Err(format_error("lists no options".into()));
    }
    if lines.len() > MAX_OPTIONS {
        return Err(format_error(format!(
            "lists {} options, more than the {MAX_OPTIONS} one appraisal values (each option is measured with its own trials, and plans search their combinations); split the sheet, or keep the options that are really on offer",
            lines.len()
        )));
    }
    lines
        .into_iter()
        .map(|(line, raw)| {
            RawOption::from_line(raw)
                .map(|o| (line, o))
                .map_err(|(field, reason)| {
                    format_error(format!(
                        "{} {line}, field {field}: {reason}",
                        if trimmed.starts_with('[') || trimmed.starts_with('{') {
                            "option"
                        } else {
                            "line"
                        }
                    ))
                })
        })
        .collect()
}

/// Splits a CSV line on commas, honouring double quotes.
fn split_csv(line: &str) -> Vec<String> {
    let mut fields = Vec::new();
    let mut current = String::new();
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(ch) = chars.next() {
        match ch {
            '"' if quoted && chars.peek() == Some(&'"') => {
                current.push('"');
                chars.next();
            }
            '"' => quoted = !quoted,
            ',' if !quoted => fields.push(std::mem::take(&mut current)),
            c => current.push(c),
        }
    }
    fields.push(current);
    fields.into_iter().map(|f| f.trim().to_string()).collect()
}

fn parse_csv(text: &str) -> std::result::Result<Vec<(usize, RawLine)>, String> {
    let mut lines = text
        .lines()
        .enumerate()
        .filter(|(_, l)| !l.trim().is_empty());
    let Some((_, header)) = lines.next() else {
        return Ok(Vec::new());
    };
    let names = split_csv(header);
    for name in &names {
        if !FIELDS.contains(&name.as_str()) {
            return Err(format!(
                "line 1 names an unknown field '{name}'{} (fields: {})",
                nearest_hint(name, FIELDS),
                FIELDS.join(", ")
            ));
        }
    }
    for required in ["name", "kind"] {
        if !names.iter().any(|n| n == required) {
            return Err(format!("line 1 has no '{required}' field"));
        }
    }
    let mut out = Vec::new();
    for (index, line) in lines {
        let cells = split_csv(line);
        if cells.len() > names.len() {
            return Err(format!(
                "line {} has {} fields where the header has {} (quote a note that holds a comma)",
                index + 1,
                cells.len(),
                names.len()
            ));
        }
        let mut raw = RawLine::default();
        for (name, cell) in names.iter().zip(cells) {
            if cell.is_empty() {
                continue;
            }
            let value = serde_json::Value::String(cell.clone());
            match name.as_str() {
                "name" => raw.name = Some(cell),
                "kind" => raw.kind = Some(cell),
                "column" => raw.column = Some(cell),
                "per_row" => raw.per_row = Some(value),
                "fixed" => raw.fixed = Some(value),
                "max_rows" => raw.max_rows = Some(value),
                "step" => raw.step = Some(value),
                "sensitive" => raw.sensitive = Some(value),
                "pilot_per_row" => raw.pilot_per_row = Some(value),
                "pilot_fixed" => raw.pilot_fixed = Some(value),
                "pilot_max_rows" => raw.pilot_max_rows = Some(value),
                _ => raw.note = Some(cell),
            }
        }
        out.push((index + 1, raw));
    }
    Ok(out)
}

/// An option with its fields typed but not yet checked against the data.
#[derive(Debug, Clone, PartialEq)]
pub struct RawOption {
    /// The `name` field.
    pub name: String,
    /// The `kind` field: feature or rows.
    pub kind: String,
    /// The `column` field: the candidate column, or `column=value` of a group.
    pub column: Option<String>,
    /// The `per_row` cost.
    pub per_row: f64,
    /// The `fixed` cost.
    pub fixed: f64,
    /// The `max_rows` on offer (rows options).
    pub max_rows: Option<usize>,
    /// The `step` rows are bought in (rows options).
    pub step: Option<usize>,
    /// The `sensitive` flag.
    pub sensitive: bool,
    /// The `note` field.
    pub note: String,
    /// `pilot_per_row`, `pilot_fixed` and `pilot_max_rows` (features).
    pub pilot: crate::report::PilotTerms,
}

type FieldError = (&'static str, String);

fn number(
    value: &Option<serde_json::Value>,
    field: &'static str,
) -> std::result::Result<Option<f64>, FieldError> {
    let Some(value) = value else { return Ok(None) };
    let parsed = match value {
        serde_json::Value::Number(n) => n.as_f64(),
        serde_json::Value::String(s) => s.trim().replace('_', "").parse::<f64>().ok(),
        _ => None,
    };
    match parsed {
        Some(x) if x.is_finite() && x >= 0.0 => Ok(Some(x)),
        Some(x) if x.is_finite() => Err((field, format!("{x} is negative"))),
        _ => Err((
            field,
            format!(
                "'{}' is not a number",
                value.as_str().map_or(value.to_string(), String::from)
            ),
        )),
    }
}

fn count(
    value: &Option<serde_json::Value>,
    field: &'static str,
) -> std::result::Result<Option<usize>, FieldError> {
    match number(value, field)? {
        None => Ok(None),
        Some(x) if x.fract() == 0.0 && x >= 1.0 => Ok(Some(x as usize)),
        Some(x) => Err((
            field,
            format!("{x} is not a whole number of rows (1 or more)"),
        )),
    }
}

impl RawOption {
    fn from_line(raw: RawLine) -> std::result::Result<Self, FieldError> {
        let name = raw
            .name
            .filter(|n| !n.trim().is_empty())
            .ok_or(("name", "is empty".to_string()))?;
        let kind = raw
            .kind
            .ok_or(("kind", "is empty (feature or rows)".to_string()))?;
        let sensitive = match &raw.sensitive {
            None => false,
            Some(serde_json::Value::Bool(b)) => *b,
            Some(v) => match v.as_str().map(|s| s.trim().to_ascii_lowercase()).as_deref() {
                Some("yes" | "y" | "true" | "1") => true,
                Some("no" | "n" | "false" | "0" | "") => false,
                _ => return Err(("sensitive", format!("'{v}' is not yes or no"))),
            },
        };
        Ok(RawOption {
            name: name.trim().to_string(),
            kind: kind.trim().to_ascii_lowercase(),
            column: raw
                .column
                .map(|c| c.trim().to_string())
                .filter(|c| !c.is_empty()),
            per_row: number(&raw.per_row, "per_row")?.unwrap_or(0.0),
            fixed: number(&raw.fixed, "fixed")?.unwrap_or(0.0),
            max_rows: count(&raw.max_rows, "max_rows")?,
            step: count(&raw.step, "step")?,
            sensitive,
            note: raw.note.unwrap_or_default(),
            pilot: crate::report::PilotTerms {
                per_row: number(&raw.pilot_per_row, "pilot_per_row")?,
                fixed: number(&raw.pilot_fixed, "pilot_fixed")?.unwrap_or(0.0),
                max_rows: count(&raw.pilot_max_rows, "pilot_max_rows")?,
            },
        })
    }
}

/// Fewest rows a pilot can be measured on (common practice, no source: a with/without trial
/// needs rows to train and to test on).
pub const MIN_PILOT_ROWS: usize = 20;
/// Fewest rows of each label a pilot needs (common practice, no source).
pub const MIN_PILOT_LABEL_ROWS: usize = 5;

/// Checks every option against the data and returns them in the sheet's order.
pub fn check_options(
    path: &Path,
    raw: Vec<(usize, RawOption)>,
    data: &Dataset,
    target: &str,
    protected: &str,
) -> Result<Vec<CostOption>> {
    let error = |line: usize, field: &str, reason: String| Error::Format {
        path: path.to_path_buf(),
        reason: format!("line {line}, field {field}: {reason}"),
    };
    let mut options: Vec<CostOption> = Vec::new();
    for (line, o) in raw {
        if options.iter().any(|x| x.name == o.name) {
            return Err(error(
                line,
                "name",
                format!("'{}' names two options", o.name),
            ));
        }
        let acquisition = match o.kind.as_str() {
            "feature" => {
                let column = o.column.clone().ok_or_else(|| {
                    error(
                        line,
                        "column",
                        "a feature option names its candidate column".into(),
                    )
                })?;
                let Some(candidate) = data.candidates.iter().find(|c| c.name == column) else {
                    let is_feature = data.features.iter().any(|c| c.name == column);
                    let reason = if column == target {
                        format!("'{column}' is the target column (--target), the label the model predicts: it cannot be bought as a feature")
                    } else if column == protected {
                        format!("'{column}' is the protected column (--protected): it forms the groups and is not offered as a feature (--use-protected lets the model see it)")
                    } else if is_feature {
                        format!("'{column}' is already a current feature, filled on most rows; a candidate is filled only on a pilot")
                    } else {
                        format!(
                            "no candidate column '{column}'{}",
                            nearest_hint(&column, data.candidates.iter().map(|c| c.name.as_str()))
                        )
                    };
                    return Err(error(line, "column", reason));
                };
                if candidate.missing_count() == candidate.len() {
                    return Err(error(
                        line,
                        "column",
                        format!("'{column}' has no pilot rows: it is empty everywhere"),
                    ));
                }
                let pilot = pilot_rows(data, &column);
                let favourable = pilot.iter().filter(|&&i| data.labels[i]).count();
                let rarer = favourable.min(pilot.len() - favourable);
                if pilot.len() < MIN_PILOT_ROWS || rarer < MIN_PILOT_LABEL_ROWS {
                    return Err(error(
                        line,
                        "column",
                        format!(
                            "the pilot of '{column}' (the rows where it is filled) holds {} rows, {} with the favourable label and {} without: a model can be trained and tested on a pilot of at least {MIN_PILOT_ROWS} rows with {MIN_PILOT_LABEL_ROWS} of each label",
                            thousands(pilot.len()),
                            thousands(favourable),
                            thousands(pilot.len() - favourable)
                        ),
                    ));
                }
                if let Some(most) = o.pilot.max_rows {
                    if most <= pilot.len() {
                        return Err(error(
                            line,
                            "pilot_max_rows",
                            format!(
                                "{} is not more than the {} rows the pilot of '{column}' holds: it could not grow",
                                thousands(most),
                                thousands(pilot.len())
                            ),
                        ));
                    }
                }
                Acquisition::Feature { column }
            }
            "rows" => {
                if let Some(field) = [
                    (o.pilot.per_row.is_some(), "pilot_per_row"),
                    (o.pilot.fixed > 0.0, "pilot_fixed"),
                    (o.pilot.max_rows.is_some(), "pilot_max_rows"),
                ]
                .into_iter()
                .find_map(|(set, field)| set.then_some(field))
                {
                    return Err(error(
                        line,
                        field,
                        "a rows option has no pilot to grow: the pilot fields are for features"
                            .into(),
                    ));
                }
                let Some(max_rows) = o.max_rows else {
                    return Err(error(
                        line,
                        "max_rows",
                        "a rows option says how many rows can be had".into(),
                    ));
                };
                match o.step {
                    Some(step) if step > max_rows => {
                        return Err(error(
                            line,
                            "step",
                            format!(
                                "{} is more than max_rows {}: no step of it can be bought",
                                thousands(step),
                                thousands(max_rows)
                            ),
                        ));
                    }
                    _ => {}
                }
                let filter = match &o.column {
                    None => None,
                    Some(text) => Some(
                        rows_target(data, protected, text)
                            .map_err(|reason| error(line, "column", reason))?,
                    ),
                };
                Acquisition::Rows { filter }
            }
            other => {
                return Err(error(
                    line,
                    "kind",
                    format!("'{other}' is not feature or rows"),
                ))
            }
        };
        options.push(CostOption {
            name: o.name,
            acquisition,
            per_row: o.per_row,
            fixed: o.fixed,
            max_rows: o.max_rows,
            step: o.step,
            sensitive: o.sensitive,
            note: o.note,
            pilot: o.pilot,
        });
    }
    Ok(options)
}

/// The group a rows option (or the backtest's `--hold-group`) targets, from the sheet's
/// `column` (`text`): `column=value` of a
/// protected attribute (`protected` the first, or a further one), or `a=x&b=y`, a cell of the
/// intersection of two (formed with `--intersections`; the parts in any order). Returns the
/// attribute (or intersection) and the group as the data name them, or why not.
pub fn rows_target(
    data: &Dataset,
    protected: &str,
    text: &str,
) -> std::result::Result<(String, String), String> {
    let mut parts = Vec::new();
    for part in text.split('&') {
        let (column, value) = part
            .split_once('=')
            .map(|(c, v)| (c.trim().to_string(), v.trim().to_string()))
            .ok_or_else(|| {
                format!("'{text}' should read column=value, e.g. {protected}=value, or a=x&b=y for a cell of two")
            })?;
        parts.push((column, value));
    }
    // The attributes in the order --protected gives them.
    let names: Vec<&str> = std::iter::once(data.protected.as_str())
        .chain(
            data.more_attributes
                .iter()
                .map(|a| a.name.as_str())
                .filter(|n| !n.contains(" × ")),
        )
        .collect();
    for (column, _) in &parts {
        if !names.contains(&column.as_str()) {
            return Err(format!(
                "rows can be targeted at a group of a protected attribute ({}), not at '{column}'",
                names.join(", ")
            ));
        }
    }
    parts.sort_by_key(|(column, _)| names.iter().position(|n| n == column));
    let (column, value) = match parts.as_slice() {
        [one] => one.clone(),
        [a, b] if a.0 != b.0 => (format!("{} × {}", a.0, b.0), format!("{} & {}", a.1, b.1)),
        _ => {
            return Err(format!(
                "'{text}' names a cell of more than two attributes, or one attribute twice: a rows option targets a group, or a cell of two"
            ))
        }
    };
    let Some((_, list, too_small)) = data.attribute_groups(&column) else {
        return Err(format!(
            "'{text}' is a cell of {column}: add --intersections so that its cells are formed"
        ));
    };
    let groups: Vec<&str> = list.iter().map(|g| g.name.as_str()).collect();
    if groups.contains(&value.as_str()) {
        return Ok((column, value));
    }
    if let Some((_, rows, favourable)) = too_small.iter().find(|c| c.0 == value) {
        return Err(format!(
            "the cell '{value}' of {column} has {} rows ({} favourable): too small to assess, so its rows cannot be valued",
            thousands(*rows),
            thousands(*favourable)
        ));
    }
    Err(format!(
        "'{column}' has no group '{value}'{}",
        nearest_hint(&value, groups.iter().copied())
    ))
}

/// Rows of a column that carry a value: a candidate's pilot.
pub fn pilot_rows(data: &Dataset, column: &str) -> Vec<usize> {
    data.candidates
        .iter()
        .find(|c| c.name == column)
        .map(|c| (0..c.len()).filter(|&i| !c.is_missing(i)).collect())
        .unwrap_or_default()
}

/// Whether a candidate column is numeric (for reporting).
pub fn is_numeric(data: &Dataset, column: &str) -> bool {
    data.candidates
        .iter()
        .any(|c| c.name == column && matches!(*c.values, Values::Numeric(_)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn option(
        kind: Acquisition,
        per_row: f64,
        fixed: f64,
        max_rows: Option<usize>,
        step: Option<usize>,
    ) -> CostOption {
        CostOption {
            name: "x".into(),
            acquisition: kind,
            per_row,
            fixed,
            max_rows,
            step,
            sensitive: false,
            note: String::new(),
            pilot: Default::default(),
        }
    }

    #[test]
    fn hand_worked_costs() {
        // Worked by hand: a feature at 4.50 a row and 2,000 fixed, on 3,000 rows held and 500 new
        // ones: 2,000 + 4.50 × 3,500 = 17,750. Rows at 12 a row, 500 of them: 6,000.
        let feature = option(
            Acquisition::Feature { column: "f".into() },
            4.5,
            2000.0,
            None,
            None,
        );
        assert_eq!(feature.feature_cost(3_500), 17_750.0);
        let rows = option(
            Acquisition::Rows { filter: None },
            12.0,
            0.0,
            Some(3000),
            Some(500),
        );
        assert_eq!(rows.rows_cost(500), 6_000.0);
        assert_eq!(rows.rows_cost(0), 0.0);
        assert_eq!(rows.row_steps(), vec![500, 1000, 1500, 2000, 2500, 3000]);
        let odd = option(
            Acquisition::Rows { filter: None },
            30.0,
            1500.0,
            Some(250),
            Some(100),
        );
        assert_eq!(odd.row_steps(), vec![100, 200, 250]);
        // 1,500 + 30 × 200 = 7,500.
        assert_eq!(odd.rows_cost(200), 7_500.0);
    }

    #[test]
    fn csv_lines_and_their_errors() {
        let sheet = "name,kind,column,per_row,fixed,max_rows,step,sensitive,note\n\
                     a,feature,f,1.5,10,,,no,\"a note, with a comma\"\n\
                     b,rows,,2,0,100,10,yes,\n";
        let lines = parse_csv(sheet).unwrap();
        let a = RawOption::from_line(lines[0].1.clone()).unwrap();
        assert_eq!(a.note, "a note, with a comma");
        let b = RawOption::from_line(lines[1].1.clone()).unwrap();
        assert!(b.sensitive);
        assert_eq!(b.max_rows, Some(100));
        let bad = parse_csv("name,kind,per_row\nc,rows,-3\n").unwrap();
        let e = RawOption::from_line(bad[0].1.clone()).unwrap_err();
        assert_eq!(e.0, "per_row");
        let bad = parse_csv("name,kind,per_row\nc,rows,abc\n").unwrap();
        assert!(RawOption::from_line(bad[0].1.clone())
            .unwrap_err()
            .1
            .contains("not a number"));
        assert!(parse_csv("name,kind,cost\n")
            .unwrap_err()
            .contains("unknown field 'cost'"));
    }
}

//! The library's error type: every failure a user can cause names the flag, column, line or value.

use std::path::PathBuf;

/// Errors raised by the library. Variants other than [`Error::Internal`] describe bad input or
/// usage; the binary maps them to exit code 2.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// A file could not be opened or read.
    #[error("cannot read {path}: {reason}")]
    File {
        /// The file as named.
        path: PathBuf,
        /// What the system said.
        reason: String,
    },

    /// The file was read but its content cannot be used as it stands.
    #[error("{path}: {reason}")]
    Format {
        /// The file as named.
        path: PathBuf,
        /// What is wrong with its content.
        reason: String,
    },

    /// A flag names a column the data does not have.
    #[error("{flag}: no column named '{name}'{hint}")]
    UnknownColumn {
        /// The flag (or project-file key) that named it.
        flag: String,
        /// The name given.
        name: String,
        /// The nearest names there are, or empty.
        hint: String,
    },

    /// A flag names a value that the column does not hold.
    #[error("{flag}: column '{column}' has no value '{value}'{hint}")]
    UnknownValue {
        /// The flag (or project-file key) that named it.
        flag: String,
        /// The column searched.
        column: String,
        /// The value given.
        value: String,
        /// The nearest values there are, or empty.
        hint: String,
    },

    /// A cell of the data cannot be used. `row` counts data rows from 1; `line` is the file line
    /// when known.
    #[error("column '{column}', data row {row}{}: {reason}", line.map(|l| format!(" (line {l})")).unwrap_or_default())]
    BadCell {
        /// The cell's column.
        column: String,
        /// Its data row, from 1.
        row: usize,
        /// Its line in the file, when known.
        line: Option<usize>,
        /// What is wrong with it.
        reason: String,
    },

    /// A flag or setting has a value that cannot be used.
    #[error("{flag}: {reason}")]
    BadSetting {
        /// The flag (or project-file key).
        flag: String,
        /// Why its value cannot be used.
        reason: String,
    },

    /// The data, as given, cannot support the computation asked for.
    #[error("{0}")]
    NotEnoughData(String),

    /// Something failed that the user did not cause (a model fit that broke, an I/O failure
    /// while writing output).
    #[error("{0}")]
    Internal(String),
}

impl Error {
    /// True when the error comes from the user's input or flags (exit code 2).
    pub fn is_input(&self) -> bool {
        !matches!(self, Error::Internal(_))
    }

    /// The same error, naming `path` as the file it is about (a file read in place of another,
    /// such as standard input held in a temporary file).
    pub fn for_path(self, path: &std::path::Path) -> Self {
        match self {
            Error::File { reason, .. } => Error::File {
                path: path.to_path_buf(),
                reason,
            },
            Error::Format { reason, .. } => Error::Format {
                path: path.to_path_buf(),
                reason,
            },
            other => other,
        }
    }

    /// Shorthand for a [`Error::BadSetting`].
    pub fn setting(flag: &str, reason: impl Into<String>) -> Self {
        Error::BadSetting {
            flag: flag.to_string(),
            reason: reason.into(),
        }
    }
}

/// The library's result type.
pub type Result<T> = std::result::Result<T, Error>;

/// Formats " (did you mean 'x'?)" for the candidate nearest to `name`, or lists what exists when
/// nothing is near.
pub fn nearest_hint<'a>(name: &str, candidates: impl IntoIterator<Item = &'a str>) -> String {
    let candidates: Vec<&str> = candidates.into_iter().collect();
    let lower = name.to_lowercase();
    let best = candidates
        .iter()
        .map(|c| (edit_distance(&lower, &c.to_lowercase()), *c))
        .min_by(|a, b| a.0.cmp(&b.0).then(a.1.cmp(b.1)));
    match best {
        Some((d, c)) if d <= (name.chars().count() / 3).max(2) => format!(" (did you mean '{c}'?)"),
        _ if candidates.is_empty() => String::new(),
        _ => {
            let shown: Vec<&str> = candidates.iter().take(12).copied().collect();
            let more = if candidates.len() > 12 { ", ..." } else { "" };
            format!(" (it has: {}{more})", shown.join(", "))
        }
    }
}

/// Levenshtein distance between two strings, counted in characters.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut previous: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut current = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let substitution = previous[j] + usize::from(ca != *cb);
            current[j + 1] = substitution.min(previous[j + 1] + 1).min(current[j] + 1);
        }
        previous = current;
    }
    previous[b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nearest_name_is_suggested() {
        let hint = nearest_hint("sexx", ["age", "sex", "race"]);
        assert_eq!(hint, " (did you mean 'sex'?)");
    }

    #[test]
    fn far_names_list_what_exists() {
        let hint = nearest_hint("income_band", ["age", "sex"]);
        assert_eq!(hint, " (it has: age, sex)");
    }

    #[test]
    fn edit_distance_counts_single_edits() {
        // kitten -> sitting is the textbook example with distance 3 (from memory).
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
    }
}

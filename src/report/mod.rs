//! The serde types that are the output contract: what every JSON report holds, one file per
//! report. Every stage may name these types (the computing modules build them, the renderers read
//! them); this folder names nothing of theirs and computes nothing.

use serde::{Deserialize, Serialize};

mod appraisal;
mod backtest;
mod baseline;
mod curves;
mod plan;

pub use appraisal::*;
pub use backtest::*;
pub use baseline::*;
pub use curves::*;
pub use plan::*;

/// Name of the report format, written into every report.
pub const FORMAT: &str = "acquest-report";
/// Version of the report format; raised when a field changes meaning or goes away.
pub const FORMAT_VERSION: u32 = 4;

/// A count with thousands separators ("32,561"), as every text of a report writes counts.
pub fn thousands(n: usize) -> String {
    grouped(&n.to_string())
}

/// Digits grouped by three with commas.
fn grouped(digits: &str) -> String {
    let mut out = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// An amount of money or a budget in whole units with thousands separators ("20,000"), exact
/// for any finite amount however large (every digit of the nearest whole number).
pub fn money(x: f64) -> String {
    if !x.is_finite() {
        return x.to_string();
    }
    let whole = format!("{:.0}", x.abs());
    let sign = if x.round() < 0.0 { "-" } else { "" };
    format!("{sign}{}", grouped(&whole))
}

/// A figure that may be "not measured": held as NaN in memory, written as `null` in JSON
/// (serde_json writes every non-finite number as `null`) and read back from `null` as NaN, so
/// that a reader of the file meets an absent value, never a zero.
pub mod nullable {
    use serde::{Deserialize, Deserializer};

    /// Reads a number, or `null` as NaN.
    pub fn number<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
        Ok(Option::<f64>::deserialize(d)?.unwrap_or(f64::NAN))
    }
}

/// The cautions every report carries.
pub const CAUTIONS: [&str; 4] = [
    "These figures are statistical estimates from the data given, with the uncertainty shown; \
     they are not guarantees of what a model will do on other people or at another time.",
    "Fairness metrics such as the four-fifths ratio are screening measures, not legal findings.",
    "Anti-discrimination and data-protection law differ by country and by sector: defer to local \
     law and qualified advice before acting on these results.",
    "Collecting new attributes about people, above all sensitive ones, may need their consent and \
     a privacy or legal review before it starts.",
];

/// What the run read and how it was set.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Inputs {
    /// The data file: path, SHA-256, size, format, rows.
    pub data: SourceInfo,
    /// The label column.
    pub target: String,
    /// The favourable label as matched (or the threshold).
    pub favourable: String,
    /// The other label value(s).
    pub unfavourable: String,
    /// The protected column (the first of several: the one the utility and plans assess).
    pub protected: String,
    /// The further protected attributes and intersections the report also assesses (the
    /// baseline and curves), or names in a warning; absent with one.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more_protected: Vec<String>,
    /// Whether the model saw the protected column.
    pub use_protected: bool,
    /// The model family.
    pub model: String,
    /// Repeated trials.
    pub repeats: usize,
    /// Share of rows held out for testing in each trial.
    pub test_fraction: f64,
    /// The master seed.
    pub seed: u64,
    /// Confidence level of the intervals.
    pub confidence: f64,
    /// The cap on one trial's training rows (see `--max-train-rows`).
    #[serde(default)]
    pub max_train_rows: usize,
}

/// One group with its label rate.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupSummary {
    /// The group's name.
    pub name: String,
    /// How it was formed from the protected column.
    pub definition: String,
    /// Rows of the group.
    pub rows: usize,
    /// Its rows with the favourable label.
    pub favourable_labels: usize,
    /// Its favourable label rate.
    pub label_rate: f64,
}

/// The group every other group is compared with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReferenceGroup {
    /// The reference group's name.
    pub name: String,
    /// How it was chosen.
    pub rule: String,
}

/// What was read and from where.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SourceInfo {
    /// The path as given.
    pub path: String,
    /// SHA-256 of the file's bytes.
    pub sha256: String,
    /// Size of the file.
    pub bytes: u64,
    /// "csv" or "parquet".
    pub format: String,
    /// The field separator used, for CSV.
    pub delimiter: Option<String>,
    /// Data rows read.
    pub rows: usize,
}

/// A mean over trials with its interval and a test against the ideal value.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Estimate {
    /// Mean over the trials that defined the value.
    pub mean: f64,
    /// Lower end of the interval; `None` with fewer than two trials.
    pub low: Option<f64>,
    /// Upper end of the interval.
    pub high: Option<f64>,
    /// Standard deviation over trials.
    pub std_dev: Option<f64>,
    /// Trials in which the value was defined.
    pub trials: usize,
    /// Two-sided p-value of the test that the true value equals `ideal` (for disparities), or
    /// `None` where no ideal applies.
    pub p_value: Option<f64>,
}

//! The report of `acquest backtest`: what each round held back, the predicted and realised gains
//! of buying it back, and how well each method did.

use serde::{Deserialize, Serialize};

use super::{Change, FairnessMeasure, Inputs, OptionKind};

/// A gain the backtest compares: in accuracy, or the fall in unfairness on one measure. Named
/// in reports `accuracy`, `spd`, `di`, `eod` or `aod`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(into = "String", try_from = "String")]
pub enum Gain {
    /// The accuracy gain.
    Accuracy,
    /// The unfairness reduction on one measure.
    Fairness(FairnessMeasure),
}

impl Gain {
    /// Accuracy, then each fairness measure, in report order.
    pub const ALL: [Gain; 5] = [
        Gain::Accuracy,
        Gain::Fairness(FairnessMeasure::Spd),
        Gain::Fairness(FairnessMeasure::Di),
        Gain::Fairness(FairnessMeasure::Eod),
        Gain::Fairness(FairnessMeasure::Aod),
    ];

    /// The name in reports.
    pub fn name(self) -> &'static str {
        match self {
            Gain::Accuracy => "accuracy",
            Gain::Fairness(m) => m.name(),
        }
    }

    /// What the gain is, in words ("accuracy gain", "eod unfairness reduction").
    pub fn label(self) -> String {
        match self {
            Gain::Accuracy => "accuracy gain".to_string(),
            Gain::Fairness(m) => format!("{} unfairness reduction", m.name()),
        }
    }
}

impl From<Gain> for String {
    fn from(gain: Gain) -> String {
        gain.name().to_string()
    }
}

impl TryFrom<String> for Gain {
    type Error = String;
    fn try_from(name: String) -> Result<Gain, String> {
        Gain::ALL
            .into_iter()
            .find(|g| g.name() == name)
            .ok_or_else(|| format!("unknown gain '{name}'"))
    }
}

/// An estimator the backtest compares.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Method {
    /// The appraisal as it stands.
    Acquest,
    /// No extrapolation: what the last measured anchor shows.
    LastAnchor,
    /// The pilot's with-feature curve alone.
    PilotAlone,
}

impl Method {
    /// Every method, acquest's first.
    pub const ALL: [Method; 3] = [Method::Acquest, Method::LastAnchor, Method::PilotAlone];

    /// The name in reports.
    pub fn name(self) -> &'static str {
        match self {
            Method::Acquest => "acquest",
            Method::LastAnchor => "last-anchor",
            Method::PilotAlone => "pilot-alone",
        }
    }
}

/// What `acquest backtest` holds back and how often.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BacktestSettings {
    /// Share of the rows held back (0 for none).
    pub hold_rows: f64,
    /// Features turned into candidates.
    pub hold_features: Vec<String>,
    /// Share of the remaining rows on which a held feature stays filled.
    pub pilot: f64,
    /// A group whose held-back rows form an option of their own.
    pub hold_group: Option<String>,
    /// Random hold-outs run.
    pub rounds: usize,
    /// The fairness measure the best-by-fairness option is named by.
    pub fairness: FairnessMeasure,
    /// The narrowing check: each held feature's pilot also grown this many times (2 or 4) and
    /// appraised again, its interval widths set against those predicted from the smaller
    /// pilot; `null` when not asked for (and in reports written before it was added).
    #[serde(default)]
    pub check_growth: Option<usize>,
}

/// A gain measured for real: the mean over repeats of the paired difference (option against
/// today, same test rows), its interval and p-value with the corrected resampled variance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RealisedGain {
    /// Mean over repeats of the paired difference.
    pub mean: f64,
    /// Lower end of its interval.
    pub low: Option<f64>,
    /// Upper end of its interval.
    pub high: Option<f64>,
    /// Two-sided p-value against no gain.
    pub p_value: Option<f64>,
    /// Its standard error, with the corrected resampled variance.
    pub standard_error: Option<f64>,
    /// The paired difference of every repeat (missing where a rate was undefined).
    pub per_repeat: Vec<Option<f64>>,
}

/// One quantity of one option in one round: the three predictions and what happened.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct QuantityRecord {
    /// accuracy, or the unfairness reduction of spd, di, eod or aod.
    pub quantity: Gain,
    /// The appraisal's prediction.
    pub acquest: Change,
    /// The no-extrapolation prediction.
    pub last_anchor: Change,
    /// The pilot curve's prediction.
    pub pilot_alone: Change,
    /// What buying it for real did.
    pub realised: RealisedGain,
}

/// One option of one round.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OptionRecord {
    /// The option.
    pub option: String,
    /// rows, group rows or feature.
    pub kind: OptionKind,
    /// Rows bought (held rows, or the group's held rows), or rows covered by the feature.
    pub rows: usize,
    /// Accuracy, then each fairness measure.
    pub quantities: Vec<QuantityRecord>,
    /// A feature under the narrowing check: its pilot grown and appraised again.
    #[serde(default)]
    pub growth_check: Option<GrowthCheck>,
}

/// One feature's pilot grown for the narrowing check: the widths of the full-size intervals
/// the appraisal gave at its pilot, predicted for the grown pilot, and given by it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GrowthCheck {
    /// Rows of the pilot appraised first.
    pub pilot_rows: usize,
    /// Rows of the grown pilot (the first pilot's rows and more).
    pub grown_rows: usize,
    /// The accuracy gain's interval widths.
    pub accuracy: WidthCheck,
    /// The unfairness reduction's interval widths, on the backtest's fairness measure.
    pub unfairness: WidthCheck,
}

/// The widths of one interval: at the first pilot, predicted for the grown one, and given by it
/// (`null` where an interval is missing).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WidthCheck {
    /// At the first pilot.
    pub now: Option<f64>,
    /// Predicted for the grown pilot (options[].pilot.growth of the first appraisal).
    pub predicted: Option<f64>,
    /// Given by the grown pilot's appraisal.
    pub realised: Option<f64>,
}

/// The narrowing check over every round and held feature: how the predicted widths compare
/// with the realised ones.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GrowthSummary {
    /// How many times the pilots were grown.
    pub factor: usize,
    /// The accuracy gain's widths.
    pub accuracy: WidthSummary,
    /// The unfairness reduction's widths.
    pub unfairness: WidthSummary,
}

/// Predicted against realised widths over the checks that have both.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WidthSummary {
    /// Checks with a predicted and a realised width.
    pub checks: usize,
    /// Median of predicted / realised width (1 is right; above 1, predicted too wide).
    pub median_ratio: Option<f64>,
    /// Share of checks whose predicted width is within 25% of the realised one.
    pub within_25_percent: Option<f64>,
    /// Median of the first pilot's width / realised width: what predicting no narrowing at all
    /// would have scored.
    pub median_ratio_unchanged: Option<f64>,
}

/// One round: what was held, and every option.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoundRecord {
    /// The round, from 0.
    pub round: usize,
    /// Rows the appraisal saw.
    pub kept_rows: usize,
    /// Rows held back.
    pub held_rows: usize,
    /// Pilot rows of each held feature.
    pub pilots: Vec<PilotRows>,
    /// Every option of the round.
    pub options: Vec<OptionRecord>,
    /// Warnings of the round's appraisal.
    pub warnings: Vec<String>,
}

/// The pilot of one held feature.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PilotRows {
    /// The held feature.
    pub feature: String,
    /// Rows on which it stayed filled.
    pub rows: usize,
}

/// How well one method did on one quantity, over every option of every round.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MethodSummary {
    /// The method.
    pub method: Method,
    /// Option-rounds compared.
    pub entries: usize,
    /// Mean absolute error of the predicted gains, in percentage points.
    pub mean_absolute_error_pp: Option<f64>,
    /// Root mean squared error against the true gain, in percentage points, estimated by taking
    /// the realised gains' own squared standard errors out of the squared errors
    /// (E(p − r)² = E(p − t)² + E se²); zero when the noise explains all the error.
    pub error_net_of_noise_pp: Option<f64>,
    /// Option-rounds whose predicted interval exists, and whose realised mean falls in it.
    pub with_interval: usize,
    /// Of those, the realised means inside the predicted interval.
    pub covered: usize,
    /// That share.
    pub coverage: Option<f64>,
    /// The same with each predicted interval widened by the realised gain's own measurement
    /// error (its two sides combined in quadrature with the realised standard error at the same
    /// level): an exact interval would cover about the nominal share by this count.
    pub covered_allowing_noise: usize,
    /// That share.
    pub coverage_allowing_noise: Option<f64>,
    /// Realised gains significantly different from zero, and how many of their signs were
    /// predicted.
    pub significant: usize,
    /// Of those, the signs predicted.
    pub sign_correct: usize,
    /// Spearman's correlation of predicted and realised gains over the options of a round,
    /// averaged over rounds.
    pub spearman_all: Option<f64>,
    /// The same over each round's chain of options whose realised gains differ significantly
    /// from each other; the options in those chains, and the rounds with a chain of two or more.
    pub spearman_distinct: Option<f64>,
    /// Options in those chains.
    pub distinct_entries: usize,
    /// Rounds with a chain of two or more.
    pub distinct_rounds: usize,
    /// Rounds whose best option by this quantity was named correctly; named, or the option named
    /// does not do significantly worse than the best.
    pub best_named: usize,
    /// Rounds whose named option does not do significantly worse than the best.
    pub best_named_or_tied: usize,
    /// Mean interval score of the predicted intervals (width plus 2/α times the miss,
    /// Gneiting and Raftery 2007), in percentage points; lower is better.
    #[serde(default)]
    pub interval_score_pp: Option<f64>,
    /// Mean width of the predicted intervals, in percentage points.
    #[serde(default)]
    pub mean_width_pp: Option<f64>,
    /// Of the significant realised gains, those whose predicted interval excludes zero on the
    /// side of the realised gain.
    #[serde(default)]
    pub detected: usize,
    /// That share of the significant realised gains.
    #[serde(default)]
    pub detection: Option<f64>,
    /// Rounds with at least two options (where naming the best means anything).
    pub rounds_compared: usize,
}

/// Every method on one quantity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct QuantitySummary {
    /// The gain compared.
    pub quantity: Gain,
    /// The nominal level of the predicted intervals.
    pub nominal_coverage: f64,
    /// Every method, acquest's first.
    pub methods: Vec<MethodSummary>,
}

/// One of the quality targets, checked on this run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TargetCheck {
    /// The target, in words.
    pub target: String,
    /// Whether this run met it.
    pub met: bool,
    /// The figure it was judged on.
    pub figure: String,
}

/// A named method and what it does.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MethodNote {
    /// The method.
    pub method: Method,
    /// What it does.
    pub description: String,
}

/// The `acquest backtest` report.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BacktestReport {
    /// Always "acquest-report".
    pub format: String,
    /// Version of the report format.
    pub format_version: u32,
    /// acquest's version.
    pub tool_version: String,
    /// The command that wrote the report.
    pub command: String,
    /// What the run read and how it was set.
    pub inputs: Inputs,
    /// What was held back and how often.
    pub backtest: BacktestSettings,
    /// The p-value below which a realised gain counts as significant.
    pub significance: f64,
    /// The methods compared.
    pub methods: Vec<MethodNote>,
    /// Every round.
    pub rounds: Vec<RoundRecord>,
    /// Accuracy first, then each fairness measure.
    pub summary: Vec<QuantitySummary>,
    /// The quality targets for accuracy and the chosen fairness measure.
    pub targets: Vec<TargetCheck>,
    /// The narrowing check's summary, where `backtest.check_growth` asked for it.
    #[serde(default)]
    pub growth_check: Option<GrowthSummary>,
    /// What the reader should know about this run.
    pub warnings: Vec<String>,
    /// The cautions every report carries.
    pub cautions: Vec<String>,
}

//! The report of `acquest appraise`: every option of the cost sheet valued, ranked, and the
//! features already held.

use serde::{Deserialize, Serialize};

use super::{
    CurveRecord, CurveSchedule, DisparityCurve, Estimate, GroupSummary, Inputs, ReferenceGroup,
};

/// The report of `acquest appraise`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AppraisalReport {
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
    /// The cost sheet and how options are scored.
    pub costs: CostInputs,
    /// The groups with their label rates.
    pub groups: Vec<GroupSummary>,
    /// The group every other group is compared with.
    pub reference: ReferenceGroup,
    /// Today's model read off its learning curve at today's training rows.
    pub today: Today,
    /// Today's unfairness by every further protected attribute and intersection, from the
    /// same trials (the options are valued on the first attribute); absent with one.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub today_by_attribute: Vec<TodayByAttribute>,
    /// The learning-curve schedule on all rows behind the rows options.
    pub schedule: CurveSchedule,
    /// Today's learning curves (as in `curves`), read up to the largest rows purchase.
    pub curves: Vec<CurveRecord>,
    /// Today's disparity curves.
    pub disparities: Vec<DisparityCurve>,
    /// Every option of the cost sheet, valued, in the sheet's order.
    pub options: Vec<OptionValue>,
    /// Options ranked by utility per unit of cost, and by the lower end of its interval.
    pub ranking: Vec<Ranked>,
    /// What each feature already held does for accuracy and fairness.
    pub held_features: Vec<HeldFeature>,
    /// What the reader should know about this run.
    pub warnings: Vec<String>,
    /// The cautions every report carries.
    pub cautions: Vec<String>,
}

/// The cost sheet and how options are scored.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CostInputs {
    /// The cost sheet as named.
    pub path: String,
    /// SHA-256 of its bytes.
    pub sha256: String,
    /// The currency its costs are in.
    pub currency: String,
    /// The fairness measure whose unfairness the utility counts: spd, di, eod or aod.
    pub fairness: String,
    /// Weight of the accuracy gain in the utility.
    pub weigh_accuracy: f64,
    /// Weight of the unfairness reduction in the utility.
    pub weigh_fairness: f64,
    /// The sheet's options as checked, in its order: what a plan from this appraisal buys and
    /// at what cost, without reading the sheet or the data again.
    #[serde(default)]
    pub options: Vec<CostOption>,
}

/// What an option buys.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Acquisition {
    /// A new attribute for every row: the candidate column, filled today on a pilot.
    Feature {
        /// The candidate column.
        column: String,
    },
    /// More rows: of any case, or of one group (`column = value` of the protected attribute).
    Rows {
        /// `None` for rows of any group, or the protected column and the group's value.
        filter: Option<(String, String)>,
    },
}

/// One line of the cost sheet, checked (its cost rules are in `data::costs`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CostOption {
    /// The option's name in the sheet.
    pub name: String,
    /// What it buys.
    pub acquisition: Acquisition,
    /// Cost per row acquired (per row covered, for a feature).
    pub per_row: f64,
    /// One-off cost.
    pub fixed: f64,
    /// For rows: how many can be had at most.
    pub max_rows: Option<usize>,
    /// For rows: the purchase granularity.
    pub step: Option<usize>,
    /// Needs a privacy or legal review.
    pub sensitive: bool,
    /// The sheet's note, shown beside the option.
    pub note: String,
    /// For features: what growing the pilot costs and how far it can grow (absent in reports
    /// written before these fields were added).
    #[serde(default)]
    pub pilot: PilotTerms,
}

/// What growing a feature's pilot costs: `pilot_per_row` (default: the option's own cost a
/// row), `pilot_fixed` (default 0) and `pilot_max_rows` (default: every row held) in the sheet.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct PilotTerms {
    /// Cost of each row added to the pilot; `null`: the option's `per_row`.
    pub per_row: Option<f64>,
    /// One-off cost of growing the pilot at all.
    pub fixed: f64,
    /// The most rows the pilot can have; `null`: every row held.
    pub max_rows: Option<usize>,
}

/// Today's fitted accuracy and unfairness.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Today {
    /// Rows held today.
    pub rows: usize,
    /// Training rows of a trial today.
    pub training_rows: usize,
    /// Where today's figures come from: `trials` (the mean of the trials at all of today's
    /// training rows, the baseline's own trials and figures) or `curve` (read off today's
    /// curve, where the training rows exceed the cap a trial trains on).
    #[serde(default)]
    pub source: String,
    /// Today's accuracy.
    pub accuracy: f64,
    /// Unfairness on the primary measure (|SPD|, 1 − min(DI, 1/DI), |EOD| or |AOD|) of the
    /// worst compared group.
    pub unfairness: f64,
    /// The compared group farthest from fair.
    pub worst_group: String,
    /// Each group's predicted selection rate, in the order of `groups`.
    pub selection_rates: Vec<f64>,
}

/// Today's unfairness by a further protected attribute (or intersection), on the fairness
/// measure the utility counts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TodayByAttribute {
    /// The attribute, or "a × b".
    pub attribute: String,
    /// Its reference group.
    pub reference: String,
    /// The unfairness of its worst compared group; `null` where no group's is defined.
    pub unfairness: Option<f64>,
    /// That group.
    pub worst_group: Option<String>,
}

/// A change estimated from curves: the fitted value, a bootstrap interval, and the bootstrap's
/// two-sided p-value against no change.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Change {
    /// The estimated change; `null` where it could not be measured (then every other figure is
    /// absent too, see [`Change::not_measured`]).
    #[serde(deserialize_with = "super::nullable::number")]
    pub mean: f64,
    /// Lower end of its interval.
    pub low: Option<f64>,
    /// Upper end of its interval.
    pub high: Option<f64>,
    /// Two-sided bootstrap p-value against no change.
    pub p_value: Option<f64>,
    /// The chance that the change is above zero: the share of the same draws that give the
    /// interval and the p-value lying above zero.
    #[serde(default)]
    pub chance_positive: Option<f64>,
    /// The fitted value lay beyond its draws' interval, and the interval was widened to reach
    /// it: the draws (re-fitted curves) disagree with the fit, and the report says so.
    #[serde(default)]
    pub widened_to_point: bool,
}

impl Change {
    /// A change that could not be measured (a pilot that holds no test rows of a group, say):
    /// no value, no interval, no test.
    pub fn not_measured() -> Change {
        Change {
            mean: f64::NAN,
            low: None,
            high: None,
            p_value: None,
            chance_positive: None,
            widened_to_point: false,
        }
    }

    /// Whether the change was measured (its value is a number).
    pub fn is_measured(&self) -> bool {
        self.mean.is_finite()
    }

    /// Whether the change differs significantly from zero at `confidence`: its interval (the
    /// one the reports show) lies on one side of zero; without an interval, its p-value is
    /// below 1 − confidence. The bootstrap p counts draws on each side while the interval
    /// interpolates between draws, so at the boundary the two can disagree by one draw; the
    /// interval decides.
    pub fn differs_from_zero(&self, confidence: f64) -> bool {
        match (self.low, self.high) {
            (Some(l), Some(h)) => l > 0.0 || h < 0.0,
            _ => self.p_value.is_some_and(|p| p < 1.0 - confidence),
        }
    }
}

/// One group's rates before and after a purchase.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupChange {
    /// The group.
    pub group: String,
    /// Change in its predicted selection rate.
    pub selection_rate: Change,
    /// Change in its true positive rate.
    pub true_positive_rate: Change,
    /// Change in its false positive rate.
    pub false_positive_rate: Change,
}

/// One purchase of an option (a rows option at one step, a feature with or without rows).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Purchase {
    /// New rows bought (0 for a feature alone).
    pub new_rows: usize,
    /// What it costs.
    pub cost: f64,
    /// Training rows the estimate is read at.
    pub training_rows: f64,
    /// Accuracy after minus before.
    pub accuracy_gain: Change,
    /// Fall in unfairness on the primary measure (positive is fairer); not measured (`mean`
    /// null) where a group's rate could not be measured, see the option's flags.
    pub unfairness_reduction: Change,
    /// weigh_accuracy × accuracy gain + weigh_fairness × unfairness reduction; where the
    /// unfairness reduction is not measured, weigh_accuracy × accuracy gain alone.
    pub utility: Change,
    /// Gains per 1,000 of currency.
    pub accuracy_per_1000: f64,
    /// Unfairness reduction per 1,000 of currency (null where not measured).
    #[serde(deserialize_with = "super::nullable::number")]
    pub fairness_per_1000: f64,
    /// Utility per 1,000 of currency.
    pub utility_per_1000: f64,
    /// The utility's lower end per 1,000 of currency (the cautious reading).
    pub cautious_per_1000: Option<f64>,
    /// Beyond 4× the largest size measured.
    pub extrapolated_too_far: bool,
    /// Each group's rates before and after.
    pub groups: Vec<GroupChange>,
}

/// What a pilot says about a candidate feature.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PilotSummary {
    /// Rows of the pilot.
    pub rows: usize,
    /// Training rows of a trial on it.
    pub training_rows: usize,
    /// Chi-square test of the pilot's group × label mix against the other rows.
    pub mix_chi_square: Option<f64>,
    /// The p-value of that chi-square test.
    pub mix_p_value: Option<f64>,
    /// Accuracy with the feature minus without, on the pilot at its full size, paired repeat
    /// by repeat; its interval and `p_value` (against no difference) carry the Nadeau and
    /// Bengio (2003) correction for the overlap of repeated splits. This is the pilot's
    /// evidence.
    pub accuracy_difference: Option<Estimate>,
    /// Unfairness with the feature minus without, on the pilot at its full size (paired and
    /// corrected as `accuracy_difference`).
    pub unfairness_difference: Option<Estimate>,
    /// The same by every further protected attribute and intersection (the option's estimate
    /// counts the first alone); absent with one.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub unfairness_difference_by_attribute: Vec<AttributeDifference>,
    /// One-way ANOVA p of the accuracy difference across the pilot's sizes (does the gain
    /// depend on the number of rows?).
    pub size_anova_p: Option<f64>,
    /// Whether the pilot could be extrapolated (it was large enough for a learning curve).
    pub extrapolated: bool,
    /// What a bigger pilot would be expected to tell (empty in reports written before it was
    /// added).
    #[serde(default)]
    pub growth: PilotGrowth,
    /// The pilot's own learning curves without and with the candidate, drawn out to today's
    /// training rows; `null` where the pilot was too small for curves (and in reports written
    /// before they were added).
    #[serde(default)]
    pub curves: Option<PilotCurves>,
}

/// A pilot's learning curves without and with the candidate (the same splits, paired), read
/// out to today's training rows: accuracy, and the fairness measure the utility counts for
/// every compared group. The option's estimate is not read off these: it is today's curve plus
/// the pilot's fitted difference (see docs/report.md).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PilotCurves {
    /// Accuracy without the candidate.
    pub accuracy_without: CurveRecord,
    /// Accuracy with it.
    pub accuracy_with: CurveRecord,
    /// The fairness measure against the reference without the candidate, per compared group.
    pub disparity_without: Vec<DisparityCurve>,
    /// The same with it.
    pub disparity_with: Vec<DisparityCurve>,
}

/// A pilot's paired unfairness difference by one further protected attribute.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AttributeDifference {
    /// The attribute, or "a × b".
    pub attribute: String,
    /// Unfairness of its worst compared group with the feature minus without; `null` where the
    /// pilot cannot measure it.
    pub difference: Option<Estimate>,
}

/// What a bigger pilot of a feature would be expected to tell: the headline's interval at
/// larger pilots, about the same point. Each side's part measured on the pilot (the interval of
/// the last anchor alone) narrows as 1/√m with the pilot's rows; the part the extrapolation adds
/// also with the log distance left to carry the difference (none at a pilot of every row).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct PilotGrowth {
    /// Pilots of 2 and 4 times the rows and of every row held, each at most the sheet's
    /// `pilot_max_rows` (those larger than the pilot).
    pub sizes: Vec<GrownPilot>,
}

/// One larger pilot and what it would be expected to show.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GrownPilot {
    /// Rows of the larger pilot.
    pub rows: usize,
    /// Training rows of a trial on it.
    pub training_rows: usize,
    /// The full-size accuracy gain's expected interval; `null` where the headline has none.
    pub accuracy_gain: Option<ExpectedGain>,
    /// The full-size unfairness reduction's expected interval; `null` where not measured.
    pub unfairness_reduction: Option<ExpectedGain>,
    /// The utility's expected interval (what a cautious plan weighs).
    pub utility: Option<ExpectedGain>,
}

/// Rows of one group bought in two parts: the first part, and the interval the whole
/// purchase's gains would be expected to have once it is bought and measured, about today's
/// point. Each side of the headline interval keeps the part a measured change has (the
/// half-width of the change between the group curve's last two anchors, measured repeat by
/// repeat) and the rest, extrapolated today, narrows with the share of the log distance in the
/// group's training rows still to be extrapolated after the first part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FirstPart {
    /// Rows bought first: the option's steps nearest a quarter and a half of the rows on offer.
    pub rows: usize,
    /// What they cost.
    pub cost: f64,
    /// The group's training rows in a trial after them.
    pub group_training_rows: usize,
    /// The whole purchase's accuracy gain, its interval expected after the first part.
    pub accuracy_gain: Option<ExpectedGain>,
    /// The same for the unfairness reduction; `null` where not measured.
    pub unfairness_reduction: Option<ExpectedGain>,
    /// The same for the utility.
    pub utility: Option<ExpectedGain>,
}

/// An interval expected at a larger pilot, about today's point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ExpectedGain {
    /// Expected lower end.
    pub low: f64,
    /// Expected upper end.
    pub high: f64,
    /// The smallest effect that pilot could tell from zero at the report's confidence: the mean
    /// of the interval's two expected sides.
    pub detectable: f64,
}

/// One option of the cost sheet, valued.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OptionValue {
    /// The option's name in the sheet.
    pub name: String,
    /// "feature", "rows" or "group rows".
    pub kind: OptionKind,
    /// The candidate column, or the group filter.
    pub target: Option<String>,
    /// Whether the sheet marks it sensitive.
    pub sensitive: bool,
    /// The sheet's note.
    pub note: String,
    /// The headline purchase: the feature on every row held, or the most rows on offer.
    pub estimate: Purchase,
    /// Rows options: every step. Feature options: the feature bought with each step of the
    /// rows options for any case (read on the with-feature curve at n + Δ).
    pub steps: Vec<Purchase>,
    /// Feature options: the with-feature pilot curve extrapolated directly, for comparison with
    /// the anchored estimate.
    pub direct: Option<Purchase>,
    /// Feature options: what the pilot says.
    pub pilot: Option<PilotSummary>,
    /// Rows of one group: what buying part of the rows first would tell about the whole
    /// purchase (empty for other options, for an option sold in one lot, and in reports
    /// written before it was added).
    #[serde(default)]
    pub first_parts: Vec<FirstPart>,
    /// What the reader should weigh before buying it.
    pub flags: Vec<String>,
}

/// An option's place in the two rankings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Ranked {
    /// The option.
    pub name: String,
    /// Its utility per 1,000 of currency.
    pub utility_per_1000: f64,
    /// Its place by utility per 1,000 (1 is best).
    pub rank: usize,
    /// The lower end of its utility per 1,000.
    pub cautious_per_1000: Option<f64>,
    /// Its place by that lower end.
    pub cautious_rank: usize,
}

/// A feature already held: what dropping it (retrain without) or scrambling it (permute its
/// values on the test rows) does, as changes against the full model (negative accuracy change:
/// the feature helps accuracy; positive unfairness change: the feature makes the model fairer).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HeldFeature {
    /// The feature.
    pub feature: String,
    /// Accuracy change when the model is refitted without it.
    pub ablation_accuracy: Option<Estimate>,
    /// Unfairness change when refitted without it.
    pub ablation_unfairness: Option<Estimate>,
    /// Accuracy change when it is scrambled on the test rows.
    pub permutation_accuracy: Option<Estimate>,
    /// Unfairness change when it is scrambled.
    pub permutation_unfairness: Option<Estimate>,
}

/// A disparity measure between a compared group and the reference (defined in
/// `stats::fairness`); named in reports by its short name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FairnessMeasure {
    /// Statistical parity difference.
    Spd,
    /// Disparate impact.
    Di,
    /// Equal opportunity difference.
    Eod,
    /// Average odds difference.
    Aod,
}

impl FairnessMeasure {
    /// The short name: `spd`, `di`, `eod` or `aod`.
    pub fn name(self) -> &'static str {
        match self {
            FairnessMeasure::Spd => "spd",
            FairnessMeasure::Di => "di",
            FairnessMeasure::Eod => "eod",
            FairnessMeasure::Aod => "aod",
        }
    }

    /// The measure's name in words.
    pub fn full_name(self) -> &'static str {
        match self {
            FairnessMeasure::Spd => "statistical parity difference",
            FairnessMeasure::Di => "disparate impact",
            FairnessMeasure::Eod => "equal opportunity difference",
            FairnessMeasure::Aod => "average odds difference",
        }
    }
}

/// What an option of the cost sheet buys.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum OptionKind {
    /// A new attribute for the rows held.
    #[serde(rename = "feature")]
    Feature,
    /// More rows of any group.
    #[serde(rename = "rows")]
    Rows,
    /// More rows of one group.
    #[serde(rename = "group rows")]
    GroupRows,
}

impl OptionKind {
    /// The name in reports.
    pub fn name(self) -> &'static str {
        match self {
            OptionKind::Feature => "feature",
            OptionKind::Rows => "rows",
            OptionKind::GroupRows => "group rows",
        }
    }
}

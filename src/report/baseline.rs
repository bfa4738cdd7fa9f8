//! The report of `acquest baseline`: the data, its groups, the bias in its labels, and the
//! current model measured over repeated trials.

use serde::{Deserialize, Serialize};

use super::{Estimate, GroupSummary, Inputs, ReferenceGroup};

/// The report of `acquest baseline`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaselineReport {
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
    /// Rows and columns as used.
    pub data: DataSummary,
    /// The groups with their label rates.
    pub groups: Vec<GroupSummary>,
    /// The group every other group is compared with.
    pub reference: ReferenceGroup,
    /// Disparity already present in the labels.
    pub label_bias: LabelBias,
    /// The model measured over repeated trials.
    pub model: ModelSummary,
    /// Every further protected attribute (`--protected a,b,c`), then every intersection of two
    /// (`--intersections`), assessed as the first is on the same trials; absent with one.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub attributes: Vec<AttributeSection>,
    /// With several attributes: on each measure, the attribute and group farthest from fair
    /// over all of them (the first's `model.worst` and every section's `worst`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub worst_over_attributes: Option<WorstOverAttributes>,
    /// What the reader should know about this run.
    pub warnings: Vec<String>,
    /// The cautions every report carries.
    pub cautions: Vec<String>,
}

/// Rows and columns as used.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DataSummary {
    /// Data rows read.
    pub rows_read: usize,
    /// Rows used.
    pub rows_used: usize,
    /// Rows left out for a missing label.
    pub dropped_missing_label: usize,
    /// Rows left out for a missing protected value.
    pub dropped_missing_group: usize,
    /// Rows with the favourable label.
    pub favourable_labels: usize,
    /// The feature columns trained on.
    pub features: Vec<FeatureSummary>,
    /// Mostly-empty columns taken for candidate features, not trained on.
    pub candidates: Vec<FeatureSummary>,
}

/// One column as used.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureSummary {
    /// The column.
    pub name: String,
    /// "numeric" or "categorical".
    pub kind: String,
    /// Its missing cells.
    pub missing: usize,
    /// Distinct values, for a categorical column.
    pub levels: Option<usize>,
}

/// Disparity already present in the labels (counts of real people, no model).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LabelBias {
    /// Each compared group against the reference.
    pub comparisons: Vec<LabelComparison>,
    /// Every group under the four-fifths rule.
    pub four_fifths: Vec<FourFifthsRecord>,
}

/// One compared group against the reference, on the labels.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LabelComparison {
    /// The compared group.
    pub group: String,
    /// Its label rate minus the reference's.
    pub statistical_parity_difference: Option<f64>,
    /// Its label rate over the reference's.
    pub disparate_impact: Option<f64>,
}

/// One group under the four-fifths rule (29 CFR 1607.4(D)), against the highest-rate group.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FourFifthsRecord {
    /// The group.
    pub group: String,
    /// Its rate.
    pub rate: f64,
    /// Its rate over the highest group's.
    pub impact_ratio: f64,
    /// Whether the ratio is strictly below four-fifths.
    pub adverse_impact: bool,
    /// Whether moving one person would change that finding.
    pub one_person_flips: bool,
    /// Pooled two-proportion z against the highest group.
    pub z: Option<f64>,
    /// Its two-sided p-value.
    pub z_p_value: Option<f64>,
    /// Fisher's exact test p, where a cell count is small.
    pub fisher_p_value: Option<f64>,
}

/// A further protected attribute, or the intersection of two, assessed on the baseline's own
/// trials: its groups and label bias, and the model's rates, disparities and four-fifths
/// findings by its groups.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AttributeSection {
    /// The column, or "a × b" for an intersection.
    pub attribute: String,
    /// Its groups (an intersection's cells large enough to assess) with their label rates.
    pub groups: Vec<GroupSummary>,
    /// The group the others are compared with.
    pub reference: ReferenceGroup,
    /// Disparity already present in the labels.
    pub label_bias: LabelBias,
    /// Each group's rates under the model.
    pub model_groups: Vec<GroupRates>,
    /// Each compared group against the reference.
    pub comparisons: Vec<Comparison>,
    /// The compared group farthest from fair on each measure.
    pub worst: WorstGroups,
    /// The four-fifths rule on predicted selection rates.
    pub four_fifths: Vec<ModelFourFifths>,
    /// Cells of an intersection too small to assess, left out of every figure above.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub too_small: Vec<SmallCell>,
}

/// A cell of an intersection too small to assess, with its counts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SmallCell {
    /// The cell ("Female & Other").
    pub group: String,
    /// Its rows.
    pub rows: usize,
    /// Its rows with the favourable label.
    pub favourable_labels: usize,
}

/// The baseline model, measured over repeated trials.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelSummary {
    /// The model family.
    pub family: String,
    /// Trials run.
    pub trials: usize,
    /// Training rows of a trial.
    pub train_rows: usize,
    /// Test rows of a trial.
    pub test_rows: usize,
    /// How intervals are formed.
    pub interval_method: String,
    /// Accuracy on held-out rows.
    pub accuracy: Estimate,
    /// Balanced accuracy on held-out rows.
    pub balanced_accuracy: Option<Estimate>,
    /// Area under the ROC curve, where the family gives scores.
    pub area_under_curve: Option<Estimate>,
    /// Each group's rates under the model.
    pub groups: Vec<GroupRates>,
    /// Each compared group against the reference.
    pub comparisons: Vec<Comparison>,
    /// The compared group farthest from fair on each measure.
    pub worst: WorstGroups,
    /// The four-fifths rule on predicted selection rates.
    pub four_fifths: Vec<ModelFourFifths>,
}

/// A group's rates under the model, on held-out rows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupRates {
    /// The group.
    pub group: String,
    /// Its mean test rows per trial.
    pub test_rows: f64,
    /// Its predicted selection rate.
    pub selection_rate: Option<Estimate>,
    /// Its true positive rate.
    pub true_positive_rate: Option<Estimate>,
    /// Its false positive rate.
    pub false_positive_rate: Option<Estimate>,
}

/// One compared group against the reference, under the model. Each estimate tests its ideal
/// (0 for differences, 1 for disparate impact).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Comparison {
    /// The compared group.
    pub group: String,
    /// Statistical parity difference (ideal 0).
    pub statistical_parity_difference: Option<Estimate>,
    /// Disparate impact (ideal 1).
    pub disparate_impact: Option<Estimate>,
    /// Equal opportunity difference (ideal 0).
    pub equal_opportunity_difference: Option<Estimate>,
    /// Average odds difference (ideal 0).
    pub average_odds_difference: Option<Estimate>,
}

/// The compared group farthest from fair on each measure, with its unfairness
/// (|SPD|, 1 − min(DI, 1/DI), |EOD|, |AOD| of the mean).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorstGroups {
    /// On statistical parity difference.
    pub statistical_parity_difference: Option<Worst>,
    /// On disparate impact.
    pub disparate_impact: Option<Worst>,
    /// On equal opportunity difference.
    pub equal_opportunity_difference: Option<Worst>,
    /// On average odds difference.
    pub average_odds_difference: Option<Worst>,
}

/// On each measure, the group farthest from fair over every protected attribute and
/// intersection assessed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorstOverAttributes {
    /// On statistical parity difference.
    pub statistical_parity_difference: Option<WorstOf>,
    /// On disparate impact.
    pub disparate_impact: Option<WorstOf>,
    /// On equal opportunity difference.
    pub equal_opportunity_difference: Option<WorstOf>,
    /// On average odds difference.
    pub average_odds_difference: Option<WorstOf>,
}

/// A group of an attribute and its unfairness on one measure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorstOf {
    /// The attribute (or intersection) the group belongs to.
    pub attribute: String,
    /// The group.
    pub group: String,
    /// Its unfairness, 0 is fair.
    pub unfairness: f64,
}

/// A group and its unfairness on one measure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Worst {
    /// The group.
    pub group: String,
    /// Its unfairness, 0 is fair.
    pub unfairness: f64,
}

/// The four-fifths rule applied to the model's predicted selection rates, trial by trial.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelFourFifths {
    /// The group.
    pub group: String,
    /// The group's predicted rate over the highest group's, per trial.
    pub impact_ratio: Estimate,
    /// Adverse impact is indicated by the mean ratio (strictly below 0.8).
    pub adverse_impact: bool,
    /// Trials in which the ratio was below 0.8.
    pub trials_flagged: usize,
}

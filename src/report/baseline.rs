//! The report of `acquest baseline`: the data, its groups, the bias in its labels, and the
//! current model measured over repeated trials.

use serde::{Deserialize, Serialize};

use super::{Estimate, GroupSummary, Inputs, ReferenceGroup};

/// The report of `acquest baseline`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BaselineReport {
    pub format: String,
    pub format_version: u32,
    pub tool_version: String,
    pub command: String,
    pub inputs: Inputs,
    pub data: DataSummary,
    pub groups: Vec<GroupSummary>,
    pub reference: ReferenceGroup,
    pub label_bias: LabelBias,
    pub model: ModelSummary,
    pub warnings: Vec<String>,
    pub cautions: Vec<String>,
}

/// Rows and columns as used.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DataSummary {
    pub rows_read: usize,
    pub rows_used: usize,
    pub dropped_missing_label: usize,
    pub dropped_missing_group: usize,
    pub favourable_labels: usize,
    pub features: Vec<FeatureSummary>,
    /// Mostly-empty columns taken for candidate features, not trained on.
    pub candidates: Vec<FeatureSummary>,
}

/// One column as used.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FeatureSummary {
    pub name: String,
    /// "numeric" or "categorical".
    pub kind: String,
    pub missing: usize,
    /// Distinct values, for a categorical column.
    pub levels: Option<usize>,
}

/// Disparity already present in the labels (counts of real people, no model).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LabelBias {
    pub comparisons: Vec<LabelComparison>,
    pub four_fifths: Vec<FourFifthsRecord>,
}

/// One compared group against the reference, on the labels.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LabelComparison {
    pub group: String,
    pub statistical_parity_difference: Option<f64>,
    pub disparate_impact: Option<f64>,
}

/// One group under the four-fifths rule (29 CFR 1607.4(D)), against the highest-rate group.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FourFifthsRecord {
    pub group: String,
    pub rate: f64,
    pub impact_ratio: f64,
    pub adverse_impact: bool,
    pub one_person_flips: bool,
    pub z: Option<f64>,
    pub z_p_value: Option<f64>,
    pub fisher_p_value: Option<f64>,
}

/// The baseline model, measured over repeated trials.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelSummary {
    pub family: String,
    pub trials: usize,
    pub train_rows: usize,
    pub test_rows: usize,
    /// How intervals are formed.
    pub interval_method: String,
    pub accuracy: Estimate,
    pub balanced_accuracy: Option<Estimate>,
    pub area_under_curve: Option<Estimate>,
    pub groups: Vec<GroupRates>,
    pub comparisons: Vec<Comparison>,
    pub worst: WorstGroups,
    pub four_fifths: Vec<ModelFourFifths>,
}

/// A group's rates under the model, on held-out rows.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupRates {
    pub group: String,
    pub test_rows: f64,
    pub selection_rate: Option<Estimate>,
    pub true_positive_rate: Option<Estimate>,
    pub false_positive_rate: Option<Estimate>,
}

/// One compared group against the reference, under the model. Each estimate tests its ideal
/// (0 for differences, 1 for disparate impact).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Comparison {
    pub group: String,
    pub statistical_parity_difference: Option<Estimate>,
    pub disparate_impact: Option<Estimate>,
    pub equal_opportunity_difference: Option<Estimate>,
    pub average_odds_difference: Option<Estimate>,
}

/// The compared group farthest from fair on each measure, with its unfairness
/// (|SPD|, 1 − min(DI, 1/DI), |EOD|, |AOD| of the mean).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WorstGroups {
    pub statistical_parity_difference: Option<Worst>,
    pub disparate_impact: Option<Worst>,
    pub equal_opportunity_difference: Option<Worst>,
    pub average_odds_difference: Option<Worst>,
}

/// A group and its unfairness on one measure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Worst {
    pub group: String,
    pub unfairness: f64,
}

/// The four-fifths rule applied to the model's predicted selection rates, trial by trial.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ModelFourFifths {
    pub group: String,
    /// The group's predicted rate over the highest group's, per trial.
    pub impact_ratio: Estimate,
    /// Adverse impact is indicated by the mean ratio (strictly below 0.8).
    pub adverse_impact: bool,
    /// Trials in which the ratio was below 0.8.
    pub trials_flagged: usize,
}

//! The report of `acquest appraise`: every option of the cost sheet valued, ranked, and the
//! features already held.

use serde::{Deserialize, Serialize};

use super::{
    CurveRecord, CurveSchedule, DisparityCurve, Estimate, GroupSummary, Inputs, ReferenceGroup,
};

/// The report of `acquest appraise`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AppraisalReport {
    pub format: String,
    pub format_version: u32,
    pub tool_version: String,
    pub command: String,
    pub inputs: Inputs,
    pub costs: CostInputs,
    pub groups: Vec<GroupSummary>,
    pub reference: ReferenceGroup,
    /// Today's model read off its learning curve at today's training rows.
    pub today: Today,
    /// The learning-curve schedule on all rows behind the rows options.
    pub schedule: CurveSchedule,
    /// Today's learning curves (as in `curves`), read up to the largest rows purchase.
    pub curves: Vec<CurveRecord>,
    pub disparities: Vec<DisparityCurve>,
    /// Every option of the cost sheet, valued, in the sheet's order.
    pub options: Vec<OptionValue>,
    /// Options ranked by utility per unit of cost, and by the lower end of its interval.
    pub ranking: Vec<Ranked>,
    /// What each feature already held does for accuracy and fairness.
    pub held_features: Vec<HeldFeature>,
    pub warnings: Vec<String>,
    pub cautions: Vec<String>,
}

/// The cost sheet and how options are scored.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CostInputs {
    pub path: String,
    pub sha256: String,
    pub currency: String,
    /// The fairness measure whose unfairness the utility counts: spd, di, eod or aod.
    pub fairness: String,
    pub weigh_accuracy: f64,
    pub weigh_fairness: f64,
}

/// Today's fitted accuracy and unfairness.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Today {
    pub rows: usize,
    pub training_rows: usize,
    pub accuracy: f64,
    /// Unfairness on the primary measure (|SPD|, 1 − min(DI, 1/DI), |EOD| or |AOD|) of the
    /// worst compared group.
    pub unfairness: f64,
    pub worst_group: String,
    /// Each group's predicted selection rate, in the order of `groups`.
    pub selection_rates: Vec<f64>,
}

/// A change estimated from curves: the fitted value, a bootstrap interval, and the bootstrap's
/// two-sided p-value against no change.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Change {
    pub mean: f64,
    pub low: Option<f64>,
    pub high: Option<f64>,
    pub p_value: Option<f64>,
}

/// One group's rates before and after a purchase.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupChange {
    pub group: String,
    pub selection_rate: Change,
    pub true_positive_rate: Change,
    pub false_positive_rate: Change,
}

/// One purchase of an option (a rows option at one step, a feature with or without rows).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Purchase {
    /// New rows bought (0 for a feature alone).
    pub new_rows: usize,
    pub cost: f64,
    /// Training rows the estimate is read at.
    pub training_rows: f64,
    pub accuracy_gain: Change,
    /// Fall in unfairness on the primary measure (positive is fairer).
    pub unfairness_reduction: Change,
    /// weigh_accuracy × accuracy gain + weigh_fairness × unfairness reduction.
    pub utility: Change,
    /// Gains per 1,000 of currency.
    pub accuracy_per_1000: f64,
    pub fairness_per_1000: f64,
    pub utility_per_1000: f64,
    /// The utility's lower end per 1,000 of currency (the cautious reading).
    pub cautious_per_1000: Option<f64>,
    /// Beyond 4× the largest size measured.
    pub extrapolated_too_far: bool,
    pub groups: Vec<GroupChange>,
}

/// What a pilot says about a candidate feature.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PilotSummary {
    pub rows: usize,
    pub training_rows: usize,
    /// Chi-square test of the pilot's group × label mix against the other rows.
    pub mix_chi_square: Option<f64>,
    pub mix_p_value: Option<f64>,
    /// Accuracy with the feature minus without, on the pilot at its full size, per repeat.
    pub accuracy_difference: Option<Estimate>,
    /// Welch's t-test p of with against without at the pilot's full size.
    pub accuracy_welch_p: Option<f64>,
    /// Unfairness with the feature minus without, on the pilot at its full size.
    pub unfairness_difference: Option<Estimate>,
    pub unfairness_welch_p: Option<f64>,
    /// One-way ANOVA p of the accuracy difference across the pilot's sizes (does the gain
    /// depend on the number of rows?).
    pub size_anova_p: Option<f64>,
    /// Whether the pilot could be extrapolated (it was large enough for a learning curve).
    pub extrapolated: bool,
}

/// One option of the cost sheet, valued.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OptionValue {
    pub name: String,
    /// "feature", "rows" or "group rows".
    pub kind: OptionKind,
    /// The candidate column, or the group filter.
    pub target: Option<String>,
    pub sensitive: bool,
    pub note: String,
    /// The headline purchase: the feature on every row held, or the most rows on offer.
    pub estimate: Purchase,
    /// Rows options: every step. Feature options: the feature bought with each step of the
    /// rows options for any case (read on the with-feature curve at n + Δ).
    pub steps: Vec<Purchase>,
    /// Feature options: the with-feature pilot curve extrapolated directly, for comparison with
    /// the anchored estimate.
    pub direct: Option<Purchase>,
    pub pilot: Option<PilotSummary>,
    pub flags: Vec<String>,
}

/// An option's place in the two rankings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Ranked {
    pub name: String,
    pub utility_per_1000: f64,
    pub rank: usize,
    pub cautious_per_1000: Option<f64>,
    pub cautious_rank: usize,
}

/// A feature already held: what dropping it (retrain without) or scrambling it (permute its
/// values on the test rows) does, as changes against the full model (negative accuracy change:
/// the feature helps accuracy; positive unfairness change: the feature makes the model fairer).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HeldFeature {
    pub feature: String,
    pub ablation_accuracy: Option<Estimate>,
    pub ablation_unfairness: Option<Estimate>,
    pub permutation_accuracy: Option<Estimate>,
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

//! The serde types that are the output contract: what every JSON report holds. Renderers read
//! these; nothing here computes.

use serde::{Deserialize, Serialize};

use crate::data::SourceInfo;
use crate::stats::metrics::Estimate;

/// Name of the report format, written into every report.
pub const FORMAT: &str = "acquest-report";
/// Version of the report format; raised when a field changes meaning or goes away.
pub const FORMAT_VERSION: u32 = 1;

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

/// What the run read and how it was set.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Inputs {
    pub data: SourceInfo,
    pub target: String,
    pub favourable: String,
    pub unfavourable: String,
    pub protected: String,
    pub use_protected: bool,
    pub model: String,
    pub repeats: usize,
    pub test_fraction: f64,
    pub seed: u64,
    pub confidence: f64,
    /// The cap on one trial's training rows (see `--max-train-rows`).
    #[serde(default)]
    pub max_train_rows: usize,
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

/// One group with its label rate.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GroupSummary {
    pub name: String,
    pub definition: String,
    pub rows: usize,
    pub favourable_labels: usize,
    pub label_rate: f64,
}

/// The group every other group is compared with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReferenceGroup {
    pub name: String,
    pub rule: String,
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

/// The report of `acquest curves`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvesReport {
    pub format: String,
    pub format_version: u32,
    pub tool_version: String,
    pub command: String,
    pub inputs: Inputs,
    pub schedule: CurveSchedule,
    pub groups: Vec<GroupSummary>,
    pub reference: ReferenceGroup,
    /// Accuracy and each group's selection rate, true positive rate and false positive rate.
    pub curves: Vec<CurveRecord>,
    /// SPD, DI, EOD and AOD of each compared group, derived from the fitted rates.
    pub disparities: Vec<DisparityCurve>,
    pub warnings: Vec<String>,
    pub cautions: Vec<String>,
}

/// Which training sizes were measured, and how.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurveSchedule {
    /// Training rows of each repeat (all rows less the test part).
    pub training_rows: usize,
    /// Test rows of each repeat, fixed across its sizes.
    pub test_rows: usize,
    /// The anchor sizes, smallest first; the last is all training rows.
    pub sizes: Vec<usize>,
    /// How the smallest size was chosen.
    pub smallest_rule: String,
    pub repeats: usize,
    /// Largest anchors held back to score each family's forecast.
    pub held_back: usize,
    /// Bootstrap draws over repeats behind every band.
    pub bootstrap_draws: usize,
    /// Sizes beyond this (4× the largest anchor) are flagged as unreliable.
    pub reliable_up_to: f64,
    /// Whether the training rows exceed the cap on a trial's training rows, so that the largest
    /// anchor is the cap and today's size is read by extrapolation.
    #[serde(default)]
    pub capped: bool,
}

/// One measured anchor: a quantity's spread over repeats at one training size.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AnchorPoint {
    pub size: usize,
    pub mean: f64,
    pub std_dev: Option<f64>,
    pub min: f64,
    pub max: f64,
    /// Repeats in which the quantity was defined at this size.
    pub repeats: usize,
}

/// One family fitted to a quantity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FamilyFit {
    pub family: crate::stats::curve::Family,
    pub formula: String,
    /// a, b, c of the formula in n (training rows); unused ones are 0.
    pub parameters: [f64; 3],
    /// Weighted residual sum of squares on all anchors (weights n / largest n).
    pub rss: Option<f64>,
    /// Weighted RMS error forecasting the held-back anchors from the others.
    pub forecast_error: Option<f64>,
    pub status: crate::stats::curve::FitStatus,
}

/// A value read off a curve at one training size, with its bootstrap band.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvePoint {
    pub size: f64,
    pub value: f64,
    pub low: Option<f64>,
    pub high: Option<f64>,
    /// Beyond the largest anchor.
    pub extrapolated: bool,
    /// Beyond 4× the largest anchor: not to be relied on.
    pub unreliable: bool,
}

/// A fitted learning curve of one quantity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurveRecord {
    /// "accuracy", "selection rate", "true positive rate" or "false positive rate".
    pub quantity: String,
    /// The group, for a group's rate.
    pub group: Option<String>,
    pub anchors: Vec<AnchorPoint>,
    pub families: Vec<FamilyFit>,
    /// The family with the smallest forecast error; `None` when no family could be fitted.
    pub chosen: Option<crate::stats::curve::Family>,
    /// The chosen curve's level as n grows, where it gets there in practice (closes 90% of
    /// its remaining gap by 100× today's training rows); `None` otherwise.
    pub asymptote: Option<f64>,
    /// The curve on a grid of sizes, for charts.
    pub grid: Vec<CurvePoint>,
    /// The curve at the sizes asked for (`--at`).
    pub at: Vec<CurvePoint>,
}

/// A disparity measure of one compared group, derived from the fitted group rates.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DisparityCurve {
    /// "statistical parity difference", "disparate impact", "equal opportunity difference" or
    /// "average odds difference".
    pub measure: String,
    pub group: String,
    /// The same measure on the labels themselves, where it applies (SPD and DI).
    pub in_labels: Option<f64>,
    /// The measure at each anchor, from the measured rates.
    pub anchors: Vec<AnchorPoint>,
    /// From the rates' asymptotes, where all have one.
    pub asymptote: Option<f64>,
    pub grid: Vec<CurvePoint>,
    pub at: Vec<CurvePoint>,
}

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
    pub kind: String,
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

/// The report of `acquest plan`: the appraisal it rests on, the plan for the budget, and the
/// frontier of plans at other budgets.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanReport {
    pub format: String,
    pub format_version: u32,
    pub tool_version: String,
    pub command: String,
    pub rules: crate::decide::plan::PlanRules,
    /// How gains are combined: the sum of the options' gains (each read at the plan's rows).
    pub gain_model: String,
    pub plan: crate::decide::plan::Plan,
    /// What the plan was chosen on: the joint scores of the candidates, or the additive model.
    pub chosen_by: String,
    /// The best plans under the additive model, each re-scored with its options together.
    pub candidates: Vec<crate::decide::plan::Candidate>,
    /// Why the plan is empty, when it is.
    pub explanation: Option<String>,
    pub frontier: Vec<crate::decide::plan::FrontierPoint>,
    pub appraisal: AppraisalReport,
    pub warnings: Vec<String>,
    pub cautions: Vec<String>,
}

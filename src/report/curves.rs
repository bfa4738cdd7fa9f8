//! The report of `acquest curves`, and the learning-curve records that the appraisal repeats.

use serde::{Deserialize, Serialize};

use super::{GroupSummary, Inputs, ReferenceGroup};

/// The report of `acquest curves`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvesReport {
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
    /// Which training sizes were measured, and how.
    pub schedule: CurveSchedule,
    /// The groups with their label rates.
    pub groups: Vec<GroupSummary>,
    /// The group every other group is compared with.
    pub reference: ReferenceGroup,
    /// Accuracy and each group's selection rate, true positive rate and false positive rate.
    pub curves: Vec<CurveRecord>,
    /// SPD, DI, EOD and AOD of each compared group, derived from the fitted rates.
    pub disparities: Vec<DisparityCurve>,
    /// Every further protected attribute and intersection, its groups' curves from the same
    /// trials; absent with one attribute.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub attributes: Vec<AttributeCurves>,
    /// What the reader should know about this run.
    pub warnings: Vec<String>,
    /// The cautions every report carries.
    pub cautions: Vec<String>,
}

/// The learning curves of one further protected attribute (or intersection) by its groups,
/// fitted to the counts the same trials made of its groups.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AttributeCurves {
    /// The column, or "a × b".
    pub attribute: String,
    /// Its groups (an intersection's assessed cells) with their label rates.
    pub groups: Vec<GroupSummary>,
    /// The group the others are compared with.
    pub reference: ReferenceGroup,
    /// Each group's selection rate, true positive rate and false positive rate.
    pub curves: Vec<CurveRecord>,
    /// SPD, DI, EOD and AOD of each compared group.
    pub disparities: Vec<DisparityCurve>,
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
    /// Repeats at every size.
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
    /// Training rows.
    pub size: usize,
    /// Mean over repeats.
    pub mean: f64,
    /// Standard deviation over repeats.
    pub std_dev: Option<f64>,
    /// Smallest value over repeats.
    pub min: f64,
    /// Largest value over repeats.
    pub max: f64,
    /// Repeats in which the quantity was defined at this size.
    pub repeats: usize,
}

/// One family fitted to a quantity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FamilyFit {
    /// The family.
    pub family: Family,
    /// Its formula in n.
    pub formula: String,
    /// a, b, c of the formula in n (training rows); unused ones are 0.
    pub parameters: [f64; 3],
    /// Weighted residual sum of squares on all anchors (weights n / largest n).
    pub rss: Option<f64>,
    /// Weighted RMS error forecasting the held-back anchors from the others.
    pub forecast_error: Option<f64>,
    /// How the fit ended.
    pub status: FitStatus,
}

/// A value read off a curve at one training size, with its bootstrap band.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurvePoint {
    /// Training rows.
    pub size: f64,
    /// The curve's value there.
    pub value: f64,
    /// Lower end of its bootstrap band.
    pub low: Option<f64>,
    /// Upper end of its bootstrap band.
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
    /// The measured anchors.
    pub anchors: Vec<AnchorPoint>,
    /// Every family fitted, with its forecast error.
    pub families: Vec<FamilyFit>,
    /// The family with the smallest forecast error; `None` when no family could be fitted.
    pub chosen: Option<Family>,
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
    /// The compared group.
    pub group: String,
    /// The same measure on the labels themselves, where it applies (SPD and DI).
    pub in_labels: Option<f64>,
    /// The measure at each anchor, from the measured rates.
    pub anchors: Vec<AnchorPoint>,
    /// From the rates' asymptotes, where all have one.
    pub asymptote: Option<f64>,
    /// The measure on the chart grid.
    pub grid: Vec<CurvePoint>,
    /// The measure at the sizes asked for.
    pub at: Vec<CurvePoint>,
}

/// A curve family, as a function of the training size n.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Family {
    /// y = a − b·n^(−c), c > 0: a power law levelling off at a.
    PowerLaw,
    /// y = a − b·e^(−c·n), c > 0: an exponential approach to a.
    Exponential,
    /// y = a + b·ln n: a logarithmic trend, no level; grows or falls without bound.
    Logarithmic,
    /// y = a: no trend.
    Flat,
}

impl Family {
    /// The family's name in the reports, as in the JSON.
    pub fn name(self) -> &'static str {
        match self {
            Family::PowerLaw => "power-law",
            Family::Exponential => "exponential",
            Family::Logarithmic => "logarithmic",
            Family::Flat => "flat",
        }
    }
}

/// How a fit ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FitStatus {
    /// The optimum lies inside the bounds.
    Converged,
    /// The best rate c lies on a bound: the family degenerates there (reported, still usable).
    AtBound,
    /// No fit: too few points or no finite optimum.
    Failed,
}

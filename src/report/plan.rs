//! The report of `acquest plan`: the rules, the plan for the budget, the candidates re-scored
//! jointly, the frontier, and the appraisal it rests on.

use serde::{Deserialize, Serialize};

use super::{AppraisalReport, Change, OptionKind};

/// The report of `acquest plan`: the appraisal it rests on, the plan for the budget, and the
/// frontier of plans at other budgets.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanReport {
    /// Always "acquest-report".
    pub format: String,
    /// Version of the report format.
    pub format_version: u32,
    /// acquest's version.
    pub tool_version: String,
    /// The command that wrote the report.
    pub command: String,
    /// How plans are scored and constrained.
    pub rules: PlanRules,
    /// How gains are combined: the sum of the options' gains (each read at the plan's rows).
    pub gain_model: String,
    /// The plan for the budget.
    pub plan: Plan,
    /// What the plan was chosen on: the joint scores of the candidates, or the additive model.
    pub chosen_by: String,
    /// The plan's gains as a whole, with their doubt; `None` for an empty plan.
    pub summary: Option<PlanSummary>,
    /// The best plans under the additive model, each re-scored with its options together.
    pub candidates: Vec<Candidate>,
    /// Why the plan is empty, when it is.
    pub explanation: Option<String>,
    /// Decide now, or first grow a pilot: the value of a bigger pilot (`null` with
    /// `--no-pilot-advice`, or in reports written before it was added).
    #[serde(default)]
    pub pilot_advice: Option<PilotAdvice>,
    /// The best plan at other budgets.
    pub frontier: Vec<FrontierPoint>,
    /// The appraisal the plan rests on.
    pub appraisal: AppraisalReport,
    /// What the reader should know about this run.
    pub warnings: Vec<String>,
    /// The cautions every report carries.
    pub cautions: Vec<String>,
}

/// How plans are scored and constrained.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PlanRules {
    /// The budget, in the cost sheet's currency.
    pub budget: f64,
    /// Score by the lower end of each utility interval instead of its mean.
    pub cautious: bool,
    /// The plan's accuracy gain may not be negative.
    pub keep_accuracy: bool,
    /// No group may fall below four-fifths of the highest group's predicted selection rate
    /// after the plan (today's rates plus the options' estimated changes).
    #[serde(default)]
    pub no_adverse_impact: bool,
}

/// One choice within a plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanItem {
    /// The option.
    pub option: String,
    /// What it buys.
    pub kind: OptionKind,
    /// New rows bought (rows options) or 0 (features).
    pub new_rows: usize,
    /// What it costs within the plan.
    pub cost: f64,
    /// Its accuracy gain.
    pub accuracy_gain: f64,
    /// Its unfairness reduction (null where not measured).
    #[serde(deserialize_with = "super::nullable::number")]
    pub unfairness_reduction: f64,
    /// Its utility (or the lower end, when cautious).
    pub utility: f64,
}

/// A plan: what to buy, its cost, and its gains as the sum of the items' (the additive model).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Plan {
    /// What to buy.
    pub items: Vec<PlanItem>,
    /// What it all costs.
    pub total_cost: f64,
    /// The summed accuracy gain.
    pub accuracy_gain: f64,
    /// The summed unfairness reduction of the items whose reduction was measured (null when
    /// none was).
    #[serde(deserialize_with = "super::nullable::number")]
    pub unfairness_reduction: f64,
    /// The score maximised: summed utility, or summed lower ends with `cautious`.
    pub score: f64,
}

impl Plan {
    /// The items whose unfairness reduction was not measured, left out of the plan's sum.
    pub fn unmeasured_items(&self) -> Vec<&str> {
        self.items
            .iter()
            .filter(|i| !i.unfairness_reduction.is_finite())
            .map(|i| i.option.as_str())
            .collect()
    }

    /// Whether the two plans buy the same: the same options with the same rows, in the same
    /// order (their figures may hold "not measured" values, which never compare equal).
    pub fn buys_the_same(&self, other: &Plan) -> bool {
        self.items.len() == other.items.len()
            && self
                .items
                .iter()
                .zip(&other.items)
                .all(|(a, b)| a.option == b.option && a.new_rows == b.new_rows)
    }

    /// Whether the plan's own estimate already takes its options together: one option, or
    /// rows of every group with at most one feature (a feature bought with rows is read at
    /// the plan's row count), so it needs no joint re-scoring.
    pub fn scored_together(&self) -> bool {
        let features = self
            .items
            .iter()
            .filter(|i| i.kind == OptionKind::Feature)
            .count();
        self.items.len() < 2
            || (features <= 1 && !self.items.iter().any(|i| i.kind == OptionKind::GroupRows))
    }
}

/// A plan among the best under the additive model, with its joint score.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Candidate {
    /// The plan.
    pub plan: Plan,
    /// The plan's gains with its options taken together, where they could be measured.
    pub joint: Option<JointScore>,
    /// Why there is no joint score.
    pub note: Option<String>,
}

/// One point of the budget frontier.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FrontierPoint {
    /// The budget.
    pub budget: f64,
    /// The best plan within it.
    pub plan: Plan,
}

/// A plan's gains estimated with its options taken together.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct JointScore {
    /// The accuracy gain of the options together.
    pub accuracy_gain: Change,
    /// Their unfairness reduction together.
    pub unfairness_reduction: Change,
    /// Their utility together.
    pub utility: Change,
    /// How it was estimated.
    pub method: String,
}

/// The plan's gains as a whole, with their intervals and the chance that it helps at all.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanSummary {
    /// The plan's accuracy gain.
    pub accuracy_gain: Change,
    /// Its unfairness reduction.
    pub unfairness_reduction: Change,
    /// Its utility gain; `chance_positive` is the chance that the plan raises the utility.
    pub utility: Change,
    /// Where the figures come from: `option` (a plan of one option: its own estimate),
    /// `joint` (the options measured together), or `summed` (the options' estimates added,
    /// their intervals combined as if independent, and the chance read off a normal law).
    pub source: String,
    /// Whether the utility gain differs from zero at the report's confidence.
    pub differs_from_zero: bool,
    /// The flags of the plan's options, each led by the option's name.
    pub flags: Vec<String>,
}

/// Decide now, or first grow a pilot: for each feature option's larger pilots (those of its
/// appraisal's `growth`), what the bigger pilot could show is drawn from today's uncertainty,
/// the plan is solved again with the money left after paying for it, and compared with the plan
/// chosen now (the expected value of sample information, net of its cost).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PilotAdvice {
    /// The advice in words: "decide now: ..." or "first grow pilot ... by N rows ...".
    pub decision: String,
    /// The extension advised, if any: the one with the largest expected gain, where that gain
    /// is above zero by more than two of its standard errors.
    pub grow_first: Option<PilotExtension>,
    /// Draws per extension.
    pub draws: usize,
    /// Every extension valued.
    pub extensions: Vec<PilotExtension>,
}

/// One way to grow a pilot before deciding, valued.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PilotExtension {
    /// The feature option whose pilot grows.
    pub option: String,
    /// Rows of the pilot after growing.
    pub pilot_rows: usize,
    /// Rows added to it.
    pub added_rows: usize,
    /// What the added rows cost (the option's cost a row), taken from the budget.
    pub cost: f64,
    /// The share of draws in which the plan chosen after the bigger pilot differs from the plan
    /// chosen now.
    pub chance_plan_changes: f64,
    /// The expected score (utility, or its lower end under `cautious`) of the plan chosen after
    /// the bigger pilot, with the budget less `cost`, minus that of the plan chosen now, both
    /// valued on what the bigger pilot shows.
    pub expected_gain: f64,
    /// Monte Carlo standard error of `expected_gain`.
    pub standard_error: f64,
}

//! The settings of each command beyond those of the data and the trials: learning-curve sizes,
//! the appraisal's cost sheet and utility, the plan's budget and floors, the backtest's
//! hold-outs. Each is built from the same [`Choices`] (flags over the project file), with every
//! default and every check here.

use std::path::PathBuf;

use serde::Serialize;

use super::Choices;
use crate::error::{Error, Result};
use crate::report::{BacktestSettings, FairnessMeasure, PlanRules};

/// Default share of the rows a backtest holds back.
pub const DEFAULT_HOLD_ROWS: f64 = 0.5;
/// Default share of the kept rows on which a held feature stays filled.
pub const DEFAULT_PILOT: f64 = 0.2;
/// Default number of backtest rounds.
pub const DEFAULT_ROUNDS: usize = 3;
/// The fairness measure the utility counts unless told otherwise.
pub const DEFAULT_FAIRNESS: FairnessMeasure = FairnessMeasure::Eod;

/// A training size asked for on a learning curve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SizeRequest {
    /// A multiple of the training rows held now (`2x`).
    Times(f64),
    /// A number of training rows.
    Rows(usize),
}

/// Settings of `acquest curves`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CurveSettings {
    /// Sizes to read the curves at.
    pub at: Vec<SizeRequest>,
    /// Smallest anchor size, overriding the rule.
    pub smallest: Option<usize>,
}

impl CurveSettings {
    /// Checks `--at` and `--smallest`; the default sizes are 2x and 4x.
    pub fn from_choices(choices: &Choices) -> Result<Self> {
        let texts = choices
            .at
            .clone()
            .unwrap_or_else(|| vec!["2x".into(), "4x".into()]);
        let mut at = Vec::new();
        for text in texts.iter().map(|t| t.trim()).filter(|t| !t.is_empty()) {
            let request = if let Some(times) = text.strip_suffix(['x', 'X']) {
                match times.trim().parse::<f64>() {
                    Ok(t) if t.is_finite() && t > 0.0 => SizeRequest::Times(t),
                    _ => {
                        return Err(Error::setting(
                            "--at",
                            format!("'{text}' is not a multiple such as 2x"),
                        ))
                    }
                }
            } else {
                match text.replace('_', "").parse::<usize>() {
                    Ok(n) if n > 0 => SizeRequest::Rows(n),
                    _ => {
                        return Err(Error::setting(
                            "--at",
                            format!(
                                "'{text}' is neither a multiple (2x) nor a number of training rows"
                            ),
                        ))
                    }
                }
            };
            at.push(request);
        }
        if let Some(n) = choices.smallest {
            if n < 20 {
                return Err(Error::setting(
                    "--smallest",
                    format!("{n} rows is too few to fit a model on"),
                ));
            }
        }
        Ok(CurveSettings {
            at,
            smallest: choices.smallest,
        })
    }
}

/// Reads `--fairness`: `spd`, `di`, `eod` or `aod`.
pub fn parse_fairness(text: &str) -> Result<crate::report::FairnessMeasure> {
    use crate::report::FairnessMeasure;
    FairnessMeasure::ALL
        .into_iter()
        .find(|m| m.name() == text.trim().to_ascii_lowercase())
        .ok_or_else(|| {
            Error::setting(
                "--fairness",
                format!(
                    "unknown measure '{}' (choose spd, di, eod or aod)",
                    text.trim().to_ascii_lowercase()
                ),
            )
        })
}

/// Settings of `acquest appraise`, beyond those of the trials.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AppraisalSettings {
    /// The cost sheet.
    pub costs: PathBuf,
    /// The currency its costs are in.
    pub currency: String,
    /// The fairness measure the utility counts.
    pub fairness: FairnessMeasure,
    /// Weight of the accuracy gain in the utility.
    pub weigh_accuracy: f64,
    /// Weight of the unfairness reduction in the utility.
    pub weigh_fairness: f64,
    /// Whether to measure what each feature held today does (ablation and permutation): on by
    /// default in `appraise`, off in `plan`, which does not use it (`held-features` in the
    /// project file, `--held-features` on `plan`).
    pub held_features: bool,
}

impl AppraisalSettings {
    /// Checks `--costs`, `--currency`, `--fairness` and the weights.
    pub fn from_choices(choices: &Choices) -> Result<Self> {
        let costs = choices
            .costs
            .clone()
            .ok_or_else(|| Error::setting("--costs", "no cost sheet given"))?;
        let weight = |value: Option<f64>, flag: &str| -> Result<f64> {
            let w = value.unwrap_or(1.0);
            if w.is_finite() && w >= 0.0 {
                Ok(w)
            } else {
                Err(Error::setting(flag, format!("must be 0 or more, not {w}")))
            }
        };
        let weigh_accuracy = weight(choices.weigh_accuracy, "--weigh-accuracy")?;
        let weigh_fairness = weight(choices.weigh_fairness, "--weigh-fairness")?;
        if weigh_accuracy == 0.0 && weigh_fairness == 0.0 {
            return Err(Error::setting(
                "--weigh-fairness",
                "accuracy and fairness cannot both weigh 0",
            ));
        }
        Ok(AppraisalSettings {
            costs,
            currency: choices
                .currency
                .clone()
                .unwrap_or_else(|| "currency units".into()),
            fairness: parse_fairness(choices.fairness.as_deref().unwrap_or("eod"))?,
            weigh_accuracy,
            weigh_fairness,
            held_features: choices.held_features.unwrap_or(true),
        })
    }
}

/// The plan's rules: `--budget` (required), `--cautious`, `--keep-accuracy`,
/// `--no-adverse-impact`.
pub fn plan_rules(choices: &Choices) -> Result<PlanRules> {
    let budget = choices.budget.ok_or_else(|| {
        Error::setting("--budget", "is required (or budget = ... in acquest.toml)")
    })?;
    if !(budget.is_finite() && budget >= 0.0) {
        return Err(Error::setting(
            "--budget",
            format!("must be 0 or more, not {budget}"),
        ));
    }
    Ok(PlanRules {
        budget,
        cautious: choices.cautious.unwrap_or(false),
        keep_accuracy: choices.keep_accuracy.unwrap_or(false),
        no_adverse_impact: choices.no_adverse_impact.unwrap_or(false),
    })
}

/// The budgets the plan's frontier is shown at (`--budgets`), checked and in order; empty for
/// round budgets chosen from the cost sheet.
pub fn frontier_budgets(choices: &Choices) -> Result<Vec<f64>> {
    let mut budgets = choices.budgets.clone().unwrap_or_default();
    if let Some(bad) = budgets.iter().find(|b| !(b.is_finite() && **b >= 0.0)) {
        return Err(Error::setting(
            "--budgets",
            format!("every budget must be 0 or more, not {bad}"),
        ));
    }
    if budgets.len() > MOST_BUDGETS {
        return Err(Error::setting(
            "--budgets",
            format!("at most {MOST_BUDGETS} budgets, not {}", budgets.len()),
        ));
    }
    budgets.sort_by(f64::total_cmp);
    budgets.dedup();
    Ok(budgets)
}

/// Most budgets `--budgets` takes: each is a solve of the plan.
pub const MOST_BUDGETS: usize = 200;

/// What `acquest backtest` holds back: `--hold-rows`, `--hold-features`, `--pilot`,
/// `--hold-group`, `--rounds` and `--fairness`, checked.
pub fn backtest_settings(choices: &Choices) -> Result<BacktestSettings> {
    let settings = BacktestSettings {
        hold_rows: choices.hold_rows.unwrap_or(DEFAULT_HOLD_ROWS),
        hold_features: choices.hold_features.clone().unwrap_or_default(),
        pilot: choices.pilot.unwrap_or(DEFAULT_PILOT),
        hold_group: choices.hold_group.clone(),
        rounds: choices.rounds.unwrap_or(DEFAULT_ROUNDS),
        fairness: fairness_choice(choices)?,
        check_growth: choices.check_growth,
    };
    check_backtest(&settings)?;
    Ok(settings)
}

/// `--fairness`, or the default measure.
fn fairness_choice(choices: &Choices) -> Result<FairnessMeasure> {
    choices
        .fairness
        .as_deref()
        .map_or(Ok(DEFAULT_FAIRNESS), parse_fairness)
}

/// Checks a backtest's shares and counts.
pub fn check_backtest(settings: &BacktestSettings) -> Result<()> {
    if !(settings.hold_rows.is_finite() && (0.0..=0.9).contains(&settings.hold_rows)) {
        return Err(Error::setting(
            "--hold-rows",
            format!("must be a share from 0 to 0.9, not {}", settings.hold_rows),
        ));
    }
    if !(settings.pilot.is_finite() && settings.pilot > 0.0 && settings.pilot < 1.0) {
        return Err(Error::setting(
            "--pilot",
            format!("must be a share between 0 and 1, not {}", settings.pilot),
        ));
    }
    if !(1..=100).contains(&settings.rounds) {
        return Err(Error::setting(
            "--rounds",
            format!("must be from 1 to 100, not {}", settings.rounds),
        ));
    }
    if settings.hold_rows == 0.0 && settings.hold_features.is_empty() {
        return Err(Error::setting(
            "--hold-features",
            "nothing is held back: give --hold-rows above 0 or --hold-features",
        ));
    }
    if let Some(k) = settings.check_growth {
        if ![2, 4].contains(&k) {
            return Err(Error::setting(
                "--check-growth",
                format!(
                    "grows the pilots 2 or 4 times (the sizes the appraisal predicts), not {k}"
                ),
            ));
        }
        if settings.hold_features.is_empty() {
            return Err(Error::setting(
                "--check-growth",
                "needs held features (--hold-features) whose pilots it grows",
            ));
        }
        if settings.pilot * k as f64 > 1.0 {
            return Err(Error::setting(
                "--check-growth",
                format!(
                    "a pilot of {:.0}% grown {k} times is more than every row; give a --pilot of at most {:.0}%",
                    settings.pilot * 100.0,
                    100.0 / k as f64
                ),
            ));
        }
    }
    if settings.hold_group.is_some() && settings.hold_rows == 0.0 {
        return Err(Error::setting(
            "--hold-group",
            "needs held-back rows (--hold-rows above 0)",
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn project(text: &str) -> Choices {
        toml::from_str(text).unwrap()
    }

    #[test]
    fn backtest_and_plan_settings_come_from_the_project_file_too() {
        let choices = project(
            "hold-rows = 0.3\nhold-features = [\"occupation\"]\npilot = 0.1\nrounds = 2\n\
             hold-group = \"Female\"\nfairness = \"spd\"\nbudget = 5000\ncautious = true\n\
             no-adverse-impact = true\n",
        );
        let backtest = backtest_settings(&choices).unwrap();
        assert_eq!(backtest.hold_rows, 0.3);
        assert_eq!(backtest.hold_features, ["occupation"]);
        assert_eq!((backtest.pilot, backtest.rounds), (0.1, 2));
        assert_eq!(backtest.hold_group.as_deref(), Some("Female"));
        assert_eq!(backtest.fairness, FairnessMeasure::Spd);
        let rules = plan_rules(&choices).unwrap();
        assert_eq!(rules.budget, 5000.0);
        assert!(rules.cautious && rules.no_adverse_impact && !rules.keep_accuracy);
    }

    #[test]
    fn backtest_defaults_and_checks() {
        let defaults = backtest_settings(&project("hold-features = [\"a\"]\n")).unwrap();
        assert_eq!(defaults.hold_rows, DEFAULT_HOLD_ROWS);
        assert_eq!(defaults.pilot, DEFAULT_PILOT);
        assert_eq!(defaults.rounds, DEFAULT_ROUNDS);
        assert_eq!(defaults.fairness, DEFAULT_FAIRNESS);
        let error = backtest_settings(&project("hold-rows = 0.95\n"))
            .unwrap_err()
            .to_string();
        assert!(error.contains("--hold-rows"), "{error}");
        let error = plan_rules(&Choices::default()).unwrap_err().to_string();
        assert!(error.contains("--budget"), "{error}");
    }

    #[test]
    fn fairness_measures_by_short_name() {
        assert_eq!(parse_fairness(" EOD").unwrap(), FairnessMeasure::Eod);
        assert_eq!(parse_fairness("di").unwrap(), FairnessMeasure::Di);
        let error = parse_fairness("xyz").unwrap_err().to_string();
        assert!(
            error.contains("--fairness") && error.contains("'xyz'"),
            "{error}"
        );
    }
}

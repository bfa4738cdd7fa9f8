//! `acquest appraise`: every option of the cost sheet valued: more rows read off the learning
//! curves, more rows of one group off curves in which only that group grows, a new feature from
//! paired pilot curves anchored on the full data, and the features already held by ablation and
//! permutation. Each with an interval, a test against no change, its cost and its gain per 1,000.

use crate::data::costs::{self, Acquisition, CostOption};
use crate::data::{Column, Dataset};
use crate::engine::streams::Stream;
use crate::engine::trial::ProgressSink;
use crate::error::Result;
use crate::estimate::baseline;
use crate::estimate::learning::{self, CurvePlan, FittedCurves, Reading};
use crate::report::*;
use crate::settings::{AppraisalSettings, Settings};

use super::held::held_features;
use super::pilot::{self, measure_pilot, PilotMeasurement};
use super::rank::rank;
use super::rows;
use super::score::{anchored, overlap_spread, OptionReadings, Scorer, Valuation};

/// Runs `acquest appraise`.
pub fn run(
    settings: &Settings,
    appraisal: &AppraisalSettings,
    progress: ProgressSink,
) -> Result<AppraisalReport> {
    run_with_options(settings, appraisal, progress).map(|(report, _)| report)
}

/// What an appraisal keeps so that plans can be re-scored with their options taken together.
pub struct Appraiser {
    data: Dataset,
    settings: Settings,
    appraisal: AppraisalSettings,
    main: FittedCurves,
    now: Reading,
    training_now: f64,
    options: Vec<CostOption>,
    readings: Vec<OptionReadings>,
}

impl Appraiser {
    /// The checked cost-sheet options.
    pub fn options(&self) -> &[CostOption] {
        &self.options
    }

    /// The appraisal's scorer, on `data`.
    fn scorer<'a>(&self, data: &'a Dataset) -> Scorer<'a> {
        Scorer {
            data,
            measure: self.appraisal.fairness,
            weigh_accuracy: self.appraisal.weigh_accuracy,
            weigh_fairness: self.appraisal.weigh_fairness,
            confidence: self.settings.trials.confidence,
            spread: overlap_spread(&self.settings.trials),
        }
    }

    /// Feature option `index` valued again on `data`: the same rows and features as the
    /// appraisal's, its candidate filled on another pilot (a grown one, in the backtest's
    /// narrowing check). Today's curves are the appraisal's own.
    pub fn value_feature(
        &self,
        index: usize,
        data: &Dataset,
        progress: ProgressSink,
    ) -> Result<OptionValue> {
        let option = &self.options[index];
        let Acquisition::Feature { column } = &option.acquisition else {
            return Err(crate::error::Error::Internal(format!(
                "option '{}' is not a feature",
                option.name
            )));
        };
        let valuation = Valuation {
            data,
            settings: &self.settings,
            scorer: self.scorer(data),
            curves: &self.main,
            now: self.now.clone(),
            training_rows: self.training_now,
            overall_steps: Vec::new(),
        };
        let mut warnings = Vec::new();
        pilot::feature_value(&valuation, option, column, index, progress, &mut warnings)
            .map(|(value, _)| value)
    }

    /// The readings behind each option's headline estimate, in the options' order.
    pub fn readings(&self) -> &[OptionReadings] {
        &self.readings
    }

    /// Re-scores a plan (option names with the rows bought; 0 for features) jointly: the rows
    /// of any case are read on today's curve at their total, and two or more features are
    /// measured together on the rows where all their pilots overlap. `Err` says why a plan
    /// cannot be re-scored (rows of one group; pilots that barely overlap).
    pub fn rescore(
        &self,
        picks: &[(String, usize)],
        progress: ProgressSink,
    ) -> Result<std::result::Result<JointScore, String>> {
        let data = &self.data;
        let rows = data.rows();
        let mut any_rows = 0usize;
        let mut columns: Vec<&str> = Vec::new();
        let mut mask = 0u64;
        for (name, new_rows) in picks {
            let Some(index) = self.options.iter().position(|o| &o.name == name) else {
                continue;
            };
            mask |= 1 << index; // at most costs::MAX_OPTIONS (60) options
            match &self.options[index].acquisition {
                Acquisition::Rows { filter: None } => any_rows += new_rows,
                Acquisition::Rows { filter: Some(_) } => {
                    return Ok(Err(
                        "plans with rows of one group are scored by adding gains".into(),
                    ))
                }
                Acquisition::Feature { column } => columns.push(column),
            }
        }
        let at = self.training_now * (rows + any_rows) as f64 / rows as f64;
        let full = self.main.read(at);
        let (after, method) = if columns.len() < 2 {
            if columns.is_empty() {
                (
                    full,
                    format!(
                        "today's curve read at {} training rows",
                        thousands(at.round() as usize)
                    ),
                )
            } else {
                return Ok(Err(
                    "one feature: its own estimate, read at the plan's row count, already takes any rows bought with it into account".into()
                ));
            }
        } else {
            let mut pilot: Vec<usize> = (0..rows).collect();
            for column in &columns {
                let rows_with: std::collections::HashSet<usize> =
                    costs::pilot_rows(data, column).into_iter().collect();
                pilot.retain(|i| rows_with.contains(i));
            }
            if pilot.len() < 40 {
                return Ok(Err(format!(
                    "the pilots of {} overlap on {} rows, too few to measure them together",
                    columns.join(", "),
                    thousands(pilot.len())
                )));
            }
            let mut with_columns: Vec<Column> = data.features.clone();
            for column in &columns {
                if let Some(c) = data.candidates.iter().find(|c| c.name == *column) {
                    with_columns.push(c.clone());
                }
            }
            let measured = measure_pilot(
                data,
                &self.settings,
                &pilot,
                &with_columns,
                (Stream::JointRescoring(mask), "joint re-scoring"),
                at,
                progress,
            )?;
            match &measured {
                PilotMeasurement::Curves { difference, .. } => {
                    (anchored(&full, &difference.read(at)), format!("{} measured together on the {} rows where their pilots overlap, extrapolated to {} training rows", columns.join(" + "), thousands(pilot.len()), thousands(at.round() as usize)))
                }
                PilotMeasurement::AtPilotSize { .. } => {
                    let difference =
                        measured.difference_at_pilot_size(data, self.settings.trials.seed);
                    (anchored(&full, &difference), format!("{} measured together on the {} rows where their pilots overlap (too few for a curve: the difference there is carried over)", columns.join(" + "), thousands(pilot.len())))
                }
            }
        };
        let p = self
            .scorer(data)
            .purchase(&self.now, &after, any_rows, 0.0, at, f64::INFINITY);
        Ok(Ok(JointScore {
            accuracy_gain: p.accuracy_gain,
            unfairness_reduction: p.unfairness_reduction,
            utility: p.utility,
            method,
        }))
    }
}

/// Runs the appraisal and returns the checked cost-sheet options beside the report.
pub fn run_with_options(
    settings: &Settings,
    appraisal: &AppraisalSettings,
    progress: ProgressSink,
) -> Result<(AppraisalReport, Appraiser)> {
    let (table, data) = Dataset::load(settings)?;
    let (raw, sha256) = costs::read_cost_sheet(&appraisal.costs)?;
    let options = costs::check_options(
        &appraisal.costs,
        raw,
        &data,
        &settings.schema.target,
        &data.protected,
    )?;
    let inputs = baseline::inputs(settings, &table, &data);
    let input = AppraisalInput {
        data,
        options,
        inputs,
        costs_sha256: sha256,
        held_features: appraisal.held_features,
    };
    appraise_dataset(input, settings, appraisal, progress)
}

/// What [`appraise_dataset`] values: a dataset already loaded and options already checked.
pub struct AppraisalInput {
    /// The data, loaded.
    pub data: Dataset,
    /// The cost sheet's options, checked against the data.
    pub options: Vec<CostOption>,
    /// The inputs section of the report.
    pub inputs: Inputs,
    /// SHA-256 of the cost sheet's bytes.
    pub costs_sha256: String,
    /// Whether to run the ablation and permutation trials of the features held.
    pub held_features: bool,
}

/// Values every option of `input` (the whole appraisal after loading).
pub fn appraise_dataset(
    input: AppraisalInput,
    settings: &Settings,
    appraisal: &AppraisalSettings,
    progress: ProgressSink,
) -> Result<(AppraisalReport, Appraiser)> {
    let AppraisalInput {
        data,
        options,
        inputs,
        costs_sha256: sha256,
        held_features: with_held,
    } = input;
    let trials = &settings.trials;
    let rows = data.rows();
    let all_rows: Vec<usize> = (0..rows).collect();
    let mut warnings: Vec<String> = data.warnings.clone();
    warnings.extend(data.first_attribute_only());

    // Curves of today's features on all rows.
    let main = learning::measure_curves(
        &data,
        settings,
        &CurvePlan {
            rows: &all_rows,
            arms: vec![&data.features],
            stream: Stream::BaselineSplits,
            stage: "learning curves",
            smallest: None,
        },
        &|training| {
            // Read the curves (for charts) up to the largest rows purchase on offer.
            let most: usize = options
                .iter()
                .filter(|o| matches!(o.acquisition, Acquisition::Rows { .. }))
                .filter_map(|o| o.max_rows)
                .sum();
            vec![training as f64 * (rows + most) as f64 / rows as f64]
        },
        progress,
    )?
    .swap_remove(0);
    warnings.extend(main.warnings.iter().cloned());
    warnings.extend(main.fitted.warnings.iter().cloned());
    let training_now = main.schedule.training_rows as f64;
    let now = main.fitted.read(training_now);
    let scorer = Scorer {
        data: &data,
        measure: appraisal.fairness,
        weigh_accuracy: appraisal.weigh_accuracy,
        weigh_fairness: appraisal.weigh_fairness,
        confidence: trials.confidence,
        spread: overlap_spread(trials),
    };
    // Today's figures are the baseline's (the same trials) unless the cap left today's rows
    // unmeasured; then they are read off the curve.
    let today = if main.schedule.capped {
        let (unfairness, worst) = scorer
            .unfairness(&now.point)
            .unwrap_or((f64::NAN, data.reference));
        baseline::TodayFigures {
            accuracy: now.point.accuracy,
            unfairness,
            worst,
            selection_rates: now.point.groups.iter().map(|r| r.selection).collect(),
        }
    } else {
        let full: Vec<&crate::engine::trial::TrialOutcome> =
            main.outcomes.iter().filter_map(|r| r.last()).collect();
        baseline::today_figures(&data, &full, appraisal.fairness)
    };
    // Today by every further protected attribute, from the same trials at their largest size.
    let today_by_attribute: Vec<TodayByAttribute> = data
        .more_attributes
        .iter()
        .enumerate()
        .map(|(k, attribute)| {
            let view = data.attribute_view(k);
            let full: Vec<crate::engine::trial::TrialOutcome> = main
                .outcomes
                .iter()
                .filter_map(|r| r.last().map(|o| o.for_attribute(k)))
                .collect();
            let figures = baseline::today_figures(
                &view,
                &full.iter().collect::<Vec<_>>(),
                appraisal.fairness,
            );
            let measured = figures.unfairness.is_finite();
            TodayByAttribute {
                attribute: attribute.name.clone(),
                reference: view.group_list[view.reference].name.clone(),
                unfairness: measured.then_some(figures.unfairness),
                worst_group: measured.then(|| view.group_list[figures.worst].name.clone()),
            }
        })
        .collect();
    // Row counts the rows options for any case can be bought in, for feature-with-rows readings.
    let overall_steps: Vec<usize> = {
        let mut steps: Vec<usize> = options
            .iter()
            .filter(|o| matches!(o.acquisition, Acquisition::Rows { filter: None }))
            .flat_map(|o| o.row_steps())
            .collect();
        steps.sort_unstable();
        steps.dedup();
        steps
    };
    let valuation = Valuation {
        data: &data,
        settings,
        scorer,
        curves: &main.fitted,
        now,
        training_rows: training_now,
        overall_steps,
    };

    let mut values = Vec::new();
    let mut readings = Vec::new();
    for (index, option) in options.iter().enumerate() {
        let (value, reading) = match &option.acquisition {
            Acquisition::Rows { filter: None } => rows::rows_option(&valuation, option),
            Acquisition::Rows {
                filter: Some((column, value)),
            } => rows::group_rows_option(
                &valuation,
                option,
                index,
                (column, value),
                progress,
                &mut warnings,
            )?,
            Acquisition::Feature { column } => {
                pilot::feature_value(&valuation, option, column, index, progress, &mut warnings)?
            }
        };
        values.push(value);
        readings.push(reading);
    }
    let now = valuation.now;

    let held_features = if with_held {
        held_features(&data, settings, appraisal.fairness, progress)?
    } else {
        Vec::new()
    };
    let ranking = rank(&values);
    let report = AppraisalReport {
        format: FORMAT.into(),
        format_version: FORMAT_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        command: "appraise".into(),
        inputs,
        costs: CostInputs {
            path: if crate::files::is_standard(&appraisal.costs) {
                "standard input".into()
            } else {
                appraisal.costs.display().to_string()
            },
            sha256,
            currency: appraisal.currency.clone(),
            fairness: appraisal.fairness.name().into(),
            weigh_accuracy: appraisal.weigh_accuracy,
            weigh_fairness: appraisal.weigh_fairness,
            options: options.clone(),
        },
        groups: baseline::group_summaries(&data),
        reference: baseline::reference_group(&data),
        today: Today {
            rows,
            training_rows: main.schedule.training_rows,
            source: if main.schedule.capped {
                "curve"
            } else {
                "trials"
            }
            .into(),
            accuracy: today.accuracy,
            unfairness: if today.unfairness.is_finite() {
                today.unfairness
            } else {
                0.0
            },
            worst_group: data.group_list[today.worst].name.clone(),
            selection_rates: today.selection_rates,
        },
        today_by_attribute,
        curves: main.fitted.curves.clone(),
        disparities: main.fitted.disparities.clone(),
        schedule: main.schedule,
        options: values,
        ranking,
        held_features,
        warnings,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
    };
    let appraiser = Appraiser {
        data,
        settings: settings.clone(),
        appraisal: appraisal.clone(),
        main: main.fitted,
        now,
        training_now,
        options,
        readings,
    };
    Ok((report, appraiser))
}

//! `acquest appraise`: every option of the cost sheet valued: more rows read off the learning
//! curves, more rows of one group off curves in which only that group grows, a new feature from
//! paired pilot curves anchored on the full data, and the features already held by ablation and
//! permutation. Each with an interval, a test against no change, its cost and its gain per 1,000.

use crate::data::costs::{self, Acquisition, CostOption};
use crate::data::{Column, Dataset};
use crate::engine::streams::{stream_rng, Stream};
use crate::engine::trial::{
    self, Arm, HeldProbe, ProgressSink, Rows, Sizes, TrialDesign, TrialOutcome,
};
use crate::error::{Error, Result};
use crate::estimate::baseline;
use crate::estimate::learning::{self, CurvePlan, FittedCurves, Quantities, Reading};
use crate::report::*;
use crate::settings::{AppraisalSettings, Settings};
use crate::stats::curve;
use crate::stats::fairness::{self, Rates};
use crate::stats::metrics::{self, estimate, Estimate};

/// A pilot smaller than this many training rows is flagged as small.
pub const SMALL_PILOT_ROWS: usize = 300;
/// Permutations of each held feature per trial.
pub const PERMUTATIONS: usize = 5;

/// Trial outcomes as `[repeat][size]`.
type Outcomes = Vec<Vec<TrialOutcome>>;

/// A gain computed from the quantities before and after.
type GainOf<'a> = &'a dyn Fn(&Quantities, &Quantities) -> Option<f64>;

/// Everything the valuation needs to turn readings into gains.
struct Scorer<'a> {
    data: &'a Dataset,
    measure: FairnessMeasure,
    weigh_accuracy: f64,
    weigh_fairness: f64,
    confidence: f64,
    /// Factor by which the bootstrap spread of a gain is widened about its point (see
    /// [`overlap_spread`]).
    spread: f64,
}

/// The bootstrap over repeats measures how much a mean over R overlapping train/test splits of
/// the same rows varies, σ²/R; repeated splits overlap, and the variance a new sample of people
/// would show is larger. As the baseline's intervals do, the variance is corrected by Nadeau and
/// Bengio's (2003) factor: σ²(1/R + n_test/n_train) in place of σ²/R, so the spread widens by
/// √(1 + R·n_test/n_train).
pub fn overlap_spread(trials: &crate::settings::TrialSettings) -> f64 {
    let test_to_train = trials.test_fraction / (1.0 - trials.test_fraction);
    (1.0 + trials.repeats as f64 * test_to_train).sqrt()
}

impl Scorer<'_> {
    /// Unfairness of the worst compared group, and that group.
    fn unfairness(&self, v: &Quantities) -> Option<(f64, usize)> {
        let r = self.data.reference;
        fairness::worst_group(v.groups.len(), r, |g| {
            self.measure.unfairness(&v.groups[g], &v.groups[r])
        })
        .map(|(g, u)| (u, g))
    }

    fn change(&self, point: f64, draws: Vec<f64>) -> Change {
        let centre = if point.is_finite() { point } else { 0.0 };
        let mut finite: Vec<f64> = draws
            .into_iter()
            .filter(|d| d.is_finite())
            .map(|d| centre + self.spread * (d - centre))
            .collect();
        let tail = (1.0 - self.confidence) / 2.0;
        let (low, high) = if finite.len() >= 10 {
            (
                curve::quantile(&mut finite, tail),
                curve::quantile(&mut finite, 1.0 - tail),
            )
        } else {
            (None, None)
        };
        let p_value = (finite.len() >= 10).then(|| {
            let below = finite.iter().filter(|&&d| d <= 0.0).count() as f64;
            let above = finite.iter().filter(|&&d| d >= 0.0).count() as f64;
            (2.0 * below.min(above) / finite.len() as f64).min(1.0)
        });
        Change {
            mean: if point.is_finite() { point } else { 0.0 },
            low,
            high,
            p_value,
        }
    }

    /// Values a purchase from the readings now and after.
    fn purchase(
        &self,
        now: &Reading,
        after: &Reading,
        new_rows: usize,
        cost: f64,
        training_rows: f64,
        largest: f64,
    ) -> Purchase {
        let per_draw = |f: GainOf| -> Vec<f64> {
            now.draws
                .iter()
                .zip(&after.draws)
                .map(|(n, a)| f(n, a).unwrap_or(f64::NAN))
                .collect()
        };
        let accuracy = |n: &Quantities, a: &Quantities| Some(a.accuracy - n.accuracy);
        let fairness =
            |n: &Quantities, a: &Quantities| Some(self.unfairness(n)?.0 - self.unfairness(a)?.0);
        let utility = |n: &Quantities, a: &Quantities| {
            Some(self.weigh_accuracy * accuracy(n, a)? + self.weigh_fairness * fairness(n, a)?)
        };
        let accuracy_gain = self.change(
            accuracy(&now.point, &after.point).unwrap_or(f64::NAN),
            per_draw(&accuracy),
        );
        let unfairness_reduction = self.change(
            fairness(&now.point, &after.point).unwrap_or(f64::NAN),
            per_draw(&fairness),
        );
        let utility_change = self.change(
            utility(&now.point, &after.point).unwrap_or(f64::NAN),
            per_draw(&utility),
        );
        let per_1000 = |x: f64| if cost > 0.0 { x / cost * 1000.0 } else { 0.0 };
        let groups = self
            .data
            .group_list
            .iter()
            .enumerate()
            .map(|(g, group)| {
                let rate = |k: fn(&Rates) -> f64| {
                    let draws = per_draw(&|n: &Quantities, a: &Quantities| {
                        Some(k(&a.groups[g]) - k(&n.groups[g]))
                    });
                    self.change(k(&after.point.groups[g]) - k(&now.point.groups[g]), draws)
                };
                GroupChange {
                    group: group.name.clone(),
                    selection_rate: rate(|r| r.selection),
                    true_positive_rate: rate(|r| r.true_positive),
                    false_positive_rate: rate(|r| r.false_positive),
                }
            })
            .collect();
        Purchase {
            new_rows,
            cost,
            training_rows,
            accuracy_per_1000: per_1000(accuracy_gain.mean),
            fairness_per_1000: per_1000(unfairness_reduction.mean),
            utility_per_1000: per_1000(utility_change.mean),
            cautious_per_1000: utility_change.low.map(per_1000),
            accuracy_gain,
            unfairness_reduction,
            utility: utility_change,
            extrapolated_too_far: training_rows > learning::RELIABLE_MULTIPLE * largest,
            groups,
        }
    }
}

/// `full + difference`, clipped to [0, 1]: the full-data curve moved by the pilot's
/// with-feature difference.
fn anchored(full: &Reading, difference: &Reading) -> Reading {
    full.zip(difference, |f, d| (f + d).clamp(0.0, 1.0))
}

/// `with − without` of two readings.
fn difference_of(with: &Reading, without: &Reading) -> Reading {
    with.zip(without, |a, b| a - b)
}

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

/// The readings behind an option's headline estimate, kept so that the gains can be scored
/// again under another fairness measure (the backtest does), with two simpler estimates beside.
#[derive(Debug, Clone)]
pub struct OptionReadings {
    /// Before the purchase (today's curve, or for rows of one group that group's curve).
    pub now: Reading,
    /// After it, as acquest estimates.
    pub after: Reading,
    /// After it with no extrapolation: what the last measured anchor shows (for rows, nothing
    /// is measured beyond today, so no change; for a feature, the with-minus-without difference
    /// measured at the pilot's full size, carried over).
    pub last_anchor: Reading,
    /// After it by the pilot's with-feature curve alone, read at today's training rows (features
    /// with a pilot curve only).
    pub direct: Option<Reading>,
}

/// Accuracy gain and unfairness reduction from `now` to `after` under `measure`, with intervals
/// at `confidence`.
pub fn score_readings(
    data: &Dataset,
    measure: FairnessMeasure,
    trials: &crate::settings::TrialSettings,
    now: &Reading,
    after: &Reading,
) -> (Change, Change) {
    let scorer = Scorer {
        data,
        measure,
        weigh_accuracy: 1.0,
        weigh_fairness: 1.0,
        confidence: trials.confidence,
        spread: overlap_spread(trials),
    };
    let p = scorer.purchase(now, after, 0, 0.0, 0.0, f64::INFINITY);
    (p.accuracy_gain, p.unfairness_reduction)
}

impl Appraiser {
    /// The checked cost-sheet options.
    pub fn options(&self) -> &[CostOption] {
        &self.options
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
            mask |= 1 << (index % 60);
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
                (full, format!("today's curve read at {at:.0} training rows"))
            } else {
                return Ok(Err(
                    "a single feature is already scored with its rows".into()
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
                    pilot.len()
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
                Stream::JointRescoring(mask),
                "joint re-scoring",
                progress,
            )?;
            match &measured {
                PilotMeasurement::Curves { difference, .. } => {
                    (anchored(&full, &difference.read(at)), format!("{} measured together on the {} rows where their pilots overlap, extrapolated to {at:.0} training rows", columns.join(" + "), pilot.len()))
                }
                PilotMeasurement::AtPilotSize { .. } => {
                    let difference =
                        measured.difference_at_pilot_size(data, self.settings.trials.seed);
                    (anchored(&full, &difference), format!("{} measured together on the {} rows where their pilots overlap (too few for a curve: the difference there is carried over)", columns.join(" + "), pilot.len()))
                }
            }
        };
        let scorer = Scorer {
            data,
            measure: self.appraisal.fairness,
            weigh_accuracy: self.appraisal.weigh_accuracy,
            weigh_fairness: self.appraisal.weigh_fairness,
            confidence: self.settings.trials.confidence,
            spread: overlap_spread(&self.settings.trials),
        };
        let p = scorer.purchase(&self.now, &after, any_rows, 0.0, at, f64::INFINITY);
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
    let raw = costs::read_cost_sheet(&appraisal.costs)?;
    let options = costs::check_options(&appraisal.costs, raw, &data, &settings.schema.protected)?;
    let sha256 = {
        use sha2::{Digest, Sha256};
        let bytes = std::fs::read(&appraisal.costs).map_err(|e| Error::File {
            path: appraisal.costs.clone(),
            reason: e.to_string(),
        })?;
        Sha256::digest(&bytes)
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect::<String>()
    };
    let inputs = baseline::inputs(settings, &table, &data);
    let input = AppraisalInput {
        data,
        options,
        inputs,
        costs_sha256: sha256,
        held_features: true,
    };
    appraise_dataset(input, settings, appraisal, progress)
}

/// What [`appraise_dataset`] values: a dataset already loaded and options already checked.
pub struct AppraisalInput {
    pub data: Dataset,
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

    // Curves of today's features on all rows.
    let main = learning::measure_curves(
        &data,
        settings,
        &CurvePlan {
            rows: &all_rows,
            arms: vec![&data.features],
            stream: Stream::CurveSplits,
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
    let training_at = |new_rows: usize| training_now * (rows + new_rows) as f64 / rows as f64;
    let now = main.fitted.read(training_now);
    let scorer = Scorer {
        data: &data,
        measure: appraisal.fairness,
        weigh_accuracy: appraisal.weigh_accuracy,
        weigh_fairness: appraisal.weigh_fairness,
        confidence: trials.confidence,
        spread: overlap_spread(trials),
    };
    let (today_unfairness, worst) = scorer
        .unfairness(&now.point)
        .unwrap_or((f64::NAN, data.reference));
    let largest = main.fitted.largest() as f64;

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

    let mut values = Vec::new();
    let mut readings = Vec::new();
    for (index, option) in options.iter().enumerate() {
        let value = match &option.acquisition {
            Acquisition::Rows { filter: None } => {
                let most = option.row_steps().last().copied().unwrap_or(0);
                readings.push(OptionReadings {
                    now: now.clone(),
                    after: main.fitted.read(training_at(most)),
                    last_anchor: now.clone(),
                    direct: None,
                });
                let steps: Vec<Purchase> = option
                    .row_steps()
                    .into_iter()
                    .map(|delta| {
                        let at = training_at(delta);
                        scorer.purchase(
                            &now,
                            &main.fitted.read(at),
                            delta,
                            option.rows_cost(delta),
                            at,
                            largest,
                        )
                    })
                    .collect();
                rows_value(option, None, steps, trials.confidence)
            }
            Acquisition::Rows {
                filter: Some((column, value)),
            } => {
                let g = data
                    .group_list
                    .iter()
                    .position(|x| &x.name == value)
                    .unwrap_or(0);
                let (group_curves, group_largest, m_now) = group_curves(
                    &data,
                    settings,
                    g,
                    Stream::GroupCurves(index),
                    progress,
                    &mut warnings,
                )?;
                let group_rows = data.groups.iter().filter(|&&x| x as usize == g).count() as f64;
                let now_g = group_curves.read(m_now);
                let most = option.row_steps().last().copied().unwrap_or(0) as f64;
                readings.push(OptionReadings {
                    now: now_g.clone(),
                    after: group_curves.read(m_now * (group_rows + most) / group_rows),
                    last_anchor: now_g.clone(),
                    direct: None,
                });
                let steps: Vec<Purchase> = option
                    .row_steps()
                    .into_iter()
                    .map(|delta| {
                        let m = m_now * (group_rows + delta as f64) / group_rows;
                        let mut p = scorer.purchase(
                            &now_g,
                            &group_curves.read(m),
                            delta,
                            option.rows_cost(delta),
                            m,
                            group_largest,
                        );
                        p.training_rows = training_now + (m - m_now);
                        p
                    })
                    .collect();
                rows_value(
                    option,
                    Some(format!("{column}={value}")),
                    steps,
                    trials.confidence,
                )
            }
            Acquisition::Feature { column } => {
                let (value, reading) = feature_value(
                    &data,
                    settings,
                    &scorer,
                    option,
                    column,
                    index,
                    &main.fitted,
                    &now,
                    &overall_steps,
                    training_at,
                    progress,
                    &mut warnings,
                )?;
                readings.push(reading);
                value
            }
        };
        values.push(value);
    }

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
            path: appraisal.costs.display().to_string(),
            sha256,
            currency: appraisal.currency.clone(),
            fairness: appraisal.fairness.name().into(),
            weigh_accuracy: appraisal.weigh_accuracy,
            weigh_fairness: appraisal.weigh_fairness,
        },
        groups: baseline::group_summaries(&data),
        reference: baseline::reference_group(&data),
        today: Today {
            rows,
            training_rows: main.schedule.training_rows,
            accuracy: now.point.accuracy,
            unfairness: if today_unfairness.is_finite() {
                today_unfairness
            } else {
                0.0
            },
            worst_group: data.group_list[worst].name.clone(),
            selection_rates: (0..data.group_list.len())
                .map(|g| now.point.groups[g].selection)
                .collect(),
        },
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

fn option_flags(option: &CostOption, headline: &Purchase, confidence: f64) -> Vec<String> {
    let mut flags = Vec::new();
    if headline.extrapolated_too_far {
        flags.push("extrapolated beyond 4x the largest size measured".into());
    }
    let significant = |c: &Change| c.p_value.is_some_and(|p| p < 1.0 - confidence);
    if !significant(&headline.accuracy_gain) && !significant(&headline.unfairness_reduction) {
        flags.push("neither gain differs significantly from zero".into());
    }
    let flat = |c: &Change| matches!((c.low, c.high), (Some(l), Some(h)) if (h - l).abs() < 1e-12);
    if flat(&headline.accuracy_gain) && flat(&headline.unfairness_reduction) {
        flags.push("no trend: the curves are flat here, so no change is estimated (which does not show the change is zero)".into());
    }
    if option.sensitive {
        flags.push("sensitive: needs a privacy or legal review".into());
    }
    flags
}

fn rows_value(
    option: &CostOption,
    target: Option<String>,
    steps: Vec<Purchase>,
    confidence: f64,
) -> OptionValue {
    let estimate = steps.last().cloned().unwrap_or_else(empty_purchase);
    OptionValue {
        flags: option_flags(option, &estimate, confidence),
        name: option.name.clone(),
        kind: option.kind(),
        target,
        sensitive: option.sensitive,
        note: option.note.clone(),
        estimate,
        steps,
        direct: None,
        pilot: None,
    }
}

fn empty_purchase() -> Purchase {
    let zero = Change {
        mean: 0.0,
        low: None,
        high: None,
        p_value: None,
    };
    Purchase {
        new_rows: 0,
        cost: 0.0,
        training_rows: 0.0,
        accuracy_gain: zero.clone(),
        unfairness_reduction: zero.clone(),
        utility: zero,
        accuracy_per_1000: 0.0,
        fairness_per_1000: 0.0,
        utility_per_1000: 0.0,
        cautious_per_1000: None,
        extrapolated_too_far: false,
        groups: Vec::new(),
    }
}

/// Curves in which only group `g`'s training rows grow. Returns the curves (over g's training
/// count), their largest size, and g's training count today.
fn group_curves(
    data: &Dataset,
    settings: &Settings,
    g: usize,
    stream: Stream,
    progress: ProgressSink,
    warnings: &mut Vec<String>,
) -> Result<(FittedCurves, f64, f64)> {
    let trials = &settings.trials;
    let all_rows: Vec<usize> = (0..data.rows()).collect();
    // Repeat 0's split, cut to the cap as the trials cut it: the group's rows there give the
    // sizes; its rows before the cut are today's count, read by extrapolation when capped.
    let split = trial::draw_split(
        data,
        &all_rows,
        trials,
        &mut stream_rng(trials.seed, stream, 0),
    );
    let in_group_of = |rows: &[usize]| -> Vec<usize> {
        rows.iter()
            .copied()
            .filter(|&i| data.groups[i] as usize == g)
            .collect()
    };
    let m_today = in_group_of(&split.drawn_train).len();
    let in_group = in_group_of(&split.train);
    let m_all = in_group.len();
    let favourable = in_group.iter().filter(|&&i| data.labels[i]).count();
    let rarest = favourable.min(m_all - favourable).max(1);
    let by_rule = (learning::MIN_CELL_ROWS as f64 * m_all as f64 / rarest as f64).ceil() as usize;
    let smallest = by_rule.max(20);
    let sizes = match learning::anchor_sizes(smallest, m_all) {
        Some(sizes) => sizes,
        None => {
            warnings.push(format!(
                "group '{}' has {m_all} training rows: its own curve starts at a quarter of them, \
                 where its rarer label has fewer than {} rows",
                data.group_list[g].name,
                learning::MIN_CELL_ROWS
            ));
            learning::anchor_sizes((m_all / 4).max(2), m_all).ok_or_else(|| {
                Error::NotEnoughData(format!(
                    "group '{}' is too small for a learning curve of its own",
                    data.group_list[g].name
                ))
            })?
        }
    };
    let design = TrialDesign {
        stage: "group curves",
        rows: Rows::Drawn {
            rows: &all_rows,
            stream,
            sizes: Sizes::Nested {
                sizes: &sizes,
                vary_group: Some(g as u32),
            },
        },
        arms: vec![Arm::of(&data.features)],
    };
    let outcomes = learning::by_arm(trial::run(data, trials, &design, progress)?, 1).swap_remove(0);
    let fitted = learning::fit_curves(
        data,
        &outcomes,
        &sizes,
        &[],
        trials.confidence,
        trials.seed,
        &baseline::label_counts(data),
    );
    let largest = fitted.largest() as f64;
    Ok((fitted, largest, m_today as f64))
}

#[allow(clippy::too_many_arguments)]
fn feature_value(
    data: &Dataset,
    settings: &Settings,
    scorer: &Scorer,
    option: &CostOption,
    column: &str,
    index: usize,
    full: &FittedCurves,
    now: &Reading,
    overall_steps: &[usize],
    training_at: impl Fn(usize) -> f64,
    progress: ProgressSink,
    warnings: &mut Vec<String>,
) -> Result<(OptionValue, OptionReadings)> {
    let trials = &settings.trials;
    let rows = data.rows();
    let pilot = costs::pilot_rows(data, column);
    let candidate = data
        .candidates
        .iter()
        .find(|c| c.name == column)
        .ok_or_else(|| Error::Internal(format!("candidate '{column}' vanished")))?;
    let mut with_columns: Vec<Column> = data.features.clone();
    with_columns.push(candidate.clone());
    let stream = Stream::PilotCurves(index);

    // Is the pilot like the rest? Compare its group × label mix with the other rows.
    let cells = data.group_list.len() * 2;
    let mut table = vec![vec![0u64; cells], vec![0u64; cells]];
    let mut in_pilot = vec![false; rows];
    for &i in &pilot {
        in_pilot[i] = true;
    }
    for i in 0..rows {
        table[usize::from(!in_pilot[i])]
            [data.groups[i] as usize * 2 + usize::from(data.labels[i])] += 1;
    }
    let mix = metrics::chi_square_independence(&table);

    let measured = measure_pilot(
        data,
        settings,
        &pilot,
        &with_columns,
        stream,
        "pilot curves",
        progress,
    )?;
    let training_now = training_at(0);
    let mut flags = Vec::new();
    // The pilot's with-minus-without difference as a function of training size, how far it
    // was measured, the direct extrapolation where there is a curve, and the pilot's summary.
    type DifferenceAt<'a> = Box<dyn Fn(f64) -> Reading + 'a>;
    let (difference_at, reach, direct, pilot_summary, last_anchor, direct_reading): (
        DifferenceAt,
        f64,
        Option<Purchase>,
        PilotSummary,
        Reading,
        Option<Reading>,
    ) = match measured {
        PilotMeasurement::Curves {
            ref without,
            ref with,
            ..
        } => {
            let reach = with.fitted.largest() as f64;
            let direct_reading = with.fitted.read(training_now);
            let last_anchor = anchored(now, &measured.difference_at_pilot_size(data, trials.seed));
            let direct = scorer.purchase(
                now,
                &direct_reading,
                0,
                option.feature_cost(rows),
                training_now,
                reach,
            );
            let summary = pilot_summary(
                data,
                scorer,
                &pilot,
                &without.outcomes,
                &with.outcomes,
                mix,
                true,
                trials.confidence,
            );
            let PilotMeasurement::Curves { difference, .. } = measured else {
                unreachable!("matched as curves above")
            };
            (
                Box::new(move |at| difference.read(at)),
                reach,
                Some(direct),
                summary,
                last_anchor,
                Some(direct_reading),
            )
        }
        PilotMeasurement::AtPilotSize { ref reason, .. } => {
            // Too small for a curve: measured at the pilot's own size, the difference
            // carried over unchanged.
            warnings.push(format!(
                    "option '{}': the pilot of {} rows is too small for a learning curve ({reason}); its gain is the difference measured at the pilot's size, not extrapolated",
                    option.name,
                    pilot.len()
                ));
            flags.push("pilot too small for a curve: gain measured at pilot size".into());
            let difference = measured.difference_at_pilot_size(data, trials.seed);
            let (without_outcomes, with_outcomes) = measured.outcomes();
            let summary = pilot_summary(
                data,
                scorer,
                &pilot,
                without_outcomes,
                with_outcomes,
                mix,
                false,
                trials.confidence,
            );
            let last_anchor = anchored(now, &difference);
            (
                Box::new(move |_| difference.clone()),
                f64::INFINITY,
                None,
                summary,
                last_anchor,
                None,
            )
        }
    };
    let purchase = |new_rows: usize| {
        let at = training_at(new_rows);
        let after = anchored(&full.read(at), &difference_at(at));
        scorer.purchase(
            now,
            &after,
            new_rows,
            option.feature_cost(rows + new_rows),
            at,
            reach,
        )
    };
    let estimate = purchase(0);
    let readings = OptionReadings {
        now: now.clone(),
        after: anchored(&full.read(training_now), &difference_at(training_now)),
        last_anchor,
        direct: direct_reading,
    };
    let steps: Vec<Purchase> = overall_steps.iter().map(|&d| purchase(d)).collect();
    if pilot_summary.training_rows < SMALL_PILOT_ROWS {
        flags.push(format!(
            "small pilot ({} training rows)",
            pilot_summary.training_rows
        ));
    }
    if pilot_summary.mix_p_value.is_some_and(|p| p < 0.05) {
        flags.push(
            "pilot unlike the rest (its group and label mix differs, chi-square p < 0.05)".into(),
        );
    }
    flags.extend(option_flags(option, &estimate, trials.confidence));
    let value = OptionValue {
        name: option.name.clone(),
        kind: OptionKind::Feature,
        target: Some(column.to_string()),
        sensitive: option.sensitive,
        note: option.note.clone(),
        estimate,
        steps,
        direct,
        pilot: Some(pilot_summary),
        flags,
    };
    Ok((value, readings))
}

/// A candidate feature measured on its pilot, without and with it on the same splits and
/// orders (paired): as learning curves where the pilot is large enough for one, else at the
/// pilot's own size only.
enum PilotMeasurement {
    Curves {
        without: Box<learning::MeasuredCurves>,
        with: Box<learning::MeasuredCurves>,
        /// The paired with-minus-without difference, fitted as curves.
        difference: learning::DifferenceCurves,
    },
    AtPilotSize {
        /// Why there are no curves.
        reason: String,
        without: Outcomes,
        with: Outcomes,
    },
}

impl PilotMeasurement {
    /// The trials without and with the candidate, `[repeat][size]`.
    fn outcomes(&self) -> (&Outcomes, &Outcomes) {
        match self {
            PilotMeasurement::Curves { without, with, .. } => (&without.outcomes, &with.outcomes),
            PilotMeasurement::AtPilotSize { without, with, .. } => (without, with),
        }
    }

    /// The with-minus-without difference measured at the pilot's full size (the last anchor).
    fn difference_at_pilot_size(&self, data: &Dataset, seed: u64) -> Reading {
        let (without, with) = self.outcomes();
        difference_of(
            &reading_from_outcomes(data, with, seed),
            &reading_from_outcomes(data, without, seed),
        )
    }
}

/// Measures `with_columns` against today's features on the `pilot` rows (stream `stream`).
fn measure_pilot(
    data: &Dataset,
    settings: &Settings,
    pilot: &[usize],
    with_columns: &[Column],
    stream: Stream,
    stage: &'static str,
    progress: ProgressSink,
) -> Result<PilotMeasurement> {
    let trials = &settings.trials;
    let plan = CurvePlan {
        rows: pilot,
        arms: vec![&data.features, with_columns],
        stream,
        stage,
        smallest: None,
    };
    match learning::measure_curves(data, settings, &plan, &|_| Vec::new(), progress) {
        Ok(mut measured) => {
            let with = measured.swap_remove(1);
            let without = measured.swap_remove(0);
            let difference = learning::DifferenceCurves::fit(
                &with.outcomes,
                &without.outcomes,
                &with.schedule.sizes,
                data.group_list.len(),
                trials.seed,
            );
            Ok(PilotMeasurement::Curves {
                without: Box::new(without),
                with: Box::new(with),
                difference,
            })
        }
        Err(error) => {
            // Too small for a curve: the trials at the pilot's full size only.
            let split =
                trial::draw_split(data, pilot, trials, &mut stream_rng(trials.seed, stream, 0));
            if split.train.len() < 10 {
                return Err(Error::NotEnoughData(format!(
                    "a pilot of {} rows is too small to train on",
                    pilot.len()
                )));
            }
            let sizes = [split.train.len()];
            let design = TrialDesign {
                stage: "pilot trials",
                rows: Rows::Drawn {
                    rows: pilot,
                    stream,
                    sizes: Sizes::Nested {
                        sizes: &sizes,
                        vary_group: None,
                    },
                },
                arms: vec![Arm::of(&data.features), Arm::of(with_columns)],
            };
            let mut outcomes = learning::by_arm(trial::run(data, trials, &design, progress)?, 2);
            let with = outcomes.swap_remove(1);
            let without = outcomes.swap_remove(0);
            Ok(PilotMeasurement::AtPilotSize {
                reason: error.to_string(),
                without,
                with,
            })
        }
    }
}

/// A reading from measured outcomes at one size: the mean over repeats, and bootstrap draws of
/// it over repeats.
fn reading_from_outcomes(data: &Dataset, outcomes: &[Vec<TrialOutcome>], seed: u64) -> Reading {
    let groups = data.group_list.len();
    let mean = |draw: &[usize]| -> Quantities {
        let last: Vec<&TrialOutcome> = draw.iter().filter_map(|&r| outcomes[r].last()).collect();
        Quantities::mean_of(&last, groups)
    };
    let repeats = outcomes.len();
    let all: Vec<usize> = (0..repeats).collect();
    let mut rng = stream_rng(seed, Stream::PilotBootstrap, 0);
    use rand::Rng;
    let draws = (0..learning::BOOTSTRAP_DRAWS)
        .map(|_| {
            mean(
                &(0..repeats)
                    .map(|_| rng.gen_range(0..repeats))
                    .collect::<Vec<_>>(),
            )
        })
        .collect();
    Reading {
        point: mean(&all),
        draws,
    }
}

#[allow(clippy::too_many_arguments)]
fn pilot_summary(
    data: &Dataset,
    scorer: &Scorer,
    pilot: &[usize],
    without: &[Vec<TrialOutcome>],
    with: &[Vec<TrialOutcome>],
    mix: Option<(f64, usize, f64)>,
    extrapolated: bool,
    confidence: f64,
) -> PilotSummary {
    let last = |o: &[Vec<TrialOutcome>]| -> Vec<TrialOutcome> {
        o.iter().filter_map(|r| r.last().cloned()).collect()
    };
    let (w, o) = (last(with), last(without));
    let test_to_train = w
        .first()
        .map_or(0.0, |t| t.test_rows as f64 / t.train_rows.max(1) as f64);
    let unfairness =
        |t: &TrialOutcome| fairness::worst_of_counts(scorer.measure, &t.counts, data.reference);
    let accuracy_with: Vec<f64> = w.iter().map(|t| t.accuracy).collect();
    let accuracy_without: Vec<f64> = o.iter().map(|t| t.accuracy).collect();
    let accuracy_diff: Vec<f64> = accuracy_with
        .iter()
        .zip(&accuracy_without)
        .map(|(a, b)| a - b)
        .collect();
    let unfair_with: Vec<f64> = w.iter().filter_map(unfairness).collect();
    let unfair_without: Vec<f64> = o.iter().filter_map(unfairness).collect();
    let unfair_diff: Vec<f64> = w
        .iter()
        .zip(&o)
        .filter_map(|(a, b)| Some(unfairness(a)? - unfairness(b)?))
        .collect();
    let sizes = with.first().map_or(0, Vec::len);
    let per_size: Vec<Vec<f64>> = (0..sizes)
        .map(|i| {
            with.iter()
                .zip(without)
                .map(|(a, b)| a[i].accuracy - b[i].accuracy)
                .collect()
        })
        .collect();
    PilotSummary {
        rows: pilot.len(),
        training_rows: w.first().map_or(0, |t| t.train_rows),
        mix_chi_square: mix.map(|m| m.0),
        mix_p_value: mix.map(|m| m.2),
        accuracy_difference: estimate(&accuracy_diff, confidence, test_to_train, Some(0.0)),
        accuracy_welch_p: metrics::welch_t_test(&accuracy_with, &accuracy_without).map(|t| t.2),
        unfairness_difference: estimate(&unfair_diff, confidence, test_to_train, Some(0.0)),
        unfairness_welch_p: metrics::welch_t_test(&unfair_with, &unfair_without).map(|t| t.2),
        size_anova_p: metrics::one_way_anova(&per_size).map(|a| a.1),
        extrapolated,
    }
}

/// Ablation (retrain without each feature) and permutation (scramble it on the test rows), over
/// the baseline's trials.
fn held_features(
    data: &Dataset,
    settings: &Settings,
    measure: FairnessMeasure,
    progress: ProgressSink,
) -> Result<Vec<HeldFeature>> {
    let trials = &settings.trials;
    let all: Vec<usize> = (0..data.rows()).collect();
    let design = TrialDesign {
        stage: "held features",
        rows: Rows::Drawn {
            rows: &all,
            stream: Stream::BaselineSplits,
            sizes: Sizes::Whole,
        },
        arms: vec![Arm {
            columns: &data.features,
            probe: Some(HeldProbe {
                permutations: PERMUTATIONS,
                stream: Stream::Permutations,
            }),
        }],
    };
    let outcomes = trial::run(data, trials, &design, progress)?;
    let unfairness =
        |o: &TrialOutcome| fairness::worst_of_counts(measure, &o.counts, data.reference);
    // Per trial: for each feature, (ablation Δaccuracy, Δunfairness, permutation Δaccuracy,
    // Δunfairness) against the full model.
    type Changes = Vec<[Option<f64>; 4]>;
    let mut test_to_train = 0.0;
    let per_trial: Vec<Changes> = outcomes
        .iter()
        .enumerate()
        .map(|(repeat, arms)| {
            let arm = &arms[0];
            let base = &arm.sizes[0];
            if repeat == 0 {
                test_to_train = base.test_rows as f64 / base.train_rows as f64;
            }
            let (base_accuracy, base_unfairness) = (base.accuracy, unfairness(base));
            let diff = |o: &TrialOutcome| {
                [
                    Some(o.accuracy - base_accuracy),
                    unfairness(o).zip(base_unfairness).map(|(u, b)| u - b),
                ]
            };
            arm.held
                .iter()
                .map(|held| {
                    let ablation = held.ablation.as_ref().map_or([None, None], diff);
                    let (mut sum_a, mut sum_u, mut count_u) = (0.0, 0.0, 0usize);
                    for permuted in &held.permutations {
                        let [da, du] = diff(permuted);
                        sum_a += da.unwrap_or(0.0);
                        if let Some(du) = du {
                            sum_u += du;
                            count_u += 1;
                        }
                    }
                    let permutations = held.permutations.len() as f64;
                    [
                        ablation[0],
                        ablation[1],
                        Some(sum_a / permutations),
                        (count_u > 0).then(|| sum_u / count_u as f64),
                    ]
                })
                .collect()
        })
        .collect();
    Ok((0..data.features.len())
        .map(|f| {
            let pick = |k: usize| -> Option<Estimate> {
                let values: Vec<f64> = per_trial.iter().filter_map(|c| c[f][k]).collect();
                estimate(&values, trials.confidence, test_to_train, Some(0.0))
            };
            HeldFeature {
                feature: data.features[f].name.clone(),
                ablation_accuracy: pick(0),
                ablation_unfairness: pick(1),
                permutation_accuracy: pick(2),
                permutation_unfairness: pick(3),
            }
        })
        .collect())
}

/// Ranks by utility per 1,000 and by its cautious lower end (highest first; ties by name).
fn rank(values: &[OptionValue]) -> Vec<Ranked> {
    let mut by_utility: Vec<usize> = (0..values.len()).collect();
    by_utility.sort_by(|&a, &b| {
        values[b]
            .estimate
            .utility_per_1000
            .total_cmp(&values[a].estimate.utility_per_1000)
            .then(values[a].name.cmp(&values[b].name))
    });
    let mut by_caution: Vec<usize> = (0..values.len()).collect();
    let cautious = |i: usize| {
        values[i]
            .estimate
            .cautious_per_1000
            .unwrap_or(f64::NEG_INFINITY)
    };
    by_caution.sort_by(|&a, &b| {
        cautious(b)
            .total_cmp(&cautious(a))
            .then(values[a].name.cmp(&values[b].name))
    });
    by_utility
        .iter()
        .enumerate()
        .map(|(rank, &i)| Ranked {
            name: values[i].name.clone(),
            utility_per_1000: values[i].estimate.utility_per_1000,
            rank: rank + 1,
            cautious_per_1000: values[i].estimate.cautious_per_1000,
            cautious_rank: by_caution.iter().position(|&x| x == i).unwrap_or(0) + 1,
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn quantities(accuracy: f64, groups: &[[f64; 3]]) -> Quantities {
        Quantities {
            accuracy,
            groups: groups
                .iter()
                .map(|&[selection, true_positive, false_positive]| Rates {
                    selection,
                    true_positive,
                    false_positive,
                })
                .collect(),
        }
    }

    fn scorer(data: &Dataset, spread: f64) -> Scorer<'_> {
        Scorer {
            data,
            measure: FairnessMeasure::Eod,
            weigh_accuracy: 1.0,
            weigh_fairness: 2.0,
            confidence: 0.9,
            spread,
        }
    }

    #[test]
    fn a_purchase_is_scored_from_the_readings_before_and_after() {
        // Worked by hand. Reference r: TPR 0.8; compared u: TPR 0.6 today, 0.7 after, so the
        // equal-opportunity unfairness falls from 0.2 to 0.1; accuracy 0.80 -> 0.83. Utility
        // 1 x 0.03 + 2 x 0.1 = 0.23; at a cost of 460, 0.5 per 1,000.
        let data = Dataset::from_parts(vec![true, false], vec![0, 1], &["r", "u"], 0, Vec::new());
        let now = quantities(0.80, &[[0.5, 0.8, 0.2], [0.3, 0.6, 0.1]]);
        let after = quantities(0.83, &[[0.5, 0.8, 0.2], [0.35, 0.7, 0.1]]);
        // 20 draws whose accuracy gains are 0.03 + (b - 9.5)/1000.
        let draws = |q: &Quantities, shift: bool| -> Vec<Quantities> {
            (0..20)
                .map(|b| {
                    let mut d = q.clone();
                    if shift {
                        d.accuracy += (b as f64 - 9.5) / 1000.0;
                    }
                    d
                })
                .collect()
        };
        let now = Reading {
            draws: draws(&now, false),
            point: now,
        };
        let after = Reading {
            draws: draws(&after, true),
            point: after,
        };
        let close = |a: f64, b: f64| (a - b).abs() < 1e-12;
        let p = scorer(&data, 1.0).purchase(&now, &after, 100, 460.0, 1000.0, 500.0);
        assert!(close(p.accuracy_gain.mean, 0.03));
        assert!(close(p.unfairness_reduction.mean, 0.1));
        assert!(close(p.utility.mean, 0.23));
        assert!(close(p.utility_per_1000, 0.5));
        // Type-7 (linear) quantiles of the 20 gains: 5% at position 0.95, 95% at 18.05.
        assert!(close(p.accuracy_gain.low.unwrap(), 0.02145));
        assert!(close(p.accuracy_gain.high.unwrap(), 0.03855));
        assert_eq!(p.accuracy_gain.p_value, Some(0.0), "no draw at or below 0");
        assert_eq!(p.unfairness_reduction.p_value, Some(0.0));
        assert!(close(p.groups[1].selection_rate.mean, 0.05));
        assert!(close(p.groups[1].true_positive_rate.mean, 0.1));
        assert!(!p.extrapolated_too_far, "1,000 rows is within 4 x 500");
        // The spread widens the draws about the point: half-widths double.
        let wide = scorer(&data, 2.0).purchase(&now, &after, 100, 460.0, 1000.0, 200.0);
        assert!(close(wide.accuracy_gain.mean, 0.03));
        assert!(close(wide.accuracy_gain.low.unwrap(), 0.03 - 2.0 * 0.00855));
        assert!(close(
            wide.accuracy_gain.high.unwrap(),
            0.03 + 2.0 * 0.00855
        ));
        assert!(wide.extrapolated_too_far, "1,000 rows is beyond 4 x 200");
    }

    #[test]
    fn the_anchored_estimate_adds_the_pilot_difference_and_clips_to_rates() {
        // Worked by hand: 0.95 + 0.1 clips to 1; 0.2 - 0.3 clips to 0; 0.5 + 0.1 = 0.6.
        let full = quantities(0.95, &[[0.2, 0.5, 0.1]]);
        let difference = quantities(0.1, &[[-0.3, 0.1, 0.0]]);
        let reading = |q: Quantities| Reading {
            draws: vec![q.clone(), q.clone()],
            point: q,
        };
        let a = anchored(&reading(full), &reading(difference));
        for q in std::iter::once(&a.point).chain(&a.draws) {
            assert_eq!(q.accuracy, 1.0);
            assert_eq!(q.groups[0].selection, 0.0);
            assert!((q.groups[0].true_positive - 0.6).abs() < 1e-12);
            assert!((q.groups[0].false_positive - 0.1).abs() < 1e-12);
        }
    }
}

//! Rows options: more rows of any group read off today's learning curves, and more rows of one
//! group off curves in which only that group's training rows grow.

use super::score::{empty_purchase, option_flags, OptionReadings, Valuation};
use crate::data::costs::CostOption;
use crate::data::Dataset;
use crate::engine::streams::{stream_rng, Stream};
use crate::engine::trial::{self, Arm, ProgressSink, Rows, Sizes, TrialDesign, TrialOutcome};
use crate::error::{Error, Result};
use crate::estimate::baseline;
use crate::estimate::learning::{self, FittedCurves};
use crate::report::*;
use crate::settings::Settings;
use crate::stats::{fairness, metrics};

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
        first_parts: Vec::new(),
    }
}

/// Curves in which only the training rows of the group `name` (the rows `marked`) grow, and
/// the trials behind them.
fn group_curves(
    data: &Dataset,
    settings: &Settings,
    (name, marked): (&str, &[bool]),
    stream: Stream,
    progress: ProgressSink,
    warnings: &mut Vec<String>,
) -> Result<GroupCurves> {
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
    let in_group_of =
        |rows: &[usize]| -> Vec<usize> { rows.iter().copied().filter(|&i| marked[i]).collect() };
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
                "group '{}' has {} training rows: its own curve starts at a quarter of them, \
                 where its rarer label has fewer than {} rows",
                name,
                crate::report::thousands(m_all),
                learning::MIN_CELL_ROWS
            ));
            learning::anchor_sizes((m_all / 4).max(2), m_all).ok_or_else(|| {
                Error::NotEnoughData(format!(
                    "group '{name}' is too small for a learning curve of its own"
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
                vary: Some(marked),
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
    Ok(GroupCurves {
        largest: fitted.largest() as f64,
        fitted,
        today: m_today as f64,
        outcomes,
    })
}

/// A group's own curves (over its training count), with their trials.
struct GroupCurves {
    fitted: FittedCurves,
    /// The largest size measured.
    largest: f64,
    /// The group's training count today.
    today: f64,
    /// The trials, `[repeat][size]`.
    outcomes: Vec<Vec<TrialOutcome>>,
}

/// A change measured rather than extrapolated: per repeat, from the second-last anchor of
/// curves whose trials are `outcomes` (`[repeat][size]`) to the last, the accuracy gain, the
/// unfairness reduction and the utility, each with the interval of the corrected resampled
/// t-test (Nadeau and Bengio 2003) over repeats, as the changes of a purchase.
fn measured_change(v: &Valuation, outcomes: &[Vec<TrialOutcome>]) -> Purchase {
    let s = &v.scorer;
    let pairs: Vec<(&TrialOutcome, &TrialOutcome)> = outcomes
        .iter()
        .filter_map(|r| match r.len() {
            n if n >= 2 => Some((&r[n - 2], &r[n - 1])),
            _ => None,
        })
        .collect();
    let unfairness =
        |t: &TrialOutcome| fairness::worst_of_counts(s.measure, &t.counts, v.data.reference);
    let accuracy: Vec<f64> = pairs.iter().map(|(a, b)| b.accuracy - a.accuracy).collect();
    let reduction: Vec<Option<f64>> = pairs
        .iter()
        .map(|(a, b)| Some(unfairness(a)? - unfairness(b)?))
        .collect();
    let utility: Vec<f64> = accuracy
        .iter()
        .zip(&reduction)
        .filter_map(|(a, r)| Some(s.weigh_accuracy * a + s.weigh_fairness * (*r)?))
        .collect();
    let test_to_train = pairs.last().map_or(0.0, |(_, b)| {
        b.test_rows as f64 / b.train_rows.max(1) as f64
    });
    let change = |values: &[f64]| {
        metrics::estimate(values, s.confidence, test_to_train, Some(0.0)).map_or_else(
            Change::not_measured,
            |e| Change {
                mean: e.mean,
                low: e.low,
                high: e.high,
                p_value: e.p_value,
                chance_positive: None,
                widened_to_point: false,
            },
        )
    };
    let mut p = empty_purchase();
    p.accuracy_gain = change(&accuracy);
    p.unfairness_reduction = change(&reduction.into_iter().flatten().collect::<Vec<_>>());
    p.utility = change(&utility);
    p
}

/// More rows of any group: today's curves read at the training rows each step gives.
pub(super) fn rows_option(v: &Valuation, option: &CostOption) -> (OptionValue, OptionReadings) {
    let most = option.row_steps().last().copied().unwrap_or(0);
    let readings = OptionReadings {
        now: v.now.clone(),
        after: v.curves.read(v.training_at(most)),
        last_anchor: v.now.clone(),
        direct: None,
    };
    let largest = v.curves.largest() as f64;
    let steps: Vec<Purchase> = option
        .row_steps()
        .into_iter()
        .map(|delta| {
            let at = v.training_at(delta);
            v.scorer.purchase(
                &v.now,
                &v.curves.read(at),
                delta,
                option.rows_cost(delta),
                at,
                largest,
            )
        })
        .collect();
    let confidence = v.settings.trials.confidence;
    (rows_value(option, None, steps, confidence), readings)
}

/// More rows of the group `value` of the protected `column`: that group's own curves, in which
/// only its training rows grow, read at its training rows after each step.
pub(super) fn group_rows_option(
    v: &Valuation,
    option: &CostOption,
    index: usize,
    (column, value): (&str, &str),
    progress: ProgressSink,
    warnings: &mut Vec<String>,
) -> Result<(OptionValue, OptionReadings)> {
    let data = v.data;
    let marked = data.group_rows(column, value).ok_or_else(|| {
        Error::Internal(format!(
            "option '{}': no group {column}={value}",
            option.name
        ))
    })?;
    let curves = group_curves(
        data,
        v.settings,
        (value, &marked),
        Stream::GroupCurves(index),
        progress,
        warnings,
    )?;
    let (group_curves, group_largest, m_now) = (&curves.fitted, curves.largest, curves.today);
    let group_rows = marked.iter().filter(|&&m| m).count() as f64;
    let now_g = group_curves.read(m_now);
    let most = option.row_steps().last().copied().unwrap_or(0) as f64;
    let readings = OptionReadings {
        now: now_g.clone(),
        after: group_curves.read(m_now * (group_rows + most) / group_rows),
        last_anchor: now_g.clone(),
        direct: None,
    };
    let steps: Vec<Purchase> = option
        .row_steps()
        .into_iter()
        .map(|delta| {
            let m = m_now * (group_rows + delta as f64) / group_rows;
            let mut p = v.scorer.purchase(
                &now_g,
                &group_curves.read(m),
                delta,
                option.rows_cost(delta),
                m,
                group_largest,
            );
            p.training_rows = v.training_rows + (m - m_now);
            p
        })
        .collect();
    let confidence = v.settings.trials.confidence;
    // A cell of two attributes reads "sex=Female & race=Black".
    let target = Some(match (column.split_once(" × "), value.split_once(" & ")) {
        (Some((a, b)), Some((x, y))) => format!("{a}={x} & {b}={y}"),
        _ => format!("{column}={value}"),
    });
    let mut value = rows_value(option, target, steps, confidence);
    value.first_parts = super::growth::first_parts(
        option,
        &value.steps,
        |delta| m_now * (group_rows + delta as f64) / group_rows,
        &measured_change(v, &curves.outcomes),
    );
    Ok((value, readings))
}

//! Seeded, stratified trials run in parallel: split, encode on the training part, fit, score the
//! held-out part. Results come back in trial order whatever the thread count.

use std::sync::atomic::{AtomicUsize, Ordering};

use rand::seq::SliceRandom;
use rayon::prelude::*;

pub use super::streams::{stream_rng, Stream};
use crate::data::{Column, Dataset};
use crate::engine::encode::Encoder;
use crate::engine::model::ModelFamily;
use crate::error::Result;
use crate::stats::metrics::{self, GroupCounts};

/// Progress of a long stage, sent to whoever shows it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Progress {
    /// What is running, e.g. "baseline trials".
    pub stage: &'static str,
    pub done: usize,
    pub total: usize,
}

/// Receives progress events; called from worker threads.
pub type ProgressSink<'a> = &'a (dyn Fn(Progress) + Sync);

/// A progress sink that drops every event.
pub fn no_progress(_: Progress) {}

/// Splits rows into training and test parts within every (group, label) cell, so both parts keep
/// the data's group and label mix. A cell of one row goes to training; larger cells put at
/// least one row in each part. Both parts come back sorted.
pub fn stratified_split(
    labels: &[bool],
    groups: &[u32],
    group_count: usize,
    test_fraction: f64,
    rng: &mut impl rand::Rng,
) -> (Vec<usize>, Vec<usize>) {
    let all: Vec<usize> = (0..labels.len()).collect();
    stratified_split_of(&all, labels, groups, group_count, test_fraction, rng)
}

/// [`stratified_split`] of the listed rows only (a pilot, say).
pub fn stratified_split_of(
    rows: &[usize],
    labels: &[bool],
    groups: &[u32],
    group_count: usize,
    test_fraction: f64,
    rng: &mut impl rand::Rng,
) -> (Vec<usize>, Vec<usize>) {
    let mut cells: Vec<Vec<usize>> = vec![Vec::new(); group_count * 2];
    for &i in rows {
        cells[groups[i] as usize * 2 + usize::from(labels[i])].push(i);
    }
    let mut train = Vec::with_capacity(rows.len());
    let mut test = Vec::with_capacity(rows.len());
    for mut cell in cells {
        cell.shuffle(rng);
        let size = cell.len();
        let take = if size < 2 {
            0
        } else {
            ((size as f64 * test_fraction).round() as usize).clamp(1, size - 1)
        };
        test.extend_from_slice(&cell[..take]);
        train.extend_from_slice(&cell[take..]);
    }
    train.sort_unstable();
    test.sort_unstable();
    (train, test)
}

/// Cuts a split down to at most `cap` training rows and the test rows in proportion
/// (`cap × test_fraction / (1 − test_fraction)`), each a stratified subsample (a prefix of a
/// nested order, so it keeps the group and label mix). A split within the cap comes back as it
/// is and draws nothing from `rng`, so data below the cap give the same trials as without one.
pub fn cap_split(
    data: &Dataset,
    (train, test): (Vec<usize>, Vec<usize>),
    cap: usize,
    test_fraction: f64,
    rng: &mut impl rand::Rng,
) -> (Vec<usize>, Vec<usize>) {
    if train.len() <= cap {
        return (train, test);
    }
    let group_count = data.group_list.len();
    let mut cut = |rows: &[usize], keep: usize| -> Vec<usize> {
        let mut order = nested_order(rows, &data.labels, &data.groups, group_count, &mut *rng);
        order.truncate(keep);
        order.sort_unstable();
        order
    };
    let test_cap = ((cap as f64 * test_fraction / (1.0 - test_fraction)).round() as usize).max(1);
    let train = cut(&train, cap);
    let test = if test.len() > test_cap {
        cut(&test, test_cap)
    } else {
        test
    };
    (train, test)
}

/// What one trial measured on its held-out rows.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialOutcome {
    pub accuracy: f64,
    pub balanced_accuracy: Option<f64>,
    pub area_under_curve: Option<f64>,
    /// Label and prediction counts per group on the test part.
    pub counts: Vec<GroupCounts>,
    pub train_rows: usize,
    pub test_rows: usize,
}

/// Fits on `train` and measures on `test`.
pub fn run_trial(
    data: &Dataset,
    family: &dyn ModelFamily,
    train: &[usize],
    test: &[usize],
) -> Result<TrialOutcome> {
    run_trial_on(data, &data.features, family, train, test)
}

/// [`run_trial`] on the given feature columns (indexed by row, like the dataset's).
pub fn run_trial_on(
    data: &Dataset,
    columns: &[Column],
    family: &dyn ModelFamily,
    train: &[usize],
    test: &[usize],
) -> Result<TrialOutcome> {
    let encoder = Encoder::fit(columns, train);
    let x_train = encoder.transform(columns, train);
    let y_train: Vec<bool> = train.iter().map(|&i| data.labels[i]).collect();
    let model = family.fit(x_train.view(), &y_train)?;
    drop(x_train);
    let x_test = encoder.transform(columns, test);
    let scores = model.scores(x_test.view());
    Ok(measure(data, family, test, &scores, train.len()))
}

/// Scores on the test rows turned into the trial's measurements (favourable when score ≥ 0.5).
fn measure(
    data: &Dataset,
    family: &dyn ModelFamily,
    test: &[usize],
    scores: &[f64],
    train_rows: usize,
) -> TrialOutcome {
    let predicted: Vec<bool> = scores.iter().map(|&s| s >= 0.5).collect();
    let labels: Vec<bool> = test.iter().map(|&i| data.labels[i]).collect();
    let groups: Vec<u32> = test.iter().map(|&i| data.groups[i]).collect();
    TrialOutcome {
        accuracy: metrics::accuracy(&labels, &predicted),
        balanced_accuracy: metrics::balanced_accuracy(&labels, &predicted),
        area_under_curve: if family.gives_scores() {
            metrics::area_under_curve(&labels, scores)
        } else {
            None
        },
        counts: metrics::group_counts(&labels, &predicted, &groups, data.group_list.len()),
        train_rows,
        test_rows: test.len(),
    }
}

/// Orders `rows` so that every prefix keeps the (group, label) mix of the whole: each cell is
/// shuffled, and its k-th row of m is placed at position (k + ½)/m of the way through.
pub fn nested_order(
    rows: &[usize],
    labels: &[bool],
    groups: &[u32],
    group_count: usize,
    rng: &mut impl rand::Rng,
) -> Vec<usize> {
    let mut cells: Vec<Vec<usize>> = vec![Vec::new(); group_count * 2];
    for &i in rows {
        cells[groups[i] as usize * 2 + usize::from(labels[i])].push(i);
    }
    let mut keyed: Vec<(f64, usize, usize)> = Vec::with_capacity(rows.len());
    for (c, mut cell) in cells.into_iter().enumerate() {
        cell.shuffle(rng);
        let m = cell.len() as f64;
        for (k, i) in cell.into_iter().enumerate() {
            keyed.push(((k as f64 + 0.5) / m, c, i));
        }
    }
    keyed.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    keyed.into_iter().map(|(_, _, i)| i).collect()
}

/// What a set of nested trials varies.
#[derive(Debug, Clone)]
pub struct Schedule<'a> {
    /// Rows taking part: all rows, or a pilot.
    pub rows: &'a [usize],
    /// Feature columns (indexed by row, like the dataset's).
    pub columns: &'a [Column],
    /// `None`: the whole training part is subsampled. `Some(g)`: only group g's training rows
    /// are, while every other training row is always used.
    pub vary_group: Option<u32>,
    /// Sizes of the subsampled part (all training rows, or group g's).
    pub sizes: &'a [usize],
    /// Random stream of the splits and orders.
    pub stream: Stream,
    /// Name of the stage in progress events.
    pub stage: &'static str,
    /// Cap on the training rows of a repeat (see [`cap_split`]).
    pub max_train: usize,
}

/// Learning-curve trials: for each repeat, one stratified split of the schedule's rows, one
/// nested order of the varied part of its training rows, one encoding fitted on the whole
/// training part, then a model per size fitted on the fixed rows plus the first `size` rows of
/// the order (warm-started from the size before) and measured on the repeat's fixed test part.
/// Two schedules that differ only in their columns get the same splits and orders (paired).
/// Returns outcomes as `[repeat][size]`.
pub fn nested_trials(
    data: &Dataset,
    family: &dyn ModelFamily,
    schedule: &Schedule,
    repeats: usize,
    test_fraction: f64,
    seed: u64,
    progress: ProgressSink,
) -> Result<Vec<Vec<TrialOutcome>>> {
    let sizes = schedule.sizes;
    let total = repeats * sizes.len();
    let done = AtomicUsize::new(0);
    let stage = schedule.stage;
    progress(Progress {
        stage,
        done: 0,
        total,
    });
    (0..repeats)
        .into_par_iter()
        .map(|repeat| {
            let mut rng = stream_rng(seed, schedule.stream, repeat as u64);
            let group_count = data.group_list.len();
            let split = stratified_split_of(
                schedule.rows,
                &data.labels,
                &data.groups,
                group_count,
                test_fraction,
                &mut rng,
            );
            let (train, test) = cap_split(data, split, schedule.max_train, test_fraction, &mut rng);
            let (fixed, varied): (Vec<usize>, Vec<usize>) = match schedule.vary_group {
                None => (Vec::new(), train),
                Some(g) => train.into_iter().partition(|&i| data.groups[i] != g),
            };
            let mut order = fixed;
            let fixed_rows = order.len();
            order.extend(nested_order(
                &varied,
                &data.labels,
                &data.groups,
                group_count,
                &mut rng,
            ));
            let encoder = Encoder::fit(schedule.columns, &order);
            let x_pool = encoder.transform(schedule.columns, &order);
            let y_pool: Vec<bool> = order.iter().map(|&i| data.labels[i]).collect();
            let x_test = encoder.transform(schedule.columns, &test);
            let mut start: Option<Vec<f64>> = None;
            let mut outcomes = Vec::with_capacity(sizes.len());
            for &size in sizes {
                let rows = (fixed_rows + size).min(order.len());
                let x = x_pool.slice(ndarray::s![..rows, ..]);
                let model = family.fit_from(x, &y_pool[..rows], start.as_deref())?;
                start = model.warm_start();
                let scores = model.scores(x_test.view());
                outcomes.push(measure(data, family, &test, &scores, rows));
                progress(Progress {
                    stage,
                    done: done.fetch_add(1, Ordering::Relaxed) + 1,
                    total,
                });
            }
            Ok(outcomes)
        })
        .collect()
}

/// Runs `repeats` stratified train/test trials on all rows, in parallel, in trial order.
pub fn repeated_trials(
    data: &Dataset,
    family: &dyn ModelFamily,
    trials: &crate::settings::TrialSettings,
    progress: ProgressSink,
) -> Result<Vec<TrialOutcome>> {
    let (repeats, test_fraction, seed) = (trials.repeats, trials.test_fraction, trials.seed);
    let done = AtomicUsize::new(0);
    progress(Progress {
        stage: "baseline trials",
        done: 0,
        total: repeats,
    });
    (0..repeats)
        .into_par_iter()
        .map(|index| {
            let mut rng = stream_rng(seed, Stream::BaselineSplits, index as u64);
            let split = stratified_split(
                &data.labels,
                &data.groups,
                data.group_list.len(),
                test_fraction,
                &mut rng,
            );
            let (train, test) =
                cap_split(data, split, trials.max_train_rows, test_fraction, &mut rng);
            let outcome = run_trial(data, family, &train, &test);
            progress(Progress {
                stage: "baseline trials",
                done: done.fetch_add(1, Ordering::Relaxed) + 1,
                total: repeats,
            });
            outcome
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn split_keeps_every_cell_in_both_parts() {
        let labels: Vec<bool> = (0..100).map(|i| i % 4 == 0).collect();
        let groups: Vec<u32> = (0..100).map(|i| u32::from(i % 5 == 0)).collect();
        let mut rng = stream_rng(7, Stream::Check(1), 0);
        let (train, test) = stratified_split(&labels, &groups, 2, 0.3, &mut rng);
        assert_eq!(train.len() + test.len(), 100);
        for g in 0..2u32 {
            for l in [false, true] {
                let cell = |part: &[usize]| {
                    part.iter()
                        .filter(|&&i| groups[i] == g && labels[i] == l)
                        .count()
                };
                assert!(cell(&test) >= 1 && cell(&train) >= 1, "cell ({g}, {l})");
            }
        }
    }

    #[test]
    fn nested_prefixes_keep_the_mix() {
        let labels: Vec<bool> = (0..1000).map(|i| i % 4 == 0).collect();
        let groups: Vec<u32> = (0..1000).map(|i| u32::from(i % 10 < 3)).collect();
        let rows: Vec<usize> = (0..1000).collect();
        let order = nested_order(
            &rows,
            &labels,
            &groups,
            2,
            &mut stream_rng(3, Stream::Check(2), 0),
        );
        let mut sorted = order.clone();
        sorted.sort_unstable();
        assert_eq!(sorted, rows, "a permutation");
        for prefix in [100, 250, 500] {
            let share = order[..prefix]
                .iter()
                .filter(|&&i| groups[i] == 1 && labels[i])
                .count();
            let expected =
                (0..1000).filter(|&i| groups[i] == 1 && labels[i]).count() * prefix / 1000;
            assert!(
                share.abs_diff(expected) <= 1,
                "{prefix}: {share} vs {expected}"
            );
        }
    }

    #[test]
    fn a_split_is_cut_to_the_cap_keeping_its_mix() {
        use rand::Rng;
        let rows = 10_000;
        let data = Dataset::from_parts(
            (0..rows).map(|i| i % 4 == 0).collect(),
            (0..rows).map(|i| u32::from(i % 10 < 3)).collect(),
            &["a", "b"],
            0,
            Vec::new(),
        );
        let split = || {
            stratified_split(
                &data.labels,
                &data.groups,
                2,
                0.3,
                &mut stream_rng(5, Stream::Check(1), 0),
            )
        };
        // Within the cap: unchanged, and nothing drawn from the generator.
        let mut rng = stream_rng(5, Stream::Check(9), 0);
        assert_eq!(cap_split(&data, split(), 7_000, 0.3, &mut rng), split());
        assert_eq!(
            rng.gen::<u64>(),
            stream_rng(5, Stream::Check(9), 0).gen::<u64>()
        );
        // Beyond it: 2,000 training rows and 857 test rows (2,000 × 0.3 / 0.7), subsets of the
        // split's parts with the same (group, label) mix.
        let (train, test) = split();
        let (small_train, small_test) = cap_split(&data, split(), 2_000, 0.3, &mut rng);
        assert_eq!(small_train.len(), 2_000);
        assert_eq!(small_test.len(), 857);
        assert!(small_train.iter().all(|i| train.binary_search(i).is_ok()));
        assert!(small_test.iter().all(|i| test.binary_search(i).is_ok()));
        let share = |part: &[usize]| {
            part.iter()
                .filter(|&&i| data.groups[i] == 1 && data.labels[i])
                .count() as f64
                / part.len() as f64
        };
        assert!((share(&small_train) - share(&train)).abs() < 0.002);
        assert!((share(&small_test) - share(&test)).abs() < 0.003);
    }
}

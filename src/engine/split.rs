//! How each trial's rows are drawn: stratified train/test splits, nested orders whose prefixes
//! keep the group and label mix, the cut to the cap on training rows, and [`draw_split`], the
//! one set-up every trial and every schedule built on a trial's sizes goes through.

use rand::seq::SliceRandom;

use crate::data::Dataset;
use crate::settings::TrialSettings;

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

/// One repeat's split as the trials draw it: the stratified split of `rows` at the test
/// fraction, then cut to the cap on training rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Split {
    /// Training rows after the cut, sorted.
    pub train: Vec<usize>,
    /// Test rows after the cut, sorted.
    pub test: Vec<usize>,
    /// Training rows before the cut (the same as `train` within the cap).
    pub drawn_train: Vec<usize>,
    /// Test rows before the cut.
    pub drawn_test: usize,
}

impl Split {
    /// Whether the cap cut the training rows.
    pub fn capped(&self) -> bool {
        self.train.len() < self.drawn_train.len()
    }
}

/// Draws one repeat's split of `rows` from `rng` (the repeat's stream), cut to the cap; `rng`
/// is left where the nested order of the trial continues.
pub fn draw_split(
    data: &Dataset,
    rows: &[usize],
    trials: &TrialSettings,
    rng: &mut impl rand::Rng,
) -> Split {
    let (train, test) = stratified_split_of(
        rows,
        &data.labels,
        &data.groups,
        data.group_list.len(),
        trials.test_fraction,
        rng,
    );
    let drawn_train = train.clone();
    let drawn_test = test.len();
    let (train, test) = cap_split(
        data,
        (train, test),
        trials.max_train_rows,
        trials.test_fraction,
        rng,
    );
    Split {
        train,
        test,
        drawn_train,
        drawn_test,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::streams::{stream_rng, Stream};

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

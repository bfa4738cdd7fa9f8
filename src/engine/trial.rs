//! The one trial engine. Every estimate asks for its fits through one value, a
//! [`TrialDesign`]: which rows each repeat draws (or is given), which training sizes, which
//! feature sets (arms, fitted on the same rows so that they pair), and what to probe. [`run`]
//! executes it, repeats in parallel, and returns the outcomes in index order whatever the
//! thread count; it is the only place a model is fitted.

use std::sync::atomic::{AtomicUsize, Ordering};

use rand::seq::SliceRandom;
use rayon::prelude::*;

pub use super::split::{
    cap_split, draw_split, nested_order, stratified_split, stratified_split_of, Split,
};
pub use super::streams::{stream_rng, Stream};
use crate::data::{Column, Dataset};
use crate::engine::encode::{self, Encoder};
use crate::engine::model::{self, FittedModel, ModelFamily};
use crate::error::Result;
use crate::settings::TrialSettings;
use crate::stats::metrics::{self, GroupCounts};

/// Progress of a long stage, sent to whoever shows it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Progress {
    /// What is running, e.g. "baseline trials".
    pub stage: &'static str,
    /// Units of work finished.
    pub done: usize,
    /// Units of work in the stage.
    pub total: usize,
}

/// Receives progress events; called from worker threads.
pub type ProgressSink<'a> = &'a (dyn Fn(Progress) + Sync);

/// A progress sink that drops every event.
pub fn no_progress(_: Progress) {}

/// What one fitted model measured on its held-out rows.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialOutcome {
    /// Share of test rows predicted right.
    pub accuracy: f64,
    /// Mean of the true positive and true negative rates.
    pub balanced_accuracy: Option<f64>,
    /// Area under the ROC curve, for families that give scores.
    pub area_under_curve: Option<f64>,
    /// Label and prediction counts per group on the test part.
    pub counts: Vec<GroupCounts>,
    /// The same per group of every further protected attribute and intersection
    /// (`Dataset::more_attributes`), in their order.
    pub more_counts: Vec<Vec<GroupCounts>>,
    /// Rows the model was fitted on.
    pub train_rows: usize,
    /// Rows it was measured on.
    pub test_rows: usize,
}

impl TrialOutcome {
    /// The outcome as seen by further attribute `k` of the data's `more_attributes`: its
    /// counts in place of the first attribute's.
    pub fn for_attribute(&self, k: usize) -> TrialOutcome {
        TrialOutcome {
            accuracy: self.accuracy,
            balanced_accuracy: self.balanced_accuracy,
            area_under_curve: self.area_under_curve,
            counts: self.more_counts[k].clone(),
            more_counts: Vec::new(),
            train_rows: self.train_rows,
            test_rows: self.test_rows,
        }
    }
}

/// The trials an estimate needs.
pub struct TrialDesign<'a> {
    /// Name of the stage in progress events.
    pub stage: &'static str,
    /// How each repeat's rows are found.
    pub rows: Rows<'a>,
    /// The feature sets fitted in every repeat, on the same rows.
    pub arms: Vec<Arm<'a>>,
}

/// How each repeat's training and test rows are found.
pub enum Rows<'a> {
    /// Repeat r draws its split of `rows` from stream `stream` at index r ([`draw_split`]);
    /// there are as many repeats as the trial settings say.
    Drawn {
        /// The rows taking part (all, or a pilot).
        rows: &'a [usize],
        /// The random stream of the splits and orders.
        stream: Stream,
        /// Which training sizes each split is fitted at.
        sizes: Sizes<'a>,
    },
    /// Splits given per repeat, each with every arm's own training rows (purchases made for
    /// real); one fit per arm on the whole of its rows.
    Given(&'a [GivenSplit]),
}

/// Which training sizes a drawn split is fitted at.
pub enum Sizes<'a> {
    /// One fit on the whole training part (rows in order).
    Whole,
    /// A learning curve: the training part in a nested order ([`nested_order`]), one encoding
    /// fitted on all of it, and a model per size fitted on the first rows (warm-started from
    /// the size before), all measured on the repeat's test part; a size that takes the whole
    /// training part is fitted as [`Sizes::Whole`] fits it, so it is the same trial. With `vary`, only
    /// the training rows it marks (a group's, or a cell's of two attributes) are ordered and
    /// counted by the sizes; every other training row is always used.
    Nested {
        /// Sizes of the part that grows.
        sizes: &'a [usize],
        /// The only rows that grow, as a mark for every row of the data, if not all.
        vary: Option<&'a [bool]>,
    },
}

/// A split given from outside: the test rows, and each arm's training rows.
#[derive(Debug, Clone, PartialEq)]
pub struct GivenSplit {
    /// The rows every arm is measured on.
    pub test: Vec<usize>,
    /// Each arm's training rows, in the order of the arms.
    pub train: Vec<Vec<usize>>,
}

/// One feature set of a design.
pub struct Arm<'a> {
    /// Feature columns, indexed by row like the dataset's.
    pub columns: &'a [Column],
    /// For a whole-part fit: what each feature does, by ablation and permutation.
    pub probe: Option<HeldProbe>,
}

impl<'a> Arm<'a> {
    /// An arm that fits `columns` and nothing more.
    pub fn of(columns: &'a [Column]) -> Arm<'a> {
        Arm {
            columns,
            probe: None,
        }
    }
}

/// Probes of every feature of an arm's whole-part fit: the model refitted without the feature
/// (dropping its encoded columns from the same encoding), and the fitted model scored with the
/// feature's columns permuted across the test rows `permutations` times (from `stream`, index:
/// the repeat).
#[derive(Debug, Clone, Copy)]
pub struct HeldProbe {
    /// Permutations of each feature per repeat.
    pub permutations: usize,
    /// The random stream of the permutations (index: the repeat).
    pub stream: Stream,
}

/// What one arm measured in one repeat.
#[derive(Debug, Clone, PartialEq)]
pub struct ArmOutcome {
    /// One per training size (one for a whole-part fit).
    pub sizes: Vec<TrialOutcome>,
    /// With a probe, one per feature.
    pub held: Vec<HeldOutcome>,
}

/// One feature's probes in one repeat.
#[derive(Debug, Clone, PartialEq)]
pub struct HeldOutcome {
    /// The model refitted without the feature (`None` when it is the only feature).
    pub ablation: Option<TrialOutcome>,
    /// The full model scored with the feature permuted, once per permutation.
    pub permutations: Vec<TrialOutcome>,
}

impl TrialDesign<'_> {
    fn repeats(&self, trials: &TrialSettings) -> usize {
        match &self.rows {
            Rows::Drawn { .. } => trials.repeats,
            Rows::Given(splits) => splits.len(),
        }
    }

    /// Models fitted (and probes scored) per repeat, for progress.
    fn fits_per_repeat(&self) -> usize {
        let sizes = match &self.rows {
            Rows::Drawn {
                sizes: Sizes::Nested { sizes, .. },
                ..
            } => sizes.len(),
            _ => 1,
        };
        self.arms.len() * sizes
    }
}

/// Runs a design: every repeat in parallel, returned as `[repeat][arm]` in index order.
pub fn run(
    data: &Dataset,
    trials: &TrialSettings,
    design: &TrialDesign,
    progress: ProgressSink,
) -> Result<Vec<Vec<ArmOutcome>>> {
    let family = model::family(trials.model);
    let family = family.as_ref();
    let repeats = design.repeats(trials);
    let total = repeats * design.fits_per_repeat();
    let done = AtomicUsize::new(0);
    let stage = design.stage;
    progress(Progress {
        stage,
        done: 0,
        total,
    });
    let tick = || {
        progress(Progress {
            stage,
            done: done.fetch_add(1, Ordering::Relaxed) + 1,
            total,
        })
    };
    (0..repeats)
        .into_par_iter()
        .map(|repeat| -> Result<Vec<ArmOutcome>> {
            match &design.rows {
                Rows::Drawn {
                    rows,
                    stream,
                    sizes,
                } => {
                    let mut rng = stream_rng(trials.seed, *stream, repeat as u64);
                    let split = draw_split(data, rows, trials, &mut rng);
                    match sizes {
                        Sizes::Whole => design
                            .arms
                            .iter()
                            .map(|arm| {
                                let outcome = whole(
                                    data,
                                    family,
                                    arm,
                                    &split.train,
                                    &split.test,
                                    trials.seed,
                                    repeat,
                                );
                                tick();
                                outcome
                            })
                            .collect(),
                        Sizes::Nested { sizes, vary } => {
                            let (order, fixed_rows) =
                                training_order(data, split.train, *vary, &mut rng);
                            design
                                .arms
                                .iter()
                                .map(|arm| {
                                    nested(
                                        data,
                                        family,
                                        arm.columns,
                                        &order,
                                        fixed_rows,
                                        sizes,
                                        &split.test,
                                        &tick,
                                    )
                                })
                                .collect()
                        }
                    }
                }
                Rows::Given(splits) => {
                    let split = &splits[repeat];
                    design
                        .arms
                        .iter()
                        .zip(&split.train)
                        .map(|(arm, train)| {
                            let outcome =
                                whole(data, family, arm, train, &split.test, trials.seed, repeat);
                            tick();
                            outcome
                        })
                        .collect()
                }
            }
        })
        .collect()
}

/// The training part in the order a learning curve grows it: every row `vary` does not mark
/// first (always used), then the varied rows in a nested order. Returns the order and how many
/// rows are always used.
fn training_order(
    data: &Dataset,
    train: Vec<usize>,
    vary: Option<&[bool]>,
    rng: &mut impl rand::Rng,
) -> (Vec<usize>, usize) {
    let (fixed, varied): (Vec<usize>, Vec<usize>) = match vary {
        None => (Vec::new(), train),
        Some(marked) => train.into_iter().partition(|&i| !marked[i]),
    };
    let mut order = fixed;
    let fixed_rows = order.len();
    order.extend(nested_order(
        &varied,
        &data.labels,
        &data.groups,
        data.group_list.len(),
        rng,
    ));
    (order, fixed_rows)
}

/// One arm's learning curve in one repeat (see [`Sizes::Nested`]).
#[allow(clippy::too_many_arguments)]
fn nested(
    data: &Dataset,
    family: &dyn ModelFamily,
    columns: &[Column],
    order: &[usize],
    fixed_rows: usize,
    sizes: &[usize],
    test: &[usize],
    tick: &(dyn Fn() + Sync),
) -> Result<ArmOutcome> {
    let encoder = Encoder::fit(columns, order);
    let x_pool = encoder.transform(columns, order);
    let y_pool: Vec<bool> = order.iter().map(|&i| data.labels[i]).collect();
    let x_test = encoder.transform(columns, test);
    let mut start: Option<Vec<f64>> = None;
    let mut outcomes = Vec::with_capacity(sizes.len());
    for &size in sizes {
        let rows = (fixed_rows + size).min(order.len());
        if rows == order.len() {
            // All of the training part: the plain fit a whole-part trial makes (rows in order,
            // no warm start), so that a curve's last anchor is the very trial the baseline
            // runs on the same split, and the two report one "today".
            let mut train = order.to_vec();
            train.sort_unstable();
            let whole_fit = whole(data, family, &Arm::of(columns), &train, test, 0, 0)?;
            outcomes.extend(whole_fit.sizes);
            tick();
            continue;
        }
        let x = x_pool.slice(ndarray::s![..rows, ..]);
        let model = family.fit_from(x, &y_pool[..rows], start.as_deref())?;
        start = model.warm_start();
        let scores = model.scores(x_test.view());
        outcomes.push(measure(data, family, test, &scores, rows));
        tick();
    }
    Ok(ArmOutcome {
        sizes: outcomes,
        held: Vec::new(),
    })
}

/// One arm fitted on the whole of `train` and measured on `test`, with its probes.
fn whole(
    data: &Dataset,
    family: &dyn ModelFamily,
    arm: &Arm,
    train: &[usize],
    test: &[usize],
    seed: u64,
    repeat: usize,
) -> Result<ArmOutcome> {
    let columns = arm.columns;
    let encoder = Encoder::fit(columns, train);
    let x_train = encoder.transform(columns, train);
    let y_train: Vec<bool> = train.iter().map(|&i| data.labels[i]).collect();
    let model = family.fit(x_train.view(), &y_train)?;
    let x_test = encoder.transform(columns, test);
    let scores = model.scores(x_test.view());
    let outcome = measure(data, family, test, &scores, train.len());
    let Some(probe) = arm.probe else {
        return Ok(ArmOutcome {
            sizes: vec![outcome],
            held: Vec::new(),
        });
    };
    let features = columns.len();
    let mut rng = stream_rng(seed, probe.stream, repeat as u64);
    let mut work = x_test.clone();
    let mut held = Vec::with_capacity(features);
    for f in 0..features {
        let span = encoder.span(f);
        let ablation = if features > 1 {
            // The encoding of the other features is the full one without f's columns.
            let x = encode::without_span(&x_train, &span);
            let refit = family.fit(x.view(), &y_train)?;
            drop(x);
            let x = encode::without_span(&x_test, &span);
            Some(measure(
                data,
                family,
                test,
                &refit.scores(x.view()),
                train.len(),
            ))
        } else {
            None
        };
        let permutations = (0..probe.permutations)
            .map(|_| {
                let scores =
                    permuted_scores(model.as_ref(), &x_test, &mut work, span.clone(), &mut rng);
                measure(data, family, test, &scores, train.len())
            })
            .collect();
        held.push(HeldOutcome {
            ablation,
            permutations,
        });
    }
    Ok(ArmOutcome {
        sizes: vec![outcome],
        held,
    })
}

/// Scores of the test rows with the encoded columns `span` (one input feature) permuted
/// together across rows, the rest left as they are.
pub fn permuted_scores(
    model: &dyn FittedModel,
    x_test: &ndarray::Array2<f64>,
    work: &mut ndarray::Array2<f64>,
    span: std::ops::Range<usize>,
    rng: &mut impl rand::Rng,
) -> Vec<f64> {
    // `work` holds a copy of `x_test`; only the permuted columns are written, and they are put
    // back afterwards, so no trial copies the whole matrix per permutation.
    let mut order: Vec<usize> = (0..x_test.nrows()).collect();
    order.shuffle(rng);
    for j in span.clone() {
        let column = x_test.column(j);
        for (row, &from) in order.iter().enumerate() {
            work[(row, j)] = column[from];
        }
    }
    let scores = model.scores(work.view());
    for j in span {
        work.column_mut(j).assign(&x_test.column(j));
    }
    scores
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
        more_counts: data
            .more_attributes
            .iter()
            .map(|a| {
                let groups: Vec<u32> = test.iter().map(|&i| a.groups[i]).collect();
                metrics::group_counts(&labels, &predicted, &groups, a.group_list.len())
            })
            .collect(),
        train_rows,
        test_rows: test.len(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn permutation_and_drop_column_importance_match_scikit_learn() {
        // scikit-learn 1.9.1 (tests/reference/reference.py, data in tests/reference/importance.csv):
        // LogisticRegression(C=1) on standardised columns, trained on rows 0..180, scored on
        // 180..240: accuracy 0.7166666666666667; permutation_importance means (2,000 repeats)
        // [0.19308, 0.10308, 0.01095]; drop-column importances [0.18333, 0.08333, 0.0].
        let text = std::fs::read_to_string(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/reference/importance.csv"
        ))
        .unwrap();
        let rows: Vec<Vec<f64>> = text
            .lines()
            .skip(1)
            .map(|l| l.split(',').map(|v| v.parse().unwrap()).collect())
            .collect();
        let columns: Vec<Column> = (0..3)
            .map(|j| Column {
                name: ["a", "b", "c"][j].into(),
                values: crate::data::Values::Numeric(rows.iter().map(|r| Some(r[j])).collect())
                    .into(),
            })
            .collect();
        let labels: Vec<bool> = rows.iter().map(|r| r[3] == 1.0).collect();
        let train: Vec<usize> = (0..180).collect();
        let test: Vec<usize> = (180..240).collect();
        let family = model::Logistic {
            alpha: 1.0,
            max_iterations: 1000,
            gradient_tolerance: 1e-10,
        };
        use model::ModelFamily;
        let accuracy_of = |scores: &[f64]| {
            test.iter()
                .zip(scores)
                .filter(|(&i, &s)| (s >= 0.5) == labels[i])
                .count() as f64
                / test.len() as f64
        };
        let fit = |cols: &[Column]| {
            let encoder = Encoder::fit(cols, &train);
            let y: Vec<bool> = train.iter().map(|&i| labels[i]).collect();
            let m = family
                .fit(encoder.transform(cols, &train).view(), &y)
                .unwrap();
            (encoder, m)
        };
        let (encoder, m) = fit(&columns);
        let x_test = encoder.transform(&columns, &test);
        let base = accuracy_of(&m.scores(x_test.view()));
        assert!((base - 0.7166666666666667).abs() < 1e-9, "{base}");
        let expected_permutation = [0.1930833333333333, 0.10307500000000001, 0.01095000000000002];
        let expected_drop = [0.18333333333333335, 0.08333333333333337, 0.0];
        let mut rng = stream_rng(1, Stream::Check(77), 0);
        let mut work = x_test.clone();
        for j in 0..3 {
            let repeats = 2000;
            let mean_drop = (0..repeats)
                .map(|_| {
                    base - accuracy_of(&permuted_scores(
                        m.as_ref(),
                        &x_test,
                        &mut work,
                        encoder.span(j),
                        &mut rng,
                    ))
                })
                .sum::<f64>()
                / repeats as f64;
            // Different random permutations: the means agree within 0.01 (2,000 repeats each).
            assert!(
                (mean_drop - expected_permutation[j]).abs() < 0.01,
                "{j}: {mean_drop}"
            );
            let kept: Vec<Column> = columns
                .iter()
                .enumerate()
                .filter(|&(k, _)| k != j)
                .map(|(_, c)| c.clone())
                .collect();
            let (e, m2) = fit(&kept);
            let dropped = base - accuracy_of(&m2.scores(e.transform(&kept, &test).view()));
            assert!((dropped - expected_drop[j]).abs() < 1e-9, "{j}: {dropped}");
        }
    }
}

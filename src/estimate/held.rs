//! The features already held: what dropping each (retrain without it) and scrambling it
//! (permute it on the test rows) does to accuracy and unfairness, over the baseline's trials.

use crate::data::Dataset;
use crate::engine::streams::Stream;
use crate::engine::trial::{
    self, Arm, HeldProbe, ProgressSink, Rows, Sizes, TrialDesign, TrialOutcome,
};
use crate::error::Result;
use crate::report::*;
use crate::settings::Settings;
use crate::stats::fairness::{self};
use crate::stats::metrics::{estimate, Estimate};

/// Permutations of each held feature per trial.
pub const PERMUTATIONS: usize = 5;

/// Ablation (retrain without each feature) and permutation (scramble it on the test rows), over
/// the baseline's trials.
pub(super) fn held_features(
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

//! `acquest baseline`: the data's groups and label bias, and the current model's accuracy and
//! fairness over repeated trials, gathered into a [`BaselineReport`].

use crate::data::{Dataset, Table, Values};
use crate::engine::model;
use crate::engine::trial::{
    self, Arm, ProgressSink, Rows, Sizes, Stream, TrialDesign, TrialOutcome,
};
use crate::error::{Error, Result};
use crate::report::*;
use crate::settings::Settings;
use crate::stats::fairness;
use crate::stats::metrics::{self, estimate, Estimate, GroupCounts, FOUR_FIFTHS};

/// Reads the data, runs the trials and builds the report.
pub fn run(settings: &Settings, progress: ProgressSink) -> Result<BaselineReport> {
    let (table, data) = Dataset::load(settings)?;
    let all: Vec<usize> = (0..data.rows()).collect();
    let design = TrialDesign {
        stage: "baseline trials",
        rows: Rows::Drawn {
            rows: &all,
            stream: Stream::BaselineSplits,
            sizes: Sizes::Whole,
        },
        arms: vec![Arm::of(&data.features)],
    };
    let outcomes: Vec<TrialOutcome> = trial::run(&data, &settings.trials, &design, progress)?
        .into_iter()
        .filter_map(|mut arms| arms.swap_remove(0).sizes.pop())
        .collect();
    build_report(settings, &table, &data, &outcomes)
}

/// Assembles the report from the trials' outcomes.
pub fn build_report(
    settings: &Settings,
    table: &Table,
    data: &Dataset,
    outcomes: &[TrialOutcome],
) -> Result<BaselineReport> {
    let mut warnings = data.warnings.clone();
    let (label_bias, model) = assess(settings, data, outcomes, &mut warnings)?;
    let mut attributes = Vec::new();
    for (k, attribute) in data.more_attributes.iter().enumerate() {
        let view = data.attribute_view(k);
        let by_attribute: Vec<TrialOutcome> = outcomes.iter().map(|o| o.for_attribute(k)).collect();
        let (label_bias, model) = assess(settings, &view, &by_attribute, &mut warnings)?;
        attributes.push(AttributeSection {
            attribute: attribute.name.clone(),
            groups: group_summaries(&view),
            reference: reference_group(&view),
            label_bias,
            model_groups: model.groups,
            comparisons: model.comparisons,
            worst: model.worst,
            four_fifths: model.four_fifths,
            too_small: attribute
                .too_small
                .iter()
                .map(|(group, rows, favourable)| SmallCell {
                    group: group.clone(),
                    rows: *rows,
                    favourable_labels: *favourable,
                })
                .collect(),
        });
    }

    let favourable_labels = data.labels.iter().filter(|&&l| l).count();
    let summarise = |c: &crate::data::Column| FeatureSummary {
        name: c.name.clone(),
        kind: c.kind().to_string(),
        missing: c.missing_count(),
        levels: match &*c.values {
            Values::Categorical { levels, .. } => Some(levels.len()),
            Values::Numeric(_) => None,
        },
    };
    Ok(BaselineReport {
        format: FORMAT.into(),
        format_version: FORMAT_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        command: "baseline".into(),
        inputs: inputs(settings, table, data),
        data: DataSummary {
            rows_read: data.rows_read,
            rows_used: data.rows(),
            dropped_missing_label: data.dropped_missing_label,
            dropped_missing_group: data.dropped_missing_group,
            favourable_labels,
            features: data.features.iter().map(summarise).collect(),
            candidates: data.candidates.iter().map(summarise).collect(),
        },
        groups: group_summaries(data),
        reference: reference_group(data),
        label_bias,
        worst_over_attributes: worst_over_attributes(&data.protected, &model.worst, &attributes),
        model,
        attributes,
        warnings,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
    })
}

/// On each measure, the worst group over the first attribute (`first`, its worst groups
/// `worst`) and every further section; `None` with one attribute.
fn worst_over_attributes(
    first: &str,
    worst: &WorstGroups,
    sections: &[AttributeSection],
) -> Option<WorstOverAttributes> {
    if sections.is_empty() {
        return None;
    }
    let all: Vec<(&str, &WorstGroups)> = std::iter::once((first, worst))
        .chain(sections.iter().map(|s| (s.attribute.as_str(), &s.worst)))
        .collect();
    let over = |pick: fn(&WorstGroups) -> &Option<Worst>| {
        all.iter()
            .filter_map(|(attribute, w)| {
                pick(w).as_ref().map(|w| WorstOf {
                    attribute: attribute.to_string(),
                    group: w.group.clone(),
                    unfairness: w.unfairness,
                })
            })
            .max_by(|a, b| a.unfairness.total_cmp(&b.unfairness))
    };
    Some(WorstOverAttributes {
        statistical_parity_difference: over(|w| &w.statistical_parity_difference),
        disparate_impact: over(|w| &w.disparate_impact),
        equal_opportunity_difference: over(|w| &w.equal_opportunity_difference),
        average_odds_difference: over(|w| &w.average_odds_difference),
    })
}

/// The bias in the labels and the model's figures by the groups of `data`, from `outcomes`.
fn assess(
    settings: &Settings,
    data: &Dataset,
    outcomes: &[TrialOutcome],
    warnings: &mut Vec<String>,
) -> Result<(LabelBias, ModelSummary)> {
    let names: Vec<String> = data.group_list.iter().map(|g| g.name.clone()).collect();
    let label_counts = label_counts(data);
    let reference = data.reference;
    let label_bias = LabelBias {
        comparisons: compared_groups(reference, names.len())
            .map(|g| {
                let (u, r) = (
                    fairness::Labels(&label_counts[g]),
                    fairness::Labels(&label_counts[reference]),
                );
                LabelComparison {
                    group: names[g].clone(),
                    statistical_parity_difference: FairnessMeasure::Spd.value(&u, &r),
                    disparate_impact: FairnessMeasure::Di.value(&u, &r),
                }
            })
            .collect(),
        four_fifths: metrics::four_fifths(
            &label_counts
                .iter()
                .map(|c| c.favourable_labels)
                .collect::<Vec<_>>(),
            &label_counts.iter().map(|c| c.rows).collect::<Vec<_>>(),
        )
        .into_iter()
        .map(|f| FourFifthsRecord {
            group: names[f.group].clone(),
            rate: f.rate,
            impact_ratio: f.impact_ratio,
            adverse_impact: f.adverse_impact,
            one_person_flips: f.one_person_flips,
            z: f.z,
            z_p_value: f.z_p_value,
            fisher_p_value: f.fisher_p_value,
        })
        .collect(),
    };
    let model = summarise_model(settings, data, outcomes, &names, warnings)?;
    Ok((label_bias, model))
}

/// What the run read and how it was set, for any report.
pub fn inputs(settings: &Settings, table: &Table, data: &Dataset) -> Inputs {
    Inputs {
        data: table.source.clone(),
        target: settings.schema.target.clone(),
        favourable: data.favourable.clone(),
        unfavourable: data.unfavourable.clone(),
        protected: data.protected.clone(),
        more_protected: data
            .more_attributes
            .iter()
            .map(|a| a.name.clone())
            .collect(),
        use_protected: settings.schema.use_protected,
        model: settings.trials.model.name().into(),
        repeats: settings.trials.repeats,
        test_fraction: settings.trials.test_fraction,
        seed: settings.trials.seed,
        confidence: settings.trials.confidence,
        max_train_rows: settings.trials.max_train_rows,
    }
}

/// Counts per group with the labels standing in for selections, so that the selection-rate
/// measures (SPD, DI, four-fifths) read the bias already in the labels.
pub fn label_counts(data: &Dataset) -> Vec<GroupCounts> {
    data.group_sizes()
        .iter()
        .map(|&(rows, favourable)| GroupCounts {
            rows: rows as u64,
            favourable_labels: favourable as u64,
            selected: favourable as u64,
            ..GroupCounts::default()
        })
        .collect()
}

/// Each group with its size and label rate.
pub fn group_summaries(data: &Dataset) -> Vec<GroupSummary> {
    data.group_list
        .iter()
        .zip(data.group_sizes())
        .map(|(g, (rows, favourable))| GroupSummary {
            name: g.name.clone(),
            definition: g.definition.clone(),
            rows,
            favourable_labels: favourable,
            label_rate: favourable as f64 / rows as f64,
        })
        .collect()
}

/// The reference group and how it was chosen.
pub fn reference_group(data: &Dataset) -> ReferenceGroup {
    ReferenceGroup {
        name: data.group_list[data.reference].name.clone(),
        rule: data.reference_rule.clone(),
    }
}

/// Today's figures, defined once: from the trials at all of today's training rows, the mean
/// accuracy, each group's mean selection rate, and the unfairness of the worst compared group
/// under `measure`, judged by the mean over trials of its disparity against the reference (as
/// the baseline's worst group is). The baseline's trials, the curves' full-size anchor and the
/// appraisal's "today" all come from the same trials, so they agree.
pub struct TodayFigures {
    /// Mean accuracy.
    pub accuracy: f64,
    /// Unfairness of the worst compared group (NaN when no group's disparity is defined).
    pub unfairness: f64,
    /// That group.
    pub worst: usize,
    /// Each group's mean selection rate.
    pub selection_rates: Vec<f64>,
}

/// See [`TodayFigures`].
pub fn today_figures(
    data: &Dataset,
    outcomes: &[&TrialOutcome],
    measure: FairnessMeasure,
) -> TodayFigures {
    let mean = |values: Vec<f64>| -> f64 {
        if values.is_empty() {
            f64::NAN
        } else {
            values.iter().sum::<f64>() / values.len() as f64
        }
    };
    let reference = data.reference;
    let worst = fairness::worst(compared_groups(reference, data.group_list.len()).map(|g| {
        let values: Vec<f64> = outcomes
            .iter()
            .filter_map(|o| measure.value(&o.counts[g], &o.counts[reference]))
            .collect();
        (
            g,
            (!values.is_empty()).then(|| measure.unfairness_of(mean(values))),
        )
    }));
    TodayFigures {
        accuracy: mean(outcomes.iter().map(|o| o.accuracy).collect()),
        unfairness: worst.map_or(f64::NAN, |w| w.1),
        worst: worst.map_or(reference, |w| w.0),
        selection_rates: (0..data.group_list.len())
            .map(|g| {
                mean(
                    outcomes
                        .iter()
                        .filter_map(|o| o.counts[g].selection_rate())
                        .collect(),
                )
            })
            .collect(),
    }
}

fn compared_groups(reference: usize, count: usize) -> impl Iterator<Item = usize> {
    (0..count).filter(move |&g| g != reference)
}

fn summarise_model(
    settings: &Settings,
    data: &Dataset,
    outcomes: &[TrialOutcome],
    names: &[String],
    warnings: &mut Vec<String>,
) -> Result<ModelSummary> {
    let first = outcomes
        .first()
        .ok_or_else(|| Error::Internal("no trial was run".into()))?;
    let confidence = settings.trials.confidence;
    let test_to_train = first.test_rows as f64 / first.train_rows as f64;
    let summary = |values: Vec<f64>, ideal: Option<f64>| -> Option<Estimate> {
        estimate(&values, confidence, test_to_train, ideal)
    };
    let collect = |f: &dyn Fn(&TrialOutcome) -> Option<f64>| -> Vec<f64> {
        outcomes.iter().filter_map(f).collect()
    };
    let accuracy = summary(collect(&|o| Some(o.accuracy)), None)
        .ok_or_else(|| Error::Internal("no accuracy was measured".into()))?;
    let reference = data.reference;

    let groups: Vec<GroupRates> = names
        .iter()
        .enumerate()
        .map(|(g, name)| GroupRates {
            group: name.clone(),
            test_rows: outcomes
                .iter()
                .map(|o| o.counts[g].rows as f64)
                .sum::<f64>()
                / outcomes.len() as f64,
            selection_rate: summary(collect(&|o| o.counts[g].selection_rate()), None),
            true_positive_rate: summary(collect(&|o| o.counts[g].true_positive_rate()), None),
            false_positive_rate: summary(collect(&|o| o.counts[g].false_positive_rate()), None),
        })
        .collect();

    let mut comparisons = Vec::new();
    for g in compared_groups(reference, names.len()) {
        let per_trial = |m: FairnessMeasure| -> Vec<f64> {
            outcomes
                .iter()
                .filter_map(|o| m.value(&o.counts[g], &o.counts[reference]))
                .collect()
        };
        let [spd, di, eod, aod] = FairnessMeasure::ALL.map(per_trial);
        for (values, measure) in [
            (&di, FairnessMeasure::Di.full_name()),
            (&eod, FairnessMeasure::Eod.full_name()),
        ] {
            if values.len() < outcomes.len() {
                warnings.push(format!(
                    "{measure} of group '{}' was undefined in {} of {} trials (a rate with \
                     nothing to divide by) and is averaged over the rest",
                    names[g],
                    outcomes.len() - values.len(),
                    outcomes.len()
                ));
            }
        }
        comparisons.push(Comparison {
            group: names[g].clone(),
            statistical_parity_difference: summary(spd, Some(0.0)),
            disparate_impact: summary(di, Some(1.0)),
            equal_opportunity_difference: summary(eod, Some(0.0)),
            average_odds_difference: summary(aod, Some(0.0)),
        });
    }
    // The worst compared group of each measure, by the unfairness of its mean.
    let worst_of = |m: FairnessMeasure, value: &dyn Fn(&Comparison) -> &Option<Estimate>| {
        fairness::worst(comparisons.iter().map(|c| {
            let unfairness = value(c).as_ref().map(|e| m.unfairness_of(e.mean));
            (c.group.clone(), unfairness)
        }))
        .map(|(group, unfairness)| Worst { group, unfairness })
    };
    let worst = WorstGroups {
        statistical_parity_difference: worst_of(FairnessMeasure::Spd, &|c| {
            &c.statistical_parity_difference
        }),
        disparate_impact: worst_of(FairnessMeasure::Di, &|c| &c.disparate_impact),
        equal_opportunity_difference: worst_of(FairnessMeasure::Eod, &|c| {
            &c.equal_opportunity_difference
        }),
        average_odds_difference: worst_of(FairnessMeasure::Aod, &|c| &c.average_odds_difference),
    };

    let per_trial_findings: Vec<Vec<metrics::FourFifthsFinding>> = outcomes
        .iter()
        .map(|o| {
            metrics::four_fifths(
                &o.counts.iter().map(|c| c.selected).collect::<Vec<_>>(),
                &o.counts.iter().map(|c| c.rows).collect::<Vec<_>>(),
            )
        })
        .collect();
    let four_fifths = (0..names.len())
        .filter_map(|g| {
            let ratios: Vec<f64> = per_trial_findings
                .iter()
                .filter_map(|f| f.iter().find(|x| x.group == g).map(|x| x.impact_ratio))
                .collect();
            let e = estimate(&ratios, confidence, test_to_train, Some(1.0))?;
            Some(ModelFourFifths {
                group: names[g].clone(),
                adverse_impact: e.mean < FOUR_FIFTHS,
                trials_flagged: ratios.iter().filter(|&&r| r < FOUR_FIFTHS).count(),
                impact_ratio: e,
            })
        })
        .collect();

    if outcomes.len() < 2 {
        warnings
            .push("with a single trial no interval can be given; use --repeats 10 or more".into());
    }
    let family = model::family(settings.trials.model);
    Ok(ModelSummary {
        family: settings.trials.model.name().into(),
        trials: outcomes.len(),
        train_rows: first.train_rows,
        test_rows: first.test_rows,
        interval_method: format!(
            "t-interval at {confidence} over repeated stratified splits, variance inflated by \
             1/J + n_test/n_train (corrected resampled t, Nadeau and Bengio 2003)"
        ),
        accuracy,
        balanced_accuracy: summary(collect(&|o| o.balanced_accuracy), None),
        area_under_curve: if family.gives_scores() {
            summary(collect(&|o| o.area_under_curve), None)
        } else {
            None
        },
        groups,
        comparisons,
        worst,
        four_fifths,
    })
}
